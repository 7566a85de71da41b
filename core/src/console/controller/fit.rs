//! `pt` and `fit`: the point buffer and the calibration and peak fits over it.

use embedded_io::Write;

use super::args::{opt_int, opt_num, req_num, req_word};
use super::fault::{check_used, Accepted, Fault, Result};
use super::{Console, Point, Rw, Stream, MAX_POINTS};
use crate::console::board::{AxisDriver, Detector, Interlock};
use crate::console::wire::token::Args;
use crate::error::Error;
use crate::fit::{self, Sample};

impl<A: AxisDriver, D: Detector, I: Interlock> Console<A, D, I> {
    pub(super) fn cmd_pt<W: Write>(
        &mut self,
        a: &mut Args<'_>,
        rw: &mut Rw<'_, W>,
    ) -> Result<Option<Stream>> {
        if a.positional(0) == Some("clear") {
            check_used(a)?;
            self.points.clear();
            rw.ok().field_i32("points", 0);
            return Ok(None);
        }
        let x = req_num(a, "x")?;
        let y = req_num(a, "y")?;
        let n = opt_int(a, "n")?.unwrap_or(0);
        check_used(a)?;
        self.points
            .push(Point { x, y, n })
            .map_err(|_| Fault::from(Error::BufferFull))?;
        rw.ok().field_i32("points", self.points.len() as i32);
        Ok(None)
    }

    pub(super) fn cmd_fit<W: Write>(
        &mut self,
        a: &mut Args<'_>,
        rw: &mut Rw<'_, W>,
    ) -> Result<Option<Stream>> {
        let kind = req_word(a, "kind")?;
        let threshold = opt_num(a, "threshold")?;
        check_used(a)?;
        let no_threshold = || {
            Fault::from(Error::UnknownArgument)
                .on_key("threshold")
                .because("only kind=centroid takes threshold=")
        };
        let pts: &[Point] = &self.points;
        match kind {
            "peak" | "centroid" => {
                let mut samples = [Sample {
                    angle_deg: 0.0,
                    current: 0.0,
                }; MAX_POINTS];
                for (s, p) in samples.iter_mut().zip(pts) {
                    *s = Sample {
                        angle_deg: p.x,
                        current: p.y,
                    };
                }
                let smp = samples.get(..pts.len()).unwrap_or(&[]);
                let (c, background) = if kind == "peak" {
                    if threshold.is_some() {
                        return Err(no_threshold());
                    }
                    (fit::parabola_log(smp)?, None)
                } else {
                    // The one background rule of the core, as `mwctl calc fit` uses it.
                    let t = match threshold {
                        Some(t) => t,
                        None => fit::centroid_background(smp)?,
                    };
                    (fit::centroid(smp, t)?, Some(t))
                };
                rw.ok()
                    .field_f32_rt("angle", c.angle_deg)
                    .field_f32_rt("sigma", c.uncertainty_deg)
                    .field_f32_rt("peak", c.peak_current)
                    .field_f32_rt("fwhm", c.fwhm_deg)
                    .field_i32("used", c.points_used as i32);
                // The background subtracted: the threshold, or none for the parabola,
                // which fits ln(current) as measured.
                match background {
                    Some(t) => rw.field_f32_rt("background", t),
                    None => rw.field_str("background", "none"),
                };
            }
            "armzero" => {
                if threshold.is_some() {
                    return Err(no_threshold());
                }
                let s = &self.settings;
                let mut xy = [(0.0f32, 0.0f32); MAX_POINTS];
                for (d, p) in xy.iter_mut().zip(pts) {
                    *d = (p.x, p.y);
                }
                // The same model as `mwctl calc fit arm-zero`: in-plane arm angle of the
                // current beam, contact potential from the gun's work functions.
                let contact = s.gun.cathode_work_function_ev - s.gun.sample_work_function_ev;
                let (grid, rod) = s.beam_grid(&s.beam)?;
                let f = fit::arm_zero_in_plane(
                    &grid,
                    rod,
                    s.tilt_deg,
                    contact,
                    xy.get(..pts.len()).unwrap_or(&[]),
                )?;
                rw.ok()
                    .field_f32_rt("arm_zero", f.fit.params[0])
                    .field_f32_rt("arm_zero_sigma", f.fit.sigma[0])
                    .field_f32_rt("offset", f.fit.params[1])
                    .field_f32_rt("offset_sigma", f.fit.sigma[1])
                    .field_f32_rt("rms", f.fit.rms_residual)
                    .field_i32("used", f.fit.points as i32)
                    .field_i32("branch", f.branch as i32);
            }
            "rows" => {
                if threshold.is_some() {
                    return Err(no_threshold());
                }
                let mut v = [(0.0f32, 0i32, 0.0f32); MAX_POINTS];
                for (d, p) in v.iter_mut().zip(pts) {
                    *d = (p.x, p.n, p.y);
                }
                let f = fit::row_spacing(v.get(..pts.len()).unwrap_or(&[]))?;
                rw.ok()
                    .field_f32_rt("row_spacing", f.value)
                    .field_f32_rt("sigma", f.sigma)
                    .field_f32_rt("rms", f.rms_residual)
                    .field_i32("used", f.points as i32);
            }
            "iv" => {
                if threshold.is_some() {
                    return Err(no_threshold());
                }
                let mut v = [(0i32, 0.0f32); MAX_POINTS];
                for (d, p) in v.iter_mut().zip(pts) {
                    *d = (p.n, p.x);
                }
                let f = fit::inner_potential_and_spacing(v.get(..pts.len()).unwrap_or(&[]))?;
                rw.ok()
                    .field_f32_rt("v0", f.inner_potential_ev)
                    .field_f32_rt("v0_sigma", f.inner_potential_sigma_ev)
                    .field_f32_rt("layer_spacing", f.layer_spacing_a)
                    .field_f32_rt("layer_spacing_sigma", f.layer_spacing_sigma_a)
                    .field_f32_rt("rms", f.rms_residual_ev)
                    .field_i32("used", f.points as i32);
            }
            _ => {
                return Err(Fault::from(Error::BadValue)
                    .at("kind", kind)
                    .because("no such fit")
                    .accepting(Accepted::usage_of("fit")))
            }
        }
        Ok(None)
    }
}
