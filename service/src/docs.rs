//! Pages for people, served from the binary with no network access:
//! - `/` points to the API reference and to the workbench;
//! - `/docs/`: a browsable API reference of the OpenAPI document (Swagger UI, its files
//!   vendored into the binary by `utoipa-swagger-ui`'s `vendored` feature; it loads the
//!   document from `/openapi.json`);
//! - `/workbench`: a small page (plain HTML, CSS and JavaScript, no libraries) where an
//!   engineer fills in a design, sees the force curve and a stroke drawn by the service, and
//!   sizes one field. It calls the `/v1/` routes like any client: with the API key typed into
//!   it as `Authorization: Bearer`, and, served from another origin, under the service's CORS
//!   allow-list.
//!
//! The document's request bodies carry `examples` taken from the invented requests in
//! `examples/` ([`add_request_examples`]); a test posts each one and expects 200.

use crate::state::AppState;
use axum::Router;
use axum::http::{HeaderValue, header};
use axum::response::{IntoResponse, Response};
use axum::routing::get;
use utoipa::openapi::example::ExampleBuilder;
use utoipa::openapi::{OpenApi, RefOr};
use utoipa_swagger_ui::{Config, SwaggerUi};

/// Request examples of the document: (route, example name, summary, JSON text).
pub const REQUEST_EXAMPLES: [(&str, &str, &str, &str); 7] = [
    (
        "/v1/force-curve",
        "copper-drop",
        "Invented: an N42 cylinder dropped through a copper plumbing tube",
        include_str!("../../examples/force-curve-copper-drop.json"),
    ),
    (
        "/v1/force-curve",
        "aluminium-stack",
        "Invented: an alternating stack in an aluminium tube, with tolerances",
        include_str!("../../examples/force-curve-aluminium-stack.json"),
    ),
    (
        "/v1/simulate",
        "copper-drop",
        "Invented: the copper drop as a full stroke",
        include_str!("../../examples/simulate-copper-drop.json"),
    ),
    (
        "/v1/simulate",
        "incline-carriage",
        "Invented: a carriage braked on an incline",
        include_str!("../../examples/simulate-incline-carriage.json"),
    ),
    (
        "/v1/sweep",
        "wall-thickness",
        "Invented: terminal speed over the wall thickness",
        include_str!("../../examples/sweep-wall-thickness.json"),
    ),
    (
        "/v1/sweep",
        "wall-and-payload",
        "Invented: two metrics over wall thickness and payload",
        include_str!("../../examples/sweep-wall-and-payload.json"),
    ),
    (
        "/v1/size",
        "wall-for-speed-limit",
        "Invented: the thinnest wall that keeps under a speed limit, cold and hot",
        include_str!("../../examples/size-wall-for-speed-limit.json"),
    ),
];

/// Adds [`REQUEST_EXAMPLES`] to the `application/json` request bodies of their routes.
pub fn add_request_examples(document: &mut OpenApi) {
    for (path, name, summary, text) in REQUEST_EXAMPLES {
        let Ok(value) = serde_json::from_str::<serde_json::Value>(text) else {
            // The examples are checked in and tested; an unreadable one is left out.
            continue;
        };
        let content = document
            .paths
            .paths
            .get_mut(path)
            .and_then(|item| item.post.as_mut())
            .and_then(|op| op.request_body.as_mut())
            .and_then(|body| match body {
                RefOr::T(body) => body.content.get_mut("application/json"),
                RefOr::Ref(_) => None,
            });
        if let Some(RefOr::T(content)) = content {
            content.examples.insert(
                name.to_string(),
                ExampleBuilder::new()
                    .summary(summary)
                    .value(Some(value))
                    .build()
                    .into(),
            );
        }
    }
}

/// The page at `/`.
const INDEX_HTML: &str = r#"<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<title>ringdrag</title>
<style>
body{margin:0;font-family:system-ui,sans-serif;color:#1c2733;background:#f2f4f7}
header{background:#1c2733;color:#fff;padding:1rem 1.4rem}header h1{margin:0;font-size:1.4rem}
header p{margin:.3rem 0 0;color:#a9bacb}main{padding:1rem 1.4rem;display:grid;gap:1rem;max-width:52rem}
a.card{display:block;background:#fff;border:1px solid #c5ced8;border-left:4px solid #0b3c9e;border-radius:4px;padding:.8rem 1rem;color:inherit;text-decoration:none}
a.card strong{color:#0b3c9e}small{color:#4f5d6b}
</style></head><body>
<header><h1>ringdrag</h1><p>Eddy-current braking of magnets moving through non-ferrous tubes: engineering estimates over HTTP.</p></header>
<main>
<a class="card" href="/workbench"><strong>Workbench</strong><br>Fill in a design, see its braking curve and a stroke, size one field.</a>
<a class="card" href="/docs/"><strong>API reference</strong><br>Every route, field and answer, with examples to try.</a>
<a class="card" href="/openapi.json"><strong>OpenAPI document</strong><br>The machine-readable contract (OpenAPI 3.1).</a>
<small>Results are engineering estimates. Devices that protect or carry people need testing and certification under local codes by licensed engineers. Strong magnets pinch and affect implants.</small>
</main></body></html>
"#;

fn page(body: &'static str, content_type: &'static str) -> Response {
    let mut response = body.into_response();
    let headers = response.headers_mut();
    headers.insert(header::CONTENT_TYPE, HeaderValue::from_static(content_type));
    headers.insert(
        header::CACHE_CONTROL,
        HeaderValue::from_static("public, max-age=300"),
    );
    response
}

async fn index() -> Response {
    page(INDEX_HTML, "text/html; charset=utf-8")
}

async fn workbench() -> Response {
    page(
        include_str!("workbench/index.html"),
        "text/html; charset=utf-8",
    )
}

async fn workbench_css() -> Response {
    page(
        include_str!("workbench/style.css"),
        "text/css; charset=utf-8",
    )
}

async fn workbench_js() -> Response {
    page(
        include_str!("workbench/app.js"),
        "text/javascript; charset=utf-8",
    )
}

/// The routes of the pages (outside the OpenAPI document: they are for people).
pub fn routes() -> Router<AppState> {
    let reference: Router<AppState> = SwaggerUi::new("/docs")
        .config(Config::from("/openapi.json"))
        .into();
    Router::new()
        .route("/", get(index))
        .route("/workbench", get(workbench))
        .route("/workbench/style.css", get(workbench_css))
        .route("/workbench/app.js", get(workbench_js))
        .merge(reference)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_example_is_json_and_lands_on_its_route() {
        let mut document = crate::api::api_router().into_openapi();
        add_request_examples(&mut document);
        for (path, name, _, text) in REQUEST_EXAMPLES {
            assert!(
                serde_json::from_str::<serde_json::Value>(text).is_ok(),
                "{name}"
            );
            let examples = document
                .paths
                .paths
                .get(path)
                .and_then(|item| item.post.as_ref())
                .and_then(|op| op.request_body.as_ref())
                .and_then(|body| match body {
                    RefOr::T(body) => body.content.get("application/json"),
                    RefOr::Ref(_) => None,
                })
                .map(|content| match content {
                    RefOr::T(content) => content.examples.len(),
                    RefOr::Ref(_) => 0,
                })
                .unwrap_or_default();
            assert!(examples >= 1, "{path} has no example");
        }
    }
}
