//! Reading the thermal expansion of a `[[crystal]]` row and the V0(E) form of a row or
//! face.

use toml::{Table, Value};

use crate::check::{
    describe, finite_number, Ctx, EXPANSION_RANGE_PPM_PER_K, TEMPERATURE_RANGE_K,
    V0_FORM_B_RANGE_EV, V0_FORM_C_RANGE, V0_FORM_D_RANGE_EV, V0_FORM_MAX_RANGE_EV,
};
use crate::row::{ExpansionRow, TableError, V0FormRow};

/// A number within [lo, hi] (zero and negative values allowed when the range has them).
fn signed(
    ctx: &Ctx<'_>,
    v: &Value,
    field: &str,
    range: (f64, f64),
    unit: &str,
) -> Result<f64, TableError> {
    let x = finite_number(v, unit).map_err(|m| ctx.err(Some(field), m))?;
    if x < range.0 || x > range.1 {
        return Err(ctx.err(
            Some(field),
            format!("must be from {} to {} {unit}, got {x}", range.0, range.1),
        ));
    }
    Ok(x)
}

/// `expansion_a_ppm_per_k`, `expansion_c_ppm_per_k` (required exactly when the structure
/// has a c of its own), `expansion_range_k = [lo, hi]` with lo < hi and lo ≤ the table
/// temperature ≤ hi, and `expansion_source`.
pub(super) fn expansion(
    ctx: &Ctx<'_>,
    t: &Table,
    wants_c: bool,
    temperature_k: f64,
) -> Result<ExpansionRow, TableError> {
    let coeff = |field: &str| -> Result<Option<f64>, TableError> {
        t.get(field)
            .map(|v| signed(ctx, v, field, EXPANSION_RANGE_PPM_PER_K, "ppm/K"))
            .transpose()
    };
    let missing = |field: &str| ctx.err(Some(field), "missing; this field is required".into());
    let alpha_a =
        coeff("expansion_a_ppm_per_k")?.ok_or_else(|| missing("expansion_a_ppm_per_k"))?;
    let alpha_c = coeff("expansion_c_ppm_per_k")?;
    match (wants_c, alpha_c) {
        (true, None) => {
            return Err(ctx.err(
                Some("expansion_c_ppm_per_k"),
                "missing; required for a structure with a c of its own (give the coefficient along c; the polycrystalline value with a note where the anisotropy is not known)".into(),
            ))
        }
        (false, Some(_)) => {
            return Err(ctx.err(
                Some("expansion_c_ppm_per_k"),
                "not accepted for a cubic structure (c = a expands as a)".into(),
            ))
        }
        _ => {}
    }
    let bad_range = |got: String| {
        ctx.err(
            Some("expansion_range_k"),
            format!(
                "must be [lowest, highest] K with {} < lowest < highest <= {} and the table temperature {temperature_k} K inside, got {got}",
                TEMPERATURE_RANGE_K.0, TEMPERATURE_RANGE_K.1
            ),
        )
    };
    let range_k = match t.get("expansion_range_k") {
        None => return Err(missing("expansion_range_k")),
        Some(Value::Array(items)) if items.len() == 2 => {
            let mut r = [0.0f64; 2];
            for (slot, item) in r.iter_mut().zip(items) {
                *slot = finite_number(item, "K")
                    .map_err(|_| bad_range(describe(&Value::Array(items.clone()))))?;
            }
            let ok = r[0] > TEMPERATURE_RANGE_K.0
                && r[0] < r[1]
                && r[1] <= TEMPERATURE_RANGE_K.1
                && r[0] <= temperature_k
                && temperature_k <= r[1];
            if !ok {
                return Err(bad_range(describe(&Value::Array(items.clone()))));
            }
            r
        }
        Some(other) => return Err(bad_range(describe(other))),
    };
    let source = ctx.string(t, "expansion_source", true)?.unwrap_or_default();
    Ok(ExpansionRow {
        alpha_a_ppm_per_k: alpha_a,
        alpha_c_ppm_per_k: alpha_c,
        range_k,
        source,
    })
}

/// `inner_potential_form = { max_ev, b_ev, c_ev, d_ev }` with
/// `inner_potential_form_source`, both or neither.
pub(super) fn v0_form(ctx: &Ctx<'_>, t: &Table) -> Result<Option<V0FormRow>, TableError> {
    const FIELD: &str = "inner_potential_form";
    const KEYS: [&str; 4] = ["max_ev", "b_ev", "c_ev", "d_ev"];
    let source = ctx.string(t, "inner_potential_form_source", false)?;
    let form = match t.get(FIELD) {
        None => None,
        Some(Value::Table(ft)) => {
            if let Some(k) = ft.keys().find(|k| !KEYS.contains(&k.as_str())) {
                return Err(ctx.err(
                    Some(FIELD),
                    format!("unknown key {k:?}; accepted: {}", KEYS.join(", ")),
                ));
            }
            let get = |key: &str, range: (f64, f64), unit: &str| -> Result<f64, TableError> {
                match ft.get(key) {
                    None => Err(ctx.err(
                        Some(FIELD),
                        format!("missing {key}; the form needs {}", KEYS.join(", ")),
                    )),
                    Some(v) => signed(ctx, v, FIELD, range, unit),
                }
            };
            let max_ev = get("max_ev", V0_FORM_MAX_RANGE_EV, "eV (max_ev)")?;
            let b_ev = get("b_ev", V0_FORM_B_RANGE_EV, "eV (b_ev)")?;
            let c_ev = get("c_ev", V0_FORM_C_RANGE, "eV^(3/2) (c_ev)")?;
            let d_ev = get("d_ev", V0_FORM_D_RANGE_EV, "eV (d_ev)")?;
            Some((max_ev, b_ev, c_ev, d_ev))
        }
        Some(other) => {
            return Err(ctx.err(
                Some(FIELD),
                format!(
                    "must be an inline table {{ max_ev = .., b_ev = .., c_ev = .., d_ev = .. }}, got {}",
                    describe(other)
                ),
            ))
        }
    };
    match (form, source) {
        (Some((max_ev, b_ev, c_ev, d_ev)), Some(source)) => Ok(Some(V0FormRow {
            max_ev,
            b_ev,
            c_ev,
            d_ev,
            source,
        })),
        (Some(_), None) => Err(ctx.err(
            Some("inner_potential_form_source"),
            format!("missing; required because {FIELD} is given (name the paper the form and its parameters come from, add \"from memory\" for recalled values)"),
        )),
        (None, Some(_)) => Err(ctx.err(
            Some("inner_potential_form_source"),
            format!("given without {FIELD}; add the form or remove the source"),
        )),
        (None, None) => Ok(None),
    }
}
