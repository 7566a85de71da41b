//! `mwctl calc track`: an energy sweep that follows one beam.

use super::*;

// ---------------------------------------------------------------------------------------
// track

/// `mwctl calc track`.
pub fn track(a: &TrackArgs) -> CliResult<Report> {
    let rf = a.rig.load()?;
    let (c, _, face, rod) = target(&a.target)?;
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
            opt(&|s| f(s.exit_deg, 4)),
        ]);
    }
    let est = scan::estimate_s(
        &rf.rig,
        start,
        plan.iter(start).map(|p| p.result.ok()),
        dwell,
    );
    let mut r = Report::default();
    crystal_face_fields(&mut r, c, &face);
    r.field("beam", "beam", text(rod_text(rod)));
    if corr.correction_ev() != 0.0 {
        r.field(
            "correction_ev",
            "energy at sample − nominal (eV)",
            f(corr.correction_ev(), 3),
        );
    }
    r.field("tilt_deg", "tilt (deg)", f(tilt, 3));
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
        ],
        rows,
    });
    r.notes.push(
        "Each point follows on from the previous reachable one; the estimate is moves (slowest axis, trapezoidal) plus dwell."
            .into(),
    );
    Ok(r)
}
