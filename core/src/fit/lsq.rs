//! The least-squares engine: Givens rotations one row at a time, and Gauss–Newton for
//! two parameters.

use super::*;

/// √(x² + y²) without overflow.
pub(super) fn hypot(x: f32, y: f32) -> f32 {
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
pub(super) struct Lsq<const N: usize> {
    r: [[f32; N]; N],
    z: [f32; N],
    pub(super) rss: f32,
    rows: usize,
}

// Every index below is a loop variable over 0..N (or 0..=k with k < N) into arrays of
// length N, so none can go out of bounds.
#[allow(clippy::indexing_slicing)]
impl<const N: usize> Lsq<N> {
    pub(super) fn new() -> Self {
        Lsq {
            r: [[0.0; N]; N],
            z: [0.0; N],
            rss: 0.0,
            rows: 0,
        }
    }

    /// Adds the row a·p ≈ b.
    #[allow(clippy::needless_range_loop)]
    pub(super) fn add(&mut self, mut a: [f32; N], mut b: f32) {
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
    pub(super) fn check(&self) -> Result<()> {
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
    pub(super) fn solve(&self) -> Result<[f32; N]> {
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
    pub(super) fn quad_inv(&self, g: [f32; N]) -> f32 {
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
    pub(super) fn s2(&self) -> f32 {
        if self.rows > N {
            self.rss / (self.rows - N) as f32
        } else {
            f32::INFINITY
        }
    }

    /// One-standard-deviation uncertainty of parameter `k`.
    pub(super) fn sigma(&self, k: usize) -> f32 {
        let mut g = [0.0f32; N];
        if let Some(v) = g.get_mut(k) {
            *v = 1.0;
        }
        math::sqrt(self.s2() * self.quad_inv(g))
    }

    /// √(SSR/n).
    pub(super) fn rms(&self) -> f32 {
        if self.rows == 0 {
            0.0
        } else {
            math::sqrt(self.rss / self.rows as f32)
        }
    }

    /// |z|: how far the last solve moved the fitted values.
    pub(super) fn z_norm(&self) -> f32 {
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
pub(super) fn gauss_newton2<R>(
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
