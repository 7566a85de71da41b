//! `mwctl talk`: a session with a controller console over a link.
//!
//! The `sim` link runs the core's own console in-process on simulated axes, a
//! switchable interlock (safe) and the synthetic detector — the same code a controller
//! runs, so every request behaves as on the device. Piped input: every request line is
//! sent and every reply line printed. On a terminal: a prompt, with the cautions first.

use crate::error::{CliError, CliResult};
use std::io::{IsTerminal, Read, Write};
use std::sync::mpsc;

/// The in-process simulated controller (one definition, in [`crate::link::device`]).
pub use crate::link::device::{sim_console, SimConsole};

/// Sends one request line (without its line end) and returns every reply line.
pub fn exchange(console: &mut SimConsole, line: &str) -> Vec<String> {
    let mut out: Vec<u8> = Vec::new();
    let mut bytes = line.as_bytes().to_vec();
    bytes.push(b'\n');
    // Writing to a Vec cannot fail; a reply error would only mean a dropped line.
    let _ = console.feed_all(&bytes, &mut out);
    String::from_utf8_lossy(&out)
        .lines()
        .map(str::to_string)
        .collect()
}

/// Loads a rig into the console with the requests of [`crate::rig::console_requests`];
/// returns how many were sent. A refused line (the console must be at rest) is an error
/// naming the line and the reply.
pub fn load_rig(console: &mut SimConsole, rf: &crate::rig::RigFile) -> CliResult<usize> {
    let lines = crate::rig::console_requests(rf);
    for line in &lines {
        let reply = exchange(console, line);
        if !reply.last().is_some_and(|l| l.starts_with("ok")) {
            return Err(CliError::new(format!(
                "--rig {}: the controller refused `{line}`: {}",
                rf.source,
                reply.join(" | ")
            )));
        }
    }
    Ok(lines.len())
}

/// One reply line as JSON: `kind` (`ok`, `err`, `item` or `text`), for `err` its `code`
/// and `message`, and the `key=value` fields with numbers as numbers. A line that ends
/// in a checksum (`*XXXX`) keeps it under `crc`.
pub fn reply_json(line: &str) -> serde_json::Value {
    use serde_json::{Map, Value};
    let (body, crc) = match line.rsplit_once('*') {
        Some((b, c)) if c.len() == 4 && c.bytes().all(|x| x.is_ascii_hexdigit()) => (b, Some(c)),
        _ => (line, None),
    };
    let mut obj = Map::new();
    let mut words = body.split(' ');
    let head = words.next().unwrap_or("");
    let kind = match head {
        "ok" => "ok",
        "err" => "err",
        "-" => "item",
        _ => "text",
    };
    obj.insert("kind".into(), Value::from(kind));
    let mut fields = Map::new();
    let mut message: Vec<&str> = Vec::new();
    if kind == "err" {
        if let Some(code) = words.next() {
            obj.insert(
                "code".into(),
                code.parse::<u64>().map_or(Value::from(code), Value::from),
            );
        }
        message.extend(words);
    } else if kind == "text" {
        message.push(body);
    } else {
        for w in words {
            match w.split_once('=') {
                Some((k, v)) => {
                    let val = if let Ok(i) = v.parse::<i64>() {
                        Value::from(i)
                    } else {
                        match v.parse::<f64>() {
                            Ok(x) if x.is_finite() => serde_json::Number::from_f64(x)
                                .map_or(Value::from(v), Value::Number),
                            _ => Value::from(v),
                        }
                    };
                    fields.insert(k.into(), val);
                }
                None => message.push(w),
            }
        }
    }
    if !message.is_empty() {
        obj.insert("message".into(), Value::from(message.join(" ")));
    }
    if !fields.is_empty() {
        obj.insert("fields".into(), Value::Object(fields));
    }
    if let Some(c) = crc {
        obj.insert("crc".into(), Value::from(c));
    }
    obj.insert("line".into(), Value::from(line));
    Value::Object(obj)
}

/// Most bytes of one request kept for the JSON `request` echo and the `quit` check (a
/// longer line is refused by the console anyway).
const REQUEST_ECHO: usize = 256;

/// Most bytes of input held while a stream runs.
const PENDING_MAX: usize = 64 * 1024;

/// How stdin reaches the session: chunks as they arrive, from a reader thread, so that a
/// `stop` typed (or piped) while a stream runs reaches the console between its lines.
fn stdin_chunks() -> mpsc::Receiver<std::io::Result<Vec<u8>>> {
    // A few chunks in flight: the reader waits while the console is busy.
    let (tx, rx) = mpsc::sync_channel(4);
    std::thread::spawn(move || {
        let mut stdin = std::io::stdin().lock();
        let mut buf = [0u8; 4096];
        loop {
            match stdin.read(&mut buf) {
                Ok(0) => break,
                Ok(n) => {
                    if tx.send(Ok(buf[..n].to_vec())).is_err() {
                        break;
                    }
                }
                Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
                Err(e) => {
                    let _ = tx.send(Err(e));
                    break;
                }
            }
        }
    });
    rx
}

/// The session's output side: reply bytes are cut into lines as they come (each line
/// bounded by the console's reply limit), counted, and printed raw or as JSON.
struct Printer<W: Write> {
    out: W,
    json: bool,
    line: Vec<u8>,
    request: Vec<u8>,
    requests: u64,
    failed: u64,
}

impl<W: Write> Printer<W> {
    fn take(&mut self, bytes: &[u8]) -> std::io::Result<()> {
        for &b in bytes {
            if b == b'\n' {
                self.finish_line()?;
            } else if self.line.len() < 2 * matterwave_core::console::controller::MAX_REPLY {
                self.line.push(b);
            }
        }
        Ok(())
    }

    fn finish_line(&mut self) -> std::io::Result<()> {
        let text = String::from_utf8_lossy(&self.line)
            .trim_end_matches('\r')
            .to_string();
        self.line.clear();
        if text.starts_with("ok") || text.starts_with("err") {
            self.requests += 1;
            self.failed += u64::from(text.starts_with("err"));
        }
        if self.json {
            let mut v = reply_json(&text);
            if let Some(o) = v.as_object_mut() {
                let req = String::from_utf8_lossy(&self.request)
                    .trim_end()
                    .to_string();
                o.insert("request".into(), serde_json::Value::from(req));
            }
            writeln!(self.out, "{v}")?;
        } else {
            writeln!(self.out, "{text}")?;
        }
        self.out.flush()
    }
}

/// Runs a session on stdin/stdout: replies as they come (`table`: the lines as sent),
/// or one JSON object per reply line (`json`, JSON Lines: see [`reply_json`]). Each
/// request runs when its line ends (CR or LF); a stream is written line by line and a
/// `stop` arriving meanwhile stops it. CSV is refused. With `rig`, the rig is loaded
/// first ([`load_rig`]).
pub fn run(
    link: &str,
    format: crate::output::Format,
    rig: Option<&crate::rig::RigFile>,
) -> CliResult<()> {
    use crate::output::Format;
    if format == Format::Csv {
        return Err(CliError::new(
            "talk --format csv: replies are lines, not a table; use --format table (raw lines) or json (one object per line)",
        ));
    }
    let spec = crate::link::LinkSpec::parse(link, None)?;
    let json = format == Format::Json;
    let terminal = std::io::stdin().is_terminal() && std::io::stdout().is_terminal() && !json;
    if spec != crate::link::LinkSpec::Sim || terminal {
        return crate::remote::talk(&spec, json, terminal, rig);
    }
    let mut console = sim_console()?;
    if let Some(rf) = rig {
        let n = load_rig(&mut console, rf)?;
        // On stderr: the replies on stdout stay the session's own.
        eprintln!(
            "mwctl: rig {:?} ({}) loaded into the simulator with {n} requests (the lines of `mwctl rig show --rig {} --console`); declare where an axis stands with home name=AXIS before moving it",
            rf.name, rf.source, rf.source
        );
    }
    let json = format == Format::Json;
    let interactive = std::io::stdin().is_terminal() && !json;
    let mut p = Printer {
        out: std::io::stdout().lock(),
        json,
        line: Vec::new(),
        request: Vec::new(),
        requests: 0,
        failed: 0,
    };
    let prompt = |p: &mut Printer<std::io::StdoutLock<'static>>| {
        if interactive {
            let _ = write!(p.out, "mw> ");
            let _ = p.out.flush();
        }
    };
    if interactive {
        let _ = writeln!(p.out, "{}\n", crate::cli::CAUTIONS);
        let _ = writeln!(
            p.out,
            "matterwave simulator: type requests (help lists them); quit, exit or Ctrl-D ends."
        );
    }
    prompt(&mut p);
    let rx = stdin_chunks();
    let mut reply: Vec<u8> = Vec::new();
    // Input not yet given to the console: while a stream runs, requests wait here in
    // order (bounded: the reader thread waits while it is full), except a `stop`.
    let mut pending: std::collections::VecDeque<u8> = std::collections::VecDeque::new();
    let mut eof = false;
    let mut at_line_start = true;
    'session: loop {
        if console.streaming() {
            let first_line = pending.iter().position(|&b| b == b'\n' || b == b'\r');
            let stop_next = first_line.is_some_and(|n| {
                let line: Vec<u8> = pending.iter().take(n).copied().collect();
                let body = line.trim_ascii();
                body == b"stop" || body.strip_prefix(b"stop*").is_some()
            });
            if !stop_next {
                if first_line.is_none() && pending.len() < PENDING_MAX && !eof {
                    match rx.try_recv() {
                        Ok(Ok(c)) => pending.extend(c),
                        Ok(Err(e)) => return Err(CliError::new(format!("reading requests: {e}"))),
                        Err(mpsc::TryRecvError::Disconnected) => eof = true,
                        Err(mpsc::TryRecvError::Empty) => {}
                    }
                }
                // One stream line, then look at the input again.
                reply.clear();
                let more = console.poll(&mut reply).unwrap_or(false);
                if p.take(&reply).is_err() {
                    break;
                }
                if !more {
                    prompt(&mut p);
                }
                continue;
            }
        } else if pending.is_empty() {
            if eof {
                // A last line without its line end still runs.
                if at_line_start {
                    break;
                }
                pending.push_back(b'\n');
            } else {
                match rx.recv() {
                    Ok(Ok(c)) => pending.extend(c),
                    Ok(Err(e)) => return Err(CliError::new(format!("reading requests: {e}"))),
                    Err(_) => eof = true,
                }
                continue;
            }
        }
        // Give the console bytes until a line ends (it may start a stream).
        while let Some(b) = pending.pop_front() {
            if at_line_start {
                p.request.clear();
                at_line_start = false;
            }
            let end = b == b'\n' || b == b'\r';
            if !end && p.request.len() < REQUEST_ECHO {
                p.request.push(b);
            }
            // `quit` and `exit` end the session (the console has no such requests).
            if end && matches!(p.request.trim_ascii(), b"quit" | b"exit") {
                break 'session;
            }
            reply.clear();
            // Raw bytes go to the console, which rejects non-ASCII itself.
            let _ = console.push(b, &mut reply);
            if p.take(&reply).is_err() {
                break 'session;
            }
            if end {
                at_line_start = true;
                if !console.streaming() && !p.request.is_empty() {
                    prompt(&mut p);
                }
                break;
            }
        }
    }
    let _ = p.out.flush();
    // A script must be able to tell: any refused request makes the exit status 2.
    if p.failed > 0 {
        return Err(CliError::new(format!(
            "talk: {} of {} requests answered err",
            p.failed, p.requests
        )));
    }
    Ok(())
}
