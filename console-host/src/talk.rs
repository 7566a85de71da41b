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

/// Runs a session on stdin/stdout.
pub fn run(link: &str) -> CliResult<()> {
    if link != "sim" {
        return Err(CliError::new(format!(
            "--link {link}: only the in-process simulator 'sim' is available in this build"
        )));
    }
    let mut console = sim_console()?;
    let stdin = std::io::stdin();
    let interactive = stdin.is_terminal();
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
        // Raw bytes go to the console, which rejects non-ASCII itself.
        let mut out: Vec<u8> = Vec::new();
        if !buf.ends_with(b"\n") {
            buf.push(b'\n');
        }
        let _ = console.feed_all(&buf, &mut out);
        if stdout.write_all(&out).is_err() {
            break;
        }
    }
    let _ = stdout.flush();
    Ok(())
}
