//! The design object as callers write it: plain records with SI fields whose names carry
//! their units (the HTTP contract's names). Nothing here is trusted: [`crate::records::design`]
//! turns a [`DesignSpec`] into a validated [`crate::records::design::Design`] once, at the edge.

use serde::{Deserialize, Serialize};

/// Relative orientation of neighbouring magnets in a stack.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
#[serde(rename_all = "snake_case")]
pub enum Polarity {
    /// Every magnet magnetised the same way (they attract; the stack acts as one long magnet).
    #[default]
    Aligned,
    /// Neighbours face like pole to like pole (they repel; each joint is a strong pole region).
    Alternating,
}

/// The magnet or stack of identical magnets.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
#[serde(deny_unknown_fields)]
pub struct MagnetSpec {
    /// Grade id from `GET /v1/materials` (e.g. `N42`); optional when `remanence_t` is given.
    #[serde(default)]
    pub grade: Option<String>,
    /// Remanence at 20 C, T; overrides the grade's nominal value.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0, maximum = 1.6))]
    pub remanence_t: Option<f64>,
    /// Magnet density, kg/m^3; overrides the grade's value.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0, maximum = 30000.0))]
    pub density_kg_per_m3: Option<f64>,
    /// Outer diameter of one magnet, m.
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0, maximum = 1.0))]
    pub outer_diameter_m: f64,
    /// Inner diameter, m: greater than zero for ring magnets.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(minimum = 0.0, maximum = 1.0))]
    pub inner_diameter_m: f64,
    /// Length of one magnet along the axis, m.
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0, maximum = 1.0))]
    pub length_m: f64,
    /// Number of magnets in the stack.
    #[serde(default = "one")]
    #[cfg_attr(feature = "schema", schema(minimum = 1, maximum = 64))]
    pub count: u32,
    /// Orientation of neighbours; ignored when `count` is 1.
    #[serde(default)]
    pub polarity: Polarity,
    /// Non-magnetic gap between neighbouring magnets, m.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(minimum = 0.0, maximum = 1.0))]
    pub spacer_length_m: f64,
    /// Magnet temperature, C; defaults to the tube's `temperature_c`.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(minimum = -60.0, maximum = 600.0))]
    pub temperature_c: Option<f64>,
}

fn one() -> u32 {
    1
}

/// The conducting tube.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
#[serde(deny_unknown_fields)]
pub struct TubeSpec {
    /// Material id from `GET /v1/materials`; optional when `conductivity_s_per_m` is given.
    #[serde(default)]
    pub material: Option<String>,
    /// Conductivity at 20 C, S/m; overrides the material's value.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0, maximum = 7.0e7))]
    pub conductivity_s_per_m: Option<f64>,
    /// Temperature coefficient of resistivity, 1/K; overrides the material's value
    /// (needed for temperature effects when no material is named).
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(minimum = 0.0, maximum = 0.01))]
    pub resistivity_temperature_coefficient_per_k: Option<f64>,
    /// Tube density, kg/m^3, for the temperature rise; overrides the material's value.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0, maximum = 30000.0))]
    pub density_kg_per_m3: Option<f64>,
    /// Specific heat, J/(kg K), for the temperature rise; overrides the material's value.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0, maximum = 10000.0))]
    pub specific_heat_j_per_kg_k: Option<f64>,
    /// Inner (bore) diameter, m.
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0, maximum = 1.0))]
    pub inner_diameter_m: f64,
    /// Wall thickness, m.
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0, maximum = 0.5))]
    pub wall_thickness_m: f64,
    /// Tube length, m.
    #[cfg_attr(feature = "schema", schema(exclusive_minimum = 0.0, maximum = 20.0))]
    pub length_m: f64,
    /// Conductor temperature for this job, C.
    #[serde(default = "twenty")]
    #[cfg_attr(feature = "schema", schema(minimum = -60.0, maximum = 400.0))]
    pub temperature_c: f64,
    /// Open-area fraction of round perforations, 0 <= f < 0.6.
    #[serde(default)]
    #[cfg_attr(feature = "schema", schema(minimum = 0.0, exclusive_maximum = 0.6))]
    pub perforation_fraction: f64,
}

fn twenty() -> f64 {
    20.0
}

/// What moves and what drives it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
#[serde(deny_unknown_fields, default)]
pub struct LoadSpec {
    /// Moving mass besides the magnets (carriage, cargo), kg.
    #[cfg_attr(feature = "schema", schema(minimum = 0.0, maximum = 100000.0))]
    pub payload_mass_kg: f64,
    /// Travel direction below horizontal, degrees; 90 is a vertical drop, negative is uphill.
    #[cfg_attr(feature = "schema", schema(minimum = -90.0, maximum = 90.0))]
    pub incline_deg: f64,
    /// Extra constant force along travel, N.
    #[cfg_attr(feature = "schema", schema(minimum = -1.0e6, maximum = 1.0e6))]
    pub applied_force_n: f64,
    /// Coulomb friction coefficient of the guide.
    #[cfg_attr(feature = "schema", schema(minimum = 0.0, maximum = 2.0))]
    pub friction_coefficient: f64,
    /// Gravitational acceleration, m/s^2.
    #[cfg_attr(feature = "schema", schema(minimum = 0.0, maximum = 100.0))]
    pub gravity_m_per_s2: f64,
}

/// Standard gravity, m/s^2 (source: CGPM 1901, the conventional value).
pub const STANDARD_GRAVITY_M_PER_S2: f64 = 9.80665;

impl Default for LoadSpec {
    fn default() -> Self {
        Self {
            payload_mass_kg: 0.0,
            incline_deg: 90.0,
            applied_force_n: 0.0,
            friction_coefficient: 0.0,
            gravity_m_per_s2: STANDARD_GRAVITY_M_PER_S2,
        }
    }
}

/// The whole design: magnets, tube and load.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
#[serde(deny_unknown_fields)]
pub struct DesignSpec {
    /// The magnet or stack.
    pub magnets: MagnetSpec,
    /// The conducting tube.
    pub tube: TubeSpec,
    /// The load; every field has a default (a bare stack dropped vertically).
    #[serde(default)]
    pub load: LoadSpec,
}
