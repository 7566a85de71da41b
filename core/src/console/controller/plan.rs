//! `aim` and `plan`: aiming solutions and scan plans, and the stepping of a running
//! plan's points.

use embedded_io::Write;

use super::args::{keyed, parse_branch, parse_num, req_num, req_word, write_point_error};
use super::fault::{check_used, Accepted, Fault, Result};
use super::{Console, Rw, Stream, ANGLE_DECIMALS, ENERGY_DECIMALS, MAX_SOLUTIONS};
use crate::console::board::{AxisDriver, Detector, Interlock};
use crate::console::wire::token::Args;
use crate::error::Error;
use crate::goniometer::{self, AimRequest, Branch, Position, Rig, Solution};
use crate::scan::{self, IvPlan, SweepPlan, TrackPlan};
use crate::surface::{Face, FracRod, Incidence};

// No heap to box into: the one running plan lives in place.
#[allow(clippy::large_enum_variant)]
#[derive(Clone, Copy)]
pub(super) enum Plan {
    Track(TrackPlan),
    Iv(IvPlan),
    Sweep(SweepPlan),
}

/// A running plan: the plan, the next point, where the axes will be, and the totals
/// so far.
#[derive(Clone, Copy)]
pub(super) struct PlanRun {
    plan: Plan,
    i: u32,
    pos: Position,
    reachable: u32,
    time_s: f32,
    dwell_s: f32,
}

impl<A: AxisDriver, D: Detector, I: Interlock> Console<A, D, I> {
    pub(super) fn cmd_aim(&mut self, a: &mut Args<'_>) -> Result<Option<Stream>> {
        // Any `aim` that fails leaves no stale solutions behind for `move sol=`.
        self.solutions.clear();
        self.refusals.clear();
        let beam = keyed(a, "beam", |v| {
            let b = FracRod::parse(v)?;
            self.settings.check_beam(&b)?;
            Ok(b)
        })?
        .unwrap_or(self.settings.beam);
        let branch = keyed(a, "branch", parse_branch)?.unwrap_or(self.settings.branch);
        check_used(a)?;
        let e = self.settings.gun.kinetic_energy_ev()?;
        let pos = self.position();
        match beam.integer() {
            Some(rod) => self.aim_on(None, rod, e, branch, &pos),
            None => self.aim_fractional(&beam, e, branch, &pos),
        }
    }

    /// `aim` at a fractional beam: on the face's [`Face::fractional_grid`], whose whole
    /// rod `beam.num` it is. Out of line, so that the grid's copy of the face deepens
    /// only these requests' frames.
    #[inline(never)]
    fn aim_fractional(
        &mut self,
        beam: &FracRod,
        energy_ev: f32,
        branch: Branch,
        pos: &Position,
    ) -> Result<Option<Stream>> {
        let grid = self.settings.face.fractional_grid(beam.den)?;
        self.aim_on(Some(&grid), beam.num, energy_ev, branch, pos)
    }

    /// Aims at rod `rod` of `grid` (the settings' face when `None`) and keeps the
    /// solutions, or the refusals.
    fn aim_on(
        &mut self,
        grid: Option<&Face>,
        rod: [i32; 2],
        energy_ev: f32,
        branch: Branch,
        pos: &Position,
    ) -> Result<Option<Stream>> {
        let s = &self.settings;
        let face = grid.unwrap_or(&s.face);
        let req = AimRequest::new(face, rod, energy_ev, s.tilt_deg)
            .with_mode(s.mode())
            .with_branch(branch);
        let mut out = [Solution::EMPTY; MAX_SOLUTIONS];
        let l = match goniometer::aim_checked(&s.rig, &req, pos, &mut out) {
            Ok(l) => l,
            Err(e)
                if e == Error::Evanescent
                    || e.axis().is_some()
                    || e == Error::NoReachableSolution =>
            {
                // Say everything that stands in the way, then the error.
                let r = goniometer::refusals_checked(&s.rig, &req, pos)?;
                self.refusals = r;
                self.errors = self.errors.saturating_add(1);
                return Ok(Some(Stream::Refused(0)));
            }
            Err(e) => return Err(e.into()),
        };
        for sol in out.iter().take(l.stored) {
            // Cannot fail: `out` has the vector's capacity.
            let _ = self.solutions.push(*sol);
        }
        Ok(Some(Stream::Aim(0)))
    }

    pub(super) fn cmd_plan(&mut self, a: &mut Args<'_>) -> Result<Option<Stream>> {
        let kind = req_word(a, "kind")?;
        let from = req_num(a, "from")?;
        let to = req_num(a, "to")?;
        let step = req_num(a, "step")?;
        let dwell = keyed(a, "dwell", |v| {
            let s = parse_num(v)?;
            if (0.0..=3600.0).contains(&s) {
                Ok(s)
            } else {
                Err(Fault::from(Error::BadNumber).because("dwell accepted 0 to 3600 s"))
            }
        })?
        .unwrap_or(0.0);
        let branch = keyed(a, "branch", parse_branch)?.unwrap_or(self.settings.branch);
        check_used(a)?;
        let pos = self.position();
        let s = &self.settings;
        let plan = match kind {
            "track" | "iv" => {
                if kind == "iv" {
                    // The kinematic I-V maxima are those of the bulk's integer rods.
                    s.integer_beam()?;
                }
                let mut t = TrackPlan::new(
                    *s.rig,
                    s.face,
                    s.beam.integer().unwrap_or(s.beam.num),
                    s.gun,
                    from,
                    to,
                    step,
                    s.tilt_deg,
                    s.mode(),
                    branch,
                )?;
                // A fractional beam is the whole rod `num` of the face's fractional
                // grid (made in place: no second face in this frame).
                if s.beam.integer().is_none() {
                    t.face.make_fractional_grid(s.beam.den)?;
                }
                if kind == "iv" {
                    Plan::Iv(IvPlan::with_model(t, &s.v0()?, &s.relax, pos)?)
                } else {
                    Plan::Track(t)
                }
            }
            "sweep" => {
                let e = s.gun.kinetic_energy_ev()?;
                let ang = s.rig.angles(&pos);
                let inc = Incidence::new(e, s.tilt_deg, s.azimuth_deg.unwrap_or(ang[3]))?;
                let mut p = SweepPlan::new(*s.rig, s.face, inc, ang[1], from, to, step)?;
                // Set in place: a second plan in this frame would deepen every plan.
                p.overlayer = s.overlayer_model();
                Plan::Sweep(p)
            }
            _ => {
                return Err(Fault::from(Error::BadValue)
                    .at("kind", kind)
                    .because("no such plan")
                    .accepting(Accepted::usage_of("plan")))
            }
        };
        Ok(Some(Stream::Plan(PlanRun {
            plan,
            i: 0,
            pos,
            reachable: 0,
            time_s: 0.0,
            dwell_s: dwell,
        })))
    }
}

impl PlanRun {
    /// Writes point `i` (or the final line) into `rw`, updating the totals; false when
    /// that line is the final one.
    pub(super) fn step<W: Write>(&mut self, rig: &Rig, rw: &mut Rw<'_, W>) -> bool {
        let total = match &self.plan {
            Plan::Track(t) => t.len(),
            Plan::Iv(p) => p.track.len(),
            Plan::Sweep(p) => p.len(),
        };
        if self.i >= total {
            rw.ok()
                .field_i32("points", total as i32)
                .field_i32("reachable", self.reachable as i32)
                .field_f32("estimate_s", self.time_s, 1);
            return false;
        }
        rw.item().field_i32("i", self.i as i32);

        match &self.plan {
            Plan::Track(_) | Plan::Iv(_) => {
                let (point, peak) = match &self.plan {
                    Plan::Iv(p) => {
                        let q = p.point(self.i, &self.pos);
                        (q.point, q.peak.zip(q.peak_nominal_ev()))
                    }
                    Plan::Track(t) => (t.point(self.i, &self.pos), None),
                    Plan::Sweep(_) => return false,
                };
                rw.field_f32("nominal", point.nominal_ev, ENERGY_DECIMALS);
                match point.result {
                    Ok(s) => {
                        rw.field_f32("arm", s.arm.angle_deg, ANGLE_DECIMALS)
                            .field_f32("elevation", s.elevation_deg(), ANGLE_DECIMALS)
                            .field_f32("azimuth", s.azimuth.angle_deg, ANGLE_DECIMALS)
                            .field_i32("arm_steps", s.arm.steps);
                        self.time_s += scan::estimate_s(
                            rig,
                            self.pos,
                            core::iter::once(Some(s)),
                            self.dwell_s,
                        );
                        self.pos = s.position();
                        self.reachable += 1;
                    }
                    Err(e) => {
                        write_point_error(rw, e);
                    }
                }
                if let Some((p, nominal)) = peak {
                    // In the line's own frame (the gun setting), and at the sample.
                    rw.field_f32("peak", nominal, ENERGY_DECIMALS).field_f32(
                        "peak_sample",
                        p.energy_ev,
                        ENERGY_DECIMALS,
                    );
                }
            }
            Plan::Sweep(p) => {
                let point = p.point(self.i, self.pos[0]);
                rw.field_f32("arm", point.arm_deg, ANGLE_DECIMALS);
                match point.setpoint {
                    Ok(sp) => {
                        rw.field_i32("arm_steps", sp.steps);
                        self.time_s += rig.arm.time_to_s(self.pos[0], &sp) + self.dwell_s;
                        self.pos[0] = sp.steps;
                        self.reachable += 1;
                    }
                    Err(e) => write_point_error(rw, e),
                }
                // With an overlayer, the nearer of the substrate's and the overlayer's
                // beams in view (the overlayer's on a tie: its label says more).
                let sup = point
                    .super_in_view
                    .filter(|sv| point.in_view.is_none_or(|v| sv.offset_deg <= v.offset_deg));
                if let Some(sv) = sup {
                    super::args::write_frac(rw, "h", &sv.beam.pos, 0);
                    super::args::write_frac(rw, "k", &sv.beam.pos, 1);
                    rw.field_f32("offset", sv.offset_deg, ANGLE_DECIMALS);
                } else if let Some(v) = point.in_view {
                    rw.field_i32("h", v.beam.rod[0])
                        .field_i32("k", v.beam.rod[1])
                        .field_f32("offset", v.offset_deg, ANGLE_DECIMALS);
                }
            }
        }
        self.i += 1;
        true
    }
}
