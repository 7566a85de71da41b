//! Scan plans as iterators that need no buffers: an energy sweep that tracks a beam, an
//! arm sweep at fixed energy, and an I-V plan with the predicted peak energies marked;
//! and time estimates from trapezoidal motion profiles plus dwell.
//!
//! A point that cannot be reached (the beam is evanescent, or its solution leaves the
//! limits) is still yielded, carrying the error, and the plan goes on.
//!
//! ```
//! use matterwave_core::beam::Gun;
//! use matterwave_core::goniometer::{Branch, Mode, Rig};
//! use matterwave_core::lattice::{Cell, Structure};
//! use matterwave_core::scan::TrackPlan;
//! use matterwave_core::surface::Face;
//! let face = Face::new(&Cell::new(Structure::Fcc, 3.615, 0.0, 0.0).unwrap(), [1, 0, 0]).unwrap();
//! let plan = TrackPlan::new(Rig::bench_default(), face, [1, 0], Gun::plain(0.0), 30.0, 200.0, 10.0, 10.0, Mode::InPlane,
//!     Branch::Nearest).unwrap();
//! assert_eq!(plan.len(), 18);
//! let first = plan.iter([0; 4]).next().unwrap();
//! // Nearest solution from the home position: g along −e1, δ = α + asin(sin α − λ|g|).
//! let lambda = matterwave_core::beam::wavelength_a(30.0).unwrap();
//! let s = 10f32.to_radians().sin() - lambda * 2f32.sqrt() / 3.615;
//! let arm = 10.0 + s.asin().to_degrees();
//! assert!((first.result.unwrap().arm.angle_deg - arm).abs() < 0.01);
//! ```

use crate::beam::Gun;
use crate::error::{finite, Error, Quantity, Result};
use crate::goniometer::{self, AimRequest, Branch, Mode, Position, Rig, Solution};
use crate::inner::V0Model;
use crate::math;
use crate::surface::{Face, Incidence, IvPeak, Relaxation};

mod sweep;
pub use sweep::{SweepIter, SweepPlan, SweepPoint};

/// Most points one plan may have.
pub const MAX_POINTS: u32 = 100_000;

/// Most predicted peaks an I-V plan marks.
pub const MAX_PEAKS: usize = 32;

fn count_points(from: f32, to: f32, step: f32, q: Quantity) -> Result<u32> {
    let from = finite(from, q)?;
    let to = finite(to, q)?;
    let step = finite(step, Quantity::Count)?;
    if step <= 0.0 {
        return Err(Error::TooLow(Quantity::Count));
    }
    if to < from {
        return Err(Error::EmptyRange);
    }
    let n = math::floor((to - from) / step + 1e-4) + 1.0;
    if n > MAX_POINTS as f32 {
        return Err(Error::TooHigh(Quantity::Count));
    }
    Ok(n as u32)
}

/// An energy sweep that keeps the detector on one beam.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct TrackPlan {
    /// The instrument.
    pub rig: Rig,
    /// The face.
    pub face: Face,
    /// The beam (rod).
    pub rod: [i32; 2],
    /// Gun corrections; `nominal_ev` is replaced at each point.
    pub gun: Gun,
    /// First nominal energy, eV.
    pub from_ev: f32,
    /// Nominal energy step, eV.
    pub step_ev: f32,
    /// Sample tilt, degrees.
    pub tilt_deg: f32,
    /// Aiming mode.
    pub mode: Mode,
    /// Branch preference: `Plus` or `Minus` holds the track on one branch over the
    /// whole range; `Nearest` follows the solution nearest the previous point.
    pub branch: Branch,
    count: u32,
}

/// One point of a tracking sweep.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct TrackPoint {
    /// Index from 0.
    pub index: u32,
    /// Nominal energy, eV.
    pub nominal_ev: f32,
    /// Kinetic energy at the sample, eV (NaN where the correction made it invalid).
    pub energy_ev: f32,
    /// The nearest solution, or why there is none.
    pub result: core::result::Result<Solution, Error>,
}

impl TrackPlan {
    /// A sweep from `from_ev` to `to_ev` (nominal, inclusive where the step lands on
    /// it) in steps of `step_ev`, aiming in `mode` on `branch`. Errors: the rig's
    /// validation, the tilt, the point count, `BranchNeedsInPlane`.
    #[allow(clippy::too_many_arguments)]
    pub fn new(
        rig: Rig,
        face: Face,
        rod: [i32; 2],
        gun: Gun,
        from_ev: f32,
        to_ev: f32,
        step_ev: f32,
        tilt_deg: f32,
        mode: Mode,
        branch: Branch,
    ) -> Result<TrackPlan> {
        rig.validate()?;
        crate::surface::check_tilt(tilt_deg)?;
        if matches!(mode, Mode::AtAzimuth(_)) && branch != Branch::Nearest {
            return Err(Error::BranchNeedsInPlane);
        }
        let count = count_points(from_ev, to_ev, step_ev, Quantity::Energy)?;
        Ok(TrackPlan {
            rig,
            face,
            rod,
            gun,
            from_ev,
            step_ev,
            tilt_deg,
            mode,
            branch,
            count,
        })
    }

    /// Number of points.
    pub fn len(&self) -> u32 {
        self.count
    }

    /// Whether the plan has no points (never, once built).
    pub fn is_empty(&self) -> bool {
        self.count == 0
    }

    /// Nominal energy of point `i`, eV.
    pub fn nominal_ev(&self, i: u32) -> f32 {
        self.from_ev + i as f32 * self.step_ev
    }

    /// The points, starting from axis position `start`; each point's solution is the
    /// one nearest the previous reachable point.
    pub fn iter(&self, start: Position) -> TrackIter<'_> {
        TrackIter {
            plan: self,
            next: 0,
            position: start,
        }
    }

    /// The solution at one point from position `from`.
    pub fn point(&self, i: u32, from: &Position) -> TrackPoint {
        let nominal = self.nominal_ev(i);
        let gun = Gun {
            nominal_ev: nominal,
            ..self.gun
        };
        let (energy, result) = match gun.kinetic_energy_ev() {
            Ok(e) => {
                let mut one = [Solution::EMPTY; 1];
                let req = AimRequest::new(&self.face, self.rod, e, self.tilt_deg)
                    .with_mode(self.mode)
                    .with_branch(self.branch);
                let r = goniometer::aim(&self.rig, &req, from, &mut one).map(|_| one[0]);
                (e, r)
            }
            Err(err) => (f32::NAN, Err(err)),
        };
        TrackPoint {
            index: i,
            nominal_ev: nominal,
            energy_ev: energy,
            result,
        }
    }
}

/// Iterator over a [`TrackPlan`].
#[derive(Clone, Debug)]
pub struct TrackIter<'a> {
    plan: &'a TrackPlan,
    next: u32,
    position: Position,
}

impl Iterator for TrackIter<'_> {
    type Item = TrackPoint;

    fn next(&mut self) -> Option<TrackPoint> {
        if self.next >= self.plan.count {
            return None;
        }
        let p = self.plan.point(self.next, &self.position);
        self.next += 1;
        if let Ok(s) = &p.result {
            self.position = s.position();
        }
        Some(p)
    }

    fn size_hint(&self) -> (usize, Option<usize>) {
        let n = (self.plan.count - self.next) as usize;
        (n, Some(n))
    }
}

/// An I-V plan: a tracking sweep with the predicted kinematic peak energies marked.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct IvPlan {
    /// The tracking sweep.
    pub track: TrackPlan,
    /// The constant inner potential of the prediction, eV; `None` when the maxima come
    /// from the face's V0(E) form ([`IvPlan::with_model`]).
    pub inner_potential_ev: Option<f32>,
    peaks: [IvPeak; MAX_PEAKS],
    peak_count: usize,
}

/// One point of an I-V plan.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct IvPoint {
    /// The tracking point.
    pub point: TrackPoint,
    /// A predicted peak within half a step of this point's energy.
    pub peak: Option<IvPeak>,
}

impl IvPoint {
    /// The marked peak as a gun setting, eV: its energy at the sample shifted into the
    /// frame of the point's own key (the nominal energy), by the point's correction
    /// energy − nominal. `None` when no peak is marked.
    pub fn peak_nominal_ev(&self) -> Option<f32> {
        let correction = self.point.energy_ev - self.point.nominal_ev;
        self.peak.map(|p| p.energy_ev - correction)
    }
}

impl IvPlan {
    /// Builds the plan and predicts the peaks over its energy range, at the azimuth of
    /// the first reachable solution (in-plane mode) or the given azimuth, for the
    /// bulk-terminated face.
    pub fn new(track: TrackPlan, inner_potential_ev: f32, start: Position) -> Result<IvPlan> {
        IvPlan::relaxed(track, inner_potential_ev, &Relaxation::NONE, start)
    }

    /// As [`IvPlan::new`], with the maxima of a relaxed top layer
    /// ([`crate::surface::Face::iv_peaks_relaxed`]).
    pub fn relaxed(
        track: TrackPlan,
        inner_potential_ev: f32,
        relax: &Relaxation,
        start: Position,
    ) -> Result<IvPlan> {
        IvPlan::with_model(track, &V0Model::Constant(inner_potential_ev), relax, start)
    }

    /// As [`IvPlan::relaxed`], with an inner-potential model: a constant V0, or V0(E)
    /// ([`crate::surface::Face::iv_peaks_with`]: the energy model takes no relaxation,
    /// [`crate::error::Error::RelaxationNeedsConstantV0`]).
    #[inline(never)]
    pub fn with_model(
        track: TrackPlan,
        v0: &V0Model,
        relax: &Relaxation,
        start: Position,
    ) -> Result<IvPlan> {
        let mut peaks = [IvPeak::EMPTY; MAX_PEAKS];
        let azimuth = match track.mode {
            Mode::AtAzimuth(a) => a,
            Mode::InPlane => track
                .iter(start)
                .find_map(|p| p.result.ok())
                .map_or(0.0, |s| s.azimuth.angle_deg),
        };
        let last = track.nominal_ev(track.len().saturating_sub(1));
        let gun_at = |n: f32| {
            Gun {
                nominal_ev: n,
                ..track.gun
            }
            .kinetic_energy_ev()
        };
        let lo = gun_at(track.from_ev)?;
        let hi = gun_at(last)?;
        let mut peak_count = 0;
        if hi > lo {
            let inc = Incidence::new(lo, track.tilt_deg, azimuth)?;
            let l = track
                .face
                .iv_peaks_with(track.rod, &inc, v0, lo, hi, relax, &mut peaks)?;
            peak_count = l.stored;
        } else {
            match v0 {
                V0Model::Constant(v) => {
                    crate::beam::check_inner_potential(*v)?;
                }
                V0Model::Energy(_) if !relax.is_none() => {
                    return Err(Error::RelaxationNeedsConstantV0)
                }
                V0Model::Energy(f) => {
                    crate::beam::check_inner_potential(f.value_ev(lo))?;
                }
            }
        }
        Ok(IvPlan {
            track,
            inner_potential_ev: match v0 {
                V0Model::Constant(v) => Some(*v),
                V0Model::Energy(_) => None,
            },
            peaks,
            peak_count,
        })
    }

    /// The predicted peaks (energies at the sample).
    pub fn peaks(&self) -> &[IvPeak] {
        self.peaks.get(..self.peak_count).unwrap_or(&[])
    }

    /// The points with peak marks.
    pub fn iter(&self, start: Position) -> impl Iterator<Item = IvPoint> + '_ {
        self.track.iter(start).map(move |point| self.mark(point))
    }

    /// Point `i` from position `from`, with its peak mark.
    pub fn point(&self, i: u32, from: &Position) -> IvPoint {
        self.mark(self.track.point(i, from))
    }

    fn mark(&self, point: TrackPoint) -> IvPoint {
        let half = 0.5 * self.track.step_ev;
        let peak = self
            .peaks()
            .iter()
            .copied()
            .find(|p| (p.energy_ev - point.energy_ev).abs() <= half);
        IvPoint { point, peak }
    }
}

/// Total time of a sequence of solutions from `start`: per move the slowest axis
/// (trapezoidal profile, backlash turn-round included), plus `dwell_s` at every
/// reachable point. Unreachable points (`None`) are skipped.
pub fn estimate_s(
    rig: &Rig,
    start: Position,
    points: impl Iterator<Item = Option<Solution>>,
    dwell_s: f32,
) -> f32 {
    let dwell = if dwell_s.is_finite() && dwell_s > 0.0 {
        dwell_s
    } else {
        0.0
    };
    let mut pos = start;
    let mut total = 0.0f32;
    for s in points.flatten() {
        let mut t = rig.arm.time_to_s(pos[0], &s.arm);
        if let (Some(ax), Some(sp)) = (&rig.elevation, &s.elevation) {
            t = t.max(ax.time_to_s(pos[1], sp));
        }
        t = t.max(rig.tilt.time_to_s(pos[2], &s.tilt));
        t = t.max(rig.azimuth.time_to_s(pos[3], &s.azimuth));
        total += t + dwell;
        pos = s.position();
    }
    total
}

/// Total time of an arm sweep from `start_steps`, seconds (moves plus dwell).
pub fn estimate_sweep_s(plan: &SweepPlan, start_steps: i32, dwell_s: f32) -> f32 {
    let dwell = if dwell_s.is_finite() && dwell_s > 0.0 {
        dwell_s
    } else {
        0.0
    };
    let mut steps = start_steps;
    let mut total = 0.0;
    for p in plan.iter(start_steps) {
        if let Ok(sp) = p.setpoint {
            total += plan.rig.arm.time_to_s(steps, &sp) + dwell;
            steps = sp.steps;
        }
    }
    total
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::lattice::{Cell, Structure};

    fn cu100() -> Face {
        Face::new(
            &Cell::new(Structure::Fcc, 3.615, 0.0, 0.0).unwrap(),
            [1, 0, 0],
        )
        .unwrap()
    }

    #[test]
    fn track_goes_on_past_unreachable_points() {
        let plan = TrackPlan::new(
            Rig::bench_default(),
            cu100(),
            [1, 0],
            Gun::plain(0.0),
            20.0,
            300.0,
            20.0,
            10.0,
            Mode::InPlane,
            Branch::Nearest,
        )
        .unwrap();
        // Start with the arm at +30°, on the far side of the gun's shadow from the −1
        // branch, so the track follows the +1 branch.
        let start = [(30.0 * plan.rig.arm.steps_per_deg) as i32, 0, 0, 0];
        // Which points fail, in f64 (surface rules, in-plane): the +1 branch exists where
        // sin α + λ(E)·|g| ≤ 1, λ = hc/√(E(E + 2mc²)) (CODATA 2018), |g| = √2/a, and then
        // δ = α + θ > 12° clears the gun zone; the −1 branch lies beyond the zone from
        // +30° (its path would cross it). So only 20 eV fails: sin 10° + 1.0728 > 1.
        let g = libm::sqrt(2.0) / 3.615;
        let exists = |e: f64| {
            let lambda = 12_398.419_843_320 / libm::sqrt(e * (e + 2.0 * 510_998.95));
            libm::sin(10f64.to_radians()) + lambda * g <= 1.0
        };
        let mut n = 0;
        for p in plan.iter(start) {
            n += 1;
            let e = p.energy_ev as f64;
            assert_eq!(p.result.is_ok(), exists(e), "{e} eV: {:?}", p.result);
            if let Ok(s) = p.result {
                assert_eq!(s.branch, 1, "{e} eV: {s:?}");
                assert!(s.arm.angle_deg > 12.0, "{e} eV: {s:?}");
            }
        }
        // Past the failed first point the track goes on to the end.
        assert_eq!(n, plan.len());
        assert_eq!(n, 15);
        assert!(!exists(20.0) && exists(40.0));
    }

    #[test]
    fn estimate_adds_dwell() {
        let rig = Rig::bench_default();
        let plan = TrackPlan::new(
            rig,
            cu100(),
            [0, 0],
            Gun::plain(0.0),
            50.0,
            100.0,
            10.0,
            20.0,
            Mode::InPlane,
            Branch::Nearest,
        )
        .unwrap();
        let t0 = estimate_s(&rig, [0; 4], plan.iter([0; 4]).map(|p| p.result.ok()), 0.0);
        let t1 = estimate_s(&rig, [0; 4], plan.iter([0; 4]).map(|p| p.result.ok()), 2.0);
        assert!((t1 - t0 - 2.0 * plan.len() as f32).abs() < 1e-3);
        assert!(t0 > 0.0);
    }

    #[test]
    fn iv_plan_marks_peaks() {
        let plan = TrackPlan::new(
            Rig::bench_default(),
            cu100(),
            [0, 0],
            Gun::plain(0.0),
            30.0,
            400.0,
            1.0,
            15.0,
            Mode::InPlane,
            Branch::Nearest,
        )
        .unwrap();
        let iv = IvPlan::new(plan, 10.0, [0; 4]).unwrap();
        // Specular Cu(100) at tilt 15°, V0 = 10 eV: 30–400 eV holds several orders.
        assert!(iv.peaks().len() >= 3);
        // Exactly the points within half a step (0.5 eV) of a predicted peak are
        // marked, each with that peak; on a 1 eV grid that is one or two per peak.
        let mut marked = 0;
        for p in iv.iter([0; 4]) {
            let near: Option<&IvPeak> = iv
                .peaks()
                .iter()
                .find(|k| (k.energy_ev - p.point.energy_ev).abs() <= 0.5);
            assert_eq!(p.peak.as_ref(), near, "{} eV", p.point.energy_ev);
            marked += usize::from(p.peak.is_some());
        }
        assert!(marked >= iv.peaks().len() && marked <= 2 * iv.peaks().len());
        // And not every point is marked.
        assert!(
            marked < plan.len() as usize / 10,
            "{marked} of {}",
            plan.len()
        );
    }
}
