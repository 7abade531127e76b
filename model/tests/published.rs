//! Comparison with a published measurement.
//!
//! A SmCo magnet (radius 6 mm, height 10 mm, mass 9.3 g) falls through a vertical copper tube
//! 1 m long, inner radius 6.5 mm, outer radius 7.5 mm, in a measured 12.3 s, i.e. a terminal
//! speed of about 81 mm/s and a damping coefficient k = M g / v of about 1.12 kg/s
//! (source: worked example "Question 08/04: Falling magnet", which quotes the experiment of
//! Iniguez et al., Eur. J. Phys. 25, 593-604, 2004; the author list is from memory).
//!
//! Inputs the source does not give: the magnet's grade (so its remanence: "SmCo" covers SmCo5
//! and Sm2Co17), the copper's alloy (so its conductivity: 100 %IACS C11000 or the 85 %IACS
//! C12200 of plumbing tube) and the temperature (taken as 20 C). In the quasi-static regime
//! (Rm about 4e-3 here) the damping scales as sigma Br^2 and the fall time with it, so the
//! prediction is bounded by the two extreme corners of those choices, taken from the
//! project's tables: (SmCo5 0.95 T, C12200) below and (Sm2Co17 1.02 T, C11000) above, a
//! spread of about 36 %. The tests check that the measurement lies inside that bound, and
//! that the bound is no wider than the input spread explains. Measured bounds: fall time
//! 10.44-14.15 s, damping 0.974-1.321 kg/s; so a model whose braking is off by a constant
//! factor of 1.15 or more one way, or 1.18 or more the other, fails.
//! The magnet density, 8222.5 kg/m^3, is worked back from the stated 9.3 g and the stated
//! size, so the moving mass is an input here, not a check.

use ringdrag_model::{
    Design, DesignSpec, ForceCurveOptions, Limits, StrokeOptions, force_curve, simulate_stroke,
};

/// The published set-up with one choice of the inputs the source lacks.
fn published_design(grade: &str, copper: &str) -> Design {
    let spec: DesignSpec = serde_json::from_str(&format!(
        r#"{{"magnets":{{"grade":"{grade}","density_kg_per_m3":8222.5,"outer_diameter_m":0.012,"length_m":0.010}},
            "tube":{{"material":"{copper}","inner_diameter_m":0.013,"wall_thickness_m":0.001,"length_m":1.0}}}}"#
    ))
    .expect("parses");
    Design::from_spec(&spec).expect("valid")
}

/// The lowest and highest braking corners of the unknown inputs.
const WEAKEST: (&str, &str) = ("SmCo5", "copper-c12200");
const STRONGEST: (&str, &str) = ("Sm2Co17", "copper-c11000");

fn damping(corner: (&str, &str)) -> f64 {
    let d = published_design(corner.0, corner.1);
    force_curve(&d, &ForceCurveOptions::default(), &Limits::default())
        .expect("curve")
        .damping_n_s_per_m
}

fn fall_time_s(corner: (&str, &str)) -> f64 {
    let d = published_design(corner.0, corner.1);
    simulate_stroke(&d, &StrokeOptions::default(), &Limits::default())
        .expect("stroke")
        .summary
        .exit_time_s
        .expect("exits")
}

#[test]
fn published_damping_lies_within_the_range_the_unknown_inputs_allow() {
    let (lo, hi) = (damping(WEAKEST), damping(STRONGEST));
    // The corners differ by sigma Br^2: (1.00 / 0.85) (1.02 / 0.95)^2 = 1.356 (source: the
    // tables' values as above; the quasi-static law F ~ sigma Br^2, Levin, da Silveira &
    // Rizzato, Am. J. Phys. 74, 815, 2006). 1 %: the solver's own error.
    assert!((hi / lo / 1.356 - 1.0).abs() < 0.01, "corners {lo} {hi}");
    // k about 1.12 kg/s (source: as in the module comment).
    assert!(
        lo < 1.12 && 1.12 < hi,
        "measured 1.12 kg/s outside [{lo}, {hi}]"
    );
}

#[test]
fn published_fall_time_lies_within_the_range_the_unknown_inputs_allow() {
    let (lo, hi) = (fall_time_s(WEAKEST), fall_time_s(STRONGEST));
    // 12.3 s through the 1 m tube, released at the entry (source: as in the module comment).
    assert!(
        lo < 12.3 && 12.3 < hi,
        "measured 12.3 s outside [{lo}, {hi}]"
    );
    // The bound is the input spread and no wider (source: as above, 1.356; the first
    // centimetres of free fall and the tube ends take 1-2 % of the time).
    assert!(hi / lo < 1.356 * 1.02, "bound [{lo}, {hi}] too wide");
}
