//! Calibration fits and peak centring on fixed-size sample sets (fit rules).
//!
//! Everything works on caller-owned slices and fixed-size arrays: no allocation, f32
//! throughout, and every failure is an [`Error`] value:
//!
//! * NaN or infinite inputs → [`Error::NotFinite`] (angles [`Quantity::Angle`], detector
//!   currents [`Quantity::Count`], energies [`Quantity::Energy`]);
//! * too few usable points → [`Error::TooFewPoints`];
//! * points that do not fix the parameters (all at one energy, one order, flat data,
//!   maximum at the end of a scan) → [`Error::DegenerateFit`];
//! * an iteration that does not settle → [`Error::NoConvergence`];
//! * more than 65 535 points → [`Error::TooHigh`]`(`[`Quantity::Count`]`)`.
//!
//! Least squares is solved by Givens rotations, one row at a time (the normal equations
//! are never formed, so the condition number is not squared). A parameter is declared
//! undetermined when its column of the design matrix lies within a relative 1e-5 of the
//! span of the columns before it. Parameter uncertainties are one standard deviation
//! from the covariance s²·(JᵀJ)⁻¹ with s² = SSR/(n − p): they describe the scatter of
//! the data about the model, not systematic errors in the model itself.
//!
//! | function | model | parameters |
//! |---|---|---|
//! | [`centroid`] | weighted mean of (current − threshold) | peak angle |
//! | [`parabola_log`] | ln I = a + b·θ + c·θ² (Gaussian peak) | peak angle, FWHM |
//! | [`arm_zero_and_energy_offset`] | δ = model(E + ΔE) + δ0 | arm zero δ0, gun offset ΔE |
//! | [`row_spacing`] | sin θ = n·λ(E)/d | row spacing d |
//! | [`inner_potential_and_spacing`] | E_n = E_in(n/2d) − V0 | V0, layer spacing d |
//!
//! ```
//! use matterwave_core::fit::{parabola_log, Sample};
//! // A Gaussian peak at 31.37° with σ = 0.4°, sampled every 0.2°.
//! let mut s = [Sample { angle_deg: 0.0, current: 0.0 }; 21];
//! for (i, p) in s.iter_mut().enumerate() {
//!     let a = 29.4 + 0.2 * i as f32;
//!     *p = Sample { angle_deg: a, current: 500.0 * (-(a - 31.37f32).powi(2) / 0.32).exp() };
//! }
//! let c = parabola_log(&s).unwrap();
//! assert!((c.angle_deg - 31.37).abs() < 1e-3);
//! assert!((c.fwhm_deg - 2.3548 * 0.4).abs() < 2e-3);
//! ```

mod in_plane;
pub use in_plane::{arm_zero_in_plane, InPlaneArmFit};

use crate::beam;
use crate::constants::{HC_EV_A, ME_C2_EV, TWO_ME_C2_EV};
use crate::error::{finite, Error, Quantity, Result};
use crate::math;

/// Largest |order| accepted by [`row_spacing`] and [`inner_potential_and_spacing`].
pub const MAX_ORDER: i32 = 100;

/// Most points [`parabola_log`] uses around the maximum.
pub const PARABOLA_MAX_POINTS: usize = 9;

/// [`parabola_log`] extends its run of points while the current stays at or above this
/// fraction of the maximum sample.
pub const PARABOLA_FRACTION: f32 = 0.25;

/// Most Gauss–Newton iterations [`arm_zero_and_energy_offset`] takes.
pub const ARM_FIT_MAX_ITERATIONS: u8 = 30;

/// Full width at half maximum of a Gaussian per standard deviation, 2·√(2·ln 2).
const FWHM_PER_SIGMA: f32 = 2.354_82;

/// Relative tolerance below which a least-squares column counts as dependent.
const DEGENERATE_TOL: f32 = 1e-5;

/// Central-difference step for the model derivative, relative to the energy.
const DERIV_REL_STEP: f32 = 5e-3;

/// One detector reading: arm (or scan) angle and the current there.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Sample {
    /// Scan angle, degrees.
    pub angle_deg: f32,
    /// Detector current. [`centroid`]'s uncertainty treats it as detected electrons
    /// (counts) per dwell; any unit works for the centre itself.
    pub current: f32,
}

/// A centred peak.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct PeakCentre {
    /// Peak centre, degrees.
    pub angle_deg: f32,
    /// One-standard-deviation uncertainty of the centre, degrees (how it is estimated
    /// depends on the method; `f32::INFINITY` when the data cannot tell).
    pub uncertainty_deg: f32,
    /// Peak current, in the unit of the samples.
    pub peak_current: f32,
    /// Full width at half maximum, degrees (Gaussian-equivalent).
    pub fwhm_deg: f32,
    /// Number of samples the estimate used.
    pub points_used: u16,
}

/// Result of a two-parameter fit.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Fit2 {
    /// Fitted parameters; their meaning and units are given by the fitting function.
    pub params: [f32; 2],
    /// One-standard-deviation uncertainties of `params`, same units.
    pub sigma: [f32; 2],
    /// Root-mean-square residual √(SSR/n), in the unit of the measured values.
    pub rms_residual: f32,
    /// Number of points fitted.
    pub points: u16,
    /// Gauss–Newton iterations taken.
    pub iterations: u8,
}

/// Result of a one-parameter fit.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Fit1 {
    /// Fitted value; unit given by the fitting function.
    pub value: f32,
    /// One-standard-deviation uncertainty of `value`, same unit.
    pub sigma: f32,
    /// Root-mean-square residual √(SSR/n), in the unit of the measured values.
    pub rms_residual: f32,
    /// Number of points fitted.
    pub points: u16,
}

/// Inner potential and layer spacing from specular I-V peak energies.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct IvFit {
    /// Inner potential V0, eV.
    pub inner_potential_ev: f32,
    /// One-standard-deviation uncertainty of V0, eV.
    pub inner_potential_sigma_ev: f32,
    /// Layer spacing d, Å.
    pub layer_spacing_a: f32,
    /// One-standard-deviation uncertainty of d, Å.
    pub layer_spacing_sigma_a: f32,
    /// Root-mean-square residual of the peak energies, eV.
    pub rms_residual_ev: f32,
    /// Number of peaks fitted.
    pub points: u16,
}

// ---------------------------------------------------------------------------------------
// Least squares by Givens rotations.

/// √(x² + y²) without overflow.
fn hypot(x: f32, y: f32) -> f32 {
    let m = x.abs().max(y.abs());
    if m == 0.0 || !m.is_finite() {
        return m;
    }
    let (a, b) = (x / m, y / m);
    m * math::sqrt(a * a + b * b)
}

/// Incremental least squares for `N` parameters: rows (a, b) of a·p ≈ b are rotated into
/// an upper-triangular R and z = Qᵀb; `rss` collects the part of b outside the column
/// space, i.e. the residual sum of squares at the solution.
#[derive(Clone, Copy, Debug)]
struct Lsq<const N: usize> {
    r: [[f32; N]; N],
    z: [f32; N],
    rss: f32,
    rows: usize,
}

// Every index below is a loop variable over 0..N (or 0..=k with k < N) into arrays of
// length N, so none can go out of bounds.
#[allow(clippy::indexing_slicing)]
impl<const N: usize> Lsq<N> {
    fn new() -> Self {
        Lsq {
            r: [[0.0; N]; N],
            z: [0.0; N],
            rss: 0.0,
            rows: 0,
        }
    }

    /// Adds the row a·p ≈ b.
    #[allow(clippy::needless_range_loop)]
    fn add(&mut self, mut a: [f32; N], mut b: f32) {
        for k in 0..N {
            let ak = a[k];
            if ak == 0.0 {
                continue;
            }
            let rkk = self.r[k][k];
            let h = hypot(rkk, ak);
            let (c, s) = (rkk / h, ak / h);
            for j in k..N {
                let rkj = self.r[k][j];
                self.r[k][j] = c * rkj + s * a[j];
                a[j] = c * a[j] - s * rkj;
            }
            let zk = self.z[k];
            self.z[k] = c * zk + s * b;
            b = c * b - s * zk;
        }
        self.rss += b * b;
        self.rows += 1;
    }

    /// `Err(DegenerateFit)` unless every column is independent of those before it.
    #[allow(clippy::needless_range_loop)]
    fn check(&self) -> Result<()> {
        for k in 0..N {
            let mut col2 = 0.0f32;
            for i in 0..=k {
                col2 += self.r[i][k] * self.r[i][k];
            }
            let rkk = self.r[k][k];
            if !(rkk.is_finite() && rkk > DEGENERATE_TOL * math::sqrt(col2)) {
                return Err(Error::DegenerateFit);
            }
        }
        Ok(())
    }

    /// Least-squares solution.
    #[allow(clippy::needless_range_loop)]
    fn solve(&self) -> Result<[f32; N]> {
        self.check()?;
        let mut x = [0.0f32; N];
        for k in (0..N).rev() {
            let mut s = self.z[k];
            for j in k + 1..N {
                s -= self.r[k][j] * x[j];
            }
            x[k] = s / self.r[k][k];
        }
        if x.iter().all(|v| v.is_finite()) {
            Ok(x)
        } else {
            Err(Error::DegenerateFit)
        }
    }

    /// gᵀ(RᵀR)⁻¹g, i.e. the variance of g·p per unit s². Call after `check`.
    #[allow(clippy::needless_range_loop)]
    fn quad_inv(&self, g: [f32; N]) -> f32 {
        // Solve Rᵀy = g (forward substitution); gᵀ(RᵀR)⁻¹g = |y|².
        let mut y = [0.0f32; N];
        let mut sum = 0.0f32;
        for k in 0..N {
            let mut s = g[k];
            for i in 0..k {
                s -= self.r[i][k] * y[i];
            }
            y[k] = s / self.r[k][k];
            sum += y[k] * y[k];
        }
        sum
    }

    /// Residual variance estimate s² = SSR/(n − N), or infinity without spare points.
    fn s2(&self) -> f32 {
        if self.rows > N {
            self.rss / (self.rows - N) as f32
        } else {
            f32::INFINITY
        }
    }

    /// One-standard-deviation uncertainty of parameter `k`.
    fn sigma(&self, k: usize) -> f32 {
        let mut g = [0.0f32; N];
        if let Some(v) = g.get_mut(k) {
            *v = 1.0;
        }
        math::sqrt(self.s2() * self.quad_inv(g))
    }

    /// √(SSR/n).
    fn rms(&self) -> f32 {
        if self.rows == 0 {
            0.0
        } else {
            math::sqrt(self.rss / self.rows as f32)
        }
    }

    /// |z|: how far the last solve moved the fitted values.
    fn z_norm(&self) -> f32 {
        let mut s = 0.0f32;
        for v in self.z.iter() {
            s += v * v;
        }
        math::sqrt(s)
    }
}

/// Gauss–Newton for two parameters. `row(i, p)` gives the Jacobian row of the model
/// prediction for point i and the residual (measured − predicted) at parameters p.
/// Stops when a step moves the fitted values by less than 1e-3 of the residual norm plus
/// a rounding floor relative to `y_norm` (the norm of the measured values).
fn gauss_newton2<R>(
    n: usize,
    start: [f32; 2],
    y_norm: f32,
    max_iterations: u8,
    row: R,
) -> Result<([f32; 2], Lsq<2>, u8)>
where
    R: Fn(usize, [f32; 2]) -> Result<([f32; 2], f32)>,
{
    let mut p = start;
    let floor = 16.0 * f32::EPSILON * y_norm;
    // Sum of squared residuals at `q`, or None where the model cannot be evaluated.
    let ssr = |q: [f32; 2]| -> Option<f32> {
        let mut sum = 0.0f32;
        for i in 0..n {
            let (_, r) = row(i, q).ok()?;
            sum += r * r;
        }
        sum.is_finite().then_some(sum)
    };
    for it in 1..=max_iterations {
        let mut lsq = Lsq::<2>::new();
        let mut here = 0.0f32;
        for i in 0..n {
            let (j, r) = row(i, p)?;
            if !(r.is_finite() && j[0].is_finite() && j[1].is_finite()) {
                return Err(Error::NoConvergence);
            }
            lsq.add(j, r);
            here += r * r;
        }
        let step = lsq.solve()?;
        if lsq.z_norm() <= 1e-3 * math::sqrt(lsq.rss) + floor {
            return Ok(([p[0] + step[0], p[1] + step[1]], lsq, it));
        }
        // Damped step: halve it (at most 12 times) until the model can be evaluated
        // everywhere and the residuals do not grow, so a far-off start near a beam's
        // emergence (where the model is steep and ends) cannot throw the fit away.
        // The σ then come from the Jacobian at the accepted point.
        let mut t = 1.0f32;
        let mut next = None;
        for _ in 0..12 {
            let q = [p[0] + t * step[0], p[1] + t * step[1]];
            if q[0].is_finite() && q[1].is_finite() && ssr(q).is_some_and(|v| v <= here) {
                next = Some(q);
                break;
            }
            t *= 0.5;
        }
        match next {
            Some(q) => p = q,
            // No shorter step lowers the residuals either: `p` is the minimum to f32
            // precision (the step is rounding noise).
            None => return Ok((p, lsq, it)),
        }
    }
    Err(Error::NoConvergence)
}

/// The point count as u16, or `TooHigh(Count)`.
fn count_u16(n: usize) -> Result<u16> {
    u16::try_from(n).map_err(|_| Error::TooHigh(Quantity::Count))
}

// ---------------------------------------------------------------------------------------
// Peak centring.

/// Checks every sample is finite and the count fits a u16.
fn check_samples(samples: &[Sample]) -> Result<()> {
    count_u16(samples.len())?;
    for s in samples {
        finite(s.angle_deg, Quantity::Angle)?;
        finite(s.current, Quantity::Count)?;
    }
    Ok(())
}

/// Index of the largest current (the first of equal ones).
fn argmax(samples: &[Sample]) -> Option<usize> {
    let mut best: Option<(usize, f32)> = None;
    for (i, s) in samples.iter().enumerate() {
        match best {
            Some((_, c)) if s.current <= c => {}
            _ => best = Some((i, s.current)),
        }
    }
    best.map(|(i, _)| i)
}

/// (angle, index) lexicographic order: a total order on finite samples.
fn key_lt(a: (f32, usize), b: (f32, usize)) -> bool {
    a.0 < b.0 || (a.0 == b.0 && a.1 < b.1)
}

/// The sample just above (`up`) or below `cur` in (angle, index) order.
fn neighbour(samples: &[Sample], cur: usize, up: bool) -> Option<usize> {
    let key = (samples.get(cur)?.angle_deg, cur);
    let mut best: Option<(f32, usize)> = None;
    for (j, s) in samples.iter().enumerate() {
        let k = (s.angle_deg, j);
        let beyond = if up { key_lt(key, k) } else { key_lt(k, key) };
        if !beyond {
            continue;
        }
        let better = match best {
            None => true,
            Some(b) => {
                if up {
                    key_lt(k, b)
                } else {
                    key_lt(b, k)
                }
            }
        };
        if better {
            best = Some(k);
        }
    }
    best.map(|(_, j)| j)
}

/// Current-weighted centroid of the samples above `threshold`.
///
/// Each sample with `current > threshold` gets the weight w = current − threshold; the
/// centre is Σw·θ/Σw. The samples need not be sorted, and may repeat angles.
///
/// * `uncertainty_deg` assumes counting (Poisson) statistics, the current being the
///   number of detected electrons per dwell, and an exact threshold:
///   σ² = Σ current·(θ − θ̄)² / (Σw)². If one unit of current stands for g detected
///   electrons, divide the uncertainty by √g.
/// * `fwhm_deg` is the Gaussian-equivalent width 2√(2 ln 2)·√(Σw(θ − θ̄)²/Σw) of the
///   thresholded profile: it reads low when the threshold is high.
/// * `peak_current` is the largest sample current.
///
/// The threshold should sit at the background level; the centroid is biased towards the
/// middle of the window when the threshold cuts an asymmetric slice of the peak.
///
/// Errors: NaN/infinite angle → `NotFinite(Angle)`, current or threshold →
/// `NotFinite(Count)`; fewer than 3 samples above the threshold → `TooFewPoints`; flat
/// data or the largest current at the lowest or highest angle of the scan (the peak is
/// not inside it) → `DegenerateFit`.
///
/// ```
/// use matterwave_core::fit::{centroid, Sample};
/// let s = [(10.0, 2.0), (10.5, 6.0), (11.0, 12.0), (11.5, 6.0), (12.0, 2.0)]
///     .map(|(a, c)| Sample { angle_deg: a, current: c });
/// let c = centroid(&s, 1.0).unwrap();
/// assert!((c.angle_deg - 11.0).abs() < 1e-6);
/// assert_eq!(c.points_used, 5);
/// ```
pub fn centroid(samples: &[Sample], threshold: f32) -> Result<PeakCentre> {
    check_samples(samples)?;
    let t = finite(threshold, Quantity::Count)?;
    let m = argmax(samples).ok_or(Error::TooFewPoints)?;
    let top = samples.get(m).copied().ok_or(Error::TooFewPoints)?;
    let used = samples.iter().filter(|s| s.current > t).count();
    if used < 3 {
        return Err(Error::TooFewPoints);
    }
    let mut lo = top.angle_deg;
    let mut hi = top.angle_deg;
    let mut cmin = top.current;
    let mut scale = t.abs();
    for s in samples {
        lo = lo.min(s.angle_deg);
        hi = hi.max(s.angle_deg);
        cmin = cmin.min(s.current);
        scale = scale.max(s.current.abs());
    }
    if cmin == top.current || top.angle_deg <= lo || top.angle_deg >= hi {
        return Err(Error::DegenerateFit);
    }
    // Work in units of `scale` (no overflow) and angles relative to the maximum.
    let ts = t / scale;
    let x0 = top.angle_deg;
    let mut sw = 0.0f32;
    let mut swd = 0.0f32;
    for s in samples.iter().filter(|s| s.current > t) {
        let w = s.current / scale - ts;
        sw += w;
        swd += w * (s.angle_deg - x0);
    }
    if sw.is_nan() || sw <= 0.0 {
        return Err(Error::DegenerateFit);
    }
    let dbar = swd / sw;
    let mut sw2 = 0.0f32;
    let mut sc2 = 0.0f32;
    for s in samples.iter().filter(|s| s.current > t) {
        let w = s.current / scale - ts;
        let d = s.angle_deg - x0 - dbar;
        sw2 += w * d * d;
        sc2 += (s.current / scale).max(0.0) * d * d;
    }
    let angle_deg = x0 + dbar;
    let uncertainty_deg = math::sqrt(sc2) / (sw * math::sqrt(scale));
    let fwhm_deg = FWHM_PER_SIGMA * math::sqrt(sw2 / sw);
    if !(angle_deg.is_finite() && uncertainty_deg.is_finite() && fwhm_deg.is_finite()) {
        return Err(Error::DegenerateFit);
    }
    Ok(PeakCentre {
        angle_deg,
        uncertainty_deg,
        peak_current: top.current,
        fwhm_deg,
        points_used: count_u16(used)?,
    })
}

/// Peak centre from a parabola fitted to ln(current) around the largest sample: exact
/// for a Gaussian peak.
///
/// Points: the largest sample, its immediate neighbours in angle order, and further
/// neighbours outwards while their current is at least [`PARABOLA_FRACTION`] of the
/// maximum, the higher side first, up to [`PARABOLA_MAX_POINTS`] in all. Samples with
/// non-positive current end the run on their side. The samples need not be sorted
/// (neighbours are found by angle, ties by position in the slice).
///
/// The fit ln I = a + b·θ + c·θ² is weighted by I² (constant additive noise on the
/// current becomes noise ∝ 1/I on ln I). The centre is −b/2c; the FWHM is that of the
/// Gaussian with curvature c, 2√(2 ln 2)·√(−1/2c); the peak current is the fitted
/// value at the centre.
///
/// `uncertainty_deg` propagates the least-squares covariance s²·(XᵀWX)⁻¹, with
/// s² = weighted SSR/(n − 3), to the centre. With exactly three points the parabola
/// passes through all of them, nothing is left to estimate the noise, and the
/// uncertainty is `f32::INFINITY`.
///
/// Errors: NaN/infinite angle → `NotFinite(Angle)`, current → `NotFinite(Count)`; no
/// positive current, or fewer than 3 usable points → `TooFewPoints`; the maximum at the
/// lowest or highest angle, flat or upward-curved data, or a vertex outside the points
/// used → `DegenerateFit`.
///
/// ```
/// use matterwave_core::fit::{parabola_log, Sample};
/// // exp(-(θ-1.25)²/2) sampled at 0, 1, 2, 3 degrees.
/// let s = [0.0f32, 1.0, 2.0, 3.0]
///     .map(|a| Sample { angle_deg: a, current: (-(a - 1.25) * (a - 1.25) / 2.0).exp() });
/// let c = parabola_log(&s).unwrap();
/// assert!((c.angle_deg - 1.25).abs() < 1e-5);
/// ```
pub fn parabola_log(samples: &[Sample]) -> Result<PeakCentre> {
    check_samples(samples)?;
    let m = argmax(samples).ok_or(Error::TooFewPoints)?;
    let top = samples.get(m).copied().ok_or(Error::TooFewPoints)?;
    let cmax = top.current;
    if cmax.is_nan() || cmax <= 0.0 {
        return Err(Error::TooFewPoints);
    }
    if samples.len() < 3 {
        return Err(Error::TooFewPoints);
    }
    if neighbour(samples, m, false).is_none() || neighbour(samples, m, true).is_none() {
        return Err(Error::DegenerateFit);
    }
    let cut = cmax * PARABOLA_FRACTION;
    let mut run = [m; PARABOLA_MAX_POINTS];
    let mut count = 1usize;
    let (mut lo, mut hi) = (m, m);
    let (mut lo_open, mut hi_open) = (true, true);
    // A candidate is accepted when positive and either an immediate neighbour of the
    // maximum or at least `cut`; a rejected candidate closes its side.
    while count < PARABOLA_MAX_POINTS && (lo_open || hi_open) {
        let left = if lo_open {
            neighbour(samples, lo, false)
                .and_then(|j| samples.get(j).map(|s| (j, s.current)))
                .filter(|&(_, c)| c > 0.0 && (lo == m || c >= cut))
        } else {
            None
        };
        let right = if hi_open {
            neighbour(samples, hi, true)
                .and_then(|j| samples.get(j).map(|s| (j, s.current)))
                .filter(|&(_, c)| c > 0.0 && (hi == m || c >= cut))
        } else {
            None
        };
        if left.is_none() {
            lo_open = false;
        }
        if right.is_none() {
            hi_open = false;
        }
        let take_left = match (left, right) {
            (Some((_, cl)), Some((_, cr))) => cl >= cr,
            (Some(_), None) => true,
            (None, Some(_)) => false,
            (None, None) => break,
        };
        let next = if take_left {
            left.map(|(j, _)| j)
        } else {
            right.map(|(j, _)| j)
        };
        let Some(j) = next else { break };
        if let Some(slot) = run.get_mut(count) {
            *slot = j;
            count += 1;
        }
        if take_left {
            lo = j;
        } else {
            hi = j;
        }
    }
    if count < 3 {
        return Err(Error::TooFewPoints);
    }
    let x0 = top.angle_deg;
    let x_lo = samples.get(lo).map_or(x0, |s| s.angle_deg);
    let x_hi = samples.get(hi).map_or(x0, |s| s.angle_deg);
    let h = (x0 - x_lo).max(x_hi - x0);
    if !(h > 0.0 && h.is_finite()) {
        return Err(Error::DegenerateFit);
    }
    let mut lsq = Lsq::<3>::new();
    for &j in run.iter().take(count) {
        let s = samples.get(j).copied().ok_or(Error::TooFewPoints)?;
        let rel = s.current / cmax;
        let u = (s.angle_deg - x0) / h;
        let y = math::ln(rel);
        // Weight I²: multiply the row by I/Imax.
        lsq.add([rel, rel * u, rel * u * u], rel * y);
    }
    let p = lsq.solve()?;
    let (a0, a1, a2) = (p[0], p[1], p[2]);
    if a2.is_nan() || a2 >= 0.0 {
        return Err(Error::DegenerateFit);
    }
    let u_star = -a1 / (2.0 * a2);
    let angle_deg = x0 + h * u_star;
    if !(angle_deg >= x_lo && angle_deg <= x_hi) {
        return Err(Error::DegenerateFit);
    }
    let grad = [0.0, -h / (2.0 * a2), h * a1 / (2.0 * a2 * a2)];
    let uncertainty_deg = math::sqrt(lsq.s2() * lsq.quad_inv(grad));
    let sigma_deg = h * math::sqrt(-1.0 / (2.0 * a2));
    let y_peak = a0 - a1 * a1 / (4.0 * a2);
    let peak = cmax * math::exp(y_peak);
    let peak_current = if peak.is_finite() { peak } else { f32::MAX };
    let fwhm_deg = FWHM_PER_SIGMA * sigma_deg;
    if !fwhm_deg.is_finite() || uncertainty_deg.is_nan() {
        return Err(Error::DegenerateFit);
    }
    Ok(PeakCentre {
        angle_deg,
        uncertainty_deg,
        peak_current,
        fwhm_deg,
        points_used: count_u16(count)?,
    })
}

// ---------------------------------------------------------------------------------------
// Arm zero and gun energy offset.

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

fn arm_fit<F, P>(model: F, n: usize, point: P) -> Result<Fit2>
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

// ---------------------------------------------------------------------------------------
// Row spacing.

fn check_order(n: i32) -> Result<i32> {
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
/// `NotFinite(Angle)`, |exit| ≥ 90° → `TooHigh`/`TooLow(Angle)`; all orders 0, or a
/// negative fitted 1/d → `DegenerateFit`.
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
    Ok(Fit1 {
        value: 1.0 / q,
        sigma: sigma_q / (q * q),
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
/// ([`crate::beam::energy_from_wavenumber_ev`]). The fit first solves the
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
/// use matterwave_core::{beam, fit::inner_potential_and_spacing};
/// let (d, v0) = (1.762f32, 11.0f32); // Ni(100): a/2 with a = 3.524 Å.
/// let pts = [2, 3, 4, 5].map(|n| (n, beam::energy_from_wavenumber_ev(n as f32 / (2.0 * d)) - v0));
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

#[cfg(test)]
mod tests {
    use super::*;

    /// Tolerance `t`, widened under `fast-math` (micromath's ln/exp/sqrt are good to
    /// roughly 1e-3..1e-2 relative).
    fn tol(t: f32, fast: f32) -> f32 {
        if cfg!(feature = "fast-math") {
            fast
        } else {
            t
        }
    }

    fn gauss(a: f32, centre: f32, sigma: f32) -> f32 {
        1000.0 * libm::expf(-(a - centre) * (a - centre) / (2.0 * sigma * sigma))
    }

    #[test]
    fn lsq_fits_a_line_exactly() {
        // Synthetic data, truth chosen in the test: y = 2 + 3x.
        let mut l = Lsq::<2>::new();
        for x in [0.0f32, 1.0, 2.0, 5.0] {
            l.add([1.0, x], 2.0 + 3.0 * x);
        }
        let p = l.solve().unwrap();
        assert!((p[0] - 2.0).abs() < 1e-5 && (p[1] - 3.0).abs() < 1e-5);
        assert!(l.rss < 1e-9);
    }

    #[test]
    fn lsq_detects_dependent_columns() {
        let mut l = Lsq::<2>::new();
        for x in [1.0f32, 2.0, 3.0] {
            l.add([x, 2.0 * x], x);
        }
        assert_eq!(l.solve(), Err(Error::DegenerateFit));
    }

    #[test]
    fn parabola_log_is_exact_for_gaussian() {
        // Synthetic data, truth chosen in the test: centre 12.34°, σ 0.5°, step 0.25°.
        let mut s = [Sample {
            angle_deg: 0.0,
            current: 0.0,
        }; 40];
        for (i, p) in s.iter_mut().enumerate() {
            let a = 8.0 + 0.25 * i as f32;
            *p = Sample {
                angle_deg: a,
                current: gauss(a, 12.34, 0.5),
            };
        }
        let c = parabola_log(&s).unwrap();
        assert!((c.angle_deg - 12.34).abs() < tol(1e-4, 0.02), "{c:?}");
        assert!(
            (c.fwhm_deg - FWHM_PER_SIGMA * 0.5).abs() < tol(1e-3, 0.02),
            "{c:?}"
        );
        assert!((c.peak_current - 1000.0).abs() < tol(0.5, 60.0), "{c:?}");
        // Reversed order gives the same answer.
        s.reverse();
        let r = parabola_log(&s).unwrap();
        assert!((r.angle_deg - c.angle_deg).abs() < tol(1e-5, 1e-3));
    }

    #[test]
    fn centring_errors() {
        let flat = [1.0f32, 2.0, 3.0, 4.0].map(|a| Sample {
            angle_deg: a,
            current: 5.0,
        });
        assert_eq!(parabola_log(&flat), Err(Error::DegenerateFit));
        assert_eq!(centroid(&flat, 1.0), Err(Error::DegenerateFit));
        assert_eq!(parabola_log(&flat[..2]), Err(Error::TooFewPoints));
        let nan = [Sample {
            angle_deg: f32::NAN,
            current: 1.0,
        }];
        assert_eq!(centroid(&nan, 0.0), Err(Error::NotFinite(Quantity::Angle)));
        assert_eq!(
            centroid(&flat, f32::NAN),
            Err(Error::NotFinite(Quantity::Count))
        );
    }

    #[test]
    fn fit_iv_exact() {
        // Synthetic data, truth chosen in the test.
        let (d, v0) = (2.0f32, 8.0f32);
        let pts = [2, 3, 4, 5, 6].map(|n| {
            (
                n,
                beam::energy_from_wavenumber_ev(n as f32 / (2.0 * d)) - v0,
            )
        });
        let f = inner_potential_and_spacing(&pts).unwrap();
        assert!((f.inner_potential_ev - v0).abs() < 0.02, "{f:?}");
        assert!((f.layer_spacing_a - d).abs() < 1e-4, "{f:?}");
    }
}
