//! The words and numbers a plot prints: number labels, axis titles with units, key entries
//! for varied design fields in display units (`wall 1.5 mm`, `payload 1 kg`, `2 magnets`),
//! and a one-line description of a design for titles and `<desc>`.

use ringdrag_model::DesignSpec;
use ringdrag_model::records::spec::Polarity;

/// A number for a label: three significant digits, plain notation between 1e-4 and 1e5.
pub fn format_number(v: f64) -> String {
    if !v.is_finite() {
        return "n/a".to_string();
    }
    if v == 0.0 {
        return "0".to_string();
    }
    let magnitude = v.abs().log10().floor();
    if (-4.0..5.0).contains(&magnitude) {
        let decimals = (2.0 - magnitude).max(0.0) as usize;
        let text = format!("{v:.decimals$}");
        if text.contains('.') {
            text.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            text
        }
    } else {
        format!("{v:.2e}")
    }
}

/// Unit suffixes of the HTTP contract's names, longest first, with the unit as printed.
const UNITS: [(&str, &str); 20] = [
    ("_j_per_kg_k", "J/(kg K)"),
    ("_kg_per_m3", "kg/m³"),
    ("_n_s_per_m", "N s/m"),
    ("_m_per_s2", "m/s²"),
    ("_m_per_s", "m/s"),
    ("_s_per_m", "S/m"),
    ("_per_k", "1/K"),
    ("_fraction", "1"),
    ("_deg", "°"),
    ("_kg", "kg"),
    ("_m", "m"),
    ("_s", "s"),
    ("_n", "N"),
    ("_j", "J"),
    ("_w", "W"),
    ("_t", "T"),
    ("_c", "°C"),
    ("_k", "K"),
    ("_number", "1"),
    ("_error", "1"),
];

/// An axis title for a contract name: the name without its unit suffix, words spaced, and the
/// unit in brackets (`terminal_speed_m_per_s` -> `terminal speed [m/s]`).
pub fn axis_title(name: &str) -> String {
    let name = name.strip_prefix("design.").unwrap_or(name);
    for (suffix, unit) in UNITS {
        if let Some(stem) = name.strip_suffix(suffix) {
            // `_number`, `_error` and `_fraction` stay part of the words (dimensionless).
            let stem = if matches!(suffix, "_number" | "_error" | "_fraction") {
                name
            } else {
                stem
            };
            return format!("{} [{unit}]", stem.replace(['_', '.'], " "));
        }
    }
    format!("{} [1]", name.replace(['_', '.'], " "))
}

/// How a varied design field is shown: a short word for the key, a longer one for an axis,
/// the display unit and the factor from the contract's SI unit to it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FieldWords {
    /// Short name for a key entry (`wall`).
    pub short: &'static str,
    /// Name for an axis title (`tube wall thickness`).
    pub long: &'static str,
    /// Display unit (`mm`); empty for a pure number.
    pub unit: &'static str,
    /// Display value = SI value x `scale`.
    pub scale: f64,
}

const fn words(
    short: &'static str,
    long: &'static str,
    unit: &'static str,
    scale: f64,
) -> FieldWords {
    FieldWords {
        short,
        long,
        unit,
        scale,
    }
}

/// The words of a numeric design path (a leading `design.` allowed); None for an unknown path.
pub fn field_words(path: &str) -> Option<FieldWords> {
    let path = path.strip_prefix("design.").unwrap_or(path);
    Some(match path {
        "magnets.remanence_t" => words("remanence", "magnet remanence", "T", 1.0),
        "magnets.density_kg_per_m3" => words("magnet density", "magnet density", "kg/m³", 1.0),
        "magnets.outer_diameter_m" => words("magnet Ø", "magnet outer diameter", "mm", 1e3),
        "magnets.inner_diameter_m" => words("magnet bore", "magnet inner diameter", "mm", 1e3),
        "magnets.length_m" => words("magnet length", "length of one magnet", "mm", 1e3),
        "magnets.count" => words("magnets", "magnets in the stack", "", 1.0),
        "magnets.spacer_length_m" => words("spacer", "spacer between magnets", "mm", 1e3),
        "magnets.temperature_c" => words("magnets at", "magnet temperature", "°C", 1.0),
        "tube.conductivity_s_per_m" => words("conductivity", "tube conductivity", "MS/m", 1e-6),
        "tube.resistivity_temperature_coefficient_per_k" => words(
            "resistivity coefficient",
            "resistivity temperature coefficient",
            "1/K",
            1.0,
        ),
        "tube.inner_diameter_m" => words("bore", "tube bore", "mm", 1e3),
        "tube.wall_thickness_m" => words("wall", "tube wall thickness", "mm", 1e3),
        "tube.length_m" => words("tube", "tube length", "mm", 1e3),
        "tube.temperature_c" => words("tube at", "tube temperature", "°C", 1.0),
        "tube.perforation_fraction" => words("perforation", "open area of the wall", "%", 100.0),
        "tube.density_kg_per_m3" => words("tube density", "tube density", "kg/m³", 1.0),
        "load.payload_mass_kg" => words("payload", "payload", "kg", 1.0),
        "load.incline_deg" => words("incline", "incline below horizontal", "°", 1.0),
        "load.applied_force_n" => words("applied force", "applied force", "N", 1.0),
        "load.friction_coefficient" => words("friction", "friction coefficient", "", 1.0),
        "load.gravity_m_per_s2" => words("gravity", "gravity", "m/s²", 1.0),
        _ => return None,
    })
}

/// A key entry for one value of a varied field: `wall 1.5 mm`, `payload 1 kg`, `2 magnets`,
/// `incline 30°`; the raw path and value for an unknown path.
pub fn field_value(path: &str, value: f64) -> String {
    let Some(w) = field_words(path) else {
        return format!("{path} = {}", format_number(value));
    };
    let shown = format_number(value * w.scale);
    match (path.strip_prefix("design.").unwrap_or(path), w.unit) {
        ("magnets.count", _) if value == 1.0 => "1 magnet".to_string(),
        ("magnets.count", _) => format!("{shown} magnets"),
        (_, "") => format!("{} {shown}", w.short),
        (_, "°") | (_, "%") => format!("{} {shown}{}", w.short, w.unit),
        (_, unit) => format!("{} {shown} {unit}", w.short),
    }
}

/// An axis title for a varied field in its display unit (`tube wall thickness [mm]`).
pub fn field_axis_title(path: &str) -> String {
    match field_words(path) {
        Some(w) if w.unit.is_empty() => w.long.to_string(),
        Some(w) => format!("{} [{}]", w.long, w.unit),
        None => axis_title(path),
    }
}

/// Display factor of a varied field (1 for unknown paths).
pub fn field_scale(path: &str) -> f64 {
    field_words(path).map_or(1.0, |w| w.scale)
}

/// A millimetre figure for a length in metres (`0.0015` -> `1.5`).
fn mm(m: f64) -> String {
    format_number(m * 1e3)
}

/// One line that says which design a plot is about, in display units:
/// `1 N42 magnet Ø12 x 20 mm in copper-c12200, bore 13 mm, wall 1.5 mm, 300 mm long; vertical`.
pub fn design_summary(spec: &DesignSpec) -> String {
    let m = &spec.magnets;
    let t = &spec.tube;
    let l = &spec.load;
    let grade = match (&m.grade, m.remanence_t) {
        (_, Some(br)) => format!("{} T", format_number(br)),
        (Some(g), None) => g.clone(),
        (None, None) => "magnet".to_string(),
    };
    let (shape, size) = if m.inner_diameter_m > 0.0 {
        (
            " ring",
            format!(
                "Ø{}/{} x {} mm",
                mm(m.outer_diameter_m),
                mm(m.inner_diameter_m),
                mm(m.length_m)
            ),
        )
    } else {
        (
            "",
            format!("Ø{} x {} mm", mm(m.outer_diameter_m), mm(m.length_m)),
        )
    };
    let stack = if m.count == 1 {
        format!("1 {grade}{shape} magnet {size}")
    } else {
        let how = match m.polarity {
            Polarity::Aligned => "aligned",
            Polarity::Alternating => "alternating",
        };
        format!("{} {grade}{shape} magnets {size}, {how},", m.count)
    };
    let material = match (&t.material, t.conductivity_s_per_m) {
        (_, Some(s)) => format!("a {} MS/m tube", format_number(s * 1e-6)),
        (Some(id), None) => id.clone(),
        (None, None) => "a tube".to_string(),
    };
    let mut text = format!(
        "{stack} in {material}, bore {} mm, wall {} mm, {} mm long",
        mm(t.inner_diameter_m),
        mm(t.wall_thickness_m),
        mm(t.length_m),
    );
    if l.payload_mass_kg > 0.0 {
        text.push_str(&format!(
            "; payload {} kg",
            format_number(l.payload_mass_kg)
        ));
    }
    if l.incline_deg != 90.0 {
        text.push_str(&format!("; incline {}°", format_number(l.incline_deg)));
    }
    text
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_read_well() {
        assert_eq!(format_number(0.0505431), "0.0505");
        assert_eq!(format_number(62.768), "62.8");
        assert_eq!(format_number(1.0), "1");
        assert_eq!(format_number(1500.0), "1500");
        assert_eq!(format_number(2.5e-6), "2.50e-6");
        assert_eq!(format_number(-0.25), "-0.25");
        assert_eq!(format_number(f64::NAN), "n/a");
    }

    #[test]
    fn titles_carry_units() {
        assert_eq!(axis_title("terminal_speed_m_per_s"), "terminal speed [m/s]");
        assert_eq!(axis_title("damping_n_s_per_m"), "damping [N s/m]");
        assert_eq!(
            axis_title("max_deceleration_m_per_s2"),
            "max deceleration [m/s²]"
        );
        assert_eq!(
            axis_title("magnetic_reynolds_number"),
            "magnetic reynolds number [1]"
        );
        assert_eq!(axis_title("tube.temperature_c"), "tube temperature [°C]");
    }

    #[test]
    fn key_entries_are_words_in_display_units() {
        assert_eq!(field_value("load.payload_mass_kg", 1.0), "payload 1 kg");
        assert_eq!(field_value("design.magnets.count", 2.0), "2 magnets");
        assert_eq!(field_value("magnets.count", 1.0), "1 magnet");
        assert_eq!(field_value("tube.wall_thickness_m", 0.0015), "wall 1.5 mm");
        assert_eq!(field_value("load.incline_deg", 30.0), "incline 30°");
        assert_eq!(
            field_value("tube.perforation_fraction", 0.2),
            "perforation 20%"
        );
        assert_eq!(
            field_value("load.friction_coefficient", 0.1),
            "friction 0.1"
        );
        assert_eq!(
            field_axis_title("tube.wall_thickness_m"),
            "tube wall thickness [mm]"
        );
        assert_eq!(field_axis_title("magnets.count"), "magnets in the stack");
    }
}
