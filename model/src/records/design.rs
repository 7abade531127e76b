//! Validated design types: the solver's only view of a design.
//!
//! [`Design::from_spec`] checks a [`DesignSpec`] once (every offending field is reported
//! with its dotted path), resolves materials and grades, applies temperature and
//! perforation corrections, and records cautions. Inside the model every length is in
//! metres, every field name carries its unit, and geometry is known to be valid: positive
//! finite sizes, the magnet inside the bore, the ring bore inside the magnet.

use crate::MU0;
use crate::records::caution::{Caution, CautionKind};
use crate::records::designfield::{Bounds, DesignField};
use crate::records::error::{FieldError, ModelError, show};
use crate::records::materials::{self, LookupError};
use crate::records::spec::{DesignSpec, LoadSpec, MagnetSpec, Polarity};

pub use crate::records::designfield::MAX_MAGNETS;
/// Density assumed for magnets given by remanence alone (sintered NdFeB), kg/m^3.
pub const DEFAULT_MAGNET_DENSITY_KG_PER_M3: f64 = 7500.0;

/// A validated stack of identical, axially magnetised cylinders or rings.
#[derive(Debug, Clone, PartialEq)]
pub struct MagnetStack {
    /// Outer radius of each magnet, m.
    pub outer_radius_m: f64,
    /// Inner radius (0 for a solid cylinder), m.
    pub inner_radius_m: f64,
    /// Length of one magnet, m.
    pub magnet_length_m: f64,
    /// Number of magnets.
    pub count: usize,
    /// Orientation of neighbours.
    pub polarity: Polarity,
    /// Gap between neighbours, m.
    pub spacer_length_m: f64,
    /// Remanence at 20 C, T.
    pub remanence_20c_t: f64,
    /// Reversible temperature coefficient of remanence, 1/K.
    pub remanence_temperature_coefficient_per_k: f64,
    /// Magnet temperature of this job, C.
    pub temperature_c: f64,
    /// Remanence at `temperature_c`, T.
    pub remanence_t: f64,
    /// Density, kg/m^3.
    pub density_kg_per_m3: f64,
    /// Grade id when one was named.
    pub grade_id: Option<&'static str>,
    /// Maximum working temperature of the grade, C, when known.
    pub max_working_temperature_c: Option<f64>,
}

impl MagnetStack {
    /// A stack at 20 C with no grade: remanence taken as temperature-independent, density
    /// that of sintered NdFeB. For tests and callers that build geometry directly; requests
    /// go through [`Design::from_spec`], which validates.
    pub fn at_20c(
        outer_radius_m: f64,
        inner_radius_m: f64,
        magnet_length_m: f64,
        remanence_t: f64,
        count: usize,
        polarity: Polarity,
        spacer_length_m: f64,
    ) -> Self {
        Self {
            outer_radius_m,
            inner_radius_m,
            magnet_length_m,
            count,
            polarity,
            spacer_length_m,
            remanence_20c_t: remanence_t,
            remanence_temperature_coefficient_per_k: 0.0,
            temperature_c: 20.0,
            remanence_t,
            density_kg_per_m3: DEFAULT_MAGNET_DENSITY_KG_PER_M3,
            grade_id: None,
            max_working_temperature_c: None,
        }
    }

    /// Equivalent surface current density K = M = Br / mu0 on the curved surfaces, A/m
    /// (Amperian current model: Jackson, Classical Electrodynamics, 3rd ed., sec. 5.8-5.10).
    pub fn surface_current_a_per_m(&self) -> f64 {
        self.remanence_t / MU0
    }

    /// Centre-to-centre distance of neighbouring magnets, m.
    pub fn pitch_m(&self) -> f64 {
        self.magnet_length_m + self.spacer_length_m
    }

    /// Length of the whole stack, m.
    pub fn total_length_m(&self) -> f64 {
        self.count as f64 * self.magnet_length_m + (self.count as f64 - 1.0) * self.spacer_length_m
    }

    /// Axial offset of each magnet's centre from the stack centre, m, and the sign of its
    /// magnetisation (+1 or -1).
    pub fn magnets(&self) -> impl Iterator<Item = (f64, f64)> + '_ {
        let n = self.count;
        let pitch = self.pitch_m();
        (0..n).map(move |i| {
            let offset = (i as f64 - (n as f64 - 1.0) / 2.0) * pitch;
            let sign = match self.polarity {
                Polarity::Aligned => 1.0,
                Polarity::Alternating => {
                    if i % 2 == 0 {
                        1.0
                    } else {
                        -1.0
                    }
                }
            };
            (offset, sign)
        })
    }

    /// Volume of one magnet, m^3.
    pub fn magnet_volume_m3(&self) -> f64 {
        std::f64::consts::PI
            * (self.outer_radius_m.powi(2) - self.inner_radius_m.powi(2))
            * self.magnet_length_m
    }

    /// Mass of the stack, kg.
    pub fn mass_kg(&self) -> f64 {
        self.count as f64 * self.magnet_volume_m3() * self.density_kg_per_m3
    }

    /// Dipole moment of one magnet, m = Br V / mu0, A m^2.
    pub fn dipole_moment_a_m2(&self) -> f64 {
        self.remanence_t * self.magnet_volume_m3() / MU0
    }

    /// The same stack at another magnet temperature.
    pub fn at_temperature(&self, temperature_c: f64) -> Self {
        let mut s = self.clone();
        s.temperature_c = temperature_c;
        s.remanence_t = materials::remanence_at(
            self.remanence_20c_t,
            self.remanence_temperature_coefficient_per_k,
            temperature_c,
        );
        s
    }
}

/// A validated non-ferrous tube.
#[derive(Debug, Clone, PartialEq)]
pub struct Tube {
    /// Bore radius a, m.
    pub inner_radius_m: f64,
    /// Outer radius b, m.
    pub outer_radius_m: f64,
    /// Length, m; the entry end is at 0.
    pub length_m: f64,
    /// Solid-metal conductivity at 20 C, S/m.
    pub conductivity_20c_s_per_m: f64,
    /// Temperature coefficient of resistivity, 1/K.
    pub resistivity_temperature_coefficient_per_k: f64,
    /// Conductor temperature of this job, C.
    pub temperature_c: f64,
    /// Open-area fraction of round perforations.
    pub perforation_fraction: f64,
    /// Effective conductivity used by the solvers: at `temperature_c`, perforation applied, S/m.
    pub conductivity_s_per_m: f64,
    /// Density for heating estimates, kg/m^3, when known.
    pub density_kg_per_m3: Option<f64>,
    /// Specific heat for heating estimates, J/(kg K), when known.
    pub specific_heat_j_per_kg_k: Option<f64>,
    /// Material id when one was named.
    pub material_id: Option<&'static str>,
}

impl Tube {
    /// Wall thickness, m.
    pub fn wall_thickness_m(&self) -> f64 {
        self.outer_radius_m - self.inner_radius_m
    }

    /// Conductor mass per metre of tube (perforation removed), kg/m, when the density is known.
    pub fn mass_per_length_kg_per_m(&self) -> Option<f64> {
        let area =
            std::f64::consts::PI * (self.outer_radius_m.powi(2) - self.inner_radius_m.powi(2));
        self.density_kg_per_m3
            .map(|rho| rho * area * (1.0 - self.perforation_fraction))
    }

    /// Heat capacity per metre of tube, J/(K m), when density and specific heat are known.
    pub fn heat_capacity_per_length_j_per_k_m(&self) -> Option<f64> {
        Some(self.mass_per_length_kg_per_m()? * self.specific_heat_j_per_kg_k?)
    }

    /// The same tube at another conductor temperature.
    pub fn at_temperature(&self, temperature_c: f64) -> Self {
        let mut t = self.clone();
        t.temperature_c = temperature_c;
        t.conductivity_s_per_m = effective_conductivity(
            self.conductivity_20c_s_per_m,
            self.resistivity_temperature_coefficient_per_k,
            temperature_c,
            self.perforation_fraction,
        );
        t
    }

    /// The same tube with its conductivity scaled by `factor` (tolerance studies).
    pub fn with_conductivity_scaled(&self, factor: f64) -> Self {
        let mut t = self.clone();
        t.conductivity_20c_s_per_m *= factor;
        t.conductivity_s_per_m *= factor;
        t
    }
}

/// Effective conductivity: the linear resistivity law, then the perforation rule
/// sigma (1 - f) / (1 + f) (two-dimensional Maxwell-Garnett / Rayleigh result for
/// non-conducting circular inclusions; Rayleigh, Phil. Mag. 34, 481 (1892)).
pub fn effective_conductivity(
    sigma20: f64,
    alpha: f64,
    temperature_c: f64,
    perforation: f64,
) -> f64 {
    materials::conductivity_at(sigma20, alpha, temperature_c) * (1.0 - perforation)
        / (1.0 + perforation)
}

/// The validated load.
#[derive(Debug, Clone, PartialEq)]
pub struct Load {
    /// Moving mass besides the magnets, kg.
    pub payload_mass_kg: f64,
    /// Travel direction below horizontal, rad.
    pub incline_rad: f64,
    /// Constant applied force along travel, N.
    pub applied_force_n: f64,
    /// Coulomb friction coefficient.
    pub friction_coefficient: f64,
    /// Gravitational acceleration, m/s^2.
    pub gravity_m_per_s2: f64,
}

/// A validated design.
#[derive(Debug, Clone, PartialEq)]
pub struct Design {
    /// The magnet stack.
    pub magnets: MagnetStack,
    /// The tube.
    pub tube: Tube,
    /// The load.
    pub load: Load,
    /// Cautions found while validating (assumptions, clearance, temperature...).
    pub cautions: Vec<Caution>,
}

impl Design {
    /// Moving mass: magnets plus payload, kg.
    pub fn moving_mass_kg(&self) -> f64 {
        self.magnets.mass_kg() + self.load.payload_mass_kg
    }

    /// Force driving the stack along travel, friction excluded: m g sin(theta) + F_applied, N.
    pub fn drive_force_n(&self) -> f64 {
        self.moving_mass_kg() * self.load.gravity_m_per_s2 * self.load.incline_rad.sin()
            + self.load.applied_force_n
    }

    /// Magnitude of the Coulomb friction force while sliding, mu m g cos(theta), N.
    pub fn friction_force_n(&self) -> f64 {
        self.load.friction_coefficient
            * self.moving_mass_kg()
            * self.load.gravity_m_per_s2
            * self.load.incline_rad.cos().abs()
    }

    /// Net force that the brake must balance in steady forward motion, N (may be <= 0:
    /// then the stack does not keep moving by itself).
    pub fn steady_drive_force_n(&self) -> f64 {
        self.drive_force_n() - self.friction_force_n()
    }

    /// Radial clearance between magnet and bore, m.
    pub fn clearance_m(&self) -> f64 {
        self.tube.inner_radius_m - self.magnets.outer_radius_m
    }

    /// The same design with the tube at `tube_c` and the magnets at `magnet_c`.
    pub fn at_temperatures(&self, tube_c: f64, magnet_c: f64) -> Self {
        let mut d = self.clone();
        d.tube = self.tube.at_temperature(tube_c);
        d.magnets = self.magnets.at_temperature(magnet_c);
        d.cautions = self.cautions.clone();
        push_temperature_cautions(&d.magnets, &mut d.cautions);
        d
    }

    /// Validates a design object. Every invalid field is reported at once, with its path.
    ///
    /// The magnet stack, the tube and the load are parsed apart ([`parse_magnets`],
    /// [`parse_tube`], [`parse_load`]), then the fit of the stack in the bore is checked; the
    /// cautions of a valid design are decided afterwards, in one step ([`design_cautions`]).
    ///
    /// # Errors
    /// [`ModelError::Invalid`] listing every offending field by its dotted path.
    pub fn from_spec(spec: &DesignSpec) -> Result<Self, ModelError> {
        let mut errs = Vec::new();
        let magnets = parse_magnets(&spec.magnets, spec.tube.temperature_c, &mut errs);
        check_fit(spec, &mut errs);
        let tube = parse_tube(&spec.tube, &mut errs);
        let load = parse_load(&spec.load, &mut errs);
        match (magnets, tube, load) {
            (Some(magnets), Some(tube), Some(load)) if errs.is_empty() => {
                let cautions = design_cautions(spec, &magnets, &tube);
                Ok(Self {
                    magnets,
                    tube,
                    load,
                    cautions,
                })
            }
            _ => Err(ModelError::Invalid(errs)),
        }
    }

    /// The same design with the remanence of every magnet scaled by `factor` (a tolerance
    /// corner), its cautions kept. The scaled design is checked again: the factor must be a
    /// finite number above zero (the field's request bound is not re-applied, so a corner may
    /// lie slightly beyond it, as a real part may).
    ///
    /// # Errors
    /// [`ModelError::Invalid`] naming `magnets.remanence_t` for a factor that is not finite
    /// and positive.
    pub fn with_remanence_scaled(&self, factor: f64) -> Result<Self, ModelError> {
        check_factor(DesignField::MagnetRemanence, factor)?;
        let mut d = self.clone();
        d.magnets.remanence_20c_t *= factor;
        d.magnets.remanence_t *= factor;
        Ok(d)
    }

    /// The same design with the tube's conductivity scaled by `factor` (a tolerance corner),
    /// its cautions kept; checked as [`Design::with_remanence_scaled`].
    ///
    /// # Errors
    /// [`ModelError::Invalid`] naming `tube.conductivity_s_per_m` for a factor that is not
    /// finite and positive.
    pub fn with_conductivity_scaled(&self, factor: f64) -> Result<Self, ModelError> {
        check_factor(DesignField::TubeConductivity, factor)?;
        let mut d = self.clone();
        d.tube = d.tube.with_conductivity_scaled(factor);
        Ok(d)
    }
}

/// A scale factor of a validated property: finite and above zero.
fn check_factor(field: DesignField, factor: f64) -> Result<(), ModelError> {
    if factor.is_finite() && factor > 0.0 && !factor.is_subnormal() {
        Ok(())
    } else {
        Err(ModelError::field(
            field.path(),
            format!("a scale factor of {} leaves no valid value", show(factor)),
        ))
    }
}

/// Checks every field of `fields` that `spec` gives (optional fields left out are skipped).
fn check_fields(spec: &DesignSpec, fields: &[DesignField], errs: &mut Vec<FieldError>) {
    for f in fields {
        if let Some(v) = f.get(spec) {
            f.check(v, errs);
        }
    }
}

/// Checks the magnet fields and resolves the grade; the stack, or None when a magnet field is
/// invalid (its problems are in `errs`). The magnets' temperature defaults to `tube_c`.
pub fn parse_magnets(
    m: &MagnetSpec,
    tube_c: f64,
    errs: &mut Vec<FieldError>,
) -> Option<MagnetStack> {
    let before = errs.len();
    let probe = DesignSpec {
        magnets: m.clone(),
        tube: placeholder_tube(),
        load: LoadSpec::default(),
    };
    use DesignField as F;
    check_fields(
        &probe,
        &[
            F::MagnetOuterDiameter,
            F::MagnetLength,
            F::MagnetInnerDiameter,
            F::SpacerLength,
        ],
        errs,
    );
    if m.inner_diameter_m.is_finite()
        && m.outer_diameter_m.is_finite()
        && m.inner_diameter_m > 0.0
        && m.inner_diameter_m >= m.outer_diameter_m
    {
        errs.push(FieldError::new(
            "magnets.inner_diameter_m",
            "ring bore must be smaller than the outer diameter",
        ));
    }
    F::MagnetCount.check(f64::from(m.count), errs);
    let grade = match &m.grade {
        Some(id) => {
            let g = materials::find_grade(id);
            if g.is_none() {
                errs.push(FieldError::new(
                    "magnets.grade",
                    materials::unknown_grade_message(id),
                ));
            }
            g
        }
        None => None,
    };
    if m.remanence_t.is_none() && m.grade.is_none() {
        errs.push(FieldError::new(
            "magnets.grade",
            "give a grade or magnets.remanence_t",
        ));
    }
    check_fields(
        &probe,
        &[F::MagnetRemanence, F::MagnetDensity, F::MagnetTemperature],
        errs,
    );
    if errs.len() > before {
        return None;
    }
    let remanence_20c_t = m.remanence_t.or(grade.map(|g| g.remanence_t))?;
    let (alpha_br, max_c) = grade.map_or((0.0, None), |g| {
        (
            g.remanence_temperature_coefficient_per_k,
            Some(g.max_working_temperature_c),
        )
    });
    let temperature_c = m.temperature_c.unwrap_or(tube_c);
    let count = m.count as usize;
    Some(MagnetStack {
        outer_radius_m: m.outer_diameter_m / 2.0,
        inner_radius_m: m.inner_diameter_m / 2.0,
        magnet_length_m: m.length_m,
        count,
        polarity: if count > 1 {
            m.polarity
        } else {
            Polarity::Aligned
        },
        spacer_length_m: m.spacer_length_m,
        remanence_20c_t,
        remanence_temperature_coefficient_per_k: alpha_br,
        temperature_c,
        remanence_t: materials::remanence_at(remanence_20c_t, alpha_br, temperature_c),
        density_kg_per_m3: m
            .density_kg_per_m3
            .or(grade.map(|g| g.density_kg_per_m3))
            .unwrap_or(DEFAULT_MAGNET_DENSITY_KG_PER_M3),
        grade_id: grade.map(|g| g.id),
        max_working_temperature_c: max_c,
    })
}

/// A tube that passes every check, for parsing the magnets alone through the field table.
fn placeholder_tube() -> crate::records::spec::TubeSpec {
    crate::records::spec::TubeSpec {
        material: None,
        conductivity_s_per_m: None,
        resistivity_temperature_coefficient_per_k: None,
        density_kg_per_m3: None,
        specific_heat_j_per_kg_k: None,
        inner_diameter_m: 1.0,
        wall_thickness_m: 0.1,
        length_m: 1.0,
        temperature_c: 20.0,
        perforation_fraction: 0.0,
    }
}

/// Checks that the magnets fit the bore (a cross-field rule of the stack and the tube).
fn check_fit(spec: &DesignSpec, errs: &mut Vec<FieldError>) {
    let (m, t) = (&spec.magnets, &spec.tube);
    if m.outer_diameter_m.is_finite()
        && t.inner_diameter_m.is_finite()
        && m.outer_diameter_m >= t.inner_diameter_m
    {
        errs.push(FieldError::new(
            "magnets.outer_diameter_m",
            format!(
                "magnet ({} m) must be narrower than the tube bore tube.inner_diameter_m ({} m)",
                show(m.outer_diameter_m),
                show(t.inner_diameter_m)
            ),
        ));
    }
}

/// Bounds of the tube's specific heat, J/(kg K): above zero, at most 1e4 (water's 4.2e3 is
/// the highest of common substances; source: CRC Handbook of Chemistry and Physics, 97th ed.,
/// 2016). Not a sweepable field, so not in the field table.
const SPECIFIC_HEAT_BOUNDS: Bounds = Bounds::Range {
    lo: 0.0,
    hi: 10000.0,
    lo_exclusive: true,
};

/// Checks the tube fields and resolves the material; the tube, or None when a tube field is
/// invalid (its problems are in `errs`).
pub fn parse_tube(t: &crate::records::spec::TubeSpec, errs: &mut Vec<FieldError>) -> Option<Tube> {
    let before = errs.len();
    let probe = DesignSpec {
        magnets: placeholder_magnets(),
        tube: t.clone(),
        load: LoadSpec::default(),
    };
    use DesignField as F;
    check_fields(
        &probe,
        &[
            F::TubeInnerDiameter,
            F::TubeWallThickness,
            F::TubeLength,
            F::TubeTemperature,
        ],
        errs,
    );
    let conductor = match &t.material {
        Some(id) => match materials::find_conductor(id) {
            Ok(c) => Some(c),
            Err(LookupError::Ferromagnetic) => {
                errs.push(FieldError::new(
                    "tube.material",
                    materials::ferromagnetic_message(id),
                ));
                None
            }
            Err(LookupError::Unknown) => {
                errs.push(FieldError::new(
                    "tube.material",
                    materials::unknown_conductor_message(id),
                ));
                None
            }
        },
        None => None,
    };
    if t.conductivity_s_per_m.is_none() && t.material.is_none() {
        errs.push(FieldError::new(
            "tube.material",
            "give a material or tube.conductivity_s_per_m",
        ));
    }
    check_fields(
        &probe,
        &[
            F::TubeConductivity,
            F::TubeResistivityCoefficient,
            F::TubeDensity,
        ],
        errs,
    );
    if let Some(v) = t.specific_heat_j_per_kg_k {
        SPECIFIC_HEAT_BOUNDS.check("tube.specific_heat_j_per_kg_k", "J/(kg K)", v, errs);
    }
    F::TubePerforation.check(t.perforation_fraction, errs);
    if errs.len() > before {
        return None;
    }
    let sigma20 = t
        .conductivity_s_per_m
        .or(conductor.map(|c| c.conductivity_s_per_m))?;
    let alpha = t
        .resistivity_temperature_coefficient_per_k
        .or(conductor.map(|c| c.resistivity_temperature_coefficient_per_k))
        .unwrap_or(0.0);
    let a = t.inner_diameter_m / 2.0;
    Some(Tube {
        inner_radius_m: a,
        outer_radius_m: a + t.wall_thickness_m,
        length_m: t.length_m,
        conductivity_20c_s_per_m: sigma20,
        resistivity_temperature_coefficient_per_k: alpha,
        temperature_c: t.temperature_c,
        perforation_fraction: t.perforation_fraction,
        conductivity_s_per_m: effective_conductivity(
            sigma20,
            alpha,
            t.temperature_c,
            t.perforation_fraction,
        ),
        density_kg_per_m3: t
            .density_kg_per_m3
            .or(conductor.map(|c| c.density_kg_per_m3)),
        specific_heat_j_per_kg_k: t
            .specific_heat_j_per_kg_k
            .or(conductor.map(|c| c.specific_heat_j_per_kg_k)),
        material_id: conductor.map(|c| c.id),
    })
}

/// A magnet that passes every check, for parsing the tube alone through the field table.
fn placeholder_magnets() -> MagnetSpec {
    MagnetSpec {
        grade: None,
        remanence_t: Some(1.0),
        density_kg_per_m3: None,
        outer_diameter_m: 0.01,
        inner_diameter_m: 0.0,
        length_m: 0.01,
        count: 1,
        polarity: Polarity::Aligned,
        spacer_length_m: 0.0,
        temperature_c: None,
    }
}

/// Checks the load fields; the load, or None when a load field is invalid (its problems are
/// in `errs`).
pub fn parse_load(l: &LoadSpec, errs: &mut Vec<FieldError>) -> Option<Load> {
    let before = errs.len();
    let probe = DesignSpec {
        magnets: placeholder_magnets(),
        tube: placeholder_tube(),
        load: l.clone(),
    };
    use DesignField as F;
    check_fields(
        &probe,
        &[
            F::PayloadMass,
            F::Incline,
            F::AppliedForce,
            F::Friction,
            F::Gravity,
        ],
        errs,
    );
    (errs.len() == before).then(|| Load {
        payload_mass_kg: l.payload_mass_kg,
        incline_rad: l.incline_deg.to_radians(),
        applied_force_n: l.applied_force_n,
        friction_coefficient: l.friction_coefficient,
        gravity_m_per_s2: l.gravity_m_per_s2,
    })
}

/// The cautions of a valid design, decided once from what was given and what was resolved:
/// every assumption made for a missing value, and the design rules of [`crate::records::caution`]'s
/// thresholds (perforation, clearance, wall, magnet temperature, demagnetisation).
pub fn design_cautions(spec: &DesignSpec, magnets: &MagnetStack, tube: &Tube) -> Vec<Caution> {
    use crate::records::caution::thresholds as th;
    let (m, t) = (&spec.magnets, &spec.tube);
    let grade = magnets.grade_id.and_then(materials::find_grade);
    let conductor = tube
        .material_id
        .and_then(|id| materials::find_conductor(id).ok());
    let mut cautions = Vec::new();
    let off_reference =
        |c: f64| (c - th::REFERENCE_TEMPERATURE_C).abs() > th::TEMPERATURE_ASSUMPTION_TOLERANCE_K;
    if grade.is_none() && off_reference(magnets.temperature_c) {
        cautions.push(Caution::new(
            CautionKind::Assumption,
            "No magnet grade named: remanence is taken as temperature-independent and no \
             maximum working temperature is checked.",
        ));
    }
    if m.density_kg_per_m3.is_none() && grade.is_none() {
        cautions.push(Caution::new(
            CautionKind::Assumption,
            format!(
                "No magnet grade or density given: {DEFAULT_MAGNET_DENSITY_KG_PER_M3} kg/m^3 \
                 (sintered NdFeB) assumed for the magnet mass."
            ),
        ));
    }
    if magnets.count > 1
        && magnets.polarity == Polarity::Alternating
        && let Some(g) = grade.filter(|g| !g.suits_opposed_stacks)
    {
        cautions.push(Caution::new(
            CautionKind::Demagnetisation,
            format!(
                "Grade {} has low coercivity: magnets facing like poles will partly demagnetise \
                 each other; the computed braking is optimistic.",
                g.id
            ),
        ));
    }
    if t.resistivity_temperature_coefficient_per_k.is_none()
        && conductor.is_none()
        && off_reference(t.temperature_c)
    {
        cautions.push(Caution::new(
            CautionKind::Assumption,
            "No tube material or temperature coefficient given: conductivity is taken as \
             temperature-independent.",
        ));
    }
    if tube.density_kg_per_m3.is_none() || tube.specific_heat_j_per_kg_k.is_none() {
        cautions.push(Caution::new(
            CautionKind::Assumption,
            "Tube density or specific heat unknown (no material named): temperature rise is not \
             computed.",
        ));
    }
    if let Some(c) = conductor
        && c.id.starts_with("stainless")
    {
        cautions.push(Caution::new(CautionKind::ModelLimit, c.notes));
    }
    if t.perforation_fraction > th::PERFORATION_FRACTION {
        cautions.push(Caution::new(
            CautionKind::Perforation,
            format!(
                "Perforation fraction {} exceeds {}: the effective-conductivity rule \
                 sigma (1 - f)/(1 + f) is a dilute-limit result and loses accuracy; it also assumes \
                 holes much smaller than the magnet.",
                t.perforation_fraction,
                th::PERFORATION_FRACTION
            ),
        ));
    }
    let clearance = tube.inner_radius_m - magnets.outer_radius_m;
    if clearance < th::CLEARANCE_M || clearance < th::CLEARANCE_FRACTION * magnets.outer_radius_m {
        cautions.push(Caution::new(
            CautionKind::Clearance,
            format!(
                "Radial clearance is only {:.3} mm: tolerances, coatings, tube ovality and \
                 thermal growth may make the magnet rub or jam; braking is very sensitive to it.",
                clearance * 1e3
            ),
        ));
    }
    if t.wall_thickness_m > th::WALL_TO_BORE_DIAMETER * 2.0 * tube.inner_radius_m {
        cautions.push(Caution::new(
            CautionKind::ModelLimit,
            "Wall thicker than the bore diameter: the outer wall contributes little; check the \
             design intent.",
        ));
    }
    push_temperature_cautions(magnets, &mut cautions);
    cautions
}

fn push_temperature_cautions(magnets: &MagnetStack, cautions: &mut Vec<Caution>) {
    cautions.retain(|c| c.kind != CautionKind::MagnetTemperature);
    if let (Some(max), Some(id)) = (magnets.max_working_temperature_c, magnets.grade_id) {
        let t = magnets.temperature_c;
        let margin = crate::records::caution::thresholds::MAGNET_TEMPERATURE_MARGIN_K;
        if t > max {
            cautions.push(Caution::new(
                CautionKind::MagnetTemperature,
                format!(
                    "Magnet temperature {t} C exceeds the nominal maximum working temperature of {id} \
                     ({max} C): expect irreversible loss of magnetisation; the results overstate braking."
                ),
            ));
        } else if t > max - margin {
            cautions.push(Caution::new(
                CautionKind::MagnetTemperature,
                format!(
                    "Magnet temperature {t} C is within {margin} K of the nominal maximum working \
                     temperature of {id} ({max} C); the limit depends on the magnet's load line."
                ),
            ));
        }
    }
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use crate::records::spec::{LoadSpec, MagnetSpec, TubeSpec};

    /// An invented test design: a 12 mm N42 cylinder, 20 mm long, in a copper C12200 tube of
    /// 13 mm bore and 1.5 mm wall, 0.3 m long.
    pub(crate) fn sample_spec() -> DesignSpec {
        DesignSpec {
            magnets: MagnetSpec {
                grade: Some("N42".into()),
                remanence_t: None,
                density_kg_per_m3: None,
                outer_diameter_m: 0.012,
                inner_diameter_m: 0.0,
                length_m: 0.020,
                count: 1,
                polarity: Polarity::Aligned,
                spacer_length_m: 0.0,
                temperature_c: None,
            },
            tube: TubeSpec {
                material: Some("copper-c12200".into()),
                conductivity_s_per_m: None,
                resistivity_temperature_coefficient_per_k: None,
                density_kg_per_m3: None,
                specific_heat_j_per_kg_k: None,
                inner_diameter_m: 0.013,
                wall_thickness_m: 0.0015,
                length_m: 0.3,
                temperature_c: 20.0,
                perforation_fraction: 0.0,
            },
            load: LoadSpec::default(),
        }
    }

    #[test]
    fn valid_design_resolves_materials() {
        let d = Design::from_spec(&sample_spec()).expect("valid");
        assert!((d.tube.conductivity_s_per_m - 0.85 * 58.0e6).abs() < 1.0);
        assert!((d.magnets.remanence_t - 1.30).abs() < 1e-12);
        // mass: pi * 0.006^2 * 0.02 * 7500 = 16.96 g (plain geometry).
        assert!((d.moving_mass_kg() - std::f64::consts::PI * 36e-6 * 0.02 * 7500.0).abs() < 1e-12);
    }

    #[test]
    fn errors_name_every_field() {
        let mut s = sample_spec();
        s.magnets.outer_diameter_m = 0.02;
        s.tube.wall_thickness_m = -1.0;
        s.tube.material = Some("carbon-steel".into());
        s.magnets.grade = Some("N99".into());
        let Err(ModelError::Invalid(errs)) = Design::from_spec(&s) else {
            panic!("must fail")
        };
        let paths: Vec<_> = errs.iter().map(|e| e.path.as_str()).collect();
        for p in [
            "magnets.outer_diameter_m",
            "tube.wall_thickness_m",
            "tube.material",
            "magnets.grade",
        ] {
            assert!(paths.contains(&p), "missing {p} in {paths:?}");
        }
    }

    #[test]
    fn non_finite_and_ring_errors() {
        let mut s = sample_spec();
        s.magnets.length_m = f64::NAN;
        s.magnets.inner_diameter_m = 0.013;
        let Err(ModelError::Invalid(errs)) = Design::from_spec(&s) else {
            panic!("must fail")
        };
        assert!(errs.iter().any(|e| e.path == "magnets.length_m"));
        assert!(errs.iter().any(|e| e.path == "magnets.inner_diameter_m"));
    }

    #[test]
    fn subnormal_inputs_are_named() {
        // 5e-324 is the smallest subnormal double (source: IEEE 754-2008, binary64).
        let mut s = sample_spec();
        s.magnets.outer_diameter_m = 5e-324;
        s.load.applied_force_n = -1e-310;
        s.magnets.spacer_length_m = 1e-309;
        let Err(ModelError::Invalid(errs)) = Design::from_spec(&s) else {
            panic!("must fail")
        };
        for p in [
            "magnets.outer_diameter_m",
            "load.applied_force_n",
            "magnets.spacer_length_m",
        ] {
            assert!(
                errs.iter()
                    .any(|e| e.path == p && e.message.contains("subnormal")),
                "{p}: {errs:?}"
            );
        }
    }

    #[test]
    fn perforation_and_temperature_lower_conductivity() {
        let mut s = sample_spec();
        s.tube.perforation_fraction = 0.2;
        s.tube.temperature_c = 70.0;
        let d = Design::from_spec(&s).expect("valid");
        let expected = 0.85 * 58.0e6 / (1.0 + 0.0033 * 50.0) * 0.8 / 1.2;
        assert!((d.tube.conductivity_s_per_m / expected - 1.0).abs() < 1e-12);
        assert!(
            d.cautions
                .iter()
                .any(|c| c.kind == CautionKind::MagnetTemperature)
        );
    }

    #[test]
    fn stack_offsets_are_centred_and_signed() {
        let mut s = sample_spec();
        s.magnets.count = 3;
        s.magnets.polarity = Polarity::Alternating;
        s.magnets.spacer_length_m = 0.002;
        let d = Design::from_spec(&s).expect("valid");
        let m: Vec<_> = d.magnets.magnets().collect();
        assert_eq!(m, vec![(-0.022, 1.0), (0.0, -1.0), (0.022, 1.0)]);
        assert!((d.magnets.total_length_m() - 0.064).abs() < 1e-15);
    }
}
