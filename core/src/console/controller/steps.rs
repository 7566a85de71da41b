//! `steps`: a stepped (vicinal) face at the current settings — how the current beam
//! splits at the current energy (the two sub-beams nearest the terrace beam, with the
//! arm angles that look along them) and the specular beam's in- and out-of-phase
//! energies over a range: the core's `surface::steps`, as `mwctl calc steps` gives it.

use embedded_io::Write;

use super::args::{keyed, opt_num, parse_num};
use super::fault::{check_used, Accepted, Fault, Result};
use super::{Console, Rw, Stream, ANGLE_DECIMALS, ENERGY_DECIMALS};
use crate::console::board::{AxisDriver, Detector, Interlock};
use crate::console::wire::token::Args;
use crate::error::{Error, Quantity};
use crate::surface::steps::{check_height, Split, StepPhaseRange, Steps};
use crate::surface::Incidence;

/// Default energy range of the phase list, eV at the sample (as `mwctl calc steps`).
pub const PHASES_DEFAULT_EV: (f32, f32) = (5.0, 500.0);

/// A running `steps` reply: the split, the phase range, and the next line.
#[derive(Clone, Copy, Debug)]
pub(super) struct StepsRun {
    steps: Steps,
    split: Split,
    range: StepPhaseRange,
    /// Lines written so far: the two sub-beams, then the half-cycles from the first.
    line: u32,
    /// Phase items written.
    phases: u32,
}

impl<A: AxisDriver, D: Detector, I: Interlock> Console<A, D, I> {
    /// `steps miscut=DEG|terrace=A [height=A] [direction=DEG] [from=EV] [to=EV]`.
    pub(super) fn cmd_steps(&mut self, a: &mut Args<'_>) -> Result<Option<Stream>> {
        let miscut = opt_num(a, "miscut")?;
        let terrace = opt_num(a, "terrace")?;
        let height = opt_num(a, "height")?;
        let direction = opt_num(a, "direction")?.unwrap_or(0.0);
        let from = keyed(a, "from", parse_num)?.unwrap_or(PHASES_DEFAULT_EV.0);
        let to = keyed(a, "to", parse_num)?.unwrap_or(PHASES_DEFAULT_EV.1);
        check_used(a)?;
        let s = &self.settings;
        let rod = s.integer_beam()?;
        let h = match height {
            Some(h) => check_height(h).map_err(|e| {
                Fault::from(e)
                    .on_key("height")
                    .because("step height accepted above 0 up to 100 A")
            })?,
            None => s.face.monatomic_step_a(),
        };
        let steps = match (miscut, terrace) {
            (Some(m), None) => Steps::from_miscut(m, direction, h),
            (None, Some(l)) => Steps::new(l, h, direction),
            (Some(_), Some(_)) => {
                return Err(Fault::from(Error::UnknownArgument)
                    .on_key("terrace")
                    .because("give miscut= or terrace=, not both")
                    .accepting(Accepted::usage_of("steps")))
            }
            (None, None) => {
                return Err(Fault::from(Error::MissingArgument)
                    .on_key("miscut")
                    .because("give miscut= (deg) or terrace= (A)")
                    .accepting(Accepted::usage_of("steps")))
            }
        }
        .map_err(|e| {
            let (key, accepted) = match (e.quantity(), miscut) {
                (Some(Quantity::Azimuth), _) => ("direction", "a finite azimuth in degrees"),
                (_, Some(_)) => (
                    "miscut",
                    "miscut accepted above 0 up to 45 deg (terrace 0.5 to 100000 A)",
                ),
                (_, None) => ("terrace", "terrace accepted 0.5 to 100000 A"),
            };
            Fault::from(e).on_key(key).because(accepted)
        })?;
        let e = s.gun.kinetic_energy_ev()?;
        let inc = Incidence::new(e, s.tilt_deg, s.azimuth_deg.unwrap_or(0.0))?;
        let v0 = s.inner_potential();
        let split = s
            .face
            .split(&steps, rod, &inc, v0)
            .map_err(|e| Fault::from(e).on_key("beam"))?;
        let range = s
            .face
            .step_phase_range(&steps, &inc, v0, from, to)
            .map_err(|e| {
                let from_ok = crate::beam::check_energy(from).is_ok();
                Fault::from(e).on_key(if from_ok { "to" } else { "from" })
            })?;
        Ok(Some(Stream::Steps(StepsRun {
            steps,
            split,
            range,
            line: 0,
            phases: 0,
        })))
    }
}

impl StepsRun {
    /// Writes the next line into `rw`; false when that line is the final one.
    pub(super) fn step<W: Write>(&mut self, rw: &mut Rw<'_, W>) -> bool {
        // The two sub-beams first (an evanescent one is left out).
        while self.line < 2 {
            let i = self.line as usize;
            self.line += 1;
            if let Some(Some(b)) = self.split.beams.get(i) {
                rw.item()
                    .word("sub")
                    .field_i32("j", b.index)
                    .field_f32_rt("offset", b.offset_inv_a)
                    .field_f32("exit", b.exit_deg, ANGLE_DECIMALS)
                    .field_f32("exit_azimuth", b.exit_azimuth_deg, ANGLE_DECIMALS)
                    .field_f32("arm", b.arm_deg, ANGLE_DECIMALS)
                    .field_f32("elevation", b.elevation_deg, ANGLE_DECIMALS)
                    .field_f32("weight", b.weight, 4);
                return true;
            }
        }
        // Then the phases, one half-cycle per line (those outside the range skipped:
        // only the first and the last can be).
        loop {
            let half = self.range.first_half.saturating_add((self.line - 2) as i32);
            if half > self.range.last_half {
                break;
            }
            self.line += 1;
            if let Some(p) = self.range.phase(half) {
                rw.item()
                    .word("phase")
                    .field_f32("energy", p.energy_ev, ENERGY_DECIMALS)
                    .field_f32_rt("cycles", p.phase_cycles)
                    .field_i32("in_phase", p.in_phase as i32);
                self.phases += 1;
                return true;
            }
        }
        rw.ok()
            .field_f32_rt("terrace", self.steps.terrace_a)
            .field_f32_rt("height", self.steps.height_a)
            .field_f32_rt("miscut", self.steps.miscut_deg())
            .field_f32_rt("direction", self.steps.azimuth_deg)
            .field_f32_rt("phase", self.split.phase_cycles)
            .field_f32_rt("splitting", self.split.splitting_inv_a);
        if let Some(d) = self.split.angle_deg() {
            rw.field_f32_rt("splitting_deg", d);
        }
        rw.field_i32("phases", self.phases as i32);
        false
    }
}
