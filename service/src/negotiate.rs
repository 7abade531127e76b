//! Content negotiation: which representation of a job's answer the client asked for.
//!
//! The job endpoints answer JSON by default; some also answer as an SVG plot
//! (`image/svg+xml`), as a table (`text/csv`, RFC 4180) or, for sweeps, as a stream of JSON
//! lines (`application/x-ndjson`). The
//! client chooses with the `Accept` header, read the way RFC 9110 (section 12.5.1) describes:
//! each media range may carry a weight `q` from 0 to 1; a representation takes the weight of
//! the most specific range that matches it (`type/subtype` before `type/*` before `*/*`); the
//! highest positive weight wins, ties going to the order the endpoint lists its
//! representations (JSON first). No `Accept` header, or one that names no media range, means
//! JSON. When no
//! offered representation is acceptable the answer is 406 as a problem document (errors are
//! always `application/problem+json`, whatever `Accept` says).

use crate::problem::ApiError;
use axum::body::Body;
use axum::http::{HeaderMap, HeaderValue, header};
use axum::response::{IntoResponse, Response};

/// A representation a job endpoint can answer with.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Media {
    /// `application/json`: the response record.
    Json,
    /// `application/x-ndjson`: one JSON object per line, streamed as results finish.
    NdJson,
    /// `image/svg+xml`: a plot of the result.
    Svg,
    /// `text/csv`: the result's points as a table (RFC 4180), a header row first.
    Csv,
}

impl Media {
    /// The media type as written in `Content-Type`.
    pub fn as_str(self) -> &'static str {
        match self {
            Self::Json => "application/json",
            Self::NdJson => "application/x-ndjson",
            Self::Svg => "image/svg+xml",
            Self::Csv => "text/csv",
        }
    }

    /// The `Content-Type` of an answer: the media type with its parameters (RFC 4180 section
    /// 3 names `charset` and `header` for `text/csv`).
    pub fn content_type(self) -> &'static str {
        match self {
            Self::Csv => "text/csv; charset=utf-8; header=present",
            other => other.as_str(),
        }
    }

    fn type_and_subtype(self) -> (&'static str, &'static str) {
        match self {
            Self::Json => ("application", "json"),
            Self::NdJson => ("application", "x-ndjson"),
            Self::Svg => ("image", "svg+xml"),
            Self::Csv => ("text", "csv"),
        }
    }
}

/// One media range of an `Accept` header with its weight.
#[derive(Debug, Clone, PartialEq)]
struct MediaRange {
    kind: String,
    subtype: String,
    q: f64,
}

impl MediaRange {
    /// How specifically this range matches `media`: 3 exact, 2 `type/*`, 1 `*/*`, None no match.
    fn specificity(&self, media: Media) -> Option<u8> {
        let (kind, subtype) = media.type_and_subtype();
        if self.kind == "*" && self.subtype == "*" {
            Some(1)
        } else if self.kind == kind && self.subtype == "*" {
            Some(2)
        } else if self.kind == kind && self.subtype == subtype {
            Some(3)
        } else {
            None
        }
    }
}

/// Parses the media ranges of every `Accept` header line. Ranges that are not of the form
/// `type/subtype` are ignored; a weight that is not a number from 0 to 1 counts as 1 (the
/// range is kept rather than silently dropped).
fn media_ranges(headers: &HeaderMap) -> Vec<MediaRange> {
    let mut ranges = Vec::new();
    for value in headers.get_all(header::ACCEPT) {
        let Ok(text) = value.to_str() else { continue };
        for item in text.split(',') {
            let mut parts = item.split(';');
            let essence = parts.next().unwrap_or_default().trim().to_ascii_lowercase();
            let Some((kind, subtype)) = essence.split_once('/') else {
                continue;
            };
            let (kind, subtype) = (kind.trim(), subtype.trim());
            if kind.is_empty() || subtype.is_empty() {
                continue;
            }
            let q = parts
                .filter_map(|p| p.split_once('='))
                .find(|(name, _)| name.trim().eq_ignore_ascii_case("q"))
                .and_then(|(_, v)| v.trim().parse::<f64>().ok())
                .filter(|q| (0.0..=1.0).contains(q))
                .unwrap_or(1.0);
            ranges.push(MediaRange {
                kind: kind.to_string(),
                subtype: subtype.to_string(),
                q,
            });
        }
    }
    ranges
}

/// The representation to answer with, from the `Accept` header and the representations the
/// endpoint `offers` (in its order of preference, at least one); 406 when none is acceptable.
///
/// # Errors
///
/// A 406 problem listing the offered media types when the Accept header admits none of them.
pub fn choose(headers: &HeaderMap, offers: &[Media]) -> Result<Media, ApiError> {
    let ranges = media_ranges(headers);
    let not_acceptable = || ApiError::NotAcceptable {
        offered: offers.iter().map(|m| m.as_str()).collect(),
    };
    let Some(&first) = offers.first() else {
        return Err(not_acceptable());
    };
    if ranges.is_empty() {
        return Ok(first);
    }
    let mut best: Option<(Media, f64)> = None;
    for &media in offers {
        let weight = ranges
            .iter()
            .filter_map(|r| r.specificity(media).map(|s| (s, r.q)))
            // The most specific range decides; among equally specific ones the highest weight.
            .max_by(|a, b| a.0.cmp(&b.0).then(a.1.total_cmp(&b.1)))
            .map_or(0.0, |(_, q)| q);
        if weight > 0.0 && best.is_none_or(|(_, w)| weight > w) {
            best = Some((media, weight));
        }
    }
    best.map(|(m, _)| m).ok_or_else(not_acceptable)
}

/// A 200 response with `body` declared as `media`.
pub fn respond(media: Media, body: impl Into<Body>) -> Response {
    let mut response = body.into().into_response();
    response.headers_mut().insert(
        header::CONTENT_TYPE,
        HeaderValue::from_static(media.content_type()),
    );
    response
}

#[cfg(test)]
mod tests {
    use super::*;
    use axum::http::HeaderValue;

    fn accept(values: &[&'static str]) -> HeaderMap {
        let mut h = HeaderMap::new();
        for v in values {
            h.append(header::ACCEPT, HeaderValue::from_static(v));
        }
        h
    }

    const ALL: [Media; 3] = [Media::Json, Media::NdJson, Media::Svg];

    #[test]
    fn no_accept_header_means_the_first_offer() {
        assert_eq!(choose(&HeaderMap::new(), &ALL), Ok(Media::Json));
        assert_eq!(choose(&accept(&[""]), &ALL), Ok(Media::Json));
    }

    #[test]
    fn exact_types_and_wildcards() {
        assert_eq!(choose(&accept(&["image/svg+xml"]), &ALL), Ok(Media::Svg));
        assert_eq!(
            choose(&accept(&["application/x-ndjson"]), &ALL),
            Ok(Media::NdJson)
        );
        assert_eq!(choose(&accept(&["image/*"]), &ALL), Ok(Media::Svg));
        assert_eq!(choose(&accept(&["*/*"]), &ALL), Ok(Media::Json));
        assert_eq!(choose(&accept(&["application/*"]), &ALL), Ok(Media::Json));
        assert_eq!(choose(&accept(&["Image/SVG+XML"]), &ALL), Ok(Media::Svg));
    }

    #[test]
    fn weights_decide_and_the_most_specific_range_wins() {
        // source: RFC 9110, section 12.5.1 (weights; the most specific reference has
        // precedence).
        let h = accept(&["application/json;q=0.5, image/svg+xml;q=0.9"]);
        assert_eq!(choose(&h, &ALL), Ok(Media::Svg));
        let h = accept(&["*/*;q=0.8, application/json;q=0"]);
        assert_eq!(choose(&h, &ALL), Ok(Media::NdJson));
        let h = accept(&["text/html", "*/*;q=0.1"]);
        assert_eq!(choose(&h, &ALL), Ok(Media::Json));
        let h = accept(&["application/x-ndjson; q=0.7", "application/json ;q=0.7"]);
        assert_eq!(
            choose(&h, &ALL),
            Ok(Media::Json),
            "ties go to the first offer"
        );
    }

    #[test]
    fn nothing_acceptable_is_406() {
        let e = choose(&accept(&["text/csv"]), &ALL);
        assert!(matches!(e, Err(ApiError::NotAcceptable { .. })), "{e:?}");
        assert_eq!(
            e.map_err(|e| e.status().as_u16()),
            Err(406),
            "406 Not Acceptable"
        );
        let e = choose(&accept(&["image/svg+xml"]), &[Media::Json]);
        assert!(matches!(e, Err(ApiError::NotAcceptable { .. })));
        let e = choose(&accept(&["image/svg+xml;q=0"]), &[Media::Svg]);
        assert!(matches!(e, Err(ApiError::NotAcceptable { .. })));
    }

    #[test]
    fn csv_is_offered_where_listed() {
        let with_csv = [Media::Json, Media::Svg, Media::Csv];
        assert_eq!(choose(&accept(&["text/csv"]), &with_csv), Ok(Media::Csv));
        assert_eq!(choose(&accept(&["text/*"]), &with_csv), Ok(Media::Csv));
        assert_eq!(
            Media::Csv.content_type(),
            "text/csv; charset=utf-8; header=present"
        );
    }

    #[test]
    fn junk_is_ignored_or_refused_never_a_panic() {
        assert_eq!(
            choose(&accept(&["garbage, ;;, /, a/"]), &ALL),
            Ok(Media::Json),
            "a header that names no media range counts as absent"
        );
        assert_eq!(
            choose(&accept(&["image/svg+xml;q=abc"]), &ALL),
            Ok(Media::Svg)
        );
    }
}
