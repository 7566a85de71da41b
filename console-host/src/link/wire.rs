//! Byte streams to a controller: the in-process simulator, a serial port (a real one or
//! a pseudo-terminal) and QEMU's UART on a pipe. Each moves bytes only; framing,
//! checksums and retries are the session's ([`super::session`]).

use super::device::{self, SimConsole};

use serialport::SerialPort as _;
use std::io::{self, Read, Write};
use std::sync::mpsc;
use std::time::{Duration, Instant};

/// A byte stream to a controller.
pub trait Wire {
    /// Writes every byte (and flushes).
    fn send(&mut self, bytes: &[u8]) -> io::Result<()>;
    /// Reads what has arrived, waiting at most `timeout` for the first byte; `Ok(0)` when
    /// nothing came in time.
    fn recv(&mut self, buf: &mut [u8], timeout: Duration) -> io::Result<usize>;
    /// What the link is, for messages (`sim`, `/dev/pts/3`, `qemu …`).
    fn describe(&self) -> String;
}

/// The simulator in-process: bytes go to the core's console, replies come back from a
/// queue; a running stream yields one line per `recv`, so that a `stop` sent meanwhile
/// reaches it between lines, as on the device.
pub struct SimWire {
    console: SimConsole,
    out: std::collections::VecDeque<u8>,
    config: device::SimConfig,
}

impl SimWire {
    /// A simulated controller with factory settings, its detector as
    /// [`device::sim_config`] says.
    pub fn new() -> crate::error::CliResult<SimWire> {
        SimWire::with_config(device::sim_config())
    }

    /// A simulated controller with factory settings and the detector of `config` (its
    /// noise seed and hidden offsets), whatever the process's configuration.
    pub fn with_config(config: device::SimConfig) -> crate::error::CliResult<SimWire> {
        Ok(SimWire {
            console: device::sim_console_with(&config)?,
            out: std::collections::VecDeque::new(),
            config,
        })
    }
}

impl SimWire {
    /// The simulated controller itself (tests inspect its axes, or restart it).
    pub fn console_mut(&mut self) -> &mut SimConsole {
        &mut self.console
    }

    /// Replaces the controller with a freshly started one, as a power cycle would; what
    /// was on its way out is lost.
    pub fn power_cycle(&mut self) -> crate::error::CliResult<()> {
        self.console = device::sim_console_with(&self.config)?;
        self.out.clear();
        Ok(())
    }
}

impl Wire for SimWire {
    fn send(&mut self, bytes: &[u8]) -> io::Result<()> {
        let mut reply = Vec::new();
        for &b in bytes {
            // Writing to a Vec cannot fail.
            let _ = self.console.push(b, &mut reply);
        }
        self.out.extend(reply);
        Ok(())
    }
    fn recv(&mut self, buf: &mut [u8], _timeout: Duration) -> io::Result<usize> {
        if self.out.is_empty() && self.console.streaming() {
            let mut line = Vec::new();
            let _ = self.console.poll(&mut line);
            self.out.extend(line);
        }
        let n = buf.len().min(self.out.len());
        for (slot, b) in buf.iter_mut().zip(self.out.drain(..n)) {
            *slot = b;
        }
        Ok(n)
    }
    fn describe(&self) -> String {
        "sim (in-process simulator)".into()
    }
}

/// A serial port: a real one (`serial:PATH@BAUD`) or the client end of a
/// pseudo-terminal (`pty`), both with real termios (raw, 8N1).
pub struct PortWire {
    port: Box<dyn serialport::SerialPort>,
    name: String,
    /// Holds the in-process device of a `pty` link while the link lives.
    _device: Option<std::thread::JoinHandle<()>>,
    /// Bytes per second the link is throttled to (a pty does not throttle by itself).
    throttle_bytes_s: Option<f64>,
}

impl PortWire {
    /// Opens `path` at `baud` (8N1, no flow control).
    pub fn open(path: &str, baud: u32) -> crate::error::CliResult<PortWire> {
        use crate::error::CliError;
        let meta = std::fs::metadata(path).map_err(|e| {
            CliError::new(format!(
                "--link serial:{path}: {}; give the device path of the controller's port (e.g. /dev/ttyUSB0, /dev/ttyACM0)",
                plain_io(&e)
            ))
        })?;
        if !is_char_device(&meta) {
            return Err(CliError::new(format!(
                "--link serial:{path}: not a terminal device; give a serial port such as /dev/ttyUSB0"
            )));
        }
        // Opened once plainly first, for the errors a person can act on.
        // Non-blocking (a port waiting for carrier would hang an ordinary open), and not
        // as the controlling terminal.
        if let Err(e) = open_plain(path) {
            let why = if e.kind() == io::ErrorKind::PermissionDenied {
                "permission denied; add yourself to the group that owns the port (often dialout) and log in again".to_string()
            } else if e.raw_os_error() == Some(16) {
                "the port is busy: another program holds it".to_string()
            } else {
                plain_io(&e)
            };
            return Err(CliError::new(format!("--link serial:{path}: {why}")));
        }
        let port = serialport::new(path, baud)
            .timeout(Duration::from_millis(100))
            .open()
            .map_err(|e| {
                let why = match e.kind() {
                    serialport::ErrorKind::NoDevice => "the port is busy or gone".to_string(),
                    _ => e.to_string(),
                };
                CliError::new(format!("--link serial:{path}: {why}"))
            })?;
        Ok(PortWire {
            port,
            name: path.to_string(),
            _device: None,
            throttle_bytes_s: None,
        })
    }

    /// The simulator behind a pseudo-terminal in this process: the device serves the
    /// master side on a thread, this end is the terminal side with real termios.
    pub fn pty(throttle_baud: Option<u32>) -> crate::error::CliResult<PortWire> {
        use crate::error::CliError;
        let (master, slave) = serialport::TTYPort::pair()
            .map_err(|e| CliError::new(format!("--link pty: no pseudo-terminal: {e}")))?;
        let name = slave.name().unwrap_or_else(|| "pty".into());
        let console = device::sim_console()?;
        let handle = std::thread::spawn(move || {
            let mut m = master;
            let mut console = console;
            let _ = device::serve(
                &mut console,
                &mut m,
                None,
                throttle_baud,
                &device::Faults::default(),
            );
        });
        Ok(PortWire {
            port: Box::new(slave),
            name,
            _device: Some(handle),
            throttle_bytes_s: throttle_baud.map(bytes_per_s),
        })
    }
}

/// Bytes per second of a UART at `baud`, 8N1 (10 bits a byte).
pub fn bytes_per_s(baud: u32) -> f64 {
    f64::from(baud) / 10.0
}

#[cfg(unix)]
fn open_plain(path: &str) -> io::Result<std::fs::File> {
    use std::os::unix::fs::OpenOptionsExt;
    std::fs::OpenOptions::new()
        .read(true)
        .write(true)
        .custom_flags(libc::O_NONBLOCK | libc::O_NOCTTY)
        .open(path)
}

#[cfg(not(unix))]
fn open_plain(path: &str) -> io::Result<std::fs::File> {
    std::fs::OpenOptions::new()
        .read(true)
        .write(true)
        .open(path)
}

#[cfg(unix)]
fn is_char_device(m: &std::fs::Metadata) -> bool {
    use std::os::unix::fs::FileTypeExt;
    m.file_type().is_char_device()
}

#[cfg(not(unix))]
fn is_char_device(_m: &std::fs::Metadata) -> bool {
    true
}

/// An I/O error without Rust's "(os error N)" tail.
fn plain_io(e: &io::Error) -> String {
    let s = e.to_string();
    match s.find(" (os error") {
        Some(i) => s[..i].to_lowercase(),
        None => s,
    }
}

impl Wire for PortWire {
    fn send(&mut self, bytes: &[u8]) -> io::Result<()> {
        let start = Instant::now();
        self.port.write_all(bytes)?;
        self.port.flush()?;
        if let Some(rate) = self.throttle_bytes_s {
            let due = Duration::from_secs_f64(bytes.len() as f64 / rate);
            if let Some(rest) = due.checked_sub(start.elapsed()) {
                std::thread::sleep(rest);
            }
        }
        Ok(())
    }
    fn recv(&mut self, buf: &mut [u8], timeout: Duration) -> io::Result<usize> {
        self.port
            .set_timeout(timeout.max(Duration::from_millis(1)))
            .map_err(io::Error::other)?;
        match self.port.read(buf) {
            Ok(n) => Ok(n),
            Err(e) if e.kind() == io::ErrorKind::TimedOut => Ok(0),
            Err(e) => Err(e),
        }
    }
    fn describe(&self) -> String {
        self.name.clone()
    }
}

/// QEMU running the firmware image, its UART0 on QEMU's stdio (pipes).
pub struct QemuWire {
    child: std::process::Child,
    stdin: std::process::ChildStdin,
    rx: mpsc::Receiver<Vec<u8>>,
    pending: Vec<u8>,
    image: String,
}

impl QemuWire {
    /// Starts `qemu-system-arm -machine mps2-an386` with `image` (an ELF).
    pub fn start(image: &str) -> crate::error::CliResult<QemuWire> {
        use crate::error::CliError;
        if !std::path::Path::new(image).is_file() {
            return Err(CliError::new(format!(
                "--link qemu:{image}: no such image; build it with `cd tests/firmware && cargo build --profile firmware --bin console`"
            )));
        }
        let mut child = std::process::Command::new("qemu-system-arm")
            .args([
                "-machine",
                "mps2-an386",
                "-cpu",
                "cortex-m4",
                "-display",
                "none",
                "-monitor",
                "none",
                "-serial",
                "stdio",
                "-semihosting-config",
                "enable=on,target=native",
                "-kernel",
                image,
            ])
            .stdin(std::process::Stdio::piped())
            .stdout(std::process::Stdio::piped())
            .stderr(std::process::Stdio::null())
            .spawn()
            .map_err(|e| {
                CliError::new(format!(
                    "--link qemu: cannot start qemu-system-arm: {}; install it (Debian: apt install qemu-system-arm)",
                    plain_io(&e)
                ))
            })?;
        let stdin = child
            .stdin
            .take()
            .ok_or_else(|| CliError::new("--link qemu: no pipe to QEMU"))?;
        let mut stdout = child
            .stdout
            .take()
            .ok_or_else(|| CliError::new("--link qemu: no pipe from QEMU"))?;
        let (tx, rx) = mpsc::channel();
        std::thread::spawn(move || {
            let mut buf = [0u8; 4096];
            while let Ok(n) = stdout.read(&mut buf) {
                if n == 0 || tx.send(buf[..n].to_vec()).is_err() {
                    break;
                }
            }
        });
        Ok(QemuWire {
            child,
            stdin,
            rx,
            pending: Vec::new(),
            image: image.to_string(),
        })
    }
}

impl Wire for QemuWire {
    fn send(&mut self, bytes: &[u8]) -> io::Result<()> {
        self.stdin.write_all(bytes)?;
        self.stdin.flush()
    }
    fn recv(&mut self, buf: &mut [u8], timeout: Duration) -> io::Result<usize> {
        if self.pending.is_empty() {
            match self.rx.recv_timeout(timeout) {
                Ok(b) => self.pending = b,
                Err(mpsc::RecvTimeoutError::Timeout) => return Ok(0),
                Err(mpsc::RecvTimeoutError::Disconnected) => {
                    return Err(io::Error::new(
                        io::ErrorKind::BrokenPipe,
                        "QEMU exited (the image stopped or crashed)",
                    ))
                }
            }
        }
        let n = buf.len().min(self.pending.len());
        buf[..n].copy_from_slice(&self.pending[..n]);
        self.pending.drain(..n);
        Ok(n)
    }
    fn describe(&self) -> String {
        format!("qemu ({})", self.image)
    }
}

impl Drop for QemuWire {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}
