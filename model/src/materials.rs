//! The material table: non-ferrous tube conductors and permanent-magnet grades.
//!
//! Every row carries its provenance in `source`, with a tag per property:
//! `[read]` seen in the named source, `[memory]` recalled and not verified, `[est]` estimated
//! (temperature coefficients of alloys by Matthiessen's rule: the alloy's coefficient is the
//! base metal's d(rho)/dT divided by the alloy's resistivity, with d(rho)/dT = 0.0114
//! uOhm cm/K for aluminium and 0.00678 uOhm cm/K for copper). Conductivities are quoted at
//! 20 C from %IACS with 100 % IACS = 58.0 MS/m (IEC 60028). Measured values beat every row:
//! the design object lets a caller override conductivity and remanence.
//!
//! Ferromagnetic tube materials (carbon steels, ferritic and martensitic stainless, iron,
//! nickel) are outside the model (relative permeability 1 is assumed throughout) and are
//! refused by [`find_conductor`] with the reason.

/// Conductivity of the International Annealed Copper Standard, S/m (IEC 60028).
pub const IACS_S_PER_M: f64 = 58.0e6;

/// A non-ferrous conductor for the tube.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
pub struct Conductor {
    /// Identifier used in `tube.material`.
    pub id: &'static str,
    /// Human-readable name with temper.
    pub name: &'static str,
    /// Electrical conductivity at 20 C, S/m.
    pub conductivity_s_per_m: f64,
    /// Conductivity in percent of IACS at 20 C.
    pub iacs_percent: f64,
    /// Temperature coefficient of resistivity near 20 C, 1/K.
    pub resistivity_temperature_coefficient_per_k: f64,
    /// Mass density, kg/m^3.
    pub density_kg_per_m3: f64,
    /// Specific heat capacity near room temperature, J/(kg K).
    pub specific_heat_j_per_kg_k: f64,
    /// Provenance of each value.
    pub source: &'static str,
    /// Practical remarks (temper sensitivity, magnetism after cold work...).
    pub notes: &'static str,
}

/// Family of a permanent-magnet material.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
#[serde(rename_all = "snake_case")]
pub enum MagnetFamily {
    /// Sintered neodymium-iron-boron.
    Ndfeb,
    /// Samarium-cobalt, 1:5 or 2:17.
    Smco,
    /// Hard strontium or barium ferrite.
    Ferrite,
    /// Cast aluminium-nickel-cobalt.
    Alnico,
}

/// A permanent-magnet grade.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
pub struct MagnetGrade {
    /// Identifier used in `magnets.grade`.
    pub id: &'static str,
    /// Material family.
    pub family: MagnetFamily,
    /// Nominal remanence at 20 C (middle of the grade's range), T.
    pub remanence_t: f64,
    /// Reversible temperature coefficient of remanence, 1/K (negative).
    pub remanence_temperature_coefficient_per_k: f64,
    /// Maximum working temperature, C (depends on the load line; nominal).
    pub max_working_temperature_c: f64,
    /// Mass density, kg/m^3.
    pub density_kg_per_m3: f64,
    /// Whether the grade resists demagnetisation by an opposing neighbour in an
    /// alternating stack (false for low-coercivity AlNiCo).
    pub suits_opposed_stacks: bool,
    /// Provenance of each value.
    pub source: &'static str,
}

/// Conductivity from a percentage of IACS, S/m.
const fn iacs(percent: f64) -> f64 {
    percent * 0.01 * IACS_S_PER_M
}

/// Conductivity from a resistivity in micro-ohm centimetres, S/m.
const fn from_micro_ohm_cm(resistivity: f64) -> f64 {
    1.0 / (resistivity * 1.0e-8)
}

macro_rules! conductor {
    ($id:expr, $name:expr, $sigma:expr, $alpha:expr, $rho:expr, $cp:expr, $src:expr, $notes:expr) => {
        Conductor {
            id: $id,
            name: $name,
            conductivity_s_per_m: $sigma,
            iacs_percent: $sigma / IACS_S_PER_M * 100.0,
            resistivity_temperature_coefficient_per_k: $alpha,
            density_kg_per_m3: $rho,
            specific_heat_j_per_kg_k: $cp,
            source: $src,
            notes: $notes,
        }
    };
}

static CONDUCTORS: [Conductor; 15] = [
    conductor!(
        "aluminium-1100",
        "Aluminium 1100 (commercially pure)",
        iacs(59.0),
        0.0039,
        2710.0,
        904.0,
        "Aluminum Association, Aluminum Standards and Data (typical properties): 59 %IACS [read], density [read]; c_p [memory]; alpha [est]",
        ""
    ),
    conductor!(
        "aluminium-3003-h14",
        "Aluminium 3003-H14",
        iacs(41.0),
        0.0027,
        2730.0,
        893.0,
        "Aluminum Association, Aluminum Standards and Data: 40-42 %IACS [memory], density [memory], c_p [memory]; alpha [est]",
        ""
    ),
    conductor!(
        "aluminium-6061-t6",
        "Aluminium 6061-T6",
        iacs(43.0),
        0.0028,
        2700.0,
        896.0,
        "Aluminum Association, Aluminum Standards and Data: 43 %IACS [read] (O 47, T4 40), density [read]; alloy data sheets: c_p [read]; alpha [est]",
        "Conductivity runs 40-47 %IACS with temper: name the temper or measure."
    ),
    conductor!(
        "aluminium-6063-t5",
        "Aluminium 6063-T5",
        iacs(55.0),
        0.0036,
        2690.0,
        900.0,
        "Aluminum Association, Aluminum Standards and Data: 55 %IACS [read] (T6 53), density [read], c_p [read]; alpha [est]",
        ""
    ),
    conductor!(
        "aluminium-6082-t6",
        "Aluminium 6082-T6",
        iacs(46.0),
        0.0030,
        2700.0,
        900.0,
        "EN 573 / EN 755 data: about 46 %IACS [memory], density [memory], c_p [memory]; alpha [est]",
        ""
    ),
    conductor!(
        "aluminium-2024-t3",
        "Aluminium 2024-T3",
        iacs(30.0),
        0.0020,
        2780.0,
        875.0,
        "Aluminum Association, Aluminum Standards and Data: 30 %IACS [read], density [read]; c_p [memory]; alpha [est]",
        ""
    ),
    conductor!(
        "aluminium-7075-t6",
        "Aluminium 7075-T6",
        iacs(33.0),
        0.0022,
        2810.0,
        960.0,
        "Aluminum Association and alloy data sheets: 33 %IACS [read] (T73 40), density [read], c_p [read]; alpha [est]",
        ""
    ),
    conductor!(
        "copper-c10100",
        "Copper C10100 (oxygen-free electronic)",
        iacs(101.0),
        0.00393,
        8940.0,
        385.0,
        "Copper Development Association: >= 101 %IACS [read], alpha 0.00393 [read], density [read], c_p [read]",
        ""
    ),
    conductor!(
        "copper-c11000",
        "Copper C11000 (electrolytic tough pitch)",
        iacs(100.0),
        0.00393,
        8940.0,
        385.0,
        "Copper Development Association; IEC 60028: 100 %IACS [read], alpha 0.00393 [read], density [read], c_p [read]",
        ""
    ),
    conductor!(
        "copper-c12200",
        "Copper C12200 (phosphorus-deoxidised, plumbing tube)",
        iacs(85.0),
        0.0033,
        8940.0,
        385.0,
        "Copper Development Association; ASTM B88 tube: >= 85 %IACS [read], density [read]; c_p [memory]; alpha [est]",
        "Plumbing tube is usually C12200, not 100 %IACS copper."
    ),
    conductor!(
        "brass-c26000",
        "Cartridge brass C26000 (70/30)",
        iacs(28.0),
        0.0015,
        8530.0,
        377.0,
        "Copper Development Association data sheet: 28 %IACS [read], density [read], c_p [read]; alpha [memory]",
        ""
    ),
    conductor!(
        "bronze-c51000",
        "Phosphor bronze C51000 (5 % Sn)",
        iacs(15.0),
        0.0006,
        8860.0,
        380.0,
        "Copper Development Association data sheets: 15-20 %IACS [read, sources disagree; lower value taken], density [read], c_p [read]; alpha [est]",
        "Sources disagree on conductivity (15-20 %IACS): measure for critical designs."
    ),
    conductor!(
        "stainless-304-annealed",
        "Austenitic stainless steel 304, annealed",
        from_micro_ohm_cm(72.0),
        0.00097,
        8000.0,
        500.0,
        "ASM data sheet: resistivity 72 uOhm cm [read], alpha 0.00097 mean over 20-650 C [read], density [read], c_p [read]",
        "Relative permeability about 1.008 annealed; cold work makes it slightly magnetic, which the model does not include."
    ),
    conductor!(
        "magnesium-az31b",
        "Magnesium alloy AZ31B",
        from_micro_ohm_cm(9.2),
        0.0018,
        1770.0,
        1000.0,
        "Alloy data sheet: resistivity 9.2 uOhm cm [read], density [read], c_p [read]; alpha [est]",
        ""
    ),
    conductor!(
        "titanium-grade-2",
        "Titanium grade 2 (commercially pure)",
        iacs(3.1),
        0.0035,
        4510.0,
        523.0,
        "ASM: 3.1 %IACS [memory], alpha [memory], density [read], c_p [read]",
        ""
    ),
];

const NDFEB_SRC: &str = "Usual NdFeB grade table: remanence range middle [memory], alpha(Br) about -0.12 %/K [memory], \
max working temperature [memory], density 7500 [memory]; ASTM A1101-16 scope Br 1.08-1.5 T [read]";
const NDFEB_HT_SRC: &str = "NdFeB suffix convention (M/H/SH/UH/EH/AH = 100/120/150/180/200/220 C) [memory]; \
remanence range middle [memory]; alpha(Br) -0.11 %/K (an N48SH measured -0.119 %/K [read]); density 7500 [memory]";

macro_rules! grade {
    ($id:expr, $family:expr, $br:expr, $a:expr, $tmax:expr, $rho:expr, $opposed:expr, $src:expr) => {
        MagnetGrade {
            id: $id,
            family: $family,
            remanence_t: $br,
            remanence_temperature_coefficient_per_k: $a,
            max_working_temperature_c: $tmax,
            density_kg_per_m3: $rho,
            suits_opposed_stacks: $opposed,
            source: $src,
        }
    };
}

static GRADES: [MagnetGrade; 18] = [
    grade!(
        "N35",
        MagnetFamily::Ndfeb,
        1.195,
        -0.0012,
        80.0,
        7500.0,
        true,
        NDFEB_SRC
    ),
    grade!(
        "N38",
        MagnetFamily::Ndfeb,
        1.235,
        -0.0012,
        80.0,
        7500.0,
        true,
        NDFEB_SRC
    ),
    grade!(
        "N40",
        MagnetFamily::Ndfeb,
        1.265,
        -0.0012,
        80.0,
        7500.0,
        true,
        NDFEB_SRC
    ),
    grade!(
        "N42",
        MagnetFamily::Ndfeb,
        1.30,
        -0.0012,
        80.0,
        7500.0,
        true,
        NDFEB_SRC
    ),
    grade!(
        "N45",
        MagnetFamily::Ndfeb,
        1.35,
        -0.0012,
        80.0,
        7500.0,
        true,
        NDFEB_SRC
    ),
    grade!(
        "N48",
        MagnetFamily::Ndfeb,
        1.40,
        -0.0012,
        80.0,
        7500.0,
        true,
        NDFEB_SRC
    ),
    grade!(
        "N50",
        MagnetFamily::Ndfeb,
        1.425,
        -0.0012,
        60.0,
        7500.0,
        true,
        NDFEB_SRC
    ),
    grade!(
        "N52",
        MagnetFamily::Ndfeb,
        1.455,
        -0.0012,
        60.0,
        7500.0,
        true,
        NDFEB_SRC
    ),
    grade!(
        "N42M",
        MagnetFamily::Ndfeb,
        1.30,
        -0.0012,
        100.0,
        7500.0,
        true,
        NDFEB_HT_SRC
    ),
    grade!(
        "N42H",
        MagnetFamily::Ndfeb,
        1.30,
        -0.0011,
        120.0,
        7500.0,
        true,
        NDFEB_HT_SRC
    ),
    grade!(
        "N42SH",
        MagnetFamily::Ndfeb,
        1.30,
        -0.0011,
        150.0,
        7500.0,
        true,
        NDFEB_HT_SRC
    ),
    grade!(
        "N38UH",
        MagnetFamily::Ndfeb,
        1.235,
        -0.0011,
        180.0,
        7500.0,
        true,
        NDFEB_HT_SRC
    ),
    grade!(
        "N35EH",
        MagnetFamily::Ndfeb,
        1.195,
        -0.0011,
        200.0,
        7500.0,
        true,
        NDFEB_HT_SRC
    ),
    grade!(
        "N33AH",
        MagnetFamily::Ndfeb,
        1.15,
        -0.0011,
        220.0,
        7500.0,
        true,
        NDFEB_HT_SRC
    ),
    grade!(
        "SmCo5",
        MagnetFamily::Smco,
        0.95,
        -0.0004,
        250.0,
        8300.0,
        true,
        "Modelica Standard Library hard-magnet records: Br typical 0.95 T [read], alpha(Br) -0.04 %/K [read]; IEC 60404-8-1; max working temperature [memory], density [memory]"
    ),
    grade!(
        "Sm2Co17",
        MagnetFamily::Smco,
        1.02,
        -0.0003,
        300.0,
        8400.0,
        true,
        "Modelica Standard Library hard-magnet records: Br typical 1.02 T [read], alpha(Br) -0.03 %/K [read]; max working temperature 300-350 C [read/memory, lower taken], density [memory]"
    ),
    grade!(
        "ferrite-hard",
        MagnetFamily::Ferrite,
        0.38,
        -0.002,
        250.0,
        4900.0,
        true,
        "Modelica Standard Library hard-magnet records: Br typical 0.38 T [read], alpha(Br) -0.2 %/K [read]; max working temperature [memory], density [memory]"
    ),
    grade!(
        "AlNiCo5",
        MagnetFamily::Alnico,
        1.26,
        -0.0002,
        525.0,
        7300.0,
        false,
        "MMPA Standard 0100-00: Br about 1.25-1.28 T [memory], alpha(Br) about -0.02 %/K [read], max working temperature 500-550 C [memory], density [memory]; low coercivity"
    ),
];

/// Tube materials that are refused because they are ferromagnetic, with the reason.
const FERROMAGNETIC_WORDS: [&str; 9] = [
    "steel",
    "iron",
    "nickel",
    "cobalt",
    "mu-metal",
    "permalloy",
    "stainless-4",
    "ferritic",
    "martensitic",
];

/// The conductor table.
pub fn conductors() -> &'static [Conductor] {
    &CONDUCTORS
}

/// The magnet grade table.
pub fn magnet_grades() -> &'static [MagnetGrade] {
    &GRADES
}

/// Why a material id was not found.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum LookupError {
    /// No row with that id.
    Unknown,
    /// The id names a ferromagnetic material, outside the model.
    Ferromagnetic,
}

/// Finds a conductor by id (case-insensitive). Ferromagnetic materials are recognised and
/// refused with [`LookupError::Ferromagnetic`]; austenitic stainless 304 is in the table.
pub fn find_conductor(id: &str) -> Result<&'static Conductor, LookupError> {
    let wanted = id.trim().to_ascii_lowercase();
    if let Some(row) = CONDUCTORS.iter().find(|c| c.id == wanted) {
        return Ok(row);
    }
    if FERROMAGNETIC_WORDS.iter().any(|w| wanted.contains(w)) {
        return Err(LookupError::Ferromagnetic);
    }
    Err(LookupError::Unknown)
}

/// Finds a magnet grade by id (case-insensitive).
pub fn find_grade(id: &str) -> Option<&'static MagnetGrade> {
    let wanted = id.trim();
    GRADES.iter().find(|g| g.id.eq_ignore_ascii_case(wanted))
}

impl Conductor {
    /// Conductivity at `temperature_c`, from rho(T) = rho20 (1 + alpha (T - 20))
    /// (linear resistivity law, a handbook approximation good to a few percent over
    /// -50..150 C for these metals).
    pub fn conductivity_at_s_per_m(&self, temperature_c: f64) -> f64 {
        conductivity_at(
            self.conductivity_s_per_m,
            self.resistivity_temperature_coefficient_per_k,
            temperature_c,
        )
    }
}

/// Conductivity at temperature from its 20 C value and the resistivity coefficient alpha.
pub fn conductivity_at(sigma20_s_per_m: f64, alpha_per_k: f64, temperature_c: f64) -> f64 {
    sigma20_s_per_m / (1.0 + alpha_per_k * (temperature_c - 20.0))
}

/// Remanence at temperature from its 20 C value and the reversible coefficient (negative).
pub fn remanence_at(br20_t: f64, alpha_per_k: f64, temperature_c: f64) -> f64 {
    br20_t * (1.0 + alpha_per_k * (temperature_c - 20.0))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn table_sizes_meet_the_brief() {
        assert!(conductors().len() >= 12);
        assert!(magnet_grades().len() >= 12);
        for c in conductors() {
            assert!(c.source.contains('['), "{} lacks provenance tags", c.id);
        }
        for g in magnet_grades() {
            assert!(g.source.contains('['), "{} lacks provenance tags", g.id);
        }
    }

    #[test]
    fn iacs_definition() {
        // source: IEC 60028, International Annealed Copper Standard: 100 %IACS = 58.0 MS/m.
        let cu = find_conductor("copper-c11000").expect("row");
        assert!((cu.conductivity_s_per_m - 58.0e6).abs() < 1.0);
        // 304 stainless: 72 uOhm cm is 2.39 %IACS (source: ASM data sheet, 72 uOhm cm).
        let ss = find_conductor("stainless-304-annealed").expect("row");
        assert!((ss.iacs_percent - 2.3946).abs() < 1e-3);
    }

    #[test]
    fn ferromagnetic_refused_and_unknown_distinguished() {
        assert_eq!(
            find_conductor("mild-steel"),
            Err(LookupError::Ferromagnetic)
        );
        assert_eq!(
            find_conductor("stainless-430"),
            Err(LookupError::Ferromagnetic)
        );
        assert_eq!(find_conductor("unobtainium"), Err(LookupError::Unknown));
        assert!(find_conductor("Copper-C12200").is_ok());
        assert!(find_grade("n42").is_some());
    }

    #[test]
    fn temperature_laws() {
        // Copper from 20 C to 70 C with alpha 0.00393/K: resistivity up by 19.65 %
        // (source: IEC 60028 temperature coefficient 0.00393/K).
        let s = conductivity_at(58.0e6, 0.00393, 70.0);
        assert!((58.0e6 / s - 1.1965).abs() < 1e-12);
        // NdFeB at -0.12 %/K loses 6 % of remanence over 50 K (from memory: usual grade table).
        assert!((remanence_at(1.3, -0.0012, 70.0) - 1.3 * 0.94).abs() < 1e-12);
    }
}
