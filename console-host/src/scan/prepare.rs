//! Preparing the controller for a scan (rig, settings, the plan), the file's header,
//! and the check that a resumed file is the scan the controller would run now.

use super::csv::{self, ScanFile, Status};
use super::Config;
use crate::error::{CliError, CliResult};
use crate::link::session::{reply_field, LinkError, Reply, Session};
use crate::link::wire::Wire;

/// A session over any link.
pub(super) type Dev = Session<Box<dyn Wire>>;

pub(super) fn num(line: &str, key: &str) -> Option<f64> {
    reply_field(line, key).and_then(|v| v.parse().ok())
}

pub(super) fn int(line: &str, key: &str) -> Option<i64> {
    reply_field(line, key).and_then(|v| v.parse().ok())
}

/// One point of the controller's plan, as it streamed it.
#[derive(Clone, Debug)]
pub(super) struct Point {
    pub(super) index: u32,
    /// `nominal=` as sent (track, iv).
    pub(super) nominal: Option<String>,
    /// `arm=` as sent (sweep: the angle to move to).
    pub(super) arm: Option<String>,
    pub(super) arm_steps: Option<i64>,
    /// The words from `err=` on, for a point the plan could not reach.
    pub(super) unreachable: Option<String>,
    pub(super) peak_ev: Option<f64>,
    pub(super) view: String,
}

fn points_of(items: &[String]) -> Vec<Point> {
    items
        .iter()
        .enumerate()
        .map(|(i, l)| {
            let unreachable = l.split_once("err=").map(|(_, rest)| format!("err={rest}"));
            let view = match (reply_field(l, "h"), reply_field(l, "k")) {
                (Some(h), Some(k)) => format!("{h};{k}"),
                _ => String::new(),
            };
            Point {
                index: int(l, "i")
                    .and_then(|v| u32::try_from(v).ok())
                    .unwrap_or(i as u32),
                nominal: reply_field(l, "nominal").map(str::to_string),
                arm: reply_field(l, "arm").map(str::to_string),
                arm_steps: int(l, "arm_steps"),
                unreachable,
                peak_ev: num(l, "peak"),
                view,
            }
        })
        .collect()
}

/// What the controller said while being prepared.
pub(super) struct Prepared {
    /// `pos` before the first point: where the plan starts.
    pub(super) pos: String,
    pub(super) hello: String,
    pub(super) get: String,
    pub(super) dump: Vec<String>,
    pub(super) points: Vec<Point>,
    pub(super) plan_last: String,
}

fn refused(what: &str, r: &Reply) -> CliError {
    CliError::new(format!("scan: the controller refused `{what}`: {}", r.last))
}

fn link_err(e: LinkError) -> CliError {
    CliError::new(format!("scan: {e}"))
}

/// Rig, settings, declared homes, then what the controller holds and its plan.
pub(super) fn prepare(s: &mut Dev, cfg: &Config) -> CliResult<Prepared> {
    let hello = s.request("hello").map_err(link_err)?.last;
    // The configuration changes only at rest.
    let r = s.request("disable").map_err(link_err)?;
    if !r.ok() {
        return Err(refused("disable", &r));
    }
    if let Some((path, lines)) = &cfg.rig {
        for l in lines {
            let r = s.request(l).map_err(link_err)?;
            if !r.ok() {
                return Err(CliError::new(format!(
                    "scan --rig {path}: the controller refused `{l}`: {}",
                    r.last
                )));
            }
        }
    }
    let mut set: Vec<String> = cfg.sets.clone();
    if let Some(b) = &cfg.beam {
        set.push(format!("beam={b}"));
    }
    if !set.is_empty() {
        let req = format!("set {}", set.join(" "));
        let r = s.request(&req).map_err(link_err)?;
        if !r.ok() {
            return Err(CliError::new(format!(
                "scan --set/--beam: the controller refused `{req}`: {}",
                r.last
            )));
        }
    }
    if cfg.declare_home {
        let p = s.request("pos").map_err(link_err)?.last;
        for axis in reply_field(&p, "unknown").unwrap_or("").split(',') {
            if axis.is_empty() {
                continue;
            }
            let req = format!("home name={axis}");
            let r = s.request(&req).map_err(link_err)?;
            if !r.ok() {
                return Err(refused(&req, &r));
            }
        }
    }
    if cfg.kind != "sweep" {
        // The scan sets the energy at every point: the configuration it records (and a
        // resumed scan compares) is the one at the plan's first energy.
        let req = format!("set energy={}", cfg.from);
        let r = s.request(&req).map_err(link_err)?;
        if !r.ok() {
            return Err(CliError::new(format!(
                "scan --from {}: the controller refused `{req}`: {}",
                cfg.from, r.last
            )));
        }
    }
    let pos = s.request("pos").map_err(link_err)?.last;
    if let Some(u) = reply_field(&pos, "unknown") {
        return Err(CliError::new(format!(
            "scan: the controller does not know where these axes stand: {u} (a rig's new calibration, or a restart): declare each with home name=AXIS at=DEG (mwctl talk), or give --declare-home if the axes stand at home; nothing moved"
        )));
    }
    let get = s.request("get").map_err(link_err)?;
    if !get.ok() {
        return Err(refused("get", &get));
    }
    let dump = crate::backup::dump(s)?;
    let req = cfg.plan_request();
    let plan = s.request(&req).map_err(link_err)?;
    if !plan.ok() {
        return Err(CliError::new(format!(
            "scan: the controller refused the plan `{req}`: {}",
            plan.last
        )));
    }
    Ok(Prepared {
        pos,
        hello,
        get: get.items_line(),
        dump,
        points: points_of(&plan.items),
        plan_last: plan.last,
    })
}

/// The header of a new file.
pub(super) fn header(
    cfg: &Config,
    s: &mut Dev,
    p: &Prepared,
    started: f64,
) -> Vec<(String, String)> {
    let mut h: Vec<(String, String)> = vec![
        ("mwctl_version".into(), env!("CARGO_PKG_VERSION").into()),
        ("started".into(), csv::iso_utc(started)),
        ("started_unix_s".into(), format!("{started:.3}")),
        ("link".into(), cfg.link_text.clone()),
        ("link_device".into(), s.wire().describe()),
    ];
    h.extend(cfg.plan_header());
    h.push((
        "rig".into(),
        cfg.rig
            .as_ref()
            .map_or("the controller's own".into(), |(p, _)| p.clone()),
    ));
    h.push((
        "declare_home".into(),
        u8::from(cfg.declare_home).to_string(),
    ));
    h.push(("device_hello".into(), p.hello.clone()));
    h.push(("device_get".into(), p.get.clone()));
    h.push(("start_pos".into(), p.pos.clone()));
    h.extend(
        p.dump
            .iter()
            .map(|l| ("device_dump".to_string(), l.clone())),
    );
    h.push(("plan_request".into(), cfg.plan_request()));
    h.push(("plan_points".into(), p.points.len().to_string()));
    for k in ["reachable", "estimate_s"] {
        h.push((
            format!("plan_{k}"),
            reply_field(&p.plan_last, k).unwrap_or("").into(),
        ));
    }
    h.push((
        "current_unit".into(),
        "the board's unit (nA on the simulator)".into(),
    ));
    h.push((
        "caution".into(),
        crate::cli::CAUTIONS
            .split('\n')
            .collect::<Vec<_>>()
            .join(" "),
    ));
    h
}

/// A resumed file against the controller as prepared now: the same configuration,
/// the same plan, and rows that are the plan's first points, each once.
pub(super) fn check_resume(f: &ScanFile, p: &Prepared) -> Result<(), String> {
    let had = f.all("device_dump");
    let now: Vec<&str> = p.dump.iter().map(String::as_str).collect();
    if had != now {
        let i = had.iter().zip(&now).position(|(a, b)| a != b);
        let (a, b) = match i {
            Some(i) => (had[i].to_string(), now[i].to_string()),
            None => (
                format!("{} lines", had.len()),
                format!("{} lines", now.len()),
            ),
        };
        return Err(format!(
            "the controller's configuration (dump) differs from the file's: the file has `{a}`, the controller `{b}`; put it back (mwctl restore, or the settings and rig of the interrupted scan) and resume again"
        ));
    }
    let n = f.get("plan_points").unwrap_or("");
    if n != p.points.len().to_string() {
        return Err(format!(
            "the plan has {} points, the file's had {n}",
            p.points.len()
        ));
    }
    for (i, row) in f.rows.iter().enumerate() {
        let Some(pt) = p.points.get(i) else {
            return Err(format!(
                "the file has more rows ({}) than the plan points",
                f.rows.len()
            ));
        };
        if row.index as usize != i {
            return Err(format!(
                "row {} has index {}: the rows are not the plan's points in order, each once; the file was changed by hand — start a new one",
                i + 1,
                row.index
            ));
        }
        let nominal = pt.nominal.as_deref().and_then(|v| v.parse::<f64>().ok());
        let same_steps = row.status != Status::Ok.word() || row.steps[0] == pt.arm_steps;
        if (pt.nominal.is_some() && row.nominal_ev != nominal) || !same_steps {
            return Err(format!(
                "point {i} of the plan now (nominal {:?}, arm_steps {:?}) is not the file's row {i} (nominal {:?}, arm_steps {:?}): the plan changed",
                pt.nominal, pt.arm_steps, row.nominal_ev, row.steps[0]
            ));
        }
    }
    Ok(())
}
