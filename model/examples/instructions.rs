//! Runs one benchmark job once, for counting instructions with valgrind (the counts repeat
//! exactly on a shared machine, where wall-clock times do not):
//!
//! ```sh
//! cargo build --release -p ringdrag-model --example instructions
//! valgrind --tool=callgrind --callgrind-out-file=/tmp/cg.out \
//!     target/release/examples/instructions stroke-inductive
//! callgrind_annotate /tmp/cg.out | head -40
//! ```
//!
//! Jobs (the scenarios of `model/benches`, all invented): `stroke-quasi-static`,
//! `stroke-inductive`, `stroke-dense`, `force-curve`, `validation` (every ring-circuit stroke
//! of the accuracy validation set, once each), `validation:<case name>`, `audit-default`,
//! `audit-refined`, `sweep-inductive-20` (20 points spread over the grid of the 1000-point
//! inductive sweep: 4 of its 40 walls x 5 of its 25 payloads), `size-landing-speed`.

use ringdrag_model::jobs::metrics::Metric;
use ringdrag_model::jobs::sizing::{SizeRequest, SizeTarget, size};
use ringdrag_model::jobs::sweep::{SweepAxis, SweepPlan};
use ringdrag_model::records::designfield::DesignField;
use ringdrag_model::solvers::transient::simulate_stroke_dense_reference;
use ringdrag_model::{
    Design, DesignSpec, Fidelity, ForceCurveOptions, Limits, StrokeOptions, force_curve,
    simulate_stroke,
};
use serde_json::Value;
use std::error::Error;

const FIXTURE: &str = include_str!("../tests/fixtures/accuracy_reference.json");

fn design(json: &str) -> Result<Design, Box<dyn Error>> {
    let spec: DesignSpec = serde_json::from_str(json)?;
    Ok(Design::from_spec(&spec)?)
}

const COPPER_DROP: &str = r#"{"magnets":{"grade":"N42","outer_diameter_m":0.012,"length_m":0.02},
    "tube":{"material":"copper-c12200","inner_diameter_m":0.013,"wall_thickness_m":0.0015,
            "length_m":0.3}}"#;

const AUDIT: &str = r#"{"magnets":{"grade":"N42","outer_diameter_m":0.02,"length_m":0.01,"count":3,
     "polarity":"alternating","spacer_length_m":0.002},
    "tube":{"material":"copper-c11000","inner_diameter_m":0.022,"wall_thickness_m":0.003,
            "length_m":0.4},
    "load":{"payload_mass_kg":1.5,"incline_deg":0}}"#;

fn drop_options(fidelity: Fidelity) -> StrokeOptions {
    StrokeOptions {
        start_position_m: -0.03,
        fidelity,
        ..StrokeOptions::default()
    }
}

fn validation(only: Option<&str>) -> Result<(), Box<dyn Error>> {
    let v: Value = serde_json::from_str(FIXTURE)?;
    let limits = Limits::default();
    for c in v["cases"].as_array().ok_or("no cases")? {
        let name = c["name"].as_str().ok_or("no name")?;
        if c["fidelity_used"].as_str() != Some("inductive") || only.is_some_and(|o| o != name) {
            continue;
        }
        let spec: DesignSpec = serde_json::from_value(c["design"].clone())?;
        let d = Design::from_spec(&spec)?;
        let opts = StrokeOptions {
            start_position_m: c["start_position_m"].as_f64().ok_or("x0")?,
            start_speed_m_per_s: c["start_speed_m_per_s"].as_f64().ok_or("v0")?,
            fidelity: serde_json::from_value(c["fidelity"].clone())?,
            samples: 2000,
            ..StrokeOptions::default()
        };
        let s = simulate_stroke(&d, &opts, &limits)?;
        println!(
            "{name}: exit speed {:?}, estimate {:?}, steps {:?}",
            s.summary.exit_speed_m_per_s,
            s.model.error_estimate_relative,
            s.model.discretisation.steps
        );
    }
    Ok(())
}

fn sweep() -> Result<(), Box<dyn Error>> {
    let base: DesignSpec = serde_json::from_str(COPPER_DROP)?;
    let plan = SweepPlan::new(
        base,
        vec![
            SweepAxis {
                field: DesignField::TubeWallThickness,
                values: [0, 13, 26, 39]
                    .iter()
                    .map(|&i| 0.0005 + 0.0025 * f64::from(i) / 39.0)
                    .collect(),
            },
            SweepAxis {
                field: DesignField::PayloadMass,
                values: [0, 6, 12, 18, 24]
                    .iter()
                    .map(|&i| f64::from(i) / 24.0)
                    .collect(),
            },
        ],
        vec![Metric::ExitSpeed, Metric::MaxBrakingForce],
        StrokeOptions {
            samples: 2,
            ..drop_options(Fidelity::Inductive)
        },
        Limits {
            max_sweep_points: 50_000,
            ..Limits::default()
        },
    )?;
    for p in plan.run_collect() {
        println!("{} {:?} {:?} {:?}", p.index, p.inputs, p.metrics, p.error);
    }
    Ok(())
}

fn main() -> Result<(), Box<dyn Error>> {
    let job = std::env::args().nth(1).ok_or("name a job")?;
    let limits = Limits::default();
    match job.as_str() {
        "stroke-quasi-static" | "stroke-inductive" => {
            let f = if job.ends_with("static") {
                Fidelity::QuasiStatic
            } else {
                Fidelity::Inductive
            };
            let s = simulate_stroke(&design(COPPER_DROP)?, &drop_options(f), &limits)?;
            println!("{:?} {:?}", s.summary, s.model);
        }
        "stroke-dense" => {
            let (s, _) = simulate_stroke_dense_reference(
                &design(COPPER_DROP)?,
                &drop_options(Fidelity::Inductive),
                &limits,
            )?;
            println!("{:?}", s.summary);
        }
        "force-curve" => {
            let fc = force_curve(
                &design(COPPER_DROP)?,
                &ForceCurveOptions::default(),
                &limits,
            )?;
            println!("{:?}", fc.terminal_speed_m_per_s);
        }
        "validation" => validation(None)?,
        "audit-default" | "audit-refined" => {
            let mut opts = StrokeOptions {
                start_position_m: -0.15,
                start_speed_m_per_s: 12.0,
                fidelity: Fidelity::Inductive,
                ..StrokeOptions::default()
            };
            if job.ends_with("refined") {
                opts.ring_width_m = Some(0.000625);
                opts.radial_layers = Some(6);
            }
            let s = simulate_stroke(&design(AUDIT)?, &opts, &limits)?;
            println!("{:?} {:?}", s.summary, s.model);
        }
        "sweep-inductive-20" => sweep()?,
        "size-landing-speed" => {
            let r: Value = serde_json::from_str(include_str!(
                "../../examples/size-magnet-count-for-landing-speed.json"
            ))?;
            let job = SizeRequest {
                base: serde_json::from_value(r["design"].clone())?,
                field: DesignField::parse(r["vary"]["path"].as_str().ok_or("path")?, "vary.path")?,
                min: r["vary"]["min"].as_f64().ok_or("min")?,
                max: r["vary"]["max"].as_f64().ok_or("max")?,
                target: SizeTarget {
                    max_landing_speed_m_per_s: r["target"]["max_landing_speed_m_per_s"].as_f64(),
                    ..SizeTarget::default()
                },
                safety_factor: r["safety_factor"].as_f64().ok_or("factor")?,
                hot_temperature_c: r["hot_temperature_c"].as_f64(),
                stroke: StrokeOptions {
                    samples: 2,
                    stop_position_m: r["stop_position_m"].as_f64(),
                    ..StrokeOptions::default()
                },
                seek: Default::default(),
                tolerances: Some(serde_json::from_value(r["tolerances"].clone())?),
            };
            let s = size(&job, &limits)?;
            println!("{:?} {:?}", s.value, s.model);
        }
        other => {
            if let Some(name) = other.strip_prefix("validation:") {
                validation(Some(name))?;
            } else {
                return Err(format!("unknown job {other}").into());
            }
        }
    }
    Ok(())
}
