//! Property tests of the kernels: symmetries and monotonicity that hold for every input, drawn
//! at random by proptest. Run in release:
//! `cargo test --release -p ringdrag-model --lib kernels::properties`.

use crate::kernels::elliptic::complete_k_e;
use crate::kernels::inductance::mutual_filaments_h;
use crate::records::design::MagnetStack;
use crate::records::spec::Polarity;
use crate::solvers::flux::flux_derivative_wb_per_m;
use proptest::prelude::*;
use std::f64::consts::PI;

fn rel_diff(a: f64, b: f64) -> f64 {
    (a - b).abs() / a.abs().max(b.abs()).max(f64::MIN_POSITIVE)
}

/// Random stacks: radius 1-30 mm, optional bore, length 1-50 mm, 1-6 magnets, spacers up to
/// 10 mm, remanence 0.2-1.5 T (ranges invented to cover practical designs).
fn any_stack() -> impl Strategy<Value = MagnetStack> {
    (
        1e-3..30e-3_f64,
        0.0..0.8_f64,
        1e-3..50e-3_f64,
        0.2..1.5_f64,
        1usize..=6,
        any::<bool>(),
        0.0..10e-3_f64,
    )
        .prop_map(|(ro, bore, lm, br, n, alt, gap)| {
            // Bores below 5 % of the radius count as solid cylinders.
            let ri = if bore < 0.05 { 0.0 } else { bore * ro };
            let polarity = if alt {
                Polarity::Alternating
            } else {
                Polarity::Aligned
            };
            MagnetStack::at_20c(ro, ri, lm, br, n, polarity, gap)
        })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(512))]

    /// Reciprocity M(a, b) = M(b, a) and evenness in d (source: Neumann's formula is symmetric
    /// in the two circuits and depends on d only through d^2; Jackson, Classical
    /// Electrodynamics, 3rd ed., 1999, sec. 5.17).
    #[test]
    fn mutual_is_reciprocal_and_even(a in 1e-4..1.0_f64, b in 1e-4..1.0_f64, d in -10.0..10.0_f64) {
        let m = mutual_filaments_h(a, b, d);
        prop_assert!(rel_diff(m, mutual_filaments_h(b, a, d)) < 1e-14);
        prop_assert_eq!(m, mutual_filaments_h(a, b, -d));
        prop_assert_eq!(m, mutual_filaments_h(b, a, -d));
    }

    /// Coaxial loops with parallel currents: M > 0 and strictly decreasing in |d| (source:
    /// common practice; dM/dd = -2 pi b B_r / I with the outward radial field B_r of the other
    /// loop, positive for d > 0).
    #[test]
    fn mutual_is_positive_and_decreasing(
        a in 1e-4..1.0_f64,
        b in 1e-4..1.0_f64,
        d in 0.0..10.0_f64,
        step in 1e-3..1.0_f64,
    ) {
        prop_assume!(a != b || d > 0.0);
        let near = mutual_filaments_h(a, b, d);
        let far = mutual_filaments_h(a, b, -(d + step * (d + a.max(b))));
        prop_assert!(near > 0.0 && far > 0.0, "near {near}, far {far}");
        prop_assert!(far < near, "a {a}, b {b}, d {d}: {far} >= {near}");
    }

    /// K(m) increases and E(m) decreases with m (source: Abramowitz & Stegun, Handbook of
    /// Mathematical Functions, 1964, 17.3.1 and 17.3.3, the integrands; from memory).
    #[test]
    fn elliptic_monotone(m in 0.0..1.0_f64, frac in 1e-6..1.0_f64) {
        let m2 = m + frac * (1.0 - m);
        prop_assume!(m2 < 1.0 && m2 > m);
        let (k1, e1) = complete_k_e(m, 1.0 - m);
        let (k2, e2) = complete_k_e(m2, 1.0 - m2);
        prop_assert!(k2 > k1, "K({m2}) = {k2} <= K({m}) = {k1}");
        prop_assert!(e2 < e1, "E({m2}) = {e2} >= E({m}) = {e1}");
    }

    /// Legendre's relation E K' + E' K - K K' = pi/2, primes for the complementary parameter
    /// (source: Abramowitz & Stegun 1964, 17.3.13; NIST DLMF 19.7.1; from memory).
    #[test]
    fn legendre_relation(m in 1e-12..1.0_f64) {
        let m1 = 1.0 - m;
        prop_assume!(m1 > 0.0);
        let (k, e) = complete_k_e(m, m1);
        let (kp, ep) = complete_k_e(m1, m);
        let lhs = e * kp + ep * k - k * kp;
        // Cancellation: the terms are as large as K K' (about 15 at m = 1e-12).
        let tol = 4.0 * f64::EPSILON * (k * kp).max(1.0);
        prop_assert!((lhs - PI / 2.0).abs() < tol, "m {m}: {lhs} vs pi/2");
    }

    /// Reversing every magnet of a stack flips the sign of dPhi/dzeta everywhere, so the
    /// braking force, quadratic in it, is unchanged (source: the field is linear in the
    /// magnetisation; common practice). Two independent realisations of the reversed stack:
    /// (a) negated remanence, (b) the mirror image z -> -z, which for an axially magnetised
    /// stack leaves each magnetisation unchanged but reverses the order of the magnets, i.e.
    /// Phi_reversed(zeta) = Phi(-zeta) for even alternating stacks and
    /// Phi_mirror = Phi for aligned or odd stacks (flux even, derivative odd in zeta).
    #[test]
    fn polarity_reversal(s in any_stack(), gap in 1e-4..5e-3_f64, zeta in -0.2..0.2_f64) {
        let r = s.outer_radius_m + gap;
        let g = flux_derivative_wb_per_m(&s, r, zeta);
        let mut reversed = s.clone();
        reversed.remanence_t = -s.remanence_t;
        let g_rev = flux_derivative_wb_per_m(&reversed, r, zeta);
        prop_assert_eq!(g_rev, -g);
        prop_assert_eq!(g_rev * g_rev, g * g);
        // Mirror: d/dzeta [Phi(-zeta)] = -Phi'(-zeta).
        let g_mirror = -flux_derivative_wb_per_m(&s, r, -zeta);
        let even_alternating = s.polarity == Polarity::Alternating && s.count % 2 == 0;
        let scale = flux_scale(&s, r);
        if even_alternating {
            // The mirror image is the reversed stack (source: symmetry, common practice).
            prop_assert!((g_mirror - g_rev).abs() < 1e-12 * scale, "{g_mirror} vs {g_rev}");
        } else {
            // The mirror image is the stack itself (source: symmetry, common practice).
            prop_assert!((g_mirror - g).abs() < 1e-12 * scale, "{g_mirror} vs {g}");
        }
    }

    /// The stack's dPhi/dzeta is the signed sum of its magnets', each a single magnet at its
    /// own offset (source: superposition of the magnets' fields; common practice).
    #[test]
    fn stack_is_sum_of_magnets(s in any_stack(), gap in 1e-4..5e-3_f64, zeta in -0.2..0.2_f64) {
        let r = s.outer_radius_m + gap;
        let mut one = s.clone();
        one.count = 1;
        one.polarity = Polarity::Aligned;
        let n = s.count;
        let pitch = s.magnet_length_m + s.spacer_length_m;
        let mut sum = 0.0;
        for i in 0..n {
            // Offsets centred on the stack; alternating stacks start with +.
            let offset = (i as f64 - (n as f64 - 1.0) / 2.0) * pitch;
            let sign = if s.polarity == Polarity::Alternating && i % 2 == 1 { -1.0 } else { 1.0 };
            sum += sign * flux_derivative_wb_per_m(&one, r, zeta - offset);
        }
        let g = flux_derivative_wb_per_m(&s, r, zeta);
        prop_assert!((g - sum).abs() < 1e-12 * flux_scale(&s, r), "{g} vs {sum}");
        // For an aligned stack the sum runs over equal signs.
        if s.polarity == Polarity::Aligned {
            let aligned: f64 = (0..n)
                .map(|i| {
                    let offset = (i as f64 - (n as f64 - 1.0) / 2.0) * pitch;
                    flux_derivative_wb_per_m(&one, r, zeta - offset)
                })
                .sum();
            // source: superposition, as above (common practice; 1e-12 rounding).
            prop_assert!((g - aligned).abs() < 1e-12 * flux_scale(&s, r));
        }
    }
}

/// A size for absolute tolerances on dPhi/dzeta, Wb/m: the number of magnets times the largest
/// single-face term K M(R, r, 0) of the closed form.
fn flux_scale(s: &MagnetStack, r: f64) -> f64 {
    s.count as f64
        * s.surface_current_a_per_m().abs()
        * mutual_filaments_h(s.outer_radius_m, r, 0.0)
}
