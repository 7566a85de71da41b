//! Superstructures on a face's mesh: the matrix, the fractional-order beams it adds,
//! and their exact positions in substrate units.
//!
//! ## Conventions
//!
//! A superstructure (an adsorbate layer or a reconstruction) has mesh vectors
//! b1 = m11·a1 + m12·a2 and b2 = m21·a1 + m22·a2 on the substrate mesh (a1, a2) of
//! [`Face`]: the rows of M are the superstructure's vectors in substrate units. M may be
//! rational, M = N/q with integer N and one denominator q (1 ≤ q ≤ [`MAX_DEN`]), for an
//! overlayer whose mesh is not a whole multiple of the substrate's. Bounds:
//! |Nij| ≤ [`MAX_ENTRY`], 1 ≤ |det N| ≤ [`MAX_CELLS`].
//!
//! The reciprocal mesh of the superstructure is spanned by b*1, b*2 with bi·b*j = δij.
//! A beam p·b*1 + q·b*2 (p, q whole) lies at (h, k) = M⁻¹·(p, q) in substrate
//! reciprocal units, i.e. at g = h·a*1 + k·a*2: (h, k) = q_den·adj(N)·(p, q) / det N, so
//! every beam sits on the grid of 1/|det N| in h and k, and is held exactly as
//! [`FracRod`] — numerators over that one denominator. A beam at whole (h, k) coincides
//! with an integer-order beam: its vector is computed by [`Face::rod_inv_a`] from the
//! whole indices, so it is bit-for-bit the substrate's beam ([`Face::beam`]).
//!
//! ```
//! use matterwave_core::lattice::{Cell, Structure};
//! use matterwave_core::surface::{Face, Incidence, Superstructure, SuperBeam};
//! let ni = Cell::new(Structure::Fcc, 3.524, 0.0, 0.0).unwrap();
//! let f = Face::new(&ni, [1, 0, 0]).unwrap();
//! let p2x2 = Superstructure::new([[2, 0], [0, 2]], 1).unwrap();
//! let mut out = [SuperBeam::EMPTY; 16];
//! let l = p2x2.beams(&f, &Incidence::normal(60.0).unwrap(), &mut out).unwrap();
//! // Specular first; then the four half-order beams (±1/2, 0), (0, ±1/2).
//! assert_eq!(out[1].pos.reduced(0), (1, 2));
//! assert!(!out[1].integer && l.stored > 5);
//! ```

use super::{Face, Incidence, SurfaceBeam};
use crate::error::{Error, Result};
use crate::listing::{insert_sorted, Listing};
use crate::math;

/// Largest |entry| of the integer matrix N (M = N/q).
pub const MAX_ENTRY: i32 = 24;
/// Largest denominator q of a rational matrix.
pub const MAX_DEN: i32 = 4;
/// Largest |det N|: the superstructure cell holds |det N|/q² substrate cells; beam
/// positions have denominators up to this.
pub const MAX_CELLS: i32 = 64;
/// Largest denominator of a beam typed as text (`1/2,0`).
pub const MAX_BEAM_DEN: i32 = 99;

/// A superstructure matrix M = N/q on the substrate mesh (see the module docs). Five
/// bytes, so that a controller can keep one.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Superstructure {
    /// Integer matrix N, rows = b1, b2 in substrate units times `den`.
    pub n: [[i8; 2]; 2],
    /// Denominator q of M = N/q, 1 to [`MAX_DEN`].
    pub den: u8,
}

/// A beam position in substrate reciprocal units, exactly: (h, k) = (num0, num1)/den,
/// den > 0 (not necessarily reduced; [`FracRod::reduced`] gives each component in
/// lowest terms).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct FracRod {
    /// Numerators of h and k.
    pub num: [i32; 2],
    /// The common denominator, > 0.
    pub den: i32,
}

/// One beam of a superstructure (or of the union of its domains) at an incidence.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct SuperBeam {
    /// Position in substrate units.
    pub pos: FracRod,
    /// Whether (h, k) are whole: the beam coincides with the substrate's integer-order
    /// beam, and `beam` is exactly [`Face::beam`] of that rod.
    pub integer: bool,
    /// The beam. For integer-order beams `beam.rod` is the rod (h, k); for fractional
    /// ones it holds the numerators `pos.num` (over `pos.den`).
    pub beam: SurfaceBeam,
    /// Domains the beam belongs to, bit i = domain i of the list the beams were made
    /// from (bit 0 only for a single superstructure).
    pub domains: u16,
}

impl SuperBeam {
    /// A placeholder for initialising buffers.
    pub const EMPTY: SuperBeam = SuperBeam {
        pos: FracRod {
            num: [0, 0],
            den: 1,
        },
        integer: true,
        beam: SurfaceBeam::EMPTY,
        domains: 0,
    };
}

fn gcd(a: i32, b: i32) -> i32 {
    super::gcd(a, b)
}

/// An integer or fraction `a` or `a/b` (|a| ≤ 9999, 1 ≤ b ≤ `max_den`): (a, b).
fn parse_fraction(text: &str, max_den: i32) -> Option<(i32, i32)> {
    let t = text.trim();
    let (a, b) = match t.split_once('/') {
        Some((a, b)) => (a, b),
        None => (t, "1"),
    };
    let a = parse_small(a)?;
    let b = parse_small(b)?;
    if b < 1 || b > max_den {
        return None;
    }
    Some((a, b))
}

/// A signed decimal integer of at most four digits.
fn parse_small(text: &str) -> Option<i32> {
    let t = text.trim();
    let (neg, digits) = match t.strip_prefix('-') {
        Some(d) => (true, d),
        None => (false, t.strip_prefix('+').unwrap_or(t)),
    };
    if digits.is_empty() || digits.len() > 4 || !digits.bytes().all(|c| c.is_ascii_digit()) {
        return None;
    }
    let v = digits
        .bytes()
        .fold(0i32, |acc, c| acc * 10 + i32::from(c - b'0'));
    Some(if neg { -v } else { v })
}

impl FracRod {
    /// The whole rod (h, k).
    pub const fn whole(rod: [i32; 2]) -> FracRod {
        FracRod { num: rod, den: 1 }
    }

    /// Parses `h,k` where each is an integer or a fraction (`1/2,0`, `-1/3,2/3`, also
    /// space-separated); denominators 1 to [`MAX_BEAM_DEN`], |h|, |k| ≤ 99.
    pub fn parse(text: &str) -> Result<FracRod> {
        let bad = Error::BadFractionalBeam;
        let t = text.trim();
        let mut parts = t.split([',', ' ']).filter(|p| !p.is_empty());
        let h = parts.next().and_then(|p| parse_fraction(p, MAX_BEAM_DEN));
        let k = parts.next().and_then(|p| parse_fraction(p, MAX_BEAM_DEN));
        let (Some((hn, hd)), Some((kn, kd)), None) = (h, k, parts.next()) else {
            return Err(bad);
        };
        if hn.abs() > 99 * hd || kn.abs() > 99 * kd {
            return Err(Error::IndicesTooLarge);
        }
        let den = hd * kd / gcd(hd, kd);
        Ok(FracRod {
            num: [hn * (den / hd), kn * (den / kd)],
            den,
        }
        .normalised())
    }

    /// The same position over the smallest common denominator.
    pub fn normalised(self) -> FracRod {
        let g = gcd(gcd(self.num[0], self.num[1]), self.den).max(1);
        FracRod {
            num: [self.num[0] / g, self.num[1] / g],
            den: self.den / g,
        }
    }

    /// Component `i` (0 = h, 1 = k) in lowest terms: (numerator, denominator > 0).
    pub fn reduced(&self, i: usize) -> (i32, i32) {
        let n = self.num.get(i).copied().unwrap_or(0);
        let g = gcd(n, self.den).max(1);
        (n / g, self.den / g)
    }

    /// The whole rod when both components are whole.
    pub fn integer(&self) -> Option<[i32; 2]> {
        if self.den > 0 && self.num[0] % self.den == 0 && self.num[1] % self.den == 0 {
            Some([self.num[0] / self.den, self.num[1] / self.den])
        } else {
            None
        }
    }

    /// Whether two positions are the same point (exact, by cross-multiplication).
    pub fn same(&self, o: &FracRod) -> bool {
        let l = |a: i32, b: i32| i64::from(a) * i64::from(b);
        l(self.num[0], o.den) == l(o.num[0], self.den)
            && l(self.num[1], o.den) == l(o.num[1], self.den)
    }

    /// Writes `h,k` with each component an integer or a reduced fraction (`1/2,0`).
    pub fn write_to<W: core::fmt::Write>(&self, w: &mut W) -> core::fmt::Result {
        for i in 0..2 {
            if i == 1 {
                w.write_char(',')?;
            }
            let (n, d) = self.reduced(i);
            if d == 1 {
                write!(w, "{n}")?;
            } else {
                write!(w, "{n}/{d}")?;
            }
        }
        Ok(())
    }
}

impl core::fmt::Display for FracRod {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        self.write_to(f)
    }
}

impl core::fmt::Display for Superstructure {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        self.write_to(f)
    }
}

impl Face {
    /// The same face with its reciprocal mesh divided by `den` (1 to 99; a1, a2 times
    /// `den`): rod (n0, n1) of the result is position (n0/den, n1/den) of this face, so
    /// every function that takes whole rods (aiming, tracking, scan plans) serves a
    /// fractional beam. Only the 2D mesh changes (the bulk cell, normal, layer spacing
    /// and I-V data stay this face's); `den` = 1 gives the face unchanged, bit for bit.
    pub fn fractional_grid(&self, den: i32) -> Result<Face> {
        let mut f = *self;
        f.make_fractional_grid(den)?;
        Ok(f)
    }

    /// Turns this face into its [`Face::fractional_grid`] of `den` in place (no copy
    /// of the face, for callers short of stack); `den` = 1 leaves it unchanged. On an
    /// error the face is unchanged.
    pub fn make_fractional_grid(&mut self, den: i32) -> Result<()> {
        if !(1..=MAX_BEAM_DEN).contains(&den) {
            return Err(Error::BadFractionalBeam);
        }
        if den == 1 {
            return Ok(());
        }
        let d = den as f32;
        for (a, b) in self
            .mesh_2d_a
            .iter_mut()
            .zip(self.recip_2d_inv_a.iter_mut())
        {
            for (x, y) in a.iter_mut().zip(b.iter_mut()) {
                *x *= d;
                *y /= d;
            }
        }
        Ok(())
    }

    /// The rod vector of a fractional position at azimuth 0, 1/Å: g = h·b1 + k·b2.
    /// Whole positions go through [`Face::rod_inv_a`], so they are exactly the
    /// integer-order rod's vector.
    pub fn frac_rod_inv_a(&self, pos: &FracRod) -> [f32; 2] {
        frac_g(&self.recip_2d_inv_a, pos)
    }

    /// The beam at fractional position `pos` at `inc` (`rod` holds the numerators for a
    /// fractional position), or `Evanescent`. Whole positions give exactly
    /// [`Face::beam`].
    pub fn frac_beam(&self, pos: &FracRod, inc: &Incidence) -> Result<SurfaceBeam> {
        frac_beam_on(&self.recip_2d_inv_a, pos, inc)
    }
}

/// g of position `pos` on the reciprocal mesh `recip` (rows b1, b2, 1/Å): a whole
/// position with the integer-order arithmetic of [`Face::rod_inv_a`].
fn frac_g(recip: &[[f32; 2]; 2], pos: &FracRod) -> [f32; 2] {
    match pos.integer() {
        Some(r) => super::mesh_g(recip, r[0] as f32, r[1] as f32),
        None => {
            let d = pos.den as f32;
            super::mesh_g(recip, pos.num[0] as f32 / d, pos.num[1] as f32 / d)
        }
    }
}

/// [`Face::frac_beam`] on the reciprocal mesh `recip` alone (the one arithmetic of a
/// beam at an exact position, for iterators that keep the mesh and not the face).
pub(crate) fn frac_beam_on(
    recip: &[[f32; 2]; 2],
    pos: &FracRod,
    inc: &Incidence,
) -> Result<SurfaceBeam> {
    if pos.den < 1 || pos.num[0].abs() > 4096 * pos.den || pos.num[1].abs() > 4096 * pos.den {
        return Err(Error::IndicesTooLarge);
    }
    let label = pos.integer().unwrap_or(pos.num);
    let t = super::turned(frac_g(recip, pos), inc);
    super::beam_from(label, t, inc).ok_or(Error::Evanescent)
}

/// Bit i set when `supers[i]` (the first 16) has the beam at `pos`.
pub(crate) fn domain_bits(supers: &[Superstructure], pos: &FracRod) -> u16 {
    supers
        .iter()
        .take(16)
        .enumerate()
        .filter(|(_, s)| s.has_beam(pos))
        .fold(0u16, |m, (i, _)| m | (1u16 << i))
}

impl Superstructure {
    /// The primitive 1×1 mesh itself (no superstructure).
    pub const IDENTITY: Superstructure = Superstructure {
        n: [[1, 0], [0, 1]],
        den: 1,
    };

    /// M = `n`/`den`, reduced by the common divisor of entries and denominator. Errors:
    /// `SingularSuperstructure` for det N = 0, `SuperstructureTooLarge` beyond the
    /// bounds of the module docs.
    pub fn new(n: [[i32; 2]; 2], den: i32) -> Result<Superstructure> {
        if !(1..=MAX_DEN).contains(&den) || n.iter().flatten().any(|x| x.abs() > MAX_ENTRY) {
            return Err(Error::SuperstructureTooLarge);
        }
        let det = n[0][0] * n[1][1] - n[0][1] * n[1][0];
        if det == 0 {
            return Err(Error::SingularSuperstructure);
        }
        if det.abs() > MAX_CELLS {
            return Err(Error::SuperstructureTooLarge);
        }
        let g = n.iter().flatten().fold(den, |g, x| gcd(g, *x)).max(1);
        let e = |x: i32| (x / g) as i8;
        Ok(Superstructure {
            n: [[e(n[0][0]), e(n[0][1])], [e(n[1][0]), e(n[1][1])]],
            den: (den / g) as u8,
        })
    }

    /// Parses a matrix `m11,m12,m21,m22` (commas or spaces; entries integers or
    /// fractions such as `1/2`, their common denominator at most [`MAX_DEN`]).
    pub fn parse_matrix(text: &str) -> Result<Superstructure> {
        let bad = Error::BadSuperstructureText;
        let mut v = [(0i32, 1i32); 4];
        let mut count = 0usize;
        for part in text.trim().split([',', ' ']).filter(|p| !p.is_empty()) {
            let slot = v.get_mut(count).ok_or(bad)?;
            *slot = parse_fraction(part, MAX_DEN).ok_or(bad)?;
            count += 1;
        }
        if count != 4 {
            return Err(bad);
        }
        let den = v.iter().fold(1i32, |l, (_, d)| l * d / gcd(l, *d));
        if den > MAX_DEN {
            return Err(Error::SuperstructureTooLarge);
        }
        let e = |i: usize| v.get(i).map_or(0, |(a, d)| a * (den / d));
        Superstructure::new([[e(0), e(1)], [e(2), e(3)]], den)
    }

    /// Parses either form on the face's mesh: Wood notation when the text holds a
    /// bracket (`c(2x2)`, `(sqrt3xsqrt3)R30`), else a matrix (`2,0,0,2`, `1/2,0,0,1/2`).
    pub fn parse(text: &str, face: &Face) -> Result<Superstructure> {
        if text.contains('(') {
            super::Wood::parse(text)?.to_matrix(face)
        } else {
            Superstructure::parse_matrix(text)
        }
    }

    /// Writes the matrix as `m11,m12,m21,m22`, entries integers or reduced fractions.
    pub fn write_to<W: core::fmt::Write>(&self, w: &mut W) -> core::fmt::Result {
        let q = i32::from(self.den);
        for (i, x) in self.matrix().iter().flatten().enumerate() {
            if i > 0 {
                w.write_char(',')?;
            }
            let g = gcd(*x, q).max(1);
            if q / g == 1 {
                write!(w, "{}", x / g)?;
            } else {
                write!(w, "{}/{}", x / g, q / g)?;
            }
        }
        Ok(())
    }

    /// N as i32.
    pub fn matrix(&self) -> [[i32; 2]; 2] {
        let n = &self.n;
        [
            [i32::from(n[0][0]), i32::from(n[0][1])],
            [i32::from(n[1][0]), i32::from(n[1][1])],
        ]
    }

    /// det N (not zero for a value made by [`Superstructure::new`]).
    pub fn det_n(&self) -> i32 {
        let n = self.matrix();
        n[0][0] * n[1][1] - n[0][1] * n[1][0]
    }

    /// Substrate cells per superstructure cell, det M = det N / q² (may be fractional).
    pub fn cells(&self) -> f32 {
        let q = f32::from(self.den);
        self.det_n() as f32 / (q * q)
    }

    /// Whether M is the identity (the 1×1 mesh).
    pub fn is_identity(&self) -> bool {
        *self == Superstructure::IDENTITY
    }

    /// The beam p·b*1 + q·b*2 in substrate units: (h, k) = q_den·adj(N)·(p, q)/det N,
    /// denominator |det N|.
    pub fn position(&self, pq: [i32; 2]) -> FracRod {
        let n = self.matrix();
        let det = self.det_n();
        let q = i32::from(self.den);
        let s = det.signum();
        FracRod {
            num: [
                s * q * (n[1][1] * pq[0] - n[0][1] * pq[1]),
                s * q * (-n[1][0] * pq[0] + n[0][0] * pq[1]),
            ],
            den: det.abs(),
        }
    }

    /// Whether `pos` is a beam of this superstructure: (p, q) = M·(h, k) whole.
    pub fn has_beam(&self, pos: &FracRod) -> bool {
        let n = self.matrix();
        let d = i64::from(pos.den) * i64::from(self.den);
        if d <= 0 {
            return false;
        }
        let (h, k) = (i64::from(pos.num[0]), i64::from(pos.num[1]));
        let p = i64::from(n[0][0]) * h + i64::from(n[0][1]) * k;
        let q = i64::from(n[1][0]) * h + i64::from(n[1][1]) * k;
        p % d == 0 && q % d == 0
    }

    /// The superstructure's mesh vectors b1, b2 in the surface frame, Å.
    pub fn mesh_2d_a(&self, face: &Face) -> [[f32; 2]; 2] {
        let n = self.matrix();
        let q = f32::from(self.den);
        let a = &face.mesh_2d_a;
        let row = |r: [i32; 2]| {
            let (x, y) = (r[0] as f32 / q, r[1] as f32 / q);
            [x * a[0][0] + y * a[1][0], x * a[0][1] + y * a[1][1]]
        };
        [row(n[0]), row(n[1])]
    }

    /// Every beam of the superstructure at `inc`, integer-order ones included, sorted
    /// by |g| (specular first; equal |g| by position descending), into `out`; `domains`
    /// is 1 on each. Bounded like [`Face::beams`]: a disk of |g| that starts with room
    /// for about twice `out.len()` beams and doubles until it holds more than `out` or
    /// every beam.
    pub fn beams(&self, face: &Face, inc: &Incidence, out: &mut [SuperBeam]) -> Result<Listing> {
        union_beams(face, inc, core::slice::from_ref(self), out)
    }
}

/// The one order of superstructure beams: |g| increasing; equal |g| (relative 1e-5) by
/// position descending, h then k (compared exactly).
pub fn super_beam_before(a: &SuperBeam, b: &SuperBeam) -> bool {
    let (ga, gb) = (a.beam.g_inv_a, b.beam.g_inv_a);
    let tol = 1e-5 * if ga > gb { ga } else { gb };
    if ga < gb - tol {
        true
    } else if ga > gb + tol {
        false
    } else {
        let l = |x: i32, d: i32| i64::from(x) * i64::from(d);
        let (pa, pb) = (&a.pos, &b.pos);
        let ka = [l(pa.num[0], pb.den), l(pa.num[1], pb.den)];
        let kb = [l(pb.num[0], pa.den), l(pb.num[1], pa.den)];
        ka > kb
    }
}

/// The beams of the union of several superstructures (e.g. the domains of
/// [`crate::surface::domains`]) at `inc`, merged by exact position: each listed once,
/// with bit i of `domains` set when `supers[i]` has it (at most 16 superstructures).
/// Sorted and bounded as [`Superstructure::beams`]; the work is at most the number of
/// superstructures times the rows and beams of the search disk, and each beam found is
/// compared with the stored beams of equal |g| (found by bisection).
pub fn union_beams(
    face: &Face,
    inc: &Incidence,
    supers: &[Superstructure],
    out: &mut [SuperBeam],
) -> Result<Listing> {
    if out.is_empty() {
        return Err(Error::EmptyBuffer);
    }
    if supers.is_empty() || supers.len() > 16 {
        return Err(Error::SuperstructureTooLarge);
    }
    // The disk of g where beams propagate: centre −R(−φ)·k∥,in, radius 1/λ.
    let kin = inc.k_par_in();
    let (sa, ca) = math::sin_cos_deg(inc.azimuth_deg);
    let p_centre = [-(kin[0] * ca + kin[1] * sa), kin[0] * sa - kin[1] * ca];
    let p_radius = inc.k_inv_a;
    let c = p_centre;
    let g_all = math::sqrt(c[0] * c[0] + c[1] * c[1]) + p_radius;
    // Start with a disk of ≈ 2·(n + 1) superstructure cells plus a row of the
    // smallest superstructure mesh in the list.
    let mut cells = f32::INFINITY;
    for s in supers {
        let x = s.cells().abs();
        if x < cells {
            cells = x;
        }
    }
    let cell_inv_a2 = 1.0 / (face.area_a2() * cells).max(f32::MIN_POSITIVE);
    let n = out.len() as f32 + 1.0;
    let b = &face.recip_2d_inv_a;
    let row = math::sqrt(b[0][0] * b[0][0] + b[0][1] * b[0][1])
        + math::sqrt(b[1][0] * b[1][0] + b[1][1] * b[1][1]);
    let mut r = math::sqrt(2.0 * n * cell_inv_a2 / core::f32::consts::PI) + row;
    // 64 doublings take any start beyond every |g| a 300 keV beam can reach.
    for _ in 0..64 {
        let all = r >= g_all;
        let (centre, radius, max_g) = if all || p_radius < r {
            (p_centre, p_radius, if all { f32::INFINITY } else { r })
        } else {
            ([0.0, 0.0], r, r)
        };
        let mut stored = 0usize;
        let mut truncated = false;
        for (i, s) in supers.iter().enumerate() {
            let bit = 1u16 << i;
            for_each_point(face, s, centre, radius, |pq| {
                let pos = s.position(pq).normalised();
                let Ok(beam) = face.frac_beam(&pos, inc) else {
                    return;
                };
                if beam.g_inv_a > max_g {
                    return;
                }
                // The same position gives the same |g| bit for bit (one arithmetic from
                // the normalised fraction), so only the stored beams within a relative
                // 1e-3 of it are compared, found by bisection. The order ties |g| within
                // 1e-5, so it is sorted by |g| to far better than that window.
                let g = beam.g_inv_a;
                let tol = 1e-3 * g;
                if let Some(kept) = out.get_mut(..stored) {
                    let from = kept.partition_point(|x| x.beam.g_inv_a < g - tol);
                    let seen = kept
                        .get_mut(from..)
                        .into_iter()
                        .flatten()
                        .take_while(|x| x.beam.g_inv_a <= g + tol)
                        .find(|x| x.pos.same(&pos));
                    if let Some(seen) = seen {
                        seen.domains |= bit;
                        return;
                    }
                }
                let item = SuperBeam {
                    pos,
                    integer: pos.integer().is_some(),
                    beam,
                    domains: bit,
                };
                truncated |= insert_sorted(out, &mut stored, item, super_beam_before);
            });
        }
        if truncated || all {
            return Ok(Listing { stored, truncated });
        }
        r *= 2.0;
    }
    Err(Error::IndicesTooLarge)
}

/// Calls `f(p, q)` for every superstructure reciprocal point p·b*1 + q·b*2 inside the
/// disk (centre, radius; face frame, 1/Å, grown by a relative 1e-4 so that rounding drops
/// none), row by row: rows p with p = g·b1 (bi·b*j = δij), and on each row the chord of
/// q values. Rows and q are clamped to ±4096 substrate-index equivalents.
fn for_each_point(
    face: &Face,
    s: &Superstructure,
    centre: [f32; 2],
    radius: f32,
    mut f: impl FnMut([i32; 2]),
) {
    let radius = radius * (1.0 + 1e-4) + 1e-4;
    let real = s.mesh_2d_a(face);
    // b*1, b*2 from the real superstructure mesh: the inverse transpose.
    let det = real[0][0] * real[1][1] - real[0][1] * real[1][0];
    if det == 0.0 || det.is_nan() {
        return;
    }
    let bs = [
        [real[1][1] / det, -real[1][0] / det],
        [-real[0][1] / det, real[0][0] / det],
    ];
    let len1 = math::sqrt(real[0][0] * real[0][0] + real[0][1] * real[0][1]);
    let mid = centre[0] * real[0][0] + centre[1] * real[0][1];
    let lim = 4096.0 * f32::from(s.den) * 8.0;
    let lo = math::clamp(math::floor(mid - radius * len1), -lim, lim) as i32;
    let hi = math::clamp(math::floor(mid + radius * len1) + 1.0, -lim, lim) as i32;
    let b2 = bs[1];
    let qa = b2[0] * b2[0] + b2[1] * b2[1];
    if qa.is_nan() || qa <= 0.0 {
        return;
    }
    for p in lo..=hi {
        let pf = p as f32;
        let v = [pf * bs[0][0] - centre[0], pf * bs[0][1] - centre[1]];
        let qb = b2[0] * v[0] + b2[1] * v[1];
        let qc = v[0] * v[0] + v[1] * v[1] - radius * radius;
        let disc = qb * qb - qa * qc;
        if disc < 0.0 {
            continue;
        }
        let root = math::sqrt(disc);
        let k_lo = math::clamp(math::floor((-qb - root) / qa), -lim, lim) as i32;
        let k_hi = math::clamp(math::floor((-qb + root) / qa) + 1.0, -lim, lim) as i32;
        for q in k_lo..=k_hi {
            f([p, q]);
        }
    }
}

#[cfg(test)]
#[path = "superstructure_tests.rs"]
mod tests;
