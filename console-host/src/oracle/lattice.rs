//! Structures with explicit atom bases, conventional cells, reciprocal vectors and
//! structure-factor extinctions.

use super::vec::*;

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

pub(super) const ALL_STRUCTURES: [(OStructure, &str); 12] = [
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

pub(super) const ORIGIN_ONLY: &[[f64; 3]] = &[[0.0, 0.0, 0.0]];
pub(super) const BODY_CENTRING: &[[f64; 3]] = &[[0.0, 0.0, 0.0], [0.5, 0.5, 0.5]];
pub(super) const FACE_CENTRING: &[[f64; 3]] = &[
    [0.0, 0.0, 0.0],
    [0.5, 0.5, 0.0],
    [0.5, 0.0, 0.5],
    [0.0, 0.5, 0.5],
];

/// Atom of a motif: fractional position in the conventional cell and a scattering
/// factor (arbitrary units; only ratios matter).
pub(super) type Atom = ([f64; 3], f64);

pub(super) const ONE_ATOM: &[Atom] = &[([0.0, 0.0, 0.0], 1.0)];
pub(super) const DIAMOND_MOTIF: &[Atom] = &[([0.0, 0.0, 0.0], 1.0), ([0.25, 0.25, 0.25], 1.0)];
pub(super) const ROCKSALT_MOTIF: &[Atom] = &[([0.0, 0.0, 0.0], 1.0), ([0.5, 0.5, 0.5], 0.6)];
pub(super) const ZINCBLENDE_MOTIF: &[Atom] = &[([0.0, 0.0, 0.0], 1.0), ([0.25, 0.25, 0.25], 0.6)];
pub(super) const CSCL_MOTIF: &[Atom] = &[([0.0, 0.0, 0.0], 1.0), ([0.5, 0.5, 0.5], 0.6)];
pub(super) const HCP_MOTIF: &[Atom] = &[
    ([1.0 / 3.0, 2.0 / 3.0, 0.25], 1.0),
    ([2.0 / 3.0, 1.0 / 3.0, 0.75], 1.0),
];
pub(super) const GRAPHITE_MOTIF: &[Atom] = &[
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
