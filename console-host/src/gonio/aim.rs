//! `mwctl calc aim` and `mwctl calc budget`: the core's aiming and budget, and its
//! refusals in words.

use super::*;

/// What aim is asked for, for messages: the core's request without the energy, on
/// `rig` from `current`.
pub(super) struct AimQuery<'a> {
    pub(super) rig: &'a Rig,
    pub(super) face: Face,
    /// The face whose whole rod `rod` is the beam (see `TargetBeam`).
    pub(super) grid: Face,
    pub(super) rod: [i32; 2],
    pub(super) pos: matterwave_core::surface::FracRod,
    pub(super) tilt: f32,
    pub(super) mode: Mode,
    pub(super) branch: Branch,
    pub(super) current: Position,
}

impl AimQuery<'_> {
    /// The core's request at the energy at the sample `energy`, eV.
    pub(super) fn request(&self, energy: f32) -> AimRequest<'_> {
        AimRequest::new(&self.grid, self.rod, energy, self.tilt)
            .with_mode(self.mode)
            .with_branch(self.branch)
    }

    fn solve(&self, energy: f32, out: &mut [Solution]) -> matterwave_core::Result<usize> {
        goniometer::aim(self.rig, &self.request(energy), &self.current, out).map(|l| l.stored)
    }

    /// The core's refusals of the request (empty when the request itself is bad).
    pub(super) fn refusals(&self, energy: f32) -> Refusals {
        goniometer::refusals(self.rig, &self.request(energy), &self.current).unwrap_or_default()
    }

    /// The refusals in words, pose by pose (`branch +1: …; branch -1: …`), every axis
    /// that refuses each pose in the core's order.
    pub(super) fn explain(&self, energy: f32) -> String {
        refusal_words(self.rig, &self.refusals(energy).list)
    }

    /// The nearest reachable solutions, or the error a person can act on.
    pub(super) fn reachable(
        &self,
        energy: f32,
        nominal: f32,
        correction: f32,
        out: &mut [Solution],
    ) -> CliResult<usize> {
        let ctx = format!(
            "--beam {} at {} eV ({} eV at the sample), tilt {} deg{}",
            self.pos,
            nominal,
            energy,
            self.tilt,
            match self.branch {
                Branch::Nearest => String::new(),
                b => format!(", branch {}", b.word()),
            }
        );
        match self.solve(energy, out) {
            Ok(n) => Ok(n),
            Err(Error::Evanescent) => {
                let em = match self.refusals(energy).emerges_ev {
                    Some(e) => format!(
                        "; it emerges only above {e:.2} eV at the sample ({:.2} eV nominal)",
                        e - correction
                    ),
                    None => String::new(),
                };
                let on = if self.branch == Branch::Nearest {
                    ""
                } else {
                    " on this branch"
                };
                Err(CliError {
                    code: Some(Error::Evanescent.code()),
                    message: format!(
                        "{ctx}: the beam is evanescent{on} (it does not leave the surface){em}; raise the energy or change the tilt"
                    ),
                })
            }
            Err(e @ Error::NoSuchAxis(AxisId::Elevation)) if self.rig.elevation.is_none() => {
                Err(CliError {
                    code: Some(e.code()),
                    message: format!(
                        "{ctx}: no reachable solution: {}; omit --azimuth for in-plane mode, or give a rig file with an [elevation] axis",
                        self.explain(energy)
                    ),
                })
            }
            Err(e) if e.axis().is_some() || e == Error::NoReachableSolution => {
                let why = self.explain(energy);
                let why = if why.is_empty() {
                    axis_reason(self.rig, e)
                } else {
                    why
                };
                Err(CliError {
                    code: Some(e.code()),
                    message: format!("{ctx}: no reachable solution: {why}"),
                })
            }
            Err(e @ Error::BranchNeedsInPlane) => Err(CliError::core(
                e,
                format!("--branch {} with --azimuth", self.branch.word()),
            )),
            Err(e) => Err(CliError::core(e, ctx)),
        }
    }
}

/// The core's refusals in words: `branch +1: arm 170.250 deg: above the arm upper
/// limit 165 deg (by 5.250 deg); …`, grouped by pose (two-circle poses have no branch).
pub(super) fn refusal_words(rig: &Rig, list: &[Refusal]) -> String {
    let mut out = String::new();
    let mut branch: Option<i8> = None;
    for r in list {
        if branch != Some(r.branch) {
            if branch.is_some() {
                out.push_str("; ");
            }
            if r.branch != 0 {
                let _ = write!(out, "branch {:+}: ", r.branch);
            }
            branch = Some(r.branch);
        } else {
            out.push_str(", ");
        }
        let by = r
            .by_deg
            .map_or_else(String::new, |d| format!(" (by {d:.3} deg)"));
        let _ = write!(
            out,
            "{} {:.3} deg: {}{by}",
            r.axis.name(),
            r.target_deg,
            axis_reason(rig, r.error)
        );
    }
    out
}

pub(super) fn solution_columns() -> Vec<crate::output::Column> {
    vec![
        col("azimuth_deg", "azimuth (deg)"),
        col("arm_deg", "arm (deg)"),
        col("elevation_deg", "elevation (deg)"),
        col("tilt_deg", "tilt (deg)"),
        col("azimuth_steps", "azimuth steps"),
        col("arm_steps", "arm steps"),
        col("elevation_steps", "elevation steps"),
        col("tilt_steps", "tilt steps"),
        col("arm_residual_deg", "arm residual (deg)"),
        col("arm_approach_steps", "arm turn-round (steps)"),
        col("branch", "branch"),
        col("exit_deg", "exit (deg)"),
        col("exit_azimuth_deg", "exit azimuth (deg)"),
        col("travel_deg", "travel (deg)"),
    ]
}

pub(super) fn solution_row(s: &Solution, exit: [Value; 2]) -> Vec<Value> {
    let [exit_deg, exit_azimuth] = exit;
    vec![
        f(s.azimuth.angle_deg, 4),
        f(s.arm.angle_deg, 4),
        f(s.elevation_deg(), 4),
        f(s.tilt.angle_deg, 4),
        Value::Int(s.azimuth.steps.into()),
        Value::Int(s.arm.steps.into()),
        s.elevation
            .map_or(Value::Missing, |e| Value::Int(e.steps.into())),
        Value::Int(s.tilt.steps.into()),
        f(s.arm.residual_deg, 6),
        s.arm
            .approach_steps
            .map_or(Value::Missing, |a| Value::Int(a.into())),
        Value::Int(s.branch.into()),
        exit_deg,
        exit_azimuth,
        f(s.travel_deg, 3),
    ]
}

/// What `aim` and `budget` start from: the crystal and its cell, the energy at the
/// sample, and the aim query on `rf`'s rig from the current position.
pub(super) fn aim_query<'a>(
    rf: &'a RigFile,
    target_args: &TargetArgs,
    gun: &GunArgs,
    tilt: f32,
    azimuth: Option<f32>,
    branch: Branch,
    position: &PositionArgs,
) -> CliResult<(Crystal, Cell, f32, AimQuery<'a>, GunArgs)> {
    let (c, cell, face, beam) = target(target_args)?;
    let gun = gun.at_face(&c, &face)?;
    let e = gun.kinetic_ev()?;
    let q = AimQuery {
        rig: &rf.rig,
        face,
        grid: beam.grid,
        rod: beam.rod,
        pos: beam.pos,
        tilt: check_angle(tilt, "tilt", TILT_MAX_DEG)?,
        mode: mode_of(azimuth)?,
        branch,
        current: parse_position(position.position.as_deref(), &rf.rig)?,
    };
    Ok((c, cell, e, q, gun))
}

// ---------------------------------------------------------------------------------------
// aim

/// `mwctl calc aim`.
pub fn aim(a: &AimArgs) -> CliResult<Report> {
    let rf = a.rig.load()?;
    let (c, _, e, q, gun) = aim_query(
        &rf,
        &a.target,
        &a.gun,
        a.tilt,
        a.azimuth,
        a.branch,
        &a.position,
    )?;
    let mut buf = [Solution::EMPTY; MAX_SOLUTIONS];
    let n = q.reachable(e, gun.energy, gun.correction_ev(), &mut buf)?;
    let mut r = Report::default();
    crystal_face_fields(&mut r, &c, &q.face);
    r.field("beam", "beam", text(q.pos.to_string()));
    gun.fields(&mut r, e);
    r.field(
        "wavelength_a",
        "wavelength (Å)",
        f(beam::wavelength_a(e).ctx("energy at the sample")?, 6),
    );
    r.field("tilt_deg", "tilt (deg)", f(q.tilt, 3));
    r.field("mode", "mode", text(mode_text(q.mode)));
    r.field(
        "branch_preference",
        "branch preference",
        text(q.branch.word()),
    );
    rig_field(&mut r, &rf);
    r.field("count", "solutions", Value::Int(n as i64));
    r.list = Some(List {
        key: "solutions",
        columns: solution_columns(),
        rows: buf[..n]
            .iter()
            .map(|s| solution_row(s, exit_of(&q.grid, q.rod, e, s)))
            .collect(),
    });
    r.notes
        .push("Solutions nearest the current position (least total travel) first.".into());
    Ok(r)
}

// ---------------------------------------------------------------------------------------
// budget

/// `mwctl calc budget`.
pub fn budget_cmd(a: &BudgetArgs) -> CliResult<Report> {
    let rf = a.rig.load()?;
    let rig = &rf.rig;
    let (c, _, e, q, gun) = aim_query(
        &rf,
        &a.target,
        &a.gun,
        a.tilt,
        a.azimuth,
        a.branch,
        &a.position,
    )?;
    if q.pos.integer().is_none() {
        // The console refuses it with the same error (its `budget`, err 171).
        return Err(CliError::core(
            matterwave_core::Error::IntegerBeamsOnly,
            format_args!("--beam {}", q.pos),
        ));
    }
    let (face, rod, tilt, mode) = (q.face, q.rod, q.tilt, q.mode);
    let spread = a.energy_spread;
    let zero_sigma = a.arm_zero_sigma;
    let inputs = budget::ArmBudgetInputs {
        energy_spread_ev: spread,
        arm_zero_sigma_deg: zero_sigma,
        lattice_sigma_a: c.a_uncertainty_a,
    };
    let ab = budget::arm_budget(rig, &q.request(e), &q.current, &inputs).or_else(|er| {
        let flag = match er.quantity() {
            Some(matterwave_core::Quantity::EnergySpread) => {
                Some(format!("--energy-spread {spread}"))
            }
            Some(matterwave_core::Quantity::ArmZeroSigma) => {
                Some(format!("--arm-zero-sigma {zero_sigma}"))
            }
            _ => None,
        };
        if let Some(flag) = flag {
            return Err(CliError::core(er, flag));
        }
        // Refused by the rig: say which axis refuses each geometric pose.
        let mut buf = [Solution::EMPTY; MAX_SOLUTIONS];
        q.reachable(e, gun.energy, gun.correction_ev(), &mut buf)?;
        Err(CliError::core(
            er,
            "energy sensitivity (the beam is too close to its emergence energy)",
        ))
    })?;
    let (arm0, d_energy, d_lattice, b) = (
        ab.arm_deg,
        ab.d_arm_d_energy_deg_per_ev,
        ab.d_arm_d_lattice_deg_per_a,
        ab.budget,
    );
    let basis = [
        format!("σE {spread} eV × {:.5} deg/eV", d_energy.abs()),
        format!(
            "σa {} Å (table) × {:.4} deg/Å",
            c.a_uncertainty_a,
            d_lattice.abs()
        ),
        format!("step {:.6} deg / √12", 1.0 / rig.arm.steps_per_deg),
        format!("acceptance half-angle {} deg", rig.acceptance_deg),
        format!("--arm-zero-sigma {zero_sigma} deg"),
    ];
    let mut r = Report::default();
    crystal_face_fields(&mut r, &c, &face);
    r.field("beam", "beam", text(rod_text(rod)));
    gun.fields(&mut r, e);
    r.field("tilt_deg", "tilt (deg)", f(tilt, 3));
    r.field("mode", "mode", text(mode_text(mode)));
    r.field(
        "branch_preference",
        "branch preference",
        text(q.branch.word()),
    );
    rig_field(&mut r, &rf);
    r.field("arm_deg", "aimed arm angle (deg)", f(arm0, 4));
    r.field(
        "d_arm_d_energy_deg_per_ev",
        "∂arm/∂E (deg/eV)",
        f(d_energy, 6),
    );
    r.field(
        "d_arm_d_lattice_deg_per_a",
        "∂arm/∂a (deg/Å)",
        f(d_lattice, 4),
    );
    r.field(
        "total_deg",
        "total, root sum of squares (deg)",
        f(b.total_deg(), 5),
    );
    r.list = Some(List {
        key: "contributions",
        columns: vec![
            col("name", "contribution"),
            col("deg", "σ arm (deg)"),
            col("basis", "from"),
        ],
        rows: b
            .contributions()
            .iter()
            .zip(basis)
            .map(|(ct, why)| vec![text(ct.name), f(ct.deg, 5), text(why)])
            .collect(),
    });
    r.notes.push(
        "One standard deviation each; independent causes combine as the root sum of squares."
            .into(),
    );
    Ok(r)
}

/// `calc beams --rig`: adds to each beam of `r` whether the rig reaches it from home
/// (`reachable`) and, when not, what refuses it first (`refused_by`, the core's first
/// refusal in short form); `only_reachable` drops the others. One-circle arms aim
/// in-plane (turning the azimuth); two-circle arms at `azimuth_deg` with the elevation.
#[allow(clippy::too_many_arguments)]
pub fn add_reach(
    r: &mut Report,
    rf: &RigFile,
    c: &Crystal,
    face_text: &str,
    gun: &GunArgs,
    tilt_deg: f32,
    azimuth_deg: f32,
    only_reachable: bool,
) -> CliResult<()> {
    let (_, face) = calc::face_of(c, face_text)?;
    let e = gun.at_face(c, &face)?.kinetic_ev()?;
    let mode = if rf.rig.elevation.is_some() {
        Mode::AtAzimuth(azimuth_deg)
    } else {
        Mode::InPlane
    };
    let Some(list) = r.list.as_mut() else {
        return Ok(());
    };
    let (hi, ki) = (
        list.columns.iter().position(|c| c.key == "h"),
        list.columns.iter().position(|c| c.key == "k"),
    );
    let (Some(hi), Some(ki)) = (hi, ki) else {
        return Ok(());
    };
    list.columns.push(col("reachable", "reachable"));
    list.columns.push(col("refused_by", "refused by"));
    let mut kept = Vec::new();
    let mut n_reach = 0i64;
    let home = [0; 4];
    let mut out = [Solution::EMPTY; 1];
    for mut row in std::mem::take(&mut list.rows) {
        let idx = |v: &Value| match v {
            Value::Int(i) => i32::try_from(*i).ok(),
            _ => None,
        };
        let (Some(h), Some(k)) = (row.get(hi).and_then(idx), row.get(ki).and_then(idx)) else {
            continue;
        };
        let req = AimRequest::new(&face, [h, k], e, tilt_deg).with_mode(mode);
        let res = goniometer::aim(&rf.rig, &req, &home, &mut out);
        let ok = res.is_ok();
        n_reach += i64::from(ok);
        row.push(Value::Bool(ok));
        row.push(match res {
            Ok(_) => Value::Missing,
            Err(er) => text(status_word(er)),
        });
        if ok || !only_reachable {
            kept.push(row);
        }
    }
    list.rows = kept;
    r.field("rig", "rig", text(rf.name.clone()));
    r.field("reachable", "reachable beams", Value::Int(n_reach));
    if only_reachable {
        r.notes
            .push("Only the beams the rig can reach are listed (--reachable).".into());
    }
    Ok(())
}
