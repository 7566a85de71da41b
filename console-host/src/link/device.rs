//! The simulated controller as a device on a byte stream: the loop a firmware runs
//! (bytes in to the console, one streamed line per idle turn, a control tick every
//! turn), over a serial port — the master side of a pseudo-terminal for `mwctl serve
//! --pty` and the `pty` link.

use crate::error::{CliError, CliResult};
use matterwave_core::console::sim::{HiddenOffsets, SimAxes, SimDetector, SimInterlock};
use matterwave_core::console::Console;
use std::io;
use std::time::{Duration, Instant};

/// The simulated controller.
pub type SimConsole = Console<SimAxes, SimDetector, SimInterlock>;

/// What the simulated instrument is, beyond what its console holds: the seed of the
/// detector's noise and the calibration errors it hides from the console
/// (docs/SIMULATOR.md). Set from the host only (`--sim-seed`, `--sim-hidden`), never
/// through the console.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SimConfig {
    /// Seed of the detector noise (`SimDetector::with_seed`).
    pub seed: u32,
    /// The hidden arm zero, energy offset and tilt error.
    pub hidden: HiddenOffsets,
}

impl Default for SimConfig {
    /// Seed 1, no hidden offsets: the simulator as it always started.
    fn default() -> Self {
        SimConfig {
            seed: 1,
            hidden: HiddenOffsets::default(),
        }
    }
}

/// The keys of `--sim-hidden`, their field, unit and accepted range (the ranges the
/// synthetic detector clamps to, docs/SIMULATOR.md): the one table its parser and its
/// error message read.
const HIDDEN_KEYS: [(&str, &str, f32); 3] = [
    ("arm_zero", "deg", 360.0),
    ("energy", "eV", 1.0e6),
    ("tilt", "deg", 90.0),
];

impl SimConfig {
    /// The configuration of `--sim-seed N` and `--sim-hidden
    /// arm_zero=DEG,energy=EV,tilt=DEG` (any subset of the keys; absent ones are 0).
    pub fn from_args(seed: Option<u32>, hidden: Option<&str>) -> CliResult<SimConfig> {
        let mut c = SimConfig::default();
        if let Some(s) = seed {
            c.seed = s;
        }
        if let Some(text) = hidden {
            c.hidden = parse_hidden(text)?;
        }
        Ok(c)
    }
}

/// Reads `arm_zero=DEG,energy=EV,tilt=DEG` (any subset, in any order).
pub fn parse_hidden(text: &str) -> CliResult<HiddenOffsets> {
    let accepted = HIDDEN_KEYS
        .iter()
        .map(|(k, u, r)| format!("{k}=±{r} {u}"))
        .collect::<Vec<_>>()
        .join(", ");
    let err = |what: String| {
        CliError::new(format!(
            "--sim-hidden {text}: {what}; give KEY=VALUE pairs separated by commas, accepted: {accepted}"
        ))
    };
    let mut h = HiddenOffsets::default();
    for part in text.split(',').map(str::trim).filter(|p| !p.is_empty()) {
        let (k, v) = part
            .split_once('=')
            .ok_or_else(|| err(format!("{part:?} is not KEY=VALUE")))?;
        let (i, (_, unit, range)) = HIDDEN_KEYS
            .iter()
            .enumerate()
            .find(|(_, (name, _, _))| *name == k)
            .ok_or_else(|| err(format!("unknown key {k:?}")))?;
        let x: f32 = v
            .parse()
            .ok()
            .filter(|x: &f32| x.is_finite() && x.abs() <= *range)
            .ok_or_else(|| {
                err(format!(
                    "{k}={v} is not a number from -{range} to {range} {unit}"
                ))
            })?;
        match i {
            0 => h.arm_zero_deg = x,
            1 => h.energy_offset_ev = x,
            _ => h.tilt_error_deg = x,
        }
    }
    Ok(h)
}

/// The simulator configuration of this process, set once from the command line
/// ([`set_sim_config`]) and read by every [`sim_console`]: the in-process `sim` link,
/// the `pty` link, `mwctl serve --pty` (also after an injected restart: the
/// instrument's errors survive a power cycle).
static SIM_CONFIG: std::sync::Mutex<SimConfig> = std::sync::Mutex::new(SimConfig {
    seed: 1,
    hidden: HiddenOffsets {
        arm_zero_deg: 0.0,
        energy_offset_ev: 0.0,
        tilt_error_deg: 0.0,
    },
});

/// Sets the configuration every later [`sim_console`] of this process starts with.
pub fn set_sim_config(c: SimConfig) {
    match SIM_CONFIG.lock() {
        Ok(mut g) => *g = c,
        Err(p) => *p.into_inner() = c,
    }
}

/// The configuration [`sim_console`] starts with.
pub fn sim_config() -> SimConfig {
    match SIM_CONFIG.lock() {
        Ok(g) => *g,
        Err(p) => *p.into_inner(),
    }
}

/// A simulated controller with factory settings, its detector as [`sim_config`] says.
pub fn sim_console() -> CliResult<SimConsole> {
    sim_console_with(&sim_config())
}

/// A simulated controller with factory settings and the detector of `c` (its seed and
/// hidden offsets).
pub fn sim_console_with(c: &SimConfig) -> CliResult<SimConsole> {
    let mut detector = SimDetector::with_seed(c.seed);
    detector.hidden = c.hidden;
    Console::new(SimAxes::default(), detector, SimInterlock { safe: true })
        .map_err(|e| CliError::core(e, "simulator start"))
}

/// Faults `mwctl serve --pty --fault KIND:N` injects into what the device does, each
/// one time in N at random — from a fixed seed, so a run can be reproduced.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Faults {
    /// Flip one bit of a reply byte, one byte in N (`flip:N`).
    pub flip_every: Option<u64>,
    /// Drop a reply line, one line in N (`drop:N`).
    pub drop_every: Option<u64>,
    /// Send a line of garbage before a reply line, one in N (`garbage:N`).
    pub garbage_every: Option<u64>,
    /// Miss a request line, one in N: no reply, as if it never arrived (`silent:N`).
    pub silent_every: Option<u64>,
    /// Restart (factory settings, positions unknown) after N request lines (`reset:N`).
    pub reset_after: Option<u64>,
}

impl Faults {
    /// Reads `KIND:N` (`flip`, `drop`, `garbage`, `silent`, `reset`; N ≥ 1) into `self`.
    pub fn add(&mut self, spec: &str) -> CliResult<()> {
        let err = || {
            CliError::new(format!(
                "--fault {spec}: give KIND:N with N a whole number ≥ 1; kinds: flip (a bit of one reply byte in N), drop (one reply line in N), garbage (before one reply line in N), silent (one request in N missed), reset (restart after N requests)"
            ))
        };
        let (kind, n) = spec.split_once(':').ok_or_else(err)?;
        let n: u64 = n.parse().ok().filter(|&n| n >= 1).ok_or_else(err)?;
        let slot = match kind {
            "flip" => &mut self.flip_every,
            "drop" => &mut self.drop_every,
            "garbage" => &mut self.garbage_every,
            "silent" => &mut self.silent_every,
            "reset" => &mut self.reset_after,
            _ => return Err(err()),
        };
        *slot = Some(n);
        Ok(())
    }
}

/// Counters of the fault injection.
#[derive(Default)]
struct Injector {
    /// xorshift64 state (fixed seed).
    rng: u64,
    requests: u64,
    /// Dropping the rest of the current reply line.
    dropping: bool,
    /// Missing the rest of the current request line.
    missing: bool,
    /// The next request byte starts a line.
    at_request_start: bool,
    /// The next reply byte starts a line.
    at_reply_start: bool,
}

impl Injector {
    /// True one time in `n` (never for `None`).
    fn one_in(&mut self, n: Option<u64>) -> bool {
        let Some(n) = n else { return false };
        let mut x = self.rng;
        x ^= x << 13;
        x ^= x >> 7;
        x ^= x << 17;
        self.rng = x;
        x.is_multiple_of(n)
    }

    /// What the device sends, after the faults.
    fn reply(&mut self, f: &Faults, reply: &[u8], out: &mut Vec<u8>) {
        for &b in reply {
            if self.at_reply_start && b != b'\n' {
                self.at_reply_start = false;
                if self.one_in(f.garbage_every) {
                    out.extend_from_slice(b"\x07~#garbage%%\r\n");
                }
                self.dropping = self.one_in(f.drop_every);
            }
            let mut x = b;
            if self.one_in(f.flip_every) && b != b'\n' {
                x ^= 0x02;
            }
            if !self.dropping {
                out.push(x);
            }
            if b == b'\n' {
                self.dropping = false;
                self.at_reply_start = true;
            }
        }
    }
}

/// Serves `console` on `port` until `until` has passed (or forever), the peer hangs up,
/// or the port fails. With `throttle_baud`, replies leave no faster than a UART at
/// that rate (8N1) would send them.
pub fn serve<P: serialport::SerialPort + ?Sized>(
    console: &mut SimConsole,
    port: &mut P,
    until: Option<Instant>,
    throttle_baud: Option<u32>,
    faults: &Faults,
) -> io::Result<()> {
    let mut buf = [0u8; 256];
    let mut reply = Vec::new();
    let mut sent = Vec::new();
    let mut inj = Injector {
        rng: 0x9E37_79B9_7F4A_7C15,
        at_request_start: true,
        at_reply_start: true,
        ..Injector::default()
    };
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
            if inj.at_request_start {
                // The first byte of request line number `requests`.
                inj.at_request_start = false;
                inj.requests += 1;
                inj.missing = inj.one_in(faults.silent_every);
            }
            let end = b == b'\n';
            inj.at_request_start = end;
            if inj.missing {
                inj.missing = !end;
                continue;
            }
            // Writing to a Vec cannot fail.
            let _ = console.push(b, &mut reply);
            if end && faults.reset_after.is_some_and(|k| inj.requests == k) {
                // A power cycle: what was on its way out is lost.
                *console = sim_console().map_err(|e| io::Error::other(e.to_string()))?;
                reply.clear();
            }
        }
        if n == 0 {
            let _ = console.poll(&mut reply);
        }
        sent.clear();
        inj.reply(faults, &reply, &mut sent);
        if !sent.is_empty() {
            let reply = &sent;
            let start = Instant::now();
            // A reader slower than the console: wait for room (a full pseudo-terminal
            // buffer), as a UART's transmitter would.
            port.set_timeout(Duration::from_secs(10))
                .map_err(io::Error::other)?;
            port.write_all(reply)?;
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
