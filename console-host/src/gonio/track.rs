//! `mwctl calc track`: an energy sweep that follows one beam.

use super::*;
use matterwave_core::inner::{V0Model, V0ModelKind};
use matterwave_core::surface::Relaxation;

// ---------------------------------------------------------------------------------------
// track

/// `mwctl calc track`.
pub fn track(a: &TrackArgs) -> CliResult<Report> {
    let rf = a.rig.load()?;
    let (c, _, real_face, beam) = target(&a.target)?;
    let c = &c;
    // Aiming and the plans run on the grid face (the face itself for an integer-order
    // beam); the report's face fields and table look-ups use the face.
    let (face, rod) = (beam.grid, beam.rod);
    let tilt = check_angle(a.tilt, "tilt", TILT_MAX_DEG)?;
    let mode = mode_of(a.azimuth)?;
    let dwell = check_dwell(a.dwell)?;
    let start = parse_position(a.position.position.as_deref(), &rf.rig)?;
    let corr = &a.corrections.at_face(c, &face)?;
    for (name, x) in [("from", a.from), ("to", a.to)] {
        corr.gun(x)
            .kinetic_energy_ev()
            .ctx(format_args!("--{name} {x}"))?;
    }
    let plan = TrackPlan::new(
        rf.rig,
        face,
        rod,
        corr.gun(a.from),
        a.from,
        a.to,
        a.step,
        tilt,
        mode,
        a.branch,
    )
    .map_err(|e| match e {
        Error::BranchNeedsInPlane => {
            CliError::core(e, format!("--branch {} with --azimuth", a.branch.word()))
        }
        e => plan_error(e, ("from", a.from), ("to", a.to), a.step),
    })?;
    // The I-V maxima: the core's I-V plan over the same track marks the points within
    // half a step of each predicted maximum.
    let v0 = match a.inner_potential {
        Some(calc::EvOrFace::Ev(v)) => Some(v),
        Some(calc::EvOrFace::Face) => Some(calc::table_value(
            calc::TableValue::InnerPotential,
            "--inner-potential",
            c,
            &face,
        )?),
        None => c.inner_potential_for(face.miller),
    };
    // Kinematic I-V maxima come from bulk reciprocal vectors: integer-order beams only.
    let integer = beam.pos.integer().is_some();
    let model = match a.inner_potential_model {
        // The energy model needs no constant V0 (the form's own values are used).
        V0ModelKind::Energy if integer => Some(calc::v0_model(
            V0ModelKind::Energy,
            v0.unwrap_or(0.0),
            c,
            face.miller,
        )?),
        V0ModelKind::Energy => None,
        V0ModelKind::Constant => v0.filter(|_| integer).map(V0Model::Constant),
    };
    let iv = match model {
        Some(m) => Some(
            IvPlan::with_model(plan, &m, &Relaxation::NONE, start).ctx(match m {
                V0Model::Constant(v) => format!("--inner-potential {v}"),
                V0Model::Energy(_) => "--inner-potential-model energy".to_string(),
            })?,
        ),
        None => None,
    };
    let marks: Vec<Option<(f32, f32)>> = match &iv {
        Some(iv) => iv
            .iter(start)
            .map(|q| {
                q.peak
                    .zip(q.peak_nominal_ev())
                    .map(|(p, n)| (p.energy_ev, n))
            })
            .collect(),
        None => Vec::new(),
    };
    let mut rows = Vec::new();
    let mut reachable = 0i64;
    let mut at = start;
    let mut branch: Option<i8> = None;
    for p in plan.iter(start) {
        let (status, sol) = match &p.result {
            Ok(s) => {
                reachable += 1;
                at = s.position();
                branch = Some(s.branch);
                ("reachable".to_string(), Some(s))
            }
            Err(e) => {
                // Once a branch is being followed, say what stops that branch: the
                // core's first refusal of the same request held on that branch.
                let held = match branch {
                    Some(1) => Some(Branch::Plus),
                    Some(-1) => Some(Branch::Minus),
                    _ => None,
                };
                let tracked = held.and_then(|b| {
                    let req = AimRequest::new(&face, rod, p.energy_ev, tilt)
                        .with_mode(mode)
                        .with_branch(b);
                    goniometer::refusals(&rf.rig, &req, &at)
                        .ok()
                        .map(|r| r.first_error())
                });
                (status_word(tracked.unwrap_or(*e)), None)
            }
        };
        let opt = |g: &dyn Fn(&Solution) -> Value| sol.map_or(Value::Missing, g);
        rows.push(vec![
            Value::Int(p.index.into()),
            f(p.nominal_ev, 3),
            f(p.energy_ev, 3),
            text(status),
            opt(&|s| f(s.azimuth.angle_deg, 4)),
            opt(&|s| f(s.arm.angle_deg, 4)),
            opt(&|s| f(s.elevation_deg(), 4)),
            opt(&|s| Value::Int(s.azimuth.steps.into())),
            opt(&|s| Value::Int(s.arm.steps.into())),
            opt(&|s| {
                s.elevation
                    .map_or(Value::Missing, |e| Value::Int(e.steps.into()))
            }),
            opt(&|s| Value::Int(s.branch.into())),
        ]);
        let exit = sol.map_or([Value::Missing, Value::Missing], |s| {
            exit_of(&face, rod, p.energy_ev, s)
        });
        let mark = marks.get(p.index as usize).copied().flatten();
        if let Some(row) = rows.last_mut() {
            row.extend(exit);
            row.push(mark.map_or(Value::Missing, |m| f(m.1, 3)));
            row.push(mark.map_or(Value::Missing, |m| f(m.0, 3)));
        }
    }
    let est = scan::estimate_s(
        &rf.rig,
        start,
        plan.iter(start).map(|p| p.result.ok()),
        dwell,
    );
    let mut r = Report::default();
    crystal_face_fields(&mut r, c, &real_face);
    r.field("beam", "beam", text(beam.pos.to_string()));
    if corr.correction_ev() != 0.0 {
        r.field(
            "correction_ev",
            "energy at sample − nominal (eV)",
            f(corr.correction_ev(), 3),
        );
    }
    r.field("tilt_deg", "tilt (deg)", f(tilt, 3));
    r.field(
        "inner_potential_model",
        "inner-potential model of the I-V maxima",
        text(a.inner_potential_model.name()),
    );
    r.field(
        "inner_potential_ev",
        "inner potential for I-V maxima (eV)",
        Value::opt(iv.as_ref().and_then(|p| p.inner_potential_ev), 2),
    );
    r.field(
        "iv_maxima",
        "predicted I-V maxima in range",
        Value::Int(iv.as_ref().map_or(0, |p| p.peaks().len() as i64)),
    );
    r.field("mode", "mode", text(mode_text(mode)));
    r.field(
        "branch_preference",
        "branch preference",
        text(a.branch.word()),
    );
    rig_field(&mut r, &rf);
    r.field("count", "points", Value::Int(plan.len().into()));
    r.field("reachable", "reachable points", Value::Int(reachable));
    r.field("dwell_s", "dwell per point (s)", f(dwell, 3));
    r.field("estimate_s", "estimated time (s)", f(est, 1));
    r.list = Some(List {
        key: "points",
        columns: vec![
            col("index", "#"),
            col("nominal_ev", "nominal (eV)"),
            col("energy_ev", "energy (eV)"),
            col("status", "status"),
            col("azimuth_deg", "azimuth (deg)"),
            col("arm_deg", "arm (deg)"),
            col("elevation_deg", "elevation (deg)"),
            col("azimuth_steps", "azimuth steps"),
            col("arm_steps", "arm steps"),
            col("elevation_steps", "elevation steps"),
            col("branch", "branch"),
            col("exit_deg", "exit (deg)"),
            col("exit_azimuth_deg", "exit azimuth (deg)"),
            col("iv_max_nominal_ev", "I-V max, nominal (eV)"),
            col("iv_max_ev", "I-V max at sample (eV)"),
        ],
        rows,
    });
    r.notes.push(
        "Each point follows on from the previous reachable one; the estimate is moves (slowest axis, trapezoidal) plus dwell. An I-V max marks a point within half a step of a predicted kinematic I-V maximum of the beam, as a gun setting and at the sample."
            .into(),
    );
    Ok(r)
}
