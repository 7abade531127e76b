//! Cautions as data: every computing result carries a list of them, so that a configurator
//! can show them next to the numbers. The standing safety caution is always first.

use serde::Serialize;

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
/// speed is above half the critical speed, and no steady motion when nothing drives the stack.
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
        Some(t) if t > 0.5 * critical_m_per_s => out.push(Caution::new(
            CautionKind::Runaway,
            format!(
                "Terminal speed {t:.4} m/s is above half the critical speed \
                 {critical_m_per_s:.4} m/s: little margin against runaway; a heavier or hotter \
                 case may not be held."
            ),
        )),
        Some(_) => {}
    }
    out
}
