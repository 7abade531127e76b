//! The numeric design fields, as one table: what sweeps, sizing and plots may vary.
//!
//! Each [`DesignField`] is one numeric field of the design object, named by its dotted path
//! in the HTTP contract (`tube.wall_thickness_m`; serde uses the same names). Its row in the
//! table says its unit, its allowed values (the same bounds [`crate::records::design::Design::from_spec`]
//! checks and the OpenAPI schema states), whether it takes whole numbers, whether it changes
//! the steady solver, how a plot shows it, and how to read and write it in a
//! [`DesignSpec`]. Validation, sweep axes, sizing, tolerance corners and plot labels all read
//! this table; nothing else keeps a list of paths.
//!
//! Setting a field edits the caller's [`DesignSpec`]; the result is validated like any design,
//! so a sweep point that leaves the valid range (a magnet wider than the bore, say) becomes
//! that point's error, not a silent clamp.

use crate::records::error::{FieldError, ModelError, show};
use crate::records::fieldtext;
use crate::records::spec::DesignSpec;
use serde::{Deserialize, Serialize};

/// Largest number of magnets in one stack.
pub const MAX_MAGNETS: u32 = 64;

/// A numeric design field that sweeps and sizing can vary.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
pub enum DesignField {
    /// `magnets.remanence_t`.
    #[serde(rename = "magnets.remanence_t")]
    MagnetRemanence,
    /// `magnets.density_kg_per_m3`.
    #[serde(rename = "magnets.density_kg_per_m3")]
    MagnetDensity,
    /// `magnets.outer_diameter_m`.
    #[serde(rename = "magnets.outer_diameter_m")]
    MagnetOuterDiameter,
    /// `magnets.inner_diameter_m`.
    #[serde(rename = "magnets.inner_diameter_m")]
    MagnetInnerDiameter,
    /// `magnets.length_m`.
    #[serde(rename = "magnets.length_m")]
    MagnetLength,
    /// `magnets.count`.
    #[serde(rename = "magnets.count")]
    MagnetCount,
    /// `magnets.spacer_length_m`.
    #[serde(rename = "magnets.spacer_length_m")]
    SpacerLength,
    /// `magnets.temperature_c`.
    #[serde(rename = "magnets.temperature_c")]
    MagnetTemperature,
    /// `tube.conductivity_s_per_m`.
    #[serde(rename = "tube.conductivity_s_per_m")]
    TubeConductivity,
    /// `tube.resistivity_temperature_coefficient_per_k`.
    #[serde(rename = "tube.resistivity_temperature_coefficient_per_k")]
    TubeResistivityCoefficient,
    /// `tube.inner_diameter_m`.
    #[serde(rename = "tube.inner_diameter_m")]
    TubeInnerDiameter,
    /// `tube.wall_thickness_m`.
    #[serde(rename = "tube.wall_thickness_m")]
    TubeWallThickness,
    /// `tube.length_m`.
    #[serde(rename = "tube.length_m")]
    TubeLength,
    /// `tube.temperature_c`.
    #[serde(rename = "tube.temperature_c")]
    TubeTemperature,
    /// `tube.perforation_fraction`.
    #[serde(rename = "tube.perforation_fraction")]
    TubePerforation,
    /// `tube.density_kg_per_m3`.
    #[serde(rename = "tube.density_kg_per_m3")]
    TubeDensity,
    /// `load.payload_mass_kg`.
    #[serde(rename = "load.payload_mass_kg")]
    PayloadMass,
    /// `load.incline_deg`.
    #[serde(rename = "load.incline_deg")]
    Incline,
    /// `load.applied_force_n`.
    #[serde(rename = "load.applied_force_n")]
    AppliedForce,
    /// `load.friction_coefficient`.
    #[serde(rename = "load.friction_coefficient")]
    Friction,
    /// `load.gravity_m_per_s2`.
    #[serde(rename = "load.gravity_m_per_s2")]
    Gravity,
}

/// The values a field accepts.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Bounds {
    /// Greater than zero and at most `max` (a size).
    Positive {
        /// Largest value.
        max: f64,
    },
    /// From `lo` to `hi`, both included; `lo` excluded when `lo_exclusive`.
    Range {
        /// Smallest value.
        lo: f64,
        /// Largest value.
        hi: f64,
        /// Whether `lo` itself is refused (a material property must be above zero).
        lo_exclusive: bool,
    },
    /// From `lo` included to `hi` excluded.
    HalfOpen {
        /// Smallest value.
        lo: f64,
        /// Limit, refused.
        hi: f64,
    },
    /// Whole numbers from `lo` to `hi`, both included.
    Whole {
        /// Smallest value.
        lo: u32,
        /// Largest value.
        hi: u32,
    },
}

/// Message for a subnormal input: so close to zero that products with it underflow, which
/// would surface later as a result that cannot be computed instead of a named field.
pub(crate) const SUBNORMAL: &str = "is a subnormal number (below 2.2e-308 in magnitude), too \
                                    small to compute with; give 0 where zero is allowed, or a \
                                    physically meaningful value";

impl Bounds {
    /// Lower and upper bound as numbers (for schemas and ranges).
    pub fn limits(self) -> (f64, f64) {
        match self {
            Self::Positive { max } => (0.0, max),
            Self::Range { lo, hi, .. } | Self::HalfOpen { lo, hi } => (lo, hi),
            Self::Whole { lo, hi } => (f64::from(lo), f64::from(hi)),
        }
    }

    /// Whether `v` is allowed.
    pub fn contains(self, v: f64) -> bool {
        v.is_finite()
            && !v.is_subnormal()
            && match self {
                Self::Positive { max } => v > 0.0 && v <= max,
                Self::Range {
                    lo,
                    hi,
                    lo_exclusive,
                } => (if lo_exclusive { v > lo } else { v >= lo }) && v <= hi,
                Self::HalfOpen { lo, hi } => v >= lo && v < hi,
                Self::Whole { lo, hi } => {
                    v.fract() == 0.0 && v >= f64::from(lo) && v <= f64::from(hi)
                }
            }
    }

    /// Checks `v` for the field at `path` (unit `unit`), adding what is wrong to `errs`.
    pub fn check(self, path: &str, unit: &str, v: f64, errs: &mut Vec<FieldError>) {
        if self.contains(v) {
            return;
        }
        let message = if !v.is_finite() {
            "must be a finite number".to_string()
        } else if v.is_subnormal() {
            SUBNORMAL.to_string()
        } else {
            match self {
                Self::Positive { .. } if v <= 0.0 => "must be greater than zero".to_string(),
                Self::Positive { max } => fieldtext::out_of_range(unit, v, 0.0, max, true),
                Self::Range {
                    lo,
                    hi,
                    lo_exclusive,
                } => fieldtext::out_of_range(unit, v, lo, hi, lo_exclusive),
                Self::HalfOpen { lo, hi } => format!("must be in [{lo}, {hi})"),
                Self::Whole { lo, hi } => format!("must be between {lo} and {hi}"),
            }
        };
        errs.push(FieldError::new(path, message));
    }
}

/// How a plot shows a field: a short word for a key, a longer one for an axis, the display
/// unit and the factor from the field's SI unit to it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DisplayWords {
    /// Short name for a key entry (`wall`).
    pub short: &'static str,
    /// Name for an axis title (`tube wall thickness`).
    pub long: &'static str,
    /// Display unit (`mm`); empty for a pure number.
    pub unit: &'static str,
    /// Display value = SI value x `scale`.
    pub scale: f64,
}

/// One row of the table.
#[derive(Debug, Clone, Copy)]
pub struct FieldInfo {
    /// Dotted path in the design object.
    pub path: &'static str,
    /// SI unit as messages print it after a number (`m`, `kg/m^3`); empty when dimensionless.
    pub unit: &'static str,
    /// Allowed values.
    pub bounds: Bounds,
    /// Whether the design object may leave the field out (a grade or material then gives it).
    pub optional: bool,
    /// Whether a change alters the steady solver (the load, the magnets' density, the tube's
    /// length and density do not: they only set the driving force, the mass or the heating).
    pub changes_solver: bool,
    /// How plots show it.
    pub display: DisplayWords,
    get: fn(&DesignSpec) -> Option<f64>,
    set: fn(&mut DesignSpec, f64),
}

const fn words(
    short: &'static str,
    long: &'static str,
    unit: &'static str,
    scale: f64,
) -> DisplayWords {
    DisplayWords {
        short,
        long,
        unit,
        scale,
    }
}

const fn positive(max: f64) -> Bounds {
    Bounds::Positive { max }
}

const fn range(lo: f64, hi: f64) -> Bounds {
    Bounds::Range {
        lo,
        hi,
        lo_exclusive: false,
    }
}

const fn above_zero(hi: f64) -> Bounds {
    Bounds::Range {
        lo: 0.0,
        hi,
        lo_exclusive: true,
    }
}

/// The table, in the order of [`DesignField::ALL`]. Bounds: sizes up to 1 m (wall 0.5 m, tube
/// 20 m), remanence up to 1.6 T (above every NdFeB grade, source: IEC 60404-8-1, 2015, N55 at
/// 1.5 T), conductivity up to 7e7 S/m (above silver's 6.3e7, source: CRC Handbook of
/// Chemistry and Physics, 97th ed., 2016), temperatures -60 to 400 C for the tube and to
/// 600 C for magnets (the service's operating envelope, common practice), perforation below
/// 0.6 (where the dilute-limit rule of [`crate::records::design::effective_conductivity`] ends).
static TABLE: [FieldInfo; 21] = [
    FieldInfo {
        path: "magnets.remanence_t",
        unit: "T",
        bounds: above_zero(1.6),
        optional: true,
        changes_solver: true,
        display: words("remanence", "magnet remanence", "T", 1.0),
        get: |s| s.magnets.remanence_t,
        set: |s, v| s.magnets.remanence_t = Some(v),
    },
    FieldInfo {
        path: "magnets.density_kg_per_m3",
        unit: "kg/m^3",
        bounds: above_zero(30000.0),
        optional: true,
        changes_solver: false,
        display: words("magnet density", "magnet density", "kg/m³", 1.0),
        get: |s| s.magnets.density_kg_per_m3,
        set: |s, v| s.magnets.density_kg_per_m3 = Some(v),
    },
    FieldInfo {
        path: "magnets.outer_diameter_m",
        unit: "m",
        bounds: positive(1.0),
        optional: false,
        changes_solver: true,
        display: words("magnet Ø", "magnet outer diameter", "mm", 1e3),
        get: |s| Some(s.magnets.outer_diameter_m),
        set: |s, v| s.magnets.outer_diameter_m = v,
    },
    FieldInfo {
        path: "magnets.inner_diameter_m",
        unit: "m",
        bounds: range(0.0, 1.0),
        optional: false,
        changes_solver: true,
        display: words("magnet bore", "magnet inner diameter", "mm", 1e3),
        get: |s| Some(s.magnets.inner_diameter_m),
        set: |s, v| s.magnets.inner_diameter_m = v,
    },
    FieldInfo {
        path: "magnets.length_m",
        unit: "m",
        bounds: positive(1.0),
        optional: false,
        changes_solver: true,
        display: words("magnet length", "length of one magnet", "mm", 1e3),
        get: |s| Some(s.magnets.length_m),
        set: |s, v| s.magnets.length_m = v,
    },
    FieldInfo {
        path: "magnets.count",
        unit: "",
        bounds: Bounds::Whole {
            lo: 1,
            hi: MAX_MAGNETS,
        },
        optional: false,
        changes_solver: true,
        display: words("magnets", "magnets in the stack", "", 1.0),
        get: |s| Some(f64::from(s.magnets.count)),
        // Only whole values within the bounds reach here (see `DesignField::set`).
        set: |s, v| s.magnets.count = v as u32,
    },
    FieldInfo {
        path: "magnets.spacer_length_m",
        unit: "m",
        bounds: range(0.0, 1.0),
        optional: false,
        changes_solver: true,
        display: words("spacer", "spacer between magnets", "mm", 1e3),
        get: |s| Some(s.magnets.spacer_length_m),
        set: |s, v| s.magnets.spacer_length_m = v,
    },
    FieldInfo {
        path: "magnets.temperature_c",
        unit: "C",
        bounds: range(-60.0, 600.0),
        optional: true,
        changes_solver: true,
        display: words("magnets at", "magnet temperature", "°C", 1.0),
        get: |s| s.magnets.temperature_c,
        set: |s, v| s.magnets.temperature_c = Some(v),
    },
    FieldInfo {
        path: "tube.conductivity_s_per_m",
        unit: "S/m",
        bounds: above_zero(7.0e7),
        optional: true,
        changes_solver: true,
        display: words("conductivity", "tube conductivity", "MS/m", 1e-6),
        get: |s| s.tube.conductivity_s_per_m,
        set: |s, v| s.tube.conductivity_s_per_m = Some(v),
    },
    FieldInfo {
        path: "tube.resistivity_temperature_coefficient_per_k",
        unit: "1/K",
        bounds: range(0.0, 0.01),
        optional: true,
        changes_solver: true,
        display: words(
            "resistivity coefficient",
            "resistivity temperature coefficient",
            "1/K",
            1.0,
        ),
        get: |s| s.tube.resistivity_temperature_coefficient_per_k,
        set: |s, v| s.tube.resistivity_temperature_coefficient_per_k = Some(v),
    },
    FieldInfo {
        path: "tube.inner_diameter_m",
        unit: "m",
        bounds: positive(1.0),
        optional: false,
        changes_solver: true,
        display: words("bore", "tube bore", "mm", 1e3),
        get: |s| Some(s.tube.inner_diameter_m),
        set: |s, v| s.tube.inner_diameter_m = v,
    },
    FieldInfo {
        path: "tube.wall_thickness_m",
        unit: "m",
        bounds: positive(0.5),
        optional: false,
        changes_solver: true,
        display: words("wall", "tube wall thickness", "mm", 1e3),
        get: |s| Some(s.tube.wall_thickness_m),
        set: |s, v| s.tube.wall_thickness_m = v,
    },
    FieldInfo {
        path: "tube.length_m",
        unit: "m",
        bounds: positive(20.0),
        optional: false,
        changes_solver: false,
        display: words("tube", "tube length", "mm", 1e3),
        get: |s| Some(s.tube.length_m),
        set: |s, v| s.tube.length_m = v,
    },
    FieldInfo {
        path: "tube.temperature_c",
        unit: "C",
        bounds: range(-60.0, 400.0),
        optional: false,
        changes_solver: true,
        display: words("tube at", "tube temperature", "°C", 1.0),
        get: |s| Some(s.tube.temperature_c),
        set: |s, v| s.tube.temperature_c = v,
    },
    FieldInfo {
        path: "tube.perforation_fraction",
        unit: "",
        bounds: Bounds::HalfOpen { lo: 0.0, hi: 0.6 },
        optional: false,
        changes_solver: true,
        display: words("perforation", "open area of the wall", "%", 100.0),
        get: |s| Some(s.tube.perforation_fraction),
        set: |s, v| s.tube.perforation_fraction = v,
    },
    FieldInfo {
        path: "tube.density_kg_per_m3",
        unit: "kg/m^3",
        bounds: above_zero(30000.0),
        optional: true,
        changes_solver: false,
        display: words("tube density", "tube density", "kg/m³", 1.0),
        get: |s| s.tube.density_kg_per_m3,
        set: |s, v| s.tube.density_kg_per_m3 = Some(v),
    },
    FieldInfo {
        path: "load.payload_mass_kg",
        unit: "kg",
        bounds: range(0.0, 1.0e5),
        optional: false,
        changes_solver: false,
        display: words("payload", "payload", "kg", 1.0),
        get: |s| Some(s.load.payload_mass_kg),
        set: |s, v| s.load.payload_mass_kg = v,
    },
    FieldInfo {
        path: "load.incline_deg",
        unit: "degrees",
        bounds: range(-90.0, 90.0),
        optional: false,
        changes_solver: false,
        display: words("incline", "incline below horizontal", "°", 1.0),
        get: |s| Some(s.load.incline_deg),
        set: |s, v| s.load.incline_deg = v,
    },
    FieldInfo {
        path: "load.applied_force_n",
        unit: "N",
        bounds: range(-1.0e6, 1.0e6),
        optional: false,
        changes_solver: false,
        display: words("applied force", "applied force", "N", 1.0),
        get: |s| Some(s.load.applied_force_n),
        set: |s, v| s.load.applied_force_n = v,
    },
    FieldInfo {
        path: "load.friction_coefficient",
        unit: "",
        bounds: range(0.0, 2.0),
        optional: false,
        changes_solver: false,
        display: words("friction", "friction coefficient", "", 1.0),
        get: |s| Some(s.load.friction_coefficient),
        set: |s, v| s.load.friction_coefficient = v,
    },
    FieldInfo {
        path: "load.gravity_m_per_s2",
        unit: "m/s^2",
        bounds: range(0.0, 100.0),
        optional: false,
        changes_solver: false,
        display: words("gravity", "gravity", "m/s²", 1.0),
        get: |s| Some(s.load.gravity_m_per_s2),
        set: |s, v| s.load.gravity_m_per_s2 = v,
    },
];

impl DesignField {
    /// Every field, in table order.
    pub const ALL: [Self; 21] = [
        Self::MagnetRemanence,
        Self::MagnetDensity,
        Self::MagnetOuterDiameter,
        Self::MagnetInnerDiameter,
        Self::MagnetLength,
        Self::MagnetCount,
        Self::SpacerLength,
        Self::MagnetTemperature,
        Self::TubeConductivity,
        Self::TubeResistivityCoefficient,
        Self::TubeInnerDiameter,
        Self::TubeWallThickness,
        Self::TubeLength,
        Self::TubeTemperature,
        Self::TubePerforation,
        Self::TubeDensity,
        Self::PayloadMass,
        Self::Incline,
        Self::AppliedForce,
        Self::Friction,
        Self::Gravity,
    ];

    /// The field's row in the table.
    pub fn info(self) -> &'static FieldInfo {
        &TABLE[self as usize]
    }

    /// Dotted path in the design object (`tube.wall_thickness_m`).
    pub fn path(self) -> &'static str {
        self.info().path
    }

    /// Whether the field takes whole numbers only.
    pub fn is_whole(self) -> bool {
        matches!(self.info().bounds, Bounds::Whole { .. })
    }

    /// Whether a change of the field alters the steady solver.
    pub fn changes_solver(self) -> bool {
        self.info().changes_solver
    }

    /// The field at `path` (a leading `design.` allowed), or None.
    pub fn from_path(path: &str) -> Option<Self> {
        let p = path.strip_prefix("design.").unwrap_or(path);
        Self::ALL.into_iter().find(|f| f.path() == p)
    }

    /// The field at `path`; `at` is the request field that holds the path.
    ///
    /// # Errors
    /// [`ModelError::Invalid`] naming `at` when `path` is not a numeric design field.
    pub fn parse(path: &str, at: &str) -> Result<Self, ModelError> {
        Self::from_path(path).ok_or_else(|| {
            let all: Vec<&str> = Self::ALL.iter().map(|f| f.path()).collect();
            ModelError::field(
                at,
                format!(
                    "'{path}' is not a numeric design field; one of: {}",
                    all.join(", ")
                ),
            )
        })
    }

    /// Reads the field; None where an optional field is unset.
    pub fn get(self, spec: &DesignSpec) -> Option<f64> {
        (self.info().get)(spec)
    }

    /// Sets the field to `value`. Whole-number fields take the nearest whole number.
    ///
    /// # Errors
    /// [`ModelError::Invalid`] naming the field when a whole-number field's value, rounded, is
    /// outside its bounds (other values are checked when the design is validated).
    pub fn set(self, spec: &mut DesignSpec, value: f64) -> Result<(), ModelError> {
        let info = self.info();
        let value = match info.bounds {
            Bounds::Whole { lo, hi } => {
                let r = value.round();
                if !(f64::from(lo)..=f64::from(hi)).contains(&r) {
                    return Err(ModelError::field(
                        info.path,
                        format!("must be a whole number from {lo} to {hi}"),
                    ));
                }
                r
            }
            _ => value,
        };
        (info.set)(spec, value);
        Ok(())
    }

    /// Checks `value` against the field's bounds, adding what is wrong to `errs` under the
    /// field's path.
    pub fn check(self, value: f64, errs: &mut Vec<FieldError>) {
        let info = self.info();
        info.bounds.check(info.path, info.unit, value, errs);
    }

    /// Checks that `value` suits a whole-number field (`at` names the request field).
    ///
    /// # Errors
    /// [`ModelError::Invalid`] naming `at` when the field takes whole numbers and `value` is
    /// not one; `hint` is appended to the message.
    pub fn check_whole(self, value: f64, at: &str, hint: &str) -> Result<(), ModelError> {
        if self.is_whole() && value.fract() != 0.0 {
            Err(ModelError::field(
                at,
                format!(
                    "{} takes whole numbers only; {} is not one{hint}",
                    self.path(),
                    show(value)
                ),
            ))
        } else {
            Ok(())
        }
    }
}

/// Fields order by path, so that maps keyed by them list paths alphabetically, as maps keyed
/// by the paths did.
impl Ord for DesignField {
    fn cmp(&self, other: &Self) -> std::cmp::Ordering {
        self.path().cmp(other.path())
    }
}

impl PartialOrd for DesignField {
    fn partial_cmp(&self, other: &Self) -> Option<std::cmp::Ordering> {
        Some(self.cmp(other))
    }
}

impl std::fmt::Display for DesignField {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.path())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_field_round_trips_and_serde_names_are_paths() {
        let mut spec: DesignSpec = serde_json::from_str(
            r#"{"magnets":{"grade":"N42","outer_diameter_m":0.01,"length_m":0.01},
                "tube":{"material":"copper-c11000","inner_diameter_m":0.011,"wall_thickness_m":0.001,"length_m":0.2}}"#,
        )
        .expect("parses");
        for (i, f) in DesignField::ALL.iter().enumerate() {
            assert_eq!(*f as usize, i, "table order");
            let v = (i + 2) as f64;
            f.set(&mut spec, v).expect("settable");
            assert_eq!(f.get(&spec), Some(v), "{f}");
            assert_eq!(DesignField::from_path(&format!("design.{f}")), Some(*f));
            assert_eq!(
                serde_json::to_value(f).expect("serialises"),
                serde_json::Value::String(f.path().to_string())
            );
        }
        assert!(DesignField::parse("tube.colour", "vary.path").is_err());
        assert!(DesignField::MagnetCount.set(&mut spec, 0.2).is_err());
    }

    #[test]
    fn bounds_decide_like_their_messages() {
        let mut errs = Vec::new();
        DesignField::TubeWallThickness.check(0.0, &mut errs);
        DesignField::TubeWallThickness.check(0.7, &mut errs);
        DesignField::TubePerforation.check(0.6, &mut errs);
        DesignField::MagnetRemanence.check(0.0, &mut errs);
        DesignField::Incline.check(5e-324, &mut errs);
        DesignField::TubeWallThickness.check(0.001, &mut errs);
        assert_eq!(errs.len(), 5, "{errs:?}");
        assert_eq!(errs[0].message, "must be greater than zero");
        assert!(errs[1].message.contains("above the limit of 0.5 m"));
        assert_eq!(errs[2].message, "must be in [0, 0.6)");
        assert!(errs[4].message.contains("subnormal"));
    }
}
