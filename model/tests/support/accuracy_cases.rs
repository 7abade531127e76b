//! The validation set of the accuracy test: the invented designs, the limits of the refined
//! runs and the mid-tube sample, shared by `model/examples/accuracy_reference.rs` (which
//! computes the references into `model/tests/fixtures/accuracy_reference.json`) and
//! `model/tests/accuracy.rs` (which checks the default resolution against them and the fixture
//! against this list). Included by both with `#[path]`.

use ringdrag_model::Fidelity::{Auto, Inductive, QuasiStatic};
use ringdrag_model::{Fidelity, Limits};

/// One invented design of the validation set: name, design JSON, start position (m), start
/// speed (m/s), requested fidelity, and whether the stroke settles at its terminal speed
/// before mid-tube.
pub(crate) type Case = (&'static str, &'static str, f64, f64, Fidelity, bool);

/// The validation set, in the order of the fixture.
pub(crate) fn cases() -> Vec<Case> {
    CASES.to_vec()
}

/// The cases, as data (a constant, not a function body).
const CASES: &[Case] = &[
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
];

/// Limits wide enough for the refined runs (the references and the test's recomputation).
pub(crate) fn reference_limits() -> Limits {
    Limits {
        max_ring_cells: 4_000_000,
        max_radial_layers: 64,
        max_band_entries: 12 << 20,
        ..Limits::default()
    }
}

/// Index of the sample nearest mid-tube (`tube_length_m / 2`) among `positions_m`; `None`
/// when there is no sample.
pub(crate) fn mid_tube_index(positions_m: &[f64], tube_length_m: f64) -> Option<usize> {
    let mid = 0.5 * tube_length_m;
    positions_m
        .iter()
        .enumerate()
        .min_by(|a, b| (a.1 - mid).abs().total_cmp(&(b.1 - mid).abs()))
        .map(|(i, _)| i)
}
