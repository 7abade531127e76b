//! Dotted paths into the design object (`tube.wall_thickness_m`), for sweeps and sizing.
//!
//! Only numeric fields can be varied. Setting a path edits the caller's [`DesignSpec`]; the
//! result is validated like any design, so a sweep point that leaves the valid range (a
//! magnet wider than the bore, say) becomes that point's error, not a silent clamp.

use crate::records::error::ModelError;
use crate::records::spec::DesignSpec;

/// Every numeric design field that sweeps and sizing can vary.
pub const NUMERIC_PATHS: [&str; 21] = [
    "magnets.remanence_t",
    "magnets.density_kg_per_m3",
    "magnets.outer_diameter_m",
    "magnets.inner_diameter_m",
    "magnets.length_m",
    "magnets.count",
    "magnets.spacer_length_m",
    "magnets.temperature_c",
    "tube.conductivity_s_per_m",
    "tube.resistivity_temperature_coefficient_per_k",
    "tube.inner_diameter_m",
    "tube.wall_thickness_m",
    "tube.length_m",
    "tube.temperature_c",
    "tube.perforation_fraction",
    "tube.density_kg_per_m3",
    "load.payload_mass_kg",
    "load.incline_deg",
    "load.applied_force_n",
    "load.friction_coefficient",
    "load.gravity_m_per_s2",
];

/// Whether a path names an integer field (values are rounded to whole numbers).
pub fn is_integer_path(path: &str) -> bool {
    normalise(path) == "magnets.count"
}

/// Strips an optional leading `design.`.
pub fn normalise(path: &str) -> &str {
    path.strip_prefix("design.").unwrap_or(path)
}

/// Checks that `path` names a numeric design field; `at` is the request field that holds it.
pub fn check_path(path: &str, at: &str) -> Result<(), ModelError> {
    if NUMERIC_PATHS.contains(&normalise(path)) {
        Ok(())
    } else {
        Err(ModelError::field(
            at,
            format!(
                "'{path}' is not a numeric design field; one of: {}",
                NUMERIC_PATHS.join(", ")
            ),
        ))
    }
}

/// Reads the value at `path`; None where an optional field is unset or the path is unknown.
pub fn get(spec: &DesignSpec, path: &str) -> Option<f64> {
    let m = &spec.magnets;
    let t = &spec.tube;
    let l = &spec.load;
    Some(match normalise(path) {
        "magnets.remanence_t" => m.remanence_t?,
        "magnets.density_kg_per_m3" => m.density_kg_per_m3?,
        "magnets.outer_diameter_m" => m.outer_diameter_m,
        "magnets.inner_diameter_m" => m.inner_diameter_m,
        "magnets.length_m" => m.length_m,
        "magnets.count" => f64::from(m.count),
        "magnets.spacer_length_m" => m.spacer_length_m,
        "magnets.temperature_c" => m.temperature_c?,
        "tube.conductivity_s_per_m" => t.conductivity_s_per_m?,
        "tube.resistivity_temperature_coefficient_per_k" => {
            t.resistivity_temperature_coefficient_per_k?
        }
        "tube.inner_diameter_m" => t.inner_diameter_m,
        "tube.wall_thickness_m" => t.wall_thickness_m,
        "tube.length_m" => t.length_m,
        "tube.temperature_c" => t.temperature_c,
        "tube.perforation_fraction" => t.perforation_fraction,
        "tube.density_kg_per_m3" => t.density_kg_per_m3?,
        "load.payload_mass_kg" => l.payload_mass_kg,
        "load.incline_deg" => l.incline_deg,
        "load.applied_force_n" => l.applied_force_n,
        "load.friction_coefficient" => l.friction_coefficient,
        "load.gravity_m_per_s2" => l.gravity_m_per_s2,
        _ => return None,
    })
}

/// Sets `path` to `value`. Integer fields take the nearest whole number; a non-finite or
/// out-of-range count is an error naming `path`.
pub fn set(spec: &mut DesignSpec, path: &str, value: f64) -> Result<(), ModelError> {
    let m = &mut spec.magnets;
    let t = &mut spec.tube;
    let l = &mut spec.load;
    match normalise(path) {
        "magnets.remanence_t" => m.remanence_t = Some(value),
        "magnets.density_kg_per_m3" => m.density_kg_per_m3 = Some(value),
        "magnets.outer_diameter_m" => m.outer_diameter_m = value,
        "magnets.inner_diameter_m" => m.inner_diameter_m = value,
        "magnets.length_m" => m.length_m = value,
        "magnets.count" => {
            let r = value.round();
            if !(1.0..=f64::from(crate::records::design::MAX_MAGNETS)).contains(&r) {
                return Err(ModelError::field(
                    path,
                    format!(
                        "must be a whole number from 1 to {}",
                        crate::records::design::MAX_MAGNETS
                    ),
                ));
            }
            m.count = r as u32;
        }
        "magnets.spacer_length_m" => m.spacer_length_m = value,
        "magnets.temperature_c" => m.temperature_c = Some(value),
        "tube.conductivity_s_per_m" => t.conductivity_s_per_m = Some(value),
        "tube.resistivity_temperature_coefficient_per_k" => {
            t.resistivity_temperature_coefficient_per_k = Some(value)
        }
        "tube.inner_diameter_m" => t.inner_diameter_m = value,
        "tube.wall_thickness_m" => t.wall_thickness_m = value,
        "tube.length_m" => t.length_m = value,
        "tube.temperature_c" => t.temperature_c = value,
        "tube.perforation_fraction" => t.perforation_fraction = value,
        "tube.density_kg_per_m3" => t.density_kg_per_m3 = Some(value),
        "load.payload_mass_kg" => l.payload_mass_kg = value,
        "load.incline_deg" => l.incline_deg = value,
        "load.applied_force_n" => l.applied_force_n = value,
        "load.friction_coefficient" => l.friction_coefficient = value,
        "load.gravity_m_per_s2" => l.gravity_m_per_s2 = value,
        _ => return check_path(path, path),
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_path_round_trips() {
        let mut spec: DesignSpec = serde_json::from_str(
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.01,"length_m":0.01},
                "tube":{"material":"copper-c11000","inner_diameter_m":0.011,"wall_thickness_m":0.001,"length_m":0.2}}"#,
        )
        .expect("parses");
        for (i, p) in NUMERIC_PATHS.iter().enumerate() {
            let v = (i + 2) as f64;
            set(&mut spec, p, v).expect("settable");
            assert_eq!(get(&spec, p), Some(v), "{p}");
            assert_eq!(get(&spec, &format!("design.{p}")), Some(v));
        }
        assert!(set(&mut spec, "tube.colour", 1.0).is_err());
        assert!(set(&mut spec, "magnets.count", 0.2).is_err());
    }
}
