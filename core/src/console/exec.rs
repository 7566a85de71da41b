//! The controller console: state, request execution and streamed replies.
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
//! The command set is documented in `docs/PROTOCOL.md`; a test runs every example there.

use embedded_io::Write;

use super::board::{AxisDriver, Detector, Interlock, Scene};
use super::crc;
use super::line::{LineAssembler, LineEvent, MAX_LINE};
use super::num;
use super::reply::{ReplyError, ReplyWriter};
use super::token::{Args, TokenError};
use crate::axis::{Approach, AxisConfig, Zone, MAX_ZONES};
use crate::beam::{self, Gun};
use crate::error::{AxisId, Error, Result};
use crate::fit::{self, Sample};
use crate::goniometer::{self, axis_index, Mode, Position, Rig, Solution};
use crate::lattice::{parse_miller, Miller, System};
use crate::scan::{self, IvPlan, SweepPlan, TrackPlan};
use crate::surface::{BeamIter, Face, Incidence};
use crate::table::{self, Crystal};

/// Protocol version reported by `hello`.
pub const PROTOCOL_VERSION: u16 = 1;

/// Longest reply line, bytes, including a checksum suffix (requests: [`MAX_LINE`]).
pub const MAX_REPLY: usize = 256;

/// Aim solutions kept for `move sol=N`.
pub const MAX_SOLUTIONS: usize = 8;

/// Points the `pt` buffer holds for fits.
pub const MAX_POINTS: usize = 64;

type Rw<'w, W> = ReplyWriter<'w, W, MAX_REPLY>;

/// Every setting the console keeps (what `dump` saves and `reset` restores).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Settings {
    /// Gun energy and corrections.
    pub gun: Gun,
    /// Inner potential, eV; `None` = the table's value for the face.
    pub inner_potential_ev: Option<f32>,
    /// The crystal.
    pub crystal: &'static Crystal,
    /// The face (computed from the crystal and the Miller indices).
    pub face: Face,
    /// Sample tilt, degrees (also the tilt axis target of `aim`).
    pub tilt_deg: f32,
    /// Sample azimuth for two-circle aiming, degrees; `None` = in-plane mode.
    pub azimuth_deg: Option<f32>,
    /// The beam (rod) `aim` and the plans use.
    pub beam: [i32; 2],
    /// Axes and detector acceptance.
    pub rig: Rig,
}

impl Settings {
    /// Factory settings: Cu(100), 100 eV, tilt 20°, specular beam, the default rig.
    pub fn defaults() -> Result<Settings> {
        let crystal = table::find("cu")?;
        let face = Face::new(&crystal.cell()?, [1, 0, 0])?;
        Ok(Settings {
            gun: Gun::plain(100.0),
            inner_potential_ev: None,
            crystal,
            face,
            tilt_deg: 20.0,
            azimuth_deg: None,
            beam: [0, 0],
            rig: Rig::bench_default(),
        })
    }

    fn mode(&self) -> Mode {
        self.azimuth_deg.map_or(Mode::InPlane, Mode::AtAzimuth)
    }

    fn inner_potential(&self) -> f32 {
        self.inner_potential_ev
            .or_else(|| self.crystal.inner_potential_for(self.face.miller))
            .unwrap_or(10.0)
    }
}

/// A point of the `pt` buffer: two values and an optional integer.
#[derive(Clone, Copy, Debug, PartialEq)]
struct Point {
    x: f32,
    y: f32,
    n: i32,
}

// No heap to box into: the one running plan lives in place.
#[allow(clippy::large_enum_variant)]
#[derive(Clone, Copy)]
enum Plan {
    Track(TrackPlan),
    Iv(IvPlan),
    Sweep(SweepPlan),
}

#[allow(clippy::large_enum_variant)]
#[derive(Clone, Copy)]
enum Stream {
    Idle,
    Help(u8),
    Crystals(u8),
    Faces(u8),
    Beams(BeamIter, u32),
    Aim(u8),
    Plan {
        plan: Plan,
        i: u32,
        pos: Position,
        reachable: u32,
        time_s: f32,
        dwell_s: f32,
    },
    Dump(u8),
}

/// Commands with their one-line usage, as `help` lists them.
pub const COMMANDS: [(&str, &str); 22] = [
    ("hello", "identify: name, version, protocol"),
    ("help", "this list"),
    ("status", "enabled, interlock, motion, stream"),
    ("set", "set key=value ...: energy cathode sample offset v0 crystal face tilt azimuth beam acceptance"),
    ("get", "get [key]: one or all settings"),
    ("crystals", "list the crystal table"),
    ("faces", "list the crystal's table faces"),
    ("beams", "list the beams at the current settings"),
    ("aim", "aim [beam=h,k]: solutions for the beam, nearest first"),
    ("move", "move sol=N | move arm=DEG [elevation= tilt= azimuth=]: needs enable"),
    ("stop", "stop motion and any stream; always accepted"),
    ("pos", "axis positions"),
    ("enable", "allow motion (interlock must report safe)"),
    ("disable", "forbid motion"),
    ("axis", "axis name=A [spd= home= min= max= backlash= approach= wrap= speed= accel= fitted=]"),
    ("zone", "zone name=A i=N from=DEG to=DEG | zone name=A i=N off"),
    ("plan", "plan kind=track|iv|sweep from= to= step= [dwell=]: streamed points"),
    ("pt", "pt x= y= [n=] | pt clear: points for fit"),
    ("fit", "fit kind=peak|centroid|armzero|rows|iv [threshold=]"),
    ("read", "read the detector"),
    ("dump", "settings as commands that replay them"),
    ("reset", "factory settings, motion disabled"),
];

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
    solutions: [Solution; MAX_SOLUTIONS],
    n_solutions: usize,
    points: [Point; MAX_POINTS],
    n_points: usize,
    stream: Stream,
    stream_crc: bool,
    requests: u32,
    errors: u32,
}

/// A write error from the reply path (the line was not sent).
pub type WriteResult<E> = core::result::Result<(), ReplyError<E>>;

fn tok_err(e: TokenError) -> Error {
    match e {
        TokenError::NoCommand | TokenError::BadCommand => Error::UnknownCommand,
        TokenError::EmptyValue => Error::MissingArgument,
        TokenError::Unused | TokenError::TooMany => Error::UnknownArgument,
        TokenError::BadKey | TokenError::DuplicateKey => Error::BadValue,
    }
}

fn parse_num(s: &str) -> Result<f32> {
    num::parse_f32(s).map_err(|_| Error::BadNumber)
}

fn opt_num(a: &mut Args<'_>, key: &str) -> Result<Option<f32>> {
    a.get(key).map(parse_num).transpose()
}

fn req_num(a: &mut Args<'_>, key: &str) -> Result<f32> {
    opt_num(a, key)?.ok_or(Error::MissingArgument)
}

fn parse_int(s: &str) -> Result<i32> {
    num::parse_i32(s).map_err(|_| Error::BadNumber)
}

fn parse_rod(s: &str) -> Result<[i32; 2]> {
    let mut it = s.split(',');
    let h = parse_int(it.next().ok_or(Error::BadValue)?)?;
    let k = parse_int(it.next().ok_or(Error::BadValue)?)?;
    if it.next().is_some() {
        return Err(Error::BadValue);
    }
    if h.abs() > 99 || k.abs() > 99 {
        return Err(Error::IndicesTooLarge);
    }
    Ok([h, k])
}

fn parse_bool(s: &str) -> Result<bool> {
    match s {
        "1" | "on" | "yes" => Ok(true),
        "0" | "off" | "no" => Ok(false),
        _ => Err(Error::BadValue),
    }
}

fn axis_id(s: &str) -> Result<AxisId> {
    AxisId::from_name(s).ok_or(Error::BadValue)
}

/// The configuration slot of an axis in a rig.
fn axis_of(rig: &Rig, id: AxisId) -> Option<&AxisConfig> {
    match id {
        AxisId::Arm => Some(&rig.arm),
        AxisId::Elevation => rig.elevation.as_ref(),
        AxisId::Tilt => Some(&rig.tilt),
        AxisId::Azimuth => Some(&rig.azimuth),
    }
}

/// A default elevation axis for `axis name=elevation fitted=1`.
const fn default_elevation() -> AxisConfig {
    let mut e = AxisConfig::new(AxisId::Elevation, 200.0 * 16.0 * 100.0 / 360.0);
    e.min_deg = -60.0;
    e.max_deg = 60.0;
    e
}

fn set_axis(rig: &mut Rig, id: AxisId, cfg: Option<AxisConfig>) {
    match (id, cfg) {
        (AxisId::Arm, Some(c)) => rig.arm = c,
        (AxisId::Tilt, Some(c)) => rig.tilt = c,
        (AxisId::Azimuth, Some(c)) => rig.azimuth = c,
        (AxisId::Elevation, c) => rig.elevation = c,
        _ => {}
    }
}

impl<A: AxisDriver, D: Detector, I: Interlock> Console<A, D, I> {
    /// A console with factory settings and motion disabled.
    pub fn new(axes: A, detector: D, interlock: I) -> Result<Self> {
        Ok(Console {
            axes,
            detector,
            interlock,
            lines: LineAssembler::new(),
            settings: Settings::defaults()?,
            enabled: false,
            solutions: [Solution::EMPTY; MAX_SOLUTIONS],
            n_solutions: 0,
            points: [Point {
                x: 0.0,
                y: 0.0,
                n: 0,
            }; MAX_POINTS],
            n_points: 0,
            stream: Stream::Idle,
            stream_crc: false,
            requests: 0,
            errors: 0,
        })
    }

    /// The current settings.
    pub fn settings(&self) -> &Settings {
        &self.settings
    }

    /// Whether motion is enabled.
    pub fn enabled(&self) -> bool {
        self.enabled
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
                p[axis_index(id)] = self.axes.position(id);
            }
        }
        p
    }

    /// Feeds one byte; a completed line is executed (its reply written to `out`, or
    /// its stream started).
    pub fn push<W: Write>(&mut self, byte: u8, out: &mut W) -> WriteResult<W::Error> {
        let mut buf = [0u8; MAX_LINE];
        let (event, len) = match self.lines.push(byte) {
            None => return Ok(()),
            Some(LineEvent::Line(s)) => {
                let n = s.len().min(MAX_LINE);
                buf[..n].copy_from_slice(&s.as_bytes()[..n]);
                (0u8, n)
            }
            Some(LineEvent::Empty) => return Ok(()),
            Some(LineEvent::TooLong) => (1, 0),
            Some(LineEvent::BadByte) => (2, 0),
        };
        match event {
            1 => self.reject(out, Error::LineTooLong, false),
            2 => self.reject(out, Error::BadByte, false),
            _ => {
                let line = core::str::from_utf8(&buf[..len]).unwrap_or("");
                self.request(line, out)
            }
        }
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

    fn reject<W: Write>(&mut self, out: &mut W, e: Error, crc_on: bool) -> WriteResult<W::Error> {
        self.requests = self.requests.saturating_add(1);
        self.errors = self.errors.saturating_add(1);
        let mut rw = Rw::with_line_length(out, crc_on);
        rw.err(e.code(), e.message());
        rw.finish()
    }

    fn request<W: Write>(&mut self, line: &str, out: &mut W) -> WriteResult<W::Error> {
        let (body, crc_on) = match crc::verify(line) {
            Ok(v) => v,
            Err(_) => return self.reject(out, Error::BadChecksum, line.contains('*')),
        };
        let mut args = match Args::parse(body) {
            Ok(a) => a,
            Err(e) => return self.reject(out, tok_err(e), crc_on),
        };
        if self.streaming() {
            if args.command() == "stop" && args.is_empty() {
                self.axes.stop();
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
            return self.reject(out, Error::Busy, crc_on);
        }
        self.requests = self.requests.saturating_add(1);
        let mut rw = Rw::with_line_length(out, crc_on);
        match self.execute(&mut args, &mut rw) {
            Ok(None) => {
                if rw.overflowed() {
                    rw.clear();
                    rw.err(
                        Error::UnknownArgument.code(),
                        "reply too long; ask for fewer fields",
                    );
                }
                rw.finish()
            }
            Ok(Some(stream)) => {
                rw.clear();
                self.stream = stream;
                self.stream_crc = crc_on;
                Ok(())
            }
            Err(e) => {
                self.errors = self.errors.saturating_add(1);
                rw.clear();
                write_err(&mut rw, e, &self.settings.rig);
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
        // Commands without arguments check that none were given.
        let none = |a: &Args<'_>| a.check_all_used().map_err(tok_err);
        match cmd {
            "hello" => {
                none(a)?;
                rw.ok()
                    .field_str("name", "matterwave")
                    .field_str("version", crate::VERSION)
                    .field_i32("protocol", PROTOCOL_VERSION as i32)
                    .field_i32("max_line", MAX_LINE as i32);
                Ok(None)
            }
            "help" => {
                none(a)?;
                Ok(Some(Stream::Help(0)))
            }
            "status" => {
                none(a)?;
                let safe = self.interlock.safe();
                let busy = self.axes.busy();
                rw.ok()
                    .field_i32("enabled", self.enabled as i32)
                    .field_str("interlock", if safe { "safe" } else { "open" })
                    .field_i32("moving", busy as i32)
                    .field_i32("solutions", self.n_solutions as i32)
                    .field_i32("points", self.n_points as i32)
                    .field_i32("requests", self.requests as i32)
                    .field_i32("errors", self.errors as i32);
                Ok(None)
            }
            "set" => self.cmd_set(a, rw),
            "get" => self.cmd_get(a, rw),
            "crystals" => {
                none(a)?;
                Ok(Some(Stream::Crystals(0)))
            }
            "faces" => {
                none(a)?;
                Ok(Some(Stream::Faces(0)))
            }
            "beams" => {
                none(a)?;
                let s = &self.settings;
                let e = s.gun.kinetic_energy_ev()?;
                let inc = Incidence::new(e, s.tilt_deg, s.azimuth_deg.unwrap_or(0.0))?;
                Ok(Some(Stream::Beams(s.face.beams_iter(&inc), 0)))
            }
            "aim" => self.cmd_aim(a),
            "move" => self.cmd_move(a, rw),
            "stop" => {
                none(a)?;
                self.axes.stop();
                rw.ok().field_str("stopped", "motion");
                Ok(None)
            }
            "pos" => {
                none(a)?;
                let p = self.position();
                let ang = self.settings.rig.angles(&p);
                rw.ok()
                    .field_f32_rt("arm", ang[0])
                    .field_f32_rt("elevation", ang[1])
                    .field_f32_rt("tilt", ang[2])
                    .field_f32_rt("azimuth", ang[3])
                    .field_i32("arm_steps", p[0])
                    .field_i32("elevation_steps", p[1])
                    .field_i32("tilt_steps", p[2])
                    .field_i32("azimuth_steps", p[3]);
                Ok(None)
            }
            "enable" => {
                none(a)?;
                if !self.interlock.safe() {
                    return Err(Error::InterlockOpen);
                }
                self.enabled = true;
                rw.ok().field_i32("enabled", 1);
                Ok(None)
            }
            "disable" => {
                none(a)?;
                self.enabled = false;
                rw.ok().field_i32("enabled", 0);
                Ok(None)
            }
            "axis" => self.cmd_axis(a, rw),
            "zone" => self.cmd_zone(a, rw),
            "plan" => self.cmd_plan(a),
            "pt" => self.cmd_pt(a, rw),
            "fit" => self.cmd_fit(a, rw),
            "read" => {
                none(a)?;
                let p = self.position();
                let ang = self.settings.rig.angles(&p);
                let s = &self.settings;
                let e = s.gun.kinetic_energy_ev()?;
                let inc = Incidence::new(e, ang[2], ang[3])?;
                let scene = Scene {
                    face: &s.face,
                    incidence: inc,
                    arm_deg: ang[0],
                    elevation_deg: ang[1],
                    rig: &s.rig,
                };
                let v = self.detector.read(&scene);
                if !v.is_finite() {
                    return Err(Error::NotFinite(crate::error::Quantity::Count));
                }
                rw.ok().field_f32_rt("current", v);
                Ok(None)
            }
            "dump" => {
                none(a)?;
                Ok(Some(Stream::Dump(0)))
            }
            "reset" => {
                none(a)?;
                let s = Settings::defaults()?;
                self.settings = s;
                self.enabled = false;
                self.n_solutions = 0;
                self.n_points = 0;
                rw.ok().field_i32("enabled", 0);
                Ok(None)
            }
            _ => Err(Error::UnknownCommand),
        }
    }

    fn cmd_set<W: Write>(
        &mut self,
        a: &mut Args<'_>,
        rw: &mut Rw<'_, W>,
    ) -> Result<Option<Stream>> {
        if a.is_empty() {
            return Err(Error::MissingArgument);
        }
        let mut s = self.settings;
        let mut face_changed = false;
        let mut miller: Miller = s.face.miller;
        if let Some(id) = a.get("crystal") {
            s.crystal = table::find(id)?;
            face_changed = true;
        }
        if let Some(f) = a.get("face") {
            let hex = s.crystal.structure.system() == System::Hexagonal;
            miller = parse_miller(f, hex)?;
            face_changed = true;
        }
        if face_changed {
            s.face = Face::new(&s.crystal.cell()?, miller)?;
        }
        if let Some(v) = opt_num(a, "energy")? {
            s.gun.nominal_ev = v;
        }
        if let Some(v) = opt_num(a, "cathode")? {
            s.gun.cathode_work_function_ev = beam::check_work_function(v)?;
        }
        if let Some(v) = opt_num(a, "sample")? {
            s.gun.sample_work_function_ev = beam::check_work_function(v)?;
        }
        if let Some(v) = opt_num(a, "offset")? {
            s.gun.offset_ev = v;
        }
        if let Some(v) = a.get("v0") {
            s.inner_potential_ev = if v == "table" {
                None
            } else {
                Some(beam::check_inner_potential(parse_num(v)?)?)
            };
        }
        if let Some(v) = opt_num(a, "tilt")? {
            s.tilt_deg = crate::surface::check_tilt(v)?;
        }
        if let Some(v) = a.get("azimuth") {
            s.azimuth_deg = if v == "free" {
                None
            } else {
                let x = parse_num(v)?;
                if x.abs() > 360.0 {
                    return Err(Error::TooHigh(crate::error::Quantity::Azimuth));
                }
                Some(x)
            };
        }
        if let Some(v) = a.get("beam") {
            s.beam = parse_rod(v)?;
        }
        if let Some(v) = opt_num(a, "acceptance")? {
            s.rig.acceptance_deg = v;
        }
        a.check_all_used().map_err(tok_err)?;
        s.gun.kinetic_energy_ev()?;
        s.rig.validate()?;
        self.settings = s;
        self.n_solutions = 0;
        rw.ok();
        Ok(None)
    }

    fn cmd_get<W: Write>(
        &mut self,
        a: &mut Args<'_>,
        rw: &mut Rw<'_, W>,
    ) -> Result<Option<Stream>> {
        let key = a.positional(0);
        a.check_all_used().map_err(tok_err)?;
        let s = self.settings;
        let e = s.gun.kinetic_energy_ev()?;
        let all = key.is_none();
        let want = |k: &str| all || key == Some(k);
        let known = [
            "energy",
            "kinetic",
            "wavelength",
            "cathode",
            "sample",
            "offset",
            "v0",
            "crystal",
            "face",
            "tilt",
            "azimuth",
            "beam",
            "acceptance",
        ];
        if let Some(k) = key {
            if !known.contains(&k) {
                return Err(Error::UnknownArgument);
            }
        }
        rw.ok();
        if want("energy") {
            rw.field_f32_rt("energy", s.gun.nominal_ev);
        }
        if want("kinetic") {
            rw.field_f32_rt("kinetic", e);
        }
        if want("wavelength") {
            rw.field_f32_rt("wavelength", beam::wavelength_a(e)?);
        }
        if want("cathode") {
            rw.field_f32_rt("cathode", s.gun.cathode_work_function_ev);
        }
        if want("sample") {
            rw.field_f32_rt("sample", s.gun.sample_work_function_ev);
        }
        if want("offset") {
            rw.field_f32_rt("offset", s.gun.offset_ev);
        }
        if want("v0") {
            rw.field_f32_rt("v0", s.inner_potential());
        }
        if want("crystal") {
            rw.field_str("crystal", s.crystal.id);
        }
        if want("face") {
            let mut b = [0u8; 40];
            rw.field_str("face", miller_text(s.face.miller, &mut b));
        }
        if want("tilt") {
            rw.field_f32_rt("tilt", s.tilt_deg);
        }
        if want("azimuth") {
            match s.azimuth_deg {
                Some(v) => rw.field_f32_rt("azimuth", v),
                None => rw.field_str("azimuth", "free"),
            };
        }
        if want("beam") {
            let mut b = [0u8; 40];
            rw.field_str("beam", rod_text(s.beam, &mut b));
        }
        if want("acceptance") {
            rw.field_f32_rt("acceptance", s.rig.acceptance_deg);
        }
        Ok(None)
    }

    fn cmd_aim(&mut self, a: &mut Args<'_>) -> Result<Option<Stream>> {
        let rod = match a.get("beam") {
            Some(v) => parse_rod(v)?,
            None => self.settings.beam,
        };
        a.check_all_used().map_err(tok_err)?;
        let s = self.settings;
        let e = s.gun.kinetic_energy_ev()?;
        let pos = self.position();
        let mut out = [Solution::EMPTY; MAX_SOLUTIONS];
        let l = goniometer::aim(
            &s.rig,
            &s.face,
            rod,
            e,
            s.tilt_deg,
            s.mode(),
            &pos,
            &mut out,
        )?;
        self.solutions = out;
        self.n_solutions = l.stored;
        Ok(Some(Stream::Aim(0)))
    }

    fn cmd_move<W: Write>(
        &mut self,
        a: &mut Args<'_>,
        rw: &mut Rw<'_, W>,
    ) -> Result<Option<Stream>> {
        let sol = a.get("sol").map(parse_int).transpose()?;
        let targets = [
            (AxisId::Arm, opt_num(a, "arm")?),
            (AxisId::Elevation, opt_num(a, "elevation")?),
            (AxisId::Tilt, opt_num(a, "tilt")?),
            (AxisId::Azimuth, opt_num(a, "azimuth")?),
        ];
        a.check_all_used().map_err(tok_err)?;
        let raw = targets.iter().any(|t| t.1.is_some());
        let mut goal: [Option<f32>; 4] = [None; 4];
        match (sol, raw) {
            (Some(_), true) => return Err(Error::UnknownArgument),
            (None, false) => return Err(Error::MissingArgument),
            (Some(n), false) => {
                let idx = usize::try_from(n).map_err(|_| Error::NoSuchSolution)?;
                if idx >= self.n_solutions {
                    return Err(Error::NoSuchSolution);
                }
                let s = self.solutions[idx];
                goal[0] = Some(s.arm.angle_deg);
                goal[1] = s.elevation.map(|e| e.angle_deg);
                goal[2] = Some(s.tilt.angle_deg);
                goal[3] = Some(s.azimuth.angle_deg);
            }
            (None, true) => {
                for (id, v) in targets {
                    goal[axis_index(id)] = v;
                }
            }
        }
        if !self.enabled {
            return Err(Error::NotEnabled);
        }
        if !self.interlock.safe() {
            return Err(Error::InterlockOpen);
        }
        // Every setpoint is computed (limits, zones, path from where the axis is now)
        // before any axis moves.
        let pos = self.position();
        let mut sps = [None; 4];
        for id in AxisId::ALL {
            let i = axis_index(id);
            if let Some(angle) = goal[i] {
                let cfg = axis_of(&self.settings.rig, id).ok_or(Error::NoSuchAxis(id))?;
                sps[i] = Some(cfg.setpoint(angle, pos[i])?);
            }
        }
        rw.ok();
        for id in AxisId::ALL {
            if let Some(sp) = sps[axis_index(id)] {
                self.axes.start(id, sp.approach_steps, sp.steps);
                let key = match id {
                    AxisId::Arm => "arm_steps",
                    AxisId::Elevation => "elevation_steps",
                    AxisId::Tilt => "tilt_steps",
                    AxisId::Azimuth => "azimuth_steps",
                };
                rw.field_i32(key, sp.steps);
            }
        }
        Ok(None)
    }

    fn cmd_axis<W: Write>(
        &mut self,
        a: &mut Args<'_>,
        rw: &mut Rw<'_, W>,
    ) -> Result<Option<Stream>> {
        let id = axis_id(a.get("name").ok_or(Error::MissingArgument)?)?;
        let mut rig = self.settings.rig;
        let fitted = a.get("fitted").map(parse_bool).transpose()?;
        let mut cfg = match (id, fitted) {
            (AxisId::Elevation, Some(false)) => None,
            (AxisId::Elevation, Some(true)) => Some(rig.elevation.unwrap_or(default_elevation())),
            (_, Some(_)) => return Err(Error::BadValue),
            _ => axis_of(&rig, id).copied(),
        };
        let fields = ["spd", "home", "min", "max", "backlash", "speed", "accel"];
        let mut changed = fitted.is_some();
        for f in fields {
            if let Some(v) = opt_num(a, f)? {
                let c = cfg.as_mut().ok_or(Error::NoSuchAxis(id))?;
                match f {
                    "spd" => c.steps_per_deg = v,
                    "home" => c.home_offset_deg = v,
                    "min" => c.min_deg = v,
                    "max" => c.max_deg = v,
                    "backlash" => c.backlash_deg = v,
                    "speed" => c.max_speed_deg_s = v,
                    _ => c.accel_deg_s2 = v,
                }
                changed = true;
            }
        }
        if let Some(v) = a.get("approach") {
            let c = cfg.as_mut().ok_or(Error::NoSuchAxis(id))?;
            c.approach = match v {
                "below" => Approach::FromBelow,
                "above" => Approach::FromAbove,
                _ => return Err(Error::BadValue),
            };
            changed = true;
        }
        if let Some(v) = a.get("wrap") {
            let c = cfg.as_mut().ok_or(Error::NoSuchAxis(id))?;
            c.wrap = parse_bool(v)?;
            changed = true;
        }
        a.check_all_used().map_err(tok_err)?;
        if changed {
            if self.enabled && self.axes.busy() {
                return Err(Error::Busy);
            }
            if let Some(c) = &cfg {
                c.validate()?;
            }
            set_axis(&mut rig, id, cfg);
            rig.validate()?;
            self.settings.rig = rig;
            self.n_solutions = 0;
        }
        rw.ok();
        match cfg {
            None => {
                rw.field_str("name", id.name()).field_i32("fitted", 0);
            }
            Some(c) => {
                axis_fields(rw, &c);
            }
        }
        Ok(None)
    }

    fn cmd_zone<W: Write>(
        &mut self,
        a: &mut Args<'_>,
        rw: &mut Rw<'_, W>,
    ) -> Result<Option<Stream>> {
        let id = axis_id(a.get("name").ok_or(Error::MissingArgument)?)?;
        let i = parse_int(a.get("i").ok_or(Error::MissingArgument)?)?;
        let idx = usize::try_from(i).map_err(|_| Error::BadValue)?;
        if idx >= MAX_ZONES {
            return Err(Error::BadValue);
        }
        let off = match a.positional(0) {
            Some("off") => true,
            Some(_) => return Err(Error::BadValue),
            None => false,
        };
        let from = opt_num(a, "from")?;
        let to = opt_num(a, "to")?;
        a.check_all_used().map_err(tok_err)?;
        let mut rig = self.settings.rig;
        let mut cfg = *axis_of(&rig, id).ok_or(Error::NoSuchAxis(id))?;
        let zone = match (off, from, to) {
            (true, None, None) => None,
            (false, Some(f), Some(t)) => Some(Zone {
                from_deg: f,
                to_deg: t,
            }),
            (true, _, _) => return Err(Error::UnknownArgument),
            _ => return Err(Error::MissingArgument),
        };
        cfg.zones[idx] = zone;
        cfg.validate()?;
        set_axis(&mut rig, id, Some(cfg));
        self.settings.rig = rig;
        self.n_solutions = 0;
        rw.ok().field_str("name", id.name()).field_i32("i", i);
        if let Some(z) = zone {
            rw.field_f32_rt("from", z.from_deg)
                .field_f32_rt("to", z.to_deg);
        }
        Ok(None)
    }

    fn cmd_plan(&mut self, a: &mut Args<'_>) -> Result<Option<Stream>> {
        let kind = a.get("kind").ok_or(Error::MissingArgument)?;
        let from = req_num(a, "from")?;
        let to = req_num(a, "to")?;
        let step = req_num(a, "step")?;
        let dwell = opt_num(a, "dwell")?.unwrap_or(0.0);
        a.check_all_used().map_err(tok_err)?;
        if !(0.0..=3600.0).contains(&dwell) {
            return Err(Error::BadNumber);
        }
        let s = self.settings;
        let pos = self.position();
        let plan = match kind {
            "track" | "iv" => {
                let t = TrackPlan::new(
                    s.rig,
                    s.face,
                    s.beam,
                    s.gun,
                    from,
                    to,
                    step,
                    s.tilt_deg,
                    s.mode(),
                )?;
                if kind == "iv" {
                    Plan::Iv(IvPlan::new(t, s.inner_potential(), pos)?)
                } else {
                    Plan::Track(t)
                }
            }
            "sweep" => {
                let e = s.gun.kinetic_energy_ev()?;
                let ang = s.rig.angles(&pos);
                let inc = Incidence::new(e, s.tilt_deg, s.azimuth_deg.unwrap_or(ang[3]))?;
                Plan::Sweep(SweepPlan::new(s.rig, s.face, inc, ang[1], from, to, step)?)
            }
            _ => return Err(Error::BadValue),
        };
        Ok(Some(Stream::Plan {
            plan,
            i: 0,
            pos,
            reachable: 0,
            time_s: 0.0,
            dwell_s: dwell,
        }))
    }

    fn cmd_pt<W: Write>(&mut self, a: &mut Args<'_>, rw: &mut Rw<'_, W>) -> Result<Option<Stream>> {
        if a.positional(0) == Some("clear") {
            a.check_all_used().map_err(tok_err)?;
            self.n_points = 0;
            rw.ok().field_i32("points", 0);
            return Ok(None);
        }
        let x = req_num(a, "x")?;
        let y = req_num(a, "y")?;
        let n = a.get("n").map(parse_int).transpose()?.unwrap_or(0);
        a.check_all_used().map_err(tok_err)?;
        if self.n_points >= MAX_POINTS {
            return Err(Error::BufferFull);
        }
        self.points[self.n_points] = Point { x, y, n };
        self.n_points += 1;
        rw.ok().field_i32("points", self.n_points as i32);
        Ok(None)
    }

    fn cmd_fit<W: Write>(
        &mut self,
        a: &mut Args<'_>,
        rw: &mut Rw<'_, W>,
    ) -> Result<Option<Stream>> {
        let kind = a.get("kind").ok_or(Error::MissingArgument)?;
        let threshold = opt_num(a, "threshold")?;
        a.check_all_used().map_err(tok_err)?;
        let pts = &self.points[..self.n_points];
        match kind {
            "peak" | "centroid" => {
                let mut samples = [Sample {
                    angle_deg: 0.0,
                    current: 0.0,
                }; MAX_POINTS];
                for (s, p) in samples.iter_mut().zip(pts) {
                    *s = Sample {
                        angle_deg: p.x,
                        current: p.y,
                    };
                }
                let smp = &samples[..pts.len()];
                let c = if kind == "peak" {
                    if threshold.is_some() {
                        return Err(Error::UnknownArgument);
                    }
                    fit::parabola_log(smp)?
                } else {
                    fit::centroid(smp, threshold.unwrap_or(0.0))?
                };
                rw.ok()
                    .field_f32_rt("angle", c.angle_deg)
                    .field_f32_rt("sigma", c.uncertainty_deg)
                    .field_f32_rt("peak", c.peak_current)
                    .field_f32_rt("fwhm", c.fwhm_deg)
                    .field_i32("used", c.points_used as i32);
            }
            "armzero" => {
                if threshold.is_some() {
                    return Err(Error::UnknownArgument);
                }
                let s = self.settings;
                let mut xy = [(0.0f32, 0.0f32); MAX_POINTS];
                for (d, p) in xy.iter_mut().zip(pts) {
                    *d = (p.x, p.y);
                }
                let first_arm = pts.first().map_or(0.0, |p| p.y);
                let gun = s.gun;
                // True arm angle of the current beam at a nominal energy + offset: the
                // in-plane solution nearest the first measured angle.
                let model = |nominal: f32| -> Result<f32> {
                    let e = Gun {
                        nominal_ev: nominal,
                        offset_ev: 0.0,
                        ..gun
                    }
                    .kinetic_energy_ev()?;
                    let mut out = [Solution::EMPTY; 4];
                    let mut free = s.rig;
                    free.arm.zones = [None; MAX_ZONES];
                    free.arm.min_deg = -180.0;
                    free.arm.max_deg = 180.0;
                    let n = goniometer::aim(
                        &free,
                        &s.face,
                        s.beam,
                        e,
                        s.tilt_deg,
                        Mode::InPlane,
                        &[0; 4],
                        &mut out,
                    )?
                    .stored;
                    let mut best = out[0].arm.angle_deg;
                    for o in out.iter().take(n) {
                        if (o.arm.angle_deg - first_arm).abs() < (best - first_arm).abs() {
                            best = o.arm.angle_deg;
                        }
                    }
                    Ok(best)
                };
                let f = fit::arm_zero_and_energy_offset(model, &xy[..pts.len()])?;
                rw.ok()
                    .field_f32_rt("arm_zero", f.params[0])
                    .field_f32_rt("arm_zero_sigma", f.sigma[0])
                    .field_f32_rt("offset", f.params[1])
                    .field_f32_rt("offset_sigma", f.sigma[1])
                    .field_f32_rt("rms", f.rms_residual)
                    .field_i32("used", f.points as i32);
            }
            "rows" => {
                if threshold.is_some() {
                    return Err(Error::UnknownArgument);
                }
                let mut v = [(0.0f32, 0i32, 0.0f32); MAX_POINTS];
                for (d, p) in v.iter_mut().zip(pts) {
                    *d = (p.x, p.n, p.y);
                }
                let f = fit::row_spacing(&v[..pts.len()])?;
                rw.ok()
                    .field_f32_rt("row_spacing", f.value)
                    .field_f32_rt("sigma", f.sigma)
                    .field_f32_rt("rms", f.rms_residual)
                    .field_i32("used", f.points as i32);
            }
            "iv" => {
                if threshold.is_some() {
                    return Err(Error::UnknownArgument);
                }
                let mut v = [(0i32, 0.0f32); MAX_POINTS];
                for (d, p) in v.iter_mut().zip(pts) {
                    *d = (p.n, p.x);
                }
                let f = fit::inner_potential_and_spacing(&v[..pts.len()])?;
                rw.ok()
                    .field_f32_rt("v0", f.inner_potential_ev)
                    .field_f32_rt("v0_sigma", f.inner_potential_sigma_ev)
                    .field_f32_rt("layer_spacing", f.layer_spacing_a)
                    .field_f32_rt("layer_spacing_sigma", f.layer_spacing_sigma_a)
                    .field_f32_rt("rms", f.rms_residual_ev)
                    .field_i32("used", f.points as i32);
            }
            _ => return Err(Error::BadValue),
        }
        Ok(None)
    }

    /// Writes the next line of a running stream. Returns whether more lines follow.
    pub fn poll<W: Write>(
        &mut self,
        out: &mut W,
    ) -> core::result::Result<bool, ReplyError<W::Error>> {
        if !self.streaming() {
            return Ok(false);
        }
        let crc_on = self.stream_crc;
        let mut rw = Rw::with_line_length(out, crc_on);
        // Take the stream out (no copy of the plan it may hold), step it, put it back.
        let mut next = core::mem::replace(&mut self.stream, Stream::Idle);
        let more = self.stream_step(&mut next, &mut rw);
        if rw.overflowed() {
            rw.clear();
            rw.item().field_str("skipped", "too-long");
        }
        self.stream = if more { next } else { Stream::Idle };
        rw.finish()?;
        Ok(more)
    }

    /// Fills `rw` with the next line of `st`; false when that line is the final one.
    fn stream_step<W: Write>(&mut self, st: &mut Stream, rw: &mut Rw<'_, W>) -> bool {
        match st {
            Stream::Idle => false,
            Stream::Help(i) => match COMMANDS.get(*i as usize) {
                Some((c, u)) => {
                    rw.item().field_str("cmd", c).text(u);
                    *i += 1;
                    true
                }
                None => {
                    rw.ok().field_i32("count", COMMANDS.len() as i32);
                    false
                }
            },
            Stream::Crystals(i) => match table::all().get(*i as usize) {
                Some(c) => {
                    rw.item()
                        .field_str("id", c.id)
                        .field_str("structure", c.structure.name())
                        .field_f32_rt("a", c.a_a);
                    if c.structure.system() != System::Cubic {
                        if c.structure.system() == System::Orthorhombic {
                            rw.field_f32_rt("b", c.b_a);
                        }
                        rw.field_f32_rt("c", c.c_a);
                    }
                    rw.field_str("name", c.name);
                    *i += 1;
                    true
                }
                None => {
                    rw.ok().field_i32("count", table::all().len() as i32);
                    false
                }
            },
            Stream::Faces(i) => {
                let c = self.settings.crystal;
                match c.faces.get(*i as usize) {
                    Some(f) => {
                        let mut b = [0u8; 40];
                        rw.item().field_str("face", miller_text(f.miller, &mut b));
                        if let Some(v) = f.inner_potential_ev {
                            rw.field_f32_rt("v0", v);
                        }
                        if let Some(v) = f.work_function_ev {
                            rw.field_f32_rt("work_function", v);
                        }
                        *i += 1;
                        true
                    }
                    None => {
                        rw.ok()
                            .field_str("crystal", c.id)
                            .field_i32("count", c.faces.len() as i32);
                        false
                    }
                }
            }
            Stream::Beams(iter, n) => match iter.next() {
                Some(b) => {
                    rw.item()
                        .field_i32("h", b.rod[0])
                        .field_i32("k", b.rod[1])
                        .field_f32_rt("exit", b.exit_deg)
                        .field_f32_rt("exit_azimuth", b.exit_azimuth_deg);
                    if let Some(d) = b.row_spacing_a() {
                        rw.field_f32_rt("row", d);
                    }
                    if let Some(e) = b.emergence_ev {
                        rw.field_f32_rt("emerge", e);
                    }
                    *n = n.saturating_add(1);
                    true
                }
                None => {
                    rw.ok().field_i32("count", *n as i32);
                    false
                }
            },
            Stream::Aim(i) => {
                let k = *i as usize;
                if k < self.n_solutions {
                    let s = self.solutions[k];
                    rw.item()
                        .field_i32("sol", k as i32)
                        .field_f32_rt("arm", s.arm.angle_deg)
                        .field_f32_rt("elevation", s.elevation_deg())
                        .field_f32_rt("tilt", s.tilt.angle_deg)
                        .field_f32_rt("azimuth", s.azimuth.angle_deg)
                        .field_i32("arm_steps", s.arm.steps)
                        .field_f32_rt("residual", s.arm.residual_deg)
                        .field_i32("branch", s.branch as i32)
                        .field_f32_rt("travel", s.travel_deg);
                    *i += 1;
                    true
                } else {
                    rw.ok().field_i32("count", self.n_solutions as i32);
                    false
                }
            }
            Stream::Plan {
                plan,
                i,
                pos,
                reachable,
                time_s,
                dwell_s,
            } => {
                let total = match plan {
                    Plan::Track(t) => t.len(),
                    Plan::Iv(p) => p.track.len(),
                    Plan::Sweep(p) => p.len(),
                };
                if *i >= total {
                    rw.ok()
                        .field_i32("points", total as i32)
                        .field_i32("reachable", *reachable as i32)
                        .field_f32("estimate_s", *time_s, 1);
                    return false;
                }
                rw.item().field_i32("i", *i as i32);
                let rig = &self.settings.rig;
                match plan {
                    Plan::Track(_) | Plan::Iv(_) => {
                        let (point, peak) = match plan {
                            Plan::Iv(p) => {
                                let q = p.point(*i, pos);
                                (q.point, q.peak)
                            }
                            Plan::Track(t) => (t.point(*i, pos), None),
                            Plan::Sweep(_) => return false,
                        };
                        rw.field_f32_rt("nominal", point.nominal_ev);
                        match point.result {
                            Ok(s) => {
                                rw.field_f32_rt("arm", s.arm.angle_deg)
                                    .field_f32_rt("elevation", s.elevation_deg())
                                    .field_f32_rt("azimuth", s.azimuth.angle_deg)
                                    .field_i32("arm_steps", s.arm.steps);
                                *time_s += scan::estimate_s(
                                    rig,
                                    *pos,
                                    core::iter::once(Some(s)),
                                    *dwell_s,
                                );
                                *pos = s.position();
                                *reachable += 1;
                            }
                            Err(e) => {
                                point_error(rw, e);
                            }
                        }
                        if let Some(p) = peak {
                            rw.field_f32_rt("peak", p.energy_ev);
                        }
                    }
                    Plan::Sweep(p) => {
                        let point = p.point(*i, pos[0]);
                        rw.field_f32_rt("arm", point.arm_deg);
                        match point.setpoint {
                            Ok(sp) => {
                                rw.field_i32("arm_steps", sp.steps);
                                *time_s += rig.arm.time_to_s(pos[0], &sp) + *dwell_s;
                                pos[0] = sp.steps;
                                *reachable += 1;
                            }
                            Err(e) => point_error(rw, e),
                        }
                        if let Some(v) = point.in_view {
                            rw.field_i32("h", v.beam.rod[0])
                                .field_i32("k", v.beam.rod[1])
                                .field_f32_rt("offset", v.offset_deg);
                        }
                    }
                }
                *i += 1;
                true
            }
            Stream::Dump(i) => loop {
                match self.dump_line(*i, rw) {
                    Dump::Line => {
                        *i = i.saturating_add(1);
                        return true;
                    }
                    Dump::Skip => *i = i.saturating_add(1),
                    Dump::End => {
                        rw.clear();
                        rw.ok();
                        return false;
                    }
                }
            },
        }
    }

    /// Line `i` of the dump into `rw`.
    fn dump_line<W: Write>(&self, i: u8, rw: &mut Rw<'_, W>) -> Dump {
        let s = &self.settings;
        let axes = [
            AxisId::Arm,
            AxisId::Elevation,
            AxisId::Tilt,
            AxisId::Azimuth,
        ];
        match i {
            0 => {
                rw.item()
                    .word("set")
                    .field_f32_rt("energy", s.gun.nominal_ev)
                    .field_f32_rt("cathode", s.gun.cathode_work_function_ev)
                    .field_f32_rt("sample", s.gun.sample_work_function_ev)
                    .field_f32_rt("offset", s.gun.offset_ev);
                match s.inner_potential_ev {
                    Some(v) => rw.field_f32_rt("v0", v),
                    None => rw.field_str("v0", "table"),
                };
                Dump::Line
            }
            1 => {
                let mut b = [0u8; 40];
                let mut c = [0u8; 40];
                rw.item()
                    .word("set")
                    .field_str("crystal", s.crystal.id)
                    .field_str("face", miller_text(s.face.miller, &mut b))
                    .field_f32_rt("tilt", s.tilt_deg);
                match s.azimuth_deg {
                    Some(v) => rw.field_f32_rt("azimuth", v),
                    None => rw.field_str("azimuth", "free"),
                };
                rw.field_str("beam", rod_text(s.beam, &mut c))
                    .field_f32_rt("acceptance", s.rig.acceptance_deg);
                Dump::Line
            }
            // Two lines per axis, so that each stays within the request line limit.
            2..=9 => {
                let id = axes[((i - 2) / 2) as usize];
                let second = (i - 2) % 2 == 1;
                match (axis_of(&s.rig, id), second) {
                    (Some(c), false) => {
                        rw.item().word("axis");
                        axis_fields_geometry(rw, c);
                        if id == AxisId::Elevation {
                            rw.field_i32("fitted", 1);
                        }
                    }
                    (Some(c), true) => {
                        rw.item().word("axis");
                        axis_fields_motion(rw, c);
                    }
                    (None, false) => {
                        rw.item()
                            .word("axis")
                            .field_str("name", id.name())
                            .field_i32("fitted", 0);
                    }
                    (None, true) => return Dump::Skip,
                }
                Dump::Line
            }
            10..=25 => {
                let k = (i - 10) as usize;
                let id = axes[k / MAX_ZONES];
                let z = k % MAX_ZONES;
                let Some(c) = axis_of(&s.rig, id) else {
                    return Dump::Skip;
                };
                rw.item()
                    .word("zone")
                    .field_str("name", id.name())
                    .field_i32("i", z as i32);
                match c.zones[z] {
                    Some(zone) => {
                        rw.field_f32_rt("from", zone.from_deg)
                            .field_f32_rt("to", zone.to_deg);
                    }
                    None => {
                        rw.word("off");
                    }
                }
                Dump::Line
            }
            _ => Dump::End,
        }
    }
}

/// What [`Console::dump_line`] produced.
enum Dump {
    Line,
    Skip,
    End,
}

/// `err <code> [<axis> <limit or zone>:] <message>`: axis errors name the axis, the
/// limit value or the zone and its range.
fn write_err<W: Write>(rw: &mut Rw<'_, W>, e: Error, rig: &Rig) {
    let Some(id) = e.axis() else {
        rw.err(e.code(), e.message());
        return;
    };
    let mut nb = [0u8; num::NUM_BUF_LEN];
    let mut nc = [0u8; num::NUM_BUF_LEN];
    rw.err(e.code(), id.name());
    let cfg = axis_of(rig, id);
    match (e, cfg) {
        (Error::BelowLimit(_), Some(c)) => {
            rw.text("min")
                .text(num::format_f32_roundtrip(c.min_deg, &mut nb));
        }
        (Error::AboveLimit(_), Some(c)) => {
            rw.text("max")
                .text(num::format_f32_roundtrip(c.max_deg, &mut nb));
        }
        (Error::InZone(_, z) | Error::PathCrossesZone(_, z), Some(c)) => {
            rw.text("zone").text(num::format_i32(z as i32, &mut nb));
            if let Some(Some(zone)) = c.zones.get(z as usize) {
                rw.text("from")
                    .text(num::format_f32_roundtrip(zone.from_deg, &mut nc));
                let mut nd = [0u8; num::NUM_BUF_LEN];
                rw.text("to")
                    .text(num::format_f32_roundtrip(zone.to_deg, &mut nd));
            }
        }
        _ => {
            rw.text("axis");
        }
    }
    rw.text("-").text(e.message());
}

fn point_error<W: Write>(rw: &mut Rw<'_, W>, e: Error) {
    rw.field_i32("err", e.code() as i32);
    if let Some(a) = e.axis() {
        rw.field_str("axis", a.name());
    }
    if let Error::InZone(_, z) | Error::PathCrossesZone(_, z) = e {
        rw.field_i32("zone", z as i32);
    }
}

fn axis_fields<W: Write>(rw: &mut Rw<'_, W>, c: &AxisConfig) {
    axis_fields_geometry(rw, c);
    motion_fields(rw, c);
}

/// `name spd home min max`.
fn axis_fields_geometry<W: Write>(rw: &mut Rw<'_, W>, c: &AxisConfig) {
    rw.field_str("name", c.id.name())
        .field_f32_rt("spd", c.steps_per_deg)
        .field_f32_rt("home", c.home_offset_deg)
        .field_f32_rt("min", c.min_deg)
        .field_f32_rt("max", c.max_deg);
}

/// `name backlash approach wrap speed accel`.
fn axis_fields_motion<W: Write>(rw: &mut Rw<'_, W>, c: &AxisConfig) {
    rw.field_str("name", c.id.name());
    motion_fields(rw, c);
}

fn motion_fields<W: Write>(rw: &mut Rw<'_, W>, c: &AxisConfig) {
    rw.field_f32_rt("backlash", c.backlash_deg)
        .field_str(
            "approach",
            match c.approach {
                Approach::FromBelow => "below",
                Approach::FromAbove => "above",
            },
        )
        .field_i32("wrap", c.wrap as i32)
        .field_f32_rt("speed", c.max_speed_deg_s)
        .field_f32_rt("accel", c.accel_deg_s2);
}

/// Writes `h,k,l` into `buf`.
fn miller_text(m: Miller, buf: &mut [u8; 40]) -> &str {
    join_ints(&m, buf)
}

fn rod_text(r: [i32; 2], buf: &mut [u8; 40]) -> &str {
    join_ints(&r, buf)
}

fn join_ints<'b>(vals: &[i32], buf: &'b mut [u8; 40]) -> &'b str {
    let mut len = 0usize;
    for (i, v) in vals.iter().enumerate() {
        if i > 0 && len < buf.len() {
            buf[len] = b',';
            len += 1;
        }
        let mut nb = [0u8; num::NUM_BUF_LEN];
        let s = num::format_i32(*v, &mut nb);
        for b in s.bytes() {
            if len < buf.len() {
                buf[len] = b;
                len += 1;
            }
        }
    }
    core::str::from_utf8(&buf[..len]).unwrap_or("")
}
