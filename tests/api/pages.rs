//! Pages for people: `/` points to the API reference and the workbench; `/docs/` serves the
//! browsable reference from the binary (no network); the workbench's files are served; every
//! request example of the OpenAPI document answers 200. The workbench itself is driven in a
//! real browser by `.ci/browser-test.cjs`.

use crate::helpers::{start_app, start_app_with};
use serde_json::Value;

async fn get_text(base: &str, path: &str) -> (u16, String, String) {
    let response = reqwest::get(format!("{base}{path}")).await.expect("sent");
    let status = response.status().as_u16();
    let content_type = response
        .headers()
        .get("content-type")
        .and_then(|v| v.to_str().ok())
        .unwrap_or_default()
        .to_string();
    (status, content_type, response.text().await.expect("body"))
}

#[tokio::test]
async fn the_index_points_to_the_reference_and_the_workbench() {
    let app = start_app().await;
    let (status, content_type, body) = get_text(&app.base, "/").await;
    assert_eq!(status, 200);
    assert!(content_type.starts_with("text/html"), "{content_type}");
    assert!(body.contains("href=\"/docs/\"") && body.contains("href=\"/workbench\""));
}

#[tokio::test]
async fn the_reference_and_the_workbench_are_served_from_the_binary() {
    // With keys configured the pages stay open; only /v1/ needs a key.
    let app = start_app_with(&["--api-keys", "9f3c1a7e5b2d48c6a0e4f1b9d7c35a82"]).await;
    let (status, _, body) = get_text(&app.base, "/docs/").await;
    assert_eq!(status, 200, "{body}");
    assert!(body.contains("swagger-ui"), "{body}");
    // The viewer's own files come from the binary, and it reads our document.
    let (status, _, _) = get_text(&app.base, "/docs/swagger-ui-bundle.js").await;
    assert_eq!(status, 200);
    let (status, _, config) = get_text(&app.base, "/docs/swagger-initializer.js").await;
    assert_eq!(status, 200);
    assert!(config.contains("/openapi.json"), "{config}");
    for (path, kind) in [
        ("/workbench", "text/html"),
        ("/workbench/app.js", "text/javascript"),
        ("/workbench/style.css", "text/css"),
    ] {
        let (status, content_type, body) = get_text(&app.base, path).await;
        assert_eq!(status, 200, "{path}");
        assert!(content_type.starts_with(kind), "{path}: {content_type}");
        // No code from elsewhere: the page runs from the binary alone.
        assert!(!body.contains("https://"), "{path} loads from the network");
    }
    let (status, _, _) = get_text(&app.base, "/v1/materials").await;
    assert_eq!(status, 401);
}

#[tokio::test]
async fn request_examples_of_the_document_answer_200() {
    let app = start_app().await;
    let doc: Value = app
        .get("/openapi.json")
        .await
        .json()
        .await
        .expect("document");
    let mut posted = 0;
    for (route, item) in doc["paths"].as_object().expect("paths") {
        let Some(content) = item["post"]["requestBody"]["content"]["application/json"].as_object()
        else {
            continue;
        };
        // The stroke-target sizing and selection examples are left out of the document (each
        // costs seconds, and the schema fuzzer mutates them into 60 s jobs); they are posted
        // by tests/api/configurator.rs.
        let Some(examples) = content.get("examples").and_then(Value::as_object) else {
            assert_eq!(route, "/v1/select", "{route} has no request examples");
            continue;
        };
        assert!(!examples.is_empty(), "{route}");
        for (name, example) in examples {
            let response = app.post_json(route, &example["value"]).await;
            let status = response.status().as_u16();
            let text = response.text().await.unwrap_or_default();
            assert_eq!(status, 200, "{route} example {name}: {text}");
            posted += 1;
        }
    }
    assert!(posted >= 7, "{posted} examples");
}
