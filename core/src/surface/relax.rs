//! Top-layer relaxation and the kinematic I-V maxima it shifts.
//!
//! ## The model (kinematic, single scattering)
//!
//! The rod's amplitude at outside energy E is the sum over the atoms of one surface
//! column, each weighted by its depth attenuation: A = Σ exp(−μ·t) · exp(2πi(g·ρ − q·t)),
//! t the atom's depth below the top atomic plane ([`crate::surface::AtomicPlanes`]), ρ
//! its position in the plane, q = K⊥,in + K⊥,out the normal momentum transfer inside
//! (with the inner potential, as [`Face::iv_peaks`]), and μ = (1/cos θin + 1/cos θout)/(2Λ)
//! (inside angles; half the intensity attenuation along the path in and out). The bulk
//! part is a geometric series over the periods: S/(1 − x) with S the motif's sum over
//! one period and x = exp(−μ·d − 2πi(g·a3∥ + q·d)). The attenuation length Λ (Å) is
//! Seah and Dench's universal curve for elements, λ = 538/E² + 0.41·√(a·E) monolayers
//! with a (nm) the cube root of the volume per atom and E in eV (M. P. Seah and W. A.
//! Dench, Surf. Interface Anal. 1, 2 (1979); from memory), times a.
//!
//! Relaxation moves the top atomic plane out by δ12·d12 + δ23·d23 and the second by
//! δ23·d23 (planes 3 and below stay bulk; δ = percent / 100; negative = contraction);
//! the attenuation of the moved atoms is left at its bulk value. The intensity |A|²
//! then peaks at a slightly different energy near each kinematic maximum:
//! [`Face::iv_peaks_relaxed`] reports each kinematic energy of [`Face::iv_peaks`] moved
//! by the shift of the model's maximum, relaxed against bulk-terminated (so zero
//! relaxation gives exactly the kinematic energies). A contracted top spacing moves the
//! maxima up in energy, an expanded one down; the shift grows with the order (with q).

use super::iv::{bisect_energy, perp_sum};
use super::{AtomicPlanes, Face, Incidence, IvPeak};
use crate::beam;
use crate::error::{finite, Error, Quantity, Result};
use crate::listing::Listing;
use crate::math;

/// Largest |Δd12| or |Δd23| accepted, percent.
pub const RELAX_MAX_PCT: f32 = 50.0;

/// Grid points and golden-section steps of one maximum search.
const GRID: usize = 24;
const GOLDEN: usize = 24;

/// Half the window searched around each kinematic maximum, in periods of q·d.
const WINDOW: f32 = 0.35;

/// A top-layer relaxation: the changes of the first two interlayer spacings, percent
/// of their bulk values (positive = expansion).
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Relaxation {
    /// Δd12, percent.
    pub d12_pct: f32,
    /// Δd23, percent.
    pub d23_pct: f32,
}

impl Relaxation {
    /// No relaxation (the bulk-terminated face).
    pub const NONE: Relaxation = Relaxation {
        d12_pct: 0.0,
        d23_pct: 0.0,
    };

    /// Δd12 and Δd23 in percent, each finite and within ±[`RELAX_MAX_PCT`]
    /// (`NotFinite`/`TooLow`/`TooHigh` of `Length` otherwise).
    pub fn new(d12_pct: f32, d23_pct: f32) -> Result<Relaxation> {
        let check = |x: f32| -> Result<f32> {
            let x = finite(x, Quantity::Length)?;
            if x > RELAX_MAX_PCT {
                Err(Error::TooHigh(Quantity::Length))
            } else if x < -RELAX_MAX_PCT {
                Err(Error::TooLow(Quantity::Length))
            } else {
                Ok(x)
            }
        };
        Ok(Relaxation {
            d12_pct: check(d12_pct)?,
            d23_pct: check(d23_pct)?,
        })
    }

    /// Whether both changes are zero.
    pub fn is_none(&self) -> bool {
        self.d12_pct == 0.0 && self.d23_pct == 0.0
    }
}

/// A complex number (re, im).
#[derive(Clone, Copy)]
struct C(f32, f32);

impl C {
    /// exp(−a) · e^{2πi·cycles}, with the cycles reduced first.
    fn polar(a: f32, cycles: f32) -> C {
        let r = math::exp(-a);
        let t = 2.0 * core::f32::consts::PI * (cycles - math::round(cycles));
        C(r * math::cos(t), r * math::sin(t))
    }
    fn add(self, o: C) -> C {
        C(self.0 + o.0, self.1 + o.1)
    }
    fn mul(self, o: C) -> C {
        C(self.0 * o.0 - self.1 * o.1, self.0 * o.1 + self.1 * o.0)
    }
    fn div(self, o: C) -> C {
        let n = o.0 * o.0 + o.1 * o.1;
        C(
            (self.0 * o.0 + self.1 * o.1) / n,
            (self.1 * o.0 - self.0 * o.1) / n,
        )
    }
    fn norm2(self) -> f32 {
        self.0 * self.0 + self.1 * self.1
    }
}

/// Everything about one rod that does not depend on the energy.
struct Column {
    /// In-plane phase (cycles) and depth (Å) of each motif atom in the top period.
    atoms: [(f32, f32); super::MAX_PLANES],
    n: usize,
    /// g·a3∥ (cycles per period), the period d (Å), d12 and d23 (Å).
    g_a3: f32,
    d: f32,
    d12: f32,
    d23: f32,
    /// One planes per period: the second plane is the top plane one period down.
    single: bool,
    /// Monolayer thickness a (cube root of the volume per atom), Å.
    mono_a: f32,
    /// Turned rod vector (surface frame), sin(tilt), V0.
    g: [f32; 2],
    s: f32,
    v0: f32,
}

impl Face {
    fn column(&self, rod: [i32; 2], inc: &Incidence, v0: f32, planes: &AtomicPlanes) -> Column {
        let g0 = self.rod_inv_a(rod);
        let [e1, e2] = self.frame;
        let in_plane =
            |r: crate::math::Vec3| -> f32 { g0[0] * math::dot(r, e1) + g0[1] * math::dot(r, e2) };
        let d = self.layer_spacing_a;
        let a3 = self.vectors_a[2];
        let mut atoms = [(0.0f32, 0.0f32); super::MAX_PLANES];
        let mut n = 0usize;
        for (slot, x) in atoms.iter_mut().zip(self.cell.structure.motif()) {
            let r = self.cell.point(*x);
            let t = self.atom_depth_frac(planes, *x) * d;
            // Bring the atom into the top period: its height top − t, by whole a3.
            let h = math::dot(r, self.normal);
            let k = math::round((planes.top_frac * d - t - h) / d);
            let rr = math::add(r, math::scale(a3, k));
            *slot = (in_plane(rr), t);
            n += 1;
        }
        let motif_len = n.max(1) as f32;
        let centring = match self.cell.structure.centring() {
            crate::lattice::Centring::P => 1.0,
            crate::lattice::Centring::I => 2.0,
            crate::lattice::Centring::F => 4.0,
        };
        let per_atom = self.cell.volume_a3() / (motif_len * centring);
        Column {
            atoms,
            n,
            g_a3: in_plane(a3),
            d,
            d12: planes.d12_a(),
            d23: planes.d23_a(),
            single: planes.count <= 1,
            mono_a: math::exp(math::ln(per_atom) / 3.0),
            g: self.rod_turned(rod, inc),
            s: inc.sin_tilt,
            v0,
        }
    }
}

impl Column {
    /// Seah–Dench attenuation length at outside energy `e`, Å.
    fn attenuation_a(&self, e: f32) -> f32 {
        let a_nm = 0.1 * self.mono_a;
        let monolayers = 538.0 / (e * e) + 0.41 * math::sqrt(a_nm * e);
        monolayers * self.mono_a
    }

    /// |A|² at outside energy `e` with the top planes moved out by `up1`, `up2` (Å);
    /// `None` where a beam is evanescent inside.
    fn intensity(&self, e: f32, up1: f32, up2: f32) -> Option<f32> {
        let u = beam::wavenumber_unchecked_inv_a(e);
        let k = beam::wavenumber_unchecked_inv_a(e + self.v0);
        let kin = self.s * u;
        let kx = kin + self.g[0];
        let a = k * k - kin * kin;
        let b = k * k - (kx * kx + self.g[1] * self.g[1]);
        if a <= 0.0 || b <= 0.0 {
            return None;
        }
        let (pin, pout) = (math::sqrt(a), math::sqrt(b));
        let q = pin + pout;
        let mu = (k / pin + k / pout) / (2.0 * self.attenuation_a(e));
        let mut sum = C(0.0, 0.0);
        let mut top = C(0.0, 0.0);
        let mut second = C(0.0, 0.0);
        let tol = 1.0e-4 * self.d;
        for &(phase, t) in self.atoms.iter().take(self.n) {
            let w = C::polar(mu * t, phase - q * t);
            sum = sum.add(w);
            if t <= tol {
                top = top.add(w);
            } else if (t - self.d12).abs() <= tol {
                second = second.add(w);
            }
        }
        let x = C::polar(mu * self.d, -(self.g_a3 + q * self.d));
        let bulk = sum.div(C(1.0 - x.0, -x.1));
        if self.single {
            second = top.mul(x);
        }
        let moved = |w: C, up: f32| -> C {
            let p = C::polar(0.0, q * up);
            w.mul(C(p.0 - 1.0, p.1))
        };
        Some(bulk.add(moved(top, up1)).add(moved(second, up2)).norm2())
    }

    /// The energy of the largest |A|² in [lo, hi]: a grid, then golden section.
    fn maximum(&self, lo: f32, hi: f32, up1: f32, up2: f32) -> f32 {
        let at = |e: f32| self.intensity(e, up1, up2).unwrap_or(-1.0);
        let step = (hi - lo) / GRID as f32;
        let mut best = (lo, at(lo));
        for i in 1..=GRID {
            let e = if i == GRID { hi } else { lo + step * i as f32 };
            let v = at(e);
            if v > best.1 {
                best = (e, v);
            }
        }
        let (mut a, mut b) = ((best.0 - step).max(lo), (best.0 + step).min(hi));
        let r = 0.618_034f32;
        let (mut x1, mut x2) = (b - r * (b - a), a + r * (b - a));
        let (mut f1, mut f2) = (at(x1), at(x2));
        for _ in 0..GOLDEN {
            if f1 < f2 {
                a = x1;
                x1 = x2;
                f1 = f2;
                x2 = a + r * (b - a);
                f2 = at(x2);
            } else {
                b = x2;
                x2 = x1;
                f2 = f1;
                x1 = b - r * (b - a);
                f1 = at(x1);
            }
        }
        0.5 * (a + b)
    }
}

impl Face {
    /// Kinematic I-V maxima of rod (h, k) with a relaxed top layer: the peaks of
    /// [`Face::iv_peaks`] (same arguments, same orders and G), each energy moved by
    /// the shift the damped layer-stack model of the [module docs](self) gives for
    /// `relax`. With [`Relaxation::NONE`] the energies are those of `iv_peaks`. Work:
    /// per peak two bisections (64 steps) for its window and two maximum searches of
    /// 51 intensity evaluations each (a 24-interval grid, then 24 golden-section
    /// steps), each evaluation a sum over at most four atoms.
    ///
    /// ```
    /// use matterwave_core::lattice::{Cell, Structure};
    /// use matterwave_core::surface::{Face, Incidence, IvPeak, Relaxation};
    /// let f = Face::new(&Cell::new(Structure::Fcc, 3.615, 0.0, 0.0).unwrap(), [1, 1, 0]).unwrap();
    /// let inc = Incidence::normal(100.0).unwrap();
    /// let (mut a, mut b) = ([IvPeak::EMPTY; 8], [IvPeak::EMPTY; 8]);
    /// let n = f.iv_peaks([0, 0], &inc, 10.0, 50.0, 400.0, &mut a).unwrap().stored;
    /// let r = Relaxation::new(-8.0, 0.0).unwrap();
    /// f.iv_peaks_relaxed([0, 0], &inc, 10.0, 50.0, 400.0, &r, &mut b).unwrap();
    /// // A contracted top spacing moves the maxima up.
    /// assert!((0..n).all(|i| b[i].energy_ev > a[i].energy_ev));
    /// ```
    #[allow(clippy::too_many_arguments)]
    #[inline(never)]
    pub fn iv_peaks_relaxed(
        &self,
        rod: [i32; 2],
        inc: &Incidence,
        v0_ev: f32,
        from_ev: f32,
        to_ev: f32,
        relax: &Relaxation,
        out: &mut [IvPeak],
    ) -> Result<Listing> {
        let list = self.iv_peaks(rod, inc, v0_ev, from_ev, to_ev, out)?;
        if relax.is_none() {
            return Ok(list);
        }
        let planes = self.atomic_planes();
        let col = self.column(rod, inc, v0_ev, &planes);
        let up2 = 0.01 * relax.d23_pct * col.d23;
        let up1 = 0.01 * relax.d12_pct * col.d12 + up2;
        // The beam's own energy range: from its emergence (where the window starts).
        let floor_ev = self.emergence_ev(rod, inc).map_or(1.0, |e| e.max(1.0));
        for p in out.iter_mut().take(list.stored) {
            let w = WINDOW / col.d;
            let lo_t = p.g_perp_inv_a - w;
            let hi_t = p.g_perp_inv_a + w;
            // Energies where q = G⊥ ∓ w, within 1 eV … 2·E + 1000 eV.
            let top = 2.0 * p.energy_ev + 1000.0;
            let lo_e = if perp_sum(col.g, col.s, col.v0, floor_ev) >= lo_t {
                floor_ev
            } else {
                bisect_energy(col.g, col.s, col.v0, lo_t, floor_ev, p.energy_ev)
            };
            let hi_e = bisect_energy(col.g, col.s, col.v0, hi_t, p.energy_ev, top);
            if hi_e.partial_cmp(&lo_e) != Some(core::cmp::Ordering::Greater) {
                continue;
            }
            let bulk = col.maximum(lo_e, hi_e, 0.0, 0.0);
            let moved = col.maximum(lo_e, hi_e, up1, up2);
            let e = p.energy_ev + (moved - bulk);
            if e.is_finite() && e >= 1.0 {
                p.energy_ev = e;
            }
        }
        Ok(list)
    }
}
