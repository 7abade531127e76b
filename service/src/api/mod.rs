//! The HTTP contract: routes, request and response records, and the OpenAPI document, all
//! from one list ([`api_router`]) so that the document cannot drift from the handlers.

pub mod force_curve;
pub mod health;
pub mod materials;
pub mod ops;
pub mod point_metrics;
pub mod report;
pub mod select;
pub mod simulate;
pub mod size;
pub mod sweep;

use crate::problem::{FieldProblem, Problem};
use crate::state::AppState;
use utoipa::OpenApi;
use utoipa_axum::router::OpenApiRouter;
use utoipa_axum::routes;

/// Top-level description of the OpenAPI document; the paths and schemas come from the routes.
#[derive(OpenApi)]
#[openapi(
    info(
        title = "ringdrag",
        description = "Eddy-current braking of permanent-magnet stacks moving through non-ferrous \
            conducting tubes: steady force-speed curves, stroke simulations, sweeps over design \
            fields and inverse sizing with a safety factor. JSON in and out (force curves, \
            strokes and sweeps also as SVG plots and CSV tables, sweeps also as a stream of \
            JSON lines; SVG plots take the query options `width_px` (320 to 2400), `aspect` \
            (0.5 to 4) and, for strokes, `against=time|position`), \
            SI units, every dimensional field carries its unit in its name. Errors are RFC 9457 \
            problem documents (application/problem+json); validation errors name each field by \
            its dotted path in the request body. Results are engineering estimates from an \
            idealised axisymmetric model; every computing response carries cautions.",
        license(name = "MIT OR Apache-2.0", identifier = "MIT OR Apache-2.0")
    ),
    tags(
        (name = "jobs", description = "Computations on a design."),
        (name = "reference", description = "Reference data for building designs."),
        (name = "operations", description = "Health, readiness, metrics and this document.")
    ),
    components(schemas(Problem, FieldProblem))
)]
struct ApiDoc;

/// Every route of the service with its OpenAPI description.
pub fn api_router() -> OpenApiRouter<AppState> {
    OpenApiRouter::with_openapi(ApiDoc::openapi())
        .routes(routes!(materials::list_materials))
        .routes(routes!(force_curve::compute_force_curve))
        .routes(routes!(simulate::simulate_stroke))
        .routes(routes!(sweep::sweep_design))
        .routes(routes!(size::size_design))
        .routes(routes!(select::select_parts))
        .routes(routes!(health::healthz))
        .routes(routes!(health::readyz))
        .routes(routes!(ops::metrics))
        .routes(routes!(ops::openapi_document))
}
