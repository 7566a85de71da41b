//! The controller: console state, request execution and streamed replies — the
//! application layer on top of the [`wire`](super::wire) layer.
//!
//! [`Console`] is fed bytes ([`Console::push`]); each complete line is one request. A
//! request gets exactly one final status line, `ok …` or `err <code> <message>`. Long
//! lists are streamed: the request starts a stream and every [`Console::poll`] writes
//! one `- …` item, the last poll the final line — nothing is buffered beyond the item
//! being written. While a stream runs, `stop` aborts it (the streaming request ends with
//! `err 411`, then `stop` answers `ok`); any other request gets `err 410` (busy).
//!
//! A request that fails changes nothing: every command reads and checks all of its
//! arguments, computes its results, and only then commits them.
//!
//! One file per concern:
//!
//! | file | owns |
//! |---|---|
//! | `mod.rs` | the [`Console`], byte intake, request dispatch, `poll` |
//! | `args.rs` | argument readers and the small text helpers replies share |
//! | `fault.rs` | a failed request's error and detail (key, value, reason, what is accepted), and the one `err` line writer |
//! | `overlayer.rs` | the overlayer's lattices and the fractional beam that must belong to them |
//! | `settings.rs` | [`Settings`] and the one table of setting keys ([`SETTING_KEYS`]) that drives `set`, `get`, `dump` and `help` |
//! | `motion.rs` | `move`, `stop`, `pos`, `enable`, `disable`, `read` |
//! | `axes.rs` | `axis` and `zone`: the rig as the controller holds it |
//! | `plan.rs` | `aim` and `plan`: solutions and scan plans |
//! | `fit.rs` | `pt` and `fit` |
//! | `budget.rs` | `budget`: the angular error budget of the aimed beam |
//! | `steps.rs` | `steps`: a stepped face's split spots and in/out-of-phase energies |
//! | `screen.rs` | `screen`: spots on a hemispherical screen or flat detector, and the beam at a measured spot |
//! | `stream.rs` | the running stream and its items (help, lists, solutions, plan points) |
//! | `dump.rs` | `dump`: the settings as requests that replay them |
//!
//! The command set is documented in `docs/PROTOCOL.md`; a test runs every example there.

mod args;
mod axes;
mod budget;
mod dump;
mod fault;
mod fit;
mod motion;
mod overlayer;
mod plan;
mod screen;
mod settings;
mod steps;
mod stream;

use embedded_io::Write;

use super::board::{AxisDriver, Detector, Interlock, Trip};
use super::wire::crc;
use super::wire::line::{LineAssembler, LineEvent, MAX_LINE};
use super::wire::reply::{ReplyError, ReplyWriter};
use super::wire::token::Args;
use crate::error::{AxisId, Error};
use crate::goniometer::{axis_index, Position, Refusals, Solution};

pub use dump::{rig_request, Dump, REPLAY_STEPS_PER_DEG};
use fault::{no_args, write_err, Fault, Result};
pub use settings::{SettingKey, Settings, SETTING_KEYS};
use stream::Stream;

/// Protocol version reported by `hello`.
pub const PROTOCOL_VERSION: u16 = 1;

/// Longest reply line, bytes, including a checksum suffix (requests: [`MAX_LINE`]).
pub const MAX_REPLY: usize = 256;

/// Decimals of the angles (degrees) in the items of the high-volume streams — `beams`,
/// `aim` solutions, `plan` points: 1e-4°, finer than the core's agreement with the f64
/// oracle (2.5e-4°) and a tenth of the factory axes' microstep (1/888.9°). Values that
/// must read back exactly (`get`, `dump`, the final lines, refusals) keep the shortest
/// round-trip form.
pub const ANGLE_DECIMALS: u8 = 4;

/// Decimals of an aim solution's `residual=` (degrees, a fraction of one microstep):
/// 1e-6°.
pub const RESIDUAL_DECIMALS: u8 = 6;

/// Decimals of the energies (eV) in stream items (`emerge=`, `nominal=`, `peak=`,
/// `peak_sample=`): 1 meV, far below any gun's energy spread.
pub const ENERGY_DECIMALS: u8 = 3;

/// Decimals of the lengths (Å) in stream items (`row=`): 1e-4 Å, as fine as the
/// crystal table's lattice constants.
pub const LENGTH_DECIMALS: u8 = 4;

/// Aim solutions kept for `move sol=N`.
pub const MAX_SOLUTIONS: usize = 8;

/// Points the `pt` buffer holds for fits.
pub const MAX_POINTS: usize = 64;

type Rw<'w, W> = ReplyWriter<'w, W, MAX_REPLY>;

/// Commands with their one-line usage, as `help` lists them (`set` appends the key names
/// of [`SETTING_KEYS`] it takes, `axis` the rig file's axis keys).
pub const COMMANDS: [(&str, &str); 28] = [
    ("hello", "identify: name, version, protocol"),
    ("help", "this list"),
    ("status", "enabled, interlock, motion, stream"),
    (
        "session",
        "session id=N: a host's mark (1 to 2147483647), shown by status until power-up",
    ),
    ("set", "set key=value ...:"),
    ("get", "get [key]: one or all settings"),
    ("crystals", "list the crystal table"),
    ("faces", "list the crystal's table faces"),
    ("beams", "list the beams at the current settings"),
    (
        "energy",
        "energy lambda=A: the kinetic energy (eV) of an electron of that wavelength",
    ),
    (
        "aim",
        "aim [beam=h,k] [branch=nearest|+1|-1]: solutions for the beam, nearest first; on failure every refusal, then err",
    ),
    (
        "move",
        "move sol=N | move arm=DEG [elevation= tilt= azimuth=]: needs enable",
    ),
    ("stop", "stop motion and any stream; always accepted"),
    ("pos", "axis positions"),
    ("enable", "allow motion (interlock must report safe)"),
    ("disable", "forbid motion"),
    (
        "home",
        "home name=A [at=DEG]: declare where the axis stands (default: at home, step 0); needs disable",
    ),
    ("axis", "axis name=A [key=value ...]:"),
    (
        "zone",
        "zone name=A i=N from=DEG to=DEG | zone name=A i=N off",
    ),
    (
        "plan",
        "plan kind=track|iv|sweep from= to= step= [dwell=] [branch=nearest|+1|-1]: streamed points",
    ),
    ("pt", "pt x= y= [n=] | pt clear: points for fit"),
    ("fit", "fit kind=peak|centroid|armzero|rows|iv [threshold=]"),
    (
        "budget",
        "budget [energy_spread=EV] [arm_zero_sigma=DEG]: angular error budget of the aimed beam",
    ),
    (
        "steps",
        "steps miscut=DEG|terrace=A [height=A] [direction=DEG] [from=EV] [to=EV]: the beam's split spots on a stepped face, then the in/out-of-phase energies",
    ),
    (
        "screen",
        "screen radius=MM [rim=] | distance=MM half_width= half_height= [arm= elevation=]; [shadow=DEG] [x=MM y=MM [tolerance=DEG]]: spots, or the beam at a spot",
    ),
    ("read", "read the detector"),
    ("dump", "settings as commands that replay them"),
    (
        "reset",
        "factory settings, motion disabled, every position unknown until home",
    ),
];

/// A point of the `pt` buffer: two values and an optional integer.
#[derive(Clone, Copy, Debug, PartialEq)]
struct Point {
    x: f32,
    y: f32,
    n: i32,
}

/// The console of one controller, generic over the board's parts.
pub struct Console<A: AxisDriver, D: Detector, I: Interlock> {
    /// Motor axes.
    pub axes: A,
    /// Detector.
    pub detector: D,
    /// Interlock input.
    pub interlock: I,
    lines: LineAssembler<MAX_LINE>,
    settings: Settings,
    enabled: bool,
    /// Whether the console knows where each axis stands (by [`axis_index`]).
    known: [bool; 4],
    solutions: heapless::Vec<Solution, MAX_SOLUTIONS>,
    /// Why the last `aim` found no solution (streamed before its `err` line).
    refusals: Refusals,
    points: heapless::Vec<Point, MAX_POINTS>,
    stream: Stream,
    stream_crc: bool,
    requests: u32,
    errors: u32,
    /// Why the console last stopped motion on its own, until an `enable` succeeds.
    trip: Option<Trip>,
    /// The mark a host set with `session id=` (0: none since power-up).
    session: u32,
}

/// A write error from the reply path (the line was not sent).
pub type WriteResult<E> = core::result::Result<(), ReplyError<E>>;

impl<A: AxisDriver, D: Detector, I: Interlock> Console<A, D, I> {
    /// A console with factory settings and motion disabled. The board's step counters
    /// are taken as positions in the factory calibration: construct the console once
    /// the axes are homed, or call [`Console::forget_positions`] so that no axis moves
    /// before `home` declares where it stands.
    pub fn new(axes: A, detector: D, interlock: I) -> crate::error::Result<Self> {
        Ok(Console {
            axes,
            detector,
            interlock,
            lines: LineAssembler::new(),
            settings: Settings::defaults()?,
            enabled: false,
            known: [true; 4],
            solutions: heapless::Vec::new(),
            refusals: Refusals::default(),
            points: heapless::Vec::new(),
            stream: Stream::Idle,
            stream_crc: false,
            requests: 0,
            errors: 0,
            trip: None,
            session: 0,
        })
    }

    /// Watches the board: call it on every control tick (the console also calls it
    /// before every request and every streamed line). An interlock that reports unsafe
    /// while motion is enabled or an axis moves, and any fault an axis driver reports,
    /// stop every axis and disable motion at once; a faulted axis's position becomes
    /// unknown (a stall or a limit switch leaves its counter untrustworthy). The trip is
    /// latched (see [`Console::trip`]) until an `enable` succeeds. Returns the trip this
    /// call latched, if any. Bounded work: one interlock read and up to one fault per
    /// axis.
    pub fn tick(&mut self) -> Option<Trip> {
        let mut tripped = None;
        for _ in AxisId::ALL {
            match self.axes.take_fault() {
                Some(f) => {
                    self.forget_position(f.axis);
                    tripped = tripped.or(Some(Trip::Axis(f)));
                }
                None => break,
            }
        }
        if tripped.is_none() && (self.enabled || self.axes.busy()) && !self.interlock.safe() {
            tripped = Some(Trip::Interlock);
        }
        if let Some(t) = tripped {
            self.axes.stop();
            self.enabled = false;
            // The first trip since the last `enable` is the one that explains the stop.
            self.trip = self.trip.or(Some(t));
        }
        tripped
    }

    /// Why the console stopped motion on its own since the last `enable` that succeeded:
    /// an interlock that opened, or an axis driver's fault.
    pub fn trip(&self) -> Option<Trip> {
        self.trip
    }

    /// The current settings.
    pub fn settings(&self) -> &Settings {
        &self.settings
    }

    /// Whether motion is enabled.
    pub fn enabled(&self) -> bool {
        self.enabled
    }

    /// Whether the console knows where `axis` stands: true from [`Console::new`] and
    /// after `home`; false after `reset`, [`Console::forget_positions`] and a change of
    /// the axis's calibration. A move of an axis whose position is unknown is refused
    /// (`err 320`).
    pub fn position_known(&self, axis: AxisId) -> bool {
        self.known.get(axis_index(axis)).copied().unwrap_or(false)
    }

    /// Marks every axis's position unknown (e.g. at power-up, before homing): no axis
    /// moves until `home` declares where it stands.
    pub fn forget_positions(&mut self) {
        self.known = [false; 4];
    }

    /// Marks the position of `axis` unknown (its calibration changed).
    fn forget_position(&mut self, axis: AxisId) {
        if let Some(k) = self.known.get_mut(axis_index(axis)) {
            *k = false;
        }
    }

    /// Whether a stream is running (call [`Console::poll`] until it is not).
    pub fn streaming(&self) -> bool {
        !matches!(self.stream, Stream::Idle)
    }

    /// Current axis step counts.
    pub fn position(&mut self) -> Position {
        let mut p = [0; 4];
        for id in AxisId::ALL {
            if id != AxisId::Elevation || self.settings.rig.elevation.is_some() {
                if let Some(slot) = p.get_mut(axis_index(id)) {
                    *slot = self.axes.position(id);
                }
            }
        }
        p
    }

    /// Feeds one byte; a completed line is executed (its reply written to `out`, or
    /// its stream started).
    #[inline]
    pub fn push<W: Write>(&mut self, byte: u8, out: &mut W) -> WriteResult<W::Error> {
        let mut buf = [0u8; MAX_LINE];
        let len = match self.lines.push(byte) {
            None | Some(LineEvent::Empty) => return Ok(()),
            Some(LineEvent::TooLong) => return self.reject(out, Error::LineTooLong.into(), false),
            Some(LineEvent::BadByte) => return self.reject(out, Error::BadByte.into(), false),
            Some(LineEvent::Line(s)) => {
                let n = s.len().min(MAX_LINE);
                if let (Some(dst), Some(src)) = (buf.get_mut(..n), s.as_bytes().get(..n)) {
                    dst.copy_from_slice(src);
                }
                n
            }
        };
        let line = buf
            .get(..len)
            .and_then(|b| core::str::from_utf8(b).ok())
            .unwrap_or("");
        self.request(line, out)
    }

    /// Feeds bytes, then runs any stream to its end (for links that do not interleave
    /// requests with a running stream).
    pub fn feed_all<W: Write>(&mut self, bytes: &[u8], out: &mut W) -> WriteResult<W::Error> {
        for &b in bytes {
            self.push(b, out)?;
            while self.poll(out)? {}
        }
        Ok(())
    }

    /// `Err(MotionEnabled)` unless motion is disabled and no axis is moving: the state
    /// in which the configuration may change and positions may be declared.
    fn require_at_rest(&mut self) -> Result<()> {
        if self.enabled || self.axes.busy() {
            return Err(Error::MotionEnabled.into());
        }
        Ok(())
    }

    fn reject<W: Write>(&mut self, out: &mut W, f: Fault, crc_on: bool) -> WriteResult<W::Error> {
        self.requests = self.requests.saturating_add(1);
        self.errors = self.errors.saturating_add(1);
        let mut rw = Rw::with_line_length(out, crc_on);
        write_err(&mut rw, &f, &self.settings.rig);
        rw.finish()
    }

    fn request<W: Write>(&mut self, line: &str, out: &mut W) -> WriteResult<W::Error> {
        self.tick();
        let (body, crc_on) = match crc::verify(line) {
            Ok(v) => v,
            Err(_) => return self.reject(out, Error::BadChecksum.into(), line.contains('*')),
        };
        let mut args = match Args::parse_detailed(body) {
            Ok(a) => a,
            Err(f) => return self.reject(out, Fault::token(f), crc_on),
        };
        if self.streaming() {
            if args.command() == "stop" && args.is_empty() {
                self.axes.stop();
                self.enabled = false;
                let stream_crc = self.stream_crc;
                self.stream = Stream::Idle;
                {
                    let mut rw = Rw::with_line_length(out, stream_crc);
                    rw.err(Error::Aborted.code(), Error::Aborted.message());
                    rw.finish()?;
                }
                self.requests = self.requests.saturating_add(1);
                let mut rw = Rw::with_line_length(out, crc_on);
                rw.ok().field_str("stopped", "stream");
                return rw.finish();
            }
            return self.reject(out, Error::Busy.into(), crc_on);
        }
        self.requests = self.requests.saturating_add(1);
        let mut rw = Rw::with_line_length(out, crc_on);
        match self.execute(&mut args, &mut rw) {
            Ok(None) => {
                if rw.overflowed() {
                    rw.clear();
                    rw.err(Error::ReplyTooLong.code(), Error::ReplyTooLong.message());
                }
                rw.finish()
            }
            Ok(Some(stream)) => {
                rw.clear();
                self.stream = stream;
                self.stream_crc = crc_on;
                Ok(())
            }
            Err(f) => {
                self.errors = self.errors.saturating_add(1);
                rw.clear();
                write_err(&mut rw, &f, &self.settings.rig);
                rw.finish()
            }
        }
    }

    fn execute<W: Write>(
        &mut self,
        a: &mut Args<'_>,
        rw: &mut Rw<'_, W>,
    ) -> Result<Option<Stream>> {
        let cmd = a.command();
        // Commands without arguments check that none were given (`no_args`).
        match cmd {
            "hello" => {
                no_args(a)?;
                rw.ok()
                    .field_str("name", "matterwave")
                    .field_str("version", crate::VERSION)
                    .field_i32("protocol", PROTOCOL_VERSION as i32)
                    .field_i32("max_line", MAX_LINE as i32);
                Ok(None)
            }
            "help" => {
                no_args(a)?;
                Ok(Some(Stream::Help(0)))
            }
            "status" => {
                no_args(a)?;
                let safe = self.interlock.safe();
                let busy = self.axes.busy();
                rw.ok()
                    .field_i32("enabled", self.enabled as i32)
                    .field_str("interlock", if safe { "safe" } else { "open" })
                    .field_i32("moving", busy as i32)
                    .field_i32("solutions", self.solutions.len() as i32)
                    .field_i32("points", self.points.len() as i32)
                    .field_i32("requests", self.requests as i32)
                    .field_i32("errors", self.errors as i32);
                if self.session != 0 {
                    rw.field_i32("session", self.session as i32);
                }
                self.write_trip(rw);
                self.write_unknown(rw);
                Ok(None)
            }
            "session" => self.cmd_session(a, rw),
            "set" => self.cmd_set(a, rw),
            "get" => self.cmd_get(a, rw),
            "crystals" => {
                no_args(a)?;
                Ok(Some(Stream::Crystals(0)))
            }
            "faces" => {
                no_args(a)?;
                Ok(Some(Stream::Faces(0)))
            }
            "beams" => {
                no_args(a)?;
                self.start_beams()
            }
            "energy" => cmd_energy(a, rw),
            "aim" => self.cmd_aim(a),
            "move" => self.cmd_move(a, rw),
            "stop" => {
                no_args(a)?;
                self.cmd_stop(rw)
            }
            "pos" => {
                no_args(a)?;
                self.cmd_pos(rw)
            }
            "enable" => {
                no_args(a)?;
                self.cmd_enable(rw)
            }
            "disable" => {
                no_args(a)?;
                self.cmd_disable(rw)
            }
            "home" => self.cmd_home(a, rw),
            "axis" => self.cmd_axis(a, rw),
            "zone" => self.cmd_zone(a, rw),
            "plan" => self.cmd_plan(a),
            "pt" => self.cmd_pt(a, rw),
            "fit" => self.cmd_fit(a, rw),
            "budget" => self.cmd_budget(a),
            "steps" => self.cmd_steps(a),
            "screen" => self.cmd_screen(a, rw),
            "read" => {
                no_args(a)?;
                self.cmd_read(rw)
            }
            "dump" => {
                no_args(a)?;
                Ok(Some(Stream::Dump(0)))
            }
            "reset" => {
                no_args(a)?;
                self.axes.stop();
                let s = Settings::defaults()?;
                self.settings = s;
                self.enabled = false;
                // The step counters stay, but the calibration they were counted in is
                // gone: no axis moves until `home` says where it stands.
                self.known = [false; 4];
                self.solutions.clear();
                self.points.clear();
                rw.ok().field_i32("enabled", 0);
                Ok(None)
            }
            _ => Err(Fault::from(Error::UnknownCommand).quoting(cmd)),
        }
    }

    /// `session id=N`: the host's mark, kept until power-up (not by `reset`). Out of
    /// line, so that its locals do not deepen every request's frame.
    #[inline(never)]
    fn cmd_session<W: Write>(
        &mut self,
        a: &mut Args<'_>,
        rw: &mut Rw<'_, W>,
    ) -> Result<Option<Stream>> {
        let id = args::opt_int(a, "id")?;
        fault::check_used(a)?;
        let id = id.ok_or_else(|| {
            Fault::from(Error::MissingArgument)
                .on_key("id")
                .accepting(fault::Accepted::usage_of("session"))
        })?;
        if id < 1 {
            return Err(Fault::from(Error::BadValue)
                .on_key("id")
                .because("a session mark is 1 to 2147483647"));
        }
        // Kept through `reset` (the host asked for that one): only a power-up, a new
        // console, forgets it.
        self.session = id as u32;
        rw.ok().field_i32("session", id);
        Ok(None)
    }

    /// Writes the next line of a running stream. Returns whether more lines follow.
    ///
    /// The stream is stepped where it lives: the settings and stored solutions it reads
    /// are borrowed beside it, so no plan is copied per line.
    pub fn poll<W: Write>(
        &mut self,
        out: &mut W,
    ) -> core::result::Result<bool, ReplyError<W::Error>> {
        if !self.streaming() {
            return Ok(false);
        }
        self.tick();
        let mut rw = Rw::with_line_length(out, self.stream_crc);
        let ctx = stream::Context {
            settings: &self.settings,
            solutions: &self.solutions,
            refusals: &self.refusals,
        };
        let more = self.stream.step(&ctx, &mut rw);
        // Defence only: no stream line of any configuration the console accepts
        // outgrows MAX_REPLY (`tests/tests/reply_lengths.rs` checks every line shape
        // with every number at its longest), so this item is never sent.
        if rw.overflowed() {
            rw.clear();
            rw.item().field_str("skipped", "too-long");
        }
        if !more {
            self.stream = Stream::Idle;
        }
        rw.finish()?;
        Ok(more)
    }
}

/// `energy lambda=Å`: the kinetic energy of that wavelength; reads and changes no
/// setting. Out of line, so that its locals do not deepen every request's frame.
#[inline(never)]
fn cmd_energy<W: Write>(a: &mut Args<'_>, rw: &mut Rw<'_, W>) -> Result<Option<Stream>> {
    // Read and converted in one step, so a fault quotes the value as typed.
    let e = args::keyed(a, "lambda", |v| {
        crate::beam::energy_from_wavelength_ev(args::parse_num(v)?).map_err(Fault::from)
    })?
    .ok_or_else(|| args::missing(a, "lambda"))?;
    fault::check_used(a)?;
    rw.ok().field_f32_rt("energy", e);
    Ok(None)
}
