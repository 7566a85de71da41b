//! Rig files: the goniometer's axes and detector, as TOML, read into the core's
//! [`Rig`].
//!
//! The format is described in `docs/RIG.md`; `docs/rigs/bench-b.toml` is a documented
//! example. [`parse`] walks the TOML by hand so that every problem names the file, the
//! section, the field and, for zones, the entry:
//!
//! ```text
//! rig file bench.toml: axis "arm": field "zones"[1]: from must be below to, got [20, 15]
//! ```
//!
//! Unknown sections and fields are rejected, so a misspelt key never silently falls
//! back to a default. After the field checks the rig goes through
//! [`Rig::validate`], the check the controller itself runs.
//!
//! ```
//! use matterwave_console::rig;
//! let text = r#"
//! name = "two-motor test stand"
//! [detector]
//! acceptance_deg = 1.0
//! [arm]
//! full_steps = 200
//! microsteps = 16
//! gear = 100
//! min_deg = -165
//! max_deg = 165
//! zones = [[-12, 12]]
//! [tilt]
//! steps_per_deg = 500
//! min_deg = -80
//! max_deg = 80
//! [azimuth]
//! steps_per_deg = 100
//! wrap = true
//! "#;
//! let r = rig::parse(text, "stand.toml").unwrap();
//! assert!((r.rig.arm.steps_per_deg - 200.0 * 16.0 * 100.0 / 360.0).abs() < 1e-3);
//! assert!(r.rig.elevation.is_none());
//! let e = rig::parse(&text.replace("[[-12, 12]]", "[[12, -12]]"), "stand.toml").unwrap_err();
//! assert!(e.to_string().contains("axis \"arm\": field \"zones\"[0]"));
//! ```

use std::fmt;
use std::fmt::Write as _;
use std::path::Path;

use matterwave_core::axis::{keys, Approach, AxisConfig, Zone, MAX_ZONES, STEPS_MAX};
use matterwave_core::goniometer::Rig;
use matterwave_core::{AxisId, Error};
use toml::{Table, Value};

use crate::error::{CliError, CliResult};
use crate::output::{col, List, Report, Value as Cell};
use crate::toml_value::{describe, finite_number};

/// Top-level keys of a rig file.
const TOP_FIELDS: &[&str] = &["name", "detector", "arm", "elevation", "tilt", "azimuth"];

/// Keys of the `[detector]` section.
const DETECTOR_FIELDS: &[&str] = &["acceptance_deg"];

/// Keys of an axis section.
const AXIS_FIELDS: &[&str] = &[
    "full_steps",
    "microsteps",
    "gear",
    keys::STEPS_PER_DEG,
    keys::HOME_OFFSET_DEG,
    keys::MIN_DEG,
    keys::MAX_DEG,
    "zones",
    keys::BACKLASH_DEG,
    keys::APPROACH,
    keys::WRAP,
    keys::MAX_SPEED_DEG_S,
    keys::ACCEL_DEG_S2,
];

/// Accepted full steps per motor revolution, inclusive.
pub const FULL_STEPS_RANGE: (i64, i64) = (1, 100_000);
/// Accepted microsteps per full step, inclusive.
pub const MICROSTEPS_RANGE: (i64, i64) = (1, 4096);
/// Accepted gear ratio (motor turns per axis turn): above 0, up to this.
pub const GEAR_MAX: f64 = 100_000.0;
/// Accepted microsteps per degree: above 0, up to this (the core's limit).
pub const STEPS_PER_DEG_MAX: f64 = 1.0e6;
/// Accepted |home offset|, degrees.
pub const HOME_OFFSET_MAX_DEG: f64 = 360.0;
/// Accepted |limit| and |zone edge|, degrees.
pub const ANGLE_MAX_DEG: f64 = 720.0;
/// Accepted backlash, degrees, inclusive.
pub const BACKLASH_RANGE_DEG: (f64, f64) = (0.0, 10.0);
/// Accepted maximum speed, degrees per second: above 0, up to this.
pub const SPEED_MAX_DEG_S: f64 = 1000.0;
/// Accepted acceleration, degrees per second²: above 0, up to this.
pub const ACCEL_MAX_DEG_S2: f64 = 100_000.0;
/// Accepted detector acceptance half-angle, degrees: above 0, up to this (the core's
/// limit).
pub const ACCEPTANCE_MAX_DEG: f64 = 20.0;
/// Longest accepted rig name, characters.
pub const MAX_NAME_LEN: usize = 64;

/// A rig and where it came from.
#[derive(Clone, Debug, PartialEq)]
pub struct RigFile {
    /// The rig's name (`name` in the file; the file name when absent).
    pub name: String,
    /// Where it came from: the file path, or `built-in`.
    pub source: String,
    /// The core's rig.
    pub rig: Rig,
}

impl RigFile {
    /// The built-in rig, [`Rig::bench_default`].
    pub fn built_in() -> RigFile {
        RigFile {
            name: "bench default".to_string(),
            source: "built-in".to_string(),
            rig: Rig::bench_default(),
        }
    }

    /// The configuration of an axis (`None`: elevation on a one-circle arm).
    pub fn axis(&self, id: AxisId) -> Option<&AxisConfig> {
        self.rig.axis(id).ok()
    }
}

/// What is wrong with a rig file and where.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct RigError {
    /// The file as named on the command line.
    pub file: String,
    /// The section: `axis "arm"`, `[detector]`, or none for the top level.
    pub section: Option<String>,
    /// The field at fault, if any.
    pub field: Option<String>,
    /// The entry of a list field (zones), 0-based, if any.
    pub index: Option<usize>,
    /// What is wrong and what is accepted.
    pub message: String,
    /// The core's error code, when the core rejected the rig.
    pub code: Option<u16>,
}

impl fmt::Display for RigError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "rig file {}", self.file)?;
        if let Some(s) = &self.section {
            write!(f, ": {s}")?;
        }
        if let Some(field) = &self.field {
            write!(f, ": field {field:?}")?;
            if let Some(i) = self.index {
                write!(f, "[{i}]")?;
            }
        }
        write!(f, ": {}", self.message)
    }
}

impl std::error::Error for RigError {}

impl From<RigError> for CliError {
    fn from(e: RigError) -> CliError {
        CliError {
            code: e.code,
            message: e.to_string(),
        }
    }
}

/// Where a value sits, for messages.
struct Ctx<'a> {
    file: &'a str,
    section: Option<String>,
}

impl Ctx<'_> {
    fn err(&self, field: Option<&str>, index: Option<usize>, message: String) -> RigError {
        RigError {
            file: self.file.to_string(),
            section: self.section.clone(),
            field: field.map(str::to_string),
            index,
            message,
            code: None,
        }
    }

    fn field_err(&self, field: &str, message: String) -> RigError {
        self.err(Some(field), None, message)
    }

    fn check_fields(&self, t: &Table, accepted: &[&str]) -> Result<(), RigError> {
        if let Some((key, v)) = t.iter().find(|(k, _)| !accepted.contains(&k.as_str())) {
            let list = accepted.join(", ");
            // A table where a field was expected is a misspelt section (`[tlit]`).
            return Err(if v.is_table() {
                self.err(
                    None,
                    None,
                    format!("unknown section [{key}]; accepted: {list}"),
                )
            } else {
                self.field_err(key, format!("unknown field; accepted: {list}"))
            });
        }
        Ok(())
    }

    /// A finite number (integer or float), if present.
    fn number(&self, t: &Table, field: &str, unit: &str) -> Result<Option<f64>, RigError> {
        match t.get(field) {
            None => Ok(None),
            Some(v) => finite_number(v, unit)
                .map(Some)
                .map_err(|m| self.field_err(field, m)),
        }
    }

    /// A number in [lo, hi] (`lo_open`: (lo, hi]), if present.
    fn ranged(
        &self,
        t: &Table,
        field: &str,
        unit: &str,
        (lo, hi): (f64, f64),
        lo_open: bool,
    ) -> Result<Option<f64>, RigError> {
        let Some(x) = self.number(t, field, unit)? else {
            return Ok(None);
        };
        let below = if lo_open { x <= lo } else { x < lo };
        if below || x > hi {
            let interval = if lo_open {
                format!("above {lo} up to {hi}")
            } else {
                format!("from {lo} to {hi}")
            };
            return Err(self.field_err(field, format!("must be {interval} {unit}, got {x}")));
        }
        Ok(Some(x))
    }

    fn integer(
        &self,
        t: &Table,
        field: &str,
        (lo, hi): (i64, i64),
    ) -> Result<Option<i64>, RigError> {
        match t.get(field) {
            None => Ok(None),
            Some(Value::Integer(n)) if (lo..=hi).contains(n) => Ok(Some(*n)),
            Some(other) => Err(self.field_err(
                field,
                format!(
                    "must be a whole number from {lo} to {hi}, got {}",
                    describe(other)
                ),
            )),
        }
    }

    fn boolean(&self, t: &Table, field: &str) -> Result<Option<bool>, RigError> {
        match t.get(field) {
            None => Ok(None),
            Some(Value::Boolean(b)) => Ok(Some(*b)),
            Some(other) => Err(self.field_err(
                field,
                format!("must be true or false, got {}", describe(other)),
            )),
        }
    }
}

/// Reads a rig file.
pub fn load(path: &Path) -> Result<RigFile, RigError> {
    /// A rig file describes a few axes: anything larger is not one.
    const MAX_BYTES: u64 = 1 << 20;
    let file = path.display().to_string();
    let ctx = Ctx {
        file: &file,
        section: None,
    };
    let size = std::fs::metadata(path)
        .map_err(|e| ctx.err(None, None, format!("cannot read it: {e}")))?
        .len();
    if size > MAX_BYTES {
        return Err(ctx.err(
            None,
            None,
            format!(
                "{size} bytes; a rig file is at most {MAX_BYTES} bytes (is this the right file?)"
            ),
        ));
    }
    let text = std::fs::read_to_string(path)
        .map_err(|e| ctx.err(None, None, format!("cannot read it: {e}")))?;
    parse(&text, &file)
}

/// The rig of `--rig FILE`, or the built-in rig without one.
pub fn load_or_default(path: Option<&Path>) -> CliResult<RigFile> {
    match path {
        Some(p) => Ok(load(p)?),
        None => Ok(RigFile::built_in()),
    }
}

/// Parses and validates the text of a rig file; `file` names it in messages.
///
/// Checks: TOML syntax; only the keys `name`, `[detector]`, `[arm]`, `[elevation]`,
/// `[tilt]`, `[azimuth]` at the top level, and only the documented fields in each; the
/// required sections present (`[detector]`, `[arm]`, `[tilt]`, `[azimuth]`); steps per
/// degree given either directly or as full steps × microsteps × gear; every number
/// finite and in range; limits present (and ordered) unless the axis wraps, absent when
/// it does; at most four zones, each `[from, to]` with from < to and not wholly outside
/// the limits, together not covering the whole range; every limit within the ±2^24
/// microstep counter; then [`Rig::validate`].
pub fn parse(text: &str, file: &str) -> Result<RigFile, RigError> {
    let top_ctx = Ctx {
        file,
        section: None,
    };
    let top: Table = text.parse().map_err(|e: toml::de::Error| {
        top_ctx.err(
            None,
            None,
            format!("not valid TOML: {}", one_line(&e.to_string())),
        )
    })?;
    top_ctx.check_fields(&top, TOP_FIELDS)?;
    let name = match top.get("name") {
        None => Path::new(file)
            .file_stem()
            .map_or_else(|| file.to_string(), |s| s.to_string_lossy().into_owned()),
        Some(Value::String(s)) => {
            if s.trim().is_empty()
                || s.chars().count() > MAX_NAME_LEN
                || s.chars().any(char::is_control)
            {
                return Err(top_ctx.field_err(
                    "name",
                    format!("must be 1 to {MAX_NAME_LEN} characters without control characters, got {s:?}"),
                ));
            }
            s.clone()
        }
        Some(other) => {
            return Err(
                top_ctx.field_err("name", format!("must be a string, got {}", describe(other)))
            )
        }
    };

    let section = |key: &str, required: bool| -> Result<Option<&Table>, RigError> {
        match top.get(key) {
            None if required => Err(top_ctx.field_err(
                key,
                format!("missing; add a [{key}] section (see docs/RIG.md)"),
            )),
            None => Ok(None),
            Some(Value::Table(t)) => Ok(Some(t)),
            Some(other) => Err(top_ctx.field_err(
                key,
                format!("must be a [{key}] section, got {}", describe(other)),
            )),
        }
    };

    let detector = section("detector", true)?.cloned().unwrap_or_default();
    let dctx = Ctx {
        file,
        section: Some("[detector]".to_string()),
    };
    dctx.check_fields(&detector, DETECTOR_FIELDS)?;
    let acceptance = dctx
        .ranged(
            &detector,
            "acceptance_deg",
            "degrees (half-angle)",
            (0.0, ACCEPTANCE_MAX_DEG),
            true,
        )?
        .ok_or_else(|| {
            dctx.field_err(
                "acceptance_deg",
                "missing; give the detector's acceptance half-angle in degrees".to_string(),
            )
        })?;

    let mut axes = [None; 4];
    for (slot, id) in axes.iter_mut().zip(AxisId::ALL) {
        let required = id != AxisId::Elevation;
        if let Some(t) = section(id.name(), required)? {
            *slot = Some(parse_axis(file, id, t)?);
        }
    }
    let [Some(arm), elevation, Some(tilt), Some(azimuth)] = axes else {
        // Unreachable: the required sections were checked above.
        return Err(top_ctx.err(None, None, "an axis section is missing".to_string()));
    };
    let rig = Rig {
        arm,
        elevation,
        tilt,
        azimuth,
        acceptance_deg: acceptance as f32,
    };
    rig.validate().map_err(|e| core_rejected(file, e))?;
    Ok(RigFile {
        name,
        source: file.to_string(),
        rig,
    })
}

/// Maps a [`Rig::validate`] failure to a message naming the axis.
fn core_rejected(file: &str, e: Error) -> RigError {
    let section = match e.axis() {
        Some(a) => Some(format!("axis {:?}", a.name())),
        None => Some("[detector]".to_string()),
    };
    RigError {
        file: file.to_string(),
        section,
        field: None,
        index: None,
        message: format!("rejected by the controller's check: {}", e.message()),
        code: Some(e.code()),
    }
}

fn parse_axis(file: &str, id: AxisId, t: &Table) -> Result<AxisConfig, RigError> {
    let ctx = Ctx {
        file,
        section: Some(format!("axis {:?}", id.name())),
    };
    ctx.check_fields(t, AXIS_FIELDS)?;

    // Steps per degree: directly, or full steps × microsteps × gear / 360.
    let direct = ctx.ranged(
        t,
        "steps_per_deg",
        "microsteps per degree",
        (0.0, STEPS_PER_DEG_MAX),
        true,
    )?;
    let full = ctx.integer(t, "full_steps", FULL_STEPS_RANGE)?;
    let micro = ctx.integer(t, "microsteps", MICROSTEPS_RANGE)?;
    let gear = ctx.ranged(
        t,
        "gear",
        "motor turns per axis turn",
        (0.0, GEAR_MAX),
        true,
    )?;
    let spd = match (direct, full, micro, gear) {
        (Some(s), None, None, None) => s,
        (Some(_), ..) => {
            let other = ["full_steps", "microsteps", "gear"]
                .into_iter()
                .find(|k| t.contains_key(*k))
                .unwrap_or("full_steps");
            return Err(ctx.field_err(
                other,
                "give either steps_per_deg or full_steps, microsteps and gear, not both"
                    .to_string(),
            ));
        }
        (None, Some(f), Some(m), g) => {
            let s = f as f64 * m as f64 * g.unwrap_or(1.0) / 360.0;
            if s > STEPS_PER_DEG_MAX {
                return Err(ctx.field_err(
                    "gear",
                    format!(
                        "full_steps × microsteps × gear / 360 = {s} microsteps per degree; at most {STEPS_PER_DEG_MAX} accepted"
                    ),
                ));
            }
            s
        }
        (None, None, _, _) => {
            return Err(ctx.field_err(
                "full_steps",
                "missing; give full_steps, microsteps and gear (steps_per_deg = full × micro × gear / 360), or steps_per_deg"
                    .to_string(),
            ))
        }
        (None, Some(_), None, _) => {
            return Err(ctx.field_err(
                "microsteps",
                "missing; full_steps needs microsteps (1 for full stepping)".to_string(),
            ))
        }
    };
    let spd = spd as f32;
    if !(spd.is_finite() && spd > 0.0) {
        return Err(ctx.field_err("steps_per_deg", format!("must be above 0, got {spd}")));
    }

    let mut ax = AxisConfig::new(id, spd);
    let home = ctx
        .ranged(
            t,
            "home_offset_deg",
            "degrees",
            (-HOME_OFFSET_MAX_DEG, HOME_OFFSET_MAX_DEG),
            false,
        )?
        .unwrap_or(0.0);
    ax.home_offset_deg = home as f32;
    ax.wrap = ctx.boolean(t, "wrap")?.unwrap_or(false);

    let limit =
        |field: &str| ctx.ranged(t, field, "degrees", (-ANGLE_MAX_DEG, ANGLE_MAX_DEG), false);
    let (min, max) = (limit("min_deg")?, limit("max_deg")?);
    if ax.wrap {
        if let Some(k) = ["min_deg", "max_deg"]
            .into_iter()
            .find(|k| t.contains_key(*k))
        {
            return Err(ctx.field_err(
                k,
                "a wrapping axis (wrap = true) has no soft limits; remove the field or set wrap = false"
                    .to_string(),
            ));
        }
    } else {
        let need = |x: Option<f64>, field: &str| {
            x.ok_or_else(|| {
                ctx.field_err(
                    field,
                    "missing; an axis that does not wrap needs min_deg and max_deg".to_string(),
                )
            })
        };
        let (lo, hi) = (need(min, "min_deg")?, need(max, "max_deg")?);
        if lo >= hi {
            return Err(ctx.field_err("max_deg", format!("must be above min_deg ({lo}), got {hi}")));
        }
        ax.min_deg = lo as f32;
        ax.max_deg = hi as f32;
        let reach = (lo - home).abs().max((hi - home).abs()) * spd as f64;
        if reach > STEPS_MAX as f64 {
            return Err(ctx.field_err(
                "max_deg",
                format!(
                    "the limits lie up to {reach:.0} microsteps from home; the counter holds ±{STEPS_MAX}: narrow the limits or lower the microstepping"
                ),
            ));
        }
    }

    ax.zones = parse_zones(&ctx, t, &ax)?;
    ax.backlash_deg = ctx
        .ranged(t, "backlash_deg", "degrees", BACKLASH_RANGE_DEG, false)?
        .unwrap_or(0.0) as f32;
    ax.approach = match t.get(keys::APPROACH) {
        None => Approach::FromBelow,
        Some(v) => match v.as_str().and_then(Approach::from_word) {
            Some(a) => a,
            None => {
                return Err(ctx.field_err(
                    keys::APPROACH,
                    format!(
                        "must be \"{}\" or \"{}\", got {}",
                        Approach::FromBelow.word(),
                        Approach::FromAbove.word(),
                        describe(v)
                    ),
                ))
            }
        },
    };
    if let Some(v) = ctx.ranged(
        t,
        "max_speed_deg_s",
        "degrees per second",
        (0.0, SPEED_MAX_DEG_S),
        true,
    )? {
        ax.max_speed_deg_s = v as f32;
    }
    if let Some(v) = ctx.ranged(
        t,
        "accel_deg_s2",
        "degrees per second²",
        (0.0, ACCEL_MAX_DEG_S2),
        true,
    )? {
        ax.accel_deg_s2 = v as f32;
    }
    Ok(ax)
}

fn parse_zones(
    ctx: &Ctx<'_>,
    t: &Table,
    ax: &AxisConfig,
) -> Result<[Option<Zone>; MAX_ZONES], RigError> {
    let mut zones = [None; MAX_ZONES];
    let items = match t.get("zones") {
        None => return Ok(zones),
        Some(Value::Array(items)) => items,
        Some(other) => {
            return Err(ctx.field_err(
                "zones",
                format!(
                    "must be a list of [from, to] pairs in degrees, e.g. [[-12, 12]], got {}",
                    describe(other)
                ),
            ))
        }
    };
    if items.len() > MAX_ZONES {
        return Err(ctx.err(
            Some("zones"),
            Some(MAX_ZONES),
            format!("at most {MAX_ZONES} zones per axis, got {}", items.len()),
        ));
    }
    let mut pairs: Vec<(f64, f64)> = Vec::new();
    for (i, item) in items.iter().enumerate() {
        let bad = |msg: String| ctx.err(Some("zones"), Some(i), msg);
        let pair = match item {
            Value::Array(p) if p.len() == 2 => {
                let num = |v: &Value| match v {
                    Value::Float(x) if x.is_finite() => Some(*x),
                    Value::Integer(n) => Some(*n as f64),
                    _ => None,
                };
                match (num(&p[0]), num(&p[1])) {
                    (Some(a), Some(b)) => (a, b),
                    _ => {
                        return Err(bad(format!(
                            "must be two finite numbers [from, to] in degrees, got {}",
                            describe(item)
                        )))
                    }
                }
            }
            _ => {
                return Err(bad(format!(
                    "must be a pair [from, to] in degrees, got {}",
                    describe(item)
                )))
            }
        };
        let (from, to) = pair;
        if from >= to {
            return Err(bad(format!("from must be below to, got [{from}, {to}]")));
        }
        if from < -ANGLE_MAX_DEG || to > ANGLE_MAX_DEG {
            return Err(bad(format!(
                "edges must lie within ±{ANGLE_MAX_DEG} degrees, got [{from}, {to}]"
            )));
        }
        if ax.wrap && to - from >= 360.0 {
            return Err(bad(format!(
                "a zone of a wrapping axis must be narrower than 360 degrees, got [{from}, {to}]"
            )));
        }
        if !ax.wrap && (to < ax.min_deg as f64 || from > ax.max_deg as f64) {
            return Err(bad(format!(
                "lies wholly outside the limits [{}, {}]; fix it or remove it",
                ax.min_deg, ax.max_deg
            )));
        }
        pairs.push(pair);
        zones[i] = Some(Zone {
            from_deg: from as f32,
            to_deg: to as f32,
        });
    }
    if !ax.wrap && covers(&pairs, ax.min_deg as f64, ax.max_deg as f64) {
        return Err(ctx.field_err(
            "zones",
            format!(
                "the zones forbid the whole range [{}, {}]; the axis could never stop",
                ax.min_deg, ax.max_deg
            ),
        ));
    }
    Ok(zones)
}

/// Whether the union of closed intervals covers [lo, hi].
fn covers(pairs: &[(f64, f64)], lo: f64, hi: f64) -> bool {
    let mut v = pairs.to_vec();
    v.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut reach = lo;
    for (a, b) in v {
        if a > reach {
            return false;
        }
        reach = reach.max(b);
        if reach >= hi {
            return true;
        }
    }
    reach >= hi
}

/// A message on one line: whitespace runs become one space, control characters are
/// escaped, and anything past 300 characters is cut (a parser's message may quote a
/// whole source line).
fn one_line(s: &str) -> String {
    const MAX: usize = 300;
    let joined = s.split_whitespace().collect::<Vec<_>>().join(" ");
    let mut out: String = joined
        .chars()
        .take(MAX)
        .flat_map(|c| {
            if c.is_control() {
                c.escape_default().collect::<Vec<_>>()
            } else {
                vec![c]
            }
        })
        .collect();
    if joined.chars().count() > MAX {
        out.push_str(" …");
    }
    out
}

mod console;
mod show;
pub use console::console_requests;
pub use show::{approach_word, report, to_toml, zones_text};

#[cfg(test)]
mod tests;
