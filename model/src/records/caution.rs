//! Cautions as data: every computing result carries a list of them, so that a configurator
//! can show them next to the numbers. The standing safety caution is always first.

use serde::Serialize;

/// The thresholds at which a result or a design earns a caution, in one place, each with its
/// reason. They decide only whether words are added; no number is changed by them.
pub mod thresholds {
    /// Reference temperature of material data, C (the temperature of handbook conductivity and
    /// magnet catalogue remanence; source: CRC Handbook of Chemistry and Physics, 97th ed.,
    /// 2016, and IEC 60404-8-1, 2015).
    pub const REFERENCE_TEMPERATURE_C: f64 = 20.0;
    /// Departure from the reference temperature, K, beyond which a missing temperature
    /// coefficient is said to be assumed zero (below it the assumption changes nothing that a
    /// 0.4 %/K coefficient would show at three digits; common practice).
    pub const TEMPERATURE_ASSUMPTION_TOLERANCE_K: f64 = 1.0;
    /// Open-area fraction above which the perforation rule sigma (1 - f)/(1 + f) is said to
    /// lose accuracy (the dilute-limit Maxwell-Garnett result; source: Rayleigh, Phil. Mag. 34,
    /// 481, 1892, which holds to a few per cent up to about 0.3).
    pub const PERFORATION_FRACTION: f64 = 0.3;
    /// Radial clearance between magnet and bore below which rubbing and jamming are cautioned,
    /// m (coating and tube-ovality tolerances are about 0.1 mm; common practice).
    pub const CLEARANCE_M: f64 = 0.2e-3;
    /// The same as a fraction of the magnet radius (common practice).
    pub const CLEARANCE_FRACTION: f64 = 0.02;
    /// Wall thickness, in bore diameters, beyond which the outer wall contributes little
    /// (the magnet's field falls off over about one bore radius; common practice).
    pub const WALL_TO_BORE_DIAMETER: f64 = 1.0;
    /// Margin below a grade's maximum working temperature, K, within which magnet temperature
    /// is cautioned (the catalogue limit assumes a load line of 1 or above; common practice).
    pub const MAGNET_TEMPERATURE_MARGIN_K: f64 = 15.0;
    /// Terminal speed, as a fraction of the critical speed, above which little margin against
    /// runaway is cautioned (above the peak the force falls with speed; source: Partovi &
    /// Morris, Can. J. Phys. 84, 253, 2006).
    pub const RUNAWAY_MARGIN_FRACTION: f64 = 0.5;
}

/// What a caution is about, for programs that filter or highlight them.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
#[serde(rename_all = "snake_case")]
pub enum CautionKind {
    /// The standing caution on estimates, certification and magnet handling.
    Safety,
    /// The load exceeds the peak braking force: the brake cannot hold it.
    Runaway,
    /// Magnet temperature near or above the grade's maximum working temperature.
    MagnetTemperature,
    /// Very small radial clearance between magnet and bore.
    Clearance,
    /// Perforation beyond the range where the effective-conductivity rule is reliable.
    Perforation,
    /// Inputs near or beyond the model's physical limits.
    ModelLimit,
    /// A value was assumed because the input did not give it.
    Assumption,
    /// Numerical resolution or convergence remark.
    Numerical,
    /// Risk of demagnetisation in the chosen arrangement.
    Demagnetisation,
    /// The tube heats markedly.
    Heating,
}

/// One caution.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[cfg_attr(feature = "schema", derive(utoipa::ToSchema))]
pub struct Caution {
    /// What it is about.
    pub kind: CautionKind,
    /// The caution in words.
    pub message: String,
}

impl Caution {
    /// A caution of `kind` with `message`.
    pub fn new(kind: CautionKind, message: impl Into<String>) -> Self {
        Self {
            kind,
            message: message.into(),
        }
    }

    /// The standing safety caution carried by every computing result.
    pub fn standing_safety() -> Self {
        Self::new(
            CautionKind::Safety,
            "Results are engineering estimates from an idealised axisymmetric model (non-ferrous tube, \
             relative permeability 1, no iron pole pieces). Brakes and dampers that protect or carry \
             people need physical testing and certification under the applicable standards, local codes \
             and licensed engineers. Strong magnets pinch fingers, shatter, and can affect pacemakers and \
             other implants.",
        )
    }
}

/// Appends `c` unless a caution with the same message is already present.
pub fn push_unique(list: &mut Vec<Caution>, c: Caution) {
    if !list.iter().any(|x| x.message == c.message) {
        list.push(c);
    }
}

/// Cautions on the load that a steady force-speed curve decides, the same on every endpoint:
/// runaway when the net driving force `drive_n` exceeds the peak braking force `peak_n` (no
/// terminal speed: a faster load brakes less beyond the critical speed; Partovi & Morris, Can.
/// J. Phys. 84, 253, 2006, on the force peak), little margin against it when the terminal
/// speed is above [`thresholds::RUNAWAY_MARGIN_FRACTION`] of the critical speed, and no steady motion when nothing drives the stack.
pub fn steady_load_cautions(
    drive_n: f64,
    peak_n: f64,
    critical_m_per_s: f64,
    terminal_m_per_s: Option<f64>,
) -> Vec<Caution> {
    let mut out = Vec::new();
    match terminal_m_per_s {
        None => out.push(Caution::new(
            CautionKind::Runaway,
            format!(
                "RUNAWAY: the driving force {drive_n:.4} N exceeds the peak braking force \
                 {peak_n:.4} N (at {critical_m_per_s:.4} m/s). The brake cannot hold this load \
                 at any speed; above the critical speed a faster load brakes less."
            ),
        )),
        Some(_) if drive_n <= 0.0 => out.push(Caution::new(
            CautionKind::ModelLimit,
            "The load does not drive the stack (friction or an uphill incline exceeds the \
             driving force): there is no steady motion, terminal speed 0.",
        )),
        Some(t) if t > thresholds::RUNAWAY_MARGIN_FRACTION * critical_m_per_s => {
            out.push(Caution::new(
                CautionKind::Runaway,
                format!(
                    "Terminal speed {t:.4} m/s is above half the critical speed \
                 {critical_m_per_s:.4} m/s: little margin against runaway; a heavier or hotter \
                 case may not be held."
                ),
            ))
        }
        Some(_) => {}
    }
    out
}
