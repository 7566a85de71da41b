//! The crystal table: parsing and validating `tables/crystals.toml`, and rendering the
//! firmware's fixed table `core/src/table/data.rs` from it.
//!
//! The file format is described in `tables/README.md`. [`parse`] checks every row and
//! every face and stops at the first problem with a [`TableError`] that names the row
//! (1-based position and id), the face where there is one, the field, what was found and
//! what is accepted, for example
//!
//! ```text
//! crystal #4 (id "fe"): field "a_a": must be a positive number of Å, got -2.87
//! ```
//!
//! Unknown fields are rejected (as `serde(deny_unknown_fields)` would, but with the row
//! named), so a misspelt key never silently drops a value. The rows are walked by hand
//! over [`toml::Value`] rather than through a serde derive so that every message can say
//! exactly where it is.
//!
//! ```
//! use matterwave_console::tables;
//! let rows = tables::load().unwrap();
//! let cu = rows.iter().find(|r| r.id == "cu").unwrap();
//! assert_eq!(cu.name, "copper");
//! assert!((cu.a_a - 3.615).abs() < 0.01);
//! ```

use std::fmt;

use matterwave_core::lattice::{Cell, Miller, Structure, System, MAX_INDEX};
use toml::{Table, Value};

/// The crystal table as shipped, compiled into the console.
pub const CRYSTALS_TOML: &str = include_str!("../../tables/crystals.toml");

/// Accepted lattice constants a, b, c (Å), inclusive.
pub const LATTICE_RANGE_A: (f64, f64) = (1.0, 30.0);
/// Accepted work functions (eV), inclusive.
pub const WORK_FUNCTION_RANGE_EV: (f64, f64) = (1.0, 7.0);
/// Accepted inner potentials (eV): above the first bound, up to the second inclusive.
pub const INNER_POTENTIAL_RANGE_EV: (f64, f64) = (0.0, 40.0);
/// Accepted standard uncertainty of a (Å): above the first bound, up to the second.
pub const UNCERTAINTY_RANGE_A: (f64, f64) = (0.0, 0.1);
/// Accepted temperatures (K): above the first bound, up to the second.
pub const TEMPERATURE_RANGE_K: (f64, f64) = (0.0, 2000.0);
/// Longest accepted id, characters.
pub const MAX_ID_LEN: usize = 24;
/// Longest accepted name, characters.
pub const MAX_NAME_LEN: usize = 64;

const CRYSTAL_FIELDS: &[&str] = &[
    "id",
    "name",
    "structure",
    "a_a",
    "b_a",
    "c_a",
    "a_uncertainty_a",
    "temperature_k",
    "lattice_source",
    "work_function_ev",
    "work_function_source",
    "inner_potential_ev",
    "inner_potential_source",
    "face",
];

const FACE_FIELDS: &[&str] = &[
    "miller",
    "work_function_ev",
    "work_function_source",
    "inner_potential_ev",
    "inner_potential_source",
];

/// Typical values for one face of a crystal, as read from the table.
#[derive(Clone, Debug, PartialEq)]
pub struct FaceRow {
    /// Three-index Miller indices (conventional cell; (0001) of a hexagonal crystal is
    /// `[0, 0, 1]`).
    pub miller: Miller,
    /// Work function of this face, eV.
    pub work_function_ev: Option<f64>,
    /// Where `work_function_ev` comes from (present exactly when the value is).
    pub work_function_source: Option<String>,
    /// Typical inner potential V0 of this face, eV.
    pub inner_potential_ev: Option<f64>,
    /// Where `inner_potential_ev` comes from (present exactly when the value is).
    pub inner_potential_source: Option<String>,
}

/// One crystal, as read from the table.
#[derive(Clone, Debug, PartialEq)]
pub struct CrystalRow {
    /// Lower-case id, `[a-z0-9_]`, starting with a letter.
    pub id: String,
    /// Name, e.g. `copper`.
    pub name: String,
    /// Structure type.
    pub structure: Structure,
    /// Lattice constant a, Å.
    pub a_a: f64,
    /// Lattice constant b, Å (orthorhombic only).
    pub b_a: Option<f64>,
    /// Lattice constant c, Å (tetragonal, hexagonal, hcp, graphite, orthorhombic).
    pub c_a: Option<f64>,
    /// Standard uncertainty of a, Å.
    pub a_uncertainty_a: f64,
    /// Temperature the lattice constants hold at, K.
    pub temperature_k: f64,
    /// Where the lattice constants come from.
    pub lattice_source: String,
    /// Polycrystalline work function, eV.
    pub work_function_ev: Option<f64>,
    /// Where `work_function_ev` comes from (present exactly when the value is).
    pub work_function_source: Option<String>,
    /// Typical inner potential V0, eV, used for faces without their own value.
    pub inner_potential_ev: Option<f64>,
    /// Where `inner_potential_ev` comes from (present exactly when the value is).
    pub inner_potential_source: Option<String>,
    /// Common faces, in file order.
    pub faces: Vec<FaceRow>,
}

impl CrystalRow {
    /// b as the core stores it: the table's b for orthorhombic cells, else a.
    pub fn b_or_a(&self) -> f64 {
        self.b_a.unwrap_or(self.a_a)
    }

    /// c as the core stores it: the table's c where the structure has one, else a.
    pub fn c_or_a(&self) -> f64 {
        self.c_a.unwrap_or(self.a_a)
    }

    /// The core's conventional cell for this row (f32).
    pub fn cell(&self) -> matterwave_core::Result<Cell> {
        Cell::new(
            self.structure,
            self.a_a as f32,
            self.b_or_a() as f32,
            self.c_or_a() as f32,
        )
    }

    /// The face with exactly these indices, if listed.
    pub fn face(&self, miller: Miller) -> Option<&FaceRow> {
        self.faces.iter().find(|f| f.miller == miller)
    }
}

/// What is wrong with the table and where.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct TableError {
    /// 1-based position of the `[[crystal]]` block, if the error is inside one.
    pub row: Option<usize>,
    /// The row's id as written, if it has a string id.
    pub id: Option<String>,
    /// 1-based position of the `[[crystal.face]]` block within the row, if any.
    pub face: Option<usize>,
    /// The field (key) at fault, if any.
    pub field: Option<String>,
    /// What is wrong and what is accepted.
    pub message: String,
}

impl fmt::Display for TableError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.row {
            Some(row) => {
                write!(f, "crystal #{row}")?;
                match &self.id {
                    Some(id) => write!(f, " (id {id:?})")?,
                    None => write!(f, " (no id)")?,
                }
            }
            None => write!(f, "crystal table")?,
        }
        if let Some(face) = self.face {
            write!(f, ": face #{face}")?;
        }
        if let Some(field) = &self.field {
            write!(f, ": field {field:?}")?;
        }
        write!(f, ": {}", self.message)
    }
}

impl std::error::Error for TableError {}

/// Parses and validates the table [`CRYSTALS_TOML`] shipped with the console.
pub fn load() -> Result<Vec<CrystalRow>, TableError> {
    parse(CRYSTALS_TOML)
}

/// Parses and validates a crystal table (the text of a `crystals.toml`).
///
/// Checks: TOML syntax; only `[[crystal]]` at the top level; no unknown fields; every
/// required field present with the right type; ids `[a-z0-9_]` starting with a letter,
/// unique and sorted; structure names as in [`Structure::name`]; b only for
/// orthorhombic, c for tetragonal, hexagonal, hcp, graphite and orthorhombic cells and
/// for no cubic one; numbers finite and within range (lattice constants 1–30 Å, work
/// functions 1–7 eV, inner potentials above 0 up to 40 eV, uncertainty above 0 up to
/// 0.1 Å, temperature above 0 up to 2000 K); a source for every optional value given and
/// no source without its value; faces with three indices, not all zero, |index| ≤ 12,
/// no face listed twice.
pub fn parse(text: &str) -> Result<Vec<CrystalRow>, TableError> {
    let top: Table = text.parse().map_err(|e: toml::de::Error| TableError {
        row: None,
        id: None,
        face: None,
        field: None,
        message: format!("not valid TOML: {}", e.to_string().trim_end()),
    })?;
    let top_err = |field: &str, message: String| TableError {
        row: None,
        id: None,
        face: None,
        field: Some(field.to_string()),
        message,
    };
    if let Some(key) = top.keys().find(|k| k.as_str() != "crystal") {
        return Err(top_err(
            key,
            "unknown top-level key; only [[crystal]] blocks are accepted".to_string(),
        ));
    }
    let items = match top.get("crystal") {
        Some(Value::Array(items)) if !items.is_empty() => items,
        None | Some(Value::Array(_)) => {
            return Err(top_err(
                "crystal",
                "no [[crystal]] blocks; the table needs at least one".to_string(),
            ))
        }
        Some(other) => {
            return Err(top_err(
                "crystal",
                format!(
                    "must be an array of [[crystal]] tables, got {}",
                    describe(other)
                ),
            ))
        }
    };

    let mut rows: Vec<CrystalRow> = Vec::with_capacity(items.len());
    for (i, item) in items.iter().enumerate() {
        let ctx = Ctx {
            row: i + 1,
            id: match item.get("id") {
                Some(Value::String(s)) => Some(s.as_str()),
                _ => None,
            },
            face: None,
        };
        let table = match item {
            Value::Table(t) => t,
            other => {
                return Err(ctx.err(
                    None,
                    format!("must be a [[crystal]] table, got {}", describe(other)),
                ))
            }
        };
        let row = parse_row(&ctx, table)?;
        if let Some(j) = rows.iter().position(|r| r.id == row.id) {
            return Err(ctx.err(
                Some("id"),
                format!("duplicate id; already used by crystal #{}", j + 1),
            ));
        }
        if let Some(prev) = rows.last() {
            if row.id < prev.id {
                return Err(ctx.err(
                    Some("id"),
                    format!(
                        "rows must be sorted by id; {:?} belongs before {:?} (crystal #{})",
                        row.id, prev.id, i
                    ),
                ));
            }
        }
        rows.push(row);
    }
    Ok(rows)
}

/// Where a value sits: row, id and face, for error messages.
struct Ctx<'a> {
    row: usize,
    id: Option<&'a str>,
    face: Option<usize>,
}

impl Ctx<'_> {
    fn err(&self, field: Option<&str>, message: String) -> TableError {
        TableError {
            row: Some(self.row),
            id: self.id.map(str::to_string),
            face: self.face,
            field: field.map(str::to_string),
            message,
        }
    }

    fn check_fields(&self, table: &Table, accepted: &[&str], what: &str) -> Result<(), TableError> {
        if let Some(key) = table.keys().find(|k| !accepted.contains(&k.as_str())) {
            return Err(self.err(
                Some(key),
                format!("unknown field in {what}; accepted: {}", accepted.join(", ")),
            ));
        }
        Ok(())
    }

    fn string(
        &self,
        table: &Table,
        field: &str,
        required: bool,
    ) -> Result<Option<String>, TableError> {
        match table.get(field) {
            None if required => {
                Err(self.err(Some(field), "missing; this field is required".to_string()))
            }
            None => Ok(None),
            Some(Value::String(s)) => {
                if s.trim().is_empty() {
                    Err(self.err(Some(field), "must not be empty".to_string()))
                } else {
                    Ok(Some(s.clone()))
                }
            }
            Some(other) => Err(self.err(
                Some(field),
                format!("must be a string, got {}", describe(other)),
            )),
        }
    }

    /// A number in (lo, hi] (`lo_inclusive = false`) or [lo, hi]; `what` is the unit
    /// phrase, e.g. "of Å".
    fn number(
        &self,
        table: &Table,
        field: &str,
        required: bool,
        range: (f64, f64),
        lo_inclusive: bool,
        unit: &str,
    ) -> Result<Option<f64>, TableError> {
        let x = match table.get(field) {
            None if required => {
                return Err(self.err(Some(field), "missing; this field is required".to_string()))
            }
            None => return Ok(None),
            Some(v) => finite_number(v, unit).map_err(|m| self.err(Some(field), m))?,
        };
        if x <= 0.0 {
            return Err(self.err(
                Some(field),
                format!("must be a positive number {unit}, got {x}"),
            ));
        }
        let (lo, hi) = range;
        let below = if lo_inclusive { x < lo } else { x <= lo };
        if below || x > hi {
            let interval = if lo_inclusive {
                format!("from {lo} to {hi}")
            } else {
                format!("above {lo} up to {hi}")
            };
            return Err(self.err(
                Some(field),
                format!(
                    "must be {interval} {}, got {x}",
                    unit.trim_start_matches("of ")
                ),
            ));
        }
        Ok(Some(x))
    }

    /// An optional value with its required source.
    fn sourced(
        &self,
        table: &Table,
        field: &str,
        source_field: &str,
        range: (f64, f64),
        lo_inclusive: bool,
        unit: &str,
    ) -> Result<(Option<f64>, Option<String>), TableError> {
        let value = self.number(table, field, false, range, lo_inclusive, unit)?;
        let source = self.string(table, source_field, false)?;
        match (value, &source) {
            (Some(_), None) => Err(self.err(
                Some(source_field),
                format!("missing; required because {field} is given (name a handbook or paper, add \"from memory\" for a recalled value, or write \"common practice, no source\")"),
            )),
            (None, Some(_)) => Err(self.err(
                Some(source_field),
                format!("given without {field}; add the value or remove the source"),
            )),
            _ => Ok((value, source)),
        }
    }
}

fn parse_row(ctx: &Ctx<'_>, t: &Table) -> Result<CrystalRow, TableError> {
    ctx.check_fields(t, CRYSTAL_FIELDS, "[[crystal]]")?;

    let id = ctx.string(t, "id", true)?.unwrap_or_default();
    check_id(ctx, &id)?;
    let name = ctx.string(t, "name", true)?.unwrap_or_default();
    if name.chars().count() > MAX_NAME_LEN || name.chars().any(char::is_control) {
        return Err(ctx.err(
            Some("name"),
            format!("must be at most {MAX_NAME_LEN} characters without control characters, got {name:?}"),
        ));
    }
    let structure_name = ctx.string(t, "structure", true)?.unwrap_or_default();
    let structure = Structure::from_name(&structure_name).ok_or_else(|| {
        let names: Vec<&str> = Structure::ALL.iter().map(|s| s.name()).collect();
        ctx.err(
            Some("structure"),
            format!(
                "unknown structure {structure_name:?}; accepted: {}",
                names.join(", ")
            ),
        )
    })?;

    let a_a = ctx
        .number(t, "a_a", true, LATTICE_RANGE_A, true, "of Å")?
        .unwrap_or_default();
    let system = structure.system();
    let wants_b = system == System::Orthorhombic;
    let wants_c = system != System::Cubic;
    let kind = match system {
        System::Cubic => "cubic",
        System::Tetragonal => "tetragonal",
        System::Orthorhombic => "orthorhombic",
        System::Hexagonal => "hexagonal",
    };
    let b_a = ctx.number(t, "b_a", wants_b, LATTICE_RANGE_A, true, "of Å")?;
    if b_a.is_some() && !wants_b {
        return Err(ctx.err(
            Some("b_a"),
            format!(
                "not accepted for structure {:?} ({kind}: b = a); only orthorhombic cells take b_a",
                structure.name()
            ),
        ));
    }
    let c_a = ctx.number(t, "c_a", wants_c, LATTICE_RANGE_A, true, "of Å")?;
    if c_a.is_some() && !wants_c {
        return Err(ctx.err(
            Some("c_a"),
            format!(
                "not accepted for structure {:?} (cubic: c = a); only tetragonal, hexagonal and orthorhombic cells take c_a",
                structure.name()
            ),
        ));
    }
    let a_uncertainty_a = ctx
        .number(
            t,
            "a_uncertainty_a",
            true,
            UNCERTAINTY_RANGE_A,
            false,
            "of Å",
        )?
        .unwrap_or_default();
    let temperature_k = ctx
        .number(t, "temperature_k", true, TEMPERATURE_RANGE_K, false, "of K")?
        .unwrap_or_default();
    let lattice_source = ctx.string(t, "lattice_source", true)?.unwrap_or_default();
    let ((work_function_ev, work_function_source), (inner_potential_ev, inner_potential_source)) =
        typical_values(ctx, t)?;

    let faces = match t.get("face") {
        None => Vec::new(),
        Some(Value::Array(items)) => {
            let mut faces: Vec<FaceRow> = Vec::with_capacity(items.len());
            for (k, item) in items.iter().enumerate() {
                let fctx = Ctx {
                    row: ctx.row,
                    id: ctx.id,
                    face: Some(k + 1),
                };
                let ft = match item {
                    Value::Table(ft) => ft,
                    other => {
                        return Err(fctx.err(
                            None,
                            format!("must be a [[crystal.face]] table, got {}", describe(other)),
                        ))
                    }
                };
                let face = parse_face(&fctx, ft)?;
                if let Some(j) = faces.iter().position(|f| f.miller == face.miller) {
                    return Err(fctx.err(
                        Some("miller"),
                        format!(
                            "face {:?} is already listed as face #{}",
                            face.miller,
                            j + 1
                        ),
                    ));
                }
                faces.push(face);
            }
            faces
        }
        Some(other) => {
            return Err(ctx.err(
                Some("face"),
                format!(
                    "must be an array of [[crystal.face]] tables, got {}",
                    describe(other)
                ),
            ))
        }
    };

    Ok(CrystalRow {
        id,
        name,
        structure,
        a_a,
        b_a,
        c_a,
        a_uncertainty_a,
        temperature_k,
        lattice_source,
        work_function_ev,
        work_function_source,
        inner_potential_ev,
        inner_potential_source,
        faces,
    })
}

/// A value with its source, as [`Ctx::sourced`] reads it.
type Sourced = (Option<f64>, Option<String>);

/// The work function and the inner potential, each with its source: the same fields
/// with the same ranges in a `[[crystal]]` row and in a `[[crystal.face]]`.
fn typical_values(ctx: &Ctx<'_>, t: &Table) -> Result<(Sourced, Sourced), TableError> {
    let work_function = ctx.sourced(
        t,
        "work_function_ev",
        "work_function_source",
        WORK_FUNCTION_RANGE_EV,
        true,
        "of eV",
    )?;
    let inner_potential = ctx.sourced(
        t,
        "inner_potential_ev",
        "inner_potential_source",
        INNER_POTENTIAL_RANGE_EV,
        false,
        "of eV",
    )?;
    Ok((work_function, inner_potential))
}

fn check_id(ctx: &Ctx<'_>, id: &str) -> Result<(), TableError> {
    let mut chars = id.chars();
    let first_ok = chars.next().is_some_and(|c| c.is_ascii_lowercase());
    let rest_ok = chars.all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || c == '_');
    if !first_ok || !rest_ok || id.len() > MAX_ID_LEN {
        return Err(ctx.err(
            Some("id"),
            format!(
                "must be 1 to {MAX_ID_LEN} characters from a-z, 0-9 and _, starting with a letter, got {id:?}"
            ),
        ));
    }
    Ok(())
}

fn parse_face(ctx: &Ctx<'_>, t: &Table) -> Result<FaceRow, TableError> {
    ctx.check_fields(t, FACE_FIELDS, "[[crystal.face]]")?;
    let bad_miller = |got: String| {
        ctx.err(
            Some("miller"),
            format!(
                "must be three integer indices [h, k, l], not all zero, each within ±{MAX_INDEX} (for a hexagonal face (h k i l) drop i: (0001) is [0, 0, 1]), got {got}"
            ),
        )
    };
    let miller = match t.get("miller") {
        None => {
            return Err(ctx.err(
                Some("miller"),
                "missing; this field is required".to_string(),
            ))
        }
        Some(Value::Array(items)) => {
            let mut m = [0i32; 3];
            if items.len() != 3 {
                return Err(bad_miller(describe(&Value::Array(items.clone()))));
            }
            for (slot, item) in m.iter_mut().zip(items) {
                match item {
                    Value::Integer(n) if n.unsigned_abs() <= MAX_INDEX as u64 => *slot = *n as i32,
                    _ => return Err(bad_miller(describe(&Value::Array(items.clone())))),
                }
            }
            if m == [0, 0, 0] {
                return Err(bad_miller("[0, 0, 0]".to_string()));
            }
            m
        }
        Some(other) => return Err(bad_miller(describe(other))),
    };
    let ((work_function_ev, work_function_source), (inner_potential_ev, inner_potential_source)) =
        typical_values(ctx, t)?;
    Ok(FaceRow {
        miller,
        work_function_ev,
        work_function_source,
        inner_potential_ev,
        inner_potential_source,
    })
}

/// A TOML number (integer or float) as f64 when it is finite; else the message,
/// "must be a (finite) number UNIT, got …". Shared with [`crate::rig`].
pub(crate) fn finite_number(v: &Value, unit: &str) -> Result<f64, String> {
    let x = match v {
        Value::Float(x) => *x,
        Value::Integer(n) => *n as f64,
        other => return Err(format!("must be a number {unit}, got {}", describe(other))),
    };
    if x.is_finite() {
        Ok(x)
    } else {
        Err(format!("must be a finite number {unit}, got {x}"))
    }
}

/// A short description of a TOML value for "got …" in messages. Shared with
/// [`crate::rig`].
pub(crate) fn describe(v: &Value) -> String {
    match v {
        Value::String(s) => format!("string {s:?}"),
        Value::Integer(n) => n.to_string(),
        Value::Float(x) => x.to_string(),
        Value::Boolean(b) => format!("boolean {b}"),
        Value::Datetime(d) => format!("date-time {d}"),
        Value::Array(items) => {
            let parts: Vec<String> = items.iter().map(describe).collect();
            format!("[{}]", parts.join(", "))
        }
        Value::Table(_) => "a table".to_string(),
    }
}

/// The Rust variant name of a structure in `crate::lattice::Structure`.
fn variant(s: Structure) -> &'static str {
    match s {
        Structure::SimpleCubic => "SimpleCubic",
        Structure::Bcc => "Bcc",
        Structure::Fcc => "Fcc",
        Structure::Diamond => "Diamond",
        Structure::RockSalt => "RockSalt",
        Structure::ZincBlende => "ZincBlende",
        Structure::CsCl => "CsCl",
        Structure::Hcp => "Hcp",
        Structure::Graphite => "Graphite",
        Structure::Tetragonal => "Tetragonal",
        Structure::Hexagonal => "Hexagonal",
        Structure::Orthorhombic => "Orthorhombic",
    }
}

/// A float literal that reads back as the same f64 and always has a decimal point.
fn float_lit(x: f64) -> String {
    let s = format!("{x:?}");
    if s.contains('.') {
        s
    } else if let Some(pos) = s.find('e') {
        format!("{}.0{}", &s[..pos], &s[pos..])
    } else {
        format!("{s}.0")
    }
}

fn opt_lit(x: Option<f64>) -> String {
    match x {
        Some(x) => format!("Some({})", float_lit(x)),
        None => "None".to_string(),
    }
}

/// The Rust source of `core/src/table/data.rs` for these rows, formatted exactly as
/// rustfmt (edition 2021, default settings) leaves it, so `cargo fmt --check` passes on
/// the generated file. (rustfmt hugs a one-element array of a struct literal onto the
/// brackets, `&[FaceInfo { .. }]`, hence the two shapes below.)
pub fn render_core_table(rows: &[CrystalRow]) -> String {
    let mut out = String::new();
    out.push_str(
        "// @generated by `cargo run -p matterwave-tests --bin gen-tables` from tables/crystals.toml.\n\
         // Do not edit by hand: edit tables/crystals.toml (which names the source of every\n\
         // number) and run the generator.\n\
         #![allow(clippy::all)]\n",
    );
    if rows.iter().any(|r| !r.faces.is_empty()) {
        out.push_str("use super::{Crystal, FaceInfo};\n");
    } else {
        out.push_str("use super::Crystal;\n");
    }
    out.push_str("use crate::lattice::Structure;\n\n");
    out.push_str("pub(super) static CRYSTALS: &[Crystal] = ");
    struct_list(&mut out, 0, "Crystal", rows, crystal_fields);
    out.push_str(";\n");
    out
}

/// Writes `&[Name { .. }, ..]` for `items`, the opening on the current line, the
/// closing bracket at `indent`, without a trailing `,` or `;`.
fn struct_list<T>(
    out: &mut String,
    indent: usize,
    name: &str,
    items: &[T],
    fields: fn(&mut String, usize, &T),
) {
    let pad = " ".repeat(indent);
    match items {
        [] => out.push_str("&[]"),
        [one] => {
            out.push_str(&format!("&[{name} {{\n"));
            fields(out, indent + 4, one);
            out.push_str(&format!("{pad}}}]"));
        }
        many => {
            out.push_str("&[\n");
            for item in many {
                out.push_str(&format!("{pad}    {name} {{\n"));
                fields(out, indent + 8, item);
                out.push_str(&format!("{pad}    }},\n"));
            }
            out.push_str(&format!("{pad}]"));
        }
    }
}

fn crystal_fields(out: &mut String, indent: usize, r: &CrystalRow) {
    let pad = " ".repeat(indent);
    let lines = [
        format!("id: {:?},", r.id),
        format!("name: {:?},", r.name),
        format!("structure: Structure::{},", variant(r.structure)),
        format!("a_a: {},", float_lit(r.a_a)),
        format!("b_a: {},", float_lit(r.b_or_a())),
        format!("c_a: {},", float_lit(r.c_or_a())),
        format!("a_uncertainty_a: {},", float_lit(r.a_uncertainty_a)),
        format!("temperature_k: {},", float_lit(r.temperature_k)),
        format!("work_function_ev: {},", opt_lit(r.work_function_ev)),
        format!("inner_potential_ev: {},", opt_lit(r.inner_potential_ev)),
    ];
    for line in lines {
        out.push_str(&format!("{pad}{line}\n"));
    }
    out.push_str(&format!("{pad}faces: "));
    struct_list(out, indent, "FaceInfo", &r.faces, face_fields);
    out.push_str(",\n");
}

fn face_fields(out: &mut String, indent: usize, f: &FaceRow) {
    let pad = " ".repeat(indent);
    let [h, k, l] = f.miller;
    out.push_str(&format!("{pad}miller: [{h}, {k}, {l}],\n"));
    out.push_str(&format!(
        "{pad}inner_potential_ev: {},\n",
        opt_lit(f.inner_potential_ev)
    ));
    out.push_str(&format!(
        "{pad}work_function_ev: {},\n",
        opt_lit(f.work_function_ev)
    ));
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Two valid rows; tests break one thing at a time.
    const GOOD: &str = r#"
[[crystal]]
id = "aa"
name = "test fcc"
structure = "fcc"
a_a = 3.6
a_uncertainty_a = 0.001
temperature_k = 293
lattice_source = "test"
work_function_ev = 4.5
work_function_source = "test"
inner_potential_ev = 10.0
inner_potential_source = "test"
[[crystal.face]]
miller = [1, 1, 1]
work_function_ev = 4.9
work_function_source = "test"

[[crystal]]
id = "bb"
name = "test hcp"
structure = "hcp"
a_a = 2.5
c_a = 4.1
a_uncertainty_a = 0.001
temperature_k = 293
lattice_source = "test"
[[crystal.face]]
miller = [0, 0, 1]
"#;

    /// GOOD with the first occurrence of `from` replaced by `to`.
    fn with(from: &str, to: &str) -> String {
        assert!(GOOD.contains(from), "test setup: {from:?} not in GOOD");
        GOOD.replacen(from, to, 1)
    }

    /// Parses `text`, expects an error at `row` (1-based) and `field`, and checks that the
    /// message names both and contains `needle`.
    fn expect(text: &str, row: Option<usize>, field: Option<&str>, needle: &str) -> TableError {
        let e = parse(text).expect_err("expected an error");
        let shown = e.to_string();
        assert_eq!(e.row, row, "{shown}");
        assert_eq!(e.field.as_deref(), field, "{shown}");
        if let Some(row) = row {
            assert!(shown.starts_with(&format!("crystal #{row}")), "{shown}");
        }
        if let Some(field) = field {
            assert!(shown.contains(&format!("field \"{field}\"")), "{shown}");
        }
        assert!(shown.contains(needle), "{shown:?} lacks {needle:?}");
        e
    }

    #[test]
    fn good_table_parses() {
        let rows = parse(GOOD).unwrap();
        assert_eq!(rows.len(), 2);
        assert_eq!(rows[0].structure, Structure::Fcc);
        assert_eq!(rows[0].c_a, None);
        assert_eq!(rows[0].c_or_a(), 3.6);
        assert_eq!(rows[0].temperature_k, 293.0);
        assert_eq!(rows[0].faces[0].miller, [1, 1, 1]);
        assert_eq!(rows[0].faces[0].inner_potential_ev, None);
        assert_eq!(rows[1].c_a, Some(4.1));
        assert!(rows[1].cell().is_ok());
    }

    #[test]
    fn shipped_table_loads() {
        let rows = load().unwrap();
        assert!(rows.len() >= 32, "{} rows", rows.len());
        for r in &rows {
            r.cell().unwrap_or_else(|e| panic!("{}: {e}", r.id));
        }
        let cu = rows.iter().find(|r| r.id == "cu").unwrap();
        assert_eq!(cu.name, "copper");
        assert!((cu.a_a - 3.615).abs() < 0.01);
    }

    #[test]
    fn error_display_names_row_id_and_field() {
        let e = expect(
            &with("a_a = 3.6", "a_a = -2.87"),
            Some(1),
            Some("a_a"),
            "got -2.87",
        );
        assert_eq!(
            e.to_string(),
            "crystal #1 (id \"aa\"): field \"a_a\": must be a positive number of Å, got -2.87"
        );
    }

    #[test]
    fn syntax_error() {
        let e = expect(
            &with("a_a = 3.6", "a_a = = 3.6"),
            None,
            None,
            "not valid TOML",
        );
        assert!(e.to_string().starts_with("crystal table: "));
    }

    #[test]
    fn top_level() {
        expect("", None, Some("crystal"), "no [[crystal]] blocks");
        expect(
            &format!("colour = 1\n{GOOD}"),
            None,
            Some("colour"),
            "unknown top-level key",
        );
        expect(
            "crystal = 3",
            None,
            Some("crystal"),
            "array of [[crystal]] tables",
        );
        expect(
            "crystal = [3]",
            Some(1),
            None,
            "must be a [[crystal]] table",
        );
    }

    #[test]
    fn unknown_fields() {
        expect(
            &with("a_a = 3.6", "a_a = 3.6\ncolour = \"red\""),
            Some(1),
            Some("colour"),
            "unknown field in [[crystal]]; accepted: id, name",
        );
        expect(
            &with(
                "miller = [0, 0, 1]",
                "miller = [0, 0, 1]\nwork_function = 4.0",
            ),
            Some(2),
            Some("work_function"),
            "unknown field in [[crystal.face]]",
        );
    }

    #[test]
    fn missing_and_mistyped_fields() {
        expect(
            &with("name = \"test fcc\"\n", ""),
            Some(1),
            Some("name"),
            "required",
        );
        expect(
            &with("lattice_source = \"test\"\n", ""),
            Some(1),
            Some("lattice_source"),
            "required",
        );
        expect(
            &with("a_uncertainty_a = 0.001\n", ""),
            Some(1),
            Some("a_uncertainty_a"),
            "required",
        );
        expect(
            &with("a_a = 3.6", "a_a = \"3.6\""),
            Some(1),
            Some("a_a"),
            "got string \"3.6\"",
        );
        expect(
            &with("name = \"test fcc\"", "name = 5"),
            Some(1),
            Some("name"),
            "must be a string",
        );
        expect(
            &with("lattice_source = \"test\"", "lattice_source = \" \""),
            Some(1),
            Some("lattice_source"),
            "empty",
        );
        let e = expect(&with("id = \"aa\"\n", ""), Some(1), Some("id"), "required");
        assert!(e.to_string().starts_with("crystal #1 (no id)"));
    }

    #[test]
    fn bad_ids() {
        for bad in [
            "Cu",
            "1cu",
            "cu-2",
            "_x",
            "c u",
            "abcdefghijklmnopqrstuvwxyz",
        ] {
            expect(
                &with("id = \"aa\"", &format!("id = {bad:?}")),
                Some(1),
                Some("id"),
                "a-z, 0-9 and _",
            );
        }
        expect(
            &with("id = \"aa\"", "id = \"\""),
            Some(1),
            Some("id"),
            "must not be empty",
        );
        expect(
            &with("id = \"aa\"", "id = 7"),
            Some(1),
            Some("id"),
            "must be a string, got 7",
        );
    }

    #[test]
    fn duplicate_and_unsorted_ids() {
        expect(
            &with("id = \"bb\"", "id = \"aa\""),
            Some(2),
            Some("id"),
            "duplicate id; already used by crystal #1",
        );
        let e = expect(
            &with("id = \"bb\"", "id = \"a\""),
            Some(2),
            Some("id"),
            "sorted by id",
        );
        assert!(e.to_string().contains("\"a\" belongs before \"aa\""), "{e}");
    }

    #[test]
    fn unknown_structure() {
        let e = expect(
            &with("structure = \"fcc\"", "structure = \"FCC\""),
            Some(1),
            Some("structure"),
            "unknown structure \"FCC\"",
        );
        assert!(e.message.contains("sc, bcc, fcc"), "{e}");
    }

    #[test]
    fn lattice_constants_by_system() {
        expect(
            &with("a_a = 3.6", "a_a = 3.6\nc_a = 3.6"),
            Some(1),
            Some("c_a"),
            "not accepted for structure \"fcc\"",
        );
        expect(
            &with("a_a = 3.6", "a_a = 3.6\nb_a = 3.6"),
            Some(1),
            Some("b_a"),
            "only orthorhombic",
        );
        expect(&with("c_a = 4.1\n", ""), Some(2), Some("c_a"), "required");
        expect(
            &with("c_a = 4.1", "c_a = 4.1\nb_a = 2.5"),
            Some(2),
            Some("b_a"),
            "hexagonal",
        );
        let ortho = with("structure = \"hcp\"", "structure = \"orthorhombic\"");
        expect(&ortho, Some(2), Some("b_a"), "required");
        let ortho_ok = ortho.replacen("c_a = 4.1", "c_a = 4.1\nb_a = 3.3", 1);
        let rows = parse(&ortho_ok).unwrap();
        assert_eq!(rows[1].b_a, Some(3.3));
        let tetra = with("structure = \"hcp\"", "structure = \"tetragonal\"");
        assert!(parse(&tetra).is_ok());
        expect(
            &tetra.replacen("c_a = 4.1\n", "", 1),
            Some(2),
            Some("c_a"),
            "required",
        );
    }

    #[test]
    fn bad_numbers() {
        expect(
            &with("a_a = 3.6", "a_a = 0"),
            Some(1),
            Some("a_a"),
            "positive number of Å, got 0",
        );
        expect(
            &with("a_a = 3.6", "a_a = nan"),
            Some(1),
            Some("a_a"),
            "finite number of Å, got NaN",
        );
        expect(
            &with("a_a = 3.6", "a_a = inf"),
            Some(1),
            Some("a_a"),
            "finite number of Å, got inf",
        );
        expect(
            &with("a_a = 3.6", "a_a = 0.5"),
            Some(1),
            Some("a_a"),
            "must be from 1 to 30 Å, got 0.5",
        );
        expect(
            &with("a_a = 3.6", "a_a = 31"),
            Some(1),
            Some("a_a"),
            "from 1 to 30 Å, got 31",
        );
        expect(
            &with("c_a = 4.1", "c_a = 45.0"),
            Some(2),
            Some("c_a"),
            "from 1 to 30 Å",
        );
        expect(
            &with("a_uncertainty_a = 0.001", "a_uncertainty_a = 0.0"),
            Some(1),
            Some("a_uncertainty_a"),
            "positive",
        );
        expect(
            &with("a_uncertainty_a = 0.001", "a_uncertainty_a = 0.5"),
            Some(1),
            Some("a_uncertainty_a"),
            "up to 0.1 Å",
        );
        expect(
            &with("temperature_k = 293", "temperature_k = -4"),
            Some(1),
            Some("temperature_k"),
            "positive number of K",
        );
        expect(
            &with("temperature_k = 293", "temperature_k = 5000"),
            Some(1),
            Some("temperature_k"),
            "up to 2000 K",
        );
        expect(
            &with("work_function_ev = 4.5", "work_function_ev = 0.5"),
            Some(1),
            Some("work_function_ev"),
            "from 1 to 7 eV, got 0.5",
        );
        expect(
            &with("work_function_ev = 4.5", "work_function_ev = 7.5"),
            Some(1),
            Some("work_function_ev"),
            "from 1 to 7 eV",
        );
        expect(
            &with("inner_potential_ev = 10.0", "inner_potential_ev = 0.0"),
            Some(1),
            Some("inner_potential_ev"),
            "positive",
        );
        expect(
            &with("inner_potential_ev = 10.0", "inner_potential_ev = 41.0"),
            Some(1),
            Some("inner_potential_ev"),
            "above 0 up to 40 eV, got 41",
        );
    }

    #[test]
    fn sources_go_with_values() {
        expect(
            &with("work_function_source = \"test\"\n", ""),
            Some(1),
            Some("work_function_source"),
            "required because work_function_ev is given",
        );
        expect(
            &with("inner_potential_source = \"test\"\n", ""),
            Some(1),
            Some("inner_potential_source"),
            "required because inner_potential_ev is given",
        );
        expect(
            &with("inner_potential_ev = 10.0\n", ""),
            Some(1),
            Some("inner_potential_source"),
            "given without inner_potential_ev",
        );
        // The same rules inside a face.
        let e = expect(
            &with(
                "work_function_ev = 4.9\nwork_function_source = \"test\"\n",
                "work_function_ev = 4.9\n",
            ),
            Some(1),
            Some("work_function_source"),
            "required because",
        );
        assert_eq!(e.face, Some(1));
        assert!(e.to_string().contains("face #1: field"), "{e}");
    }

    #[test]
    fn bad_faces() {
        let e = expect(
            &with("miller = [1, 1, 1]", "miller = [0, 0, 0]"),
            Some(1),
            Some("miller"),
            "not all zero",
        );
        assert_eq!(e.face, Some(1));
        expect(
            &with("miller = [1, 1, 1]", "miller = [13, 0, 0]"),
            Some(1),
            Some("miller"),
            "got [13, 0, 0]",
        );
        expect(
            &with("miller = [1, 1, 1]", "miller = [1, 1]"),
            Some(1),
            Some("miller"),
            "three integer indices",
        );
        expect(
            &with("miller = [0, 0, 1]", "miller = [0, 0, 0, 1]"),
            Some(2),
            Some("miller"),
            "(0001) is [0, 0, 1]",
        );
        expect(
            &with("miller = [1, 1, 1]", "miller = [1.0, 1, 1]"),
            Some(1),
            Some("miller"),
            "integer",
        );
        expect(
            &with("miller = [1, 1, 1]", "miller = \"111\""),
            Some(1),
            Some("miller"),
            "got string \"111\"",
        );
        expect(
            &with("miller = [0, 0, 1]\n", ""),
            Some(2),
            Some("miller"),
            "required",
        );
        expect(
            &with(
                "miller = [0, 0, 1]",
                "miller = [0, 0, 1]\n[[crystal.face]]\nmiller = [0, 0, 1]",
            ),
            Some(2),
            Some("miller"),
            "already listed as face #1",
        );
        expect(
            &with("[[crystal.face]]\nmiller = [0, 0, 1]", "face = 3"),
            Some(2),
            Some("face"),
            "array of [[crystal.face]]",
        );
    }

    #[test]
    fn render_shape() {
        let rows = parse(GOOD).unwrap();
        let src = render_core_table(&rows);
        assert!(src.starts_with("// @generated"));
        assert!(src.contains("#![allow(clippy::all)]\nuse super::{Crystal, FaceInfo};\nuse crate::lattice::Structure;\n"));
        assert!(src.contains("        structure: Structure::Hcp,\n"));
        assert!(src.contains("        c_a: 3.6,\n"), "cubic c is a");
        assert!(
            src.contains("        b_a: 2.5,\n        c_a: 4.1,\n"),
            "hcp b is a"
        );
        assert!(src.contains("        temperature_k: 293.0,\n"));
        assert!(src.contains("        faces: &[FaceInfo {\n            miller: [1, 1, 1],\n            inner_potential_ev: None,\n            work_function_ev: Some(4.9),\n        }],\n"));
        assert!(src.ends_with("];\n"));
    }

    /// The renderer's layout must be what rustfmt makes of it, for every list shape
    /// (no faces, one face, several; one crystal, several). Skipped where rustfmt is not
    /// installed.
    #[test]
    fn render_is_rustfmt_stable() {
        let one_face = GOOD.replacen("id = \"bb\"", "id = \"cc\"", 1);
        let no_faces = one_face.replacen("[[crystal.face]]\nmiller = [0, 0, 1]\n", "", 1);
        let many = with(
            "miller = [1, 1, 1]",
            "miller = [1, 1, 1]\n[[crystal.face]]\nmiller = [1, -1, 0]\ninner_potential_ev = 12.5\ninner_potential_source = \"t\"",
        )
        .replacen("a_uncertainty_a = 0.001", "a_uncertainty_a = 1e-7", 1);
        let single = GOOD[..GOOD.find("[[crystal]]\nid = \"bb\"").unwrap()].to_string();
        let single_no_face = single.replacen(
            "[[crystal.face]]\nmiller = [1, 1, 1]\nwork_function_ev = 4.9\nwork_function_source = \"test\"\n",
            "",
            1,
        );
        let dir = std::env::temp_dir().join(format!("mw-tables-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        for (i, text) in [GOOD.to_string(), no_faces, many, single, single_no_face]
            .iter()
            .enumerate()
        {
            let src = render_core_table(&parse(text).unwrap());
            let path = dir.join(format!("data{i}.rs"));
            std::fs::write(&path, &src).unwrap();
            let status = std::process::Command::new("rustfmt")
                .args(["--check", "--edition", "2021"])
                .arg(&path)
                .output();
            match status {
                Err(_) => {
                    eprintln!("rustfmt not found; skipping the layout check");
                    break;
                }
                Ok(out) => assert!(
                    out.status.success(),
                    "case {i}: rustfmt would change:\n{}\n--- source ---\n{src}",
                    String::from_utf8_lossy(&out.stdout)
                ),
            }
        }
        let _ = std::fs::remove_dir_all(&dir);
    }

    #[test]
    fn float_literals_round_trip() {
        for x in [1.0, 293.0, 3.6149, 5.431020511, 8.9e-8, 1e-7, 1e20, 0.1] {
            let s = float_lit(x);
            assert!(s.contains('.'), "{s}");
            assert_eq!(s.parse::<f64>().unwrap(), x, "{s}");
        }
        assert_eq!(float_lit(1e-7), "1.0e-7");
        assert_eq!(opt_lit(None), "None");
        assert_eq!(opt_lit(Some(4.0)), "Some(4.0)");
    }
}
