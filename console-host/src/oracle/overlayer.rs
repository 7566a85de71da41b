//! Superstructures and their domains, in f64, by brute force: the reciprocal mesh of the
//! superstructure from cross products of its real vectors, beams from a box of (p, q)
//! search, positions in substrate units by projection on a1, a2 (a_i·b_j = δ_ij), and
//! domains from Cartesian rotations by multiples of 30° and mirrors about lines along
//! short lattice vectors (a mirror of a 2D lattice has its line along a lattice vector)
//! that map the substrate lattice onto itself.
//!
//! The core works with integer matrices, adjugates and exact fractions; here every step
//! is a floating-point vector construction, and fractions are recovered at the end.

use super::lab::LabFrame;
use super::vec::*;
use super::*;

/// One beam of a superstructure (or of the union of its domains).
#[derive(Clone, Debug, PartialEq)]
pub struct OSuperBeam {
    /// Position in substrate units, h = g·a1 and k = g·a2.
    pub hk: [f64; 2],
    /// The same as (numerator h, numerator k, denominator) in lowest common terms, when
    /// a denominator up to 64 fits within 1e-7.
    pub fraction: Option<[i64; 3]>,
    /// |g|, Å⁻¹.
    pub g_inv_a: f64,
    /// Polar exit angle, degrees.
    pub exit_polar_deg: f64,
    /// Exit azimuth in the surface frame, degrees.
    pub exit_azimuth_deg: f64,
    /// Indices (into the oracle's own domain list) of the domains holding the beam.
    pub domains: Vec<usize>,
}

/// The superstructure vectors b_i = Σ_j m_ij a_j (crystal frame, Å).
pub fn super_vectors(a1: V3, a2: V3, m: [[f64; 2]; 2]) -> (V3, V3) {
    (
        add(scale(m[0][0], a1), scale(m[0][1], a2)),
        add(scale(m[1][0], a1), scale(m[1][1], a2)),
    )
}

fn fraction_of(hk: [f64; 2]) -> Option<[i64; 3]> {
    (1..=64i64).find_map(|d| {
        let n = hk.map(|x| (x * d as f64).round());
        let ok = (0..2).all(|i| (n[i] - hk[i] * d as f64).abs() < 1e-7 * d as f64);
        ok.then(|| [n[0] as i64, n[1] as i64, d])
    })
}

/// Every propagating beam of the superstructure with real vectors (b1, b2) on the mesh
/// (a1, a2) at the energy (eV), tilt and azimuth (degrees), by a box search of
/// |p| ≤ 2|b1|/λ + 1, |q| ≤ 2|b2|/λ + 1 (every beam has |g| ≤ 2/λ). `domains` is empty.
pub fn super_beams(
    a1: V3,
    a2: V3,
    normal: V3,
    b: (V3, V3),
    energy_ev: f64,
    tilt_deg: f64,
    azimuth_deg: f64,
) -> Vec<OSuperBeam> {
    let q = 1.0 / wavelength_a(energy_ev);
    let (c1, c2) = rod_basis(b.0, b.1, normal);
    let frame = LabFrame::new(a1, normal, tilt_deg, azimuth_deg);
    let kin = scale(q, frame.k_par_in_per_q());
    let pmax = (2.0 * q * norm(b.0)).ceil() as i64 + 1;
    let qmax = (2.0 * q * norm(b.1)).ceil() as i64 + 1;
    let mut out = Vec::new();
    for p in -pmax..=pmax {
        for r in -qmax..=qmax {
            let g = add(scale(p as f64, c1), scale(r as f64, c2));
            let k_par = add(kin, mat_vec(&frame.rot, g));
            let kp2 = dot(k_par, k_par);
            if kp2 > q * q {
                continue;
            }
            let kperp = (q * q - kp2).sqrt();
            let hk = [dot(g, a1), dot(g, a2)];
            out.push(OSuperBeam {
                hk,
                fraction: fraction_of(hk),
                g_inv_a: norm(g),
                exit_polar_deg: kp2.sqrt().atan2(kperp).to_degrees(),
                exit_azimuth_deg: dot(k_par, frame.e2)
                    .atan2(dot(k_par, frame.e1))
                    .to_degrees(),
                domains: Vec::new(),
            });
        }
    }
    out
}

/// Whether v is a whole combination of (u1, u2) (in-plane vectors), within 1e-6.
fn whole_in(v: V3, u1: V3, u2: V3, normal: V3) -> bool {
    let (d1, d2) = rod_basis(u1, u2, normal);
    let x = [dot(v, d1), dot(v, d2)];
    x.iter().all(|c| (c - c.round()).abs() < 1e-6)
}

/// The mirror about the in-plane line along `line` (through the plane containing that
/// line and n).
fn mirror_along(n: V3, line: V3) -> M3 {
    let l = unit(line);
    // Reflection in the plane spanned by l and n: x ↦ 2(x·l)l + 2(x·n)n − x.
    let mut m = [[0.0; 3]; 3];
    for (i, row) in m.iter_mut().enumerate() {
        for (j, x) in row.iter_mut().enumerate() {
            let id = if i == j { 1.0 } else { 0.0 };
            *x = 2.0 * l[i] * l[j] + 2.0 * n[i] * n[j] - id;
        }
    }
    m
}

/// The Cartesian operations (crystal frame) that map the mesh lattice onto itself,
/// among rotations by multiples of 30° and mirrors along the lattice vectors
/// u·a1 + v·a2 with |u|, |v| ≤ 2 (duplicates removed).
pub fn mesh_symmetries(a1: V3, a2: V3, normal: V3) -> Vec<M3> {
    let n = unit(normal);
    let mut cands: Vec<M3> = (0..12).map(|j| rot_axis(n, 30.0 * j as f64)).collect();
    for u in -2..=2i32 {
        for v in 0..=2i32 {
            if (u, v) != (0, 0) {
                cands.push(mirror_along(
                    n,
                    add(scale(u as f64, a1), scale(v as f64, a2)),
                ));
            }
        }
    }
    let mut ops: Vec<M3> = Vec::new();
    for m in cands {
        let maps = whole_in(mat_vec(&m, a1), a1, a2, n) && whole_in(mat_vec(&m, a2), a1, a2, n);
        let dup = ops
            .iter()
            .any(|o| (0..3).all(|i| (0..3).all(|j| (o[i][j] - m[i][j]).abs() < 1e-9)));
        if maps && !dup {
            ops.push(m);
        }
    }
    ops
}

/// The distinct domains (real vectors) of the superstructure (b1, b2) under the mesh's
/// symmetries: images S·b_i, two being the same when each vector of one is a whole
/// combination of the other's. The superstructure itself is first.
pub fn domain_vectors(a1: V3, a2: V3, normal: V3, b: (V3, V3)) -> Vec<(V3, V3)> {
    let n = unit(normal);
    let mut out: Vec<(V3, V3)> = Vec::new();
    for s in mesh_symmetries(a1, a2, n) {
        let d = (mat_vec(&s, b.0), mat_vec(&s, b.1));
        let same = out
            .iter()
            .any(|e| whole_in(d.0, e.0, e.1, n) && whole_in(d.1, e.0, e.1, n));
        if !same {
            out.push(d);
        }
    }
    out
}

/// The union of the beams of every domain, merged by position (within 1e-6 in h and
/// k), each with the domains (indices into [`domain_vectors`]) that hold it.
pub fn domain_union(
    a1: V3,
    a2: V3,
    normal: V3,
    b: (V3, V3),
    energy_ev: f64,
    tilt_deg: f64,
    azimuth_deg: f64,
) -> (Vec<(V3, V3)>, Vec<OSuperBeam>) {
    let doms = domain_vectors(a1, a2, normal, b);
    let mut all: Vec<OSuperBeam> = Vec::new();
    for (i, d) in doms.iter().enumerate() {
        for mut beam in super_beams(a1, a2, normal, *d, energy_ev, tilt_deg, azimuth_deg) {
            match all.iter_mut().find(|x| {
                (x.hk[0] - beam.hk[0]).abs() < 1e-6 && (x.hk[1] - beam.hk[1]).abs() < 1e-6
            }) {
                Some(x) => x.domains.push(i),
                None => {
                    beam.domains.push(i);
                    all.push(beam);
                }
            }
        }
    }
    (doms, all)
}
