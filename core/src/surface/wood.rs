//! Wood notation for superstructures: p(n×m), c(n×m), (√n×√m)Rθ° — parsed, printed
//! (Unicode or ASCII) and converted to and from the matrix of [`Superstructure`].
//!
//! ## Conventions
//!
//! A label scales a1 by n and a2 by m and turns both by θ (counter-clockwise about n̂,
//! degrees): c1 = n·R(θ)·a1, c2 = m·R(θ)·a2. `p` (or no letter) takes (c1, c2) as the
//! mesh; `c` adds a point at the centre, and the matrix is that of the primitive mesh
//! b1 = (c1 + c2)/2, b2 = (−c1 + c2)/2 — so c(2×2) and (√2×√2)R45° give the same
//! matrix (1,1,−1,1) on a square mesh. n and m are stored as n², m² (1 to 64): a whole
//! n prints as `2`, any other as `√3`. A label maps to a matrix when both vectors lie
//! within 0.01 (in a1, a2 units) of lattice vectors, so θ must be given to about 0.1°
//! (e.g. R19.1 for √7); otherwise `WoodNotOnMesh`.
//!
//! Matrix to label (common practice, no source): among the bases of the same lattice
//! reached by whole changes of basis with entries in {−1, 0, 1} and det +1, the label
//! chosen is, first, unrotated primitive p(n×m); then unrotated centred c(n×m); then
//! rotated primitive with the smallest |θ| (positive on a tie); then rotated centred.
//! Within a class the smaller n² + m² wins. `None` when no basis gives equal angles and
//! whole n², m².
//!
//! ```
//! use matterwave_core::lattice::{Cell, Structure};
//! use matterwave_core::surface::{Face, Wood};
//! let cu = Cell::new(Structure::Fcc, 3.615, 0.0, 0.0).unwrap();
//! let f = Face::new(&cu, [1, 0, 0]).unwrap();
//! let c2x2 = Wood::parse("c(2x2)").unwrap().to_matrix(&f).unwrap();
//! let r45 = Wood::parse("(√2×√2)R45°").unwrap().to_matrix(&f).unwrap();
//! assert_eq!(c2x2, r45);
//! let w = Wood::from_matrix(&f, &r45).unwrap();
//! let mut s = String::new();
//! w.write_to(&mut s, true).unwrap();
//! assert_eq!(s, "c(2x2)");
//! ```

use super::{Face, Superstructure};
use crate::error::{Error, Result};
use crate::math;

/// Largest n² or m² of a label.
pub const MAX_SQUARE: u16 = 64;

/// A Wood label.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Wood {
    /// `c(…)`: centred.
    pub centred: bool,
    /// n² and m², 1 to [`MAX_SQUARE`].
    pub squares: [u16; 2],
    /// Rotation θ, degrees (0: none), within ±180.
    pub angle_deg: f32,
}

/// One factor: `2`, `√3`, `sqrt3`: its square.
fn parse_factor(t: &str) -> Option<u16> {
    let t = t.trim();
    let (root, digits) = if let Some(d) = t.strip_prefix('√') {
        (true, d)
    } else if let Some(d) = t
        .strip_prefix("sqrt")
        .or_else(|| t.strip_prefix("SQRT"))
        .or_else(|| t.strip_prefix("Sqrt"))
    {
        (true, d)
    } else {
        (false, t)
    };
    let digits = digits.trim();
    if digits.is_empty() || digits.len() > 2 || !digits.bytes().all(|c| c.is_ascii_digit()) {
        return None;
    }
    let v = digits
        .bytes()
        .fold(0u16, |a, c| a * 10 + u16::from(c - b'0'));
    let sq = if root { v } else { v.checked_mul(v)? };
    Some(sq)
}

/// A decimal angle `30`, `-19.1`, `19.11` (at most 3 integer and 3 fraction digits).
fn parse_angle(t: &str) -> Option<f32> {
    let t = t.trim();
    let (neg, body) = match t.strip_prefix('-') {
        Some(b) => (true, b),
        None => (false, t.strip_prefix('+').unwrap_or(t)),
    };
    let (int, frac) = body.split_once('.').unwrap_or((body, ""));
    if int.is_empty() || int.len() > 3 || frac.len() > 3 {
        return None;
    }
    if !int.bytes().chain(frac.bytes()).all(|c| c.is_ascii_digit()) {
        return None;
    }
    let mut v = int
        .bytes()
        .fold(0.0f32, |a, c| a * 10.0 + f32::from(c - b'0'));
    let mut place = 0.1f32;
    for c in frac.bytes() {
        v += f32::from(c - b'0') * place;
        place *= 0.1;
    }
    Some(if neg { -v } else { v })
}

impl Wood {
    /// Parses `p(2x2)`, `c(2×2)`, `(2x1)`, `(√3×√3)R30°`, `(sqrt3xsqrt3)R30`,
    /// `(sqrt7xsqrt7)R19.1` (spaces ignored; `x`, `X` or `×`; `R` or `r`; `°` optional).
    /// Errors: `BadSuperstructureText`, or `SuperstructureTooLarge` for n² or m² above
    /// [`MAX_SQUARE`].
    pub fn parse(text: &str) -> Result<Wood> {
        let bad = Error::BadSuperstructureText;
        let t = text.trim();
        let (centred, rest) = if let Some(r) = t.strip_prefix(['c', 'C']) {
            (true, r)
        } else if let Some(r) = t.strip_prefix(['p', 'P']) {
            (false, r)
        } else {
            (false, t)
        };
        let rest = rest.trim_start().strip_prefix('(').ok_or(bad)?;
        let (inside, after) = rest.split_once(')').ok_or(bad)?;
        let (n, m) = inside.split_once(['x', 'X', '×']).ok_or(bad)?;
        let n2 = parse_factor(n).ok_or(bad)?;
        let m2 = parse_factor(m).ok_or(bad)?;
        if n2 == 0 || m2 == 0 {
            return Err(bad);
        }
        if n2 > MAX_SQUARE || m2 > MAX_SQUARE {
            return Err(Error::SuperstructureTooLarge);
        }
        let after = after.trim();
        let angle_deg = if after.is_empty() {
            0.0
        } else {
            let a = after.strip_prefix(['R', 'r']).ok_or(bad)?;
            let a = a.trim();
            let a = a
                .strip_suffix('°')
                .or_else(|| a.strip_suffix("deg"))
                .unwrap_or(a);
            let v = parse_angle(a).ok_or(bad)?;
            if v.abs() > 180.0 {
                return Err(bad);
            }
            v
        };
        Ok(Wood {
            centred,
            squares: [n2, m2],
            angle_deg,
        })
    }

    /// The matrix of the label on the face's mesh (see the module docs), or
    /// `WoodNotOnMesh`.
    pub fn to_matrix(&self, face: &Face) -> Result<Superstructure> {
        let a = &face.mesh_2d_a;
        let (s, c) = math::sin_cos_deg(self.angle_deg);
        let turn = |v: [f32; 2], f: f32| [f * (c * v[0] - s * v[1]), f * (s * v[0] + c * v[1])];
        let n = math::sqrt(f32::from(self.squares[0]));
        let m = math::sqrt(f32::from(self.squares[1]));
        let c1 = turn(a[0], n);
        let c2 = turn(a[1], m);
        let (b1, b2) = if self.centred {
            (
                [(c1[0] + c2[0]) * 0.5, (c1[1] + c2[1]) * 0.5],
                [(c2[0] - c1[0]) * 0.5, (c2[1] - c1[1]) * 0.5],
            )
        } else {
            (c1, c2)
        };
        let r1 = whole_coords(face, b1).ok_or(Error::WoodNotOnMesh)?;
        let r2 = whole_coords(face, b2).ok_or(Error::WoodNotOnMesh)?;
        Superstructure::new([r1, r2], 1)
    }

    /// The conventional label of a superstructure on the face's mesh (module docs), or
    /// `None` when none exists. Work: 4 × the bases tried (at most 81).
    pub fn from_matrix(face: &Face, sup: &Superstructure) -> Option<Wood> {
        if sup.det_n() <= 0 {
            return None;
        }
        let base = sup.mesh_2d_a(face);
        let a = &face.mesh_2d_a;
        let mut best: Option<(u32, Wood)> = None;
        let vals = [-1i32, 0, 1];
        for u00 in vals {
            for u01 in vals {
                for u10 in vals {
                    for u11 in vals {
                        if u00 * u11 - u01 * u10 != 1 {
                            continue;
                        }
                        let comb = |x: i32, y: i32| {
                            let (x, y) = (x as f32, y as f32);
                            [
                                x * base[0][0] + y * base[1][0],
                                x * base[0][1] + y * base[1][1],
                            ]
                        };
                        let p1 = comb(u00, u01);
                        let p2 = comb(u10, u11);
                        for centred in [false, true] {
                            let (c1, c2) = if centred {
                                (
                                    [p1[0] - p2[0], p1[1] - p2[1]],
                                    [p1[0] + p2[0], p1[1] + p2[1]],
                                )
                            } else {
                                (p1, p2)
                            };
                            let Some(w) = label_of(a, c1, c2, centred) else {
                                continue;
                            };
                            let rotated = w.angle_deg != 0.0;
                            let class = match (rotated, centred) {
                                (false, false) => 0u32,
                                (false, true) => 1,
                                (true, false) => 2,
                                (true, true) => 3,
                            };
                            let ang = (math::round(w.angle_deg.abs() * 10.0) as u32).min(1800);
                            let neg = u32::from(w.angle_deg < 0.0);
                            let size = u32::from(w.squares[0]) + u32::from(w.squares[1]);
                            let key = ((class * 2000 + ang) * 2 + neg) * 256 + size;
                            if best.is_none_or(|(k, _)| key < k) {
                                best = Some((key, w));
                            }
                        }
                    }
                }
            }
        }
        best.map(|(_, w)| w)
    }

    /// Writes the label: Unicode `p(2×2)`, `(√3×√3)R30°`, or with `ascii`
    /// `p(2x2)`, `(sqrt3xsqrt3)R30`. Primitive labels with a rotation drop the `p`;
    /// angles print whole when within 0.05° of a whole degree, else to 0.1°.
    pub fn write_to<W: core::fmt::Write>(&self, w: &mut W, ascii: bool) -> core::fmt::Result {
        let rotated = self.angle_deg != 0.0;
        if self.centred {
            w.write_char('c')?;
        } else if !rotated {
            w.write_char('p')?;
        }
        w.write_char('(')?;
        write_factor(w, self.squares[0], ascii)?;
        w.write_str(if ascii { "x" } else { "×" })?;
        write_factor(w, self.squares[1], ascii)?;
        w.write_char(')')?;
        if rotated {
            let r = math::round(self.angle_deg);
            if (self.angle_deg - r).abs() < 0.05 {
                write!(w, "R{}", r as i32)?;
            } else {
                let tenths = math::round(self.angle_deg * 10.0) as i32;
                let sign = if tenths < 0 { "-" } else { "" };
                write!(w, "R{}{}.{}", sign, tenths.abs() / 10, tenths.abs() % 10)?;
            }
            if !ascii {
                w.write_char('°')?;
            }
        }
        Ok(())
    }
}

impl core::fmt::Display for Wood {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        self.write_to(f, false)
    }
}

fn write_factor<W: core::fmt::Write>(w: &mut W, sq: u16, ascii: bool) -> core::fmt::Result {
    let r = (1..=8u16).find(|r| r * r == sq);
    match r {
        Some(r) => write!(w, "{r}"),
        None if ascii => write!(w, "sqrt{sq}"),
        None => write!(w, "√{sq}"),
    }
}

/// Coordinates of a surface-frame vector in the a1, a2 basis, when within 0.01 of whole.
fn whole_coords(face: &Face, v: [f32; 2]) -> Option<[i32; 2]> {
    let b = &face.recip_2d_inv_a;
    let x = v[0] * b[0][0] + v[1] * b[0][1];
    let y = v[0] * b[1][0] + v[1] * b[1][1];
    let (rx, ry) = (math::round(x), math::round(y));
    if (x - rx).abs() <= 0.01 && (y - ry).abs() <= 0.01 && rx.abs() <= 64.0 && ry.abs() <= 64.0 {
        Some([rx as i32, ry as i32])
    } else {
        None
    }
}

/// The label whose scaled, turned substrate vectors are (c1, c2), if any: whole n², m²
/// (relative 1e-3) and one angle (within 0.05°).
fn label_of(a: &[[f32; 2]; 2], c1: [f32; 2], c2: [f32; 2], centred: bool) -> Option<Wood> {
    let len2 = |v: [f32; 2]| v[0] * v[0] + v[1] * v[1];
    let sq = |c: [f32; 2], a: [f32; 2]| {
        let r = len2(c) / len2(a);
        let w = math::round(r);
        if w >= 1.0 && w <= f32::from(MAX_SQUARE) && (r - w).abs() <= 1e-3 * w {
            Some(w as u16)
        } else {
            None
        }
    };
    let n2 = sq(c1, a[0])?;
    let m2 = sq(c2, a[1])?;
    let ang = |c: [f32; 2], a: [f32; 2]| {
        let t = math::deg(math::atan2(c[1], c[0]) - math::atan2(a[1], a[0]));
        // Wrap into (−180, 180].
        let w = t - 360.0 * math::floor((t + 180.0) / 360.0);
        if w <= -180.0 {
            w + 360.0
        } else {
            w
        }
    };
    let t1 = ang(c1, a[0]);
    let t2 = ang(c2, a[1]);
    let mut d = (t1 - t2).abs();
    if d > 180.0 {
        d = 360.0 - d;
    }
    if d > 0.05 {
        return None;
    }
    let t = if t1.abs() < 0.005 { 0.0 } else { t1 };
    Some(Wood {
        centred,
        squares: [n2, m2],
        angle_deg: t,
    })
}
