//! Wavelength, velocity and their inverse, and Bragg angles and rings, in f64.

use super::*;

/// Relativistic wavelength λ = hc / sqrt(E (E + 2 m_e c²)), in Å, for kinetic energy
/// `energy_ev` (eV). Non-positive energies give infinity or NaN.
pub fn wavelength_a(energy_ev: f64) -> f64 {
    HC_EV_A / (energy_ev * (energy_ev + 2.0 * MC2_EV)).sqrt()
}

/// Non-relativistic wavelength hc / sqrt(2 m_e c² E), in Å (for comparison only).
pub fn wavelength_nonrel_a(energy_ev: f64) -> f64 {
    HC_EV_A / (2.0 * MC2_EV * energy_ev).sqrt()
}

/// Electron speed in m/s from γ = 1 + E/m_e c², v = c·sqrt(1 − 1/γ²), evaluated as
/// c·sqrt(t(2 + t))/(1 + t) with t = E/m_e c² to keep precision at low energy.
pub fn velocity_m_s(energy_ev: f64) -> f64 {
    let t = energy_ev / MC2_EV;
    let gamma = 1.0 + t;
    C_M_S * (t * (2.0 + t)).sqrt() / gamma
}

/// Kinetic energy (eV) of an electron of wavelength `lambda_a` (Å): the inverse of
/// [`wavelength_a`]. With p c = hc/λ, E = sqrt((m c²)² + (pc)²) − m c², evaluated
/// as (pc)² / (sqrt((m c²)² + (pc)²) + m c²) to avoid cancellation.
pub fn energy_from_wavelength_ev(lambda_a: f64) -> f64 {
    let pc = HC_EV_A / lambda_a;
    pc * pc / ((MC2_EV * MC2_EV + pc * pc).sqrt() + MC2_EV)
}

/// Bragg angle θ_B (deg) of order `order` for spacing `d_a` (Å) at `energy_ev`:
/// asin(nλ/2d). `None` when nλ > 2d, for order 0 or for a non-positive d.
pub fn bragg_deg(d_a: f64, energy_ev: f64, order: u32) -> Option<f64> {
    if order == 0 || d_a.is_nan() || d_a <= 0.0 {
        return None;
    }
    let s = order as f64 * wavelength_a(energy_ev) / (2.0 * d_a);
    if !(s.is_finite() && s <= 1.0) {
        return None;
    }
    Some(s.asin().to_degrees())
}

/// First-order transmission ring radius (mm) on a flat screen at `screen_mm`:
/// L·tan 2θ_B. `None` when there is no Bragg angle or 2θ_B ≥ 90°.
pub fn ring_radius_mm(d_a: f64, energy_ev: f64, screen_mm: f64) -> Option<f64> {
    let two_theta = 2.0 * bragg_deg(d_a, energy_ev, 1)?;
    if two_theta >= 90.0 {
        return None;
    }
    Some(screen_mm * two_theta.to_radians().tan())
}
