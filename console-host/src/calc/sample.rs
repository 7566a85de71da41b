//! The sample's state as options: `--temperature K` (lattice constants at the sample
//! temperature, from the core's thermal-expansion model) and `--inner-potential-model`
//! (a constant V0 or the table's V0(E)). The physics is the core's
//! ([`matterwave_core::table::Crystal::at_temperature`], [`matterwave_core::inner`]).

use crate::error::{CliError, CliResult};
use crate::output::{Report, Value};
use crate::tables::{CrystalSources, V0FormSources};
use matterwave_core::inner::{self, V0Model, V0ModelKind};
use matterwave_core::table::Crystal;

/// `--temperature K`.
#[derive(Clone, Copy, Debug, Default, clap::Args)]
pub struct SampleArgs {
    /// Sample temperature, K: the lattice constants are taken at it (linear thermal
    /// expansion from the crystal table, accepted within the crystal's range, see
    /// `mwctl crystals --crystal ID`). Default: the table's temperature (293 K for most
    /// metals, 298 K for the salts, 300 K for the semiconductors).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "K")]
    pub temperature: Option<f32>,
}

/// The crystal `id` at the sample temperature of `s` (the table's row when none is
/// given).
pub fn crystal_at(id: &str, s: &SampleArgs) -> CliResult<Crystal> {
    let c = super::crystal(id)?;
    match s.temperature {
        None => Ok(*c),
        Some(t) => c.at_temperature(t).map_err(|e| CliError {
            code: Some(e.code()),
            message: format!(
                "--temperature {t}: {}; the thermal-expansion data of {} ({}) hold from {} to {} K (table temperature {} K)",
                e.message(),
                c.name,
                c.id,
                c.expansion.min_k,
                c.expansion.max_k,
                c.temperature_k
            ),
        }),
    }
}

/// Parses `--inner-potential-model`: `constant` or `energy`.
pub fn v0_model_kind(text: &str) -> Result<V0ModelKind, String> {
    V0ModelKind::from_name(text.trim()).ok_or_else(|| {
        let names: Vec<&str> = V0ModelKind::ALL.iter().map(|k| k.name()).collect();
        format!("give one of {}", names.join(", "))
    })
}

/// The inner-potential model of `kind` for a face: `constant` is `v0_ev`; `energy` is
/// the table's V0(E) form for the face.
pub fn v0_model(
    kind: V0ModelKind,
    v0_ev: f32,
    c: &Crystal,
    face: matterwave_core::lattice::Miller,
) -> CliResult<V0Model> {
    inner::model_for(kind, v0_ev, c.inner_potential_form_for(face)).map_err(|e| CliError {
        code: Some(e.code()),
        message: format!(
            "--inner-potential-model {}: {} ({} face ({} {} {}))",
            kind.name(),
            e.message(),
            c.id,
            face[0],
            face[1],
            face[2]
        ),
    })
}

/// The thermal-expansion fields of `mwctl crystals --crystal ID`.
pub(super) fn expansion_fields(r: &mut Report, c: &Crystal, src: &CrystalSources) {
    let e = src.expansion;
    r.field(
        "temperature_k",
        "table temperature (K)",
        Value::F32(c.temperature_k, 2),
    );
    r.field(
        "expansion_a_ppm_per_k",
        "expansion of a (10⁻⁶/K)",
        Value::F64(e.alpha_a_ppm_per_k, 2),
    );
    r.field(
        "expansion_c_ppm_per_k",
        "expansion of c (10⁻⁶/K)",
        e.alpha_c_ppm_per_k
            .map_or(Value::Missing, |x| Value::F64(x, 2)),
    );
    r.field(
        "expansion_range_k",
        "--temperature accepted (K)",
        Value::List(e.range_k.iter().map(|&x| Value::F64(x, 0)).collect()),
    );
    r.field(
        "expansion_source",
        "expansion source",
        Value::Text(e.source.into()),
    );
}

/// A V0(E) form as `[max_ev, b_ev, c_ev, d_ev]`, or missing.
pub(super) fn form_value(f: Option<V0FormSources>) -> Value {
    f.map_or(Value::Missing, |f| {
        Value::List(
            [f.max_ev, f.b_ev, f.c_ev, f.d_ev]
                .iter()
                .map(|&x| Value::F64(x, 2))
                .collect(),
        )
    })
}
