//! `mwctl calc sweep` and `mwctl calc view`: arm sweeps and the beams in view.

use super::*;
use crate::calc::Overlayer;
use matterwave_core::goniometer::SuperInView;
use matterwave_core::surface::SuperBeam;

// ---------------------------------------------------------------------------------------
// sweep

/// The output of `sweep`: the beams crossed, and optionally the sweep points.
#[derive(Clone, Debug)]
pub struct SweepOutput {
    /// Fields and the beams crossed.
    pub beams: Report,
    /// The sweep points (with `--points`).
    pub points: Option<List>,
}

impl SweepOutput {
    /// Writes: JSON holds both lists (`beams`, `sweep_points`); CSV writes the sweep
    /// points (each row with the sweep's fields) when they were asked for, else the
    /// beams; the table writes both.
    pub fn write_to(&self, format: Format, w: &mut dyn std::io::Write) -> std::io::Result<()> {
        let Some(points) = &self.points else {
            return self.beams.write_to(format, w);
        };
        match format {
            Format::Json => {
                let mut j = self.beams.to_json();
                if let Some(m) = j.as_object_mut() {
                    let rows = Report {
                        list: Some(points.clone()),
                        ..Report::default()
                    };
                    if let serde_json::Value::Object(e) = rows.to_json() {
                        m.extend(e);
                    }
                }
                serde_json::to_writer_pretty(&mut *w, &j)?;
                writeln!(w)
            }
            Format::Csv => Report {
                fields: self.beams.fields.clone(),
                list: Some(points.clone()),
                notes: Vec::new(),
            }
            .write_to(format, w),
            Format::Table => {
                self.beams.write_to(format, w)?;
                writeln!(w, "\nsweep points:")?;
                Report {
                    list: Some(points.clone()),
                    ..Report::default()
                }
                .write_to(format, w)
            }
        }
    }
}

/// `mwctl calc sweep`.
pub fn sweep(a: &SweepArgs) -> CliResult<SweepOutput> {
    let rf = a.rig.load()?;
    let rig = &rf.rig;
    let c = &calc::crystal_at(&a.crystal, &a.sample)?;
    let (_, face) = calc::face_of(c, &a.face)?;
    let gun = a.gun.at_face(c, &face)?;
    let e = gun.kinetic_ev()?;
    let tilt = check_angle(a.tilt, "tilt", TILT_MAX_DEG)?;
    let azimuth = check_angle(a.azimuth, "azimuth", 360.0)?;
    let elevation = check_angle(a.elevation, "elevation", 90.0)?;
    let dwell = check_dwell(a.dwell)?;
    let start = parse_position(a.position.position.as_deref(), rig)?;
    let within = |name: &str, ax: &AxisConfig, x: f32| {
        ax.check_angle(x).map_err(|er| CliError {
            code: Some(er.code()),
            message: format!("--{name} {x}: {}", axis_reason(rig, er)),
        })
    };
    match &rig.elevation {
        None if elevation != 0.0 => return Err(no_elevation_axis(elevation)),
        Some(ax) => within("elevation", ax, elevation)?,
        None => {}
    }
    within("tilt", &rig.tilt, tilt)?;
    within("azimuth", &rig.azimuth, azimuth)?;
    let inc = Incidence::new(e, tilt, azimuth).ctx("incidence")?;
    let ov = overlayer_of(&a.overlayer, &face)?;
    let plan = SweepPlan::new(*rig, face, inc, elevation, a.arm_from, a.arm_to, a.step)
        .map_err(|er| plan_error(er, ("arm-from", a.arm_from), ("arm-to", a.arm_to), a.step))?
        .with_overlayer(ov.as_ref().map(Overlayer::core));
    let mut unreachable = 0i64;
    // Why points are unreachable: each reason in words, with its count.
    let mut reasons: Vec<(String, i64)> = Vec::new();
    let mut statuses: Vec<String> = Vec::with_capacity(plan.len() as usize);
    let mut point_rows = Vec::new();
    for p in plan.iter(start[0]) {
        let status = match &p.setpoint {
            Ok(_) => "reachable".to_string(),
            Err(er) => {
                unreachable += 1;
                let why = axis_reason(rig, *er);
                match reasons.iter_mut().find(|(w, _)| *w == why) {
                    Some((_, n)) => *n += 1,
                    None => reasons.push((why, 1)),
                }
                status_word(*er)
            }
        };
        if a.points {
            let mut row = vec![
                Value::Int(p.index.into()),
                f(p.arm_deg, 4),
                p.setpoint
                    .as_ref()
                    .map_or(Value::Missing, |s| Value::Int(s.steps.into())),
                text(status.clone()),
            ];
            match &ov {
                None => {
                    let iv = p.in_view;
                    row.extend([
                        iv.map_or(Value::Missing, |v| Value::Int(v.beam.rod[0].into())),
                        iv.map_or(Value::Missing, |v| Value::Int(v.beam.rod[1].into())),
                        iv.map_or(Value::Missing, |v| f(v.offset_deg, 4)),
                    ]);
                }
                Some(ov) => {
                    match &p.super_in_view {
                        Some(v) => row.extend(super_cells(ov, &v.beam)),
                        None => row.extend(std::iter::repeat_n(Value::Missing, 5)),
                    }
                    row.push(
                        p.super_in_view
                            .map_or(Value::Missing, |v| f(v.offset_deg, 4)),
                    );
                }
            }
            point_rows.push(row);
        }
        statuses.push(status);
    }
    // The status of the sweep point nearest a beam's arm angle: can the sweep get there?
    let status_at = |arm_deg: f32| {
        let i = ((arm_deg - plan.from_deg) / plan.step_deg).round().max(0.0) as usize;
        text(
            statuses
                .get(i.min(statuses.len().saturating_sub(1)))
                .cloned()
                .unwrap_or_default(),
        )
    };
    let mut beam_rows = Vec::new();
    let mut fractional = None;
    let l = match &ov {
        None => {
            let mut buf = vec![InView::EMPTY; MAX_BEAMS];
            let l = plan.beams_crossed(&mut buf).ctx("beams crossed")?;
            for b in &buf[..l.stored] {
                beam_rows.push(vec![
                    Value::Int(b.beam.rod[0].into()),
                    Value::Int(b.beam.rod[1].into()),
                    f(b.arm_deg, 4),
                    f(b.elevation_deg, 4),
                    f(b.beam.exit_deg, 4),
                    f(b.beam.exit_azimuth_deg, 3),
                    status_at(b.arm_deg),
                ]);
            }
            l
        }
        Some(ov) => {
            let mut buf = vec![SuperInView::EMPTY; MAX_BEAMS];
            let l = plan.super_beams_crossed(&mut buf).ctx("beams crossed")?;
            let crossed = &buf[..l.stored];
            fractional = Some(crossed.iter().filter(|v| !v.beam.integer).count());
            for v in crossed {
                let mut row = super_cells(ov, &v.beam);
                row.extend([
                    f(v.arm_deg, 4),
                    f(v.elevation_deg, 4),
                    f(v.beam.beam.exit_deg, 4),
                    f(v.beam.beam.exit_azimuth_deg, 3),
                    status_at(v.arm_deg),
                ]);
                beam_rows.push(row);
            }
            l
        }
    };
    let est = scan::estimate_sweep_s(&plan, start[0], dwell);
    let mut r = Report::default();
    crystal_face_fields(&mut r, c, &face);
    gun.fields(&mut r, e);
    r.field("tilt_deg", "tilt (deg)", f(tilt, 3));
    r.field("azimuth_deg", "azimuth (deg)", f(azimuth, 3));
    r.field("elevation_deg", "elevation (deg)", f(elevation, 3));
    rig_field(&mut r, &rf);
    r.field("points", "sweep points", Value::Int(plan.len().into()));
    r.field(
        "unreachable_points",
        "unreachable points",
        Value::Int(unreachable),
    );
    r.field(
        "unreachable_because",
        "unreachable because",
        Value::List(
            reasons
                .iter()
                .map(|(w, n)| text(format!("{n} points: {w}")))
                .collect(),
        ),
    );
    // Whether the range itself runs past the arm's soft limits (the core's check of
    // each end).
    let beyond: Vec<String> = [("arm-from", a.arm_from), ("arm-to", a.arm_to)]
        .into_iter()
        .filter_map(|(n, x)| match rig.arm.check_angle(x) {
            Err(er @ (Error::BelowLimit(_) | Error::AboveLimit(_))) => {
                Some(format!("--{n} {x}: {}", axis_reason(rig, er)))
            }
            _ => None,
        })
        .collect();
    r.field(
        "beyond_limits",
        "range beyond the arm limits",
        Value::Bool(!beyond.is_empty()),
    );
    if !beyond.is_empty() {
        r.notes.push(format!(
            "The range runs past the arm's soft limits ({}); the points beyond them are unreachable.",
            beyond.join("; ")
        ));
    }
    r.field("dwell_s", "dwell per point (s)", f(dwell, 3));
    r.field("estimate_s", "estimated time (s)", f(est, 1));
    if let Some(ov) = &ov {
        ov.fields(&mut r, &face);
    }
    if let Some(n) = fractional {
        r.field("fractional", "fractional-order beams", Value::Int(n as i64));
    }
    r.field(
        "truncated",
        "more beams than listed",
        Value::Bool(l.truncated),
    );
    let label_columns = || match &ov {
        None => vec![col("h", "h"), col("k", "k")],
        Some(_) => super_columns(),
    };
    r.list = Some(List {
        key: "beams",
        columns: [
            label_columns(),
            vec![
                col("arm_deg", "arm (deg)"),
                col("elevation_deg", "elevation (deg)"),
                col("exit_deg", "exit (deg)"),
                col("exit_azimuth_deg", "exit azimuth (deg)"),
                col("status", "sweep status"),
            ],
        ]
        .concat(),
        rows: beam_rows,
    });
    let points = a.points.then(|| List {
        key: "sweep_points",
        columns: vec![
            col("index", "#"),
            col("arm_deg", "arm (deg)"),
            col("arm_steps", "arm steps"),
            col("status", "status"),
        ]
        .into_iter()
        .chain(label_columns())
        .chain([col("offset_deg", "offset (deg)")])
        .collect(),
        rows: point_rows,
    });
    Ok(SweepOutput { beams: r, points })
}

// ---------------------------------------------------------------------------------------
// where

/// `mwctl calc view`.
pub fn view(a: &ViewArgs) -> CliResult<Report> {
    let rf = a.rig.load()?;
    let rig = &rf.rig;
    let c = &calc::crystal_at(&a.crystal, &a.sample)?;
    let (_, face) = calc::face_of(c, &a.face)?;
    let gun = a.gun.at_face(c, &face)?;
    let e = gun.kinetic_ev()?;
    let tilt = check_angle(a.tilt, "tilt", TILT_MAX_DEG)?;
    let azimuth = check_angle(a.azimuth, "azimuth", 360.0)?;
    let arm = check_angle(a.arm, "arm", 360.0)?;
    let elevation = check_angle(a.elevation, "elevation", 90.0)?;
    if rig.elevation.is_none() && elevation != 0.0 {
        return Err(no_elevation_axis(elevation));
    }
    let acceptance = match a.acceptance {
        None => rig.acceptance_deg,
        Some(x) if x.is_finite() && x > 0.0 && x <= 90.0 => x,
        Some(x) => {
            return Err(CliError::new(format!(
                "--acceptance {x}: give a half-angle in degrees above 0, up to 90"
            )))
        }
    };
    let inc = Incidence::new(e, tilt, azimuth).ctx("incidence")?;
    let ov = overlayer_of(&a.overlayer, &face)?;
    let (list, l, fractional) = match &ov {
        None => {
            let mut buf = vec![InView::EMPTY; MAX_BEAMS];
            let l = goniometer::beams_in_view(&face, &inc, arm, elevation, acceptance, &mut buf)
                .ctx("beams in view")?;
            (view_list(&buf[..l.stored]), l, None)
        }
        Some(ov) => {
            let mut buf = vec![SuperInView::EMPTY; MAX_BEAMS];
            let l = goniometer::super_beams_in_view(
                &face,
                &ov.supers(),
                &inc,
                arm,
                elevation,
                acceptance,
                &mut buf,
            )
            .ctx("beams in view")?;
            let seen = &buf[..l.stored];
            let n = seen.iter().filter(|v| !v.beam.integer).count();
            (super_view_list(ov, seen), l, Some(n))
        }
    };
    let arm_status = match rig.arm.check_angle(arm) {
        Ok(()) => "allowed".to_string(),
        Err(er) => status_word(er),
    };
    let mut r = Report::default();
    crystal_face_fields(&mut r, c, &face);
    gun.fields(&mut r, e);
    r.field("tilt_deg", "tilt (deg)", f(tilt, 3));
    r.field("azimuth_deg", "azimuth (deg)", f(azimuth, 3));
    r.field("arm_deg", "arm (deg)", f(arm, 4));
    r.field("elevation_deg", "elevation (deg)", f(elevation, 4));
    r.field(
        "acceptance_deg",
        "acceptance half-angle (deg)",
        f(acceptance, 3),
    );
    rig_field(&mut r, &rf);
    r.field("arm_status", "arm position on this rig", text(arm_status));
    if let Some(ov) = &ov {
        ov.fields(&mut r, &face);
    }
    r.field("count", "beams listed", Value::Int(l.stored as i64));
    if let Some(n) = fractional {
        r.field("fractional", "fractional-order beams", Value::Int(n as i64));
    }
    r.field(
        "truncated",
        "more beams in view than listed",
        Value::Bool(l.truncated),
    );
    if l.truncated {
        r.notes.push(format!(
            "More than {MAX_BEAMS} beams lie within the acceptance; the {MAX_BEAMS} nearest are listed."
        ));
    }
    r.list = Some(list);
    Ok(r)
}

/// The substrate's beams in view.
fn view_list(seen: &[InView]) -> List {
    List {
        key: "beams",
        columns: vec![
            col("h", "h"),
            col("k", "k"),
            col("offset_deg", "offset (deg)"),
            col("arm_deg", "arm (deg)"),
            col("elevation_deg", "elevation (deg)"),
            col("exit_deg", "exit (deg)"),
            col("exit_azimuth_deg", "exit azimuth (deg)"),
        ],
        rows: seen
            .iter()
            .map(|b| {
                vec![
                    Value::Int(b.beam.rod[0].into()),
                    Value::Int(b.beam.rod[1].into()),
                    f(b.offset_deg, 4),
                    f(b.arm_deg, 4),
                    f(b.elevation_deg, 4),
                    f(b.beam.exit_deg, 4),
                    f(b.beam.exit_azimuth_deg, 3),
                ]
            })
            .collect(),
    }
}

/// The superstructure's beams in view, labelled as `calc beams --overlayer` labels them.
fn super_view_list(ov: &Overlayer, seen: &[SuperInView]) -> List {
    let mut columns = super_columns();
    columns.extend([
        col("offset_deg", "offset (deg)"),
        col("arm_deg", "arm (deg)"),
        col("elevation_deg", "elevation (deg)"),
        col("exit_deg", "exit (deg)"),
        col("exit_azimuth_deg", "exit azimuth (deg)"),
    ]);
    List {
        key: "beams",
        columns,
        rows: seen
            .iter()
            .map(|v| {
                let mut row = super_cells(ov, &v.beam);
                row.extend([
                    f(v.offset_deg, 4),
                    f(v.arm_deg, 4),
                    f(v.elevation_deg, 4),
                    f(v.beam.beam.exit_deg, 4),
                    f(v.beam.beam.exit_azimuth_deg, 3),
                ]);
                row
            })
            .collect(),
    }
}

/// `--overlayer TEXT [--domains]` on the face, if given.
fn overlayer_of(o: &OverlayerFlags, face: &Face) -> CliResult<Option<Overlayer>> {
    o.overlayer
        .as_deref()
        .map(|t| Overlayer::parse(t, o.domains, face))
        .transpose()
}

/// The label columns of a superstructure beam (as `calc beams --overlayer`).
fn super_columns() -> Vec<crate::output::Column> {
    vec![
        col("hk", "h,k"),
        col("h", "h"),
        col("k", "k"),
        col("integer_order", "integer order"),
        col("domains", "domains"),
    ]
}

/// A superstructure beam's label cells: `h,k` exact, h and k, integer order, domains.
fn super_cells(ov: &Overlayer, b: &SuperBeam) -> Vec<Value> {
    vec![
        text(b.pos.to_string()),
        calc::frac_component(&b.pos, 0),
        calc::frac_component(&b.pos, 1),
        Value::Bool(b.integer),
        ov.domain_list(b.domains),
    ]
}
