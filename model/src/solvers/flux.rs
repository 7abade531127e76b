//! Magnetic flux from a magnet stack through coaxial loops, and the on-axis field.
//!
//! Each axially magnetised cylinder is a sheet of azimuthal surface current K = Br / mu0 on
//! its outer surface (and -K on the bore of a ring magnet): the Amperian current model
//! (Jackson, Classical Electrodynamics, 3rd ed., sec. 5.8-5.10; Furlani, Permanent Magnet
//! and Electromechanical Devices, 2001). The flux through a loop of radius r at axial offset
//! zeta from a magnet's centre is Phi = K * integral_{-L/2}^{L/2} M(R, r, zeta - s) ds, so its
//! axial derivative is closed form, K [M(R, r, zeta + L/2) - M(R, r, zeta - L/2)]: the EMF of
//! motion and the braking force need only this derivative, no quadrature.

use crate::kernels::inductance::mutual_filaments_h;
use crate::records::design::MagnetStack;

/// d(Phi)/d(zeta) for one magnet's current sheets at radius `sheet_r`, Wb/m per A/m of sheet.
fn sheet_derivative(sheet_r: f64, length: f64, r: f64, zeta: f64) -> f64 {
    mutual_filaments_h(sheet_r, r, zeta + 0.5 * length)
        - mutual_filaments_h(sheet_r, r, zeta - 0.5 * length)
}

/// Axial derivative of the flux of the whole stack through a coaxial loop of radius `r_m`
/// whose plane is at `zeta_m` from the stack centre, Wb/m. Requires r_m > outer radius.
pub fn flux_derivative_wb_per_m(stack: &MagnetStack, r_m: f64, zeta_m: f64) -> f64 {
    let lm = stack.magnet_length_m;
    let mut sum = 0.0;
    for (offset, sign) in stack.magnets() {
        let z = zeta_m - offset;
        let mut d = sheet_derivative(stack.outer_radius_m, lm, r_m, z);
        if stack.inner_radius_m > 0.0 {
            d -= sheet_derivative(stack.inner_radius_m, lm, r_m, z);
        }
        sum += sign * d;
    }
    stack.surface_current_a_per_m() * sum
}

/// Axial field B_z on the axis at `z_m` from the stack centre, T. Closed form for a
/// uniformly magnetised cylinder, B = (Br/2)[(z + L/2)/sqrt(R^2 + (z + L/2)^2)
/// - (z - L/2)/sqrt(R^2 + (z - L/2)^2)] (e.g. Furlani 2001), minus the bore's sheet for rings.
pub fn on_axis_field_t(stack: &MagnetStack, z_m: f64) -> f64 {
    let half = 0.5 * stack.magnet_length_m;
    let cyl = |radius: f64, z: f64| {
        (z + half) / radius.hypot(z + half) - (z - half) / radius.hypot(z - half)
    };
    let mut sum = 0.0;
    for (offset, sign) in stack.magnets() {
        let z = z_m - offset;
        let mut b = cyl(stack.outer_radius_m, z);
        if stack.inner_radius_m > 0.0 {
            b -= cyl(stack.inner_radius_m, z);
        }
        sum += sign * b;
    }
    0.5 * stack.remanence_t * sum
}
