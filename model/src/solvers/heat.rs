//! Heating of the tube by braking, and what temperature does to the brake.
//!
//! - Adiabatic rise of one stroke: the heat Q spread over the swept length of tube,
//!   dT = Q / (C' L_swept), with C' the tube's heat capacity per metre. The *swept length* is
//!   the part of the tube that the stack's field reached during the stroke: from the lowest to
//!   the highest stack-centre position, widened on both sides by the field reach (half the
//!   stack length plus the window margin of the solver), and clipped to the tube. The result
//!   is a mean over that length; near the entry, where the stack decelerates from a fall,
//!   the local rise can be higher. No heat leaves during the stroke (adiabatic): strokes last
//!   seconds, while a tube cools over minutes.
//! - Temperature coefficient of braking in the linear (low-speed) regime: F ~ sigma Br^2, so
//!   dF/F = -(alpha_rho_eff + 2 |alpha_Br|) dT per kelvin, alpha_rho_eff = alpha / (1 + alpha
//!   (T - 20)) the coefficient at the operating temperature (linear resistivity law, e.g. IEC
//!   60028 for copper). A hot brake is weaker; [`crate::records::design::Design::at_temperatures`] gives
//!   the hot design itself for a full recomputation.
//! - Repeated strokes: the steady mean rise against natural convection from the outer surface,
//!   dT = (Q n / 3600) / (h A) with n strokes per hour and A the outer surface of the swept
//!   length; h about 5-10 W/(m^2 K) for still air (common practice). Radiation and conduction
//!   along the tube are neglected, which overstates the rise.

use crate::records::design::Design;

/// Natural-convection film coefficient for a horizontal or vertical tube in still air,
/// W/(m^2 K): the middle of the common 5-10 range (common practice).
pub const STILL_AIR_FILM_COEFFICIENT_W_PER_M2_K: f64 = 7.5;

/// Length of tube swept by the field during a stroke, m: from `x_min_m - reach_m` to
/// `x_max_m + reach_m`, clipped to [0, tube length]. Zero when the field never reached the tube.
pub fn swept_length_m(design: &Design, x_min_m: f64, x_max_m: f64, reach_m: f64) -> f64 {
    let lo = (x_min_m - reach_m).max(0.0);
    let hi = (x_max_m + reach_m).min(design.tube.length_m);
    (hi - lo).max(0.0)
}

/// Adiabatic mean temperature rise of the swept length, K; None when the tube's density or
/// specific heat is unknown. Zero heat or zero swept length give zero.
pub fn adiabatic_rise_k(design: &Design, heat_j: f64, swept_length_m: f64) -> Option<f64> {
    let c = design.tube.heat_capacity_per_length_j_per_k_m()?;
    if heat_j <= 0.0 || swept_length_m <= 0.0 {
        return Some(0.0);
    }
    Some(heat_j / (c * swept_length_m))
}

/// Relative change of low-speed braking per kelvin of tube (and, with `magnets_too`, magnet)
/// temperature, 1/K (negative: braking falls as it warms).
pub fn braking_temperature_coefficient_per_k(design: &Design, magnets_too: bool) -> f64 {
    let t = &design.tube;
    let alpha = t.resistivity_temperature_coefficient_per_k;
    let alpha_eff = alpha / (1.0 + alpha * (t.temperature_c - 20.0));
    let mut k = -alpha_eff;
    if magnets_too {
        let m = &design.magnets;
        let br_ratio = m.remanence_t / m.remanence_20c_t;
        k -= 2.0 * m.remanence_temperature_coefficient_per_k.abs() / br_ratio.max(1e-9);
    }
    k
}

/// Relative change of low-speed braking after the tube warms by `rise_k`, from the exact
/// conductivity ratio sigma(T + rise) / sigma(T) of the linear resistivity law (negative).
pub fn braking_change_after_rise(design: &Design, rise_k: f64) -> f64 {
    let hot = design.at_temperatures(
        design.tube.temperature_c + rise_k,
        design.magnets.temperature_c,
    );
    hot.tube.conductivity_s_per_m / design.tube.conductivity_s_per_m - 1.0
}

/// Steady mean temperature rise of the swept length under repeated strokes, K:
/// (Q n / 3600) / (h 2 pi b L_swept). None when the swept length is zero.
pub fn steady_rise_k(
    design: &Design,
    heat_per_stroke_j: f64,
    strokes_per_hour: f64,
    film_coefficient_w_per_m2_k: f64,
    swept_length_m: f64,
) -> Option<f64> {
    let area = 2.0 * std::f64::consts::PI * design.tube.outer_radius_m * swept_length_m;
    if area <= 0.0 || film_coefficient_w_per_m2_k <= 0.0 {
        return None;
    }
    Some(heat_per_stroke_j * strokes_per_hour / 3600.0 / (film_coefficient_w_per_m2_k * area))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn design() -> Design {
        Design::from_spec(&crate::records::design::tests::sample_spec()).expect("valid")
    }

    #[test]
    fn rise_is_heat_over_capacity() {
        let d = design();
        // Copper C12200 tube 13 mm bore, 1.5 mm wall: area pi (8^2 - 6.5^2) mm^2 = 68.33 mm^2;
        // 8940 kg/m^3 x 385 J/(kg K) (source: Copper Development Association data, the table's
        // rows) gives C' = 235.2 J/(K m); 10 J over 0.2 m -> 0.2126 K.
        let c = std::f64::consts::PI * (0.008_f64.powi(2) - 0.0065_f64.powi(2)) * 8940.0 * 385.0;
        let rise = adiabatic_rise_k(&d, 10.0, 0.2).expect("known material");
        assert!((rise - 10.0 / (c * 0.2)).abs() < 1e-12);
        assert!((swept_length_m(&d, -0.03, 0.35, 0.05) - 0.3).abs() < 1e-15);
        assert_eq!(swept_length_m(&d, -0.5, -0.4, 0.05), 0.0);
    }

    #[test]
    fn steady_rise_balances_convection() {
        let d = design();
        // 60 strokes an hour of 36 J each = 0.6 W from the outer surface of 0.2 m of a 16 mm
        // tube (area 2 pi 0.008 0.2 = 0.010053 m^2) at h = 7.5 W/(m^2 K): 7.958 K
        // (source: Newton's law of cooling, q = h A dT, common practice).
        let rise = steady_rise_k(&d, 36.0, 60.0, STILL_AIR_FILM_COEFFICIENT_W_PER_M2_K, 0.2)
            .expect("positive area");
        let area = 2.0 * std::f64::consts::PI * 0.008 * 0.2;
        assert!((rise - 0.6 / (7.5 * area)).abs() < 1e-12);
        assert!((rise - 7.958).abs() < 1e-3);
        assert_eq!(steady_rise_k(&d, 36.0, 60.0, 7.5, 0.0), None);
    }

    #[test]
    fn copper_with_ndfeb_loses_about_point_six_percent_per_kelvin() {
        // Annealed copper C11000 so that the resistivity coefficient has an outside value:
        // alpha_20 = 0.00393 /K (source: IEC 60028, International standard of resistance for
        // copper, 1925, the annealed-copper standard). NdFeB remanence: -0.12 %/K for N42
        // (from memory: the usual datasheet figure, -0.11 to -0.12 %/K).
        let mut spec = crate::records::design::tests::sample_spec();
        spec.tube.material = Some("copper-c11000".into());
        let d = Design::from_spec(&spec).expect("valid");
        let k = braking_temperature_coefficient_per_k(&d, true);
        // 1e-5: the outside values' own rounding (their last digit).
        assert!((k + 0.00393 + 2.0 * 0.0012).abs() < 1e-5, "{k}");
        // A 10 K warmer tube: sigma ratio 1 / (1 + 0.00393 x 10) - 1 = -3.78 %
        // (source: the linear resistivity law and alpha of IEC 60028 as above).
        let dr = braking_change_after_rise(&d, 10.0);
        assert!((dr - (1.0 / 1.0393 - 1.0)).abs() < 1e-9, "{dr}");
    }
}
