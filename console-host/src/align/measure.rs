//! The measurement of `mwctl align` on the device: the settings it starts from, the
//! beams and energies it chooses (the device's `beams` and `plan kind=iv`), each beam
//! put on the detector with the device's `aim`, found by a coarse arm sweep and centred
//! by a fine one (the core's `fit::parabola_log`), and the core's arm-zero fit over
//! them all (`fit::arm_zero_in_plane_beams`). No geometry here: where a beam should be
//! comes from the device, what the offsets are from the core.

use super::{AlignOptions, Alignment, Measured, Missed};
use crate::error::{CliError, CliResult, Context};
use crate::link::session::{reply_field, Reply, Session};
use crate::link::wire::Wire;
use matterwave_core::fit::{self, BeamArm, Sample};
use matterwave_core::lattice::{parse_miller, System};
use matterwave_core::surface::Face;
use matterwave_core::table;
use std::time::{Duration, Instant};

/// Sends `line` and returns the reply; an `err` reply is an error naming the request.
pub(super) fn ok<W: Wire>(s: &mut Session<W>, line: &str) -> CliResult<Reply> {
    crate::link::request_ok(s, "align", line)
}

/// Sends `line` and returns the reply, `ok` or `err`.
pub(super) fn try_req<W: Wire>(s: &mut Session<W>, line: &str) -> CliResult<Reply> {
    s.request(line)
        .map_err(|e| CliError::new(format!("align: `{line}`: {e}")))
}

/// A number field of a reply line, or an error naming it.
pub(super) fn num(line: &str, key: &str) -> CliResult<f32> {
    reply_field(line, key)
        .and_then(|v| v.parse::<f32>().ok())
        .ok_or_else(|| {
            CliError::new(format!(
                "align: the controller's reply {line:?} has no number {key}="
            ))
        })
}

/// A text field of a reply line, or an error naming it.
pub(super) fn text(line: &str, key: &str) -> CliResult<String> {
    reply_field(line, key).map(str::to_string).ok_or_else(|| {
        CliError::new(format!(
            "align: the controller's reply {line:?} has no {key}="
        ))
    })
}

/// The device's settings that align reads, and restores at the end.
#[derive(Clone, Debug)]
pub(super) struct DeviceSettings {
    pub crystal: String,
    pub face_text: String,
    pub face: Face,
    pub tilt_deg: f32,
    pub energy: String,
    pub beam: String,
    pub contact_ev: f32,
    pub offset_ev: f32,
    pub acceptance_deg: f32,
}

/// Reads `get` into [`DeviceSettings`], building the face with the core.
pub(super) fn read_settings<W: Wire>(s: &mut Session<W>) -> CliResult<DeviceSettings> {
    let g = ok(s, "get")?.items_line();
    if text(&g, "azimuth")? != "free" {
        return Err(CliError::new(
            "align: the controller aims two-circle (azimuth set); align measures in-plane: send `set azimuth=free` first (mwctl talk), or give --tilt/--crystal/--face and set azimuth=free",
        ));
    }
    let crystal = text(&g, "crystal")?;
    let face_text = text(&g, "face")?;
    let c = table::find(&crystal).ctx(format!("align: crystal {crystal}"))?;
    let hex = c.structure.system() == System::Hexagonal;
    let miller = parse_miller(&face_text, hex).ctx(format!("align: face {face_text}"))?;
    let cell = c.cell().ctx(format!("align: crystal {crystal}"))?;
    let face = Face::new(&cell, miller).ctx(format!("align: face {face_text}"))?;
    Ok(DeviceSettings {
        crystal,
        face_text,
        face,
        tilt_deg: num(&g, "tilt")?,
        energy: text(&g, "energy")?,
        beam: text(&g, "beam")?,
        contact_ev: num(&g, "cathode")? - num(&g, "sample")?,
        offset_ev: num(&g, "offset")?,
        acceptance_deg: num(&g, "acceptance")?,
    })
}

/// The arm axis's home offset on the device, degrees (from its `dump`).
pub(super) fn arm_home_offset<W: Wire>(s: &mut Session<W>) -> CliResult<f32> {
    let d = ok(s, "dump")?;
    d.items
        .iter()
        .find(|l| l.contains("axis name=arm ") && l.contains("home_offset_deg="))
        .map(|l| num(l, "home_offset_deg"))
        .unwrap_or_else(|| {
            Err(CliError::new(
                "align: the controller's dump names no home_offset_deg of the arm",
            ))
        })
}

/// The beams to use: those given, else the device's beams at the top energy with
/// distinct row spacings (distinct |g|, so distinct energy dependences), the specular
/// beam left out (its angle does not depend on the energy).
fn choose_beams<W: Wire>(s: &mut Session<W>, o: &AlignOptions) -> CliResult<Vec<[i32; 2]>> {
    if let Some(b) = &o.beams {
        return Ok(b.clone());
    }
    ok(s, &format!("set energy={}", o.to_ev))?;
    let r = ok(s, "beams")?;
    let mut rows: Vec<f32> = Vec::new();
    let mut out = Vec::new();
    for l in &r.items {
        let (Ok(h), Ok(k)) = (num(l, "h"), num(l, "k")) else {
            continue;
        };
        let Ok(row) = num(l, "row") else { continue };
        if rows.iter().any(|r| (r - row).abs() < 1e-3) {
            continue;
        }
        rows.push(row);
        out.push([h as i32, k as i32]);
        if out.len() >= o.max_beams {
            break;
        }
    }
    Ok(out)
}

/// At most `n` of `v`, evenly spread over it (first and last kept).
fn spread<T: Clone>(v: &[T], n: usize) -> Vec<T> {
    if v.len() <= n || n == 0 {
        return v.to_vec();
    }
    if n == 1 {
        return v.first().cloned().into_iter().collect();
    }
    (0..n)
        .filter_map(|i| v.get(i * (v.len() - 1) / (n - 1)).cloned())
        .collect()
}

/// Waits until the device reports every axis at rest (`status` `moving=0`), at most 60 s.
fn wait_at_rest<W: Wire>(s: &mut Session<W>) -> CliResult<()> {
    let until = Instant::now() + Duration::from_secs(60);
    loop {
        let st = ok(s, "status")?.last;
        if reply_field(&st, "moving") != Some("1") {
            return Ok(());
        }
        if Instant::now() > until {
            return Err(CliError::new(
                "align: the axes still report moving=1 after 60 s; check the drives, then run align again",
            ));
        }
        std::thread::sleep(Duration::from_millis(20));
    }
}

/// Set by `mwctl align`'s Ctrl-C handler ([`super::run`]): the measurement sends
/// `stop`, disables motion, puts the energy and beam back and ends with an error.
pub(super) static INTERRUPTED: std::sync::atomic::AtomicBool =
    std::sync::atomic::AtomicBool::new(false);

/// An error once Ctrl-C was pressed (after sending `stop`).
fn check_interrupt<W: Wire>(s: &mut Session<W>) -> CliResult<()> {
    if INTERRUPTED.load(std::sync::atomic::Ordering::SeqCst) {
        let _ = try_req(s, "stop");
        return Err(CliError::new(
            "align: interrupted (Ctrl-C): stop sent, motion disabled, nothing applied; the axes stay where they stopped",
        ));
    }
    Ok(())
}

/// Moves the arm to `arm_deg` and reads the detector: (arm angle reached, reading), or
/// `None` when the controller refuses the target (a limit or a forbidden zone).
fn arm_read<W: Wire>(s: &mut Session<W>, arm_deg: f32) -> CliResult<Option<Sample>> {
    check_interrupt(s)?;
    let r = try_req(s, &format!("move arm={arm_deg:.4}"))?;
    if !r.ok() {
        let code = r.last.split_whitespace().nth(1).unwrap_or("");
        // 301–304: a soft limit or a zone; anything else stops the alignment.
        if ["301", "302", "303", "304"].contains(&code) {
            return Ok(None);
        }
        return Err(CliError::new(format!(
            "align: the controller refused `move arm={arm_deg:.4}`: {}",
            r.last
        )));
    }
    let reached = arm_deg - num(&r.last, "arm_residual").unwrap_or(0.0);
    wait_at_rest(s)?;
    let current = num(&ok(s, "read")?.last, "current")?;
    Ok(Some(Sample {
        angle_deg: reached,
        current,
    }))
}

/// Arm angles from `centre − half` to `centre + half` in `step`.
fn grid(centre: f32, half: f32, step: f32) -> Vec<f32> {
    let n = (half / step).round() as i32;
    (-n..=n).map(|i| centre + i as f32 * step).collect()
}

/// One beam on one branch at one nominal energy: aimed by the device, found and
/// centred, or why not.
fn measure_one<W: Wire>(
    s: &mut Session<W>,
    o: &AlignOptions,
    acceptance_deg: f32,
    rod: [i32; 2],
    branch: i8,
    energy: &str,
) -> CliResult<Result<Measured, String>> {
    check_interrupt(s)?;
    ok(s, &format!("set energy={energy}"))?;
    let aim = try_req(s, &format!("aim branch={branch:+}"))?;
    let Some(sol) = aim.items.first().filter(|_| aim.ok()) else {
        return Ok(Err(format!(
            "the controller cannot aim at it: {}",
            aim.last
        )));
    };
    let aimed = num(sol, "arm")?;
    let mv = try_req(s, &format!("move sol={}", text(sol, "sol")?))?;
    if !mv.ok() {
        return Ok(Err(format!(
            "the controller refused to move there: {}",
            mv.last
        )));
    }
    wait_at_rest(s)?;
    // The tilt really reached (whole steps), which is the one the beams obey.
    let tilt_deg = num(&ok(s, "pos")?.last, "tilt")?;
    // Near its emergence a beam's angle runs away with the energy: such a point says
    // little and is fitted badly. The device's own sensitivity decides.
    let slope = num(&ok(s, "budget")?.last, "d_arm_d_energy")?;
    if slope.abs() > o.max_slope_deg_per_ev {
        return Ok(Err(format!(
            "too near its emergence: its angle moves {:.3}°/eV here (the controller's budget), more than {}°/eV",
            slope.abs(),
            o.max_slope_deg_per_ev
        )));
    }
    // Coarse: the whole window in half-acceptance steps.
    let coarse_step = (acceptance_deg / 2.0).max(0.01);
    let mut coarse = Vec::new();
    for a in grid(aimed, o.window_deg, coarse_step) {
        if let Some(x) = arm_read(s, a)? {
            coarse.push(x);
        }
    }
    if coarse.len() < 3 {
        return Ok(Err(format!(
            "only {} arm angles within ±{}° of the aimed {aimed:.3}° are reachable (limits or forbidden zones)",
            coarse.len(),
            o.window_deg
        )));
    }
    let mut levels: Vec<f32> = coarse.iter().map(|x| x.current).collect();
    levels.sort_by(f32::total_cmp);
    let median = levels.get(levels.len() / 2).copied().unwrap_or(0.0);
    let Some((top_i, top)) = coarse
        .iter()
        .enumerate()
        .max_by(|a, b| a.1.current.total_cmp(&b.1.current))
        .map(|(i, x)| (i, *x))
    else {
        return Ok(Err("no reading in the search window".into()));
    };
    if !(top.current > o.contrast * median.max(0.0) && top.current > median) {
        return Ok(Err(format!(
            "no peak within ±{}° of the aimed arm {aimed:.3}°: the largest reading {:.4} is not {}× the median {:.4} (widen --window, or the beam is weak at this energy)",
            o.window_deg, top.current, o.contrast, median
        )));
    }
    if top_i == 0 || top_i + 1 == coarse.len() {
        return Ok(Err(format!(
            "the largest reading is at the edge of the search window (arm {:.3}°, aimed {aimed:.3}°): widen --window",
            top.angle_deg
        )));
    }
    // Fine: around the coarse maximum in sixth-acceptance steps.
    let fine_step = (acceptance_deg / 6.0).max(0.002);
    let mut fine = Vec::new();
    for a in grid(top.angle_deg, 4.5 * fine_step, fine_step) {
        if let Some(x) = arm_read(s, a)? {
            fine.push(x);
        }
    }
    let c = match fit::parabola_log(&fine) {
        Ok(c) => c,
        Err(e) => {
            return Ok(Err(format!(
                "the peak near arm {:.3}° could not be centred: E{}: {}",
                top.angle_deg,
                e.code(),
                e.message()
            )))
        }
    };
    Ok(Ok(Measured {
        rod,
        branch,
        nominal_ev: energy.parse().unwrap_or(f32::NAN),
        aimed_arm_deg: aimed,
        arm_deg: c.angle_deg,
        sigma_deg: c.uncertainty_deg,
        peak: c.peak_current,
        fwhm_deg: c.fwhm_deg,
        tilt_deg,
        residual_deg: f32::NAN,
    }))
}

/// The whole measurement and the fit. Leaves the device's energy and beam as they
/// were, motion disabled; the axes stay where the last measurement left them.
pub fn measure<W: Wire>(s: &mut Session<W>, o: &AlignOptions) -> CliResult<Alignment> {
    let mut set = Vec::new();
    if let Some(c) = &o.crystal {
        set.push(format!("crystal={c}"));
    }
    if let Some(f) = &o.face {
        set.push(format!("face={f}"));
    }
    if let Some(t) = o.tilt_deg {
        set.push(format!("tilt={t}"));
    }
    if !set.is_empty() {
        ok(s, &format!("set {}", set.join(" ")))?;
    }
    let dev = read_settings(s)?;
    let home_offset_deg = arm_home_offset(s)?;
    let pos = ok(s, "pos")?.last;
    if let Some(u) = reply_field(&pos, "unknown") {
        return Err(CliError::new(format!(
            "align: the controller does not know where these axes stand: {u}; declare them with home name=AXIS [at=DEG] (mwctl talk), then run align again"
        )));
    }
    let result = (|| -> CliResult<Alignment> {
        let beams = choose_beams(s, o)?;
        if beams.is_empty() {
            return Err(CliError::new(format!(
                "align: the controller lists no beam besides the specular one on {} {} at {} eV; raise --to",
                dev.crystal, dev.face_text, o.to_ev
            )));
        }
        ok(s, "enable")?;
        let mut measured = Vec::new();
        let mut missed = Vec::new();
        for rod in beams {
            ok(s, &format!("set beam={},{}", rod[0], rod[1]))?;
            for branch in [1i8, -1] {
                let plan = try_req(
                    s,
                    &format!(
                        "plan kind=iv from={} to={} step={} branch={branch:+}",
                        o.from_ev, o.to_ev, o.plan_step_ev
                    ),
                )?;
                let peaks: Vec<String> = plan
                    .items
                    .iter()
                    .filter(|l| reply_field(l, "err").is_none())
                    .filter_map(|l| reply_field(l, "peak").map(str::to_string))
                    .collect();
                if peaks.is_empty() {
                    missed.push(Missed {
                        rod,
                        branch,
                        nominal_ev: None,
                        why: format!(
                            "no kinematic I-V maximum the arm can reach from {} to {} eV on this branch (the controller's plan kind=iv)",
                            o.from_ev, o.to_ev
                        ),
                    });
                    continue;
                }
                let mut energies = Vec::new();
                for e in spread(&peaks, o.per_beam) {
                    if o.around_ev > 0.0 {
                        if let Ok(x) = e.parse::<f32>() {
                            for k in -2i8..=2 {
                                let d = f32::from(k) * o.around_ev / 2.0;
                                energies.push(if k == 0 {
                                    e.clone()
                                } else {
                                    format!("{}", x + d)
                                });
                            }
                            continue;
                        }
                    }
                    energies.push(e);
                }
                for e in energies {
                    match measure_one(s, o, dev.acceptance_deg, rod, branch, &e)? {
                        Ok(m) => measured.push(m),
                        Err(why) => missed.push(Missed {
                            rod,
                            branch,
                            nominal_ev: e.parse().ok(),
                            why,
                        }),
                    }
                }
            }
        }
        let pts: Vec<BeamArm> = measured
            .iter()
            .map(|m| BeamArm {
                rod: m.rod,
                branch: m.branch,
                nominal_ev: m.nominal_ev,
                arm_deg: m.arm_deg,
            })
            .collect();
        // Every point stands at the same tilt setpoint: the tilt reached at the first.
        let tilt_deg = measured.first().map_or(dev.tilt_deg, |m| m.tilt_deg);
        let fit = fit::arm_zero_in_plane_beams(&dev.face, tilt_deg, dev.contact_ev, &pts)
            .map_err(|e| {
                CliError::core(
                    e,
                    format!(
                        "align: the arm-zero fit over {} centred peaks ({} beams missed, see above)",
                        pts.len(),
                        missed.len()
                    ),
                )
            });
        let fit = match fit {
            Ok(f) => f,
            Err(e) => {
                for m in &missed {
                    eprintln!("mwctl: align: {}", m.describe());
                }
                return Err(e);
            }
        };
        for (m, p) in measured.iter_mut().zip(&pts) {
            m.residual_deg = fit::in_plane_arm_at_offsets_deg(
                &dev.face,
                tilt_deg,
                dev.contact_ev,
                fit.params,
                p,
            )
            .map_or(f32::NAN, |model| p.arm_deg - model);
        }
        Ok(Alignment {
            crystal: dev.crystal.clone(),
            face: dev.face_text.clone(),
            surface: dev.face,
            tilt_deg,
            contact_ev: dev.contact_ev,
            offset_ev: dev.offset_ev,
            home_offset_deg,
            fit,
            measured,
            missed,
        })
    })();
    // Put back what align changed, whatever happened.
    let _ = try_req(s, "disable");
    let _ = try_req(s, &format!("set energy={} beam={}", dev.energy, dev.beam));
    result
}
