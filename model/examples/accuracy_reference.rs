//! Writes the reference fixture of the accuracy validation test (`model/tests/accuracy.rs`):
//! for every invented design of the validation set, a stroke refined well beyond the default
//! resolution (twice the default radial layers plus two; a quarter of the default ring width
//! for quasi-static runs; for ring-circuit runs half the default ring width, extrapolated with
//! a run at the default width), and its headline numbers.
//!
//! Regenerate (takes a few minutes on two cores):
//!
//! ```sh
//! cargo run --release -p ringdrag-model --example accuracy_reference > model/tests/fixtures/accuracy_reference.json
//! ```
//!
//! The test recomputes a sample of these references at the stored resolution, so a stale
//! fixture fails.

use ringdrag_model::records::spec::DesignSpec;
use ringdrag_model::solvers::transient::window_half_length_m;
use ringdrag_model::{Design, Fidelity, Limits, StrokeOptions, simulate_stroke};
use serde_json::{Value, json};

/// One invented design of the validation set: name, design JSON, start position (m), start
/// speed (m/s), requested fidelity, and whether the stroke settles at its terminal speed
/// before mid-tube.
type Case = (&'static str, &'static str, f64, f64, Fidelity, bool);

fn cases() -> Vec<Case> {
    use Fidelity::{Auto, Inductive, QuasiStatic};
    vec![
        // Quasi-static (low magnetic Reynolds number) strokes: walls 0.1-6 mm, clearances
        // 0.1-5 mm, stacks, rings, inclines, perforation.
        (
            "cu-12x20-bore13-w1.5",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.02},"tube":{"material":"copper-c12200","inner_diameter_m":0.013,"wall_thickness_m":0.0015,"length_m":0.3}}"#,
            -0.03,
            0.0,
            Auto,
            false,
        ),
        (
            "cu-12x20-long-drop",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.02},"tube":{"material":"copper-c12200","inner_diameter_m":0.013,"wall_thickness_m":0.0015,"length_m":0.6}}"#,
            -0.03,
            0.0,
            Auto,
            true,
        ),
        (
            "al-foil-w0.1",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.012},"tube":{"material":"aluminium-6063-t5","inner_diameter_m":0.013,"wall_thickness_m":0.0001,"length_m":0.2}}"#,
            0.0,
            0.0,
            Auto,
            false,
        ),
        (
            "cu-clearance-0.1",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.012},"tube":{"material":"copper-c11000","inner_diameter_m":0.0122,"wall_thickness_m":0.001,"length_m":0.3}}"#,
            0.0,
            0.0,
            QuasiStatic,
            true,
        ),
        (
            "al-w6-clearance5",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.01,"length_m":0.01},"tube":{"material":"aluminium-6061-t6","inner_diameter_m":0.02,"wall_thickness_m":0.006,"length_m":0.2}}"#,
            0.0,
            0.0,
            Auto,
            false,
        ),
        (
            "cu-w3-short-magnet",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.006},"tube":{"material":"copper-c12200","inner_diameter_m":0.014,"wall_thickness_m":0.003,"length_m":0.2}}"#,
            0.0,
            0.0,
            Auto,
            false,
        ),
        (
            "al-stack3-alternating",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.01,"length_m":0.005,"count":3,"polarity":"alternating","spacer_length_m":0.001},"tube":{"material":"aluminium-6082-t6","inner_diameter_m":0.011,"wall_thickness_m":0.002,"length_m":0.25}}"#,
            0.0,
            0.0,
            Auto,
            false,
        ),
        (
            "cu-stack4-aligned",
            r#"{"magnets":{"grade":"N45","outer_diameter_m":0.015,"length_m":0.003,"count":4},"tube":{"material":"copper-c12200","inner_diameter_m":0.016,"wall_thickness_m":0.001,"length_m":0.2}}"#,
            0.0,
            0.0,
            Auto,
            false,
        ),
        (
            "cu-ring-magnet",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"inner_diameter_m":0.004,"length_m":0.01},"tube":{"material":"copper-c12200","inner_diameter_m":0.013,"wall_thickness_m":0.001,"length_m":0.2}}"#,
            0.0,
            0.0,
            Auto,
            false,
        ),
        (
            "al-incline30-friction",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.02},"tube":{"material":"aluminium-1100","inner_diameter_m":0.013,"wall_thickness_m":0.002,"length_m":0.3},"load":{"payload_mass_kg":0.05,"incline_deg":30,"friction_coefficient":0.1}}"#,
            0.0,
            0.0,
            Auto,
            false,
        ),
        (
            "cu-horizontal-slow-entry",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.02},"tube":{"material":"copper-c12200","inner_diameter_m":0.013,"wall_thickness_m":0.0015,"length_m":0.3},"load":{"payload_mass_kg":0.2,"incline_deg":0}}"#,
            -0.02,
            0.5,
            Auto,
            false,
        ),
        (
            "al7075-w4-bore25",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.02,"length_m":0.01},"tube":{"material":"aluminium-7075-t6","inner_diameter_m":0.025,"wall_thickness_m":0.004,"length_m":0.3}}"#,
            0.0,
            0.0,
            Auto,
            false,
        ),
        (
            "cu-tiny-disc",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.0005},"tube":{"material":"copper-c12200","inner_diameter_m":0.014,"wall_thickness_m":0.001,"length_m":0.1}}"#,
            0.0,
            0.0,
            Auto,
            false,
        ),
        (
            "cu-n52-25x25-w3",
            r#"{"magnets":{"grade":"N52","outer_diameter_m":0.025,"length_m":0.025},"tube":{"material":"copper-c12200","inner_diameter_m":0.026,"wall_thickness_m":0.003,"length_m":0.3},"load":{"payload_mass_kg":0.5}}"#,
            0.0,
            0.0,
            Auto,
            false,
        ),
        (
            "al-6x6-bore6.4-w0.5",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.006,"length_m":0.006},"tube":{"material":"aluminium-6063-t5","inner_diameter_m":0.0064,"wall_thickness_m":0.0005,"length_m":0.15}}"#,
            0.0,
            0.0,
            Auto,
            false,
        ),
        (
            "cu-perforated",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.02},"tube":{"material":"copper-c12200","inner_diameter_m":0.013,"wall_thickness_m":0.002,"length_m":0.2,"perforation_fraction":0.3}}"#,
            0.0,
            0.0,
            Auto,
            false,
        ),
        (
            "cu-incline12-friction-long",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.015,"length_m":0.015},"tube":{"material":"copper-c12200","inner_diameter_m":0.016,"wall_thickness_m":0.001,"length_m":0.4},"load":{"payload_mass_kg":0.4,"incline_deg":12,"friction_coefficient":0.15}}"#,
            0.0,
            0.0,
            Auto,
            true,
        ),
        (
            "cu-n45-pair-w1.2",
            r#"{"magnets":{"grade":"N45","outer_diameter_m":0.025,"length_m":0.008,"count":2},"tube":{"material":"copper-c12200","inner_diameter_m":0.0266,"wall_thickness_m":0.0012,"length_m":0.5},"load":{"payload_mass_kg":0.3}}"#,
            0.0,
            0.0,
            Auto,
            true,
        ),
        // Ring-circuit strokes: entries at speed, Rm from about 0.1 to 10.
        (
            "cu-12x20-inductive",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.02},"tube":{"material":"copper-c12200","inner_diameter_m":0.013,"wall_thickness_m":0.0015,"length_m":0.3}}"#,
            -0.03,
            0.0,
            Inductive,
            false,
        ),
        (
            "cu-horizontal-5mps",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.02},"tube":{"material":"copper-c12200","inner_diameter_m":0.013,"wall_thickness_m":0.0015,"length_m":0.15},"load":{"payload_mass_kg":0.1,"incline_deg":0}}"#,
            -0.03,
            5.0,
            Auto,
            false,
        ),
        (
            "al-horizontal-15mps",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.012},"tube":{"material":"aluminium-6061-t6","inner_diameter_m":0.013,"wall_thickness_m":0.001,"length_m":0.15},"load":{"payload_mass_kg":0.5,"incline_deg":0}}"#,
            -0.03,
            15.0,
            Auto,
            false,
        ),
        (
            "cu-pair-alternating-8mps",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.01,"length_m":0.005,"count":2,"polarity":"alternating"},"tube":{"material":"copper-c12200","inner_diameter_m":0.011,"wall_thickness_m":0.002,"length_m":0.12},"load":{"payload_mass_kg":0.3,"incline_deg":0}}"#,
            -0.03,
            8.0,
            Auto,
            false,
        ),
        (
            "cu-w2.5-drop-3mps",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.012},"tube":{"material":"copper-c12200","inner_diameter_m":0.013,"wall_thickness_m":0.0025,"length_m":0.08}}"#,
            -0.03,
            3.0,
            Auto,
            false,
        ),
        (
            "cu-w0.2-20mps",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.02},"tube":{"material":"copper-c12200","inner_diameter_m":0.013,"wall_thickness_m":0.0002,"length_m":0.15},"load":{"payload_mass_kg":1.0,"incline_deg":0}}"#,
            -0.03,
            20.0,
            Auto,
            false,
        ),
        (
            "cu-clearance0.3-6mps",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.01},"tube":{"material":"copper-c12200","inner_diameter_m":0.0126,"wall_thickness_m":0.001,"length_m":0.12},"load":{"payload_mass_kg":0.2,"incline_deg":0}}"#,
            -0.03,
            6.0,
            Auto,
            false,
        ),
        (
            "cu-w1.5-rm5-45mps",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.012},"tube":{"material":"copper-c12200","inner_diameter_m":0.013,"wall_thickness_m":0.0015,"length_m":0.06},"load":{"payload_mass_kg":0.5,"incline_deg":0}}"#,
            -0.03,
            45.0,
            Auto,
            false,
        ),
        (
            "cu-uphill-launch",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.02},"tube":{"material":"copper-c12200","inner_diameter_m":0.013,"wall_thickness_m":0.0015,"length_m":0.2},"load":{"payload_mass_kg":0.1,"incline_deg":-10}}"#,
            -0.03,
            4.0,
            Auto,
            false,
        ),
        (
            "cu-ring-magnet-6mps",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"inner_diameter_m":0.005,"length_m":0.01},"tube":{"material":"copper-c12200","inner_diameter_m":0.013,"wall_thickness_m":0.0015,"length_m":0.12},"load":{"payload_mass_kg":0.2,"incline_deg":0}}"#,
            -0.03,
            6.0,
            Auto,
            false,
        ),
        (
            "al6063-w3-bore20-10mps",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.018,"length_m":0.01},"tube":{"material":"aluminium-6063-t5","inner_diameter_m":0.02,"wall_thickness_m":0.003,"length_m":0.08},"load":{"payload_mass_kg":0.5,"incline_deg":0}}"#,
            -0.03,
            10.0,
            Auto,
            false,
        ),
        (
            "cu-w1-clearance0.1-4mps",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.012},"tube":{"material":"copper-c11000","inner_diameter_m":0.0122,"wall_thickness_m":0.001,"length_m":0.06},"load":{"payload_mass_kg":0.2,"incline_deg":0}}"#,
            -0.03,
            4.0,
            Auto,
            false,
        ),
        (
            "cu-incline45-2mps",
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.02},"tube":{"material":"copper-c12200","inner_diameter_m":0.013,"wall_thickness_m":0.002,"length_m":0.15},"load":{"payload_mass_kg":0.3,"incline_deg":45,"friction_coefficient":0.05}}"#,
            -0.03,
            2.0,
            Inductive,
            false,
        ),
    ]
}

/// Limits wide enough for the refined runs (the test uses the same).
fn reference_limits() -> Limits {
    Limits {
        max_ring_cells: 4_000_000,
        max_radial_layers: 64,
        max_band_entries: 12 << 20,
        ..Limits::default()
    }
}

/// The headline numbers of a stroke.
fn headline(s: &ringdrag_model::Stroke, tube_length_m: f64) -> Value {
    let (i, _) = s
        .series
        .position_m
        .iter()
        .enumerate()
        .min_by(|a, b| {
            (a.1 - 0.5 * tube_length_m)
                .abs()
                .total_cmp(&(b.1 - 0.5 * tube_length_m).abs())
        })
        .unwrap_or((0, &0.0));
    json!({
        "exit_time_s": s.summary.exit_time_s,
        "exit_speed_m_per_s": s.summary.exit_speed_m_per_s,
        "max_braking_force_n": s.summary.max_braking_force_n,
        "end_position_m": s.summary.end_position_m,
        "mid_tube_speed_m_per_s": s.series.speed_m_per_s.get(i),
    })
}

/// f + (f - c) / 3 for every number present in both: Richardson extrapolation of a
/// second-order method from ring widths h and h / 2 (Richardson, Phil. Trans. R. Soc. A 210,
/// 307, 1911).
fn richardson(fine: &Value, coarse: &Value) -> Value {
    let mut out = fine.clone();
    if let (Some(f), Some(c), Some(o)) = (fine.as_object(), coarse.as_object(), out.as_object_mut())
    {
        for (k, fv) in f {
            if let (Some(a), Some(b)) = (fv.as_f64(), c.get(k).and_then(Value::as_f64)) {
                o.insert(k.clone(), json!(a + (a - b) / 3.0));
            }
        }
    }
    out
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let limits = Limits::default();
    let mut out = Vec::new();
    for (name, json, x0, v0, fidelity, steady) in cases() {
        let spec: DesignSpec = serde_json::from_str(json)?;
        let design = Design::from_spec(&spec)?;
        // An entry at speed starts with the field clear of the tube, so that the ring currents
        // start at zero for a physical reason (no start-up transient).
        let x0 = if v0 > 0.0 {
            x0.min(-(window_half_length_m(&design, 2.0 * v0) + 1e-3))
        } else {
            x0
        };
        let opts = StrokeOptions {
            start_position_m: x0,
            start_speed_m_per_s: v0,
            fidelity,
            samples: 2000,
            ..StrokeOptions::default()
        };
        let default = simulate_stroke(&design, &opts, &limits)?;
        let d = &default.model.discretisation;
        let dz = d.ring_width_m.ok_or("ring width")?;
        let layers = d.radial_layers.ok_or("layers")?;
        let used = default.model.fidelity;
        // Quasi-static runs are cheap: a quarter of the ring width. Ring-circuit runs: half
        // the ring width, with the change from the default ring width (same refined layers)
        // taken out by Richardson extrapolation for a second-order method.
        let fine_layers = 2 * layers + 2;
        let divisor = if used == Fidelity::Inductive {
            2.0
        } else {
            4.0
        };
        let at = |w: f64| StrokeOptions {
            ring_width_m: Some(w),
            radial_layers: Some(fine_layers),
            fidelity: used,
            ..opts.clone()
        };
        let t = std::time::Instant::now();
        let fine = headline(
            &simulate_stroke(&design, &at(dz / divisor), &reference_limits())?,
            design.tube.length_m,
        );
        let reference = if used == Fidelity::Inductive {
            let coarse = headline(
                &simulate_stroke(&design, &at(dz), &reference_limits())?,
                design.tube.length_m,
            );
            richardson(&fine, &coarse)
        } else {
            fine.clone()
        };
        eprintln!(
            "{name}: {used:?} dz {dz:.3e} layers {layers}, reference in {:?}",
            t.elapsed()
        );
        let entry = json!({
            "name": name,
            "design": serde_json::from_str::<Value>(json)?,
            "start_position_m": x0,
            "start_speed_m_per_s": v0,
            "fidelity": fidelity,
            "fidelity_used": used,
            "steady_mid_tube": steady,
            "reference_ring_width_m": dz / divisor,
            "reference_radial_layers": fine_layers,
            "reference_fine": fine,
            "reference": reference,
        });
        eprintln!("{entry}");
        out.push(entry);
    }
    println!(
        "{}",
        serde_json::to_string_pretty(&json!({
            "command": "cargo run --release -p ringdrag-model --example accuracy_reference > model/tests/fixtures/accuracy_reference.json",
            "cases": out,
        }))?
    );
    Ok(())
}
