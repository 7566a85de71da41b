//! The arm sweep at fixed energy: its points (the arm setpoint and the beam nearest the
//! detector axis at each, the substrate's and — with an overlayer — the
//! superstructure's) and the beams it crosses.

use super::count_points;
use crate::error::{finite, AxisId, Error, Quantity, Result};
use crate::goniometer::{self, InView, Rig, SuperInView};
use crate::listing::{insert_sorted, Listing};
use crate::math;
use crate::surface::domains::{Overlayer, MAX_DOMAINS};
use crate::surface::{Face, Incidence, Superstructure};

/// An arm sweep at fixed energy, tilt, azimuth and elevation.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SweepPlan {
    /// The instrument.
    pub rig: Rig,
    /// The face.
    pub face: Face,
    /// Incidence (energy at the sample, tilt, azimuth).
    pub incidence: Incidence,
    /// Detector elevation during the sweep, degrees.
    pub elevation_deg: f32,
    /// First arm angle, degrees.
    pub from_deg: f32,
    /// Arm step, degrees (positive).
    pub step_deg: f32,
    /// A superstructure (alone or with its domains) whose beams the points and
    /// [`SweepPlan::super_beams_crossed`] report besides the substrate's; `None`
    /// (the default of [`SweepPlan::new`]) for the substrate only. Set with
    /// [`SweepPlan::with_overlayer`].
    pub overlayer: Option<Overlayer>,
    count: u32,
}

/// One point of an arm sweep.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SweepPoint {
    /// Index from 0.
    pub index: u32,
    /// Requested arm angle, degrees.
    pub arm_deg: f32,
    /// The arm setpoint, or the limit/zone that forbids it.
    pub setpoint: core::result::Result<crate::axis::Setpoint, Error>,
    /// The beam nearest the detector axis, if one is within the acceptance.
    pub in_view: Option<InView>,
    /// With the plan's overlayer: its beam (or its domains' union's) nearest the
    /// detector axis, if one is within the acceptance
    /// ([`goniometer::super_nearest_in_view`]); `None` without an overlayer.
    pub super_in_view: Option<SuperInView>,
}

impl SweepPlan {
    /// An arm sweep from `from_deg` to `to_deg` in steps of `step_deg`.
    #[allow(clippy::too_many_arguments)]
    pub fn new(
        rig: Rig,
        face: Face,
        incidence: Incidence,
        elevation_deg: f32,
        from_deg: f32,
        to_deg: f32,
        step_deg: f32,
    ) -> Result<SweepPlan> {
        rig.validate()?;
        finite(elevation_deg, Quantity::Angle)?;
        let count = count_points(from_deg, to_deg, step_deg, Quantity::Angle)?;
        Ok(SweepPlan {
            rig,
            face,
            incidence,
            elevation_deg,
            from_deg,
            step_deg,
            overlayer: None,
            count,
        })
    }

    /// The same plan reporting the beams of `overlayer` too (`None`: the substrate's
    /// only).
    pub const fn with_overlayer(mut self, overlayer: Option<Overlayer>) -> SweepPlan {
        self.overlayer = overlayer;
        self
    }

    /// The superstructures of the plan's overlayer into `out` ([`Overlayer::supers`]);
    /// 0 without one.
    fn supers(&self, out: &mut [Superstructure; MAX_DOMAINS]) -> usize {
        self.overlayer.map_or(0, |o| o.supers(&self.face, out))
    }

    /// Number of points.
    pub fn len(&self) -> u32 {
        self.count
    }

    /// Whether the plan has no points (never, once built).
    pub fn is_empty(&self) -> bool {
        self.count == 0
    }

    /// The points, starting from arm step count `start_steps`.
    pub fn iter(&self, start_steps: i32) -> SweepIter<'_> {
        SweepIter {
            plan: self,
            next: 0,
            steps: start_steps,
        }
    }

    /// Every beam whose arm angle lies in the sweep's range and whose elevation is
    /// within the acceptance of the sweep's elevation, in order of arm angle.
    pub fn beams_crossed(&self, out: &mut [InView]) -> Result<Listing> {
        if out.is_empty() {
            return Err(Error::EmptyBuffer);
        }
        let inc = &self.incidence;
        let mut stored = 0usize;
        let mut truncated = false;
        let (ky_lo, ky_hi) = self.band();
        for b in self.face.beams_in_band(inc, ky_lo, ky_hi) {
            if let Some(item) = self.crossing(b) {
                truncated |= insert_sorted(out, &mut stored, item, |a, b| a.arm_deg < b.arm_deg);
            }
        }
        Ok(Listing { stored, truncated })
    }

    /// [`SweepPlan::beams_crossed`] for the beams of the plan's overlayer (each once,
    /// with its domains; see [`goniometer::super_beams_in_view`]), in order of arm
    /// angle (equal arm angles in the order of
    /// [`crate::surface::super_beam_before`]). Without an overlayer the listing is
    /// empty. Errors: `EmptyBuffer`.
    pub fn super_beams_crossed(&self, out: &mut [SuperInView]) -> Result<Listing> {
        if out.is_empty() {
            return Err(Error::EmptyBuffer);
        }
        let mut sups = [Superstructure::IDENTITY; MAX_DOMAINS];
        let n = self.supers(&mut sups);
        let supers = sups.get(..n).unwrap_or_default();
        let mut stored = 0usize;
        let mut truncated = false;
        let (ky_lo, ky_hi) = self.band();
        let before = |a: &SuperInView, b: &SuperInView| {
            a.arm_deg < b.arm_deg
                || (a.arm_deg == b.arm_deg && crate::surface::super_beam_before(&a.beam, &b.beam))
        };
        let inc = &self.incidence;
        goniometer::super_view::super_beams_in_band(&self.face, supers, inc, ky_lo, ky_hi, |sb| {
            if let Some(v) = self.crossing(sb.beam) {
                let item = SuperInView {
                    beam: sb,
                    offset_deg: v.offset_deg,
                    arm_deg: v.arm_deg,
                    elevation_deg: v.elevation_deg,
                };
                truncated |= insert_sorted(out, &mut stored, item, before);
            }
        });
        Ok(Listing { stored, truncated })
    }

    /// The strip of k∥,y (1/Å) holding the beams whose elevation is within the
    /// acceptance of the sweep's: sin ν = k∥,y/k (e2 is the lab's vertical).
    fn band(&self) -> (f32, f32) {
        let inc = &self.incidence;
        let acc = self.rig.acceptance_deg;
        let band = |x: f32| inc.k_inv_a * math::sin(math::rad(math::clamp(x, -90.0, 90.0)));
        (
            band(self.elevation_deg - acc),
            band(self.elevation_deg + acc),
        )
    }

    /// Beam `b` as the sweep crosses it: its arm angle within the range and its
    /// elevation within the acceptance of the sweep's (`offset_deg` is that elevation
    /// difference).
    fn crossing(&self, b: crate::surface::SurfaceBeam) -> Option<InView> {
        let lo = self.from_deg;
        let hi = self.from_deg + (self.count.saturating_sub(1)) as f32 * self.step_deg;
        let (arm, elev) =
            goniometer::arm_elevation_deg(goniometer::beam_direction_lab(&b, &self.incidence));
        let off = (elev - self.elevation_deg).abs();
        if arm < lo || arm > hi || off > self.rig.acceptance_deg {
            return None;
        }
        Some(InView {
            beam: b,
            offset_deg: off,
            arm_deg: arm,
            elevation_deg: elev,
        })
    }
}

/// Iterator over a [`SweepPlan`].
#[derive(Clone, Debug)]
pub struct SweepIter<'a> {
    plan: &'a SweepPlan,
    next: u32,
    steps: i32,
}

impl Iterator for SweepIter<'_> {
    type Item = SweepPoint;

    fn next(&mut self) -> Option<SweepPoint> {
        if self.next >= self.plan.count {
            return None;
        }
        let point = self.plan.point(self.next, self.steps);
        if let Ok(s) = &point.setpoint {
            self.steps = s.steps;
        }
        self.next += 1;
        Some(point)
    }
}

impl SweepPlan {
    /// Point `i` of the sweep, moving from arm step count `from_steps`.
    pub fn point(&self, i: u32, from_steps: i32) -> SweepPoint {
        let p = self;
        let arm = p.from_deg + i as f32 * p.step_deg;
        let sp = p.rig.setpoint(AxisId::Arm, arm, from_steps);
        let in_view = goniometer::nearest_in_view(
            &p.face,
            &p.incidence,
            arm,
            p.elevation_deg,
            p.rig.acceptance_deg,
        )
        .ok()
        .flatten();
        let super_in_view = p.overlayer.and_then(|o| {
            let mut sups = [Superstructure::IDENTITY; MAX_DOMAINS];
            let n = o.supers(&p.face, &mut sups);
            goniometer::super_nearest_in_view(
                &p.face,
                sups.get(..n)?,
                &p.incidence,
                arm,
                p.elevation_deg,
                p.rig.acceptance_deg,
            )
            .ok()
            .flatten()
        });
        SweepPoint {
            index: i,
            arm_deg: arm,
            setpoint: sp,
            in_view,
            super_in_view,
        }
    }
}

#[cfg(test)]
#[path = "sweep_tests.rs"]
mod tests;
