//! Motion: `move`, `stop`, `pos`, `enable`, `disable`, `home` (where an axis stands),
//! and `read` (the detector at the current pose).

use embedded_io::Write;

use super::args::{axis_id, keyed, missing, opt_int, opt_num};
use super::axes::axis_of;
use super::fault::{check_used, Accepted, Fault, Result};
use super::{Console, Rw, Stream};
use crate::axis::Setpoint;
use crate::console::board::{AxisDriver, Detector, Interlock, Scene, Trip};
use crate::console::wire::token::Args;
use crate::error::{AxisId, Error};
use crate::goniometer::axis_index;
use crate::surface::Incidence;

/// Where `move` sends one axis.
#[derive(Clone, Copy)]
enum Goal {
    /// An angle, degrees (`move arm=…`).
    Angle(f32),
    /// The step count of a stored solution's setpoint (`move sol=N`).
    Steps(Setpoint),
}

impl<A: AxisDriver, D: Detector, I: Interlock> Console<A, D, I> {
    pub(super) fn cmd_move<W: Write>(
        &mut self,
        a: &mut Args<'_>,
        rw: &mut Rw<'_, W>,
    ) -> Result<Option<Stream>> {
        let sol = opt_int(a, "sol")?;
        let targets = [
            (AxisId::Arm, opt_num(a, "arm")?),
            (AxisId::Elevation, opt_num(a, "elevation")?),
            (AxisId::Tilt, opt_num(a, "tilt")?),
            (AxisId::Azimuth, opt_num(a, "azimuth")?),
        ];
        check_used(a)?;
        let raw = targets.iter().any(|t| t.1.is_some());
        let mut goal: [Option<Goal>; 4] = [None; 4];
        match (sol, raw) {
            (Some(_), true) => {
                return Err(Fault::from(Error::UnknownArgument)
                    .on_key("sol")
                    .because("give sol= or axis angles, not both"))
            }
            (None, false) => {
                return Err(Fault::from(Error::MissingArgument)
                    .because("give sol= or at least one axis angle")
                    .accepting(Accepted::usage_of("move")))
            }
            (Some(n), false) => {
                let s = usize::try_from(n)
                    .ok()
                    .and_then(|i| self.solutions.get(i))
                    .ok_or(Error::NoSuchSolution)?;
                // The step counts `aim` listed (the ones `mwctl calc aim` lists for
                // the same request), not their angles again: on a wrapping axis an
                // angle half a turn away could name the other copy.
                goal = [
                    Some(Goal::Steps(s.arm)),
                    s.elevation.map(Goal::Steps),
                    Some(Goal::Steps(s.tilt)),
                    Some(Goal::Steps(s.azimuth)),
                ];
            }
            (None, true) => {
                for (id, v) in targets {
                    if let Some(g) = goal.get_mut(axis_index(id)) {
                        *g = v.map(Goal::Angle);
                    }
                }
            }
        }
        if !self.enabled {
            let safe = self.interlock.safe();
            let f = Fault::from(Error::NotEnabled);
            return Err(match self.trip {
                Some(Trip::Interlock) if !safe => Fault::from(Error::InterlockOpen)
                    .because("motion was stopped when it opened; enable once it is safe"),
                Some(Trip::Interlock) => f.because("motion was stopped: the interlock opened"),
                Some(Trip::Axis(_)) => f.because(
                    "motion was stopped by an axis fault (see status); home that axis, then enable",
                ),
                None => f,
            });
        }
        if !self.interlock.safe() {
            return Err(Error::InterlockOpen.into());
        }
        // One move at a time: a new target while an axis still runs would start from a
        // position that is not where the axis will be.
        if self.axes.busy() {
            return Err(Error::AxisMoving.into());
        }
        // No axis moves from a position the console does not know.
        for (id, want) in AxisId::ALL.into_iter().zip(goal) {
            if want.is_some() && !self.position_known(id) {
                return Err(Error::PositionUnknown(id).into());
            }
        }
        // Every setpoint is computed (limits, zones, path from where the axis is now)
        // before any axis moves.
        let pos = self.position();
        let mut sps = [None; 4];
        for ((id, want), (sp, &from)) in AxisId::ALL
            .into_iter()
            .zip(goal)
            .zip(sps.iter_mut().zip(pos.iter()))
        {
            let rig = &self.settings.rig;
            *sp = match want {
                Some(Goal::Angle(angle)) => Some(rig.setpoint(id, angle, from)?),
                Some(Goal::Steps(stored)) => Some(rig.setpoint_to_steps(id, &stored, from)?),
                None => None,
            };
        }
        rw.ok();
        for (id, sp) in AxisId::ALL.into_iter().zip(sps) {
            if let Some(sp) = sp {
                self.axes.start(id, sp.approach_steps, sp.steps);
                let (steps, residual) = match id {
                    AxisId::Arm => ("arm_steps", "arm_residual"),
                    AxisId::Elevation => ("elevation_steps", "elevation_residual"),
                    AxisId::Tilt => ("tilt_steps", "tilt_residual"),
                    AxisId::Azimuth => ("azimuth_steps", "azimuth_residual"),
                };
                rw.field_i32(steps, sp.steps)
                    .field_f32_rt(residual, sp.residual_deg);
            }
        }
        Ok(None)
    }
    /// Ends a reply with `unknown=` and the fitted axes whose position the console
    /// does not know (nothing when it knows them all): their angles are only the
    /// counters read in the calibration now in force.
    pub(super) fn write_unknown<W: Write>(&self, rw: &mut Rw<'_, W>) {
        let mut names = [0u8; 32];
        let mut n = 0;
        for id in AxisId::ALL {
            let fitted = axis_of(&self.settings.rig, id).is_some();
            if fitted && !self.position_known(id) {
                let sep: &[u8] = if n == 0 { b"" } else { b"," };
                for &b in sep.iter().chain(id.name().as_bytes()) {
                    if let Some(slot) = names.get_mut(n) {
                        *slot = b;
                        n += 1;
                    }
                }
            }
        }
        if let Some(list) = names.get(..n).and_then(|b| core::str::from_utf8(b).ok()) {
            if !list.is_empty() {
                rw.field_str("unknown", list);
            }
        }
    }

    /// Adds `trip=` (and `trip_axis=` for an axis fault) when the console stopped
    /// motion on its own since the last `enable`.
    pub(super) fn write_trip<W: Write>(&self, rw: &mut Rw<'_, W>) {
        if let Some(t) = self.trip {
            rw.field_str("trip", t.name());
            if let Trip::Axis(f) = t {
                rw.field_str("trip_axis", f.axis.name());
            }
        }
    }

    pub(super) fn cmd_stop<W: Write>(&mut self, rw: &mut Rw<'_, W>) -> Result<Option<Stream>> {
        self.axes.stop();
        // `stop` latches: no motion until a new `enable`.
        self.enabled = false;
        rw.ok().field_str("stopped", "motion");
        Ok(None)
    }

    pub(super) fn cmd_pos<W: Write>(&mut self, rw: &mut Rw<'_, W>) -> Result<Option<Stream>> {
        let p = self.position();
        let ang = self.settings.rig.angles(&p);
        rw.ok()
            .field_f32_rt("arm", ang[0])
            .field_f32_rt("elevation", ang[1])
            .field_f32_rt("tilt", ang[2])
            .field_f32_rt("azimuth", ang[3])
            .field_i32("arm_steps", p[0])
            .field_i32("elevation_steps", p[1])
            .field_i32("tilt_steps", p[2])
            .field_i32("azimuth_steps", p[3]);
        self.write_unknown(rw);
        Ok(None)
    }

    /// `home name=A [at=DEG]`: declares that axis A stands at DEG (default: at home,
    /// step 0) — the board's counter is set, nothing moves — and marks its position
    /// known. Needs motion disabled and every axis at rest; DEG must lie within the soft
    /// limits (unless the axis wraps) and the step counter's reach.
    pub(super) fn cmd_home<W: Write>(
        &mut self,
        a: &mut Args<'_>,
        rw: &mut Rw<'_, W>,
    ) -> Result<Option<Stream>> {
        let id = keyed(a, "name", axis_id)?.ok_or_else(|| missing(a, "name"))?;
        let at = opt_num(a, "at")?;
        check_used(a)?;
        let cfg = *axis_of(&self.settings.rig, id).ok_or(Error::NoSuchAxis(id))?;
        let steps = match at {
            Some(deg) => cfg.position_steps(deg)?,
            None => 0,
        };
        self.require_at_rest()?;
        self.axes.set_position(id, steps);
        if let Some(k) = self.known.get_mut(axis_index(id)) {
            *k = true;
        }
        // Solutions were computed from the old counter.
        self.solutions.clear();
        rw.ok()
            .field_str("name", id.name())
            .field_f32_rt("at", cfg.steps_to_deg(steps))
            .field_i32("steps", steps);
        Ok(None)
    }

    pub(super) fn cmd_enable<W: Write>(&mut self, rw: &mut Rw<'_, W>) -> Result<Option<Stream>> {
        if !self.interlock.safe() {
            return Err(Error::InterlockOpen.into());
        }
        self.enabled = true;
        rw.ok().field_i32("enabled", 1);
        // The operator has seen to what stopped the motion: the trip is cleared (and
        // named once more here).
        if let Some(t) = self.trip.take() {
            rw.field_str("cleared", t.name());
        }
        Ok(None)
    }

    pub(super) fn cmd_disable<W: Write>(&mut self, rw: &mut Rw<'_, W>) -> Result<Option<Stream>> {
        self.axes.stop();
        self.enabled = false;
        rw.ok().field_i32("enabled", 0);
        Ok(None)
    }

    pub(super) fn cmd_read<W: Write>(&mut self, rw: &mut Rw<'_, W>) -> Result<Option<Stream>> {
        let p = self.position();
        let ang = self.settings.rig.angles(&p);
        let s = &self.settings;
        let e = s.gun.kinetic_energy_ev()?;
        let inc = Incidence::new(e, ang[2], ang[3])?;
        let scene = Scene {
            face: &s.face,
            incidence: inc,
            arm_deg: ang[0],
            elevation_deg: ang[1],
            rig: &s.rig,
            inner_potential: s.v0()?,
            energy_offset_ev: s.gun.offset_ev,
            overlayer: s.overlayer_model(),
        };
        let v = self.detector.read(&scene);
        if !v.is_finite() {
            return Err(Error::NotFinite(crate::error::Quantity::Count).into());
        }
        rw.ok().field_f32_rt("current", v);
        Ok(None)
    }
}
