//! Bravais lattices, crystal structures, d-spacings and extinction rules (conventional
//! cells).
//!
//! A [`Cell`] is a conventional cell (lengths in Å) with its [`Structure`]. Cartesian
//! frame: A1 along x; for hexagonal cells A2 at 120° from A1 in the x–y plane; A3 along
//! z. Reciprocal vectors follow the crystallographer's convention Ai·Aj* = δij (no 2π),
//! so |G(hkl)| = 1/d(hkl).
//!
//! ```
//! use matterwave_core::lattice::{Cell, Structure};
//! let cu = Cell::new(Structure::Fcc, 3.615, 3.615, 3.615).unwrap();
//! let d111 = cu.d_spacing_a([1, 1, 1]).unwrap();
//! assert!((d111 - 3.615 / 3f32.sqrt()).abs() < 1e-5);
//! assert!(!cu.allowed([1, 0, 0])); // mixed parity is absent in fcc
//! ```

use crate::error::{Error, Result};
use crate::math::{self, Vec3};

/// Crystal system of the conventional cell.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum System {
    /// a = b = c, all angles 90°.
    Cubic,
    /// a = b ≠ c, all angles 90°.
    Tetragonal,
    /// a ≠ b ≠ c, all angles 90°.
    Orthorhombic,
    /// a = b ≠ c, γ = 120°.
    Hexagonal,
}

/// Lattice centring of the conventional cell.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Centring {
    /// Primitive.
    P,
    /// Body-centred.
    I,
    /// Face-centred.
    F,
}

/// Crystal structure: fixes the system, the centring and the extinction rules.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Structure {
    /// Simple cubic (one atom per cell, e.g. α-Po).
    SimpleCubic,
    /// Body-centred cubic (W, Mo, Fe, …).
    Bcc,
    /// Face-centred cubic (Cu, Ni, Ag, Au, …).
    Fcc,
    /// Diamond (C, Si, Ge).
    Diamond,
    /// Rock salt, NaCl type (NaCl, KCl, LiF, MgO, …).
    RockSalt,
    /// Zinc blende, sphalerite type (GaAs, InP, …).
    ZincBlende,
    /// Caesium chloride type (CsCl, β-brass).
    CsCl,
    /// Hexagonal close-packed, atoms at (1/3,2/3,1/4) and (2/3,1/3,3/4).
    Hcp,
    /// Graphite (Bernal, AB stacking): same extinctions as hcp.
    Graphite,
    /// General primitive tetragonal cell, no extinctions.
    Tetragonal,
    /// General primitive hexagonal cell, no extinctions.
    Hexagonal,
    /// General primitive orthorhombic cell, no extinctions.
    Orthorhombic,
}

impl Structure {
    /// Every structure, in table order.
    pub const ALL: [Structure; 12] = [
        Structure::SimpleCubic,
        Structure::Bcc,
        Structure::Fcc,
        Structure::Diamond,
        Structure::RockSalt,
        Structure::ZincBlende,
        Structure::CsCl,
        Structure::Hcp,
        Structure::Graphite,
        Structure::Tetragonal,
        Structure::Hexagonal,
        Structure::Orthorhombic,
    ];

    /// Short name used in tables, the CLI and the protocol.
    pub const fn name(self) -> &'static str {
        match self {
            Structure::SimpleCubic => "sc",
            Structure::Bcc => "bcc",
            Structure::Fcc => "fcc",
            Structure::Diamond => "diamond",
            Structure::RockSalt => "rocksalt",
            Structure::ZincBlende => "zincblende",
            Structure::CsCl => "cscl",
            Structure::Hcp => "hcp",
            Structure::Graphite => "graphite",
            Structure::Tetragonal => "tetragonal",
            Structure::Hexagonal => "hexagonal",
            Structure::Orthorhombic => "orthorhombic",
        }
    }

    /// Inverse of [`Structure::name`].
    pub fn from_name(name: &str) -> Option<Structure> {
        Structure::ALL.iter().copied().find(|s| s.name() == name)
    }

    /// Crystal system.
    pub const fn system(self) -> System {
        match self {
            Structure::Hcp | Structure::Graphite | Structure::Hexagonal => System::Hexagonal,
            Structure::Tetragonal => System::Tetragonal,
            Structure::Orthorhombic => System::Orthorhombic,
            _ => System::Cubic,
        }
    }

    /// Bravais centring of the conventional cell.
    pub const fn centring(self) -> Centring {
        match self {
            Structure::Bcc => Centring::I,
            Structure::Fcc | Structure::Diamond | Structure::RockSalt | Structure::ZincBlende => {
                Centring::F
            }
            _ => Centring::P,
        }
    }

    /// Whether reflection (h k l) of the conventional cell is allowed (structure factor
    /// not identically zero).
    ///
    /// Rules (International Tables Vol. A reflection conditions; common practice): I: h+k+l
    /// even; F: unmixed parity; diamond: F and, for all-even indices, h+k+l ≡ 0 (mod 4);
    /// hcp and graphite: absent when l is odd and h−k ≡ 0 (mod 3). (000) is never listed.
    pub const fn allowed(self, hkl: [i32; 3]) -> bool {
        let [h, k, l] = hkl;
        if h == 0 && k == 0 && l == 0 {
            return false;
        }
        let lattice_ok = match self.centring() {
            Centring::P => true,
            Centring::I => (h + k + l).rem_euclid(2) == 0,
            Centring::F => {
                let ph = h.rem_euclid(2);
                ph == k.rem_euclid(2) && ph == l.rem_euclid(2)
            }
        };
        if !lattice_ok {
            return false;
        }
        match self {
            Structure::Diamond => !(h.rem_euclid(2) == 0 && (h + k + l).rem_euclid(4) != 0),
            Structure::Hcp | Structure::Graphite => {
                !(l.rem_euclid(2) == 1 && (h - k).rem_euclid(3) == 0)
            }
            _ => true,
        }
    }

    /// The atoms at each lattice point (the motif), in conventional fractional
    /// coordinates: every atom of the crystal is a lattice point plus one of these.
    /// Species are not told apart (rock salt's two ions are both listed).
    ///
    /// Positions (International Tables structure types; common practice): diamond and
    /// zinc blende (0,0,0), (¼,¼,¼); rock salt and CsCl (0,0,0), (½,½,½); hcp
    /// (⅓,⅔,¼), (⅔,⅓,¾); graphite (Bernal) (0,0,¼), (0,0,¾), (⅓,⅔,¼), (⅔,⅓,¾); every
    /// other structure one atom at the lattice point.
    pub const fn motif(self) -> &'static [[f32; 3]] {
        const T: f32 = 1.0 / 3.0;
        const TT: f32 = 2.0 / 3.0;
        match self {
            Structure::Diamond | Structure::ZincBlende => &[[0.0, 0.0, 0.0], [0.25, 0.25, 0.25]],
            Structure::RockSalt | Structure::CsCl => &[[0.0, 0.0, 0.0], [0.5, 0.5, 0.5]],
            Structure::Hcp => &[[T, TT, 0.25], [TT, T, 0.75]],
            Structure::Graphite => &[
                [0.0, 0.0, 0.25],
                [0.0, 0.0, 0.75],
                [T, TT, 0.25],
                [TT, T, 0.75],
            ],
            _ => &[[0.0, 0.0, 0.0]],
        }
    }

    /// Whether the point with coordinates `half` (in units of half a conventional axis)
    /// is a lattice point of this structure's Bravais lattice.
    pub const fn is_lattice_point_half(self, half: [i32; 3]) -> bool {
        let [u, v, w] = half;
        match self.centring() {
            Centring::P => u.rem_euclid(2) == 0 && v.rem_euclid(2) == 0 && w.rem_euclid(2) == 0,
            Centring::I => {
                let p = u.rem_euclid(2);
                p == v.rem_euclid(2) && p == w.rem_euclid(2)
            }
            Centring::F => (u + v + w).rem_euclid(2) == 0,
        }
    }
}

/// A conventional cell: structure plus lattice constants (Å).
///
/// Precomputes the Cartesian cell vectors and their reciprocals, so that d-spacings and
/// surface searches need no trigonometry.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Cell {
    /// The structure.
    pub structure: Structure,
    /// a, Å.
    pub a_a: f32,
    /// b, Å (= a except orthorhombic).
    pub b_a: f32,
    /// c, Å (= a for cubic).
    pub c_a: f32,
    /// Conventional cell vectors A1, A2, A3 (Cartesian, Å).
    pub vectors_a: [Vec3; 3],
    /// Reciprocal vectors A1*, A2*, A3* (Cartesian, 1/Å; Ai·Aj* = δij).
    pub reciprocal_inv_a: [Vec3; 3],
}

/// √3/2
const HALF_SQRT3: f32 = 0.866_025_4;

impl Cell {
    /// Builds a cell. Cubic structures use `a` only; tetragonal and hexagonal use `a`
    /// and `c`; orthorhombic uses all three. Lengths must be finite and in (0, 100] Å.
    pub fn new(structure: Structure, a_a: f32, b_a: f32, c_a: f32) -> Result<Cell> {
        let (a, b, c) = match structure.system() {
            System::Cubic => (a_a, a_a, a_a),
            System::Tetragonal | System::Hexagonal => (a_a, a_a, c_a),
            System::Orthorhombic => (a_a, b_a, c_a),
        };
        for x in [a, b, c] {
            if !(x.is_finite() && x > 0.0 && x <= 100.0) {
                return Err(Error::BadLattice);
            }
        }
        let vectors_a = match structure.system() {
            System::Hexagonal => [
                [a, 0.0, 0.0],
                [-0.5 * a, HALF_SQRT3 * a, 0.0],
                [0.0, 0.0, c],
            ],
            _ => [[a, 0.0, 0.0], [0.0, b, 0.0], [0.0, 0.0, c]],
        };
        let reciprocal_inv_a = reciprocal(vectors_a);
        Ok(Cell {
            structure,
            a_a: a,
            b_a: b,
            c_a: c,
            vectors_a,
            reciprocal_inv_a,
        })
    }

    /// Whether (h k l) is allowed by the structure's extinction rules.
    pub fn allowed(&self, hkl: [i32; 3]) -> bool {
        self.structure.allowed(hkl)
    }

    /// Cartesian reciprocal-lattice vector G(hkl), 1/Å.
    pub fn g_vector(&self, hkl: [i32; 3]) -> Vec3 {
        let r = &self.reciprocal_inv_a;
        let mut g = [0.0; 3];
        for (ri, &n) in r.iter().zip(hkl.iter()) {
            g = math::add(g, math::scale(*ri, n as f32));
        }
        g
    }

    /// Cartesian position of a lattice point given in conventional fractional
    /// coordinates `uvw` (Å).
    pub fn point(&self, uvw: [f32; 3]) -> Vec3 {
        let v = &self.vectors_a;
        math::add(
            math::add(math::scale(v[0], uvw[0]), math::scale(v[1], uvw[1])),
            math::scale(v[2], uvw[2]),
        )
    }

    /// Reciprocal metric tensor G*ij = Ai*·Aj* (1/Å²).
    pub fn reciprocal_metric(&self) -> [[f32; 3]; 3] {
        let r = &self.reciprocal_inv_a;
        let mut m = [[0.0; 3]; 3];
        for (row, ri) in m.iter_mut().zip(r.iter()) {
            for (x, rj) in row.iter_mut().zip(r.iter()) {
                *x = math::dot(*ri, *rj);
            }
        }
        m
    }

    /// 1/d² (1/Å²) from the general reciprocal metric: hᵀ G* h.
    pub fn inv_d2_metric(&self, hkl: [i32; 3]) -> f32 {
        let m = self.reciprocal_metric();
        let h = [hkl[0] as f32, hkl[1] as f32, hkl[2] as f32];
        let mut s = 0.0;
        for (row, hi) in m.iter().zip(h.iter()) {
            for (mij, hj) in row.iter().zip(h.iter()) {
                s += hi * mij * hj;
            }
        }
        s
    }

    /// 1/d² (1/Å²) from the closed form of the crystal system (fast path; agrees with
    /// [`Cell::inv_d2_metric`], which the tests check).
    pub fn inv_d2(&self, hkl: [i32; 3]) -> f32 {
        let [h, k, l] = [hkl[0] as f32, hkl[1] as f32, hkl[2] as f32];
        let (a, b, c) = (self.a_a, self.b_a, self.c_a);
        match self.structure.system() {
            System::Cubic => (h * h + k * k + l * l) / (a * a),
            System::Tetragonal => (h * h + k * k) / (a * a) + l * l / (c * c),
            System::Orthorhombic => h * h / (a * a) + k * k / (b * b) + l * l / (c * c),
            System::Hexagonal => (4.0 / 3.0) * (h * h + h * k + k * k) / (a * a) + l * l / (c * c),
        }
    }

    /// Interplanar spacing d(hkl), Å. (000) is an error.
    pub fn d_spacing_a(&self, hkl: [i32; 3]) -> Result<f32> {
        if hkl == [0, 0, 0] {
            return Err(Error::ZeroIndices);
        }
        Ok(1.0 / math::sqrt(self.inv_d2(hkl)))
    }

    /// Volume of the conventional cell, Å³.
    pub fn volume_a3(&self) -> f32 {
        let v = &self.vectors_a;
        math::dot(v[0], math::cross(v[1], v[2])).abs()
    }

    /// Longest conventional axis, Å (bounds index searches).
    pub fn longest_axis_a(&self) -> f32 {
        self.a_a.max(self.b_a).max(self.c_a)
    }
}

/// Reciprocal basis of three vectors (no 2π): bi = (aj × ak) / V.
pub fn reciprocal(v: [Vec3; 3]) -> [Vec3; 3] {
    let vol = math::dot(v[0], math::cross(v[1], v[2]));
    let inv = 1.0 / vol;
    [
        math::scale(math::cross(v[1], v[2]), inv),
        math::scale(math::cross(v[2], v[0]), inv),
        math::scale(math::cross(v[0], v[1]), inv),
    ]
}

/// Miller indices of a face, always stored as three indices (h k l) of the conventional
/// cell. Four-index hexagonal (h k i l) input is converted by dropping i after checking
/// i = −(h+k).
pub type Miller = [i32; 3];

/// Largest |index| accepted for faces and beams.
pub const MAX_INDEX: i32 = 12;

/// Parses face notation into three indices.
///
/// Accepted: separated forms `1,1,0`, `1 -1 0`, `(1,-1,0)`, and the compact form `1-10`
/// (one digit per index, a `-` before an index makes it negative). Four indices
/// (`0001`, `1,0,-1,0`, `10-10`) are hexagonal (h k i l) and need i = −(h+k) and
/// `hexagonal = true`. Returns `ZeroIndices`, `IndicesTooLarge`, `BadHexIndices`,
/// `HexIndicesOnNonHexagonal`, or `BadIndexText` for text that is not indices.
///
/// ```
/// use matterwave_core::lattice::parse_miller;
/// assert_eq!(parse_miller("1-10", false), Ok([1, -1, 0]));
/// assert_eq!(parse_miller("0001", true), Ok([0, 0, 1]));
/// assert_eq!(parse_miller("2,0,0", false), Ok([2, 0, 0]));
/// ```
pub fn parse_miller(text: &str, hexagonal: bool) -> Result<Miller> {
    let (vals, n) = split_indices(text)?;
    let hkl = match n {
        3 => [vals[0], vals[1], vals[2]],
        4 => {
            if !hexagonal {
                return Err(Error::HexIndicesOnNonHexagonal);
            }
            if vals[2] != -(vals[0] + vals[1]) {
                return Err(Error::BadHexIndices);
            }
            [vals[0], vals[1], vals[3]]
        }
        _ => return Err(Error::BadIndexText),
    };
    check_indices(hkl)?;
    Ok(hkl)
}

/// The Miller–Bravais indices (h k i l) of a hexagonal plane or reciprocal vector (hkl)
/// (on a, b, c with γ = 120°): i = −(h + k), the index on the third basal axis
/// a3 = −(a1 + a2). Unlike a direction, a plane needs no rescaling. Saturates instead of
/// overflowing for indices near the `i32` range (never reached: faces and reflections
/// stay far below it).
///
/// ```
/// use matterwave_core::lattice::four_index_plane;
/// assert_eq!(four_index_plane([1, 0, 1]), [1, 0, -1, 1]); // (10-11)
/// assert_eq!(four_index_plane([1, 1, 0]), [1, 1, -2, 0]); // (11-20)
/// assert_eq!(four_index_plane([0, 0, 2]), [0, 0, 0, 2]); // (0002)
/// ```
pub fn four_index_plane(hkl: Miller) -> [i32; 4] {
    let [h, k, l] = hkl;
    [h, k, h.saturating_add(k).saturating_neg(), l]
}

/// A hexagonal direction \[UVW\] (on a, b, c) in four-index form \[uvtw\]:
/// u = (2U − V)/3, v = (2V − U)/3, t = −(u + v), w = W, scaled to the smallest integers.
///
/// ```
/// use matterwave_core::lattice::four_index_direction;
/// assert_eq!(four_index_direction([1, 0, 0]), [2, -1, -1, 0]); // a1 = ⅓[2 -1 -1 0]
/// assert_eq!(four_index_direction([1, 1, 0]), [1, 1, -2, 0]);
/// assert_eq!(four_index_direction([0, 0, 1]), [0, 0, 0, 1]);
/// ```
pub fn four_index_direction(uvw: [i32; 3]) -> [i32; 4] {
    let [cu, cv, cw] = uvw;
    // 3·[uvtw] in integers, then reduced.
    let (u, v, w) = (2 * cu - cv, 2 * cv - cu, 3 * cw);
    let t = -(u + v);
    let mut g = 0;
    for x in [u, v, t, w] {
        let (mut a, mut b) = (g, x.abs());
        while b != 0 {
            let r = a % b;
            a = b;
            b = r;
        }
        g = a;
    }
    let g = g.max(1);
    [u / g, v / g, t / g, w / g]
}

/// Splits index notation into up to four integers: separated (`1,-1,0`, `1 -1 0`,
/// `(1,-1,0)`) or compact (`1-10`: one digit per index, `-` before a negative one).
/// Returns the values and how many there are; `BadIndexText` for anything else.
/// Shared by face ([`parse_miller`]) and beam-rod notation.
///
/// ```
/// use matterwave_core::lattice::split_indices;
/// assert_eq!(split_indices("-11"), Ok(([-1, 1, 0, 0], 2)));
/// assert_eq!(split_indices("(2, -3)"), Ok(([2, -3, 0, 0], 2)));
/// assert!(split_indices("(1,1,1").is_err()); // an unclosed bracket
/// ```
pub fn split_indices(text: &str) -> Result<([i32; 4], usize)> {
    let bad = Error::BadIndexText;
    let t = text.trim();
    // Brackets come in pairs or not at all: `(1,1,1` is a typo, not a face.
    let t = match (t.strip_prefix('('), t.ends_with(')')) {
        (Some(inner), true) => inner.strip_suffix(')').unwrap_or(inner),
        (None, false) => t,
        _ => return Err(bad),
    };
    let mut vals = [0i32; 4];
    let mut n = 0usize;
    if t.contains(',') || t.contains(' ') {
        for part in t.split([',', ' ']).filter(|p| !p.is_empty()) {
            let slot = vals.get_mut(n).ok_or(bad)?;
            *slot = parse_int(part).ok_or(bad)?;
            n += 1;
        }
    } else {
        let mut neg = false;
        for ch in t.chars() {
            match ch {
                '-' if !neg => neg = true,
                '0'..='9' => {
                    let slot = vals.get_mut(n).ok_or(bad)?;
                    let d = ch as i32 - '0' as i32;
                    *slot = if neg { -d } else { d };
                    neg = false;
                    n += 1;
                }
                _ => return Err(bad),
            }
        }
        if neg {
            return Err(bad);
        }
    }
    Ok((vals, n))
}

/// Checks that indices are not all zero and within ±[`MAX_INDEX`].
pub fn check_indices(hkl: Miller) -> Result<()> {
    if hkl == [0, 0, 0] {
        return Err(Error::ZeroIndices);
    }
    if hkl.iter().any(|x| x.abs() > MAX_INDEX) {
        return Err(Error::IndicesTooLarge);
    }
    Ok(())
}

/// Parses a small signed decimal integer (at most 4 digits); no floats, no `+` prefix
/// needed but accepted.
pub(crate) fn parse_int(s: &str) -> Option<i32> {
    // `strip_prefix`, not `&s[1..]`: no str slicing, whose panic path drags core::fmt's
    // char and str formatting into a controller image.
    let (neg, digits) = if let Some(d) = s.strip_prefix('-') {
        (true, d)
    } else if let Some(d) = s.strip_prefix('+') {
        (false, d)
    } else {
        (false, s)
    };
    if digits.is_empty() || digits.len() > 4 {
        return None;
    }
    let mut v = 0i32;
    for b in digits.bytes() {
        if !b.is_ascii_digit() {
            return None;
        }
        v = v * 10 + (b - b'0') as i32;
    }
    Some(if neg { -v } else { v })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn closed_forms_match_metric() {
        let cells = [
            Cell::new(Structure::Fcc, 3.615, 0.0, 0.0).unwrap(),
            Cell::new(Structure::Hcp, 2.507, 0.0, 4.069).unwrap(),
            Cell::new(Structure::Tetragonal, 4.59, 0.0, 2.96).unwrap(),
            Cell::new(Structure::Orthorhombic, 4.76, 10.2, 5.98).unwrap(),
        ];
        for c in cells {
            for h in -3..=3 {
                for k in -3..=3 {
                    for l in -3..=3 {
                        let a = c.inv_d2([h, k, l]);
                        let b = c.inv_d2_metric([h, k, l]);
                        assert!((a - b).abs() <= 1e-5 * a.max(1e-3), "{c:?} {h}{k}{l}");
                    }
                }
            }
        }
    }

    #[test]
    fn extinctions() {
        // Reflection conditions from International Tables for Crystallography Vol. A
        // (from memory): I centring h+k+l = 2n; F centring h, k, l unmixed; diamond
        // (Fd-3m, 8a) in addition h+k+l = 4n when all are even; hcp (P6₃/mmc, 2c) absent
        // for l odd with h−k = 3n, which (0 0 1) and (1 1 1) are. The general rule is
        // checked against structure factors of explicit atom bases in
        // tests/tests/oracle_agreement.rs (`d_spacings_and_extinctions_agree`).
        use Structure::*;
        assert!(Bcc.allowed([1, 1, 0]) && !Bcc.allowed([1, 0, 0]));
        assert!(Fcc.allowed([1, 1, 1]) && Fcc.allowed([2, 0, 0]) && !Fcc.allowed([1, 1, 0]));
        assert!(!Diamond.allowed([2, 0, 0]) && Diamond.allowed([4, 0, 0]));
        assert!(Diamond.allowed([1, 1, 1]) && !Diamond.allowed([2, 2, 2]));
        assert!(Diamond.allowed([2, 2, 0]));
        assert!(!Hcp.allowed([0, 0, 1]) && Hcp.allowed([0, 0, 2]) && Hcp.allowed([1, 0, 1]));
        assert!(!Hcp.allowed([1, 1, 1]) && Hcp.allowed([1, 1, 2]));
    }

    #[test]
    fn miller_parsing() {
        assert_eq!(parse_miller("111", false), Ok([1, 1, 1]));
        assert_eq!(parse_miller("(1 -1 0)", false), Ok([1, -1, 0]));
        assert_eq!(parse_miller("-1-1-1", false), Ok([-1, -1, -1]));
        assert_eq!(parse_miller("10-10", true), Ok([1, 0, 0]));
        assert_eq!(parse_miller("11-20", true), Ok([1, 1, 0]));
        assert_eq!(parse_miller("1,1,1,0", true), Err(Error::BadHexIndices));
        assert_eq!(
            parse_miller("0001", false),
            Err(Error::HexIndicesOnNonHexagonal)
        );
        assert_eq!(parse_miller("000", false), Err(Error::ZeroIndices));
        assert_eq!(parse_miller("13,0,0", false), Err(Error::IndicesTooLarge));
        assert!(parse_miller("1.5,0,0", false).is_err());
        assert!(parse_miller("11", false).is_err());
        assert!(parse_miller("1--10", false).is_err());
        assert!(parse_miller("", false).is_err());
    }

    #[test]
    fn lattice_points() {
        assert!(Structure::Fcc.is_lattice_point_half([1, 1, 0]));
        assert!(!Structure::Fcc.is_lattice_point_half([1, 0, 0]));
        assert!(Structure::Bcc.is_lattice_point_half([1, 1, 1]));
        assert!(!Structure::Bcc.is_lattice_point_half([1, 1, 0]));
        assert!(!Structure::Hcp.is_lattice_point_half([1, 0, 0]));
    }
}
