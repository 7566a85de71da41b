//! The rules a row must meet: accepted fields and ranges, and the readers that check
//! one field at a time and name the row, face and field when it is wrong.

use toml::{Table, Value};

use crate::row::TableError;

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
/// Accepted linear thermal-expansion coefficients (10⁻⁶/K), inclusive (negative: the
/// axis shrinks on heating, as graphite's a does).
pub const EXPANSION_RANGE_PPM_PER_K: (f64, f64) = (-20.0, 200.0);
/// Accepted parameters of the V0(E) form, inclusive: cap and offset (eV), scale
/// (eV^(3/2)), shift (eV).
pub const V0_FORM_MAX_RANGE_EV: (f64, f64) = (1.0, 40.0);
/// Accepted offset b of the V0(E) form, eV, inclusive.
pub const V0_FORM_B_RANGE_EV: (f64, f64) = (-40.0, 40.0);
/// Accepted scale c of the V0(E) form, eV^(3/2), inclusive.
pub const V0_FORM_C_RANGE: (f64, f64) = (0.0, 1000.0);
/// Accepted shift d of the V0(E) form, eV, inclusive.
pub const V0_FORM_D_RANGE_EV: (f64, f64) = (0.0, 100.0);
/// Longest accepted id, characters.
pub const MAX_ID_LEN: usize = 24;
/// Longest accepted name, characters.
pub const MAX_NAME_LEN: usize = 64;

pub(crate) const CRYSTAL_FIELDS: &[&str] = &[
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
    "inner_potential_form",
    "inner_potential_form_source",
    "expansion_a_ppm_per_k",
    "expansion_c_ppm_per_k",
    "expansion_range_k",
    "expansion_source",
    "face",
];

pub(crate) const FACE_FIELDS: &[&str] = &[
    "miller",
    "work_function_ev",
    "work_function_source",
    "inner_potential_ev",
    "inner_potential_source",
    "inner_potential_form",
    "inner_potential_form_source",
];

/// Where a value sits: row, id and face, for error messages.
pub(crate) struct Ctx<'a> {
    pub(crate) row: usize,
    pub(crate) id: Option<&'a str>,
    pub(crate) face: Option<usize>,
}

impl Ctx<'_> {
    pub(crate) fn err(&self, field: Option<&str>, message: String) -> TableError {
        TableError {
            row: Some(self.row),
            id: self.id.map(str::to_string),
            face: self.face,
            field: field.map(str::to_string),
            message,
        }
    }

    pub(crate) fn check_fields(
        &self,
        table: &Table,
        accepted: &[&str],
        what: &str,
    ) -> Result<(), TableError> {
        if let Some(key) = table.keys().find(|k| !accepted.contains(&k.as_str())) {
            return Err(self.err(
                Some(key),
                format!("unknown field in {what}; accepted: {}", accepted.join(", ")),
            ));
        }
        Ok(())
    }

    pub(crate) fn string(
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

    /// A number in (lo, hi] (`lo_inclusive = false`) or [lo, hi]; `unit` is the unit
    /// phrase, e.g. "of Å".
    pub(crate) fn number(
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
    pub(crate) fn sourced(
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

pub(crate) fn check_id(ctx: &Ctx<'_>, id: &str) -> Result<(), TableError> {
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

/// A TOML number (integer or float) as f64 when it is finite; else the message,
/// "must be a (finite) number UNIT, got …".
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

/// A short description of a TOML value for "got …" in messages.
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
