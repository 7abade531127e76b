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

/// How a row's conductivity was given by its source.
#[derive(Debug, Clone, Copy)]
enum Given {
    /// As a percentage of IACS.
    Iacs(f64),
    /// As a resistivity in micro-ohm centimetres.
    MicroOhmCm(f64),
}

impl Given {
    /// Conductivity, S/m. From %IACS it is the percentage times 580 000 S/m (IACS / 100),
    /// exact for the table's whole and one-decimal percentages, so 55 %IACS is 31 900 000 S/m
    /// and not a float's neighbour of it.
    const fn s_per_m(self) -> f64 {
        match self {
            Self::Iacs(percent) => percent * (IACS_S_PER_M / 100.0),
            Self::MicroOhmCm(resistivity) => 1.0 / (resistivity * 1.0e-8),
        }
    }

    /// Conductivity in %IACS: the source's figure itself when it gave one.
    const fn iacs_percent(self) -> f64 {
        match self {
            Self::Iacs(percent) => percent,
            Self::MicroOhmCm(_) => self.s_per_m() / IACS_S_PER_M * 100.0,
        }
    }
}

use Given::{Iacs, MicroOhmCm};

macro_rules! conductor {
    ($id:expr, $name:expr, $sigma:expr, $alpha:expr, $rho:expr, $cp:expr, $src:expr, $notes:expr) => {
        Conductor {
            id: $id,
            name: $name,
            conductivity_s_per_m: $sigma.s_per_m(),
            iacs_percent: $sigma.iacs_percent(),
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
        Iacs(59.0),
        0.0039,
        2710.0,
        904.0,
        "Aluminum Association, Aluminum Standards and Data (typical properties): 59 %IACS [read], density [read]; c_p [memory]; alpha [est]",
        ""
    ),
    conductor!(
        "aluminium-3003-h14",
        "Aluminium 3003-H14",
        Iacs(41.0),
        0.0027,
        2730.0,
        893.0,
        "Aluminum Association, Aluminum Standards and Data: 40-42 %IACS [memory], density [memory], c_p [memory]; alpha [est]",
        ""
    ),
    conductor!(
        "aluminium-6061-t6",
        "Aluminium 6061-T6",
        Iacs(43.0),
        0.0028,
        2700.0,
        896.0,
        "Aluminum Association, Aluminum Standards and Data: 43 %IACS [read] (O 47, T4 40), density [read]; alloy data sheets: c_p [read]; alpha [est]",
        "Conductivity runs 40-47 %IACS with temper: name the temper or measure."
    ),
    conductor!(
        "aluminium-6063-t5",
        "Aluminium 6063-T5",
        Iacs(55.0),
        0.0036,
        2690.0,
        900.0,
        "Aluminum Association, Aluminum Standards and Data: 55 %IACS [read] (T6 53), density [read], c_p [read]; alpha [est]",
        ""
    ),
    conductor!(
        "aluminium-6082-t6",
        "Aluminium 6082-T6",
        Iacs(46.0),
        0.0030,
        2700.0,
        900.0,
        "EN 573 / EN 755 data: about 46 %IACS [memory], density [memory], c_p [memory]; alpha [est]",
        ""
    ),
    conductor!(
        "aluminium-2024-t3",
        "Aluminium 2024-T3",
        Iacs(30.0),
        0.0020,
        2780.0,
        875.0,
        "Aluminum Association, Aluminum Standards and Data: 30 %IACS [read], density [read]; c_p [memory]; alpha [est]",
        ""
    ),
    conductor!(
        "aluminium-7075-t6",
        "Aluminium 7075-T6",
        Iacs(33.0),
        0.0022,
        2810.0,
        960.0,
        "Aluminum Association and alloy data sheets: 33 %IACS [read] (T73 40), density [read], c_p [read]; alpha [est]",
        ""
    ),
    conductor!(
        "copper-c10100",
        "Copper C10100 (oxygen-free electronic)",
        Iacs(101.0),
        0.00393,
        8940.0,
        385.0,
        "Copper Development Association: >= 101 %IACS [read], alpha 0.00393 [read], density [read], c_p [read]",
        ""
    ),
    conductor!(
        "copper-c11000",
        "Copper C11000 (electrolytic tough pitch)",
        Iacs(100.0),
        0.00393,
        8940.0,
        385.0,
        "Copper Development Association; IEC 60028: 100 %IACS [read], alpha 0.00393 [read], density [read], c_p [read]",
        ""
    ),
    conductor!(
        "copper-c12200",
        "Copper C12200 (phosphorus-deoxidised, plumbing tube)",
        Iacs(85.0),
        0.0033,
        8940.0,
        385.0,
        "Copper Development Association; ASTM B88 tube: >= 85 %IACS [read], density [read]; c_p [memory]; alpha [est]",
        "Plumbing tube is usually C12200, not 100 %IACS copper."
    ),
    conductor!(
        "brass-c26000",
        "Cartridge brass C26000 (70/30)",
        Iacs(28.0),
        0.0015,
        8530.0,
        377.0,
        "Copper Development Association data sheet: 28 %IACS [read], density [read], c_p [read]; alpha [memory]",
        ""
    ),
    conductor!(
        "bronze-c51000",
        "Phosphor bronze C51000 (5 % Sn)",
        Iacs(15.0),
        0.0006,
        8860.0,
        380.0,
        "Copper Development Association data sheets: 15-20 %IACS [read, sources disagree; lower value taken], density [read], c_p [read]; alpha [est]",
        "Sources disagree on conductivity (15-20 %IACS): measure for critical designs."
    ),
    conductor!(
        "stainless-304-annealed",
        "Austenitic stainless steel 304, annealed",
        MicroOhmCm(72.0),
        0.00097,
        8000.0,
        500.0,
        "ASM data sheet: resistivity 72 uOhm cm [read], alpha 0.00097 mean over 20-650 C [read], density [read], c_p [read]",
        "Relative permeability about 1.008 annealed; cold work makes it slightly magnetic, which the model does not include."
    ),
    conductor!(
        "magnesium-az31b",
        "Magnesium alloy AZ31B",
        MicroOhmCm(9.2),
        0.0018,
        1770.0,
        1000.0,
        "Alloy data sheet: resistivity 9.2 uOhm cm [read], density [read], c_p [read]; alpha [est]",
        ""
    ),
    conductor!(
        "titanium-grade-2",
        "Titanium grade 2 (commercially pure)",
        Iacs(3.1),
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

/// Finds a conductor by id (case-insensitive; spaces and underscores read as hyphens, and the
/// American spelling `aluminum` as `aluminium`). Ferromagnetic materials are recognised and
/// refused with [`LookupError::Ferromagnetic`]; austenitic stainless 304 is in the table.
///
/// # Errors
///
/// [`LookupError::Unknown`] when no row has the id, [`LookupError::Ferromagnetic`] when it
/// names a ferromagnetic material (outside the model).
pub fn find_conductor(id: &str) -> Result<&'static Conductor, LookupError> {
    let wanted = conductor_spelling(id);
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
    let wanted = grade_spelling(id);
    GRADES.iter().find(|g| grade_spelling(g.id) == wanted)
}

/// A conductor id as the table spells it: lower case, hyphens between words, `aluminium`.
fn conductor_spelling(id: &str) -> String {
    id.trim()
        .to_ascii_lowercase()
        .replace([' ', '_'], "-")
        .replace("aluminum", "aluminium")
}

/// A grade id compared without case, spaces or hyphens (`n-42 sh` is `N42SH`).
fn grade_spelling(id: &str) -> String {
    id.chars()
        .filter(|c| !matches!(c, ' ' | '-' | '_'))
        .flat_map(char::to_lowercase)
        .collect()
}

/// Edit distance (Levenshtein: insertions, deletions, substitutions) between two strings.
fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut row: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut diagonal = row[0];
        row[0] = i + 1;
        for (j, cb) in b.iter().enumerate() {
            let above = row[j + 1];
            row[j + 1] = (diagonal + usize::from(ca != *cb))
                .min(above + 1)
                .min(row[j] + 1);
            diagonal = above;
        }
    }
    row[b.len()]
}

/// Up to three ids nearest to `wanted` among `ids` (all in one spelling): first the ids
/// holding every word of `wanted` (`6061` finds `aluminium-6061-t6`, `copper` the coppers),
/// then those within a few edits of it.
fn nearest(wanted: &str, ids: impl Iterator<Item = (&'static str, String)>) -> Vec<&'static str> {
    let words: Vec<&str> = wanted
        .split(|c: char| !c.is_ascii_alphanumeric())
        .filter(|w| w.len() >= 2)
        .collect();
    let mut scored: Vec<(usize, &'static str)> = Vec::new();
    for (id, spelled) in ids {
        let distance = edit_distance(wanted, &spelled);
        if !words.is_empty() && words.iter().all(|w| spelled.contains(w)) {
            scored.push((0, id));
        } else if distance <= (wanted.chars().count() / 3).max(2) {
            scored.push((distance, id));
        }
    }
    // Ids holding every word are the answer when there are any.
    if scored.iter().any(|(d, _)| *d == 0) && !words.is_empty() {
        scored.retain(|(d, _)| *d == 0);
    }
    scored.sort_by_key(|(d, _)| *d);
    scored.into_iter().take(3).map(|(_, id)| id).collect()
}

/// Conductor ids nearest to an unknown `id` (at most three, best first).
pub fn suggest_conductors(id: &str) -> Vec<&'static str> {
    nearest(
        &conductor_spelling(id),
        CONDUCTORS.iter().map(|c| (c.id, c.id.to_string())),
    )
}

/// Grade ids nearest to an unknown `id` (at most three, best first).
pub fn suggest_grades(id: &str) -> Vec<&'static str> {
    let wanted = grade_spelling(id);
    // Family names point to their grades.
    let family = [
        ("neodymium", MagnetFamily::Ndfeb),
        ("ndfeb", MagnetFamily::Ndfeb),
        ("neo", MagnetFamily::Ndfeb),
        ("samarium", MagnetFamily::Smco),
        ("smco", MagnetFamily::Smco),
        ("ferrite", MagnetFamily::Ferrite),
        ("ceramic", MagnetFamily::Ferrite),
        ("alnico", MagnetFamily::Alnico),
    ]
    .into_iter()
    .find(|(word, _)| wanted.starts_with(word));
    if let Some((_, family)) = family {
        let rows: Vec<&'static str> = GRADES
            .iter()
            .filter(|g| g.family == family)
            .map(|g| g.id)
            .collect();
        if !rows.is_empty() && rows.len() <= 3 {
            return rows;
        }
        if family == MagnetFamily::Ndfeb {
            return vec!["N35", "N42", "N52"];
        }
    }
    nearest(&wanted, GRADES.iter().map(|g| (g.id, grade_spelling(g.id))))
}

/// `did you mean 'a', 'b' or 'c'?`; empty for no suggestion.
fn did_you_mean(ids: &[&str]) -> String {
    let quoted: Vec<String> = ids.iter().map(|id| format!("'{id}'")).collect();
    match quoted.as_slice() {
        [] => String::new(),
        [one] => format!("did you mean {one}? "),
        [first @ .., last] => format!("did you mean {} or {last}? ", first.join(", ")),
    }
}

/// The message for an unknown `tube.material`, with the nearest ids.
pub fn unknown_conductor_message(id: &str) -> String {
    let hint = did_you_mean(&suggest_conductors(id));
    format!("unknown material '{id}'; {hint}The ids are listed by GET /v1/materials")
}

/// The message for an unknown `magnets.grade`, with the nearest ids.
pub fn unknown_grade_message(id: &str) -> String {
    let hint = did_you_mean(&suggest_grades(id));
    format!("unknown grade '{id}'; {hint}The ids are listed by GET /v1/materials")
}

/// The message refusing a ferromagnetic `tube.material`, naming the non-ferrous rows to use
/// instead (a stainless query gets the austenitic row first).
pub fn ferromagnetic_message(id: &str) -> String {
    let mut rows: Vec<&str> = CONDUCTORS.iter().map(|c| c.id).collect();
    if conductor_spelling(id).contains("stainless") {
        rows.sort_by_key(|r| !r.starts_with("stainless"));
    }
    format!(
        "'{id}' is ferromagnetic: the model assumes relative permeability 1 and cannot represent \
         magnetic tubes (attraction, flux guiding, saturation). Choose a non-ferrous row of the \
         table: {}",
        rows.join(", ")
    )
}

/// The provenance of a row in a customer's words, from its source's tags: `[read]` values
/// were seen in the named source; `[memory]` and `[est]` values are typical figures that
/// were not checked against one.
pub fn provenance_words(source: &str) -> &'static str {
    if source.contains("[memory") || source.contains("[est") || source.contains("/memory") {
        "typical handbook value — confirm against your supplier's data sheet"
    } else {
        "handbook value from the named standard or data sheet — your supplier's data sheet for \
         your batch still decides"
    }
}

impl MagnetGrade {
    /// Practical remarks on the grade for a buyer and a designer (coating, brittleness,
    /// temperature, stacking).
    pub fn notes(&self) -> &'static str {
        match self.family {
            MagnetFamily::Ndfeb if self.max_working_temperature_c > 80.0 => {
                "High-temperature NdFeB (the letters after the number give the working \
                 temperature); corrodes unless coated, brittle: snaps together hard."
            }
            MagnetFamily::Ndfeb => {
                "Sintered NdFeB: the strongest common magnets; corrodes unless coated (usually \
                 nickel), brittle, snaps together hard. Loses about 0.12 % of remanence per \
                 kelvin: for warm tubes compare with a high-temperature grade."
            }
            MagnetFamily::Smco => {
                "Samarium-cobalt: weaker than NdFeB but steady with temperature and corrosion \
                 resistant; very brittle, chips easily."
            }
            MagnetFamily::Ferrite => {
                "Hard ferrite: cheap and corrosion proof, but about a third of NdFeB's \
                 remanence, so braking is roughly ten times weaker for the same size."
            }
            MagnetFamily::Alnico => {
                "AlNiCo: low coercivity; avoid alternating stacks and strong opposing fields, \
                 which demagnetise it."
            }
        }
    }
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
    fn common_spellings_are_accepted_or_suggested() {
        assert_eq!(
            find_conductor("Aluminum 6061_T6").map(|c| c.id),
            Ok("aluminium-6061-t6")
        );
        assert_eq!(find_grade("n-42 sh").map(|g| g.id), Some("N42SH"));
        // A temper changes conductivity by up to 15 %: suggested, not guessed.
        assert_eq!(find_conductor("6061"), Err(LookupError::Unknown));
        assert_eq!(
            suggest_conductors("aluminum-6061"),
            vec!["aluminium-6061-t6"]
        );
        assert_eq!(suggest_conductors("coper-c12200")[0], "copper-c12200");
        assert_eq!(suggest_grades("N43"), vec!["N40", "N42", "N45"]);
        assert_eq!(suggest_grades("samarium"), vec!["SmCo5", "Sm2Co17"]);
        assert!(suggest_conductors("unobtainium").is_empty());
        assert_eq!(
            unknown_conductor_message("6061"),
            "unknown material '6061'; did you mean 'aluminium-6061-t6'? The ids are listed by \
             GET /v1/materials"
        );
        assert!(ferromagnetic_message("stainless-430").contains("table: stainless-304-annealed, "));
    }

    #[test]
    fn table_values_carry_no_float_noise() {
        let al = find_conductor("aluminium-6063-t5").expect("row");
        assert_eq!(al.iacs_percent, 55.0);
        assert_eq!(al.conductivity_s_per_m, 31.9e6);
        for c in conductors().iter().filter(|c| c.source.contains("%IACS [")) {
            let text = format!("{} {}", c.conductivity_s_per_m, c.iacs_percent);
            assert!(text.len() < 16, "{}: {text}", c.id);
        }
        for g in magnet_grades() {
            assert!(!g.notes().is_empty(), "{}", g.id);
        }
        assert!(provenance_words(NDFEB_SRC).starts_with("typical handbook value"));
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
