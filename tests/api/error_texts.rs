//! Error messages that say what to type: units and millimetre slips, JSON words instead of
//! Rust type names, the nearest material and grade ids, the non-ferrous alternatives, and no
//! doubled punctuation.

use crate::helpers::{
    TestApp, expect_problem, post_accepting, request_with_design, sample_design, start_app,
};
use serde_json::{Value, json};

/// The message of the field at `path` in the problem answering `body`.
async fn message_for(app: &TestApp, body: &Value, path: &str) -> (String, Value) {
    let problem = expect_problem(app.post_json("/v1/force-curve", body).await, 422).await;
    let message = problem["errors"]
        .as_array()
        .and_then(|errs| errs.iter().find(|e| e["path"] == json!(path)))
        .and_then(|e| e["message"].as_str())
        .unwrap_or_else(|| panic!("no error at {path}: {problem}"))
        .to_string();
    (message, problem)
}

#[tokio::test]
async fn a_millimetre_figure_in_a_metre_field_says_how_to_write_it() {
    let app = start_app().await;
    let body = request_with_design(|d| d["magnets"]["outer_diameter_m"] = json!(12));
    let (message, _) = message_for(&app, &body, "design.magnets.outer_diameter_m").await;
    assert!(
        message.contains("12 m is above the limit of 1 m; this field is in metres (12 mm = 0.012)"),
        "{message}"
    );
    let body = request_with_design(|d| d["tube"]["length_m"] = json!(300));
    let (message, _) = message_for(&app, &body, "design.tube.length_m").await;
    assert_eq!(
        message,
        "300 m is above the limit of 20 m; this field is in metres (300 mm = 0.3)"
    );
}

#[tokio::test]
async fn wrong_types_are_said_in_json_words() {
    let app = start_app().await;
    let body = request_with_design(|d| d["tube"]["inner_diameter_m"] = json!("13 mm"));
    let (message, problem) = message_for(&app, &body, "design.tube.inner_diameter_m").await;
    assert_eq!(message, r#"must be a number, not the text "13 mm""#);
    let body = request_with_design(|d| d["magnets"]["count"] = json!(2.5));
    let (message, _) = message_for(&app, &body, "design.magnets.count").await;
    assert!(message.starts_with("must be a whole number"), "{message}");
    for answer in [problem.to_string(), message] {
        for rust in ["f64", "u32", "usize", "struct ", "Option<"] {
            assert!(!answer.contains(rust), "{rust} in {answer}");
        }
    }
}

#[tokio::test]
async fn unknown_materials_and_grades_get_the_nearest_ids() {
    let app = start_app().await;
    // The American spelling is the same material.
    let body = request_with_design(|d| d["tube"]["material"] = json!("aluminum-6061-t6"));
    app.post_ok("/v1/force-curve", &body).await;
    // An alloy without its temper is suggested, not guessed (the temper moves the conductivity).
    let body = request_with_design(|d| d["tube"]["material"] = json!("6061"));
    let (message, _) = message_for(&app, &body, "design.tube.material").await;
    assert!(
        message.contains("did you mean 'aluminium-6061-t6'?"),
        "{message}"
    );
    let body = request_with_design(|d| d["tube"]["material"] = json!("coper-c12200"));
    let (message, _) = message_for(&app, &body, "design.tube.material").await;
    assert!(message.contains("'copper-c12200'"), "{message}");
    let body = request_with_design(|d| d["magnets"]["grade"] = json!("N43"));
    let (message, _) = message_for(&app, &body, "design.magnets.grade").await;
    assert!(
        message.contains("did you mean") && message.contains("'N42'"),
        "{message}"
    );
}

#[tokio::test]
async fn the_ferromagnetic_refusal_names_the_non_ferrous_rows() {
    let app = start_app().await;
    let body = request_with_design(|d| d["tube"]["material"] = json!("stainless-430"));
    let (message, _) = message_for(&app, &body, "design.tube.material").await;
    assert!(message.contains("ferromagnetic"), "{message}");
    assert!(
        message.contains("non-ferrous") && message.contains("stainless-304-annealed"),
        "{message}"
    );
    let tables = app
        .get("/v1/materials")
        .await
        .json::<Value>()
        .await
        .expect("json");
    for row in tables["conductors"].as_array().expect("rows") {
        let id = row["id"].as_str().expect("id");
        assert!(message.contains(id), "{id} not offered in {message}");
    }
}

#[tokio::test]
async fn no_message_doubles_its_punctuation() {
    let app = start_app().await;
    let mut design = sample_design();
    design["magnets"]["outer_diameter_m"] = json!(12);
    design["tube"]["material"] = json!("mild-steel");
    // A plot with too many lines: its message ends with advice.
    let body = json!({
        "design": design,
        "vary": [
            { "path": "tube.wall_thickness_m", "values": [0.001, 0.002] },
            { "path": "load.payload_mass_kg", "from": 0, "to": 1, "steps": 13 }
        ],
        "metrics": ["damping_n_s_per_m"]
    });
    let problems = [
        expect_problem(
            app.post_json("/v1/force-curve", &json!({"design": body["design"]}))
                .await,
            422,
        )
        .await,
        expect_problem(
            post_accepting(
                &app,
                "/v1/sweep",
                "image/svg+xml",
                &json!({
                    "design": sample_design(),
                    "vary": body["vary"],
                    "metrics": body["metrics"]
                }),
            )
            .await,
            422,
        )
        .await,
    ];
    for problem in problems {
        let text = problem.to_string();
        for doubled in ["..", ".;", ";;", ",,", ". ."] {
            assert!(!text.contains(doubled), "{doubled:?} in {text}");
        }
    }
}
