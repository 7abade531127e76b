//! Validated design types: the solver's only view of a design.
//!
//! [`Design::from_spec`] checks a [`DesignSpec`] once (every offending field is reported
//! with its dotted path), resolves materials and grades, applies temperature and
//! perforation corrections, and records cautions. Inside the model every length is in
//! metres, every field name carries its unit, and geometry is known to be valid: positive
//! finite sizes, the magnet inside the bore, the ring bore inside the magnet.

use crate::MU0;
use crate::records::caution::{Caution, CautionKind};
use crate::records::error::{FieldError, ModelError, show};
use crate::records::fieldtext;
use crate::records::materials::{self, LookupError};
use crate::records::spec::{DesignSpec, Polarity};

/// Largest number of magnets in one stack.
pub const MAX_MAGNETS: u32 = 64;
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
    pub fn from_spec(spec: &DesignSpec) -> Result<Self, ModelError> {
        let mut errs = Vec::new();
        let mut cautions = Vec::new();
        let m = &spec.magnets;
        let t = &spec.tube;
        let l = &spec.load;

        let positive = |path: &str, v: f64, max: f64, errs: &mut Vec<FieldError>| {
            if !v.is_finite() {
                errs.push(FieldError::new(path, "must be a finite number"));
            } else if v.is_subnormal() {
                errs.push(FieldError::new(path, SUBNORMAL));
            } else if v <= 0.0 {
                errs.push(FieldError::new(path, "must be greater than zero"));
            } else if v > max {
                errs.push(FieldError::new(
                    path,
                    fieldtext::out_of_range(path, v, 0.0, max, true),
                ));
            }
        };
        positive(
            "magnets.outer_diameter_m",
            m.outer_diameter_m,
            1.0,
            &mut errs,
        );
        positive("magnets.length_m", m.length_m, 1.0, &mut errs);
        positive("tube.inner_diameter_m", t.inner_diameter_m, 1.0, &mut errs);
        positive("tube.wall_thickness_m", t.wall_thickness_m, 0.5, &mut errs);
        positive("tube.length_m", t.length_m, 20.0, &mut errs);
        range(
            &mut errs,
            "magnets.inner_diameter_m",
            m.inner_diameter_m,
            0.0,
            1.0,
        );
        range(
            &mut errs,
            "magnets.spacer_length_m",
            m.spacer_length_m,
            0.0,
            1.0,
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
        if m.count == 0 || m.count > MAX_MAGNETS {
            errs.push(FieldError::new(
                "magnets.count",
                format!("must be between 1 and {MAX_MAGNETS}"),
            ));
        }
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

        // Magnet material.
        let grade = match &m.grade {
            Some(id) => match materials::find_grade(id) {
                Some(g) => Some(g),
                None => {
                    errs.push(FieldError::new(
                        "magnets.grade",
                        materials::unknown_grade_message(id),
                    ));
                    None
                }
            },
            None => None,
        };
        if let Some(br) = m.remanence_t {
            range(&mut errs, "magnets.remanence_t", br, f64::MIN_POSITIVE, 1.6);
        } else if m.grade.is_none() {
            errs.push(FieldError::new(
                "magnets.grade",
                "give a grade or magnets.remanence_t",
            ));
        }
        if let Some(rho) = m.density_kg_per_m3 {
            range(
                &mut errs,
                "magnets.density_kg_per_m3",
                rho,
                f64::MIN_POSITIVE,
                30000.0,
            );
        }
        range(
            &mut errs,
            "tube.temperature_c",
            t.temperature_c,
            -60.0,
            400.0,
        );
        let magnet_temperature_c = m.temperature_c.unwrap_or(t.temperature_c);
        if let Some(tc) = m.temperature_c {
            range(&mut errs, "magnets.temperature_c", tc, -60.0, 600.0);
        }

        // Tube material.
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
        if let Some(s) = t.conductivity_s_per_m {
            range(
                &mut errs,
                "tube.conductivity_s_per_m",
                s,
                f64::MIN_POSITIVE,
                7.0e7,
            );
        } else if t.material.is_none() {
            errs.push(FieldError::new(
                "tube.material",
                "give a material or tube.conductivity_s_per_m",
            ));
        }
        if let Some(a) = t.resistivity_temperature_coefficient_per_k {
            range(
                &mut errs,
                "tube.resistivity_temperature_coefficient_per_k",
                a,
                0.0,
                0.01,
            );
        }
        if let Some(v) = t.density_kg_per_m3 {
            range(
                &mut errs,
                "tube.density_kg_per_m3",
                v,
                f64::MIN_POSITIVE,
                30000.0,
            );
        }
        if let Some(v) = t.specific_heat_j_per_kg_k {
            range(
                &mut errs,
                "tube.specific_heat_j_per_kg_k",
                v,
                f64::MIN_POSITIVE,
                10000.0,
            );
        }
        if !(t.perforation_fraction.is_finite() && (0.0..0.6).contains(&t.perforation_fraction)) {
            errs.push(FieldError::new(
                "tube.perforation_fraction",
                "must be in [0, 0.6)",
            ));
        }

        // Load.
        range(
            &mut errs,
            "load.payload_mass_kg",
            l.payload_mass_kg,
            0.0,
            1.0e5,
        );
        range(&mut errs, "load.incline_deg", l.incline_deg, -90.0, 90.0);
        range(
            &mut errs,
            "load.applied_force_n",
            l.applied_force_n,
            -1.0e6,
            1.0e6,
        );
        range(
            &mut errs,
            "load.friction_coefficient",
            l.friction_coefficient,
            0.0,
            2.0,
        );
        range(
            &mut errs,
            "load.gravity_m_per_s2",
            l.gravity_m_per_s2,
            0.0,
            100.0,
        );

        if !errs.is_empty() {
            return Err(ModelError::Invalid(errs));
        }

        // Resolve values; every assumption is said.
        let remanence_20c_t = match (m.remanence_t, grade) {
            (Some(br), _) => br,
            (None, Some(g)) => g.remanence_t,
            (None, None) => {
                return Err(ModelError::field(
                    "magnets.grade",
                    "give a grade or magnets.remanence_t",
                ));
            }
        };
        let (alpha_br, max_c) = match grade {
            Some(g) => (
                g.remanence_temperature_coefficient_per_k,
                Some(g.max_working_temperature_c),
            ),
            None => {
                if (magnet_temperature_c - 20.0).abs() > 1.0 {
                    cautions.push(Caution::new(
                        CautionKind::Assumption,
                        "No magnet grade named: remanence is taken as temperature-independent and no \
                         maximum working temperature is checked.",
                    ));
                }
                (0.0, None)
            }
        };
        let density = match (m.density_kg_per_m3, grade) {
            (Some(d), _) => d,
            (None, Some(g)) => g.density_kg_per_m3,
            (None, None) => {
                cautions.push(Caution::new(
                    CautionKind::Assumption,
                    format!(
                        "No magnet grade or density given: {DEFAULT_MAGNET_DENSITY_KG_PER_M3} kg/m^3 \
                         (sintered NdFeB) assumed for the magnet mass."
                    ),
                ));
                DEFAULT_MAGNET_DENSITY_KG_PER_M3
            }
        };
        let count = m.count as usize;
        if count > 1
            && m.polarity == Polarity::Alternating
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
        let magnets = MagnetStack {
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
            temperature_c: magnet_temperature_c,
            remanence_t: materials::remanence_at(remanence_20c_t, alpha_br, magnet_temperature_c),
            density_kg_per_m3: density,
            grade_id: grade.map(|g| g.id),
            max_working_temperature_c: max_c,
        };

        let sigma20 = match (t.conductivity_s_per_m, conductor) {
            (Some(s), _) => s,
            (None, Some(c)) => c.conductivity_s_per_m,
            (None, None) => {
                return Err(ModelError::field(
                    "tube.material",
                    "give a material or tube.conductivity_s_per_m",
                ));
            }
        };
        let alpha = match (t.resistivity_temperature_coefficient_per_k, conductor) {
            (Some(a), _) => a,
            (None, Some(c)) => c.resistivity_temperature_coefficient_per_k,
            (None, None) => {
                if (t.temperature_c - 20.0).abs() > 1.0 {
                    cautions.push(Caution::new(
                        CautionKind::Assumption,
                        "No tube material or temperature coefficient given: conductivity is taken as \
                         temperature-independent.",
                    ));
                }
                0.0
            }
        };
        let tube_density = t
            .density_kg_per_m3
            .or(conductor.map(|c| c.density_kg_per_m3));
        let tube_cp = t
            .specific_heat_j_per_kg_k
            .or(conductor.map(|c| c.specific_heat_j_per_kg_k));
        if tube_density.is_none() || tube_cp.is_none() {
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
        let a = t.inner_diameter_m / 2.0;
        let tube = Tube {
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
            density_kg_per_m3: tube_density,
            specific_heat_j_per_kg_k: tube_cp,
            material_id: conductor.map(|c| c.id),
        };
        if t.perforation_fraction > 0.3 {
            cautions.push(Caution::new(
                CautionKind::Perforation,
                format!(
                    "Perforation fraction {} exceeds 0.3: the effective-conductivity rule \
                     sigma (1 - f)/(1 + f) is a dilute-limit result and loses accuracy; it also assumes \
                     holes much smaller than the magnet.",
                    t.perforation_fraction
                ),
            ));
        }
        let clearance = a - magnets.outer_radius_m;
        if clearance < 0.2e-3 || clearance < 0.02 * magnets.outer_radius_m {
            cautions.push(Caution::new(
                CautionKind::Clearance,
                format!(
                    "Radial clearance is only {:.3} mm: tolerances, coatings, tube ovality and \
                     thermal growth may make the magnet rub or jam; braking is very sensitive to it.",
                    clearance * 1e3
                ),
            ));
        }
        if t.wall_thickness_m > 2.0 * a {
            cautions.push(Caution::new(
                CautionKind::ModelLimit,
                "Wall thicker than the bore diameter: the outer wall contributes little; check the \
                 design intent.",
            ));
        }
        push_temperature_cautions(&magnets, &mut cautions);
        let load = Load {
            payload_mass_kg: l.payload_mass_kg,
            incline_rad: l.incline_deg.to_radians(),
            applied_force_n: l.applied_force_n,
            friction_coefficient: l.friction_coefficient,
            gravity_m_per_s2: l.gravity_m_per_s2,
        };
        Ok(Self {
            magnets,
            tube,
            load,
            cautions,
        })
    }
}

/// Message for a subnormal input: so close to zero that products with it underflow, which
/// would surface later as a result that cannot be computed instead of a named field.
const SUBNORMAL: &str = "is a subnormal number (below 2.2e-308 in magnitude), too small to compute \
                         with; give 0 where zero is allowed, or a physically meaningful value";

fn range(errs: &mut Vec<FieldError>, path: &str, v: f64, lo: f64, hi: f64) {
    if !v.is_finite() {
        errs.push(FieldError::new(path, "must be a finite number"));
    } else if v.is_subnormal() {
        errs.push(FieldError::new(path, SUBNORMAL));
    } else if v < lo || v > hi {
        let lo_exclusive = lo == f64::MIN_POSITIVE;
        errs.push(FieldError::new(
            path,
            fieldtext::out_of_range(path, v, lo, hi, lo_exclusive),
        ));
    }
}

fn push_temperature_cautions(magnets: &MagnetStack, cautions: &mut Vec<Caution>) {
    cautions.retain(|c| c.kind != CautionKind::MagnetTemperature);
    if let (Some(max), Some(id)) = (magnets.max_working_temperature_c, magnets.grade_id) {
        let t = magnets.temperature_c;
        if t > max {
            cautions.push(Caution::new(
                CautionKind::MagnetTemperature,
                format!(
                    "Magnet temperature {t} C exceeds the nominal maximum working temperature of {id} \
                     ({max} C): expect irreversible loss of magnetisation; the results overstate braking."
                ),
            ));
        } else if t > max - 15.0 {
            cautions.push(Caution::new(
                CautionKind::MagnetTemperature,
                format!(
                    "Magnet temperature {t} C is within 15 K of the nominal maximum working temperature \
                     of {id} ({max} C); the limit depends on the magnet's load line."
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
