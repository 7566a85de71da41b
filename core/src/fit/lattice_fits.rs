//! Lattice fits: row spacing from exit angles, inner potential and layer spacing from
//! I-V peak energies.

use super::*;

// ---------------------------------------------------------------------------------------
// Row spacing.

pub(super) fn check_order(n: i32) -> Result<i32> {
    if n > MAX_ORDER {
        Err(Error::TooHigh(Quantity::Index))
    } else if n < -MAX_ORDER {
        Err(Error::TooLow(Quantity::Index))
    } else {
        Ok(n)
    }
}

/// Row spacing d (Å) from exit angles of in-plane beams at normal incidence.
///
/// `points` are (energy_ev, order n, exit_deg): the beam of order n leaves at
/// sin θ = n·λ(E)/d (λ from [`crate::beam::wavelength_a`], relativistic). The fit is
/// least squares for 1/d through the origin, each row weighted by 1/cos θ so that the
/// residuals are angles; `value` is d in Å with its σ (propagated from σ(1/d)), and
/// `rms_residual` is the rms exit-angle residual in degrees. Negative orders with
/// negative angles (beams on the other side) are fine; order 0 carries no information.
///
/// Errors: fewer than 2 points → `TooFewPoints`; bad energy → the [`beam`] error;
/// |n| > [`MAX_ORDER`] → `TooHigh`/`TooLow(Index)`; exit angle NaN/infinite →
/// `NotFinite(Angle)`, |exit| ≥ 90° → `TooHigh`/`TooLow(Angle)`; all orders 0, a
/// negative fitted 1/d, or a d or σ beyond the f32 range → `DegenerateFit`.
///
/// ```
/// use matterwave_core::{beam, fit::row_spacing, math};
/// let d = 2.5562; // Cu(100) rows, a/√2 with a = 3.615 Å.
/// let pts = [(60.0f32, 1), (150.0, 1), (150.0, 2), (250.0, 2)].map(|(e, n)| {
///     (e, n, math::deg(math::asin(n as f32 * beam::wavelength_a(e).unwrap() / d)))
/// });
/// let f = row_spacing(&pts).unwrap();
/// assert!((f.value - d).abs() < 1e-4);
/// ```
pub fn row_spacing(points: &[(f32, i32, f32)]) -> Result<Fit1> {
    let count = count_u16(points.len())?;
    if points.len() < 2 {
        return Err(Error::TooFewPoints);
    }
    let mut lsq = Lsq::<1>::new();
    for &(e, n, exit) in points {
        let lambda = beam::wavelength_a(e)?;
        let n = check_order(n)?;
        let exit = finite(exit, Quantity::Angle)?;
        if exit >= 90.0 {
            return Err(Error::TooHigh(Quantity::Angle));
        }
        if exit <= -90.0 {
            return Err(Error::TooLow(Quantity::Angle));
        }
        let (s, c) = math::sin_cos_deg(exit);
        let c = c.max(1e-3);
        lsq.add([n as f32 * lambda / c], s / c);
    }
    let q = lsq.solve()?[0];
    if q.is_nan() || q <= 0.0 {
        return Err(Error::DegenerateFit);
    }
    let sigma_q = lsq.sigma(0);
    // Angle residuals in degrees, exactly.
    let mut ss = 0.0f32;
    for &(e, n, exit) in points {
        let lambda = beam::wavelength_a(e)?;
        let pred = math::deg(math::asin_clamped(n as f32 * lambda * q));
        let r = exit - pred;
        ss += r * r;
    }
    // d and σ(d) = σ(q)/q²; a q so small that either leaves the f32 range (exit angles
    // of ~1e-35° give d ~ 1e36 Å) is no fit.
    let value = 1.0 / q;
    let sigma = sigma_q / q / q;
    if !(value.is_finite() && sigma.is_finite()) {
        return Err(Error::DegenerateFit);
    }
    Ok(Fit1 {
        value,
        sigma,
        rms_residual: math::sqrt(ss / points.len() as f32),
        points: count,
    })
}

// ---------------------------------------------------------------------------------------
// Inner potential and layer spacing.

/// Inner potential V0 (eV) and layer spacing d (Å) from the energies of specular I-V
/// peaks at normal incidence, by order.
///
/// `points` are (order n ≥ 1, peak energy outside in eV). Kinematically the order-n peak
/// sits where the wavelength inside is 2d/n, i.e. at wavenumber 1/λ = n/(2d):
///
/// E_n = E_in(n/(2d)) − V0,
///
/// with E_in(k) the relativistic kinetic energy of wavenumber k
/// ([`crate::beam::energy_from_wavenumber_ev`]). **Which spacing:** d is
/// the spacing the orders count. Orders numbered as [`crate::surface::Face::iv_peaks`]
/// numbers them (n = ⌈G⊥·period⌉, [`crate::surface::IvPeak::order`]) give the period
/// along the normal ([`crate::surface::Face::layer_spacing_a`]: Ru(0001) c = 4.28 Å,
/// orders 2, 4, 6, …); Bragg orders 1, 2, 3, … of evenly spaced atomic planes give
/// their interlayer spacing ([`crate::surface::AtomicPlanes`]: Ru(0001) c/2 = 2.14 Å).
/// The two agree when the face has one atomic plane per period (fcc(100), bcc(110)).
/// The fit first solves the
/// non-relativistic form E_n = A·n² − V0, A = (hc)²/(8·mc²·d²), by linear least
/// squares, then refines (V0, d) on the relativistic relation by Gauss–Newton (analytic
/// derivatives; it normally settles in two or three steps, at most 10). σ from
/// (JᵀJ)⁻¹·SSR/(n − 2); `rms_residual_ev` is the rms peak-energy residual.
///
/// Errors: fewer than 3 points → `TooFewPoints`; order below 1 → `TooLow(Index)`, above
/// [`MAX_ORDER`] → `TooHigh(Index)`; energy outside 1 eV–300 keV or NaN → the
/// [`beam`] error; a single order, or energies not rising with order →
/// `DegenerateFit`; no convergence → `NoConvergence`.
///
/// ```
/// use matterwave_core::fit::inner_potential_and_spacing;
/// let (d, v0) = (1.762f32, 11.0f32); // Ni(100): a/2 with a = 3.524 Å.
/// // The order-n peak, in f64: E = √((hc·n/2d)² + (mc²)²) − mc² − V0 (CODATA 2018).
/// let (hc, mc2) = (12398.419843320f64, 510998.95f64);
/// let peak = |n: i32| {
///     let pc = hc * n as f64 / (2.0 * d as f64);
///     ((pc * pc + mc2 * mc2).sqrt() - mc2 - v0 as f64) as f32
/// };
/// let pts = [2, 3, 4, 5].map(|n| (n, peak(n)));
/// let f = inner_potential_and_spacing(&pts).unwrap();
/// assert!((f.inner_potential_ev - v0).abs() < 0.01);
/// assert!((f.layer_spacing_a - d).abs() < 1e-4);
/// ```
pub fn inner_potential_and_spacing(points: &[(i32, f32)]) -> Result<IvFit> {
    let count = count_u16(points.len())?;
    if points.len() < 3 {
        return Err(Error::TooFewPoints);
    }
    let first_order = points.first().map_or(0, |p| p.0);
    let mut distinct = false;
    let mut lin = Lsq::<2>::new();
    let mut y2 = 0.0f32;
    for &(n, e) in points {
        if n < 1 {
            return Err(Error::TooLow(Quantity::Index));
        }
        let n = check_order(n)?;
        let e = beam::check_energy(e)?;
        distinct |= n != first_order;
        let n2 = (n * n) as f32;
        lin.add([n2, -1.0], e);
        y2 += e * e;
    }
    if !distinct {
        return Err(Error::DegenerateFit);
    }
    let [a, v0_lin] = lin.solve()?;
    if a.is_nan() || a <= 0.0 {
        return Err(Error::DegenerateFit);
    }
    // A = (hc)²/(8 mc² d²) = (hc)²/(4·(2mc²)·d²).
    let d_lin = HC_EV_A / math::sqrt(4.0 * TWO_ME_C2_EV * a);
    let (p, lsq, _) = gauss_newton2(points.len(), [v0_lin, d_lin], math::sqrt(y2), 10, |i, p| {
        let (n, e) = points.get(i).copied().ok_or(Error::TooFewPoints)?;
        let (v0, d) = (p[0], p[1]);
        if d.is_nan() || d <= 0.0 {
            return Err(Error::NoConvergence);
        }
        let k = n as f32 / (2.0 * d);
        let e_in = beam::energy_from_wavenumber_ev(k);
        // (E + mc²)² = (hc·k)² + (mc²)²  ⇒  dE/dk = (hc)²·k/(E + mc²); dk/dd = −k/d.
        let de_dk = HC_EV_A * HC_EV_A * k / (e_in + ME_C2_EV);
        Ok(([-1.0, -de_dk * k / d], e - (e_in - v0)))
    })?;
    if p[1].is_nan() || p[1] <= 0.0 {
        return Err(Error::NoConvergence);
    }
    Ok(IvFit {
        inner_potential_ev: p[0],
        inner_potential_sigma_ev: lsq.sigma(0),
        layer_spacing_a: p[1],
        layer_spacing_sigma_a: lsq.sigma(1),
        rms_residual_ev: lsq.rms(),
        points: count,
    })
}
