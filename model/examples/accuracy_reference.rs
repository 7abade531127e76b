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

#[path = "../tests/support/accuracy_cases.rs"]
mod accuracy_cases;

use accuracy_cases::{cases, mid_tube_index, reference_limits};
use ringdrag_model::records::spec::DesignSpec;
use ringdrag_model::solvers::transient::window_half_length_m;
use ringdrag_model::{Design, Fidelity, Limits, StrokeOptions, simulate_stroke};
use serde_json::{Value, json};

/// The headline numbers of a stroke.
fn headline(s: &ringdrag_model::Stroke, tube_length_m: f64) -> Value {
    let i = mid_tube_index(&s.series.position_m, tube_length_m).unwrap_or(0);
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
