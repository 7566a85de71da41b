//! Rotational and mirror domains of a superstructure from the substrate mesh's point
//! group.
//!
//! The point group of the mesh is found, not looked up: every integer matrix R with
//! entries in {−1, 0, 1} and det R = ±1 that keeps the metric (R^T·G·R = G, G = the
//! Gram matrix of a1, a2, relative tolerance 1e-4) is an operation (acting on real-space
//! coordinates in the a1, a2 basis). The face's mesh is a reduced basis (shortest
//! vectors), for which every operation has such entries. This gives 8 operations on a
//! square mesh (p4mm), 12 on a hexagonal one (p6mm), 4 on rectangular (p2mm) and
//! centred-rectangular (c2mm) ones, 2 on an oblique one (p2).
//!
//! The operation R turns a superstructure with rows b1, b2 (matrix M) into M·R^T. Two
//! results are the same domain when they span the same lattice (M'·M⁻¹ is whole and
//! unimodular). The first operation (in the order rotations by increasing angle, then
//! mirrors by increasing line angle) that yields a domain names it; domain 0 is the
//! superstructure itself (identity).
//!
//! ```
//! use matterwave_core::lattice::{Cell, Structure};
//! use matterwave_core::surface::{domains, Face, Superstructure};
//! let si = Cell::new(Structure::Diamond, 5.431, 0.0, 0.0).unwrap();
//! let f = Face::new(&si, [1, 0, 0]).unwrap();
//! let two_by_one = Superstructure::new([[2, 0], [0, 1]], 1).unwrap();
//! let mut out = [domains::Domain::EMPTY; domains::MAX_DOMAINS];
//! let n = domains::domains(&f, &two_by_one, &mut out);
//! assert_eq!(n, 2); // (2×1) and (1×2), turned by 90°
//! ```

use super::{Face, MeshKind, Superstructure};
use crate::math;

/// Most operations of a 2D lattice point group (6mm), and so most domains.
pub const MAX_DOMAINS: usize = 12;

/// One point-group operation of the substrate mesh.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct MeshOp {
    /// The operation on real-space coordinates (a1, a2 basis, column vectors).
    pub r: [[i8; 2]; 2],
    /// Whether it is a mirror (det R = −1).
    pub mirror: bool,
    /// Rotation angle (counter-clockwise, 0 to 360) of a rotation, or the angle of the
    /// mirror line from a1 (0 to 180), degrees, in the surface frame.
    pub angle_deg: f32,
}

impl MeshOp {
    /// The identity.
    pub const IDENTITY: MeshOp = MeshOp {
        r: [[1, 0], [0, 1]],
        mirror: false,
        angle_deg: 0.0,
    };

    fn m(&self) -> [[i32; 2]; 2] {
        let r = &self.r;
        [
            [i32::from(r[0][0]), i32::from(r[0][1])],
            [i32::from(r[1][0]), i32::from(r[1][1])],
        ]
    }

    /// The operation's action on reciprocal coordinates (h, k): R^{-T}, whole.
    pub fn reciprocal(&self) -> [[i32; 2]; 2] {
        let r = self.m();
        let det = r[0][0] * r[1][1] - r[0][1] * r[1][0];
        // R⁻¹ = adj(R)/det; its transpose.
        [
            [r[1][1] * det, -r[1][0] * det],
            [-r[0][1] * det, r[0][0] * det],
        ]
    }
}

/// One domain: the superstructure turned or mirrored by `op`.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Domain {
    /// Its matrix on the substrate mesh.
    pub sup: Superstructure,
    /// The first operation that yields it.
    pub op: MeshOp,
}

impl Domain {
    /// A placeholder for initialising buffers.
    pub const EMPTY: Domain = Domain {
        sup: Superstructure::IDENTITY,
        op: MeshOp::IDENTITY,
    };
}

/// The 2D point group's conventional symbol for a mesh kind (p4mm, p6mm, p2mm, c2mm,
/// p2).
pub const fn point_group_name(kind: MeshKind) -> &'static str {
    match kind {
        MeshKind::Square => "p4mm",
        MeshKind::Hexagonal => "p6mm",
        MeshKind::Rectangular => "p2mm",
        MeshKind::CentredRectangular => "c2mm",
        MeshKind::Oblique => "p2",
    }
}

/// The point-group operations of the face's mesh into `out`, in the order of the
/// module docs; returns how many (at most [`MAX_DOMAINS`]; 81 candidates tried).
pub fn point_group(face: &Face, out: &mut [MeshOp; MAX_DOMAINS]) -> usize {
    let a = &face.mesh_2d_a;
    let dot = |u: [f32; 2], v: [f32; 2]| u[0] * v[0] + u[1] * v[1];
    let g = [
        [dot(a[0], a[0]), dot(a[0], a[1])],
        [dot(a[1], a[0]), dot(a[1], a[1])],
    ];
    let scale = g[0][0].max(g[1][1]);
    let mut n = 0usize;
    let vals = [-1i32, 0, 1];
    for r00 in vals {
        for r01 in vals {
            for r10 in vals {
                for r11 in vals {
                    let r = [[r00, r01], [r10, r11]];
                    let det = r00 * r11 - r01 * r10;
                    if det.abs() != 1 {
                        continue;
                    }
                    // (R^T G R)_ij = Σ R_ki G_kl R_lj.
                    let mut ok = true;
                    for i in 0..2 {
                        for j in 0..2 {
                            let mut s = 0.0f32;
                            for (k, gk) in g.iter().enumerate() {
                                for (l, gkl) in gk.iter().enumerate() {
                                    let rki = r.get(k).and_then(|x| x.get(i)).copied();
                                    let rlj = r.get(l).and_then(|x| x.get(j)).copied();
                                    s += (rki.unwrap_or(0) * rlj.unwrap_or(0)) as f32 * gkl;
                                }
                            }
                            let gij = g.get(i).and_then(|x| x.get(j)).copied().unwrap_or(0.0);
                            if (s - gij).abs() > 1e-4 * scale {
                                ok = false;
                            }
                        }
                    }
                    if !ok {
                        continue;
                    }
                    let op = describe(face, r, det < 0);
                    if let Some(slot) = out.get_mut(n) {
                        *slot = op;
                        n += 1;
                    }
                }
            }
        }
    }
    // Rotations first by angle, then mirrors by line angle (insertion sort, n ≤ 12).
    let key = |o: &MeshOp| (o.mirror, o.angle_deg);
    let ops = out.get_mut(..n).unwrap_or_default();
    for i in 1..ops.len() {
        let mut j = i;
        while j > 0 {
            let (Some(x), Some(y)) = (ops.get(j - 1), ops.get(j)) else {
                break;
            };
            let (kx, ky) = (key(x), key(y));
            if kx.0 & !ky.0 || (kx.0 == ky.0 && kx.1 > ky.1) {
                ops.swap(j - 1, j);
                j -= 1;
            } else {
                break;
            }
        }
    }
    n
}

/// Angle of a rotation or of a mirror line, from the image of a1 in Cartesian terms.
fn describe(face: &Face, r: [[i32; 2]; 2], mirror: bool) -> MeshOp {
    let a = &face.mesh_2d_a;
    // Image of a1 = R·(1, 0) = (r00, r10) in the a basis.
    let (x, y) = (r[0][0] as f32, r[1][0] as f32);
    let v = [x * a[0][0] + y * a[1][0], x * a[0][1] + y * a[1][1]];
    let ang = math::deg(math::atan2(v[1], v[0]) - math::atan2(a[0][1], a[0][0]));
    let wrap = |t: f32, period: f32| {
        let w = t - period * math::floor(t / period);
        // Round off f32 noise to 1e-3° so the sort keys of equal angles agree.
        let w = math::round(w * 1000.0) / 1000.0;
        if w >= period {
            w - period
        } else {
            w
        }
    };
    let angle_deg = if mirror {
        // A mirror about a line at ψ sends a1 (at 0) to 2ψ.
        wrap(ang * 0.5, 180.0)
    } else {
        wrap(ang, 360.0)
    };
    MeshOp {
        r: [
            [r[0][0] as i8, r[0][1] as i8],
            [r[1][0] as i8, r[1][1] as i8],
        ],
        mirror,
        angle_deg,
    }
}

/// Applies `op` to a superstructure: M·R^T (same denominator), its second row negated
/// when that makes det N positive (the same lattice, right-handed).
pub fn apply(sup: &Superstructure, op: &MeshOp) -> Superstructure {
    let n = sup.matrix();
    let r = op.m();
    let mut o = [[0i8; 2]; 2];
    for (orow, nrow) in o.iter_mut().zip(n.iter()) {
        for (x, rrow) in orow.iter_mut().zip(r.iter()) {
            // (M R^T)_ij = Σ_k M_ik R_jk; entries stay within ±2·MAX_ENTRY ≤ 48.
            *x = (nrow[0] * rrow[0] + nrow[1] * rrow[1]) as i8;
        }
    }
    // A mirror flips the handedness: (b1, −b2) spans the same lattice with det > 0.
    let det = i32::from(o[0][0]) * i32::from(o[1][1]) - i32::from(o[0][1]) * i32::from(o[1][0]);
    if det < 0 {
        o[1] = [o[1][0].wrapping_neg(), o[1][1].wrapping_neg()];
    }
    Superstructure { n: o, den: sup.den }
}

/// Whether two superstructures span the same lattice: N'·adj(N) divisible by det N
/// (equal denominators, equal |det|).
pub fn same_lattice(a: &Superstructure, b: &Superstructure) -> bool {
    if a.den != b.den || a.det_n().abs() != b.det_n().abs() {
        return false;
    }
    let (n, m) = (a.matrix(), b.matrix());
    let det = a.det_n();
    if det == 0 {
        return false;
    }
    let adj = [[n[1][1], -n[0][1]], [-n[1][0], n[0][0]]];
    m.iter().all(|row| {
        (0..2).all(|j| {
            let c0 = adj.first().and_then(|x| x.get(j)).copied().unwrap_or(0);
            let c1 = adj.get(1).and_then(|x| x.get(j)).copied().unwrap_or(0);
            (row[0] * c0 + row[1] * c1) % det == 0
        })
    })
}

/// The symmetry-distinct domains of `sup` on the face's mesh into `out` (domain 0 is
/// `sup`); returns how many (1 to [`MAX_DOMAINS`]).
pub fn domains(face: &Face, sup: &Superstructure, out: &mut [Domain; MAX_DOMAINS]) -> usize {
    let mut ops = [MeshOp::IDENTITY; MAX_DOMAINS];
    let n_ops = point_group(face, &mut ops);
    let mut n = 0usize;
    for op in ops.iter().take(n_ops.max(1)) {
        let s = apply(sup, op);
        let seen = out
            .get(..n)
            .is_some_and(|d| d.iter().any(|x| same_lattice(&x.sup, &s)));
        if !seen {
            if let Some(slot) = out.get_mut(n) {
                *slot = Domain { sup: s, op: *op };
                n += 1;
            }
        }
    }
    n
}

/// A superstructure as the sample shows it: alone, or as the union of its
/// symmetry-distinct domains ([`domains`]). Six bytes, so that a plan can carry one;
/// the domain list is made again where it is needed ([`Overlayer::supers`]).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Overlayer {
    /// The superstructure (domain 0).
    pub sup: Superstructure,
    /// Whether the beams are those of the union of its domains.
    pub with_domains: bool,
}

impl Overlayer {
    /// The superstructure alone (`with_domains` false) or with its domains.
    pub const fn new(sup: Superstructure, with_domains: bool) -> Overlayer {
        Overlayer { sup, with_domains }
    }

    /// The superstructures whose beams the overlayer shows, into `out`: `sup` alone, or
    /// the domains of [`domains`] in its order (so bit i of a beam's `domains` is
    /// domain i). Returns how many (1 to [`MAX_DOMAINS`]).
    pub fn supers(&self, face: &Face, out: &mut [Superstructure; MAX_DOMAINS]) -> usize {
        if !self.with_domains {
            if let Some(o) = out.first_mut() {
                *o = self.sup;
            }
            return 1;
        }
        let mut doms = [Domain::EMPTY; MAX_DOMAINS];
        let n = domains(face, &self.sup, &mut doms);
        for (o, d) in out.iter_mut().zip(doms.iter().take(n)) {
            *o = d.sup;
        }
        n
    }
}
