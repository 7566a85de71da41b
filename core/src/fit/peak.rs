//! Peak centring: the current-weighted centroid and the log-parabola (Gaussian) fit.

use super::*;

/// The point count as u16, or `TooHigh(Count)`.
pub(super) fn count_u16(n: usize) -> Result<u16> {
    u16::try_from(n).map_err(|_| Error::TooHigh(Quantity::Count))
}

// ---------------------------------------------------------------------------------------
// Peak centring.

/// Checks every sample is finite and the count fits a u16.
pub(super) fn check_samples(samples: &[Sample]) -> Result<()> {
    count_u16(samples.len())?;
    for s in samples {
        finite(s.angle_deg, Quantity::Angle)?;
        finite(s.current, Quantity::Count)?;
    }
    Ok(())
}

/// Index of the largest current (the first of equal ones).
pub(super) fn argmax(samples: &[Sample]) -> Option<usize> {
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
pub(super) fn key_lt(a: (f32, usize), b: (f32, usize)) -> bool {
    a.0 < b.0 || (a.0 == b.0 && a.1 < b.1)
}

/// The sample just above (`up`) or below `cur` in (angle, index) order.
pub(super) fn neighbour(samples: &[Sample], cur: usize, up: bool) -> Option<usize> {
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

/// The background [`centroid`] subtracts when none is given, the same on the controller
/// (`fit kind=centroid` without `threshold=`) and in `mwctl calc fit peak --method
/// centroid` (without `--threshold`): the smallest current of the samples — the level of
/// the flanks of a scan that spans the peak (same unit as the currents).
///
/// Errors: no samples → `TooFewPoints`; a NaN or infinite current → `NotFinite(Count)`.
///
/// ```
/// use matterwave_core::fit::{centroid_background, Sample};
/// let s = [(10.0, 2.5), (11.0, 12.0), (12.0, 2.0)]
///     .map(|(a, c)| Sample { angle_deg: a, current: c });
/// assert_eq!(centroid_background(&s), Ok(2.0));
/// ```
pub fn centroid_background(samples: &[Sample]) -> Result<f32> {
    let mut low: Option<f32> = None;
    for s in samples {
        let c = finite(s.current, Quantity::Count)?;
        low = Some(low.map_or(c, |l| l.min(c)));
    }
    low.ok_or(Error::TooFewPoints)
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
