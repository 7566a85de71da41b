//! Links to a controller, chosen with `--link`:
//!
//! | link | what |
//! |---|---|
//! | `sim` | the core's console in-process on simulated axes (default) |
//! | `pty` | the same simulator behind a pseudo-terminal: the serial path with real termios |
//! | `serial:PATH[@BAUD]` | a controller on a serial port (default 115200 baud, 8N1) |
//! | `qemu[:IMAGE]` | the firmware image under `qemu-system-arm`, its UART on a pipe |
//!
//! One layer under all of them: [`session::Session`] (checksums, timeouts, retries of
//! requests that may run twice, resynchronisation, restart detection).

pub mod device;
pub mod session;
pub mod wire;

use crate::error::{CliError, CliResult};
use wire::{PortWire, QemuWire, SimWire, Wire};

/// The firmware image `qemu` uses when none is given: the one built in this source tree
/// by `cd tests/firmware && cargo build --profile firmware --bin console`.
pub const DEFAULT_IMAGE: &str = concat!(
    env!("CARGO_MANIFEST_DIR"),
    "/../tests/firmware/target/thumbv7em-none-eabihf/firmware/console"
);

/// Default serial speed, baud.
pub const DEFAULT_BAUD: u32 = 115_200;

/// A parsed `--link` value.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum LinkSpec {
    /// In-process simulator.
    Sim,
    /// Simulator behind a pseudo-terminal, optionally throttled to a baud rate.
    Pty { throttle_baud: Option<u32> },
    /// A serial port.
    Serial { path: String, baud: u32 },
    /// QEMU with a firmware image.
    Qemu { image: String },
}

const ACCEPTED: &str =
    "accepted: sim, pty, serial:PATH[@BAUD] (e.g. serial:/dev/ttyUSB0@115200), qemu[:IMAGE]";

impl LinkSpec {
    /// Reads a `--link` value; `throttle_baud` applies to `pty`.
    pub fn parse(text: &str, throttle_baud: Option<u32>) -> CliResult<LinkSpec> {
        let baud = |b: &str| -> CliResult<u32> {
            match b.parse::<u32>() {
                Ok(v) if (50..=4_000_000).contains(&v) => Ok(v),
                _ => Err(CliError::new(format!(
                    "--link {text}: baud rate {b:?} is not a whole number from 50 to 4000000"
                ))),
            }
        };
        match text {
            "sim" => Ok(LinkSpec::Sim),
            "pty" => Ok(LinkSpec::Pty { throttle_baud }),
            "qemu" => Ok(LinkSpec::Qemu {
                image: DEFAULT_IMAGE.into(),
            }),
            _ => {
                if let Some(rest) = text.strip_prefix("serial:") {
                    let (path, b) = match rest.rsplit_once('@') {
                        Some((p, b)) => (p, baud(b)?),
                        None => (rest, DEFAULT_BAUD),
                    };
                    if path.is_empty() {
                        return Err(CliError::new(format!(
                            "--link {text}: no port path; {ACCEPTED}"
                        )));
                    }
                    Ok(LinkSpec::Serial {
                        path: path.into(),
                        baud: b,
                    })
                } else if let Some(image) = text.strip_prefix("qemu:") {
                    Ok(LinkSpec::Qemu {
                        image: image.into(),
                    })
                } else {
                    Err(CliError::new(format!(
                        "--link {text}: unknown link; {ACCEPTED}"
                    )))
                }
            }
        }
    }

    /// Opens the link.
    pub fn open(&self) -> CliResult<Box<dyn Wire>> {
        Ok(match self {
            LinkSpec::Sim => Box::new(SimWire::new()?),
            LinkSpec::Pty { throttle_baud } => Box::new(PortWire::pty(*throttle_baud)?),
            LinkSpec::Serial { path, baud } => Box::new(PortWire::open(path, *baud)?),
            LinkSpec::Qemu { image } => Box::new(QemuWire::start(image)?),
        })
    }
}

impl Wire for Box<dyn Wire> {
    fn send(&mut self, bytes: &[u8]) -> std::io::Result<()> {
        (**self).send(bytes)
    }
    fn recv(&mut self, buf: &mut [u8], timeout: std::time::Duration) -> std::io::Result<usize> {
        (**self).recv(buf, timeout)
    }
    fn describe(&self) -> String {
        (**self).describe()
    }
}

/// Opens a session on `spec` and greets the device: `hello` must name a matterwave
/// controller speaking this protocol version; a silent or foreign device is a clear
/// error.
pub fn connect(spec: &LinkSpec) -> CliResult<session::Session<Box<dyn Wire>>> {
    let wire = spec.open()?;
    let name = wire.describe();
    let mut s = session::Session::new(wire);
    if matches!(spec, LinkSpec::Qemu { .. }) {
        // The image boots in well under a second; give it time for the first reply.
        s.timeout = std::time::Duration::from_secs(5);
    }
    let hello = s
        .request("hello")
        .map_err(|e| CliError::new(format!("{name}: {e}")))?;
    let field = |k: &str| session::reply_field(&hello.last, k).map(str::to_string);
    if !hello.ok() || field("name").as_deref() != Some("matterwave") {
        return Err(CliError::new(format!(
            "{name}: the device answered {:?} to hello: not a matterwave controller (or a wrong baud rate)",
            hello.last
        )));
    }
    let want = matterwave_core::console::controller::PROTOCOL_VERSION.to_string();
    if field("protocol").as_deref() != Some(want.as_str()) {
        return Err(CliError::new(format!(
            "{name}: the controller speaks protocol {:?}, this mwctl speaks {want}; use the mwctl of the controller's version",
            field("protocol").unwrap_or_default()
        )));
    }
    s.mark_session()
        .and_then(|()| s.check_alive())
        .map_err(|e| CliError::new(format!("{name}: {e}")))?;
    Ok(s)
}

/// Sends `line` and returns its reply; a lost link and an `err` reply are errors that
/// name `who` (the command asking, e.g. `align`) and the request. For a command's
/// requests that must succeed.
pub fn request_ok<W: Wire>(
    s: &mut session::Session<W>,
    who: &str,
    line: &str,
) -> CliResult<session::Reply> {
    let r = s
        .request(line)
        .map_err(|e| CliError::new(format!("{who}: `{line}`: {e}")))?;
    if !r.ok() {
        return Err(CliError::new(format!(
            "{who}: the controller refused `{line}`: {}",
            r.last
        )));
    }
    Ok(r)
}
