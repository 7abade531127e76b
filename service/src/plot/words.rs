//! The words and numbers a plot prints: number labels, key entries for varied design fields
//! in display units (`wall 1.5 mm`, `payload 1 kg`, `2 magnets`), and a one-line description
//! of a design for titles and `<desc>`. Words and units of fields and metrics come from the
//! model's tables ([`DesignField::info`], [`ringdrag_model::jobs::metrics::Metric::axis_title`]).

use ringdrag_model::records::spec::Polarity;
use ringdrag_model::{DesignField, DesignSpec};

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

/// A key entry for one value of a varied field: `wall 1.5 mm`, `payload 1 kg`, `2 magnets`,
/// `incline 30°` (the words and display unit are the model's field table's).
pub fn field_value(field: DesignField, value: f64) -> String {
    let w = field.info().display;
    let shown = format_number(value * w.scale);
    match (field, w.unit) {
        (DesignField::MagnetCount, _) if value == 1.0 => "1 magnet".to_string(),
        (DesignField::MagnetCount, _) => format!("{shown} magnets"),
        (_, "") => format!("{} {shown}", w.short),
        (_, "°") | (_, "%") => format!("{} {shown}{}", w.short, w.unit),
        (_, unit) => format!("{} {shown} {unit}", w.short),
    }
}

/// An axis title for a varied field in its display unit (`tube wall thickness [mm]`).
pub fn field_axis_title(field: DesignField) -> String {
    let w = field.info().display;
    if w.unit.is_empty() {
        w.long.to_string()
    } else {
        format!("{} [{}]", w.long, w.unit)
    }
}

/// Display factor of a varied field.
pub fn field_scale(field: DesignField) -> f64 {
    field.info().display.scale
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
        use ringdrag_model::jobs::metrics::Metric;
        assert_eq!(Metric::TerminalSpeed.axis_title(), "terminal speed [m/s]");
        assert_eq!(Metric::Damping.axis_title(), "damping [N s/m]");
        assert_eq!(
            Metric::MaxDeceleration.axis_title(),
            "max deceleration [m/s²]"
        );
        assert_eq!(
            Metric::MagneticReynolds.axis_title(),
            "magnetic reynolds number [1]"
        );
        assert_eq!(
            field_axis_title(DesignField::TubeTemperature),
            "tube temperature [°C]"
        );
    }

    #[test]
    fn key_entries_are_words_in_display_units() {
        assert_eq!(
            field_value(
                DesignField::from_path("load.payload_mass_kg").expect("a field"),
                1.0
            ),
            "payload 1 kg"
        );
        assert_eq!(
            field_value(
                DesignField::from_path("design.magnets.count").expect("a field"),
                2.0
            ),
            "2 magnets"
        );
        assert_eq!(
            field_value(
                DesignField::from_path("magnets.count").expect("a field"),
                1.0
            ),
            "1 magnet"
        );
        assert_eq!(
            field_value(
                DesignField::from_path("tube.wall_thickness_m").expect("a field"),
                0.0015
            ),
            "wall 1.5 mm"
        );
        assert_eq!(
            field_value(
                DesignField::from_path("load.incline_deg").expect("a field"),
                30.0
            ),
            "incline 30°"
        );
        assert_eq!(
            field_value(
                DesignField::from_path("tube.perforation_fraction").expect("a field"),
                0.2
            ),
            "perforation 20%"
        );
        assert_eq!(
            field_value(
                DesignField::from_path("load.friction_coefficient").expect("a field"),
                0.1
            ),
            "friction 0.1"
        );
        assert_eq!(
            field_axis_title(DesignField::from_path("tube.wall_thickness_m").expect("a field")),
            "tube wall thickness [mm]"
        );
        assert_eq!(
            field_axis_title(DesignField::from_path("magnets.count").expect("a field")),
            "magnets in the stack"
        );
    }
}
