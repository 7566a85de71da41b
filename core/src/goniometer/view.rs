//! "What is the detector looking at": the beams of a face within the detector's
//! acceptance at an arm and elevation, all of them or the nearest, by a rod search
//! bounded by the acceptance. [`super::super_view`] runs the same search on a
//! superstructure's mesh.

use super::{arm_elevation_deg, beam_direction_lab, detector_direction, surface_frame_lab};
use crate::error::{finite, Error, Quantity, Result};
use crate::listing::{insert_sorted, Listing};
use crate::math::{self, Vec3};
use crate::surface::{Face, Incidence, SurfaceBeam};

/// A beam the detector sees.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct InView {
    /// The beam.
    pub beam: SurfaceBeam,
    /// Angle between the detector axis and the beam, degrees.
    pub offset_deg: f32,
    /// Arm angle of the beam, degrees.
    pub arm_deg: f32,
    /// Elevation of the beam, degrees.
    pub elevation_deg: f32,
}

impl InView {
    /// A placeholder for initialising buffers.
    pub const EMPTY: InView = InView {
        beam: SurfaceBeam::EMPTY,
        offset_deg: 0.0,
        arm_deg: 0.0,
        elevation_deg: 0.0,
    };
}

/// "What is the detector looking at": every beam of `face` at `inc` within
/// `acceptance_deg` of the detector axis at (arm, elevation), nearest first. Only the
/// rods whose k∥ can lie within the acceptance are visited, so the work is bounded by
/// the acceptance, not by the energy.
pub fn beams_in_view(
    face: &Face,
    inc: &Incidence,
    arm_deg: f32,
    elevation_deg: f32,
    acceptance_deg: f32,
    out: &mut [InView],
) -> Result<Listing> {
    let arm = finite(arm_deg, Quantity::Angle)?;
    let elev = finite(elevation_deg, Quantity::Angle)?;
    let acc = finite(acceptance_deg, Quantity::Angle)?;
    if out.is_empty() {
        return Err(Error::EmptyBuffer);
    }
    let d = detector_direction(arm, elev);
    let acc = math::clamp(acc, 0.0, 90.0);
    let cos_acc = math::cos(math::rad(acc));
    let (centre, radius) = view_disk(inc, d, acc);
    let mut stored = 0usize;
    let mut truncated = false;
    if radius < 0.0 {
        return Ok(Listing { stored, truncated });
    }
    for item in face
        .beams_near(inc, centre, radius)
        .filter_map(|b| seen_from(b, inc, d, cos_acc))
    {
        truncated |= insert_sorted(out, &mut stored, item, |a, b| a.offset_deg < b.offset_deg);
    }
    Ok(Listing { stored, truncated })
}

/// Beam `b` at `inc` as the detector looking along the unit direction `d` sees it, if
/// it lies within the cone whose half-angle has cosine `cos_acc`.
pub(super) fn seen_from(b: SurfaceBeam, inc: &Incidence, d: Vec3, cos_acc: f32) -> Option<InView> {
    let k = beam_direction_lab(&b, inc);
    let c = math::dot(k, d);
    if c < cos_acc {
        return None;
    }
    let (arm_deg, elevation_deg) = arm_elevation_deg(k);
    Some(InView {
        beam: b,
        // The angle from the cross product's length, for accuracy near zero.
        offset_deg: math::deg(math::atan2(math::norm(math::cross(k, d)), c)),
        arm_deg,
        elevation_deg,
    })
}

/// The disk of k∥ (surface frame of `inc`, 1/Å: centre and radius) that holds every
/// beam within `acc_deg` of the unit direction `d`; a negative radius when none can be.
///
/// A beam's unit direction k̂ = (k∥/k, k⊥ ≥ 0) within θ of d has |k̂ − d| ≤ 2·sin(θ/2),
/// and |k̂ − d|² ≥ |k∥/k − d∥|² + min(d⊥, 0)² (k⊥ ≥ 0): so |k∥ − k·d∥| ≤
/// k·√(4·sin²(θ/2) − min(d⊥, 0)²).
pub(super) fn view_disk(inc: &Incidence, d: Vec3, acc_deg: f32) -> ([f32; 2], f32) {
    let [e1, e2, n] = surface_frame_lab(inc.tilt_deg);
    let u = inc.k_inv_a;
    let centre = [u * math::dot(d, e1), u * math::dot(d, e2)];
    let chord = 2.0 * math::sin(math::rad(0.5 * acc_deg));
    let behind = math::dot(d, n).min(0.0);
    let r2 = chord * chord - behind * behind;
    if r2 < 0.0 {
        return (centre, -1.0);
    }
    (centre, u * math::sqrt(r2) * (1.0 + 1.0e-4) + 1.0e-6)
}

/// The beam of `face` at `inc` nearest the detector axis at (arm, elevation), degrees,
/// if one lies within `acceptance_deg` — the first of [`beams_in_view`], found with
/// work bounded however dense the beams are: the rods next to the nearest lattice point
/// give a first candidate at offset θ, and only the disk of k∥ within 2k·sin(θ/2) of the
/// detector's (where every nearer beam must lie) is searched.
pub fn nearest_in_view(
    face: &Face,
    inc: &Incidence,
    arm_deg: f32,
    elevation_deg: f32,
    acceptance_deg: f32,
) -> Result<Option<InView>> {
    let arm = finite(arm_deg, Quantity::Angle)?;
    let elev = finite(elevation_deg, Quantity::Angle)?;
    let acc = math::clamp(finite(acceptance_deg, Quantity::Angle)?, 0.0, 90.0);
    let d = detector_direction(arm, elev);
    let cos_acc = math::cos(math::rad(acc));
    let (centre, radius0) = view_disk(inc, d, acc);
    if radius0 < 0.0 {
        return Ok(None);
    }
    let view = |b: SurfaceBeam| seen_from(b, inc, d, cos_acc);
    // Nearer, or as near and first in rod-index order (the order `beams_near` visits).
    let better = |v: &InView, b: &InView| {
        v.offset_deg < b.offset_deg || (v.offset_deg == b.offset_deg && v.beam.rod < b.beam.rod)
    };
    Ok(nearest_by(
        face,
        inc,
        d,
        (centre, radius0),
        view,
        |v| v.offset_deg,
        better,
    ))
}

/// The search of [`nearest_in_view`] on the rods of `face`, for any view of its beams:
/// `view` maps a beam of `face` to what the detector along `d` sees of it (or `None`
/// outside the acceptance), `offset` gives that view's angle from the detector axis
/// (degrees) and `better` picks between two views. `disk` is [`view_disk`]'s for the
/// acceptance (radius ≥ 0). The rods next to the nearest lattice point give a first
/// candidate at offset θ, and only the disk of k∥ within 2k·sin(θ/2) of the detector's
/// (where every nearer beam must lie) is searched.
pub(super) fn nearest_by<T: Copy>(
    face: &Face,
    inc: &Incidence,
    d: Vec3,
    disk: ([f32; 2], f32),
    view: impl Fn(SurfaceBeam) -> Option<T>,
    offset: impl Fn(&T) -> f32,
    better: impl Fn(&T, &T) -> bool,
) -> Option<T> {
    let (centre, radius0) = disk;
    let seed = face.rod_nearest(inc, centre);
    let mut best: Option<T> = None;
    for dh in -1..=1 {
        for dk in -1..=1 {
            let rod = [seed[0].saturating_add(dh), seed[1].saturating_add(dk)];
            if let Some(v) = face.beam(rod, inc).ok().and_then(&view) {
                if best.as_ref().is_none_or(|b| better(&v, b)) {
                    best = Some(v);
                }
            }
        }
    }
    // Every beam nearer than the best seed lies in this disk. The seed itself is kept:
    // on a beam the disk shrinks to the rounding of k∥, which may leave it outside.
    let radius = match &best {
        Some(b) => view_disk(inc, d, offset(b)).1 * (1.0 + 1.0e-4) + 1.0e-6,
        None => radius0,
    };
    for v in face.beams_near(inc, centre, radius).filter_map(&view) {
        if best.as_ref().is_none_or(|b| better(&v, b)) {
            best = Some(v);
        }
    }
    best
}
