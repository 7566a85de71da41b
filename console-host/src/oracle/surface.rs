//! Surface meshes by brute-force lattice search, layer spacings and rods.

use super::vec::*;
use super::*;

/// Surface mesh of a face: lengths in Å, angle in degrees, area in Å².
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct OMesh {
    /// |a1|, the shortest in-plane lattice vector, Å.
    pub a1_len_a: f64,
    /// |a2|, the shortest in-plane lattice vector not parallel to a1, Å.
    pub a2_len_a: f64,
    /// Angle between a1 and a2, in [60°, 90°] (reduced 2D cell, signs chosen).
    pub gamma_deg: f64,
    /// |a1 × a2|, Å².
    pub area_a2: f64,
    /// Spacing of successive lattice planes parallel to the face, Å.
    pub layer_spacing_a: f64,
}

/// Unit outward normal of face (hkl): the unit vector along G(hkl) (crystal frame).
pub fn face_normal(cell: &OCell, hkl: [i32; 3]) -> [f64; 3] {
    unit(cell.g_vector(hkl))
}

pub(super) fn gcd(a: i64, b: i64) -> i64 {
    let (mut a, mut b) = (a.abs(), b.abs());
    while b != 0 {
        let t = a % b;
        a = b;
        b = t;
    }
    a
}

/// A mesh choice during the search: (right-handed, key of a1, key of a2, a1, a2).
pub(super) type MeshCandidate = (bool, [i64; 3], [i64; 3], V3, V3);

/// Mesh vectors (a1, a2) of face (hkl), crystal-frame Cartesian, Å, found by brute
/// force over Bravais lattice points in the plane ⟂ G(hkl).
///
/// a1 is a shortest in-plane lattice vector, a2 a shortest one not parallel to it;
/// signs are chosen so that the angle between them is in [60°, 90°]. Among equal
/// choices, one with (a1, a2, n̂) right-handed is preferred, then the
/// lexicographically larger Cartesian coordinates of a1, then of a2. (This is the
/// oracle's own tie-break; callers comparing beams should pass their own vectors to
/// [`beam_exit`].) `None` for hkl = (0,0,0).
pub fn mesh_vectors(cell: &OCell, hkl: [i32; 3]) -> Option<([f64; 3], [f64; 3])> {
    if hkl == [0, 0, 0] {
        return None;
    }
    let n = face_normal(cell, hkl);
    let amax = cell
        .direct_vectors()
        .iter()
        .map(|a| norm(*a))
        .fold(0.0, f64::max);
    let mut radius = 2.0 * amax;
    for _ in 0..10 {
        let tol = 1e-9 * radius;
        let mut pts: Vec<V3> = cell
            .lattice_points_near_origin(radius)
            .into_iter()
            .filter(|r| dot(*r, n).abs() < tol)
            .collect();
        pts.sort_by(|p, q| norm(*p).total_cmp(&norm(*q)));
        if let Some(first) = pts.first().copied() {
            let l1 = norm(first);
            let noncollinear = |u: V3, v: V3| norm(cross(u, v)) > 1e-9 * norm(u) * norm(v);
            if let Some(l2) = pts
                .iter()
                .filter(|v| noncollinear(first, **v))
                .map(|v| norm(*v))
                .next()
            {
                let c1: Vec<V3> = pts
                    .iter()
                    .copied()
                    .filter(|v| (norm(*v) - l1).abs() <= 1e-9 * l1)
                    .collect();
                let c2: Vec<V3> = pts
                    .iter()
                    .copied()
                    .filter(|v| (norm(*v) - l2).abs() <= 1e-9 * l2)
                    .collect();
                let key = |v: V3| v.map(|x| (x * 1e6).round() as i64);
                let mut best: Option<MeshCandidate> = None;
                for &u in &c1 {
                    for &v in &c2 {
                        if !noncollinear(u, v) {
                            continue;
                        }
                        let w = if dot(u, v) < 0.0 { scale(-1.0, v) } else { v };
                        let rh = dot(cross(u, w), n) > 0.0;
                        let cand = (rh, key(u), key(w), u, w);
                        let better = match &best {
                            None => true,
                            Some(b) => (cand.0, cand.1, cand.2) > (b.0, b.1, b.2),
                        };
                        if better {
                            best = Some(cand);
                        }
                    }
                }
                if let Some((_, _, _, u, w)) = best {
                    return Some((u, w));
                }
            }
        }
        radius *= 2.0;
    }
    None
}

/// Surface mesh of face (hkl) (three conventional indices): the two shortest
/// independent Bravais lattice vectors ⟂ G(hkl), their angle folded into [60°, 90°],
/// the mesh area, and the layer spacing 1/|G_min| where G_min is the shortest
/// reciprocal vector along the normal allowed by the lattice centring (not by the
/// motif). hkl = (0,0,0), or a mesh beyond the search range, gives an all-NaN mesh.
pub fn surface_mesh(cell: &OCell, hkl: [i32; 3]) -> OMesh {
    let nan = OMesh {
        a1_len_a: f64::NAN,
        a2_len_a: f64::NAN,
        gamma_deg: f64::NAN,
        area_a2: f64::NAN,
        layer_spacing_a: f64::NAN,
    };
    let Some((a1, a2)) = mesh_vectors(cell, hkl) else {
        return nan;
    };
    let l1 = norm(a1);
    let l2 = norm(a2);
    let area = norm(cross(a1, a2));
    let gamma = area.atan2(dot(a1, a2)).to_degrees();
    OMesh {
        a1_len_a: l1,
        a2_len_a: l2,
        gamma_deg: gamma,
        area_a2: area,
        layer_spacing_a: layer_spacing_a(cell, hkl),
    }
}

/// Spacing of lattice planes parallel to face (hkl), Å: 1/|m·G(p)| with p = hkl/gcd
/// and m ≥ 1 the smallest multiple for which m·p·t is an integer for every centring
/// translation t.
pub fn layer_spacing_a(cell: &OCell, hkl: [i32; 3]) -> f64 {
    let g = gcd(gcd(hkl[0] as i64, hkl[1] as i64), hkl[2] as i64);
    if g == 0 {
        return f64::NAN;
    }
    let p = hkl.map(|x| (x as i64 / g) as i32);
    let centring = cell.structure.centring();
    let mut m = 1;
    while m < 64 {
        let ok = centring.iter().all(|t| {
            let s: f64 = (0..3).map(|i| (m * p[i]) as f64 * t[i]).sum();
            (s - s.round()).abs() < 1e-9
        });
        if ok {
            break;
        }
        m += 1;
    }
    1.0 / (m as f64 * norm(cell.g_vector(p)))
}

/// In-plane reciprocal basis (b1, b2) of mesh (a1, a2) with a_i·b_j = δ_ij and
/// b_i·n̂ = 0.
pub fn rod_basis(a1: [f64; 3], a2: [f64; 3], normal: [f64; 3]) -> ([f64; 3], [f64; 3]) {
    let n = unit(normal);
    let c1 = cross(a2, n);
    let c2 = cross(n, a1);
    (scale(1.0 / dot(a1, c1), c1), scale(1.0 / dot(a2, c2), c2))
}

/// Rod vector g = h b1 + k b2 (crystal frame, Å⁻¹).
pub fn rod_vector(a1: [f64; 3], a2: [f64; 3], normal: [f64; 3], rod: [i32; 2]) -> [f64; 3] {
    let (b1, b2) = rod_basis(a1, a2, normal);
    add(scale(rod[0] as f64, b1), scale(rod[1] as f64, b2))
}

/// A face's mesh chosen by the rule the core documents (see `DEVELOPERS.md`, "Geometry
/// conventions"), from the raw face indices: the indices reduced by their common divisor;
/// a1 a shortest in-plane Bravais lattice vector, a2 a shortest one not parallel to a1,
/// (a1, a2, n̂) right-handed; among equal lengths the lexicographically larger
/// conventional coordinates win, for a1 and then for a2, whose sign is set for the
/// handedness after that choice (so the tie is decided before the sign).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ORuleMesh {
    /// The face indices reduced by their common divisor.
    pub miller: [i32; 3],
    /// a1 in conventional coordinates, in units of half a cell axis.
    pub a1_half: [i32; 3],
    /// a2 in conventional coordinates, in units of half a cell axis.
    pub a2_half: [i32; 3],
    /// a1, Cartesian (crystal frame), Å.
    pub a1: [f64; 3],
    /// a2, Cartesian (crystal frame), Å.
    pub a2: [f64; 3],
    /// Unit outward normal along G(reduced hkl).
    pub normal: [f64; 3],
    /// Angle between a1 and a2 (not folded), degrees in (0°, 180°).
    pub gamma_deg: f64,
}

/// The mesh of face `hkl` (any common divisor) under the documented rule, by brute force
/// over Bravais lattice points; `None` for (0,0,0) or beyond the search range.
pub fn mesh_by_rule(cell: &OCell, hkl: [i32; 3]) -> Option<ORuleMesh> {
    let g = gcd(gcd(hkl[0] as i64, hkl[1] as i64), hkl[2] as i64);
    if g == 0 {
        return None;
    }
    let miller = hkl.map(|x| (x as i64 / g) as i32);
    let n = face_normal(cell, miller);
    let recip = cell.reciprocal_vectors();
    // Conventional coordinates r·B_i, in half axes (every centring translation is a
    // multiple of ½).
    let half = |r: V3| recip.map(|b| (2.0 * dot(r, b)).round() as i32);
    let amax = cell
        .direct_vectors()
        .iter()
        .map(|a| norm(*a))
        .fold(0.0, f64::max);
    let mut radius = 2.0 * amax;
    for _ in 0..10 {
        let tol = 1e-9 * radius;
        let mut pts: Vec<(f64, [i32; 3], V3)> = cell
            .lattice_points_near_origin(radius)
            .into_iter()
            .filter(|r| dot(*r, n).abs() < tol)
            .map(|r| (norm(r), half(r), r))
            .collect();
        // Shortest first; among equal lengths the lexicographically larger coordinates.
        pts.sort_by(|p, q| {
            if (p.0 - q.0).abs() <= 1e-9 * p.0.max(q.0) {
                q.1.cmp(&p.1)
            } else {
                p.0.total_cmp(&q.0)
            }
        });
        if let Some(&(_, a1_half, a1)) = pts.first() {
            let noncollinear = |u: V3, v: V3| norm(cross(u, v)) > 1e-9 * norm(u) * norm(v);
            // The first non-parallel point in that order, then its sign set so that
            // (a1, a2, n̂) is right-handed.
            if let Some(&(_, h, v)) = pts.iter().find(|p| noncollinear(a1, p.2)) {
                let (a2_half, a2) = if dot(cross(a1, v), n) > 0.0 {
                    (h, v)
                } else {
                    (h.map(|x| -x), scale(-1.0, v))
                };
                let gamma = norm(cross(a1, a2)).atan2(dot(a1, a2)).to_degrees();
                return Some(ORuleMesh {
                    miller,
                    a1_half,
                    a2_half,
                    a1,
                    a2,
                    normal: n,
                    gamma_deg: gamma,
                });
            }
        }
        radius *= 2.0;
    }
    None
}
