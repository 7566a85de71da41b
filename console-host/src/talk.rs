//! `mwctl talk`: a session with a controller console over a link.
//!
//! The `sim` link runs the core's own console in-process on simulated axes, a
//! switchable interlock (safe) and the synthetic detector — the same code a controller
//! runs, so every request behaves as on the device. Piped input: every request line is
//! sent and every reply line printed. On a terminal: a prompt, with the cautions first.

use crate::error::{CliError, CliResult};
use matterwave_core::console::sim::{SimAxes, SimDetector, SimInterlock};
use matterwave_core::console::Console;
use std::io::{BufRead, IsTerminal, Write};

/// The in-process simulated controller.
pub type SimConsole = Console<SimAxes, SimDetector, SimInterlock>;

/// A simulated controller with factory settings.
pub fn sim_console() -> CliResult<SimConsole> {
    Console::new(
        SimAxes::default(),
        SimDetector::default(),
        SimInterlock { safe: true },
    )
    .map_err(|e| CliError::core(e, "simulator start"))
}

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

/// Runs a session on stdin/stdout: replies as they are (`table`), or one JSON object
/// per reply line (`json`, JSON Lines: see [`reply_json`]). CSV is refused.
pub fn run(link: &str, format: crate::output::Format) -> CliResult<()> {
    use crate::output::Format;
    if format == Format::Csv {
        return Err(CliError::new(
            "talk --format csv: replies are lines, not a table; use --format table (raw lines) or json (one object per line)",
        ));
    }
    let json = format == Format::Json;
    if link != "sim" {
        return Err(CliError::new(format!(
            "--link {link}: only the in-process simulator 'sim' is available in this build"
        )));
    }
    let mut console = sim_console()?;
    let stdin = std::io::stdin();
    let interactive = stdin.is_terminal() && !json;
    let mut stdout = std::io::stdout().lock();
    if interactive {
        let _ = writeln!(stdout, "{}\n", crate::cli::CAUTIONS);
        let _ = writeln!(
            stdout,
            "matterwave simulator: type requests (help lists them), Ctrl-D ends."
        );
    }
    let mut lines = stdin.lock();
    let mut buf = Vec::new();
    let (mut requests, mut failed) = (0u64, 0u64);
    loop {
        if interactive {
            let _ = write!(stdout, "mw> ");
            let _ = stdout.flush();
        }
        buf.clear();
        match lines.read_until(b'\n', &mut buf) {
            Ok(0) => break,
            Ok(_) => {}
            Err(e) => return Err(CliError::new(format!("reading requests: {e}"))),
        }
        // `quit` and `exit` end the session (the console has no such requests).
        if matches!(buf.trim_ascii(), b"quit" | b"exit") {
            break;
        }
        // Raw bytes go to the console, which rejects non-ASCII itself.
        let mut out: Vec<u8> = Vec::new();
        if !buf.ends_with(b"\n") {
            buf.push(b'\n');
        }
        let _ = console.feed_all(&buf, &mut out);
        let replies = String::from_utf8_lossy(&out);
        for l in replies.lines() {
            if l.starts_with("ok") || l.starts_with("err") {
                requests += 1;
                failed += u64::from(l.starts_with("err"));
            }
        }
        let written = if json {
            let text = String::from_utf8_lossy(&out);
            let request = String::from_utf8_lossy(&buf).trim_end().to_string();
            text.lines().try_for_each(|l| {
                let mut v = reply_json(l);
                if let Some(o) = v.as_object_mut() {
                    o.insert("request".into(), serde_json::Value::from(request.as_str()));
                }
                writeln!(stdout, "{v}")
            })
        } else {
            stdout.write_all(&out)
        };
        if written.is_err() {
            break;
        }
    }
    let _ = stdout.flush();
    // A script must be able to tell: any refused request makes the exit status 2.
    if failed > 0 {
        return Err(CliError::new(format!(
            "talk: {failed} of {requests} requests answered err"
        )));
    }
    Ok(())
}
