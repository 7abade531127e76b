//! Errors of the HTTP layer, and their one mapping to RFC 9457 problem responses.
//!
//! Policy: every failure a request can meet ends as an [`ApiError`], and [`ApiError`] has the
//! only `IntoResponse` that writes an error body. Clients always receive
//! `application/problem+json` with `type`, `title`, `status` and `detail`; validation failures
//! add `errors: [{path, message}]`, where `path` is the dotted path of the offending field in
//! the request body (`design.tube.inner_diameter_m`, `speeds_m_per_s[3]`). Model errors
//! ([`ModelError`]) are mapped here and nowhere else.
//!
//! Status policy: malformed JSON 400, wrong media type 415, body too large 413, unknown route
//! 404, wrong method 405, an `Accept` header that allows none of a route's representations
//! 406, invalid input or a job above the service limits 422, overload or a
//! job that outlives the request timeout 503 with `Retry-After`; when access control is
//! configured, a missing or wrong API key 401 with `WWW-Authenticate`, and a client over its
//! rate limit 429 with `Retry-After`. A 500 is reserved for defects
//! of the service itself (a panic caught by the safety net); no input is meant to produce one.

use axum::http::{HeaderValue, StatusCode, header};
use axum::response::{IntoResponse, Response};
use ringdrag_model::{FieldError, ModelError};
use serde::Serialize;
use utoipa::ToSchema;

/// Media type of problem documents (RFC 9457, section 3).
pub const PROBLEM_JSON: &str = "application/problem+json";

/// Prefix of the problem type URIs of this service. The types are URNs: stable identifiers
/// that clients can match on, not links.
const TYPE_PREFIX: &str = "urn:ringdrag:problem:";

/// One invalid field of a request.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, ToSchema)]
pub struct FieldProblem {
    /// Dotted path of the offending field in the request body, e.g.
    /// `design.tube.inner_diameter_m` or `speeds_m_per_s[2]`; empty for the body as a whole.
    pub path: String,
    /// What is wrong with the field, in words an engineer can act on.
    pub message: String,
}

/// An RFC 9457 problem document, the body of every error response.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
pub struct Problem {
    /// URI identifying the problem type: `about:blank` for plain HTTP errors (404, 405, 406,
    /// 413, 415), otherwise `urn:ringdrag:problem:<name>` (`malformed-json`, `invalid-input`,
    /// `job-too-large`, `not-computable`, `overloaded`, `timeout`, `shutting-down`,
    /// `unauthorized`, `rate-limited`, `internal`).
    #[serde(rename = "type")]
    pub problem_type: String,
    /// Short, human-readable summary of the problem type.
    pub title: String,
    /// HTTP status code of this response.
    pub status: u16,
    /// Human-readable explanation of this occurrence.
    pub detail: String,
    /// URI reference of this occurrence (the request path), when known.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub instance: Option<String>,
    /// Every invalid field, for validation failures (`invalid-input`, `job-too-large`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub errors: Option<Vec<FieldProblem>>,
}

/// Everything that can go wrong while answering a request.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ApiError {
    /// The body is not well-formed JSON (syntax error, truncated, nested too deeply).
    #[error("malformed JSON: {0}")]
    MalformedJson(String),
    /// The request body is not declared as JSON.
    #[error("unsupported media type: {0}")]
    UnsupportedMediaType(String),
    /// The request body exceeds the configured limit.
    #[error("request body larger than {limit_bytes} bytes")]
    PayloadTooLarge {
        /// The limit, bytes.
        limit_bytes: usize,
    },
    /// One or more fields are invalid (wrong type, out of range, unknown, inconsistent).
    #[error("invalid input")]
    Invalid(Vec<FieldProblem>),
    /// The job would exceed a work limit of the service; the field that drives it is named.
    #[error("job too large")]
    JobTooLarge(Vec<FieldProblem>),
    /// The model could not compute this input (outside the range where its method holds).
    #[error("not computable: {0}")]
    NotComputable(String),
    /// No route matches the path.
    #[error("no route for {0}")]
    NotFound(String),
    /// The route exists but not for this method.
    #[error("method not allowed")]
    MethodNotAllowed,
    /// The `Accept` header allows none of the representations the route can answer with.
    #[error("not acceptable")]
    NotAcceptable {
        /// Media types the route can answer with.
        offered: Vec<&'static str>,
    },
    /// Every job slot stayed busy for the whole queue wait.
    #[error("overloaded")]
    Overloaded {
        /// Suggested wait before retrying, s.
        retry_after_s: u64,
    },
    /// The service already holds its maximum of open connections (answered by the accept
    /// loop, before any request is read).
    #[error("too many connections")]
    TooManyConnections {
        /// The connection cap.
        limit: usize,
    },
    /// The request did not finish within the request timeout.
    #[error("timed out after {timeout_s} s")]
    Timeout {
        /// The timeout, s.
        timeout_s: u64,
        /// Suggested wait before retrying, s.
        retry_after_s: u64,
    },
    /// The service is shutting down and takes no new work.
    #[error("shutting down")]
    ShuttingDown,
    /// A guarded route was called without a valid API key.
    #[error("unauthorized")]
    Unauthorized {
        /// Whether a key was presented but is not valid (otherwise none was presented).
        wrong_key: bool,
    },
    /// The client used up its rate limit.
    #[error("rate limited")]
    RateLimited {
        /// Seconds until the client may send again.
        retry_after_s: u64,
    },
    /// A defect of the service (a caught panic, a lost worker). Never caused by valid or
    /// invalid input by design.
    #[error("internal error: {0}")]
    Internal(String),
}

impl ApiError {
    /// An [`ApiError::Invalid`] with one field.
    pub fn invalid(path: impl Into<String>, message: impl Into<String>) -> Self {
        Self::Invalid(vec![FieldProblem {
            path: path.into(),
            message: message.into(),
        }])
    }

    /// HTTP status of this error.
    pub fn status(&self) -> StatusCode {
        match self {
            Self::MalformedJson(_) => StatusCode::BAD_REQUEST,
            Self::UnsupportedMediaType(_) => StatusCode::UNSUPPORTED_MEDIA_TYPE,
            Self::PayloadTooLarge { .. } => StatusCode::PAYLOAD_TOO_LARGE,
            Self::Invalid(_) | Self::JobTooLarge(_) | Self::NotComputable(_) => {
                StatusCode::UNPROCESSABLE_ENTITY
            }
            Self::NotFound(_) => StatusCode::NOT_FOUND,
            Self::MethodNotAllowed => StatusCode::METHOD_NOT_ALLOWED,
            Self::NotAcceptable { .. } => StatusCode::NOT_ACCEPTABLE,
            Self::Overloaded { .. }
            | Self::TooManyConnections { .. }
            | Self::Timeout { .. }
            | Self::ShuttingDown => StatusCode::SERVICE_UNAVAILABLE,
            Self::Unauthorized { .. } => StatusCode::UNAUTHORIZED,
            Self::RateLimited { .. } => StatusCode::TOO_MANY_REQUESTS,
            Self::Internal(_) => StatusCode::INTERNAL_SERVER_ERROR,
        }
    }

    /// Type name, title, detail and field problems of an error in the request itself.
    fn request_wording(&self) -> Option<Wording> {
        match self {
            Self::MalformedJson(d) => Some((
                Some("malformed-json"),
                "Malformed JSON",
                format!("The request body is not well-formed JSON: {d}"),
                None,
            )),
            Self::UnsupportedMediaType(d) => {
                Some((None, "Unsupported Media Type", d.clone(), None))
            }
            Self::PayloadTooLarge { limit_bytes } => Some((
                None,
                "Payload Too Large",
                format!("The request body exceeds the service limit of {limit_bytes} bytes."),
                None,
            )),
            Self::Invalid(errs) => Some((
                Some("invalid-input"),
                "Invalid input",
                summary("The request has invalid fields", errs),
                Some(errs.clone()),
            )),
            Self::JobTooLarge(errs) => Some((
                Some("job-too-large"),
                "Job above the service limits",
                summary("The job exceeds a limit of this service", errs),
                Some(errs.clone()),
            )),
            Self::NotComputable(d) => Some((
                Some("not-computable"),
                "Not computable",
                format!(
                    "The model could not compute this input: {}. Change the design or the \
                         resolution.",
                    d.trim_end().trim_end_matches('.')
                ),
                None,
            )),
            Self::NotFound(path) => Some((
                None,
                "Not Found",
                format!("No resource at {path}; see GET /openapi.json for the routes."),
                None,
            )),
            Self::MethodNotAllowed => Some((
                None,
                "Method Not Allowed",
                "This resource does not support the request method; the Allow header lists \
                     those it does."
                    .to_string(),
                None,
            )),
            Self::NotAcceptable { offered } => Some((
                None,
                "Not Acceptable",
                format!(
                    "The Accept header allows none of the representations of this resource; it \
                         can answer with {}.",
                    offered.join(", ")
                ),
                None,
            )),
            _ => None,
        }
    }

    /// Type name, title, detail and field problems of an error of the service's state (load,
    /// limits, access, shutdown, internal failure).
    fn service_wording(&self) -> Option<Wording> {
        match self {
            Self::Overloaded { retry_after_s } => Some((
                Some("overloaded"),
                "Service overloaded",
                format!(
                    "Every computation slot stayed busy for the whole queue wait; retry in about \
                         {retry_after_s} s."
                ),
                None,
            )),
            Self::TooManyConnections { limit } => Some((
                Some("overloaded"),
                "Service overloaded",
                format!(
                    "The service already holds its maximum of {limit} open connections; retry \
                         in about 1 s, or reuse a kept-alive connection."
                ),
                None,
            )),
            Self::Timeout { timeout_s, .. } => Some((
                Some("timeout"),
                "Request timed out",
                format!(
                    "The request did not finish within {timeout_s} s. Retry later, or ask for \
                         less work (fewer speeds or samples, a coarser resolution, a shorter time)."
                ),
                None,
            )),
            Self::ShuttingDown => Some((
                Some("shutting-down"),
                "Shutting down",
                "The service is shutting down and takes no new work; retry on another instance."
                    .to_string(),
                None,
            )),
            Self::Unauthorized { wrong_key } => Some((
                Some("unauthorized"),
                "Unauthorized",
                if *wrong_key {
                    "The API key is not valid for this service.".to_string()
                } else {
                    "This route needs an API key: send it as `Authorization: Bearer <key>`."
                        .to_string()
                },
                None,
            )),
            Self::RateLimited { retry_after_s } => Some((
                Some("rate-limited"),
                "Too many requests",
                format!("This client used up its request allowance; retry in {retry_after_s} s."),
                None,
            )),
            Self::Internal(_) => Some((
                Some("internal"),
                "Internal error",
                "The service failed unexpectedly; the request id in the x-request-id header \
                     identifies the log entry."
                    .to_string(),
                None,
            )),
            _ => None,
        }
    }

    /// The problem document of this error.
    pub fn problem(&self) -> Problem {
        let status = self.status();
        let (name, title, detail, errors) = self
            .request_wording()
            .or_else(|| self.service_wording())
            .unwrap_or((
                Some("internal"),
                "Internal error",
                "The service failed unexpectedly.".to_string(),
                None,
            ));
        Problem {
            problem_type: name.map_or_else(
                || "about:blank".to_string(),
                |n| format!("{TYPE_PREFIX}{n}"),
            ),
            title: title.to_string(),
            status: status.as_u16(),
            detail,
            instance: match self {
                Self::NotFound(path) => Some(path.clone()),
                _ => None,
            },
            errors,
        }
    }
}

/// Type name (None: `about:blank`), title, detail and field problems of a problem document.
type Wording = (
    Option<&'static str>,
    &'static str,
    String,
    Option<Vec<FieldProblem>>,
);

fn summary(lead: &str, errs: &[FieldProblem]) -> String {
    let listed: Vec<String> = errs
        .iter()
        .map(|e| {
            // The summary ends each item itself: a message's own full stop would double it.
            let message = e.message.trim_end().trim_end_matches('.');
            if e.path.is_empty() {
                message.to_string()
            } else {
                format!("{}: {message}", e.path)
            }
        })
        .collect();
    format!("{lead}: {}.", listed.join("; "))
}

impl IntoResponse for ApiError {
    fn into_response(self) -> Response {
        let status = self.status();
        if let Self::Internal(reason) = &self {
            tracing::error!(%reason, "internal error");
        }
        let body = match serde_json::to_vec(&self.problem()) {
            Ok(body) => body,
            // Serialising strings and integers cannot fail; keep a valid document regardless.
            Err(_) => {
                br#"{"type":"about:blank","title":"Error","status":500,"detail":""}"#.to_vec()
            }
        };
        let mut response = (status, body).into_response();
        let headers = response.headers_mut();
        headers.insert(header::CONTENT_TYPE, HeaderValue::from_static(PROBLEM_JSON));
        match self {
            Self::Overloaded { retry_after_s }
            | Self::Timeout { retry_after_s, .. }
            | Self::RateLimited { retry_after_s } => {
                headers.insert(header::RETRY_AFTER, HeaderValue::from(retry_after_s));
            }
            Self::Unauthorized { wrong_key } => {
                headers.insert(
                    header::WWW_AUTHENTICATE,
                    crate::access::challenge(wrong_key),
                );
            }
            Self::ShuttingDown | Self::TooManyConnections { .. } => {
                headers.insert(header::RETRY_AFTER, HeaderValue::from(1u64));
            }
            _ => {}
        }
        response
    }
}

/// The request-body path of a model-side field path.
///
/// The model names design fields relative to the design object (`tube.inner_diameter_m`) and
/// job options by their option names (`options.ring_width_m`); the service reports paths into
/// the request body, so design fields gain the `design.` prefix and options map to the request
/// fields that set them.
pub fn request_path(model_path: &str) -> String {
    if let Some(option) = model_path.strip_prefix("options.") {
        let mapped = match option {
            "ring_width_m" => "resolution.ring_width_m",
            "radial_layers" => "resolution.radial_layers",
            "start_position_m" => "start.position_m",
            "start_speed_m_per_s" => "start.speed_m_per_s",
            other => other,
        };
        return mapped.to_string();
    }
    let design_root = ["magnets", "tube", "load"];
    let head = model_path.split(['.', '[']).next().unwrap_or_default();
    if design_root.contains(&head) {
        format!("design.{model_path}")
    } else {
        model_path.to_string()
    }
}

fn field_problems(errors: Vec<FieldError>) -> Vec<FieldProblem> {
    errors
        .into_iter()
        .map(|e| FieldProblem {
            path: request_path(&e.path),
            message: e.message,
        })
        .collect()
}

impl From<ModelError> for ApiError {
    fn from(err: ModelError) -> Self {
        match err {
            ModelError::Invalid(errors) => Self::Invalid(field_problems(errors)),
            ModelError::TooLarge { path, message } => Self::JobTooLarge(vec![FieldProblem {
                path: request_path(&path),
                message,
            }]),
            // Inputs outside the range where the discretised model holds, or a solver that did
            // not converge on them: the request cannot be computed as given.
            other @ (ModelError::NotPositiveDefinite { .. } | ModelError::Numerical(_)) => {
                Self::NotComputable(other.to_string())
            }
            // `ModelError` is non-exhaustive: a future variant is still an answer about the input.
            other => Self::NotComputable(other.to_string()),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn model_paths_become_request_paths() {
        assert_eq!(
            request_path("tube.inner_diameter_m"),
            "design.tube.inner_diameter_m"
        );
        assert_eq!(request_path("magnets.count"), "design.magnets.count");
        assert_eq!(request_path("design.tube.length_m"), "design.tube.length_m");
        assert_eq!(
            request_path("options.ring_width_m"),
            "resolution.ring_width_m"
        );
        assert_eq!(request_path("options.samples"), "samples");
        assert_eq!(request_path("speeds_m_per_s"), "speeds_m_per_s");
    }

    #[test]
    fn statuses_follow_the_policy() {
        // source: RFC 9110 (HTTP semantics) status codes, as chosen in the module doc.
        assert_eq!(
            ApiError::MalformedJson(String::new()).status().as_u16(),
            400
        );
        assert_eq!(
            ApiError::PayloadTooLarge { limit_bytes: 1 }
                .status()
                .as_u16(),
            413
        );
        assert_eq!(
            ApiError::UnsupportedMediaType(String::new())
                .status()
                .as_u16(),
            415
        );
        assert_eq!(ApiError::invalid("a", "b").status().as_u16(), 422);
        assert_eq!(
            ApiError::Overloaded { retry_after_s: 1 }.status().as_u16(),
            503
        );
        assert_eq!(
            ApiError::Unauthorized { wrong_key: false }
                .status()
                .as_u16(),
            401
        );
        assert_eq!(
            ApiError::RateLimited { retry_after_s: 1 }.status().as_u16(),
            429
        );
        let p = ApiError::from(ModelError::field("tube.material", "unknown")).problem();
        assert_eq!(p.problem_type, "urn:ringdrag:problem:invalid-input");
        assert_eq!(p.status, 422);
        let errs = p.errors.unwrap_or_default();
        assert_eq!(errs[0].path, "design.tube.material");
    }

    #[test]
    fn retry_after_is_set_on_overload() {
        let r = ApiError::Overloaded { retry_after_s: 3 }.into_response();
        assert_eq!(r.status(), StatusCode::SERVICE_UNAVAILABLE);
        assert_eq!(
            r.headers().get(header::RETRY_AFTER),
            Some(&HeaderValue::from(3u64))
        );
        assert_eq!(
            r.headers().get(header::CONTENT_TYPE),
            Some(&HeaderValue::from_static(PROBLEM_JSON))
        );
    }

    #[test]
    fn refusals_carry_their_headers() {
        // source: RFC 6750 (bearer tokens), section 3: a 401 carries a Bearer challenge, with
        // error="invalid_token" when the token presented is not valid.
        let missing = ApiError::Unauthorized { wrong_key: false }.into_response();
        assert_eq!(
            missing.headers().get(header::WWW_AUTHENTICATE),
            Some(&HeaderValue::from_static("Bearer realm=\"ringdrag\""))
        );
        let wrong = ApiError::Unauthorized { wrong_key: true }.into_response();
        let challenge = wrong
            .headers()
            .get(header::WWW_AUTHENTICATE)
            .and_then(|v| v.to_str().ok())
            .unwrap_or_default();
        assert!(challenge.starts_with("Bearer realm=\"ringdrag\", error=\"invalid_token\""));
        // source: RFC 6585 (additional HTTP status codes), section 4: 429 may carry Retry-After.
        let limited = ApiError::RateLimited { retry_after_s: 7 }.into_response();
        assert_eq!(limited.status(), StatusCode::TOO_MANY_REQUESTS);
        assert_eq!(
            limited.headers().get(header::RETRY_AFTER),
            Some(&HeaderValue::from(7u64))
        );
        let p = ApiError::RateLimited { retry_after_s: 7 }.problem();
        assert_eq!(p.problem_type, "urn:ringdrag:problem:rate-limited");
    }
}
