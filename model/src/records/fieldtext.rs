//! Words for a design field whose value is out of range, said so that the caller knows what
//! to type.
//!
//! Lengths in the HTTP contract are in metres. A caller who thinks in millimetres writes 12
//! for a 12 mm bore; for such a value the message says the field's unit and gives the value in
//! metres (`12 m is above the limit of 1 m; this field is in metres (12 mm = 0.012)`).

use crate::records::error::show;

/// The unit of a contract field, from its name's suffix, as printed after a number; empty
/// for dimensionless fields.
pub fn unit_of(path: &str) -> &'static str {
    const SUFFIXES: [(&str, &str); 12] = [
        ("_kg_per_m3", "kg/m^3"),
        ("_j_per_kg_k", "J/(kg K)"),
        ("_s_per_m", "S/m"),
        ("_m_per_s2", "m/s^2"),
        ("_per_k", "1/K"),
        ("_m", "m"),
        ("_kg", "kg"),
        ("_t", "T"),
        ("_c", "C"),
        ("_deg", "degrees"),
        ("_n", "N"),
        ("_s", "s"),
    ];
    SUFFIXES
        .iter()
        .find(|(suffix, _)| path.ends_with(suffix))
        .map_or("", |(_, unit)| unit)
}

/// A number and its unit (`12 m`, `0.3`).
fn with_unit(v: f64, unit: &str) -> String {
    if unit.is_empty() {
        show(v)
    } else {
        format!("{} {unit}", show(v))
    }
}

/// The message for `v` outside `[lo, hi]` in the field at `path`; `lo_exclusive` when the
/// lower bound itself is not allowed (a size must be greater than zero).
pub fn out_of_range(path: &str, v: f64, lo: f64, hi: f64, lo_exclusive: bool) -> String {
    let unit = unit_of(path);
    if !v.is_finite() {
        return "must be a finite number".to_string();
    }
    if v > hi {
        let mut text = format!(
            "{} is above the limit of {}",
            with_unit(v, unit),
            with_unit(hi, unit)
        );
        // A plausible millimetre figure in a metre field: say how to write it in metres.
        let in_metres = v / 1000.0;
        if unit == "m" && in_metres <= hi && (in_metres > lo || (!lo_exclusive && in_metres >= lo))
        {
            text.push_str(&format!(
                "; this field is in metres ({} mm = {})",
                show(v),
                show(in_metres)
            ));
        }
        return text;
    }
    if lo_exclusive {
        if lo <= f64::MIN_POSITIVE {
            return format!("must be greater than 0 (got {})", show(v));
        }
        return format!(
            "must be greater than {} (got {})",
            with_unit(lo, unit),
            show(v)
        );
    }
    format!(
        "{} is below the lowest allowed value, {}",
        with_unit(v, unit),
        with_unit(lo, unit)
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn millimetres_in_a_metre_field_are_explained() {
        assert_eq!(
            out_of_range("tube.outer_diameter_m", 12.0, 0.0, 1.0, true),
            "12 m is above the limit of 1 m; this field is in metres (12 mm = 0.012)"
        );
        assert_eq!(
            out_of_range("tube.length_m", 300.0, 0.0, 20.0, true),
            "300 m is above the limit of 20 m; this field is in metres (300 mm = 0.3)"
        );
        // Too large even in millimetres: no hint that would still be wrong.
        assert_eq!(
            out_of_range("tube.wall_thickness_m", 5000.0, 0.0, 0.5, true),
            "5000 m is above the limit of 0.5 m"
        );
        // Not a length: no millimetre hint.
        assert_eq!(
            out_of_range("load.payload_mass_kg", 2e5, 0.0, 1e5, false),
            "200000 kg is above the limit of 100000 kg"
        );
    }

    #[test]
    fn low_values_and_units() {
        assert_eq!(
            out_of_range("load.incline_deg", -95.0, -90.0, 90.0, false),
            "-95 degrees is below the lowest allowed value, -90 degrees"
        );
        assert_eq!(
            out_of_range("magnets.remanence_t", -1.0, f64::MIN_POSITIVE, 1.6, true),
            "must be greater than 0 (got -1)"
        );
        assert_eq!(unit_of("load.friction_coefficient"), "");
        assert_eq!(unit_of("tube.density_kg_per_m3"), "kg/m^3");
    }
}
