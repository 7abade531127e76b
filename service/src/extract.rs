//! The JSON body extractor of every endpoint that takes a body.
//!
//! axum's stock `Json` answers its rejections in plain text; this one answers every rejection
//! as a problem document and names the offending field:
//! - a body not declared as JSON: 415;
//! - a body above `--max-body-bytes`: 413 (the rest of a moderately oversized body is read and
//!   dropped first, so the client is able to read the answer instead of a reset connection);
//! - malformed JSON (syntax, truncation): 400;
//! - well-formed JSON of the wrong shape (wrong type, unknown or repeated field, missing field,
//!   unknown enum variant, a number out of range for its type): 422 with the field's dotted
//!   path, found with `serde_path_to_error`. Deeply nested JSON lands here too: no request
//!   type nests anywhere near serde_json's recursion limit (128), so the typed parser meets
//!   the first value of the wrong shape, and names it, long before the limit would answer 400.

use crate::problem::{ApiError, FieldProblem};
use crate::state::AppState;
use axum::extract::{FromRequest, Request};
use axum::http::header;
use futures_util::StreamExt;
use serde::de::DeserializeOwned;
use std::time::Duration;

/// A JSON request body of type `T`, parsed with field paths in its errors.
#[derive(Debug, Clone)]
pub struct ApiJson<T>(pub T);

/// How much of an oversized body is read and dropped before answering 413, as a multiple of
/// the limit, and for how long at most.
const DRAIN_FACTOR: usize = 8;
const DRAIN_TIME: Duration = Duration::from_secs(2);

/// Whether a `Content-Type` value declares JSON: `application/json` or `application/*+json`,
/// parameters such as `charset` allowed.
pub(crate) fn is_json(content_type: &str) -> bool {
    let essence = content_type
        .split(';')
        .next()
        .unwrap_or_default()
        .trim()
        .to_ascii_lowercase();
    essence == "application/json"
        || (essence.starts_with("application/") && essence.ends_with("+json"))
}

/// Reads the whole body, at most `limit` bytes; drains a moderate excess before refusing.
async fn read_body(req: Request, limit: usize) -> Result<Vec<u8>, ApiError> {
    let too_large = ApiError::PayloadTooLarge { limit_bytes: limit };
    let declared = req
        .headers()
        .get(header::CONTENT_LENGTH)
        .and_then(|v| v.to_str().ok())
        .and_then(|v| v.parse::<u64>().ok());
    let drain_cap = limit.saturating_mul(DRAIN_FACTOR).max(1 << 20);
    if declared.is_some_and(|n| n > drain_cap as u64) {
        return Err(too_large);
    }
    let mut stream = req.into_body().into_data_stream();
    let mut body = Vec::with_capacity(declared.map_or(0, |n| n.min(limit as u64) as usize));
    while let Some(chunk) = stream.next().await {
        let chunk = chunk.map_err(|e| ApiError::MalformedJson(format!("body unreadable: {e}")))?;
        if body.len() + chunk.len() > limit {
            let mut seen = body.len() + chunk.len();
            drop(body);
            // Read and drop the excess for a while, so that the client finishes sending and
            // can read the 413 instead of meeting a reset connection.
            let _ = tokio::time::timeout(DRAIN_TIME, async {
                while seen <= drain_cap {
                    match stream.next().await {
                        Some(Ok(more)) => seen += more.len(),
                        _ => break,
                    }
                }
            })
            .await;
            return Err(too_large);
        }
        body.extend_from_slice(&chunk);
    }
    Ok(body)
}

/// The request-body path and message of a serde error at `path`.
///
/// serde reports a missing or unknown field on the object that holds it; the field's own name
/// is appended so that the path names the field itself.
fn field_problem(path: &serde_path_to_error::Path, message: &str) -> FieldProblem {
    let mut text = path.to_string();
    if text == "." {
        text.clear();
    }
    let named = |prefix: &str| {
        message
            .strip_prefix(prefix)
            .and_then(|rest| rest.split('`').next())
            .map(str::to_string)
    };
    if let Some(name) = named("missing field `").or_else(|| named("unknown field `")) {
        let last = text.rsplit('.').next().unwrap_or_default();
        if last != name {
            text = if text.is_empty() {
                name
            } else {
                format!("{text}.{name}")
            };
        }
    }
    // serde_json appends " at line L column C"; the path already says where.
    let message = match message.rfind(" at line ") {
        Some(i) => &message[..i],
        None => message,
    };
    FieldProblem {
        path: text,
        message: crate::serde_words::reword(message),
    }
}

/// Parses `bytes` as a `T`, mapping errors to 400 (not JSON) or 422 (wrong shape).
///
/// # Errors
///
/// A 400 problem for malformed JSON, a 422 problem naming the field for JSON of the wrong
/// shape.
pub fn parse_json<T: DeserializeOwned>(bytes: &[u8]) -> Result<T, ApiError> {
    let mut de = serde_json::Deserializer::from_slice(bytes);
    let value = serde_path_to_error::deserialize::<_, T>(&mut de).map_err(|err| {
        let path = err.path().clone();
        let inner = err.into_inner();
        classify(&path, &inner)
    })?;
    de.end()
        .map_err(|e| ApiError::MalformedJson(e.to_string()))?;
    Ok(value)
}

fn classify(path: &serde_path_to_error::Path, err: &serde_json::Error) -> ApiError {
    use serde_json::error::Category;
    let message = err.to_string();
    match err.classify() {
        Category::Data => ApiError::Invalid(vec![field_problem(path, &message)]),
        // A number too large for f64 (1e400) is well-formed JSON that no field can hold: the
        // JSON way of writing a non-finite number. Name the field.
        Category::Syntax if message.starts_with("number out of range") => {
            let mut problem = field_problem(path, &message);
            problem.message = "must be a finite number (this one overflows a 64-bit float)".into();
            ApiError::Invalid(vec![problem])
        }
        Category::Syntax | Category::Eof | Category::Io => ApiError::MalformedJson(message),
    }
}

impl<T> FromRequest<AppState> for ApiJson<T>
where
    T: DeserializeOwned + Send,
{
    type Rejection = ApiError;

    async fn from_request(req: Request, state: &AppState) -> Result<Self, Self::Rejection> {
        let content_type = req
            .headers()
            .get(header::CONTENT_TYPE)
            .and_then(|v| v.to_str().ok())
            .unwrap_or_default()
            .to_string();
        if !is_json(&content_type) {
            let got = if content_type.is_empty() {
                "no Content-Type".to_string()
            } else {
                format!("Content-Type '{content_type}'")
            };
            return Err(ApiError::UnsupportedMediaType(format!(
                "The request body must be JSON (Content-Type: application/json); got {got}."
            )));
        }
        let bytes = read_body(req, state.max_body_bytes).await?;
        parse_json(&bytes).map(ApiJson)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde::Deserialize;

    #[derive(Debug, Deserialize)]
    #[serde(deny_unknown_fields)]
    #[allow(dead_code)]
    struct Inner {
        length_m: f64,
    }

    #[derive(Debug, Deserialize)]
    #[serde(deny_unknown_fields)]
    #[allow(dead_code)]
    struct Outer {
        tube: Inner,
        speeds_m_per_s: Vec<f64>,
    }

    fn problem(json: &str) -> ApiError {
        match parse_json::<Outer>(json.as_bytes()) {
            Ok(v) => panic!("accepted {v:?}"),
            Err(e) => e,
        }
    }

    fn only_path(e: &ApiError) -> String {
        match e {
            ApiError::Invalid(errs) if errs.len() == 1 => errs[0].path.clone(),
            other => panic!("expected one field problem, got {other:?}"),
        }
    }

    #[test]
    fn media_types() {
        assert!(is_json("application/json"));
        assert!(is_json("application/json; charset=utf-8"));
        assert!(is_json("Application/JSON"));
        assert!(is_json("application/merge-patch+json"));
        assert!(!is_json("text/plain"));
        assert!(!is_json(""));
        assert!(!is_json("application/x-www-form-urlencoded"));
    }

    #[test]
    fn field_paths_are_named() {
        let e = problem(r#"{"tube": {"length_m": "NaN"}, "speeds_m_per_s": [1]}"#);
        assert_eq!(only_path(&e), "tube.length_m");
        let e = problem(r#"{"tube": {"length_m": 1, "colour": 2}, "speeds_m_per_s": [1]}"#);
        assert_eq!(only_path(&e), "tube.colour");
        let e = problem(r#"{"tube": {}, "speeds_m_per_s": [1]}"#);
        assert_eq!(only_path(&e), "tube.length_m");
        let e = problem(r#"{"tube": {"length_m": 1}, "speeds_m_per_s": [1, "x"]}"#);
        assert_eq!(only_path(&e), "speeds_m_per_s[1]");
        let e = problem(r#"{"tube": {"length_m": 1e400}, "speeds_m_per_s": [1]}"#);
        assert_eq!(only_path(&e), "tube.length_m");
        let e = problem(r#"[]"#);
        assert_eq!(only_path(&e), "");
    }

    #[test]
    fn syntax_errors_are_malformed() {
        assert!(matches!(
            problem(r#"{"tube": {"length_m": 1"#),
            ApiError::MalformedJson(_)
        ));
        assert!(matches!(problem(""), ApiError::MalformedJson(_)));
        assert!(matches!(
            problem(r#"{"tube": {"length_m": 1}, "speeds_m_per_s": [1]} trailing"#),
            ApiError::MalformedJson(_)
        ));
        // Nesting deeper than serde_json's recursion limit (128) is malformed...
        let deep = format!("{}{}", "[".repeat(5000), "]".repeat(5000));
        let e = parse_json::<serde_json::Value>(deep.as_bytes());
        assert!(matches!(e, Err(ApiError::MalformedJson(_))), "{e:?}");
        // ...and in a typed request the first level of the wrong shape is named instead.
        let e = problem(&format!(
            r#"{{"tube": {{"length_m": 1}}, "speeds_m_per_s": {}{}}}"#,
            "[".repeat(5000),
            "]".repeat(5000)
        ));
        assert_eq!(only_path(&e), "speeds_m_per_s[0]");
    }
}
