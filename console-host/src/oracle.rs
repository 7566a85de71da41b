//! Independent double-precision reference ("oracle") for the f32 core.
//!
//! Written from the design notes only (units, constants and geometry conventions of
//! DESIGN §3–7), in a deliberately different formulation from the controller code:
//!
//! * everything is built from explicit 3-vectors in f64: direct and reciprocal vectors
//!   come from cross products, never from closed-form d-spacing formulas;
//! * extinctions are decided by evaluating the structure factor of an explicit atom
//!   basis, never by parity rules;
//! * surface meshes come from a brute-force search over Bravais lattice points;
//! * the lab frame is assembled from rotation matrices, and emergence and I-V peak
//!   energies are found by bisection rather than closed forms.
//!
//! Units: eV, Å and degrees at every interface, radians inside. Crystallographer's
//! convention |k| = 1/λ, |g| = 1/d (no 2π). The functions are pure; they do not
//! validate their inputs beyond what is documented (non-physical inputs such as a
//! zero or negative energy give NaN or `None`, never a panic).

/// hc, CODATA 2018, in eV·Å.
pub const HC_EV_A: f64 = 12398.419843320;
/// Electron rest energy m_e c², CODATA 2018, in eV.
pub const MC2_EV: f64 = 510998.95000;
/// Speed of light in vacuum (exact), in m/s.
pub const C_M_S: f64 = 299792458.0;

// ---------------------------------------------------------------------------------
// Small 3-vector toolkit
// ---------------------------------------------------------------------------------

type V3 = [f64; 3];
type M3 = [[f64; 3]; 3];

fn add(a: V3, b: V3) -> V3 {
    [a[0] + b[0], a[1] + b[1], a[2] + b[2]]
}
fn sub(a: V3, b: V3) -> V3 {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}
fn scale(s: f64, a: V3) -> V3 {
    [s * a[0], s * a[1], s * a[2]]
}
fn dot(a: V3, b: V3) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}
fn cross(a: V3, b: V3) -> V3 {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}
fn norm(a: V3) -> f64 {
    dot(a, a).sqrt()
}
fn unit(a: V3) -> V3 {
    scale(1.0 / norm(a), a)
}
fn mat_vec(m: &M3, v: V3) -> V3 {
    [dot(m[0], v), dot(m[1], v), dot(m[2], v)]
}
fn mat_mul(a: &M3, b: &M3) -> M3 {
    let mut out = [[0.0; 3]; 3];
    for (r, row) in out.iter_mut().enumerate() {
        for (c, cell) in row.iter_mut().enumerate() {
            *cell = (0..3).map(|i| a[r][i] * b[i][c]).sum();
        }
    }
    out
}
/// Rotation by `deg` about +z (counter-clockwise seen from +z).
fn rot_z(deg: f64) -> M3 {
    let (s, c) = deg.to_radians().sin_cos();
    [[c, -s, 0.0], [s, c, 0.0], [0.0, 0.0, 1.0]]
}
/// Rotation by `deg` about the unit axis `u` (right-hand rule; Rodrigues' formula).
fn rot_axis(u: V3, deg: f64) -> M3 {
    let (s, c) = deg.to_radians().sin_cos();
    let t = 1.0 - c;
    let [x, y, z] = u;
    [
        [c + x * x * t, x * y * t - z * s, x * z * t + y * s],
        [y * x * t + z * s, c + y * y * t, y * z * t - x * s],
        [z * x * t - y * s, z * y * t + x * s, c + z * z * t],
    ]
}
/// The rotation taking the orthonormal triad `from[i]` onto `to[i]` (i = 0, 1, 2):
/// R = Σ to_i ⊗ from_i.
fn frame_map(from: [V3; 3], to: [V3; 3]) -> M3 {
    let mut m = [[0.0; 3]; 3];
    for i in 0..3 {
        for (r, row) in m.iter_mut().enumerate() {
            for (c, cell) in row.iter_mut().enumerate() {
                *cell += to[i][r] * from[i][c];
            }
        }
    }
    m
}

/// Bisection for a sign change of `f` between `lo` and `hi` (f(lo) and f(hi) of
/// opposite sign, or one of them zero). Runs until the bracket cannot shrink further.
fn bisect(mut lo: f64, mut hi: f64, f: impl Fn(f64) -> f64, geometric: bool) -> f64 {
    let f_lo = f(lo);
    if f_lo == 0.0 {
        return lo;
    }
    let lo_positive = f_lo > 0.0;
    for _ in 0..2000 {
        let mid = if geometric {
            (lo * hi).sqrt()
        } else {
            0.5 * (lo + hi)
        };
        if mid <= lo || mid >= hi {
            break;
        }
        let fm = f(mid);
        if fm == 0.0 {
            return mid;
        }
        if (fm > 0.0) == lo_positive {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

// ---------------------------------------------------------------------------------
// Beam (DESIGN §4)
// ---------------------------------------------------------------------------------

/// Relativistic wavelength λ = hc / sqrt(E (E + 2 m_e c²)), in Å, for kinetic energy
/// `energy_ev` (eV). Non-positive energies give infinity or NaN.
pub fn wavelength_a(energy_ev: f64) -> f64 {
    HC_EV_A / (energy_ev * (energy_ev + 2.0 * MC2_EV)).sqrt()
}

/// Non-relativistic wavelength hc / sqrt(2 m_e c² E), in Å (for comparison only).
pub fn wavelength_nonrel_a(energy_ev: f64) -> f64 {
    HC_EV_A / (2.0 * MC2_EV * energy_ev).sqrt()
}

/// Electron speed in m/s from γ = 1 + E/m_e c², v = c·sqrt(1 − 1/γ²), evaluated as
/// c·sqrt(t(2 + t))/(1 + t) with t = E/m_e c² to keep precision at low energy.
pub fn velocity_m_s(energy_ev: f64) -> f64 {
    let t = energy_ev / MC2_EV;
    let gamma = 1.0 + t;
    C_M_S * (t * (2.0 + t)).sqrt() / gamma
}

/// Kinetic energy (eV) of an electron of wavelength `lambda_a` (Å): the inverse of
/// [`wavelength_a`]. With p c = hc/λ, E = sqrt((m c²)² + (pc)²) − m c², evaluated
/// as (pc)² / (sqrt((m c²)² + (pc)²) + m c²) to avoid cancellation.
pub fn energy_from_wavelength_ev(lambda_a: f64) -> f64 {
    let pc = HC_EV_A / lambda_a;
    pc * pc / ((MC2_EV * MC2_EV + pc * pc).sqrt() + MC2_EV)
}

// ---------------------------------------------------------------------------------
// Structures and cells (DESIGN §5)
// ---------------------------------------------------------------------------------

/// Crystal structure types known to the oracle.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum OStructure {
    /// Simple cubic.
    Sc,
    /// Body-centred cubic.
    Bcc,
    /// Face-centred cubic.
    Fcc,
    /// Diamond (fcc with a two-atom motif, equal scattering factors).
    Diamond,
    /// Rock salt (fcc with two different atoms at (0,0,0) and (½,½,½)).
    RockSalt,
    /// Zinc blende (fcc with two different atoms at (0,0,0) and (¼,¼,¼)).
    ZincBlende,
    /// Caesium chloride (simple cubic with two different atoms).
    CsCl,
    /// Hexagonal close-packed, atoms at (1/3,2/3,1/4) and (2/3,1/3,3/4).
    Hcp,
    /// Graphite (AB stacking, four atoms per hexagonal cell).
    Graphite,
    /// Primitive tetragonal, one atom at the origin.
    Tetragonal,
    /// Primitive hexagonal, one atom at the origin.
    Hexagonal,
    /// Primitive orthorhombic, one atom at the origin.
    Orthorhombic,
}

const ALL_STRUCTURES: [(OStructure, &str); 12] = [
    (OStructure::Sc, "sc"),
    (OStructure::Bcc, "bcc"),
    (OStructure::Fcc, "fcc"),
    (OStructure::Diamond, "diamond"),
    (OStructure::RockSalt, "rocksalt"),
    (OStructure::ZincBlende, "zincblende"),
    (OStructure::CsCl, "cscl"),
    (OStructure::Hcp, "hcp"),
    (OStructure::Graphite, "graphite"),
    (OStructure::Tetragonal, "tetragonal"),
    (OStructure::Hexagonal, "hexagonal"),
    (OStructure::Orthorhombic, "orthorhombic"),
];

/// Structure from its name (`sc bcc fcc diamond rocksalt zincblende cscl hcp graphite
/// tetragonal hexagonal orthorhombic`; ASCII case ignored).
pub fn structure_from_name(name: &str) -> Option<OStructure> {
    let lower = name.trim().to_ascii_lowercase();
    ALL_STRUCTURES
        .iter()
        .find(|(_, n)| *n == lower)
        .map(|(s, _)| *s)
}

const ORIGIN_ONLY: &[[f64; 3]] = &[[0.0, 0.0, 0.0]];
const BODY_CENTRING: &[[f64; 3]] = &[[0.0, 0.0, 0.0], [0.5, 0.5, 0.5]];
const FACE_CENTRING: &[[f64; 3]] = &[
    [0.0, 0.0, 0.0],
    [0.5, 0.5, 0.0],
    [0.5, 0.0, 0.5],
    [0.0, 0.5, 0.5],
];

/// Atom of a motif: fractional position in the conventional cell and a scattering
/// factor (arbitrary units; only ratios matter).
type Atom = ([f64; 3], f64);

const ONE_ATOM: &[Atom] = &[([0.0, 0.0, 0.0], 1.0)];
const DIAMOND_MOTIF: &[Atom] = &[([0.0, 0.0, 0.0], 1.0), ([0.25, 0.25, 0.25], 1.0)];
const ROCKSALT_MOTIF: &[Atom] = &[([0.0, 0.0, 0.0], 1.0), ([0.5, 0.5, 0.5], 0.6)];
const ZINCBLENDE_MOTIF: &[Atom] = &[([0.0, 0.0, 0.0], 1.0), ([0.25, 0.25, 0.25], 0.6)];
const CSCL_MOTIF: &[Atom] = &[([0.0, 0.0, 0.0], 1.0), ([0.5, 0.5, 0.5], 0.6)];
const HCP_MOTIF: &[Atom] = &[
    ([1.0 / 3.0, 2.0 / 3.0, 0.25], 1.0),
    ([2.0 / 3.0, 1.0 / 3.0, 0.75], 1.0),
];
const GRAPHITE_MOTIF: &[Atom] = &[
    ([0.0, 0.0, 0.25], 1.0),
    ([0.0, 0.0, 0.75], 1.0),
    ([1.0 / 3.0, 2.0 / 3.0, 0.25], 1.0),
    ([2.0 / 3.0, 1.0 / 3.0, 0.75], 1.0),
];

impl OStructure {
    /// Lower-case name, as accepted by [`structure_from_name`].
    pub fn name(self) -> &'static str {
        ALL_STRUCTURES
            .iter()
            .find(|(s, _)| *s == self)
            .map(|(_, n)| *n)
            .unwrap_or("?")
    }

    /// Cubic structure types (cell uses `a` only).
    pub fn is_cubic(self) -> bool {
        use OStructure::*;
        matches!(
            self,
            Sc | Bcc | Fcc | Diamond | RockSalt | ZincBlende | CsCl
        )
    }

    /// Hexagonal structure types (cell uses `a` and `c`, γ = 120°).
    pub fn is_hexagonal(self) -> bool {
        matches!(
            self,
            OStructure::Hcp | OStructure::Graphite | OStructure::Hexagonal
        )
    }

    /// Centring translations of the Bravais lattice (fractional, conventional cell),
    /// the origin included.
    pub fn centring(self) -> &'static [[f64; 3]] {
        use OStructure::*;
        match self {
            Bcc => BODY_CENTRING,
            Fcc | Diamond | RockSalt | ZincBlende => FACE_CENTRING,
            Sc | CsCl | Hcp | Graphite | Tetragonal | Hexagonal | Orthorhombic => ORIGIN_ONLY,
        }
    }

    /// Motif attached to every lattice point (fractional positions, scattering factors).
    fn motif(self) -> &'static [Atom] {
        use OStructure::*;
        match self {
            Sc | Bcc | Fcc | Tetragonal | Hexagonal | Orthorhombic => ONE_ATOM,
            Diamond => DIAMOND_MOTIF,
            RockSalt => ROCKSALT_MOTIF,
            ZincBlende => ZINCBLENDE_MOTIF,
            CsCl => CSCL_MOTIF,
            Hcp => HCP_MOTIF,
            Graphite => GRAPHITE_MOTIF,
        }
    }

    /// All atoms of the conventional cell: centring translations ⊕ motif.
    pub fn basis(self) -> Vec<([f64; 3], f64)> {
        let mut atoms = Vec::new();
        for t in self.centring() {
            for (x, f) in self.motif() {
                atoms.push((add(*t, *x), *f));
            }
        }
        atoms
    }
}

/// A conventional cell. Lengths in Å. Cubic structures use `a` only; tetragonal and
/// hexagonal ones use `a` and `c`; orthorhombic uses all three.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct OCell {
    /// Structure type.
    pub structure: OStructure,
    /// a, Å.
    pub a: f64,
    /// b, Å (orthorhombic only).
    pub b: f64,
    /// c, Å (not for cubic).
    pub c: f64,
}

impl OCell {
    /// Cubic cell with lattice constant `a` (Å).
    pub fn cubic(structure: OStructure, a: f64) -> OCell {
        OCell {
            structure,
            a,
            b: a,
            c: a,
        }
    }

    /// Tetragonal or hexagonal cell with constants `a`, `c` (Å).
    pub fn with_ac(structure: OStructure, a: f64, c: f64) -> OCell {
        OCell {
            structure,
            a,
            b: a,
            c,
        }
    }

    /// The lengths actually used for (A1, A2, A3), after the "cubic uses a only" rule.
    fn lengths(&self) -> (f64, f64, f64) {
        if self.structure.is_cubic() {
            (self.a, self.a, self.a)
        } else if self.structure == OStructure::Orthorhombic {
            (self.a, self.b, self.c)
        } else {
            (self.a, self.a, self.c)
        }
    }

    /// Conventional direct vectors A1, A2, A3 in Cartesian coordinates (Å):
    /// A1 = a x̂; A2 = a(−½, √3/2, 0) for hexagonal types, else b ŷ; A3 = c ẑ.
    pub fn direct_vectors(&self) -> [[f64; 3]; 3] {
        let (a, b, c) = self.lengths();
        let a2 = if self.structure.is_hexagonal() {
            [-0.5 * a, 0.5 * 3f64.sqrt() * a, 0.0]
        } else {
            [0.0, b, 0.0]
        };
        [[a, 0.0, 0.0], a2, [0.0, 0.0, c]]
    }

    /// Reciprocal vectors B_i (Å⁻¹, no 2π) with A_i·B_j = δ_ij, from cross products.
    pub fn reciprocal_vectors(&self) -> [[f64; 3]; 3] {
        let [a1, a2, a3] = self.direct_vectors();
        let v = dot(a1, cross(a2, a3));
        [
            scale(1.0 / v, cross(a2, a3)),
            scale(1.0 / v, cross(a3, a1)),
            scale(1.0 / v, cross(a1, a2)),
        ]
    }

    /// Volume of the conventional cell, Å³.
    pub fn volume_a3(&self) -> f64 {
        let [a1, a2, a3] = self.direct_vectors();
        dot(a1, cross(a2, a3)).abs()
    }

    /// Reciprocal lattice vector G(hkl) = h B1 + k B2 + l B3 (Å⁻¹), Cartesian.
    pub fn g_vector(&self, hkl: [i32; 3]) -> [f64; 3] {
        let b = self.reciprocal_vectors();
        let mut g = [0.0; 3];
        for i in 0..3 {
            g = add(g, scale(hkl[i] as f64, b[i]));
        }
        g
    }

    /// Interplanar spacing d(hkl) = 1/|G(hkl)| (Å), via the reciprocal vectors.
    /// (0,0,0) gives infinity.
    pub fn d_spacing_a(&self, hkl: [i32; 3]) -> f64 {
        1.0 / norm(self.g_vector(hkl))
    }

    /// Structure factor F(hkl) = Σ f_j exp(2πi hkl·x_j) over the conventional-cell
    /// atoms, as (re, im).
    pub fn structure_factor(&self, hkl: [i32; 3]) -> (f64, f64) {
        let mut re = 0.0;
        let mut im = 0.0;
        for (x, f) in self.structure.basis() {
            let phase: f64 = (0..3).map(|i| hkl[i] as f64 * x[i]).sum();
            // Reduce to [0, 1) before multiplying by 2π to keep the argument small.
            let turns = phase - phase.floor();
            let (s, c) = (2.0 * std::f64::consts::PI * turns).sin_cos();
            re += f * c;
            im += f * s;
        }
        (re, im)
    }

    /// Whether reflection (hkl) is allowed: |F|² > 1e-6·(Σ f)². (0,0,0) is not.
    pub fn allowed(&self, hkl: [i32; 3]) -> bool {
        if hkl == [0, 0, 0] {
            return false;
        }
        let (re, im) = self.structure_factor(hkl);
        let fmax: f64 = self.structure.basis().iter().map(|(_, f)| f).sum();
        re * re + im * im > 1e-6 * fmax * fmax
    }

    /// Bravais lattice points (centring translations included) with 0 < |r| ≤
    /// `radius_a`, Cartesian, Å.
    pub fn lattice_points_near_origin(&self, radius_a: f64) -> Vec<[f64; 3]> {
        let avec = self.direct_vectors();
        let bvec = self.reciprocal_vectors();
        // Fractional coordinate i of r is r·B_i, so |n_i| ≤ R |B_i|.
        let bound: Vec<i64> = bvec
            .iter()
            .map(|b| (radius_a * norm(*b)).ceil() as i64 + 1)
            .collect();
        let eps = 1e-12 * radius_a.max(1.0);
        let mut out = Vec::new();
        for t in self.structure.centring() {
            for n0 in -bound[0]..=bound[0] {
                for n1 in -bound[1]..=bound[1] {
                    for n2 in -bound[2]..=bound[2] {
                        let f = [n0 as f64 + t[0], n1 as f64 + t[1], n2 as f64 + t[2]];
                        let r = add(
                            add(scale(f[0], avec[0]), scale(f[1], avec[1])),
                            scale(f[2], avec[2]),
                        );
                        let len = norm(r);
                        if len > eps && len <= radius_a * (1.0 + 1e-12) {
                            out.push(r);
                        }
                    }
                }
            }
        }
        out
    }

    /// Volume of the primitive cell of the Bravais lattice, Å³.
    pub fn primitive_volume_a3(&self) -> f64 {
        self.volume_a3() / self.structure.centring().len() as f64
    }
}

// ---------------------------------------------------------------------------------
// Surfaces (DESIGN §6)
// ---------------------------------------------------------------------------------

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

fn gcd(a: i64, b: i64) -> i64 {
    let (mut a, mut b) = (a.abs(), b.abs());
    while b != 0 {
        let t = a % b;
        a = b;
        b = t;
    }
    a
}

/// A mesh choice during the search: (right-handed, key of a1, key of a2, a1, a2).
type MeshCandidate = (bool, [i64; 3], [i64; 3], V3, V3);

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

// ---------------------------------------------------------------------------------
// Lab geometry (DESIGN §7)
// ---------------------------------------------------------------------------------

/// Lab frame of one sample orientation.
#[derive(Clone, Copy, Debug)]
struct LabFrame {
    /// In-plane surface axis e1 (lab).
    e1: V3,
    /// In-plane surface axis e2 = ẑ (lab).
    e2: V3,
    /// Outward surface normal (lab).
    n: V3,
    /// Crystal → lab rotation.
    rot: M3,
}

impl LabFrame {
    /// Tilt α, azimuth φ (deg). `a1` and `normal` in the crystal frame; a1's component
    /// along the normal (if any) is ignored.
    fn new(a1: V3, normal: V3, tilt_deg: f64, azimuth_deg: f64) -> LabFrame {
        let rz = rot_z(tilt_deg);
        let n = mat_vec(&rz, [-1.0, 0.0, 0.0]);
        let e1 = mat_vec(&rz, [0.0, -1.0, 0.0]);
        let e2 = [0.0, 0.0, 1.0];
        let nc = unit(normal);
        let u1 = unit(sub(a1, scale(dot(a1, nc), nc)));
        let u2 = cross(nc, u1);
        let r0 = frame_map([u1, u2, nc], [e1, e2, n]);
        let rot = mat_mul(&rot_axis(n, azimuth_deg), &r0);
        LabFrame { e1, e2, n, rot }
    }

    /// In-plane part of the incident wavevector per unit 1/λ (k_in = x̂/λ).
    fn k_par_in_per_q(&self) -> V3 {
        let x = [1.0, 0.0, 0.0];
        sub(x, scale(dot(x, self.n), self.n))
    }
}

/// A surface beam outside the crystal. Angles in degrees, wavevector in Å⁻¹ (lab).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct OBeam {
    /// Angle between k_out and the outward normal.
    pub exit_polar_deg: f64,
    /// Direction of k∥,out in the surface: atan2(k∥·e2, k∥·e1).
    pub exit_azimuth_deg: f64,
    /// Arm angle δ = atan2(−d̂_y, −d̂_x), in (−180°, 180°].
    pub arm_deg: f64,
    /// Elevation ν = asin(d̂_z).
    pub elevation_deg: f64,
    /// Outgoing wavevector in the lab frame, |k| = 1/λ.
    pub k_out_lab: [f64; 3],
}

/// Exit direction of rod `rod` = (h, k) for mesh (a1, a2) (crystal frame, Å) of a
/// face with outward unit normal `normal` (crystal frame), at beam energy
/// `energy_ev`, sample tilt `tilt_deg` and azimuth `azimuth_deg`. `None` when the
/// beam is evanescent (|k∥,out| > 1/λ).
pub fn beam_exit(
    a1: [f64; 3],
    a2: [f64; 3],
    normal: [f64; 3],
    rod: [i32; 2],
    energy_ev: f64,
    tilt_deg: f64,
    azimuth_deg: f64,
) -> Option<OBeam> {
    let q = 1.0 / wavelength_a(energy_ev);
    if !(q.is_finite() && q > 0.0) {
        return None;
    }
    let frame = LabFrame::new(a1, normal, tilt_deg, azimuth_deg);
    let g = mat_vec(&frame.rot, rod_vector(a1, a2, normal, rod));
    let k_par = add(scale(q, frame.k_par_in_per_q()), g);
    let kp2 = dot(k_par, k_par);
    let kperp2 = q * q - kp2;
    if kperp2 < 0.0 {
        return None;
    }
    let kperp = kperp2.sqrt();
    let k_out = add(k_par, scale(kperp, frame.n));
    let d = unit(k_out);
    let mut arm = (-d[1]).atan2(-d[0]).to_degrees();
    if arm <= -180.0 {
        arm += 360.0;
    }
    Some(OBeam {
        exit_polar_deg: kp2.sqrt().atan2(kperp).to_degrees(),
        exit_azimuth_deg: dot(k_par, frame.e2)
            .atan2(dot(k_par, frame.e1))
            .to_degrees(),
        arm_deg: arm,
        elevation_deg: d[2].clamp(-1.0, 1.0).asin().to_degrees(),
        k_out_lab: k_out,
    })
}

/// Beam energy (eV, outside) at which rod (h, k) becomes tangent to the surface
/// (|k∥,out| = 1/λ) at this tilt and azimuth, by bisection on E in [1e-6, 1e7] eV.
/// `None` for (0,0) or when there is no crossing in that range.
pub fn emergence_energy_ev(
    a1: [f64; 3],
    a2: [f64; 3],
    normal: [f64; 3],
    rod: [i32; 2],
    tilt_deg: f64,
    azimuth_deg: f64,
) -> Option<f64> {
    if rod == [0, 0] {
        return None;
    }
    let frame = LabFrame::new(a1, normal, tilt_deg, azimuth_deg);
    let g = mat_vec(&frame.rot, rod_vector(a1, a2, normal, rod));
    let u = frame.k_par_in_per_q();
    // Positive while evanescent; strictly decreasing in E for tilts below 90°.
    let excess = |e: f64| {
        let q = 1.0 / wavelength_a(e);
        norm(add(scale(q, u), g)) - q
    };
    let (lo, hi) = (1e-6, 1e7);
    if excess(lo) <= 0.0 || excess(hi) > 0.0 {
        return None;
    }
    Some(bisect(lo, hi, excess, true))
}

// ---------------------------------------------------------------------------------
// Kinematic I-V peaks (DESIGN §6)
// ---------------------------------------------------------------------------------

/// A kinematic I-V maximum.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct OPeak {
    /// Beam energy outside, eV.
    pub energy_ev: f64,
    /// Conventional indices of the bulk G responsible.
    pub g_hkl: [i32; 3],
    /// G·n̂, Å⁻¹.
    pub g_perp_inv_a: f64,
}

/// Kinematic I-V peak energies of rod (h, k), with refraction by the inner potential
/// `v0_ev`, sorted, within [`from_ev`, `to_ev`]; only where the beam exists outside
/// (above its emergence energy). See [`iv_peaks_all`] for the unfiltered list.
#[allow(clippy::too_many_arguments)]
pub fn iv_peaks(
    cell: &OCell,
    a1: [f64; 3],
    a2: [f64; 3],
    normal: [f64; 3],
    rod: [i32; 2],
    tilt_deg: f64,
    azimuth_deg: f64,
    v0_ev: f64,
    from_ev: f64,
    to_ev: f64,
) -> Vec<OPeak> {
    iv_peaks_impl(
        cell,
        a1,
        a2,
        normal,
        rod,
        tilt_deg,
        azimuth_deg,
        v0_ev,
        from_ev,
        to_ev,
        true,
    )
}

/// As [`iv_peaks`], but also listing solutions where the outgoing beam propagates
/// inside the crystal yet is still evanescent outside.
#[allow(clippy::too_many_arguments)]
pub fn iv_peaks_all(
    cell: &OCell,
    a1: [f64; 3],
    a2: [f64; 3],
    normal: [f64; 3],
    rod: [i32; 2],
    tilt_deg: f64,
    azimuth_deg: f64,
    v0_ev: f64,
    from_ev: f64,
    to_ev: f64,
) -> Vec<OPeak> {
    iv_peaks_impl(
        cell,
        a1,
        a2,
        normal,
        rod,
        tilt_deg,
        azimuth_deg,
        v0_ev,
        from_ev,
        to_ev,
        false,
    )
}

#[allow(clippy::too_many_arguments)]
fn iv_peaks_impl(
    cell: &OCell,
    a1: V3,
    a2: V3,
    normal: V3,
    rod: [i32; 2],
    tilt_deg: f64,
    azimuth_deg: f64,
    v0_ev: f64,
    from_ev: f64,
    to_ev: f64,
    require_emerged: bool,
) -> Vec<OPeak> {
    let mut peaks = Vec::new();
    let lo_e = from_ev.max(1e-9).max(-v0_ev + 1e-9);
    if !(lo_e.is_finite() && to_ev.is_finite() && to_ev > lo_e) {
        return peaks;
    }
    let nc = unit(normal);
    let g_c = rod_vector(a1, a2, nc, rod);
    let frame = LabFrame::new(a1, nc, tilt_deg, azimuth_deg);
    let g_lab = mat_vec(&frame.rot, g_c);
    let u = frame.k_par_in_per_q();

    // Sum of the inside normal components, K⊥,in + K⊥,out, or None where either
    // beam is evanescent inside.
    let perp_sum = |e: f64| -> Option<f64> {
        let q = 1.0 / wavelength_a(e);
        let k_in = 1.0 / wavelength_a(e + v0_ev);
        let kp_in = scale(q, u);
        let kp_out = add(kp_in, g_lab);
        let s_in = k_in * k_in - dot(kp_in, kp_in);
        let s_out = k_in * k_in - dot(kp_out, kp_out);
        if s_in < 0.0 || s_out < 0.0 {
            None
        } else {
            Some(s_in.sqrt() + s_out.sqrt())
        }
    };
    let emerged = |e: f64| {
        let q = 1.0 / wavelength_a(e);
        norm(add(scale(q, u), g_lab)) <= q * (1.0 + 1e-12)
    };

    // Bulk G with in-plane part g: G = g + t n̂, t > 0. Its conventional index along
    // the direct vector with the largest normal component fixes t; the others must
    // then come out integral.
    let k_max = 1.0 / wavelength_a(to_ev + v0_ev);
    let t_max = 2.0 * k_max * (1.0 + 1e-9) + 1e-9;
    let avec = cell.direct_vectors();
    let j = (0..3)
        .max_by(|&x, &y| dot(nc, avec[x]).abs().total_cmp(&dot(nc, avec[y]).abs()))
        .unwrap_or(2);
    let nj = dot(nc, avec[j]);
    let gj = dot(g_c, avec[j]);
    let m_a = gj;
    let m_b = gj + t_max * nj;
    let (m_lo, m_hi) = (m_a.min(m_b).floor() as i64, m_a.max(m_b).ceil() as i64);
    let mut gs: Vec<([i32; 3], f64)> = Vec::new();
    for m in m_lo..=m_hi {
        let t = (m as f64 - gj) / nj;
        if t <= 0.0 || t > t_max {
            continue;
        }
        let g_full = add(g_c, scale(t, nc));
        let frac: Vec<f64> = avec.iter().map(|a| dot(g_full, *a)).collect();
        if frac.iter().any(|x| (x - x.round()).abs() > 1e-6) {
            continue;
        }
        let hkl = [
            frac[0].round() as i32,
            frac[1].round() as i32,
            frac[2].round() as i32,
        ];
        // Re-derive G from the integer indices and apply the selection literally.
        let gv = cell.g_vector(hkl);
        let gperp = dot(gv, nc);
        let inplane = sub(gv, scale(gperp, nc));
        if norm(sub(inplane, g_c)) < 1e-9 && gperp > 0.0 && cell.allowed(hkl) {
            gs.push((hkl, gperp));
        }
    }
    if gs.is_empty() {
        return peaks;
    }

    // Sample the perpendicular sum on a grid uniform in sqrt(E), then bisect every
    // crossing of each G⊥.
    let (s_lo, s_hi) = (lo_e.sqrt(), to_ev.sqrt());
    let k_span = 1.0 / wavelength_a(to_ev + v0_ev) - 1.0 / wavelength_a(lo_e + v0_ev);
    let steps = ((k_span / 5e-4).ceil() as usize).clamp(4000, 2_000_000);
    let grid: Vec<(f64, Option<f64>)> = (0..=steps)
        .map(|i| {
            let s = s_lo + (s_hi - s_lo) * i as f64 / steps as f64;
            let e = if i == steps { to_ev } else { s * s };
            (e, perp_sum(e))
        })
        .collect();
    for &(hkl, gperp) in &gs {
        let h = |e: f64| perp_sum(e).map_or(f64::NAN, |s| s - gperp);
        if let Some(v) = grid[0].1 {
            if v == gperp {
                peaks.push(OPeak {
                    energy_ev: grid[0].0,
                    g_hkl: hkl,
                    g_perp_inv_a: gperp,
                });
            }
        }
        for w in grid.windows(2) {
            let (e0, Some(v0)) = w[0] else { continue };
            let (e1, Some(v1)) = w[1] else { continue };
            let (d0, d1) = (v0 - gperp, v1 - gperp);
            if (d0 < 0.0) != (d1 < 0.0) {
                let e = if d1 == 0.0 {
                    e1
                } else {
                    bisect(e0, e1, h, false)
                };
                peaks.push(OPeak {
                    energy_ev: e,
                    g_hkl: hkl,
                    g_perp_inv_a: gperp,
                });
            }
        }
    }
    peaks.retain(|p| {
        p.energy_ev >= from_ev && p.energy_ev <= to_ev && (!require_emerged || emerged(p.energy_ev))
    });
    peaks.sort_by(|a, b| a.energy_ev.total_cmp(&b.energy_ev));
    peaks
}

// ---------------------------------------------------------------------------------
// Bulk reflections (DESIGN §5)
// ---------------------------------------------------------------------------------

/// Bragg angle θ_B (deg) of order `order` for spacing `d_a` (Å) at `energy_ev`:
/// asin(nλ/2d). `None` when nλ > 2d, for order 0 or for a non-positive d.
pub fn bragg_deg(d_a: f64, energy_ev: f64, order: u32) -> Option<f64> {
    if order == 0 || d_a.is_nan() || d_a <= 0.0 {
        return None;
    }
    let s = order as f64 * wavelength_a(energy_ev) / (2.0 * d_a);
    if !(s.is_finite() && s <= 1.0) {
        return None;
    }
    Some(s.asin().to_degrees())
}

/// First-order transmission ring radius (mm) on a flat screen at `screen_mm`:
/// L·tan 2θ_B. `None` when there is no Bragg angle or 2θ_B ≥ 90°.
pub fn ring_radius_mm(d_a: f64, energy_ev: f64, screen_mm: f64) -> Option<f64> {
    let two_theta = 2.0 * bragg_deg(d_a, energy_ev, 1)?;
    if two_theta >= 90.0 {
        return None;
    }
    Some(screen_mm * two_theta.to_radians().tan())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: f64, b: f64, tol: f64) -> bool {
        (a - b).abs() <= tol
    }
    fn rel(a: f64, b: f64, tol: f64) -> bool {
        (a - b).abs() <= tol * b.abs()
    }

    // Lattice constants below are test parameters only; every check value is
    // derived from the geometry, with its source named beside it.
    const A_FCC: f64 = 3.615;
    const A_SI: f64 = 5.431;

    fn mesh_of(cell: &OCell, hkl: [i32; 3]) -> (V3, V3, V3) {
        let (a1, a2) = mesh_vectors(cell, hkl).expect("mesh");
        (a1, a2, face_normal(cell, hkl))
    }

    #[test]
    fn relativistic_wavelengths() {
        // International Tables for Crystallography Vol. C, Table 4.3.1.1 (from memory).
        for (kv, lam) in [(100e3, 0.037014), (200e3, 0.025079), (300e3, 0.019687)] {
            let l = wavelength_a(kv);
            assert!(close(l, lam, 2e-6), "{kv} eV: {l}");
        }
    }

    #[test]
    fn low_energy_rule_of_thumb_and_speed() {
        // λ[Å] ≈ sqrt(150.4/E[eV]) (common practice, no source).
        let mut e = 10.0;
        while e <= 1000.0 {
            assert!(rel(wavelength_a(e), (150.4 / e).sqrt(), 3e-3), "{e}");
            e *= 1.1;
        }
        // 100 eV electrons move at ≈ 5.93e6 m/s (common practice, no source).
        assert!(rel(velocity_m_s(100.0), 5.93e6, 2e-3));
        // 100 eV gives λ ≈ 1.2 Å (common practice, no source).
        assert!(close(wavelength_a(100.0), 1.2, 0.05));
        // Non-relativistic limit agrees at low energy (DESIGN §4 formulas).
        assert!(rel(wavelength_nonrel_a(1.0), wavelength_a(1.0), 1e-6));
        // v = βc with β = sqrt(1 − (mc²/(E + mc²))²) (DESIGN §4), direct form.
        let e = 300e3;
        let beta = (1.0 - (MC2_EV / (e + MC2_EV)).powi(2)).sqrt();
        assert!(rel(velocity_m_s(e), beta * C_M_S, 1e-12));
    }

    #[test]
    fn energy_inverts_wavelength() {
        // Inverse of λ(E) (DESIGN §4 formula), 1 eV – 300 keV.
        let mut e = 1.0;
        while e <= 300e3 {
            let back = energy_from_wavelength_ev(wavelength_a(e));
            assert!(rel(back, e, 1e-12), "{e} -> {back}");
            e *= 1.37;
        }
        let back = energy_from_wavelength_ev(wavelength_a(300e3));
        assert!(rel(back, 300e3, 1e-12));
    }

    #[test]
    fn names_round_trip() {
        // Names fixed by the oracle's brief.
        for (s, n) in ALL_STRUCTURES {
            assert_eq!(structure_from_name(n), Some(s));
            assert_eq!(s.name(), n);
        }
        assert_eq!(structure_from_name("FCC"), Some(OStructure::Fcc));
        assert_eq!(structure_from_name("bct"), None);
    }

    #[test]
    fn d_spacings() {
        // Si d(111) = a/√3 = 3.1356 Å for a = 5.431 Å (cubic geometry).
        let si = OCell::cubic(OStructure::Diamond, A_SI);
        assert!(close(si.d_spacing_a([1, 1, 1]), 3.1356, 1e-4));
        assert!(rel(si.d_spacing_a([1, 1, 1]), A_SI / 3f64.sqrt(), 1e-14));
        // Hexagonal d(100) = a√3/2 (hexagonal geometry).
        let hex = OCell::with_ac(OStructure::Hcp, 2.5, 4.0);
        assert!(rel(
            hex.d_spacing_a([1, 0, 0]),
            2.5 * 3f64.sqrt() / 2.0,
            1e-14
        ));
        // Hexagonal d(001) = c, orthorhombic d(hkl)⁻² = Σ(h/a)² (cell geometry).
        assert!(rel(hex.d_spacing_a([0, 0, 1]), 4.0, 1e-14));
        let o = OCell {
            structure: OStructure::Orthorhombic,
            a: 3.0,
            b: 4.0,
            c: 5.0,
        };
        let inv2 = (1.0f64 / 3.0).powi(2) + (2.0f64 / 4.0).powi(2) + (3.0f64 / 5.0).powi(2);
        assert!(rel(o.d_spacing_a([1, 2, 3]), 1.0 / inv2.sqrt(), 1e-14));
        // Reciprocal vectors are dual to the direct ones (definition).
        let a = hex.direct_vectors();
        let b = hex.reciprocal_vectors();
        for (i, ai) in a.iter().enumerate() {
            for (k, bk) in b.iter().enumerate() {
                let want = if i == k { 1.0 } else { 0.0 };
                assert!(close(dot(*ai, *bk), want, 1e-14));
            }
        }
    }

    #[test]
    fn extinctions() {
        use OStructure::*;
        let c = |s| OCell::cubic(s, 4.0);
        // DESIGN §5 extinction rules.
        assert!(!c(Fcc).allowed([1, 0, 0]));
        assert!(c(Fcc).allowed([1, 1, 1]));
        assert!(!c(Bcc).allowed([1, 0, 0]));
        assert!(c(Bcc).allowed([1, 1, 0]));
        assert!(!c(Diamond).allowed([2, 0, 0]));
        assert!(!c(Diamond).allowed([2, 2, 2]));
        assert!(c(Diamond).allowed([4, 0, 0]));
        assert!(c(Diamond).allowed([1, 1, 1]));
        let hcp = OCell::with_ac(Hcp, 2.5, 4.0);
        assert!(!hcp.allowed([0, 0, 1]));
        assert!(hcp.allowed([0, 0, 2]));
        assert!(hcp.allowed([1, 0, 1])); // l odd, h−k ≢ 0 (mod 3)
        assert!(!hcp.allowed([1, 1, 1])); // l odd, h−k ≡ 0 (mod 3)
                                          // Rock salt: two different scattering factors, all-odd survives (F rules).
        assert!(c(RockSalt).allowed([1, 1, 1]));
        assert!(!c(RockSalt).allowed([1, 1, 0]));
        assert!(c(ZincBlende).allowed([2, 0, 0]));
        assert!(!c(ZincBlende).allowed([1, 0, 0]));
        // CsCl is simple cubic: (100) present.
        assert!(c(CsCl).allowed([1, 0, 0]));
        let gr = OCell::with_ac(Graphite, 2.46, 6.7);
        assert!(!gr.allowed([0, 0, 1]));
        assert!(gr.allowed([0, 0, 2]));
        assert!(!c(Sc).allowed([0, 0, 0]));
        // Structure factor agrees with the DESIGN §5 parity rules over a box.
        for h in -4..=4 {
            for k in -4..=4 {
                for l in -4..=4 {
                    if [h, k, l] == [0, 0, 0] {
                        continue;
                    }
                    let all_even = h % 2 == 0 && k % 2 == 0 && l % 2 == 0;
                    let all_odd = h % 2 != 0 && k % 2 != 0 && l % 2 != 0;
                    let f_ok = all_even || all_odd;
                    assert_eq!(c(Fcc).allowed([h, k, l]), f_ok);
                    assert_eq!(c(Bcc).allowed([h, k, l]), (h + k + l) % 2 == 0);
                    let d_ok = f_ok && !(all_even && (h + k + l).rem_euclid(4) != 0);
                    assert_eq!(c(Diamond).allowed([h, k, l]), d_ok, "{h}{k}{l}");
                    let hcp_ok = !(l % 2 != 0 && (h - k).rem_euclid(3) == 0);
                    assert_eq!(hcp.allowed([h, k, l]), hcp_ok, "{h}{k}{l}");
                }
            }
        }
    }

    #[test]
    fn lattice_points() {
        // fcc has 12 nearest neighbours at a/√2, bcc 8 at a√3/2 (cubic geometry).
        let fcc = OCell::cubic(OStructure::Fcc, 4.0);
        let pts = fcc.lattice_points_near_origin(4.0 / 2f64.sqrt() * 1.0001);
        assert_eq!(pts.len(), 12);
        let bcc = OCell::cubic(OStructure::Bcc, 4.0);
        let pts = bcc.lattice_points_near_origin(4.0 * 3f64.sqrt() / 2.0 * 1.0001);
        assert_eq!(pts.len(), 8);
        // hcp's Bravais lattice is primitive hexagonal: 6 in-plane neighbours at a.
        let hcp = OCell::with_ac(OStructure::Hcp, 2.5, 4.0);
        assert_eq!(hcp.lattice_points_near_origin(2.5001).len(), 6);
    }

    #[test]
    fn meshes() {
        use OStructure::*;
        let a = A_FCC;
        let s2 = 2f64.sqrt();
        let s3 = 3f64.sqrt();
        let fcc = OCell::cubic(Fcc, a);
        let bcc = OCell::cubic(Bcc, a);
        let dia = OCell::cubic(Diamond, A_SI);
        let hcp = OCell::with_ac(Hcp, 2.5, 4.06);
        let gamma_bcc110 = (1.0f64 / 3.0).acos().to_degrees(); // 70.53°
                                                               // (cell, face, |a1|, |a2|, γ, layer spacing) — DESIGN §6 examples; layer
                                                               // spacings from cubic/hexagonal geometry.
        let cases: [(OCell, [i32; 3], f64, f64, f64, f64); 10] = [
            (fcc, [1, 0, 0], a / s2, a / s2, 90.0, a / 2.0),
            (fcc, [1, 1, 1], a / s2, a / s2, 60.0, a / s3),
            (fcc, [1, 1, 0], a / s2, a, 90.0, a / (2.0 * s2)),
            (bcc, [1, 0, 0], a, a, 90.0, a / 2.0),
            (
                bcc,
                [1, 1, 0],
                a * s3 / 2.0,
                a * s3 / 2.0,
                gamma_bcc110,
                a / s2,
            ),
            (bcc, [1, 1, 1], a * s2, a * s2, 60.0, a / (2.0 * s3)),
            (hcp, [0, 0, 1], 2.5, 2.5, 60.0, 4.06),
            (dia, [1, 1, 1], A_SI / s2, A_SI / s2, 60.0, A_SI / s3),
            (dia, [1, 0, 0], A_SI / s2, A_SI / s2, 90.0, A_SI / 2.0),
            (fcc, [2, 0, 0], a / s2, a / s2, 90.0, a / 2.0),
        ];
        for (cell, hkl, l1, l2, gamma, layer) in cases {
            let m = surface_mesh(&cell, hkl);
            let tag = format!("{:?}{:?}", cell.structure, hkl);
            assert!(rel(m.a1_len_a, l1, 1e-12), "{tag} {m:?}");
            assert!(rel(m.a2_len_a, l2, 1e-12), "{tag} {m:?}");
            assert!(close(m.gamma_deg, gamma, 1e-9), "{tag} {m:?}");
            assert!(rel(m.layer_spacing_a, layer, 1e-12), "{tag} {m:?}");
            // Area × layer spacing = primitive cell volume (lattice geometry).
            assert!(
                rel(
                    m.area_a2 * m.layer_spacing_a,
                    cell.primitive_volume_a3(),
                    1e-12
                ),
                "{tag} {m:?}"
            );
        }
        // bcc(110) "centred rectangular": conventional rectangle a × a√2 contains
        // two mesh cells (lattice geometry).
        let m = surface_mesh(&bcc, [1, 1, 0]);
        assert!(rel(m.area_a2 * 2.0, a * a * s2, 1e-12));
        // Higher-index faces: reduced cell and volume identity still hold.
        for hkl in [[3, 2, 1], [5, 3, 1], [2, 1, 0], [3, 1, 1]] {
            for cell in [fcc, bcc, dia] {
                let m = surface_mesh(&cell, hkl);
                assert!(m.gamma_deg >= 60.0 - 1e-9 && m.gamma_deg <= 90.0 + 1e-9);
                assert!(m.a1_len_a <= m.a2_len_a * (1.0 + 1e-12));
                assert!(rel(
                    m.area_a2 * m.layer_spacing_a,
                    cell.primitive_volume_a3(),
                    1e-9
                ));
                // Layer spacing = smallest positive height of a lattice point.
                let n = face_normal(&cell, hkl);
                let hmin = cell
                    .lattice_points_near_origin(4.0 * A_SI)
                    .iter()
                    .map(|r| dot(*r, n))
                    .filter(|h| *h > 1e-9)
                    .fold(f64::INFINITY, f64::min);
                assert!(rel(m.layer_spacing_a, hmin, 1e-9), "{hkl:?}");
            }
        }
        assert!(surface_mesh(&fcc, [0, 0, 0]).a1_len_a.is_nan());
    }

    #[test]
    fn rotation_is_proper_and_azimuth_sense() {
        // DESIGN §7: (e1, e2, n̂) right-handed; φ = 0 puts a1 along e1; positive φ is
        // counter-clockwise about +n̂.
        let fcc = OCell::cubic(OStructure::Fcc, A_FCC);
        let (a1, _a2, n) = mesh_of(&fcc, [1, 1, 1]);
        for tilt in [0.0, 17.0, -40.0] {
            for phi in [0.0, 30.0, 90.0, 200.0] {
                let f = LabFrame::new(a1, n, tilt, phi);
                let r = f.rot;
                let m = mat_mul(
                    &r,
                    &[
                        [r[0][0], r[1][0], r[2][0]],
                        [r[0][1], r[1][1], r[2][1]],
                        [r[0][2], r[1][2], r[2][2]],
                    ],
                );
                for (i, row) in m.iter().enumerate() {
                    for (k, x) in row.iter().enumerate() {
                        assert!(close(*x, if i == k { 1.0 } else { 0.0 }, 1e-14));
                    }
                }
                let det = dot(r[0], cross(r[1], r[2]));
                assert!(close(det, 1.0, 1e-14));
                assert!(close(dot(cross(f.e1, f.e2), f.n), 1.0, 1e-14));
                let n_lab = mat_vec(&r, n);
                assert!(close(norm(sub(n_lab, f.n)), 0.0, 1e-14));
                let u = unit(mat_vec(&r, a1));
                let (s, c) = phi.to_radians().sin_cos();
                let want = add(scale(c, f.e1), scale(s, f.e2));
                assert!(close(norm(sub(u, want)), 0.0, 1e-13), "{tilt} {phi}");
            }
        }
    }

    #[test]
    fn specular_arm_is_twice_tilt() {
        // DESIGN §7 invariant: specular beam at δ = 2α at every energy.
        let fcc = OCell::cubic(OStructure::Fcc, A_FCC);
        let (a1, a2, n) = mesh_of(&fcc, [1, 1, 1]);
        for tilt in [0.0, 5.0, 20.0, 35.5, -25.0, 60.0] {
            for e in [15.0, 60.0, 140.0, 500.0, 3000.0] {
                for phi in [0.0, 47.0] {
                    let b = beam_exit(a1, a2, n, [0, 0], e, tilt, phi).unwrap();
                    assert!(close(b.arm_deg, 2.0 * tilt, 1e-10), "{tilt} {e} {b:?}");
                    assert!(close(b.elevation_deg, 0.0, 1e-10));
                    assert!(close(b.exit_polar_deg, tilt.abs(), 1e-10));
                    assert!(rel(norm(b.k_out_lab), 1.0 / wavelength_a(e), 1e-14));
                }
            }
        }
    }

    #[test]
    fn normal_incidence_rods() {
        // Grating condition at normal incidence: sin θ = λ/d_row, d_row = 1/|g|
        // (DESIGN §6).
        let fcc = OCell::cubic(OStructure::Fcc, A_FCC);
        for face in [[1, 0, 0], [1, 1, 1], [1, 1, 0]] {
            let (a1, a2, n) = mesh_of(&fcc, face);
            for rod in [[1, 0], [0, 1], [1, 1], [-1, 2], [2, 0]] {
                let g = rod_vector(a1, a2, n, rod);
                // Rod convention: g·a1 = h, g·a2 = k, g·n̂ = 0 (brief).
                assert!(close(dot(g, a1), rod[0] as f64, 1e-13));
                assert!(close(dot(g, a2), rod[1] as f64, 1e-13));
                assert!(close(dot(g, n), 0.0, 1e-13));
                let d_row = 1.0 / norm(g);
                for e in [60.0, 150.0, 400.0] {
                    let lam = wavelength_a(e);
                    match beam_exit(a1, a2, n, rod, e, 0.0, 33.0) {
                        Some(b) => {
                            let want = (lam / d_row).asin().to_degrees();
                            assert!(close(b.exit_polar_deg, want, 1e-9));
                        }
                        None => assert!(lam > d_row),
                    }
                }
                // Emergence at normal incidence: λ = d_row (DESIGN §6).
                let e_em = emergence_energy_ev(a1, a2, n, rod, 0.0, 12.0).unwrap();
                let want = energy_from_wavelength_ev(d_row);
                assert!(rel(e_em, want, 1e-10), "{face:?} {rod:?} {e_em} {want}");
                assert!(beam_exit(a1, a2, n, rod, e_em * (1.0 - 1e-6), 0.0, 12.0).is_none());
                let b = beam_exit(a1, a2, n, rod, e_em * (1.0 + 1e-9), 0.0, 12.0).unwrap();
                assert!(b.exit_polar_deg > 89.9);
            }
        }
        let (a1, a2, n) = mesh_of(&fcc, [1, 0, 0]);
        assert_eq!(emergence_energy_ev(a1, a2, n, [0, 0], 0.0, 0.0), None);
    }

    #[test]
    fn in_plane_mode() {
        // DESIGN §7 in-plane mode: g along +e1 gives sin θ_out = sin α + λ|g| and
        // δ = α + θ_out.
        let fcc = OCell::cubic(OStructure::Fcc, A_FCC);
        let (a1, a2, n) = mesh_of(&fcc, [1, 0, 0]);
        // Square mesh: b1 ∥ a1, so at φ = 0 rod (1,0) lies along e1, (−1,0) along −e1.
        for (rod, s) in [([1, 0], 1.0), ([-1, 0], -1.0)] {
            let g = norm(rod_vector(a1, a2, n, rod));
            for tilt in [-30.0f64, 0.0, 12.0, 25.0] {
                for e in [80.0, 200.0] {
                    let lam = wavelength_a(e);
                    let st = tilt.to_radians().sin() + s * lam * g;
                    let b = beam_exit(a1, a2, n, rod, e, tilt, 0.0);
                    if st.abs() > 1.0 {
                        assert!(b.is_none());
                        continue;
                    }
                    let b = b.unwrap();
                    let th = st.asin().to_degrees();
                    assert!(close(b.arm_deg, tilt + th, 1e-9), "{rod:?} {tilt} {e}");
                    assert!(close(b.elevation_deg, 0.0, 1e-10));
                    assert!(close(b.exit_polar_deg, th.abs(), 1e-9));
                    let az = if th >= 0.0 { 0.0 } else { 180.0 };
                    if th.abs() > 1e-9 {
                        assert!(close(b.exit_azimuth_deg.abs(), az, 1e-9));
                    }
                }
            }
        }
        // Rotating by φ = 90° turns rod (1,0) out of the scattering plane (upwards).
        let b = beam_exit(a1, a2, n, [1, 0], 100.0, 0.0, 90.0).unwrap();
        assert!(b.elevation_deg > 0.0);
        assert!(close(b.exit_azimuth_deg, 90.0, 1e-9));
    }

    #[test]
    fn tilted_emergence() {
        // Emergence: |k∥,in + g| = 1/λ (DESIGN §6), checked at the solved energy.
        let fcc = OCell::cubic(OStructure::Fcc, A_FCC);
        let (a1, a2, n) = mesh_of(&fcc, [1, 1, 1]);
        for (rod, tilt, phi) in [
            ([1, 0], 20.0, 0.0),
            ([0, 1], -35.0, 70.0),
            ([1, 1], 45.0, 10.0),
        ] {
            let e = emergence_energy_ev(a1, a2, n, rod, tilt, phi).unwrap();
            let f = LabFrame::new(a1, n, tilt, phi);
            let g = mat_vec(&f.rot, rod_vector(a1, a2, n, rod));
            let q = 1.0 / wavelength_a(e);
            let kp = add(scale(q, f.k_par_in_per_q()), g);
            assert!(rel(norm(kp), q, 1e-12));
        }
    }

    #[test]
    fn iv_fcc100_specular() {
        // DESIGN §6 example: fcc(100), specular, normal incidence, λ_in = 2d/n with
        // d = a/2, i.e. E_n = E(λ = a/n). Bulk G = (2n, 0, 0)/a (fcc: only even
        // indices along the normal are allowed), so every order n = 1, 2, 3, …
        // appears, each from G = (2n, 0, 0).
        let fcc = OCell::cubic(OStructure::Fcc, A_FCC);
        let (a1, a2, n) = mesh_of(&fcc, [1, 0, 0]);
        let peaks = iv_peaks(&fcc, a1, a2, n, [0, 0], 0.0, 0.0, 0.0, 1.0, 600.0);
        let want: Vec<(f64, i32)> = (1..)
            .map(|k| (energy_from_wavelength_ev(A_FCC / k as f64), k))
            .take_while(|(e, _)| *e <= 600.0)
            .collect();
        assert_eq!(peaks.len(), want.len());
        assert!(want.len() >= 6);
        for (p, (e, k)) in peaks.iter().zip(&want) {
            assert!(rel(p.energy_ev, *e, 1e-12), "{p:?} {e}");
            assert_eq!(p.g_hkl, [2 * k, 0, 0]);
            assert!(rel(p.g_perp_inv_a, 2.0 * *k as f64 / A_FCC, 1e-12));
        }
        // With V0 = 10 eV: E_n(V0) = E_n(0) − V0 exactly (inside energy fixes K).
        let v0 = 10.0;
        let shifted = iv_peaks(&fcc, a1, a2, n, [0, 0], 0.0, 0.0, v0, 1.0, 600.0);
        let want_v0: Vec<(f64, i32)> = want
            .iter()
            .map(|(e, k)| (e - v0, *k))
            .chain(
                (want.len() as i32 + 1..)
                    .map(|k| (energy_from_wavelength_ev(A_FCC / k as f64) - v0, k))
                    .take_while(|(e, _)| *e <= 600.0),
            )
            .filter(|(e, _)| *e >= 1.0)
            .collect();
        assert_eq!(shifted.len(), want_v0.len());
        for (p, (e, k)) in shifted.iter().zip(&want_v0) {
            assert!(close(p.energy_ev, *e, 1e-9), "{p:?} {e}");
            assert_eq!(p.g_hkl, [2 * k, 0, 0]);
        }
    }

    #[test]
    fn iv_tilted_specular_bragg() {
        // Specular at tilt α, V0 = 0: 2 cos α/λ = m/d_layer, i.e. Bragg's law
        // mλ = 2 d cos α for the layer planes (DESIGN §5–6).
        let fcc = OCell::cubic(OStructure::Fcc, A_FCC);
        let (a1, a2, n) = mesh_of(&fcc, [1, 1, 1]);
        let d = A_FCC / 3f64.sqrt();
        let alpha = 20.0f64;
        let peaks = iv_peaks(&fcc, a1, a2, n, [0, 0], alpha, 15.0, 0.0, 5.0, 800.0);
        assert!(!peaks.is_empty());
        for (i, p) in peaks.iter().enumerate() {
            let m = (i + 1) as f64;
            let e = energy_from_wavelength_ev(2.0 * d * alpha.to_radians().cos() / m);
            assert!(rel(p.energy_ev, e, 1e-11), "{p:?} {e}");
            assert_eq!(p.g_hkl, [i as i32 + 1; 3]);
        }
    }

    #[test]
    fn iv_off_specular_condition() {
        // K⊥,in + K⊥,out = G·n̂ at each reported energy, with G allowed and its
        // in-plane part equal to g (DESIGN §6), and the beam emerged.
        let fcc = OCell::cubic(OStructure::Fcc, A_FCC);
        let (a1, a2, n) = mesh_of(&fcc, [1, 1, 1]);
        let (tilt, phi, v0) = (10.0, 25.0, 9.0);
        for rod in [[1, 0], [0, 1], [1, 1]] {
            let peaks = iv_peaks(&fcc, a1, a2, n, rod, tilt, phi, v0, 20.0, 500.0);
            assert!(!peaks.is_empty(), "{rod:?}");
            let all = iv_peaks_all(&fcc, a1, a2, n, rod, tilt, phi, v0, 20.0, 500.0);
            assert!(all.len() >= peaks.len());
            let g = rod_vector(a1, a2, n, rod);
            let e_em = emergence_energy_ev(a1, a2, n, rod, tilt, phi).unwrap();
            let f = LabFrame::new(a1, n, tilt, phi);
            let g_lab = mat_vec(&f.rot, g);
            for p in &peaks {
                assert!(p.energy_ev >= e_em * (1.0 - 1e-12));
                assert!(fcc.allowed(p.g_hkl));
                let gv = fcc.g_vector(p.g_hkl);
                assert!(norm(sub(sub(gv, scale(dot(gv, n), n)), g)) < 1e-9);
                let q = 1.0 / wavelength_a(p.energy_ev);
                let kk = 1.0 / wavelength_a(p.energy_ev + v0);
                let kin = scale(q, f.k_par_in_per_q());
                let kout = add(kin, g_lab);
                let s = (kk * kk - dot(kin, kin)).sqrt() + (kk * kk - dot(kout, kout)).sqrt();
                assert!(rel(s, p.g_perp_inv_a, 1e-12), "{p:?}");
            }
        }
    }

    #[test]
    fn bragg_and_rings() {
        // nλ = 2d sin θ_B and R = L tan 2θ_B (DESIGN §5).
        let d = 2.0;
        let e = 100e3;
        let lam = wavelength_a(e);
        let th = bragg_deg(d, e, 1).unwrap();
        assert!(rel(th, (lam / (2.0 * d)).asin().to_degrees(), 1e-14));
        let th3 = bragg_deg(d, e, 3).unwrap();
        assert!(rel(th3, (3.0 * lam / (2.0 * d)).asin().to_degrees(), 1e-14));
        let r = ring_radius_mm(d, e, 500.0).unwrap();
        assert!(rel(r, 500.0 * (2.0 * th).to_radians().tan(), 1e-14));
        // Camera constant R·d ≈ λ·L at small angles (DESIGN §5).
        assert!(rel(r * d, lam * 500.0, 1e-3));
        // λ > 2d: no reflection. 2θ ≥ 90°: no ring.
        assert_eq!(bragg_deg(0.5, 10.0, 1), None);
        assert_eq!(bragg_deg(d, e, 0), None);
        let e45 = energy_from_wavelength_ev(2.0 * d * 45f64.to_radians().sin() * 1.001);
        assert!(bragg_deg(d, e45, 1).is_some());
        assert_eq!(ring_radius_mm(d, e45, 500.0), None);
    }
}
