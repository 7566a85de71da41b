//! The scan itself: the controller prepared once (rig, settings, plan), then point by
//! point set, move, wait, read, write — and on every way out a last line in the file
//! that says how the run ended.

use super::csv::{self, Row, ScanFile, Status, Writer};
use super::prepare::{check_resume, header, int, num, prepare, Dev, Point, Prepared};
use super::progress::Progress;
use super::{plan_difference, Config};
use crate::error::{CliError, CliResult};
use crate::link::session::{reply_field, LinkError, Reply};
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
    /// How the run ended: `complete`, `interrupted`, `device-reset`, `link-lost`, `stopped`, `file-error`.
    pub status: String,
    /// Seconds this run took.
    pub seconds: f64,
    /// The index this run started at, when it resumed a file.
    pub resumed_from: Option<u32>,
    /// The picture drawn (`--plot`), when it was.
    pub plot: Option<String>,
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
            "plot": self.plot,
        })
    }
}

/// Why a run stopped before its last point.
enum Halt {
    Interrupted,
    Reset(String),
    Link(String),
    Device(String),
    /// The file could not be written (disk full, removed device).
    File(String),
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
            Halt::File(_) => "file-error",
        }
    }
}

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

/// Runs the scan. The summary comes back also when the run stopped early, with the
/// error saying why and how to resume.
pub fn run(cfg: &Config) -> (Option<Summary>, Option<CliError>) {
    run_on(None, cfg)
}

/// [`run`] on a session already open (the demo's, with its simulator set up), or, with
/// `None`, on a new one to `cfg.link`. The file's `link` header is `cfg.link_text`.
pub fn run_on(
    session: Option<&mut crate::link::session::Session<Box<dyn crate::link::wire::Wire>>>,
    cfg: &Config,
) -> (Option<Summary>, Option<CliError>) {
    let mut own = None;
    let s = match session {
        Some(s) => s,
        None => match crate::link::connect(&cfg.link) {
            Ok(s) => own.insert(s),
            Err(e) => return (None, Some(e)),
        },
    };
    match run_inner(s, cfg) {
        Ok((mut sum, e)) => {
            let Some(t) = &cfg.plot else {
                return (Some(sum), e);
            };
            match draw(cfg, t) {
                Ok(()) => {
                    sum.plot = Some(t.path.display().to_string());
                    (Some(sum), e)
                }
                // The scan's own error first (it says how to resume); the picture's after.
                Err(pe) => (
                    Some(sum),
                    Some(CliError::new(match e {
                        Some(e) => format!("{e}; and --plot: {pe}"),
                        None => format!(
                            "the scan ended, but its picture was not drawn: {pe} (draw it later: mwctl plot scan {} --out {})",
                            cfg.out.display(),
                            t.path.display()
                        ),
                    })),
                ),
            }
        }
        Err(e) => (None, Some(e)),
    }
}

/// `--plot`: the picture of the file as it stands, drawn by `mwctl plot scan`'s code.
fn draw(cfg: &Config, t: &crate::plot::Target) -> CliResult<()> {
    let rig = crate::gonio::RigArgs {
        rig: cfg.rig.as_ref().map(|(p, _)| std::path::PathBuf::from(p)),
    };
    let (p, _) = crate::plot::scan_file::plot_of(&cfg.out, &rig)?;
    crate::plot::write_scan(&p, t).map(|_| ())
}

/// The stop flag of the session a scan runs on, for the Ctrl-C handler (installed once
/// per process; each scan puts its own session's flag here).
static STOP_FLAG: std::sync::Mutex<Option<std::sync::Arc<AtomicBool>>> =
    std::sync::Mutex::new(None);

fn run_inner(s: &mut Dev, cfg: &Config) -> CliResult<(Summary, Option<CliError>)> {
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
    if let Ok(mut f) = STOP_FLAG.lock() {
        *f = Some(s.stop_flag.clone());
    }
    // Once per process (a second call is refused, and the first handler serves).
    let _ = ctrlc::set_handler(|| {
        INTERRUPTED.store(true, Ordering::SeqCst);
        if let Ok(Some(flag)) = STOP_FLAG.lock().as_deref() {
            flag.store(true, Ordering::SeqCst);
        }
    });
    let prep = prepare(s, cfg)?;
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
            let h = header(cfg, s, &prep, started);
            (Writer::create(&cfg.out, &h, cfg.force)?, 0, 0)
        }
    };
    // On stderr, in every format: the scan moves hardware.
    eprintln!("{}", crate::cli::CAUTIONS);
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
    match start(s, cfg, &prep) {
        Ok(()) => {
            for p in prep.points.iter().skip(next as usize) {
                bar.update(rows);
                match measure(s, cfg, &prep, p) {
                    Ok(row) => {
                        if let Err(e) = w.row(&row) {
                            halt = Some(Halt::File(e.message));
                            break;
                        }
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
    let end = w.event(&format!(
        "end status={status} rows={rows} points={total} measured={measured} at={} motion_off={stopped}",
        csv::iso_utc(csv::now_unix_s())
    ));
    // A file that cannot be written is the error to report, not its end line.
    if !matches!(halt, Some(Halt::File(_))) {
        end?;
    }
    let summary = Summary {
        file: cfg.out.display().to_string(),
        kind: cfg.kind.clone(),
        points: total,
        rows,
        measured,
        status: status.into(),
        seconds: t0.elapsed().as_secs_f64(),
        resumed_from: prior.as_ref().map(|_| next),
        plot: None,
    };
    let resume = cfg.resume_command();
    let err = halt.map(|h| {
        let kept = format!("{rows} of {total} points are in {}", cfg.out.display());
        CliError::new(match h {
            Halt::Interrupted if stopped == "yes" => format!(
                "scan interrupted (Ctrl-C): stop sent and answered, motion stopped; {kept}; to go on: {resume}"
            ),
            Halt::Interrupted => format!(
                "scan interrupted (Ctrl-C): stop sent but not answered — check that the axes stopped; {kept}; to go on: {resume}"
            ),
            Halt::File(why) => format!(
                "scan stopped, the file cannot be written: {why}; axes stopped: {stopped}; to go on once there is room: {resume}"
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
            "the controller does not know where these axes stand: {u} (pos: {pos})"
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
