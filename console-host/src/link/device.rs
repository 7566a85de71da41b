//! The simulated controller as a device on a byte stream: the loop a firmware runs
//! (bytes in to the console, one streamed line per idle turn, a control tick every
//! turn), over a serial port — the master side of a pseudo-terminal for `mwctl serve
//! --pty` and the `pty` link.

use crate::error::{CliError, CliResult};
use matterwave_core::console::sim::{SimAxes, SimDetector, SimInterlock};
use matterwave_core::console::Console;
use std::io;
use std::time::{Duration, Instant};

/// The simulated controller.
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

/// Serves `console` on `port` until `until` has passed (or forever), the peer hangs up,
/// or the port fails. With `throttle_baud`, replies leave no faster than a UART at
/// that rate (8N1) would send them.
pub fn serve<P: serialport::SerialPort + ?Sized>(
    console: &mut SimConsole,
    port: &mut P,
    until: Option<Instant>,
    throttle_baud: Option<u32>,
) -> io::Result<()> {
    let mut buf = [0u8; 256];
    let mut reply = Vec::new();
    let rate = throttle_baud.map(super::wire::bytes_per_s);
    loop {
        if until.is_some_and(|t| Instant::now() >= t) {
            return Ok(());
        }
        console.tick();
        reply.clear();
        // While a stream runs, look for input (a `stop`) between its lines without
        // waiting; idle, wait a little for the next byte.
        let wait = if console.streaming() { 0 } else { 20 };
        port.set_timeout(Duration::from_millis(wait))
            .map_err(io::Error::other)?;
        let n = match port.read(&mut buf) {
            Ok(n) => n,
            Err(e) if e.kind() == io::ErrorKind::TimedOut => 0,
            Err(e) if e.kind() == io::ErrorKind::Interrupted => 0,
            Err(e) => return Err(e),
        };
        if n == 0 && !console.streaming() {
            continue;
        }
        for &b in &buf[..n] {
            // Writing to a Vec cannot fail.
            let _ = console.push(b, &mut reply);
        }
        if n == 0 {
            let _ = console.poll(&mut reply);
        }
        if !reply.is_empty() {
            let start = Instant::now();
            // A reader slower than the console: wait for room (a full pseudo-terminal
            // buffer), as a UART's transmitter would.
            port.set_timeout(Duration::from_secs(10))
                .map_err(io::Error::other)?;
            port.write_all(&reply)?;
            port.flush()?;
            if let Some(r) = rate {
                let due = Duration::from_secs_f64(reply.len() as f64 / r);
                if let Some(rest) = due.checked_sub(start.elapsed()) {
                    std::thread::sleep(rest);
                }
            }
        }
    }
}
