//! Surfaces: the 2D mesh of a crystal face, its reciprocal rods, the diffracted beams at
//! an energy and incidence, their emergence energies, and kinematic I-V peak energies
//! with refraction by the inner potential.
//!
//! ## Conventions (the surface and geometry conventions)
//!
//! A face (h k l) is given in conventional-cell Miller indices (reduced by their common
//! divisor). Its outward normal n̂ points along G(hkl). The mesh (a1, a2) is found by a
//! lattice search, not a lookup: a1 is the shortest Bravais-lattice vector in the plane,
//! a2 the shortest one not parallel to a1, signed so that (a1, a2, n̂) is right-handed.
//! Equal-length candidates are broken by the larger conventional coordinates
//! (lexicographically), so the choice is deterministic; for a2 the tie is decided among
//! both signs of every candidate first, and the sign set for the handedness after. Rod (h, k) is
//! g = h·b1 + k·b2 with ai·bj = δij; its row spacing is 1/|g|.
//!
//! The surface frame is (e1, e2, n̂) with e1 along a1 at azimuth 0. A positive azimuth φ
//! turns the crystal counter-clockwise about n̂ (seen from outside). With tilt α the
//! incoming beam has k∥,in = (sin α/λ)·e1. A beam exists where |k∥,in + g| ≤ 1/λ; its
//! exit angle is the polar angle from n̂ outside the crystal, which does not depend on
//! the inner potential.
//!
//! ```
//! use matterwave_core::lattice::{Cell, Structure};
//! use matterwave_core::surface::{Face, MeshKind};
//! let cu = Cell::new(Structure::Fcc, 3.615, 0.0, 0.0).unwrap();
//! let f = Face::new(&cu, [1, 1, 1]).unwrap();
//! assert_eq!(f.mesh_kind(), MeshKind::Hexagonal);
//! assert!((f.a1_len_a() - 3.615 / 2f32.sqrt()).abs() < 1e-5);
//! ```

use crate::beam;
use crate::error::{finite, Error, Quantity, Result};
use crate::lattice::{check_indices, reciprocal, Cell, Miller};
use crate::listing::Listing;
use crate::math::{self, Vec3};

pub mod domains;
mod iv;
mod iv_model;
pub mod layers;
mod overlayer_list;
pub mod relax;
mod rods;
mod sorted;
pub mod steps;
mod superstructure;
mod wood;

pub use layers::{AtomicPlanes, MAX_PLANES};
pub use overlayer_list::{BeamLattices, OverlayerBeams};
pub use relax::{Relaxation, RELAX_MAX_PCT};
pub use rods::BeamIter;
pub use sorted::{SortedBeams, SORTED_WINDOW};
pub(crate) use superstructure::domain_bits;
pub use superstructure::{
    super_beam_before, union_beams, FracRod, SuperBeam, Superstructure, MAX_BEAM_DEN, MAX_CELLS,
    MAX_DEN, MAX_ENTRY,
};
pub use wood::{Wood, MAX_SQUARE};

/// Largest |tilt| accepted, degrees.
pub const TILT_MAX_DEG: f32 = 89.9;

/// The five 2D Bravais meshes.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum MeshKind {
    /// |a1| = |a2|, γ = 90°.
    Square,
    /// |a1| = |a2|, γ = 60° or 120°.
    Hexagonal,
    /// |a1| ≠ |a2|, γ = 90°.
    Rectangular,
    /// A rhombic primitive cell (|a1| = |a2|, or |a1| = 2|a2|·|cos γ|): a centred
    /// rectangular mesh.
    CentredRectangular,
    /// No symmetry beyond two-fold.
    Oblique,
}

impl MeshKind {
    /// Lower-case name.
    pub const fn name(self) -> &'static str {
        match self {
            MeshKind::Square => "square",
            MeshKind::Hexagonal => "hexagonal",
            MeshKind::Rectangular => "rectangular",
            MeshKind::CentredRectangular => "centred-rectangular",
            MeshKind::Oblique => "oblique",
        }
    }
}

/// A crystal face: bulk-terminated 1×1 mesh, its frame and its reciprocal rods.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Face {
    /// The bulk cell.
    pub cell: Cell,
    /// Face indices, reduced by their common divisor.
    pub miller: Miller,
    /// a1 in conventional coordinates, in units of half a cell axis.
    pub a1_half: [i32; 3],
    /// a2 in conventional coordinates, in units of half a cell axis.
    pub a2_half: [i32; 3],
    /// a3 (shortest lattice vector to the next lattice plane) in half-axis units.
    pub a3_half: [i32; 3],
    /// a1, a2, a3 Cartesian in the crystal frame, Å.
    pub vectors_a: [Vec3; 3],
    /// Outward unit normal n̂ (crystal frame).
    pub normal: Vec3,
    /// Surface frame e1 = â1, e2 = n̂ × e1 (crystal frame).
    pub frame: [Vec3; 2],
    /// a1 and a2 in the surface frame (e1, e2), Å.
    pub mesh_2d_a: [[f32; 2]; 2],
    /// b1 and b2 in the surface frame, 1/Å.
    pub recip_2d_inv_a: [[f32; 2]; 2],
    /// Normal components of the 3D reciprocal basis of (a1, a2, a3), 1/Å: a bulk G with
    /// rod (h, k) and layer index m has G·n̂ = h·b₁ₙ + k·b₂ₙ + m/d (b₁ₙ, b₂ₙ are the two entries).
    pub recip_normal_inv_a: [f32; 2],
    /// Period along the normal: the spacing of the lattice planes (of the Bravais
    /// lattice) parallel to the face, Å. Not the spacing of the atomic planes when the
    /// motif has more than one atom (hcp(0001): c, not c/2); see [`Face::atomic_planes`].
    pub layer_spacing_a: f32,
    /// Conventional (H K L) = `to_conventional` · (h, k, m).
    pub to_conventional: [[i32; 3]; 3],
}

/// Incidence conditions: kinetic energy outside, tilt α and azimuth φ.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Incidence {
    /// Kinetic energy at the sample, eV.
    pub energy_ev: f32,
    /// Tilt α, degrees (0 = normal incidence).
    pub tilt_deg: f32,
    /// Azimuth φ, degrees.
    pub azimuth_deg: f32,
    /// 1/λ outside, 1/Å.
    pub k_inv_a: f32,
    sin_tilt: f32,
    cos_az: f32,
    sin_az: f32,
}

impl Incidence {
    /// Incidence at `energy_ev` (1 eV–300 keV), tilt (|α| ≤ 89.9°) and azimuth (finite,
    /// any value).
    pub fn new(energy_ev: f32, tilt_deg: f32, azimuth_deg: f32) -> Result<Incidence> {
        let e = beam::check_energy(energy_ev)?;
        let t = check_tilt(tilt_deg)?;
        let a = finite(azimuth_deg, Quantity::Azimuth)?;
        let (sin_az, cos_az) = math::sin_cos_deg(a);
        Ok(Incidence {
            energy_ev: e,
            tilt_deg: t,
            azimuth_deg: a,
            k_inv_a: beam::wavenumber_unchecked_inv_a(e),
            sin_tilt: math::sin(math::rad(t)),
            cos_az,
            sin_az,
        })
    }

    /// The same energy and tilt at azimuth `azimuth_deg` (finite, any value): equal to
    /// `Incidence::new(self.energy_ev, self.tilt_deg, azimuth_deg)`, without computing
    /// the wavenumber and the tilt's sine again.
    pub fn at_azimuth(&self, azimuth_deg: f32) -> Result<Incidence> {
        let a = finite(azimuth_deg, Quantity::Azimuth)?;
        let (sin_az, cos_az) = math::sin_cos_deg(a);
        Ok(Incidence {
            azimuth_deg: a,
            cos_az,
            sin_az,
            ..*self
        })
    }

    /// Normal incidence at azimuth 0.
    pub fn normal(energy_ev: f32) -> Result<Incidence> {
        Incidence::new(energy_ev, 0.0, 0.0)
    }

    /// k∥ of the incoming beam in the surface frame, 1/Å.
    pub fn k_par_in(&self) -> [f32; 2] {
        [self.sin_tilt * self.k_inv_a, 0.0]
    }
}

/// Checks a tilt angle: finite, |α| ≤ 89.9°.
pub fn check_tilt(tilt_deg: f32) -> Result<f32> {
    let t = finite(tilt_deg, Quantity::Tilt)?;
    if t.abs() > TILT_MAX_DEG {
        Err(Error::TooHigh(Quantity::Tilt))
    } else {
        Ok(t)
    }
}

/// One diffracted beam leaving the surface.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct SurfaceBeam {
    /// Rod indices (h, k).
    pub rod: [i32; 2],
    /// |g|, 1/Å (0 for the specular beam).
    pub g_inv_a: f32,
    /// k∥ of the beam in the surface frame, 1/Å.
    pub k_par_inv_a: [f32; 2],
    /// Polar exit angle from the surface normal, degrees (0–90).
    pub exit_deg: f32,
    /// Azimuth of the exit direction in the surface frame, from e1 toward e2, degrees
    /// (−180, 180].
    pub exit_azimuth_deg: f32,
    /// Energy (outside, eV) at which this beam emerges at this tilt and azimuth; `None`
    /// for the specular beam, which always exists.
    pub emergence_ev: Option<f32>,
}

impl SurfaceBeam {
    /// A placeholder for initialising buffers.
    pub const EMPTY: SurfaceBeam = SurfaceBeam {
        rod: [0, 0],
        g_inv_a: 0.0,
        k_par_inv_a: [0.0, 0.0],
        exit_deg: 0.0,
        exit_azimuth_deg: 0.0,
        emergence_ev: None,
    };

    /// Row spacing 1/|g|, Å; `None` for the specular beam.
    pub fn row_spacing_a(&self) -> Option<f32> {
        if self.g_inv_a > 0.0 {
            Some(1.0 / self.g_inv_a)
        } else {
            None
        }
    }
}

/// A kinematic I-V intensity maximum on one rod.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct IvPeak {
    /// Beam energy outside the crystal, eV.
    pub energy_ev: f32,
    /// Order n = ⌈G⊥·d − 0.001⌉, d the period along the normal
    /// ([`Face::layer_spacing_a`]): the peak's G⊥ lies in ((n − 1)/d, n/d] (a G⊥·d
    /// within 0.001 above a whole number counts as that number). It depends on G⊥ alone, so
    /// symmetry-equivalent rods (which have the same G⊥) get the same orders; consecutive
    /// lattice G⊥ on a rod have consecutive orders, and on the specular rod G⊥ = n/d
    /// exactly (λ inside = 2d/n at normal incidence). With several atomic planes per
    /// period ([`Face::atomic_planes`]) extinct orders are missing (hcp(0001): 2, 4, 6, …).
    pub order: i32,
    /// Conventional indices (H K L) of the bulk reciprocal vector G.
    pub g_hkl: [i32; 3],
    /// G·n̂, 1/Å.
    pub g_perp_inv_a: f32,
}

impl IvPeak {
    /// A placeholder for initialising buffers.
    pub const EMPTY: IvPeak = IvPeak {
        energy_ev: 0.0,
        order: 0,
        g_hkl: [0, 0, 0],
        g_perp_inv_a: 0.0,
    };
}

fn gcd(a: i32, b: i32) -> i32 {
    let (mut a, mut b) = (a.abs(), b.abs());
    while b != 0 {
        let t = a % b;
        a = b;
        b = t;
    }
    a
}

fn half_to_cart(cell: &Cell, half: [i32; 3]) -> Vec3 {
    cell.point([
        half[0] as f32 * 0.5,
        half[1] as f32 * 0.5,
        half[2] as f32 * 0.5,
    ])
}

fn icross(a: [i32; 3], b: [i32; 3]) -> [i32; 3] {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}

/// x·a + y·b = gcd(a, b) ≥ 0: `(gcd, x, y)` (extended Euclid).
fn ext_gcd(a: i32, b: i32) -> (i32, i32, i32) {
    let (mut r0, mut r1, mut x0, mut x1, mut y0, mut y1) = (a, b, 1i32, 0i32, 0i32, 1i32);
    while r1 != 0 {
        let q = r0 / r1;
        (r0, r1) = (r1, r0 - q * r1);
        (x0, x1) = (x1, x0 - q * x1);
        (y0, y1) = (y1, y0 - q * y1);
    }
    if r0 < 0 {
        (-r0, -x0, -y0)
    } else {
        (r0, x0, y0)
    }
}

/// The longer vector, Å, of a Lagrange-reduced basis of the conventional-cell lattice
/// vectors in the plane m·x = 0 (m reduced, not zero). With g = gcd(m₀, m₁) and
/// x·m₀ + y·m₁ = g, the vectors (m₁/g, −m₀/g, 0) and (x·m₂, y·m₂, −g) lie in the plane
/// and their cross product is m itself, so they are a basis of it (for m₀ = m₁ = 0,
/// the plane z = 0: x̂ and ŷ). Reduction replaces the longer vector by itself minus the
/// nearest whole multiple of the shorter until that multiple is 0, keeping a basis of
/// the same lattice; at most 32 steps (indices ≤ 12 need a handful).
fn plane_basis_len(cell: &Cell, m: [i32; 3]) -> f32 {
    let (g, x, y) = ext_gcd(m[0], m[1]);
    let (mut a, mut b) = if g == 0 {
        ([1, 0, 0], [0, 1, 0])
    } else {
        ([m[1] / g, -m[0] / g, 0], [x * m[2], y * m[2], -g])
    };
    let cart = |w: [i32; 3]| cell.point([w[0] as f32, w[1] as f32, w[2] as f32]);
    let (mut ca, mut cb) = (cart(a), cart(b));
    for _ in 0..32 {
        if math::dot(ca, ca) > math::dot(cb, cb) {
            core::mem::swap(&mut a, &mut b);
            core::mem::swap(&mut ca, &mut cb);
        }
        let aa = math::dot(ca, ca);
        if aa <= 0.0 {
            break;
        }
        let mu = math::round(math::dot(ca, cb) / aa);
        if !(mu.abs() >= 1.0 && mu.abs() <= 1.0e4) {
            break;
        }
        let k = mu as i32;
        b = [b[0] - k * a[0], b[1] - k * a[1], b[2] - k * a[2]];
        cb = cart(b);
    }
    math::norm(ca).max(math::norm(cb))
}

/// Best-so-far candidate of the lattice search: shortest, ties to larger coordinates.
#[derive(Clone, Copy)]
struct Best {
    half: [i32; 3],
    len2: f32,
}

impl Best {
    const NONE: Best = Best {
        half: [0, 0, 0],
        len2: f32::INFINITY,
    };

    fn offer(&mut self, half: [i32; 3], len2: f32) {
        if !self.found() {
            self.half = half;
            self.len2 = len2;
            return;
        }
        let tol = 1e-5 * self.len2;
        if len2 < self.len2 - tol || ((len2 - self.len2).abs() <= tol && half > self.half) {
            self.half = half;
            self.len2 = len2;
        }
    }

    fn found(&self) -> bool {
        self.len2.is_finite()
    }
}

impl Face {
    /// The bulk-terminated face (h k l) of `cell`. Indices are reduced by their common
    /// divisor; |index| ≤ 12.
    pub fn new(cell: &Cell, miller: Miller) -> Result<Face> {
        check_indices(miller)?;
        let g = gcd(gcd(miller[0], miller[1]), miller[2]);
        let m = [miller[0] / g, miller[1] / g, miller[2] / g];
        let g_hkl = cell.g_vector(m);
        let normal = math::unit(g_hkl).ok_or(Error::NoSurfaceMesh)?;
        let s = cell.structure;

        // Two independent in-plane lattice vectors bound the mesh search.
        let cands = [[m[1], -m[0], 0], [m[2], 0, -m[0]], [0, m[2], -m[1]]];
        let mut lens = [f32::INFINITY; 3];
        for (len, c) in lens.iter_mut().zip(cands.iter()) {
            if *c != [0, 0, 0] {
                *len = math::norm(cell.point([c[0] as f32, c[1] as f32, c[2] as f32]));
            }
        }
        let mut bound = 0.0f32;
        for (i, (ci, li)) in cands.iter().zip(lens).enumerate() {
            for (cj, lj) in cands.iter().zip(lens).skip(i + 1) {
                if icross(*ci, *cj) != [0, 0, 0] {
                    let l = li.max(lj);
                    if bound == 0.0 || l < bound {
                        bound = l;
                    }
                }
            }
        }
        // A reduced basis of the plane's conventional lattice vectors: two independent
        // lattice vectors in the plane like the pair above, so the longer is still at
        // least the second shortest in-plane vector and the covering radius — but on a
        // high-index face several times shorter, and the box below, with its work,
        // shrinks with the cube.
        bound = bound.min(plane_basis_len(cell, m));
        if !(bound > 0.0 && bound.is_finite()) {
            return Err(Error::NoSurfaceMesh);
        }
        let reach = bound + 1.0 / math::norm(g_hkl);
        let mut n = [0i32; 3];
        for (ni, r) in n.iter_mut().zip(cell.reciprocal_inv_a.iter()) {
            *ni = (2.0 * reach * math::norm(*r)) as i32 + 1;
        }

        // First pass: shortest in-plane vector, and the smallest positive height.
        let mut t1 = Best::NONE;
        let mut p_min = i32::MAX;
        for u in -n[0]..=n[0] {
            for v in -n[1]..=n[1] {
                for w in -n[2]..=n[2] {
                    // The height first: most points are neither in the plane nor
                    // below the lowest positive height found, and need no lattice test.
                    let p = m[0] * u + m[1] * v + m[2] * w;
                    if p < 0 || p >= p_min || (u == 0 && v == 0 && w == 0) {
                        continue;
                    }
                    let half = [u, v, w];
                    if !s.is_lattice_point_half(half) {
                        continue;
                    }
                    if p == 0 {
                        let c = half_to_cart(cell, half);
                        t1.offer(half, math::dot(c, c));
                    } else if p > 0 && p < p_min {
                        p_min = p;
                    }
                }
            }
        }
        if !t1.found() || p_min == i32::MAX {
            return Err(Error::NoSurfaceMesh);
        }
        // Second pass: shortest in-plane vector not parallel to a1; shortest vector at
        // the first positive height.
        let mut t2 = Best::NONE;
        let mut t3 = Best::NONE;
        for u in -n[0]..=n[0] {
            for v in -n[1]..=n[1] {
                for w in -n[2]..=n[2] {
                    let p = m[0] * u + m[1] * v + m[2] * w;
                    if p != 0 && p != p_min {
                        continue;
                    }
                    let half = [u, v, w];
                    if !s.is_lattice_point_half(half) {
                        continue;
                    }
                    if p == 0 {
                        let c = icross(t1.half, half);
                        if c[0] != 0 || c[1] != 0 || c[2] != 0 {
                            let c = half_to_cart(cell, half);
                            t2.offer(half, math::dot(c, c));
                        }
                    } else if p == p_min {
                        let c = half_to_cart(cell, half);
                        t3.offer(half, math::dot(c, c));
                    }
                }
            }
        }
        if !t2.found() || !t3.found() {
            return Err(Error::NoSurfaceMesh);
        }
        let a1 = half_to_cart(cell, t1.half);
        let mut a2_half = t2.half;
        let mut a2 = half_to_cart(cell, a2_half);
        if math::dot(math::cross(a1, a2), normal) < 0.0 {
            a2_half = [-a2_half[0], -a2_half[1], -a2_half[2]];
            a2 = math::scale(a2, -1.0);
        }
        let a3 = half_to_cart(cell, t3.half);
        let e1 = math::unit(a1).ok_or(Error::NoSurfaceMesh)?;
        let e2 = math::cross(normal, e1);
        let mesh_2d_a = [
            [math::dot(a1, e1), 0.0],
            [math::dot(a2, e1), math::dot(a2, e2)],
        ];
        let det = mesh_2d_a[0][0] * mesh_2d_a[1][1] - mesh_2d_a[0][1] * mesh_2d_a[1][0];
        if det.is_nan() || det <= 0.0 {
            return Err(Error::NoSurfaceMesh);
        }
        let recip_2d_inv_a = [
            [mesh_2d_a[1][1] / det, -mesh_2d_a[1][0] / det],
            [-mesh_2d_a[0][1] / det, mesh_2d_a[0][0] / det],
        ];
        let b = reciprocal([a1, a2, a3]);
        let layer_spacing_a = math::dot(a3, normal);
        let mut to_conventional = [[0i32; 3]; 3];
        for (row, v) in to_conventional.iter_mut().zip(cell.vectors_a.iter()) {
            for (x, bj) in row.iter_mut().zip(b.iter()) {
                *x = math::round(math::dot(*bj, *v)) as i32;
            }
        }
        Ok(Face {
            cell: *cell,
            miller: m,
            a1_half: t1.half,
            a2_half,
            a3_half: t3.half,
            vectors_a: [a1, a2, a3],
            normal,
            frame: [e1, e2],
            mesh_2d_a,
            recip_2d_inv_a,
            recip_normal_inv_a: [math::dot(b[0], normal), math::dot(b[1], normal)],
            layer_spacing_a,
            to_conventional,
        })
    }

    /// The mesh vectors a1 and a2 as crystal directions \[uvw\] of the conventional cell
    /// (smallest integers along each vector), e.g. to tie azimuth 0 (a1 along e1) to a
    /// known direction or flat of the crystal. Hexagonal crystals: three-index \[UVW\] on
    /// a, b, c (see [`crate::lattice::four_index_direction`] for \[uvtw\]).
    pub fn mesh_uvw(&self) -> [[i32; 3]; 2] {
        let reduce = |v: [i32; 3]| {
            let g = gcd(gcd(v[0], v[1]), v[2]).max(1);
            [v[0] / g, v[1] / g, v[2] / g]
        };
        [reduce(self.a1_half), reduce(self.a2_half)]
    }

    /// |a1|, Å.
    pub fn a1_len_a(&self) -> f32 {
        self.mesh_2d_a[0][0]
    }

    /// |a2|, Å.
    pub fn a2_len_a(&self) -> f32 {
        let a = self.mesh_2d_a[1];
        math::sqrt(a[0] * a[0] + a[1] * a[1])
    }

    /// Angle γ between a1 and a2, degrees.
    pub fn gamma_deg(&self) -> f32 {
        let a = self.mesh_2d_a[1];
        math::deg(math::atan2(a[1], a[0]))
    }

    /// Mesh area |a1 × a2|, Å².
    pub fn area_a2(&self) -> f32 {
        self.mesh_2d_a[0][0] * self.mesh_2d_a[1][1]
    }

    /// Which of the five 2D Bravais meshes this is (relative tolerance 1e-4).
    pub fn mesh_kind(&self) -> MeshKind {
        let l1 = self.a1_len_a();
        let l2 = self.a2_len_a();
        let cos_g = self.mesh_2d_a[1][0] / l2;
        let tol = 1e-4;
        let eq = (l1 - l2).abs() <= tol * l1;
        let right = cos_g.abs() <= tol;
        if eq && right {
            MeshKind::Square
        } else if eq && (cos_g.abs() - 0.5).abs() <= tol {
            MeshKind::Hexagonal
        } else if right {
            MeshKind::Rectangular
        } else if eq || (l1 - 2.0 * l2 * cos_g.abs()).abs() <= tol * l1 {
            MeshKind::CentredRectangular
        } else {
            MeshKind::Oblique
        }
    }

    /// Rod vector g(h, k) in the surface frame at azimuth 0, 1/Å.
    pub fn rod_inv_a(&self, rod: [i32; 2]) -> [f32; 2] {
        mesh_g(&self.recip_2d_inv_a, rod[0] as f32, rod[1] as f32)
    }

    /// Row spacing 1/|g(h, k)|, Å; `None` for (0, 0).
    pub fn row_spacing_a(&self, rod: [i32; 2]) -> Option<f32> {
        let g = self.rod_inv_a(rod);
        let n = math::sqrt(g[0] * g[0] + g[1] * g[1]);
        if n > 0.0 {
            Some(1.0 / n)
        } else {
            None
        }
    }

    /// Rod vector turned by the incidence's azimuth, in the surface frame, 1/Å.
    pub(crate) fn rod_turned(&self, rod: [i32; 2], inc: &Incidence) -> [f32; 2] {
        turned(self.rod_inv_a(rod), inc)
    }

    /// The beam on rod (h, k) at `inc`, or `Evanescent`.
    ///
    /// ```
    /// use matterwave_core::lattice::{Cell, Structure};
    /// use matterwave_core::surface::{Face, Incidence};
    /// let f = Face::new(&Cell::new(Structure::Fcc, 3.524, 0.0, 0.0).unwrap(), [1, 0, 0]).unwrap();
    /// let b = f.beam([1, 0], &Incidence::normal(100.0).unwrap()).unwrap();
    /// // Normal incidence: sin θ = λ/d_row, d_row = |a1| = a/√2 for a square mesh.
    /// let lambda = matterwave_core::beam::wavelength_a(100.0).unwrap();
    /// let d = 3.524 / 2f32.sqrt();
    /// assert!((b.exit_deg - (lambda / d).asin().to_degrees()).abs() < 1e-3);
    /// ```
    pub fn beam(&self, rod: [i32; 2], inc: &Incidence) -> Result<SurfaceBeam> {
        if rod[0].abs() > 4096 || rod[1].abs() > 4096 {
            return Err(Error::IndicesTooLarge);
        }
        let g = self.rod_turned(rod, inc);
        beam_from(rod, g, inc).ok_or(Error::Evanescent)
    }

    /// k∥ (surface frame of `inc`, 1/Å) of the beam on rod (h, k) and its square, or
    /// `None` when the beam is evanescent: the part of [`Face::beam`] that aiming needs
    /// (no exit angles, no emergence energy), with the same arithmetic.
    pub(crate) fn k_par_of(&self, rod: [i32; 2], inc: &Incidence) -> Option<([f32; 2], f32)> {
        k_par_from(self.rod_turned(rod, inc), inc)
    }

    /// The outside energy (eV) at which rod (h, k) emerges at this tilt and azimuth
    /// (|k∥,in + g| = 1/λ); `None` for (0, 0). The energy of `inc` is not used.
    pub fn emergence_ev(&self, rod: [i32; 2], inc: &Incidence) -> Option<f32> {
        let g = self.rod_turned(rod, inc);
        emergence_from(g, g[0] * g[0] + g[1] * g[1], inc.sin_tilt)
    }

    /// Conventional (H K L) of the bulk vector with rod (h, k) and layer index m.
    pub fn conventional(&self, hkm: [i32; 3]) -> [i32; 3] {
        let c = &self.to_conventional;
        let mut r = [0i32; 3];
        for (ri, ci) in r.iter_mut().zip(c.iter()) {
            *ri = ci[0] * hkm[0] + ci[1] * hkm[1] + ci[2] * hkm[2];
        }
        r
    }
}

/// k∥ = k∥,in + g of turned rod vector `g` at `inc` and |k∥|², or `None` beyond 1/λ.
fn k_par_from(g: [f32; 2], inc: &Incidence) -> Option<([f32; 2], f32)> {
    let u = inc.k_inv_a;
    let kin = inc.sin_tilt * u;
    let kx = kin + g[0];
    let ky = g[1];
    let q = kx * kx + ky * ky;
    if q > u * u {
        return None;
    }
    Some(([kx, ky], q))
}

/// The polar exit angle, degrees, of a beam with |k∥| = `k_par` (1/Å) at 1/λ = `u`.
pub(crate) fn exit_deg_of(k_par: f32, u: f32) -> f32 {
    math::deg(math::asin_clamped(k_par / u))
}

/// Emergence energy for turned rod vector `g` (|g|² = `g2`) at sin(tilt) `s`.
///
/// |s·u·e1 + g| = u has the positive root u = (s·g1 + √(s²g1² + c²|g|²)) / c²; the
/// algebraically equal form |g|² / (√(…) − s·g1) avoids cancellation when s·g1 < 0.
fn emergence_from(g: [f32; 2], g2: f32, s: f32) -> Option<f32> {
    if g2 <= 0.0 {
        return None;
    }
    let c2 = 1.0 - s * s;
    let sg = s * g[0];
    let root = math::sqrt(sg * sg + c2 * g2);
    let u = if sg >= 0.0 {
        (sg + root) / c2
    } else {
        g2 / (root - sg)
    };
    Some(beam::energy_from_wavenumber_ev(u))
}

/// g = h·b1 + k·b2 for the reciprocal mesh `b` (rows b1, b2), 1/Å: the one arithmetic of
/// every rod vector, whole or fractional.
pub(crate) fn mesh_g(b: &[[f32; 2]; 2], h: f32, k: f32) -> [f32; 2] {
    [h * b[0][0] + k * b[1][0], h * b[0][1] + k * b[1][1]]
}

/// A rod vector turned by the incidence's azimuth, in the surface frame, 1/Å.
pub(crate) fn turned(g: [f32; 2], inc: &Incidence) -> [f32; 2] {
    [
        g[0] * inc.cos_az - g[1] * inc.sin_az,
        g[0] * inc.sin_az + g[1] * inc.cos_az,
    ]
}

/// The beam labelled `rod` whose turned rod vector is `g` (1/Å) at `inc`, or `None`
/// when it is evanescent.
pub(crate) fn beam_from(rod: [i32; 2], g: [f32; 2], inc: &Incidence) -> Option<SurfaceBeam> {
    let u = inc.k_inv_a;
    let ([kx, ky], q) = k_par_from(g, inc)?;
    let g2 = g[0] * g[0] + g[1] * g[1];
    let k_par = math::sqrt(q);
    Some(SurfaceBeam {
        rod,
        g_inv_a: math::sqrt(g2),
        k_par_inv_a: [kx, ky],
        exit_deg: exit_deg_of(k_par, u),
        exit_azimuth_deg: if q > 0.0 {
            math::deg(math::atan2(ky, kx))
        } else {
            0.0
        },
        emergence_ev: emergence_from(g, g2, inc.sin_tilt),
    })
}

/// The one beam order (DEVELOPERS.md): whether `a` is listed before `b` — increasing
/// |g|, equal |g| (within a relative 1e-5) by rod indices descending, h then k.
pub fn beam_before(a: &SurfaceBeam, b: &SurfaceBeam) -> bool {
    // The larger |g| by comparison, not f32::max (a libm call on the target); |g| is a
    // square root, never NaN.
    let larger = if a.g_inv_a > b.g_inv_a {
        a.g_inv_a
    } else {
        b.g_inv_a
    };
    let tol = 1e-5 * larger;
    if a.g_inv_a < b.g_inv_a - tol {
        true
    } else if a.g_inv_a > b.g_inv_a + tol {
        false
    } else {
        a.rod > b.rod
    }
}

#[cfg(test)]
mod tests;
