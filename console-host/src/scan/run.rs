//! The scan itself: the controller prepared once (rig, settings, plan), then point by
//! point set, move, wait, read, write — and on every way out a last line in the file
//! that says how the run ended.

use super::csv::{self, Row, ScanFile, Status, Writer};
use super::progress::Progress;
use super::{plan_difference, Config};
use crate::error::{CliError, CliResult};
use crate::link::session::{reply_field, LinkError, Reply, Session};
use crate::link::wire::Wire;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant};

/// Set by Ctrl-C (SIGINT): the scan stops at once and ends its file.
static INTERRUPTED: AtomicBool = AtomicBool::new(false);

/// Longest wait for the axes to arrive at one point, s.
pub const ARRIVAL_TIMEOUT_S: u64 = 300;

/// Move refusals after which the point gets status `refused` and the scan goes on:
/// the target or path is outside the limits or inside a zone, out of the counter's
/// reach, or arrives too coarsely (err 301–306, 322, 323). Every other refusal — motion
/// disabled, interlock open, axis moving, position unknown — stops the scan.
const POINT_REFUSALS: [&str; 8] = ["301", "302", "303", "304", "305", "306", "322", "323"];

/// How a run went, for the summary (`--format json`, docs/JSON.md).
#[derive(Clone, Debug, PartialEq)]
pub struct Summary {
    /// The file.
    pub file: String,
    /// The plan's kind.
    pub kind: String,
    /// Points in the plan.
    pub points: u32,
    /// Rows in the file now (every point at most once).
    pub rows: u32,
    /// Rows measured (status `ok` or `off-target`).
    pub measured: u32,
    /// How the run ended: `complete`, `interrupted`, `device-reset`, `link-lost`, `stopped`.
    pub status: String,
    /// Seconds this run took.
    pub seconds: f64,
    /// The index this run started at, when it resumed a file.
    pub resumed_from: Option<u32>,
}

impl Summary {
    /// The summary as JSON.
    pub fn json(&self) -> serde_json::Value {
        serde_json::json!({
            "file": self.file,
            "kind": self.kind,
            "status": self.status,
            "points": self.points,
            "rows": self.rows,
            "measured": self.measured,
            "seconds": (self.seconds * 1000.0).round() / 1000.0,
            "resumed_from": self.resumed_from,
        })
    }
}

/// Why a run stopped before its last point.
enum Halt {
    Interrupted,
    Reset(String),
    Link(String),
    Device(String),
}

/// The axes, in the order of `pos` and the file's columns.
const AXES: [&str; 4] = ["arm", "elevation", "tilt", "azimuth"];

impl Halt {
    fn word(&self) -> &'static str {
        match self {
            Halt::Interrupted => "interrupted",
            Halt::Reset(_) => "device-reset",
            Halt::Link(_) => "link-lost",
            Halt::Device(_) => "stopped",
        }
    }
}

type Dev = Session<Box<dyn Wire>>;

fn halt_of(e: LinkError) -> Halt {
    match e {
        LinkError::DeviceReset { .. } => Halt::Reset(e.to_string()),
        _ if INTERRUPTED.load(Ordering::SeqCst) => Halt::Interrupted,
        _ => Halt::Link(e.to_string()),
    }
}

fn ask(s: &mut Dev, req: &str) -> Result<Reply, Halt> {
    s.request(req).map_err(halt_of)
}

fn ask_ok(s: &mut Dev, req: &str) -> Result<Reply, Halt> {
    let r = ask(s, req)?;
    if r.ok() {
        Ok(r)
    } else if INTERRUPTED.load(Ordering::SeqCst) {
        Err(Halt::Interrupted)
    } else {
        Err(Halt::Device(format!(
            "`{req}`: the controller answered {}",
            r.last
        )))
    }
}

fn interrupted() -> Result<(), Halt> {
    if INTERRUPTED.load(Ordering::SeqCst) {
        Err(Halt::Interrupted)
    } else {
        Ok(())
    }
}

fn num(line: &str, key: &str) -> Option<f64> {
    reply_field(line, key).and_then(|v| v.parse().ok())
}

fn int(line: &str, key: &str) -> Option<i64> {
    reply_field(line, key).and_then(|v| v.parse().ok())
}

/// One point of the controller's plan, as it streamed it.
#[derive(Clone, Debug)]
struct Point {
    index: u32,
    /// `nominal=` as sent (track, iv).
    nominal: Option<String>,
    /// `arm=` as sent (sweep: the angle to move to).
    arm: Option<String>,
    arm_steps: Option<i64>,
    /// The words from `err=` on, for a point the plan could not reach.
    unreachable: Option<String>,
    peak_ev: Option<f64>,
    view: String,
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
struct Prepared {
    /// `pos` before the first point: where the plan starts.
    pos: String,
    hello: String,
    get: String,
    dump: Vec<String>,
    points: Vec<Point>,
    plan_last: String,
}

fn refused(what: &str, r: &Reply) -> CliError {
    CliError::new(format!("scan: the controller refused `{what}`: {}", r.last))
}

fn link_err(e: LinkError) -> CliError {
    CliError::new(format!("scan: {e}"))
}

/// Rig, settings, declared homes, then what the controller holds and its plan.
fn prepare(s: &mut Dev, cfg: &Config) -> CliResult<Prepared> {
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
        get: get.last,
        dump,
        points: points_of(&plan.items),
        plan_last: plan.last,
    })
}

/// The header of a new file.
fn header(cfg: &Config, s: &mut Dev, p: &Prepared, started: f64) -> Vec<(String, String)> {
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
fn check_resume(f: &ScanFile, p: &Prepared) -> Result<(), String> {
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

/// Runs the scan. The summary comes back also when the run stopped early, with the
/// error saying why and how to resume.
pub fn run(cfg: &Config) -> (Option<Summary>, Option<CliError>) {
    match run_inner(cfg) {
        Ok((s, e)) => (Some(s), e),
        Err(e) => (None, Some(e)),
    }
}

fn run_inner(cfg: &Config) -> CliResult<(Summary, Option<CliError>)> {
    let t0 = Instant::now();
    let started = csv::now_unix_s();
    let what = |e: String| CliError::new(format!("scan --resume {}: {e}", cfg.out.display()));
    let prior = if cfg.resume {
        let f = ScanFile::read(&cfg.out)?;
        if let Some(d) = plan_difference(&f, cfg) {
            return Err(what(d));
        }
        if f.last_end() == Some("complete") {
            return Err(what("the scan in it is complete; nothing to resume".into()));
        }
        Some(f)
    } else {
        if cfg.out.exists() && !cfg.force {
            return Err(CliError::new(format!(
                "--out {}: the file exists; give --resume {} to continue that scan, --force to overwrite it, or another --out",
                cfg.out.display(),
                cfg.out.display()
            )));
        }
        None
    };
    let mut s = crate::link::connect(&cfg.link)?;
    {
        let flag = s.stop_flag.clone();
        // Once per process; a second scan in the same process keeps the first handler.
        let _ = ctrlc::set_handler(move || {
            INTERRUPTED.store(true, Ordering::SeqCst);
            flag.store(true, Ordering::SeqCst);
        });
    }
    let prep = prepare(&mut s, cfg)?;
    let total = prep.points.len() as u32;
    let (mut w, next, mut measured) = match &prior {
        Some(f) => {
            check_resume(f, &prep).map_err(what)?;
            let mut w = Writer::append(&cfg.out, f.complete_len)?;
            w.event(&format!(
                "resume at={} link={} from_index={} dropped_torn_row={}",
                csv::iso_utc(started),
                cfg.link_text,
                f.rows.len(),
                u8::from(f.torn)
            ))?;
            let m = f
                .rows
                .iter()
                .filter(|r| r.status == Status::Ok.word() || r.status == Status::OffTarget.word())
                .count() as u32;
            (w, f.rows.len() as u32, m)
        }
        None => {
            let h = header(cfg, &mut s, &prep, started);
            (Writer::create(&cfg.out, &h, cfg.force)?, 0, 0)
        }
    };
    if !cfg.json {
        eprintln!("{}", crate::cli::CAUTIONS);
    }
    eprintln!(
        "mwctl scan: {} points ({} to go) on {}, rows to {}; Ctrl-C stops the axes and keeps every row",
        total,
        total.saturating_sub(next),
        s.wire().describe(),
        cfg.out.display()
    );
    let show = cfg.progress || std::io::IsTerminal::is_terminal(&std::io::stderr());
    let mut bar = Progress::new(show, total, next);
    let mut rows = next;
    let mut halt: Option<Halt> = None;
    match start(&mut s, cfg, &prep) {
        Ok(()) => {
            for p in prep.points.iter().skip(next as usize) {
                bar.update(rows);
                match measure(&mut s, cfg, &prep, p) {
                    Ok(row) => {
                        w.row(&row)?;
                        rows += 1;
                        if row.status == Status::Ok.word() || row.status == Status::OffTarget.word()
                        {
                            measured += 1;
                        }
                    }
                    Err(h) => {
                        halt = Some(h);
                        break;
                    }
                }
            }
        }
        Err(h) => halt = Some(h),
    }
    bar.update(rows);
    bar.finish();
    // Stop first, whatever happened, where the controller can still hear it.
    let mut stopped = "no";
    if !matches!(halt, Some(Halt::Link(_) | Halt::Reset(_))) {
        s.stop_flag.store(false, Ordering::SeqCst);
        let req = if halt.is_some() { "stop" } else { "disable" };
        if s.request(req).is_ok_and(|r| r.ok()) {
            stopped = "yes";
        }
    }
    let status = halt.as_ref().map_or("complete", Halt::word);
    w.event(&format!(
        "end status={status} rows={rows} points={total} measured={measured} at={} motion_off={stopped}",
        csv::iso_utc(csv::now_unix_s())
    ))?;
    let summary = Summary {
        file: cfg.out.display().to_string(),
        kind: cfg.kind.clone(),
        points: total,
        rows,
        measured,
        status: status.into(),
        seconds: t0.elapsed().as_secs_f64(),
        resumed_from: prior.as_ref().map(|_| next),
    };
    let resume = cfg.resume_command();
    let err = halt.map(|h| {
        let kept = format!("{rows} of {total} points are in {}", cfg.out.display());
        CliError::new(match h {
            Halt::Interrupted => format!(
                "scan interrupted (Ctrl-C): stop sent, motion stopped; {kept}; to go on: {resume}"
            ),
            Halt::Reset(why) => format!(
                "scan stopped: {why}; no row was written for a point it did not measure; {kept}; home the axes (mwctl talk: home name=AXIS at=DEG, or --declare-home if they stand at home), then: {resume}"
            ),
            Halt::Link(why) => format!(
                "scan stopped, link lost: {why}; {kept}; once the link is back: {resume}"
            ),
            Halt::Device(why) => format!(
                "scan stopped: {why}; {kept}; clear the cause (status, pos), then: {resume}"
            ),
        })
    });
    Ok((summary, err))
}

/// Motion on, and the axes the plan does not move brought to the settings it assumes:
/// for a sweep the tilt (and a fixed azimuth) axis; `aim` solutions carry them for the
/// tracks.
fn start(s: &mut Dev, cfg: &Config, p: &Prepared) -> Result<(), Halt> {
    ask_ok(s, "enable")?;
    if cfg.kind == "sweep" {
        let mut req = format!("move tilt={}", reply_field(&p.get, "tilt").unwrap_or("0"));
        if let Some(az) = reply_field(&p.get, "azimuth").filter(|a| *a != "free") {
            req.push_str(&format!(" azimuth={az}"));
        }
        match move_to(s, &req, None)? {
            Moved::Done => {}
            Moved::Refused(l) => {
                return Err(Halt::Device(format!(
                    "`{req}` (to the sample tilt the sweep assumes): the controller answered {l}"
                )))
            }
        }
        wait_arrival(s)?;
    }
    Ok(())
}

enum Moved {
    Done,
    Refused(String),
}

/// Tries of one move whose reply keeps getting lost.
const MOVE_TRIES: u32 = 3;

/// Sends a move. When its reply is lost (it may have run), asks where the axes are:
/// at `arm_steps` it ran; otherwise it did not, and goes again (an absolute target: a
/// second move to it is not a second motion), at most [`MOVE_TRIES`] times in all.
fn move_to(s: &mut Dev, req: &str, arm_steps: Option<i64>) -> Result<Moved, Halt> {
    for _ in 1..MOVE_TRIES {
        match s.request(req) {
            Ok(r) if r.ok() => return Ok(Moved::Done),
            Ok(_) if INTERRUPTED.load(Ordering::SeqCst) => return Err(Halt::Interrupted),
            Ok(r) => return Ok(Moved::Refused(r.last)),
            Err(LinkError::Unsure { .. }) if !INTERRUPTED.load(Ordering::SeqCst) => {}
            Err(e) => return Err(halt_of(e)),
        }
        wait_arrival(s)?;
        let pos = ask_ok(s, "pos")?.last;
        if arm_steps.is_some() && int(&pos, "arm_steps") == arm_steps {
            return Ok(Moved::Done);
        }
    }
    match s.request(req) {
        Ok(r) if r.ok() => Ok(Moved::Done),
        Ok(r) => Ok(Moved::Refused(r.last)),
        Err(e) => Err(halt_of(e)),
    }
}

/// Polls `status` until no axis moves (each poll also checks the session's mark: a
/// controller that restarted is noticed here).
fn wait_arrival(s: &mut Dev) -> Result<(), Halt> {
    let t = Instant::now();
    loop {
        let st = ask_ok(s, "status")?.last;
        if let Some(trip) = reply_field(&st, "trip") {
            return Err(Halt::Device(format!(
                "the controller stopped motion on its own (trip={trip}; status: {st})"
            )));
        }
        if reply_field(&st, "moving") == Some("0") {
            return Ok(());
        }
        if t.elapsed() > Duration::from_secs(ARRIVAL_TIMEOUT_S) {
            return Err(Halt::Device(format!(
                "the axes still move after {ARRIVAL_TIMEOUT_S} s (status: {st})"
            )));
        }
        interrupted()?;
        std::thread::sleep(Duration::from_millis(20));
    }
}

/// Waits `s` seconds, in slices, so that Ctrl-C is not kept waiting.
fn dwell(s: f64) -> Result<(), Halt> {
    let end = Instant::now() + Duration::from_secs_f64(s);
    while Instant::now() < end {
        interrupted()?;
        std::thread::sleep((end - Instant::now()).min(Duration::from_millis(20)));
    }
    interrupted()
}

/// One point: its row, or why the scan stops. A row is made only for a point the
/// controller reached (or refused, or the plan could not reach); a point interrupted
/// or lost midway has no row, and a resumed scan measures it again.
fn measure(s: &mut Dev, cfg: &Config, p: &Prepared, pt: &Point) -> Result<Row, Halt> {
    interrupted()?;
    let mut row = Row {
        index: pt.index,
        nominal_ev: pt.nominal.as_deref().and_then(|v| v.parse().ok()),
        peak_ev: pt.peak_ev,
        view: pt.view.clone(),
        time_unix_s: csv::now_unix_s(),
        ..Row::default()
    };
    if let Some(why) = &pt.unreachable {
        row.status = Status::Unreachable.word().into();
        row.note = why.clone();
        return Ok(row);
    }
    let req = if cfg.kind == "sweep" {
        row.nominal_ev = num(&p.get, "energy");
        row.sample_ev = num(&p.get, "kinetic");
        format!("move arm={}", pt.arm.as_deref().unwrap_or("0"))
    } else {
        let e = pt.nominal.as_deref().unwrap_or("0");
        ask_ok(s, &format!("set energy={e}"))?;
        row.sample_ev = num(&ask_ok(s, "get kinetic")?.last, "kinetic");
        let aim_req = match &cfg.branch {
            Some(b) => format!("aim branch={b}"),
            None => "aim".into(),
        };
        let aim = ask(s, &aim_req)?;
        interrupted()?;
        let sol = aim
            .items
            .iter()
            .find(|l| int(l, "arm_steps") == pt.arm_steps)
            .and_then(|l| reply_field(l, "sol"))
            .map(str::to_string);
        match (aim.ok(), sol) {
            (true, Some(n)) => format!("move sol={n}"),
            (ok, _) => {
                row.status = Status::Refused.word().into();
                row.note = if ok {
                    format!(
                        "aim gave no solution at the planned arm_steps={:?}",
                        pt.arm_steps
                    )
                } else {
                    aim.last.clone()
                };
                return Ok(row);
            }
        }
    };
    match move_to(s, &req, pt.arm_steps)? {
        Moved::Done => {}
        Moved::Refused(line) => {
            let code = line.split_whitespace().nth(1).unwrap_or("");
            if line.starts_with("err") && POINT_REFUSALS.contains(&code) {
                row.status = Status::Refused.word().into();
                row.note = line;
                return Ok(row);
            }
            return Err(Halt::Device(format!(
                "`{req}`: the controller answered {line}"
            )));
        }
    }
    wait_arrival(s)?;
    dwell(cfg.dwell_s)?;
    let pos = ask_ok(s, "pos")?.last;
    if let Some(u) = reply_field(&pos, "unknown") {
        return Err(Halt::Device(format!(
            "the controller does not know where {u} stand(s) (pos: {pos})"
        )));
    }
    for (i, axis) in AXES.iter().enumerate() {
        row.angles_deg[i] = num(&pos, axis);
        row.steps[i] = int(&pos, &format!("{axis}_steps"));
    }
    interrupted()?;
    row.current = num(&ask_ok(s, "read")?.last, "current");
    row.time_unix_s = csv::now_unix_s();
    // The reading is kept only if the controller is still the one the session
    // prepared: a restart after `pos` would make the row's position a guess.
    s.check_alive().map_err(halt_of)?;
    if row.steps[0] == pt.arm_steps {
        row.status = Status::Ok.word().into();
    } else {
        row.status = Status::OffTarget.word().into();
        row.note = format!("planned arm_steps={:?}", pt.arm_steps);
    }
    Ok(row)
}
