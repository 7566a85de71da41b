//! Superstructure beams in view: what the detector at an arm and elevation sees of a
//! superstructure (or of the union of its domains), with the geometry of
//! [`super::beams_in_view`] and [`super::nearest_in_view`] — the same acceptance disk
//! (`view_disk`), the same cone test (`seen_from`) and the same bounded rod search.
//!
//! The search runs on a face whose 2D mesh is the superstructure's (rows of M on a1,
//! a2; [`Superstructure::mesh_2d_a`]), so its rods (p, q) are exactly the beams
//! p·b*1 + q·b*2 and the work is bounded by the acceptance as for the substrate. Each
//! rod found is then taken to its exact position ([`Superstructure::position`], a
//! [`FracRod`]) and its beam recomputed from that by [`Face::frac_beam`]: a beam at a
//! whole position is bit for bit the substrate's [`Face::beam`], so an integer-order
//! beam is seen at exactly the offset, arm and elevation [`super::beams_in_view`]
//! gives it. A beam's `domains` bits are every superstructure of the list that has it
//! (exact, [`Superstructure::has_beam`]); listed beams appear once each.
//!
//! Only the superstructure's beams are listed: for an integer matrix they include
//! every integer-order beam; for a rational one (an overlayer incommensurate with the
//! substrate) only the integer positions the overlayer shares.
//!
//! ```
//! use matterwave_core::goniometer::{self, SuperInView};
//! use matterwave_core::lattice::{Cell, Structure};
//! use matterwave_core::surface::{Face, Incidence, Superstructure};
//! let ni = Face::new(&Cell::new(Structure::Fcc, 3.524, 0.0, 0.0).unwrap(), [1, 0, 0]).unwrap();
//! let p2x2 = Superstructure::new([[2, 0], [0, 2]], 1).unwrap();
//! let inc = Incidence::normal(60.0).unwrap();
//! // The half-order beam (1/2, 0) at normal incidence: sin θ = λ/(2·|a1|), seen in the
//! // scattering plane at arm δ = θ (a1 along e1 at azimuth 0).
//! let lambda = matterwave_core::beam::wavelength_a(60.0).unwrap();
//! let theta = (lambda / (2.0 * 3.524 / 2f32.sqrt())).asin().to_degrees();
//! let mut out = [SuperInView::EMPTY; 8];
//! let l = goniometer::super_beams_in_view(&ni, &[p2x2], &inc, theta, 0.0, 1.0, &mut out)
//!     .unwrap();
//! assert_eq!(l.stored, 1);
//! assert_eq!(out[0].beam.pos.to_string(), "1/2,0");
//! assert!(out[0].offset_deg < 0.01 && !out[0].beam.integer);
//! ```

use super::detector_direction;
use super::view::{nearest_by, seen_from, view_disk};
use crate::error::{finite, Error, Quantity, Result};
use crate::listing::{insert_sorted, Listing};
use crate::math::{self, Vec3};
use crate::surface::{super_beam_before, Face, Incidence, SuperBeam, Superstructure, SurfaceBeam};

/// Most superstructures one search takes (the bits of [`SuperBeam::domains`]).
const MAX_SUPERS: usize = 16;

/// A superstructure beam the detector sees.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct SuperInView {
    /// The beam: exact position, integer flag, the beam itself (as
    /// [`Face::frac_beam`] gives it) and the domains that have it.
    pub beam: SuperBeam,
    /// Angle between the detector axis and the beam, degrees.
    pub offset_deg: f32,
    /// Arm angle of the beam, degrees.
    pub arm_deg: f32,
    /// Elevation of the beam, degrees.
    pub elevation_deg: f32,
}

impl SuperInView {
    /// A placeholder for initialising buffers.
    pub const EMPTY: SuperInView = SuperInView {
        beam: SuperBeam::EMPTY,
        offset_deg: 0.0,
        arm_deg: 0.0,
        elevation_deg: 0.0,
    };
}

/// The face whose rods (p, q) are the beams p·b*1 + q·b*2 of `s` on `face`: `face` with
/// its 2D mesh replaced by the superstructure's and its reciprocal mesh by that mesh's
/// (bi·b*j = δij). Only the rod search uses it; `None` for a degenerate mesh (never for
/// a value of [`Superstructure::new`]).
pub(crate) fn search_face(face: &Face, s: &Superstructure) -> Option<Face> {
    let real = s.mesh_2d_a(face);
    let det = real[0][0] * real[1][1] - real[0][1] * real[1][0];
    if det == 0.0 || !det.is_finite() {
        return None;
    }
    let mut f = *face;
    f.mesh_2d_a = real;
    f.recip_2d_inv_a = [
        [real[1][1] / det, -real[1][0] / det],
        [-real[0][1] / det, real[0][0] / det],
    ];
    Some(f)
}

/// The exact beam of rod `pq` of `supers[i]`'s search face at `inc`, with its domain
/// bits; `None` when evanescent, or — with `first_only` — when an earlier
/// superstructure of the list has it (so that a listing holds each position once).
fn exact_beam(
    face: &Face,
    supers: &[Superstructure],
    i: usize,
    pq: [i32; 2],
    inc: &Incidence,
    first_only: bool,
) -> Option<SuperBeam> {
    let s = supers.get(i)?;
    let pos = s.position(pq).normalised();
    if first_only && supers.get(..i)?.iter().any(|e| e.has_beam(&pos)) {
        return None;
    }
    let beam = face.frac_beam(&pos, inc).ok()?;
    Some(SuperBeam {
        pos,
        integer: pos.integer().is_some(),
        beam,
        domains: crate::surface::domain_bits(supers, &pos),
    })
}

/// Nearer, or as near and first in the one order of superstructure beams.
fn nearer(a: &SuperInView, b: &SuperInView) -> bool {
    a.offset_deg < b.offset_deg
        || (a.offset_deg == b.offset_deg && super_beam_before(&a.beam, &b.beam))
}

/// The detector direction, the cosine of the acceptance and the acceptance (degrees,
/// clamped to [0, 90]), after the checks every function here makes.
fn detector(
    supers: &[Superstructure],
    arm_deg: f32,
    elevation_deg: f32,
    acceptance_deg: f32,
) -> Result<(Vec3, f32, f32)> {
    let arm = finite(arm_deg, Quantity::Angle)?;
    let elev = finite(elevation_deg, Quantity::Angle)?;
    let acc = math::clamp(finite(acceptance_deg, Quantity::Angle)?, 0.0, 90.0);
    if supers.is_empty() || supers.len() > MAX_SUPERS {
        return Err(Error::SuperstructureTooLarge);
    }
    Ok((
        detector_direction(arm, elev),
        math::cos(math::rad(acc)),
        acc,
    ))
}

fn in_view(b: SuperBeam, inc: &Incidence, d: Vec3, cos_acc: f32) -> Option<SuperInView> {
    let v = seen_from(b.beam, inc, d, cos_acc)?;
    Some(SuperInView {
        beam: b,
        offset_deg: v.offset_deg,
        arm_deg: v.arm_deg,
        elevation_deg: v.elevation_deg,
    })
}

/// "What is the detector looking at" for a superstructure: every beam of the union of
/// `supers` (one superstructure, or its domains — at most 16; bit i of each beam's
/// `domains` is `supers[i]`) on `face` at `inc` within `acceptance_deg` of the
/// detector axis at (arm, elevation), degrees, nearest first (equal offsets in the
/// order of [`super_beam_before`]), each once. The work is bounded by the acceptance:
/// per superstructure, the rods of its mesh whose k∥ can lie within it.
///
/// Errors: `NotFinite` for an angle, `EmptyBuffer`, `SuperstructureTooLarge` for an
/// empty or longer list.
pub fn super_beams_in_view(
    face: &Face,
    supers: &[Superstructure],
    inc: &Incidence,
    arm_deg: f32,
    elevation_deg: f32,
    acceptance_deg: f32,
    out: &mut [SuperInView],
) -> Result<Listing> {
    let (d, cos_acc, acc) = detector(supers, arm_deg, elevation_deg, acceptance_deg)?;
    if out.is_empty() {
        return Err(Error::EmptyBuffer);
    }
    let (centre, radius) = view_disk(inc, d, acc);
    let mut stored = 0usize;
    let mut truncated = false;
    if radius < 0.0 {
        return Ok(Listing { stored, truncated });
    }
    for (i, s) in supers.iter().enumerate() {
        let Some(sf) = search_face(face, s) else {
            continue;
        };
        for item in sf.beams_near(inc, centre, radius).filter_map(|b| {
            exact_beam(face, supers, i, b.rod, inc, true).and_then(|b| in_view(b, inc, d, cos_acc))
        }) {
            truncated |= insert_sorted(out, &mut stored, item, nearer);
        }
    }
    Ok(Listing { stored, truncated })
}

/// The beam of the union of `supers` nearest the detector axis at (arm, elevation),
/// degrees, if one lies within `acceptance_deg` — the first of
/// [`super_beams_in_view`] — found per superstructure with the bounded search of
/// [`super::nearest_in_view`] (work bounded however dense the beams are).
///
/// Errors: `NotFinite` for an angle, `SuperstructureTooLarge` for an empty list or one
/// longer than 16.
pub fn super_nearest_in_view(
    face: &Face,
    supers: &[Superstructure],
    inc: &Incidence,
    arm_deg: f32,
    elevation_deg: f32,
    acceptance_deg: f32,
) -> Result<Option<SuperInView>> {
    let (d, cos_acc, acc) = detector(supers, arm_deg, elevation_deg, acceptance_deg)?;
    let disk = view_disk(inc, d, acc);
    if disk.1 < 0.0 {
        return Ok(None);
    }
    let mut best: Option<SuperInView> = None;
    for (i, s) in supers.iter().enumerate() {
        let Some(sf) = search_face(face, s) else {
            continue;
        };
        let view = |b: SurfaceBeam| {
            exact_beam(face, supers, i, b.rod, inc, false).and_then(|b| in_view(b, inc, d, cos_acc))
        };
        if let Some(v) = nearest_by(&sf, inc, d, disk, view, |v| v.offset_deg, nearer) {
            if best.as_ref().is_none_or(|b| nearer(&v, b)) {
                best = Some(v);
            }
        }
    }
    Ok(best)
}

/// Calls `f` once for every beam of the union of `supers` at `inc` whose k∥ component
/// along e2 lies in [`lo_inv_a`, `hi_inv_a`] (1/Å; as [`Face::beams_in_band`], searched
/// on each superstructure's mesh), each beam exact and with its domain bits.
pub(crate) fn super_beams_in_band(
    face: &Face,
    supers: &[Superstructure],
    inc: &Incidence,
    lo_inv_a: f32,
    hi_inv_a: f32,
    mut f: impl FnMut(SuperBeam),
) {
    for (i, s) in supers.iter().take(MAX_SUPERS).enumerate() {
        let Some(sf) = search_face(face, s) else {
            continue;
        };
        for b in sf.beams_in_band(inc, lo_inv_a, hi_inv_a) {
            if let Some(b) = exact_beam(face, supers, i, b.rod, inc, true) {
                f(b);
            }
        }
    }
}

#[cfg(test)]
#[path = "super_view_tests.rs"]
mod tests;
