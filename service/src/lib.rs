//! ringdrag-service: the HTTP JSON face of the ringdrag model.
//!
//! The crate holds HTTP only, no physics: it validates requests at the edge (the design through
//! the model's `Design::from_spec`, job options and sizes here), runs the model's solvers off
//! the async runtime under a bounded number of slots ([`jobs`]), and turns results into the
//! response records of the HTTP contract ([`api`]) and failures into RFC 9457 problem
//! documents ([`problem`]).
//!
//! The application is a function of its state and configuration: [`router`] builds it and
//! [`serve`] runs it on a bound listener with the connection handling of [`connections`] until
//! asked to stop, then drains. `main` only parses the configuration, sets up logging and
//! metrics, binds and calls [`serve`] with a future that completes on SIGTERM or Ctrl+C; the
//! end-to-end tests call the same [`serve`] in process on an ephemeral port.

pub mod access;
pub mod api;
pub mod cache;
pub mod config;
pub mod connections;
pub mod csv;
pub mod docs;
pub mod extract;
pub mod jobs;
pub mod middleware;
pub mod negotiate;
pub mod plot;
pub mod priority;
pub mod problem;
pub mod ratelimit;
pub mod serde_words;
pub mod server;
pub mod state;
pub mod telemetry;

pub use config::Config;
pub use server::serve;
pub use state::AppState;

use axum::Router;
use axum::http::Uri;
use problem::ApiError;

/// The application: every route of [`api::api_router`], problem answers for unknown routes
/// and methods, and the middleware stack of [`middleware::apply`].
pub fn router(state: AppState, config: &Config) -> Router {
    let state_ready = state.clone();
    let (routes, _document) = api::api_router().split_for_parts();
    let routes = routes
        .merge(docs::routes())
        .fallback(not_found)
        .method_not_allowed_fallback(method_not_allowed)
        .with_state(state);
    middleware::apply(routes, config, &state_ready)
}

async fn not_found(uri: Uri) -> ApiError {
    ApiError::NotFound(uri.path().to_string())
}

async fn method_not_allowed() -> ApiError {
    ApiError::MethodNotAllowed
}

/// The OpenAPI 3.1 document of the service, generated from the routes and their types.
pub fn openapi() -> utoipa::openapi::OpenApi {
    let mut document = api::api_router().into_openapi();
    access::document(&mut document);
    docs::add_request_examples(&mut document);
    document
}

/// The OpenAPI document as served and as checked in at `openapi/openapi.json`: pretty-printed
/// JSON with a final newline.
pub fn openapi_json() -> String {
    match openapi().to_pretty_json() {
        Ok(mut text) => {
            text.push('\n');
            text
        }
        // The document is built from static descriptions; serialising it cannot fail.
        Err(e) => format!("{{\"error\": \"cannot serialise the OpenAPI document: {e}\"}}\n"),
    }
}
