//! SVG plots (`Accept: image/svg+xml`): well-formed XML, axis titles with units, a key, lines
//! that carry the data, and content negotiation (406, errors staying problem documents).

use crate::helpers::{
    TestApp, expect_ok_as, expect_problem, post_accepting, rel, sample_design, start_app,
};
use serde_json::{Value, json};

/// The SVG answer of `POST path`, checked to be `image/svg+xml`.
async fn post_svg(app: &TestApp, path: &str, body: &Value) -> String {
    let response = post_accepting(app, path, "image/svg+xml", body).await;
    let (content_type, text) = expect_ok_as(response, "image/svg+xml").await;
    assert_eq!(content_type, "image/svg+xml");
    text
}

/// What a test reads from an SVG document: its texts, its polylines (stroke colour, dash
/// pattern, points), its title and description.
struct Svg {
    texts: Vec<String>,
    polylines: Vec<(String, Vec<(f64, f64)>)>,
    dashes: Vec<(String, String, usize)>,
    circles: usize,
    title: String,
    desc: String,
}

/// Parses `text` as XML (any well-formedness error fails the test) with an `svg` root.
fn parse_svg(text: &str) -> Svg {
    let doc = roxmltree::Document::parse(text).expect("the SVG is well-formed XML");
    let root = doc.root_element();
    assert_eq!(root.tag_name().name(), "svg");
    assert!(root.attribute("width").is_some() && root.attribute("height").is_some());
    assert!(
        root.attribute("viewBox").is_some(),
        "a viewBox lets the plot scale"
    );
    let mut svg = Svg {
        texts: Vec::new(),
        polylines: Vec::new(),
        dashes: Vec::new(),
        circles: 0,
        title: String::new(),
        desc: String::new(),
    };
    for node in root.descendants().filter(roxmltree::Node::is_element) {
        match node.tag_name().name() {
            "text" => svg
                .texts
                .push(node.text().unwrap_or_default().trim().to_string()),
            "polyline" => {
                let points: Vec<(f64, f64)> = node
                    .attribute("points")
                    .unwrap_or_default()
                    .split_whitespace()
                    .filter_map(|p| {
                        let (x, y) = p.split_once(',')?;
                        Some((x.parse().ok()?, y.parse().ok()?))
                    })
                    .collect();
                let stroke = node.attribute("stroke").unwrap_or_default().to_string();
                let dash = node
                    .attribute("stroke-dasharray")
                    .unwrap_or_default()
                    .to_string();
                svg.dashes.push((stroke.clone(), dash, points.len()));
                svg.polylines.push((stroke, points));
            }
            "circle" => svg.circles += 1,
            "title" => svg.title = node.text().unwrap_or_default().to_string(),
            "desc" => svg.desc = node.text().unwrap_or_default().to_string(),
            _ => {}
        }
    }
    svg
}

impl Svg {
    fn has_text(&self, wanted: &str) -> bool {
        self.texts.iter().any(|t| t == wanted)
    }

    fn text_starting(&self, prefix: &str) -> Option<&str> {
        self.texts
            .iter()
            .find(|t| t.starts_with(prefix))
            .map(String::as_str)
    }

    /// Data lines: polylines with more than two points (key swatches and markers have two).
    fn data_lines(&self) -> Vec<&Vec<(f64, f64)>> {
        self.polylines
            .iter()
            .filter(|(_, p)| p.len() > 2)
            .map(|(_, p)| p)
            .collect()
    }
}

/// The number in a key label such as `terminal speed 0.0505 m/s`.
fn number_after(label: &str, prefix: &str) -> f64 {
    label
        .strip_prefix(prefix)
        .and_then(|rest| rest.split_whitespace().next())
        .and_then(|n| n.parse().ok())
        .unwrap_or_else(|| panic!("no number in {label:?}"))
}

#[tokio::test]
async fn the_force_curve_plot_is_an_svg_with_titled_axes_and_the_speeds_marked() {
    let app = start_app().await;
    let request = json!({ "design": sample_design() });
    let curve = app.post_ok("/v1/force-curve", &request).await;
    let svg = parse_svg(&post_svg(&app, "/v1/force-curve", &request).await);
    assert!(svg.has_text("speed [m/s]"), "{:?}", svg.texts);
    assert!(svg.has_text("braking force [N]"), "{:?}", svg.texts);
    // The key names the terminal and critical speeds with the JSON answer's values (three
    // significant digits, so within 0.5 %: common practice for a label).
    let vt = curve["terminal_speed_m_per_s"].as_f64().expect("terminal");
    let label = svg
        .text_starting("terminal speed ")
        .expect("terminal speed in the key");
    assert!(
        rel(number_after(label, "terminal speed "), vt) < 0.005,
        "{label} vs {vt}"
    );
    let vc = curve["critical_speed_m_per_s"].as_f64().expect("critical");
    let label = svg
        .text_starting("critical speed ")
        .expect("critical speed in the key");
    assert!(
        rel(number_after(label, "critical speed "), vc) < 0.005,
        "{label} vs {vc}"
    );
    // One data line with one vertex per speed (40 by default, the contract), left to right.
    let lines = svg.data_lines();
    assert_eq!(lines.len(), 1);
    assert_eq!(lines[0].len(), 40);
    assert!(lines[0].windows(2).all(|w| w[1].0 >= w[0].0));
    // The dot where braking meets the load.
    assert_eq!(svg.circles, 1);
    // Title and description say what is drawn for which design, with the headline numbers.
    assert_eq!(svg.title, "Braking force against speed");
    for words in [
        "N42",
        "copper-c12200",
        "bore 13 mm",
        "wall 1.5 mm",
        "terminal speed",
    ] {
        assert!(
            svg.desc.contains(words),
            "{words} missing from {:?}",
            svg.desc
        );
    }
}

#[tokio::test]
async fn the_stroke_plot_has_two_panels_over_time() {
    let app = start_app().await;
    let request = json!({
        "design": sample_design(),
        "start": { "position_m": -0.03, "speed_m_per_s": 0.0 },
        "samples": 120
    });
    let stroke = app.post_ok("/v1/simulate", &request).await;
    let svg = parse_svg(&post_svg(&app, "/v1/simulate", &request).await);
    for title in ["speed [m/s]", "braking force [N]"] {
        assert!(svg.has_text(title), "{title} missing: {:?}", svg.texts);
    }
    assert_eq!(
        svg.texts.iter().filter(|t| *t == "time [s]").count(),
        2,
        "one time axis per panel"
    );
    // Speed and force: one line each, one vertex per sample.
    let lines = svg.data_lines();
    assert_eq!(lines.len(), 2);
    assert!(lines.iter().all(|l| l.len() == 120));
    // The key marks the entry (released 30 mm above it) and the far end with the JSON values.
    let exit = stroke["summary"]["exit_time_s"].as_f64().expect("exits");
    let label = svg
        .text_starting("reaches the far end at ")
        .expect("exit in the key");
    assert!(rel(number_after(label, "reaches the far end at "), exit) < 0.005);
    assert!(svg.text_starting("enters the tube at ").is_some());
    // The title says how the run ended with the summary's own time: the run ends at the stop
    // (by default the far end), so the title's time is the summary's stroke time.
    assert_eq!(stroke["summary"]["end_reason"], "reached_stop");
    let title = svg
        .text_starting("Stroke: reaches the stop at ")
        .unwrap_or_else(|| panic!("{:?}", svg.texts));
    let stroke_time = stroke["summary"]["stroke_time_s"].as_f64().expect("lands");
    assert!(
        rel(
            number_after(title, "Stroke: reaches the stop at "),
            stroke_time
        ) < 0.005
    );
    assert!(
        rel(stroke_time, exit) < 1e-9,
        "the default stop is the far end"
    );
    assert_eq!(stroke["summary"]["end_time_s"].as_f64(), Some(stroke_time));
    assert_eq!(svg.title, title);
    assert!(svg.desc.contains("N42") && svg.desc.contains("Peak speed"));
    // Against position: the same two panels over the tube, entry at 0 and the far end at its
    // length, 300 mm.
    let response = post_accepting(
        &app,
        "/v1/simulate?against=position",
        "image/svg+xml",
        &request,
    )
    .await;
    assert_eq!(response.status().as_u16(), 200);
    let svg = parse_svg(&response.text().await.expect("body"));
    assert_eq!(
        svg.texts
            .iter()
            .filter(|t| *t == "position of the stack centre [mm]")
            .count(),
        2
    );
    assert!(svg.data_lines().iter().all(|l| l.len() == 120));
    assert!(svg.texts.iter().any(|t| t == "300"), "{:?}", svg.texts);
}

#[tokio::test]
async fn extreme_inputs_still_draw_promptly() {
    let app = start_app().await;
    // Speeds down to the smallest subnormal number, values at the ends of the f64 range: the
    // logarithmic axes keep to twelve decades and normal numbers, so every plot finishes
    // (source: IEEE 754 binary64 ranges; a regression test for a tick loop that never ended).
    let bodies = [
        (
            "/v1/force-curve",
            json!({ "design": sample_design(), "speeds_m_per_s": [5e-324, 10000.0] }),
        ),
        (
            "/v1/force-curve",
            json!({ "design": sample_design(), "speeds_m_per_s": [1e-320] }),
        ),
        (
            "/v1/sweep",
            json!({
                "design": sample_design(),
                "vary": [{ "path": "load.applied_force_n", "values": [5e-324, 1e-323] }],
                "metrics": ["terminal_speed_m_per_s"]
            }),
        ),
        (
            "/v1/sweep",
            json!({
                "design": sample_design(),
                "vary": [{ "path": "load.applied_force_n", "values": [1e307, 1.79e308] }],
                "metrics": ["terminal_speed_m_per_s"]
            }),
        ),
    ];
    for (path, body) in bodies {
        let svg = tokio::time::timeout(
            std::time::Duration::from_secs(20),
            post_svg(&app, path, &body),
        )
        .await
        .unwrap_or_else(|_| panic!("{path} {body} did not finish"));
        parse_svg(&svg);
    }
    let ready: Value = app.get("/readyz").await.json().await.expect("json");
    assert_eq!(ready["job_slots_free"], ready["job_slots"], "{ready}");
}

#[tokio::test]
async fn the_sweep_plot_draws_a_line_per_second_axis_value() {
    let app = start_app().await;
    let request = json!({
        "design": sample_design(),
        "vary": [
            { "path": "tube.wall_thickness_m", "from": 0.0005, "to": 0.004, "steps": 5 },
            { "path": "load.payload_mass_kg", "values": [0.0, 0.05, 0.1] }
        ],
        "metrics": ["terminal_speed_m_per_s", "peak_force_n"]
    });
    let svg = parse_svg(&post_svg(&app, "/v1/sweep", &request).await);
    for title in [
        "tube wall thickness [mm]",
        "terminal speed [m/s]",
        "peak force [N]",
    ] {
        assert!(svg.has_text(title), "{title} missing: {:?}", svg.texts);
    }
    // The key in words and display units.
    for value in ["0", "0.05", "0.1"] {
        let entry = format!("payload {value} kg");
        assert!(svg.has_text(&entry), "{entry} missing from the key");
    }
    // The payload leaves the peak force alone: its three lines coincide, and the panel says so.
    assert!(svg.has_text("all 3 lines coincide here"), "{:?}", svg.texts);
    // Two panels of three lines, five points each.
    let lines = svg.data_lines();
    assert_eq!(lines.len(), 6);
    assert!(lines.iter().all(|l| l.len() == 5));
    // Terminal speed falls as the wall thickens (source: Levin, da Silveira & Rizzato, Am. J.
    // Phys. 74, 815, 2006: damping grows with the wall): in SVG, y grows downwards.
    for line in &lines[..3] {
        assert!(line.windows(2).all(|w| w[1].1 > w[0].1), "{line:?}");
    }
}

#[tokio::test]
async fn negotiation_picks_the_representation_and_refuses_the_unknown() {
    let app = start_app().await;
    let request = json!({ "design": sample_design(), "speeds_m_per_s": [0.01, 0.1, 1.0] });
    // Weights decide (source: RFC 9110, section 12.5.1).
    let r = post_accepting(
        &app,
        "/v1/force-curve",
        "application/json;q=0.4, image/svg+xml;q=0.9",
        &request,
    )
    .await;
    assert_eq!(
        r.headers()
            .get("content-type")
            .and_then(|v| v.to_str().ok()),
        Some("image/svg+xml")
    );
    let r = post_accepting(&app, "/v1/force-curve", "*/*", &request).await;
    assert_eq!(
        r.headers()
            .get("content-type")
            .and_then(|v| v.to_str().ok()),
        Some("application/json")
    );
    for (path, accept) in [
        ("/v1/force-curve", "application/x-ndjson"),
        ("/v1/simulate", "text/html"),
        ("/v1/force-curve", "image/png"),
    ] {
        let body = if path == "/v1/simulate" {
            json!({ "design": sample_design() })
        } else {
            request.clone()
        };
        let problem = expect_problem(post_accepting(&app, path, accept, &body).await, 406).await;
        assert_eq!(problem["title"], "Not Acceptable");
    }
    // Errors stay problem documents when a plot was asked for.
    let mut bad = request.clone();
    bad["design"]["tube"]["inner_diameter_m"] = json!(-1.0);
    expect_problem(
        post_accepting(&app, "/v1/force-curve", "image/svg+xml", &bad).await,
        422,
    )
    .await;
    // A logarithmic speed axis cannot show a speed of zero alone.
    let zero = json!({ "design": sample_design(), "speeds_m_per_s": [0.0] });
    let problem = expect_problem(
        post_accepting(&app, "/v1/force-curve", "image/svg+xml", &zero).await,
        422,
    )
    .await;
    assert_eq!(crate::helpers::error_paths(&problem), ["speeds_m_per_s"]);
    // A sweep plot with more lines than a panel can show is refused before computing.
    let crowded = json!({
        "design": sample_design(),
        "vary": [
            { "path": "tube.wall_thickness_m", "values": [0.001, 0.002] },
            { "path": "load.payload_mass_kg", "from": 0.0, "to": 1.0, "steps": 5 },
            { "path": "load.incline_deg", "values": [30.0, 60.0, 90.0] }
        ],
        "metrics": ["terminal_speed_m_per_s"]
    });
    let problem = expect_problem(
        post_accepting(&app, "/v1/sweep", "image/svg+xml", &crowded).await,
        422,
    )
    .await;
    assert_eq!(crate::helpers::error_paths(&problem), ["vary"]);
    // Values spread wider than a 64-bit float holds cannot share one axis (source: IEEE 754
    // binary64, largest finite value about 1.8e308): refused, not drawn forever.
    let wide = json!({
        "design": sample_design(),
        "vary": [{ "path": "load.applied_force_n", "values": [-1e308, 1e308] }],
        "metrics": ["terminal_speed_m_per_s"]
    });
    let problem = expect_problem(
        post_accepting(&app, "/v1/sweep", "image/svg+xml", &wide).await,
        422,
    )
    .await;
    assert_eq!(crate::helpers::error_paths(&problem), ["vary[0]"]);
    app.assert_healthy().await;
}

#[tokio::test]
async fn twelve_sweep_lines_have_twelve_styles_and_a_tile_reads() {
    let app = start_app().await;
    let payloads: Vec<f64> = (0..12).map(|i| 0.05 * f64::from(i)).collect();
    let request = json!({
        "design": sample_design(),
        "vary": [
            { "path": "tube.wall_thickness_m", "values": [0.001, 0.002, 0.003] },
            { "path": "load.payload_mass_kg", "values": payloads }
        ],
        "metrics": ["terminal_speed_m_per_s"]
    });
    let text = post_svg(&app, "/v1/sweep", &request).await;
    let svg = parse_svg(&text);
    // Twelve data lines, each with its own colour and dash pattern together.
    let lines: Vec<&(String, String, usize)> =
        svg.dashes.iter().filter(|(_, _, n)| *n > 2).collect();
    assert_eq!(lines.len(), 12);
    let styles: std::collections::BTreeSet<(&str, &str)> = lines
        .iter()
        .map(|(stroke, dash, _)| (stroke.as_str(), dash.as_str()))
        .collect();
    assert_eq!(styles.len(), 12, "{styles:?}");
    assert!(
        lines.iter().filter(|l| !l.1.is_empty()).count() >= 6,
        "dashed lines"
    );
    assert!(svg.has_text("payload 0.55 kg"), "{:?}", svg.texts);
    assert!(svg.title.starts_with("Sweep over tube wall thickness"));
    assert!(svg.desc.contains("copper-c12200"));
    // A tile: asked at 400 px wide, the canvas is 400 px and no text is under 9 px.
    let tile = post_accepting(
        &app,
        "/v1/sweep?width_px=400&aspect=1.25",
        "image/svg+xml",
        &request,
    )
    .await
    .text()
    .await
    .expect("body");
    let doc = roxmltree::Document::parse(&tile).expect("well-formed");
    let root = doc.root_element();
    assert_eq!(root.attribute("width"), Some("400"));
    let smallest = root
        .descendants()
        .filter_map(|n| n.attribute("font-size"))
        .filter_map(|s| s.parse::<f64>().ok())
        .fold(f64::INFINITY, f64::min);
    // 11 px with a little rounding (common practice: about 11 px is the smallest text that
    // reads on a screen at 1:1).
    assert!(smallest >= 9.0, "smallest text {smallest} px");
    // Out-of-range options are named.
    let problem = expect_problem(
        post_accepting(&app, "/v1/sweep?width_px=10", "image/svg+xml", &request).await,
        422,
    )
    .await;
    assert_eq!(crate::helpers::error_paths(&problem), ["width_px"]);
}
