//! Arm zero and gun energy offset from measured arm angles, on any arm-angle model.

use super::*;

/// Arm zero offset and gun energy offset from measured positions of one known beam at
/// several nominal energies.
///
/// `points` are (nominal_energy_ev, measured_arm_deg). `model_arm_deg` maps a kinetic
/// energy at the sample (eV) to the true arm angle (degrees) of the beam being tracked,
/// e.g. from [`crate::surface`]. The model fitted is
///
/// measured_arm_deg = model_arm_deg(nominal_energy_ev + ΔE) + δ0,
///
/// returning `params = [δ0 (arm zero offset, deg), ΔE (gun energy offset, eV)]`, with
/// `rms_residual` in degrees. Gauss–Newton starts from δ0 = mean(measured − model(nominal)),
/// ΔE = 0; the model's slope in energy is a central difference with a step of 0.5 % of
/// the energy (at least 0.005 eV). At most [`ARM_FIT_MAX_ITERATIONS`] iterations; it
/// stops once a step moves the fitted angles by less than 1e-3 of the residual norm
/// (or by rounding-level amounts). σ from (JᵀJ)⁻¹·SSR/(n − 2).
///
/// Errors: fewer than 3 points → `TooFewPoints`; NaN/infinite energy →
/// `NotFinite(Energy)`, arm angle or model value → `NotFinite(Angle)`; all points at
/// one energy (or a model flat in energy) → `DegenerateFit`; no convergence →
/// `NoConvergence`; any error of the model (e.g. an energy below 1 eV after the offset)
/// is returned as is.
///
/// ```
/// use matterwave_core::{beam, fit::arm_zero_and_energy_offset, math};
/// // First-order rows 2.2137 Å apart, arm at asin(λ/d); truth δ0 = 0.3°, ΔE = -2 eV.
/// let model = |e: f32| Ok(math::deg(math::asin(beam::wavelength_a(e)? / 2.2137)));
/// let mut pts = [(0.0f32, 0.0f32); 6];
/// for (i, p) in pts.iter_mut().enumerate() {
///     let e = 50.0 + 50.0 * i as f32;
///     *p = (e, model(e - 2.0).unwrap() + 0.3);
/// }
/// let f = arm_zero_and_energy_offset(model, &pts).unwrap();
/// assert!((f.params[0] - 0.3).abs() < 1e-3 && (f.params[1] + 2.0).abs() < 1e-2);
/// ```
pub fn arm_zero_and_energy_offset<F: Fn(f32) -> Result<f32>>(
    model_arm_deg: F,
    points: &[(f32, f32)],
) -> Result<Fit2> {
    arm_fit(
        |_, e| model_arm_deg(e),
        points.len(),
        |i| points.get(i).map(|&(e, a)| (0usize, e, a)),
    )
}

/// [`arm_zero_and_energy_offset`] for several beams at once.
///
/// `points` are (beam index, nominal_energy_ev, measured_arm_deg); `model_arm_deg(beam,
/// energy_ev)` gives the true arm angle of that beam (the index is the caller's own
/// numbering, passed through unchanged). One δ0 and one ΔE are shared by all beams.
///
/// ```
/// use matterwave_core::{beam, fit::arm_zero_and_energy_offset_multi, math};
/// // Orders n = 1, 2 of rows 2.2137 Å apart: arm = asin(n·λ/d).
/// let model = |n: usize, e: f32| {
///     Ok(math::deg(math::asin(n as f32 * beam::wavelength_a(e)? / 2.2137)))
/// };
/// let pts = [(1, 60.0), (1, 120.0), (2, 160.0), (2, 240.0), (1, 240.0)]
///     .map(|(n, e): (usize, f32)| (n, e, model(n, e + 1.0).unwrap() - 0.2));
/// let f = arm_zero_and_energy_offset_multi(model, &pts).unwrap();
/// assert!((f.params[0] + 0.2).abs() < 1e-3 && (f.params[1] - 1.0).abs() < 1e-2);
/// ```
pub fn arm_zero_and_energy_offset_multi<F: Fn(usize, f32) -> Result<f32>>(
    model_arm_deg: F,
    points: &[(usize, f32, f32)],
) -> Result<Fit2> {
    arm_fit(model_arm_deg, points.len(), |i| points.get(i).copied())
}

pub(super) fn arm_fit<F, P>(model: F, n: usize, point: P) -> Result<Fit2>
where
    F: Fn(usize, f32) -> Result<f32>,
    P: Fn(usize) -> Option<(usize, f32, f32)>,
{
    let points = count_u16(n)?;
    if n < 3 {
        return Err(Error::TooFewPoints);
    }
    let eval = |b: usize, e: f32| -> Result<f32> { finite(model(b, e)?, Quantity::Angle) };
    let mut y2 = 0.0f32;
    let mut sum_r = 0.0f32;
    for i in 0..n {
        let (b, e, y) = point(i).ok_or(Error::TooFewPoints)?;
        finite(e, Quantity::Energy)?;
        finite(y, Quantity::Angle)?;
        y2 += y * y;
        sum_r += y - eval(b, e)?;
    }
    let start = [sum_r / n as f32, 0.0];
    let (p, lsq, iterations) =
        gauss_newton2(n, start, math::sqrt(y2), ARM_FIT_MAX_ITERATIONS, |i, p| {
            let (b, e, y) = point(i).ok_or(Error::TooFewPoints)?;
            let ee = e + p[1];
            let f = eval(b, ee)?;
            let step = (DERIV_REL_STEP * ee.abs()).max(5e-3);
            let (ep, em) = (ee + step, ee - step);
            let slope = (eval(b, ep)? - eval(b, em)?) / (ep - em);
            Ok(([1.0, slope], y - f - p[0]))
        })?;
    Ok(Fit2 {
        params: p,
        sigma: [lsq.sigma(0), lsq.sigma(1)],
        rms_residual: lsq.rms(),
        points,
        iterations,
    })
}
