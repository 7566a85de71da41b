//! Commands that reach a controller over a link ([`crate::link`]): `mwctl run SCRIPT`,
//! `mwctl talk` on links other than the in-process simulator, and `mwctl serve --pty`.

use crate::error::{CliError, CliResult};
use crate::link::session::{Event, LinkError, Reply, Session};
use crate::link::wire::Wire;
use crate::link::{self, LinkSpec};
use serialport::SerialPort as _;
use std::io::{BufRead, Write};
use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};
use std::sync::{mpsc, Arc};

/// How a script or session went.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Tally {
    /// Requests sent.
    pub requests: u64,
    /// Requests answered `err`.
    pub failed: u64,
}

/// The request on a script line: `None` for blank lines and `#` comments.
fn request_of(line: &str) -> Option<&str> {
    let t = line.trim();
    (!t.is_empty() && !t.starts_with('#')).then_some(t)
}

/// Prints one exchange: `> request`, then every reply line as `< line` (raw), or one
/// JSON object per reply line with the request beside it.
fn print_reply(
    out: &mut dyn Write,
    request: &str,
    reply: &Reply,
    json: bool,
) -> std::io::Result<()> {
    if json {
        for l in reply.items.iter().chain(std::iter::once(&reply.last)) {
            let mut v = crate::talk::reply_json(l);
            if let Some(o) = v.as_object_mut() {
                o.insert("request".into(), serde_json::Value::from(request));
            }
            writeln!(out, "{v}")?;
        }
    } else {
        writeln!(out, "> {request}")?;
        for l in reply.items.iter().chain(std::iter::once(&reply.last)) {
            writeln!(out, "< {l}")?;
        }
    }
    out.flush()
}

/// Sends each request of `lines` in order over `session`, echoing every reply with its
/// request; stops at the first `err` unless `keep_going`.
pub fn run_lines<W: Wire>(
    session: &mut Session<W>,
    lines: impl Iterator<Item = String>,
    keep_going: bool,
    json: bool,
    out: &mut dyn Write,
) -> CliResult<Tally> {
    let mut t = Tally::default();
    for (n, line) in lines.enumerate() {
        let Some(req) = request_of(&line) else {
            continue;
        };
        if req.len() > matterwave_core::console::line::MAX_LINE {
            return Err(CliError::new(format!(
                "line {}: request longer than the controller's {} bytes",
                n + 1,
                matterwave_core::console::line::MAX_LINE
            )));
        }
        t.requests += 1;
        let reply = session
            .request(req)
            .map_err(|e| CliError::new(format!("line {}: {e}", n + 1)))?;
        print_reply(out, req, &reply, json).map_err(|e| CliError::new(format!("output: {e}")))?;
        if !reply.ok() {
            t.failed += 1;
            if !keep_going {
                break;
            }
        }
    }
    Ok(t)
}

/// `mwctl run SCRIPT`: the script's requests over `spec`; exit status 2 when any
/// request was answered `err` (the first one ends the run unless `keep_going`).
pub fn run_script(
    path: &std::path::Path,
    spec: &LinkSpec,
    keep_going: bool,
    json: bool,
    out: &mut dyn Write,
) -> CliResult<()> {
    let file = std::fs::File::open(path).map_err(|e| {
        CliError::new(format!(
            "run {}: {e}; give a text file with one request per line",
            path.display()
        ))
    })?;
    let mut lines = Vec::new();
    for (i, l) in std::io::BufReader::new(file).lines().enumerate() {
        let l = l.map_err(|e| {
            CliError::new(format!(
                "run {}: line {}: {e} (requests are ASCII text)",
                path.display(),
                i + 1
            ))
        })?;
        lines.push(l);
    }
    let mut s = link::connect(spec)?;
    let t = run_lines(&mut s, lines.into_iter(), keep_going, json, out)?;
    finish(&mut s, t, "run")
}

/// After a session: the device must not have restarted under it, and any `err` makes
/// the exit status 2.
fn finish<W: Wire>(s: &mut Session<W>, t: Tally, what: &str) -> CliResult<()> {
    s.check_alive()
        .map_err(|e: LinkError| CliError::new(format!("{what}: {e}")))?;
    if t.failed > 0 {
        return Err(CliError::new(format!(
            "{what}: {} of {} requests answered err",
            t.failed, t.requests
        )));
    }
    Ok(())
}

/// `mwctl talk` over a link (and on a terminal, over every link): with `rig`, the
/// rig's requests first; then, `interactive`, the line editor ([`crate::repl`]), else
/// one request per input line, its reply printed as it completes (streamed items as
/// they come), a `stop` sent at once while a request runs; `quit`/`exit` end it.
pub fn talk(
    spec: &LinkSpec,
    json: bool,
    interactive: bool,
    rig: Option<&crate::rig::RigFile>,
) -> CliResult<()> {
    let mut s = link::connect(spec)?;
    if let Some(rf) = rig {
        // The same requests as on the simulator (`mwctl rig show --console`), each of
        // which the controller must accept (it refuses them while motion is enabled).
        let lines = crate::rig::console_requests(rf);
        for line in &lines {
            let r = s
                .request(line)
                .map_err(|e| CliError::new(format!("--rig: {e}")))?;
            if !r.ok() {
                return Err(CliError::new(format!(
                    "--rig: the controller refused `{line}`: {}",
                    r.last
                )));
            }
        }
        eprintln!(
            "mwctl: rig loaded into the controller with {} requests; declare where an axis stands with home name=AXIS before moving it",
            lines.len()
        );
    }
    if interactive {
        let name = s.wire().describe();
        let failed = crate::repl::run(&mut s, &name)?;
        let t = Tally {
            requests: 0,
            failed,
        };
        return finish(&mut s, t, "talk");
    }
    // Requests come from a reader thread, so that a `stop` arriving while a request
    // still runs (and nothing is queued before it) goes out at once, as on the
    // in-process simulator.
    let in_flight = Arc::new(AtomicBool::new(false));
    let queued = Arc::new(AtomicUsize::new(0));
    let (tx, rx) = mpsc::channel::<std::io::Result<String>>();
    {
        let (in_flight, queued, stop) = (in_flight.clone(), queued.clone(), s.stop_flag.clone());
        std::thread::spawn(move || {
            for line in std::io::stdin().lock().lines() {
                let jump = matches!(&line, Ok(l) if l.trim() == "stop")
                    && in_flight.load(Ordering::SeqCst)
                    && queued.load(Ordering::SeqCst) == 0;
                if jump {
                    stop.store(true, Ordering::SeqCst);
                    continue;
                }
                queued.fetch_add(1, Ordering::SeqCst);
                if tx.send(line).is_err() {
                    break;
                }
            }
        });
    }
    let mut out = std::io::stdout().lock();
    let mut t = Tally::default();
    for line in rx {
        queued.fetch_sub(1, Ordering::SeqCst);
        let line = line.map_err(|e| CliError::new(format!("reading requests: {e}")))?;
        let req = line.trim();
        if matches!(req, "quit" | "exit") {
            break;
        }
        if req.is_empty() {
            continue;
        }
        t.requests += 1;
        in_flight.store(true, Ordering::SeqCst);
        let reply = s.request_with(req, |ev| {
            if json {
                return;
            }
            let _ = match ev {
                Event::Item(item) => writeln!(out, "{item}"),
                // Not a reply line: the lines above it are asked for again.
                Event::Retry(why) => writeln!(out, "# mwctl: {why}; asking again"),
            };
        });
        in_flight.store(false, Ordering::SeqCst);
        let reply = reply.map_err(|e| CliError::new(format!("talk: {e}")))?;
        let stop_line = reply.stopped.clone();
        let lines: Vec<(&str, &String)> = reply
            .items
            .iter()
            .map(|l| (req, l))
            .chain(std::iter::once((req, &reply.last)))
            .chain(stop_line.iter().map(|l| ("stop", l)))
            .collect();
        if json {
            for (r, l) in lines {
                let mut v = crate::talk::reply_json(l);
                if let Some(o) = v.as_object_mut() {
                    o.insert("request".into(), serde_json::Value::from(r));
                }
                let _ = writeln!(out, "{v}");
            }
        } else {
            let _ = writeln!(out, "{}", reply.last);
            if let Some(l) = &stop_line {
                let _ = writeln!(out, "{l}");
            }
        }
        let _ = out.flush();
        t.failed += u64::from(!reply.ok());
        if stop_line.is_some() {
            t.requests += 1;
        }
    }
    finish(&mut s, t, "talk")
}

/// `mwctl serve --pty`: the simulated controller behind a pseudo-terminal. Prints the
/// device path on the first line, then serves until `for_s` seconds have passed (or
/// until interrupted), injecting the faults of `fault_specs` (`KIND:N`, see
/// [`link::device::Faults`]).
pub fn serve_pty(
    for_s: Option<f64>,
    baud: Option<u32>,
    fault_specs: &[String],
    json: bool,
    out: &mut dyn Write,
) -> CliResult<()> {
    let mut faults = link::device::Faults::default();
    for f in fault_specs {
        faults.add(f)?;
    }
    let (mut master, slave) = serialport::TTYPort::pair()
        .map_err(|e| CliError::new(format!("serve --pty: no pseudo-terminal: {e}")))?;
    let path = slave
        .name()
        .ok_or_else(|| CliError::new("serve --pty: the pseudo-terminal has no name"))?;
    let first = if json {
        serde_json::json!({ "device": path, "for_s": for_s, "baud": baud }).to_string()
    } else {
        path.clone()
    };
    writeln!(out, "{first}").map_err(|e| CliError::new(format!("output: {e}")))?;
    out.flush()
        .map_err(|e| CliError::new(format!("output: {e}")))?;
    let until = match for_s {
        Some(s) if s.is_finite() && s > 0.0 => {
            Some(std::time::Instant::now() + std::time::Duration::from_secs_f64(s))
        }
        Some(s) => {
            return Err(CliError::new(format!(
                "--for {s}: give a positive number of seconds"
            )))
        }
        None => None,
    };
    let mut console = link::device::sim_console()?;
    // The terminal side stays open here, so that clients may come and go.
    let _keep = slave;
    loop {
        match link::device::serve(&mut console, &mut master, until, baud, &faults) {
            Ok(()) => return Ok(()),
            // No client has the terminal open (EIO on Linux): wait for one.
            Err(e) if e.raw_os_error() == Some(5) => {
                std::thread::sleep(std::time::Duration::from_millis(20));
            }
            Err(e) => return Err(CliError::new(format!("serve --pty {path}: {e}"))),
        }
    }
}
