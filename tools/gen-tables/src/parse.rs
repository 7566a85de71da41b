//! Reading `tables/crystals.toml` into rows: the TOML is walked by hand over
//! [`toml::Value`] rather than through a serde derive, so that every message can say
//! exactly where it is.

use toml::{Table, Value};

use crate::check::{
    check_id, describe, Ctx, CRYSTAL_FIELDS, FACE_FIELDS, INNER_POTENTIAL_RANGE_EV,
    LATTICE_RANGE_A, MAX_NAME_LEN, TEMPERATURE_RANGE_K, UNCERTAINTY_RANGE_A,
    WORK_FUNCTION_RANGE_EV,
};
use crate::row::{CrystalRow, FaceRow, TableError};

mod thermal;
use crate::structure::{Structure, MAX_INDEX, STRUCTURES};
use thermal::{expansion, v0_form};

/// Parses and validates a crystal table (the text of a `crystals.toml`).
///
/// Checks: TOML syntax; only `[[crystal]]` at the top level; no unknown fields; every
/// required field present with the right type; ids `[a-z0-9_]` starting with a letter,
/// unique and sorted; structure names as in [`STRUCTURES`]; b only for
/// orthorhombic, c for tetragonal, hexagonal, hcp, graphite and orthorhombic cells and
/// for no cubic one; numbers finite and within range (lattice constants 1–30 Å, work
/// functions 1–7 eV, inner potentials above 0 up to 40 eV, uncertainty above 0 up to
/// 0.1 Å, temperature above 0 up to 2000 K); a source for every optional value given and
/// no source without its value; faces with three indices, not all zero, |index| ≤ 12,
/// no face listed twice; thermal expansion (coefficients −20 to 200 ppm/K, c's only
/// where the structure has a c of its own, a range [lo, hi] K holding the table
/// temperature) with its source; a V0(E) form only with its source.
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
        let names: Vec<&str> = STRUCTURES.iter().map(|s| s.name).collect();
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
    let system = structure.system;
    let wants_b = system.has_b();
    let wants_c = system.has_c();
    let kind = system.name();
    let b_a = ctx.number(t, "b_a", wants_b, LATTICE_RANGE_A, true, "of Å")?;
    if b_a.is_some() && !wants_b {
        return Err(ctx.err(
            Some("b_a"),
            format!(
                "not accepted for structure {:?} ({kind}: b = a); only orthorhombic cells take b_a",
                structure.name
            ),
        ));
    }
    let c_a = ctx.number(t, "c_a", wants_c, LATTICE_RANGE_A, true, "of Å")?;
    if c_a.is_some() && !wants_c {
        return Err(ctx.err(
            Some("c_a"),
            format!(
                "not accepted for structure {:?} (cubic: c = a); only tetragonal, hexagonal and orthorhombic cells take c_a",
                structure.name
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
    let expansion = expansion(ctx, t, wants_c, temperature_k)?;
    let inner_potential_form = v0_form(ctx, t)?;
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
        inner_potential_form,
        expansion,
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
    let inner_potential_form = v0_form(ctx, t)?;
    Ok(FaceRow {
        miller,
        work_function_ev,
        work_function_source,
        inner_potential_ev,
        inner_potential_source,
        inner_potential_form,
    })
}

#[cfg(test)]
mod tests;
