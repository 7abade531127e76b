//! Tolerance bands on `POST /v1/force-curve`: the bands hold the nominal values and their ends
//! follow the scaling laws of the braking force.

use crate::helpers::{error_paths, expect_problem, rel, sample_design, start_app};
use serde_json::{Value, json};

fn band(body: &Value, metric: &str) -> (f64, f64) {
    let b = &body["tolerance_bands"]["bands"][metric];
    (
        b["min"]
            .as_f64()
            .unwrap_or_else(|| panic!("{metric} min: {body}")),
        b["max"]
            .as_f64()
            .unwrap_or_else(|| panic!("{metric} max: {body}")),
    )
}

#[tokio::test]
async fn bands_hold_the_nominal_and_follow_the_scaling_laws() {
    let app = start_app().await;
    let (sigma_tol, br_tol) = (0.05, 0.02);
    let body = app
        .post_ok(
            "/v1/force-curve",
            &json!({
                "design": sample_design(),
                "tolerances": { "conductivity_fraction": sigma_tol, "remanence_fraction": br_tol }
            }),
        )
        .await;
    // source: corner evaluation, 2^k corners for k tolerances (common practice).
    assert_eq!(body["tolerance_bands"]["corners"], 4);
    assert_eq!(body["tolerance_bands"]["failed_corners"], json!([]));
    let nominal = |name: &str| body[name].as_f64().expect(name);
    for metric in [
        "damping_n_s_per_m",
        "terminal_speed_m_per_s",
        "peak_force_n",
        "critical_speed_m_per_s",
    ] {
        let (lo, hi) = band(&body, metric);
        let n = nominal(metric);
        assert!(
            lo <= n * (1.0 + 1e-9) && n <= hi * (1.0 + 1e-9),
            "{metric}: {lo} <= {n} <= {hi}"
        );
    }
    // Low-speed damping is proportional to sigma and to the square of the magnetic moment,
    // itself proportional to Br (source: Levin, da Silveira & Rizzato, Am. J. Phys. 74, 815,
    // 2006: F/v ~ sigma m^2), so its band is c (1 -+ 0.05)(1 -+ 0.02)^2.
    let c = nominal("damping_n_s_per_m");
    let (lo, hi) = band(&body, "damping_n_s_per_m");
    let low = c * (1.0 - sigma_tol) * (1.0 - br_tol) * (1.0 - br_tol);
    let high = c * (1.0 + sigma_tol) * (1.0 + br_tol) * (1.0 + br_tol);
    assert!(rel(lo, low) < 1e-6, "{lo} vs {low}");
    assert!(rel(hi, high) < 1e-6, "{hi} vs {high}");
    // The induction equation holds sigma and v only as their product (the magnetic Reynolds
    // number mu0 sigma v w; source: Reitz, J. Appl. Phys. 41, 2067, 1970), so F(v; k sigma) =
    // F(k v; sigma): conductivity moves the critical speed as 1/sigma and leaves the peak
    // force alone, which scales with Br^2 only.
    // The critical speed is located numerically on each curve, so its band ends are compared
    // to 0.2 % (common practice for a located extremum of a flat peak).
    let vc = nominal("critical_speed_m_per_s");
    let (lo, hi) = band(&body, "critical_speed_m_per_s");
    assert!(
        rel(lo, vc / (1.0 + sigma_tol)) < 2e-3,
        "{lo} vs {}",
        vc / 1.05
    );
    assert!(
        rel(hi, vc / (1.0 - sigma_tol)) < 2e-3,
        "{hi} vs {}",
        vc / 0.95
    );
    let peak = nominal("peak_force_n");
    let (lo, hi) = band(&body, "peak_force_n");
    assert!(rel(lo, peak * (1.0 - br_tol).powi(2)) < 1e-6, "{lo}");
    assert!(rel(hi, peak * (1.0 + br_tol).powi(2)) < 1e-6, "{hi}");
    // Without tolerances the field is absent.
    let plain = app
        .post_ok("/v1/force-curve", &json!({ "design": sample_design() }))
        .await;
    assert!(plain.get("tolerance_bands").is_none());
}

#[tokio::test]
async fn a_corner_that_does_not_fit_is_reported() {
    let app = start_app().await;
    // A 12 mm magnet in a 13 mm bore: 0.6 mm of diameter tolerance on each makes the corner
    // "magnet large, bore small" a 12.6 mm magnet in a 12.4 mm bore (source: geometry).
    let body = app
        .post_ok(
            "/v1/force-curve",
            &json!({
                "design": sample_design(),
                "tolerances": { "magnet_outer_diameter_m": 0.0006, "tube_inner_diameter_m": 0.0006 }
            }),
        )
        .await;
    let bands = &body["tolerance_bands"];
    assert_eq!(bands["corners"], 4);
    let failed = bands["failed_corners"].as_array().expect("failed corners");
    assert_eq!(failed.len(), 1, "{bands}");
    let text = failed[0].as_str().unwrap_or_default();
    assert!(
        text.contains("magnet_diameter+") && text.contains("bore-"),
        "{text}"
    );
}

#[tokio::test]
async fn bad_tolerances_are_named() {
    let app = start_app().await;
    for (tolerances, path) in [
        (
            json!({ "conductivity_fraction": 0.7 }),
            "tolerances.conductivity_fraction",
        ),
        (
            json!({ "wall_thickness_m": -0.001 }),
            "tolerances.wall_thickness_m",
        ),
        (
            json!({ "colour_fraction": 0.1 }),
            "tolerances.colour_fraction",
        ),
    ] {
        let body = json!({ "design": sample_design(), "tolerances": tolerances });
        let problem = expect_problem(app.post_json("/v1/force-curve", &body).await, 422).await;
        assert_eq!(error_paths(&problem), [path], "{problem}");
    }
}
