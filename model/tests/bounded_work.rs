//! Bounded work: every valid design, geometric extremes included, ends with a result, a
//! `TooLarge` refusal or a `Cancelled` stop, within its deadline and under an allocation cap;
//! none panics. Run in release: `cargo test --release -p ringdrag-model --test bounded_work`.
//!
//! The peak resident memory is reset before each case and read after it; the cases run one at
//! a time (a mutex), so the peak above the level at the start of a case is that case's.
//! Deadlines are checked with generous relative slack (the machine is shared): a case must
//! return within twice its deadline plus one second, which only fails when a loop ignores the
//! token (the red-team jobs ran for minutes to days).

use proptest::prelude::*;
use ringdrag_model::jobs::sizing::{Seek, SizeRequest, SizeTarget, size};
use ringdrag_model::records::cancel::CancelToken;
use ringdrag_model::records::forcecurve::ForceCurveOptions;
use ringdrag_model::records::report::Fidelity;
use ringdrag_model::records::stroke::StrokeOptions;
use ringdrag_model::{Design, DesignSpec, Limits, ModelError};
use std::sync::Mutex;
use std::time::{Duration, Instant};

/// Peak resident memory of this process since the last [`reset_peak`], bytes (Linux: VmHWM of
/// /proc/self/status; None elsewhere). The workspace forbids `unsafe`, so a counting global
/// allocator is not an option; every table the solvers allocate is written in full, so its
/// pages are resident and show in the peak.
fn peak_rss_bytes() -> Option<usize> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kb: usize = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb * 1024)
}

/// Resets the peak to the current resident size (Linux >= 4.0: `echo 5 > clear_refs`).
fn reset_peak() -> Option<usize> {
    std::fs::write("/proc/self/clear_refs", "5").ok()?;
    peak_rss_bytes()
}

static SERIAL: Mutex<()> = Mutex::new(());

/// Largest heap one job may hold: the default table cap (32 MB), four band factors (64 MB)
/// and working vectors, with room to spare (common practice: a bound an order of magnitude
/// below the 68-150 GB the unbounded tables asked for, and above any legitimate job).
const HEAP_CAP_BYTES: usize = 256 << 20;
/// Deadline of each fuzz case.
const DEADLINE: Duration = Duration::from_secs(2);

/// Runs `job` under a token with `deadline`; returns its outcome, peak heap and time taken.
fn bounded<T>(
    deadline: Duration,
    job: impl FnOnce(&Limits) -> Result<T, ModelError>,
) -> (Result<T, ModelError>, usize, Duration) {
    let limits =
        Limits::default().with_cancel(CancelToken::with_deadline(Instant::now() + deadline));
    let base = reset_peak();
    let started = Instant::now();
    let out = job(&limits);
    let elapsed = started.elapsed();
    let peak = match (base, peak_rss_bytes()) {
        (Some(b), Some(p)) => p.saturating_sub(b),
        _ => 0,
    };
    (out, peak, elapsed)
}

fn assert_bounded<T>(
    what: &str,
    deadline: Duration,
    out: &Result<T, ModelError>,
    peak: usize,
    elapsed: Duration,
) {
    match out {
        Ok(_)
        | Err(ModelError::TooLarge { .. })
        | Err(ModelError::Cancelled)
        | Err(ModelError::Invalid(_)) => {}
        Err(e) => panic!("{what}: unexpected error {e}"),
    }
    assert!(
        peak <= HEAP_CAP_BYTES,
        "{what}: peak memory grew by {peak} bytes"
    );
    assert!(
        elapsed <= 2 * deadline + Duration::from_secs(1),
        "{what}: took {elapsed:?} against a deadline of {deadline:?}"
    );
}

fn spec(v: serde_json::Value) -> DesignSpec {
    serde_json::from_value(v).expect("spec")
}

fn design(
    od: f64,
    lm: f64,
    count: u32,
    spacer: f64,
    bore: f64,
    wall: f64,
    tube_len: f64,
) -> serde_json::Value {
    serde_json::json!({
        "magnets": {"outer_diameter_m": od, "length_m": lm, "count": count, "grade": "N42",
                    "spacer_length_m": spacer, "polarity": "alternating"},
        "tube": {"inner_diameter_m": bore, "wall_thickness_m": wall, "length_m": tube_len,
                 "material": "copper-c12200"},
        "load": {}
    })
}

fn all_jobs(what: &str, d: &Design, stroke: &StrokeOptions, deadline: Duration) {
    let (out, peak, el) = bounded(deadline, |l| {
        ringdrag_model::force_curve(d, &ForceCurveOptions::default(), l)
    });
    assert_bounded(&format!("{what} force curve"), deadline, &out, peak, el);
    for fidelity in [Fidelity::Auto, Fidelity::QuasiStatic, Fidelity::Inductive] {
        let opts = StrokeOptions {
            fidelity,
            ..stroke.clone()
        };
        let (out, peak, el) = bounded(deadline, |l| ringdrag_model::simulate_stroke(d, &opts, l));
        assert_bounded(
            &format!("{what} stroke {fidelity:?}"),
            deadline,
            &out,
            peak,
            el,
        );
    }
}

/// The red-team reproductions of issue 14, one by one.
#[test]
fn red_team_designs_are_refused_or_bounded() {
    let _serial = SERIAL.lock().unwrap_or_else(|p| p.into_inner());
    // 1 um magnet, 2 mm bore, 1 mm tube, 100 N applied, starting 1 m before the tube.
    let mut tiny = design(1e-6, 0.0005, 1, 0.0, 0.002, 0.001, 0.001);
    tiny["load"] = serde_json::json!({"applied_force_n": 100.0});
    let tiny = Design::from_spec(&spec(tiny)).expect("valid");
    let start = StrokeOptions {
        start_position_m: -1.0,
        ..StrokeOptions::default()
    };
    all_jobs("1 um magnet", &tiny, &start, Duration::from_secs(10));
    // 64 magnets 60 um across, 1 m long, 0.63 m spacers, 0.1 mm bore.
    let long =
        Design::from_spec(&spec(design(60e-6, 1.0, 64, 0.63, 1e-4, 5e-5, 0.01))).expect("valid");
    let opts = StrokeOptions {
        fidelity: Fidelity::QuasiStatic,
        start_position_m: -1.0,
        ..StrokeOptions::default()
    };
    let (out, peak, el) = bounded(Duration::from_secs(10), |l| {
        ringdrag_model::simulate_stroke(&long, &opts, l)
    });
    assert!(
        matches!(out, Err(ModelError::TooLarge { ref path, .. }) if path.starts_with("design.magnets")),
        "{out:?}"
    );
    assert_bounded("64 long magnets", Duration::from_secs(10), &out, peak, el);
    all_jobs("64 long magnets", &long, &opts, Duration::from_secs(10));
    // 64 one-metre magnets 1 mm across in a 1.2 mm bore.
    let metre =
        Design::from_spec(&spec(design(1e-3, 1.0, 64, 0.0, 1.2e-3, 1e-3, 1.0))).expect("valid");
    all_jobs(
        "64 one-metre magnets",
        &metre,
        &StrokeOptions::default(),
        Duration::from_secs(10),
    );
    // Clearances 1e-5 .. 1e-8 m and the copper-drop example pushed to the bore.
    for clearance in [1e-5, 1e-6, 1e-7, 1e-8, 5e-13] {
        let d = Design::from_spec(&spec(design(
            0.013 - 2.0 * clearance,
            0.02,
            1,
            0.0,
            0.013,
            0.0015,
            0.3,
        )))
        .expect("valid");
        let (out, peak, el) = bounded(Duration::from_secs(10), |l| {
            ringdrag_model::force_curve(&d, &ForceCurveOptions::default(), l)
        });
        assert_bounded(
            &format!("clearance {clearance}"),
            Duration::from_secs(10),
            &out,
            peak,
            el,
        );
        let curve = out.expect("a clearance alone is computable");
        assert!(curve.peak_force_n.is_finite() && curve.damping_n_s_per_m > 0.0);
    }
}

/// A cancelled job stops: the token raised from another thread ends a long run early.
#[test]
fn a_raised_token_stops_a_long_run() {
    let _serial = SERIAL.lock().unwrap_or_else(|p| p.into_inner());
    let d =
        Design::from_spec(&spec(design(0.012, 0.02, 8, 0.0, 0.013, 0.0015, 2.0))).expect("valid");
    let opts = StrokeOptions {
        fidelity: Fidelity::Inductive,
        start_position_m: -0.5,
        ..StrokeOptions::default()
    };
    // Calibration: the whole run without a token.
    let started = Instant::now();
    let full = ringdrag_model::simulate_stroke(&d, &opts, &Limits::default());
    let full_time = started.elapsed();
    assert!(full.is_ok(), "{full:?}");
    let token = CancelToken::new();
    let limits = Limits::default().with_cancel(token.clone());
    let stopper = std::thread::spawn(move || {
        std::thread::sleep(full_time / 10);
        token.cancel();
    });
    let started = Instant::now();
    let out = ringdrag_model::simulate_stroke(&d, &opts, &limits);
    let stopped_after = started.elapsed();
    stopper.join().expect("stopper");
    assert_eq!(out.err(), Some(ModelError::Cancelled));
    // Relative to the calibration: stopped well before the full run would have ended.
    assert!(
        stopped_after < full_time / 2,
        "{stopped_after:?} vs full {full_time:?}"
    );
}

fn log_range(lo: f64, hi: f64) -> impl Strategy<Value = f64> {
    (lo.ln()..hi.ln()).prop_map(f64::exp)
}

/// The whole valid design space, extremes included: magnets from 1 um to 1 m, clearances from
/// 1e-9 of the bore, stacks up to 64 magnets, walls from 10 um to 0.5 m, conductivities from
/// 1 S/m to silver, applied forces to 1e6 N, start speeds to 1000 m/s.
fn any_case() -> impl Strategy<Value = (serde_json::Value, StrokeOptions)> {
    (
        (log_range(1e-6, 1.0), log_range(1e-9, 1.0), log_range(1e-6, 1.0), 1u32..=64, prop_oneof![Just(0.0), log_range(1e-6, 1.0)]),
        (log_range(1e-5, 0.5), log_range(1e-3, 20.0), log_range(1.0, 6.3e7), prop_oneof![Just(0.0), log_range(1e-3, 1e6)]),
        (-2.0..0.5_f64, prop_oneof![Just(0.0), log_range(1e-3, 1000.0)], any::<bool>(), 0usize..3),
    )
        .prop_map(|((od, gap_frac, lm, count, spacer), (wall, tube_len, sigma, force), (start, speed, alt, fid))| {
            let od = od.min(0.99);
            let bore = (od * (1.0 + gap_frac)).min(1.0);
            let spec = serde_json::json!({
                "magnets": {"outer_diameter_m": od, "length_m": lm, "count": count, "grade": "N42",
                            "spacer_length_m": spacer,
                            "polarity": if alt { "alternating" } else { "aligned" }},
                "tube": {"inner_diameter_m": bore, "wall_thickness_m": wall, "length_m": tube_len,
                         "conductivity_s_per_m": sigma},
                "load": {"applied_force_n": force}
            });
            let opts = StrokeOptions {
                start_position_m: start * tube_len.min(1.0),
                start_speed_m_per_s: speed,
                fidelity: [Fidelity::Auto, Fidelity::QuasiStatic, Fidelity::Inductive][fid],
                ..StrokeOptions::default()
            };
            (spec, opts)
        })
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 24, failure_persistence: None, ..ProptestConfig::default() })]

    #[test]
    fn valid_designs_do_bounded_work((value, opts) in any_case()) {
        let _serial = SERIAL.lock().unwrap_or_else(|p| p.into_inner());
        let Ok(d) = serde_json::from_value::<DesignSpec>(value.clone()).map_err(|e| e.to_string())
            .and_then(|s| Design::from_spec(&s).map_err(|e| e.to_string())) else {
            return Ok(());
        };
        let (out, peak, el) = bounded(DEADLINE, |l| ringdrag_model::force_curve(&d, &ForceCurveOptions::default(), l));
        assert_bounded(&format!("force curve {value}"), DEADLINE, &out, peak, el);
        let (out, peak, el) = bounded(DEADLINE, |l| ringdrag_model::simulate_stroke(&d, &opts, l));
        assert_bounded(&format!("stroke {value} {opts:?}"), DEADLINE, &out, peak, el);
    }
}

/// Sizing with a range up to the bore and a time target stops at its deadline or refuses.
#[test]
fn sizing_up_to_the_bore_is_bounded() {
    let _serial = SERIAL.lock().unwrap_or_else(|p| p.into_inner());
    let base = spec(design(0.012, 0.02, 1, 0.0, 0.013, 0.0015, 0.3));
    let req = SizeRequest {
        base,
        path: "magnets.outer_diameter_m".into(),
        min: 0.005,
        max: 0.012999999999,
        target: SizeTarget {
            min_exit_time_s: Some(1.0),
            ..SizeTarget::default()
        },
        safety_factor: 1.0,
        hot_temperature_c: None,
        stroke: StrokeOptions {
            start_position_m: -0.03,
            ..StrokeOptions::default()
        },
        seek: Seek::Smallest,
        tolerances: None,
    };
    let (out, peak, el) = bounded(Duration::from_secs(3), |l| size(&req, l));
    assert_bounded("size to the bore", Duration::from_secs(3), &out, peak, el);
}
