//! Property tests of the request edge: the JSON parser, `DesignSpec` deserialisation and the
//! model's `Design::from_spec` validation, fed arbitrary bytes, arbitrary JSON values and
//! arbitrary numeric designs.
//!
//! What must hold for every input: nothing panics; a refusal is a 400 (not JSON) or a 422
//! whose every error names a field by a path into the request body; a design field set outside
//! the bounds the OpenAPI document states is refused naming that very field.
//!
//! Run with `cargo test --release -p ringdrag-service --test design_input`; set
//! `PROPTEST_CASES` for a longer run.

use proptest::prelude::*;
use ringdrag_model::Limits;
use ringdrag_service::api::force_curve::ForceCurveRequest;
use ringdrag_service::extract::parse_json;
use ringdrag_service::problem::ApiError;
use serde_json::{Value, json};

/// An invented valid design: a 12 mm N42 magnet in a copper tube (the README's scenario).
fn valid_design() -> Value {
    json!({
        "magnets": {
            "grade": "N42",
            "outer_diameter_m": 0.012,
            "inner_diameter_m": 0.0,
            "length_m": 0.020,
            "count": 1
        },
        "tube": {
            "material": "copper-c12200",
            "inner_diameter_m": 0.013,
            "wall_thickness_m": 0.0015,
            "length_m": 0.30
        },
        "load": { "incline_deg": 90 }
    })
}

/// Field names of the request records, so that generated objects often hit real fields.
const NAMES: &[&str] = &[
    "design",
    "magnets",
    "tube",
    "load",
    "speeds_m_per_s",
    "resolution",
    "radial_layers",
    "grade",
    "material",
    "outer_diameter_m",
    "inner_diameter_m",
    "length_m",
    "count",
    "polarity",
    "wall_thickness_m",
    "temperature_c",
    "perforation_fraction",
    "incline_deg",
    "remanence_t",
    "conductivity_s_per_m",
];

fn any_number() -> impl Strategy<Value = Value> {
    prop_oneof![
        any::<i64>().prop_map(Value::from),
        any::<u64>().prop_map(Value::from),
        any::<f64>()
            .prop_filter("JSON holds finite numbers", |v| v.is_finite())
            .prop_map(Value::from),
        (-1.0e3..1.0e3f64).prop_map(Value::from),
        (0.0..0.1f64).prop_map(Value::from),
        Just(json!(0)),
        Just(json!(-0.0)),
        Just(json!(5e-324)),
        Just(json!(1.7976931348623157e308)),
    ]
}

fn any_json() -> impl Strategy<Value = Value> {
    let leaf = prop_oneof![
        Just(Value::Null),
        any::<bool>().prop_map(Value::from),
        any_number(),
        prop::sample::select(NAMES).prop_map(Value::from),
        "[a-zA-Z0-9 ._-]{0,12}".prop_map(Value::from),
        Just(json!("N42")),
        Just(json!("copper-c12200")),
        Just(json!("alternating")),
    ];
    leaf.prop_recursive(5, 64, 8, |inner| {
        prop_oneof![
            prop::collection::vec(inner.clone(), 0..8).prop_map(Value::Array),
            prop::collection::vec(
                (
                    prop_oneof![
                        prop::sample::select(NAMES).prop_map(str::to_string),
                        "[a-z_]{1,10}"
                    ],
                    inner
                ),
                0..8
            )
            .prop_map(|entries| Value::Object(entries.into_iter().collect())),
        ]
    })
}

/// Parses and validates a force-curve request body; returns the refusal, if any.
fn check_request(bytes: &[u8]) -> Result<(), ApiError> {
    let request: ForceCurveRequest = parse_json(bytes)?;
    request.validate(&Limits::default()).map(|_| ())
}

/// The roots a request-body path may start with.
const ROOTS: &[&str] = &["design", "speeds_m_per_s", "resolution"];

/// Asserts the refusal policy: 400 for non-JSON, otherwise a 422 whose errors are named
/// (a path into the request body; empty only when the body is not an object at all).
fn assert_refusal_is_named(error: &ApiError, body_is_object: bool) {
    match error {
        ApiError::MalformedJson(_) => {}
        ApiError::Invalid(errors) | ApiError::JobTooLarge(errors) => {
            assert!(!errors.is_empty());
            for e in errors {
                assert!(!e.message.is_empty(), "{error:?}");
                if body_is_object {
                    assert!(!e.path.is_empty(), "an unnamed error: {error:?}");
                }
            }
        }
        other => panic!("unexpected refusal {other:?}"),
    }
}

/// A numeric design field and the bounds the OpenAPI document states for it.
#[derive(Debug, Clone)]
struct Bounded {
    /// Path in the design object, e.g. `tube.wall_thickness_m`.
    path: String,
    integer: bool,
    minimum: Option<f64>,
    exclusive_minimum: Option<f64>,
    maximum: Option<f64>,
    exclusive_maximum: Option<f64>,
}

/// Every bounded numeric field of the design, from the service's own OpenAPI document.
fn bounded_fields() -> Vec<Bounded> {
    let doc = serde_json::to_value(ringdrag_service::openapi()).unwrap_or(Value::Null);
    let schemas = &doc["components"]["schemas"];
    let mut fields = Vec::new();
    for (object, schema) in [
        ("magnets", "MagnetSpec"),
        ("tube", "TubeSpec"),
        ("load", "LoadSpec"),
    ] {
        let Some(props) = schemas[schema]["properties"].as_object() else {
            panic!("{schema} has properties")
        };
        for (name, p) in props {
            let types: Vec<String> = match &p["type"] {
                Value::String(t) => vec![t.clone()],
                Value::Array(ts) => ts
                    .iter()
                    .filter_map(|t| t.as_str().map(str::to_string))
                    .collect(),
                _ => Vec::new(),
            };
            let numeric = types.iter().any(|t| t == "number" || t == "integer");
            let field = Bounded {
                path: format!("{object}.{name}"),
                integer: types.iter().any(|t| t == "integer"),
                minimum: p["minimum"].as_f64(),
                exclusive_minimum: p["exclusiveMinimum"].as_f64(),
                maximum: p["maximum"].as_f64(),
                exclusive_maximum: p["exclusiveMaximum"].as_f64(),
            };
            let bounded = field.minimum.is_some()
                || field.exclusive_minimum.is_some()
                || field.maximum.is_some()
                || field.exclusive_maximum.is_some();
            if numeric && bounded {
                fields.push(field);
            }
        }
    }
    fields
}

fn set(design: &mut Value, path: &str, value: Value) {
    let mut parts = path.split('.');
    let (Some(object), Some(field)) = (parts.next(), parts.next()) else {
        panic!("path {path}")
    };
    design[object][field] = value;
}

/// A value just or far outside the field's bounds, from `side` (below or above) and `scale`.
fn outside(field: &Bounded, above: bool, scale: f64) -> Option<f64> {
    let step = |bound: f64| bound.abs().max(1.0) * scale;
    if above {
        if let Some(max) = field.exclusive_maximum {
            return Some(if scale < 1e-3 { max } else { max + step(max) });
        }
        field.maximum.map(|max| {
            let v = max + step(max);
            if field.integer {
                v.ceil().max(max + 1.0)
            } else {
                v
            }
        })
    } else {
        if let Some(min) = field.exclusive_minimum {
            return Some(if scale < 1e-3 { min } else { min - step(min) });
        }
        field.minimum.map(|min| {
            let v = min - step(min);
            if field.integer {
                v.floor().min(min - 1.0)
            } else {
                v
            }
        })
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(512))]

    #[test]
    fn arbitrary_bytes_never_panic(bytes in prop::collection::vec(any::<u8>(), 0..256)) {
        if let Err(e) = check_request(&bytes) {
            let is_object = serde_json::from_slice::<Value>(&bytes).is_ok_and(|v| v.is_object());
            assert_refusal_is_named(&e, is_object);
        }
    }

    #[test]
    fn damaged_valid_bodies_never_panic(
        cut in 0usize..400,
        flips in prop::collection::vec((0usize..400, any::<u8>()), 0..4),
    ) {
        let mut bytes = serde_json::to_vec(&json!({ "design": valid_design() }))
            .unwrap_or_default();
        for (at, byte) in flips {
            let at = at % bytes.len();
            bytes[at] = byte;
        }
        bytes.truncate(cut.max(1));
        if let Err(e) = check_request(&bytes) {
            let is_object = serde_json::from_slice::<Value>(&bytes).is_ok_and(|v| v.is_object());
            assert_refusal_is_named(&e, is_object);
        }
    }

    #[test]
    fn arbitrary_json_never_panics(value in any_json()) {
        let bytes = serde_json::to_vec(&value).unwrap_or_default();
        if let Err(e) = check_request(&bytes) {
            assert_refusal_is_named(&e, value.is_object());
        }
        // The same value as the design of an otherwise well-formed request.
        let bytes = serde_json::to_vec(&json!({ "design": value })).unwrap_or_default();
        if let Err(e) = check_request(&bytes) {
            assert_refusal_is_named(&e, true);
            if let ApiError::Invalid(errors) = &e {
                for err in errors {
                    prop_assert!(err.path.starts_with("design"), "{:?}", err);
                }
            }
        }
    }

    #[test]
    fn arbitrary_numeric_designs_are_validated_by_name(
        values in prop::collection::vec(any_number(), 24),
        picks in prop::collection::vec(any::<bool>(), 24),
    ) {
        let fields = bounded_fields();
        let mut design = valid_design();
        for ((field, value), pick) in fields.iter().zip(values).zip(picks) {
            if pick {
                set(&mut design, &field.path, value);
            }
        }
        let body = serde_json::to_vec(&json!({ "design": design })).unwrap_or_default();
        if let Err(e) = check_request(&body) {
            assert_refusal_is_named(&e, true);
            if let ApiError::Invalid(errors) | ApiError::JobTooLarge(errors) = &e {
                for err in errors {
                    let root = err.path.split(['.', '[']).next().unwrap_or_default();
                    prop_assert!(ROOTS.contains(&root), "{:?}", err);
                }
            }
        }
    }

    #[test]
    fn a_field_outside_its_documented_bounds_is_refused_by_name(
        index in 0usize..64,
        above in any::<bool>(),
        scale in prop_oneof![Just(1e-9), 1e-6..1e-3f64, 1e-3..1e6f64],
    ) {
        let fields = bounded_fields();
        prop_assume!(!fields.is_empty());
        let field = &fields[index % fields.len()];
        let Some(value) = outside(field, above, scale) else {
            return Ok(());
        };
        prop_assume!(value.is_finite());
        let mut design = valid_design();
        let number = if field.integer {
            // An integer field given an integral value (serde refuses a fraction anyway).
            json!(value as i64)
        } else {
            json!(value)
        };
        set(&mut design, &field.path, number.clone());
        let body = serde_json::to_vec(&json!({ "design": design })).unwrap_or_default();
        let expected = format!("design.{}", field.path);
        match check_request(&body) {
            Ok(()) => prop_assert!(false, "{expected} = {number} accepted, outside {field:?}"),
            Err(ApiError::Invalid(errors)) => prop_assert!(
                errors.iter().any(|e| e.path == expected),
                "{expected} = {number}: errors name {:?}",
                errors.iter().map(|e| e.path.as_str()).collect::<Vec<_>>()
            ),
            Err(other) => prop_assert!(false, "{expected} = {number}: {other:?}"),
        }
    }
}

#[test]
fn the_bounded_fields_are_found() {
    // The design has 22 numeric fields with bounds in its schema (MagnetSpec 8, TubeSpec 9,
    // LoadSpec 5); finding fewer means the document lost its bounds.
    let fields = bounded_fields();
    assert!(fields.len() >= 20, "{fields:?}");
    assert!(fields.iter().any(|f| f.path == "tube.wall_thickness_m"));
    assert!(
        fields
            .iter()
            .any(|f| f.path == "magnets.count" && f.integer)
    );
    // The valid design passes.
    let body = serde_json::to_vec(&json!({ "design": valid_design() })).unwrap_or_default();
    assert_eq!(check_request(&body).err(), None);
}
