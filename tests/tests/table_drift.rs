//! The two files generated from `tables/crystals.toml` must be exactly what the
//! generator makes of it: the firmware's table `core/src/table/data.rs` and the
//! console's citation table `console-host/src/table_sources.rs`. The compiled tables
//! must agree with the TOML row by row, and the generator's list of structures with
//! the core's.

use std::path::Path;

use matterwave_console::tables as host;
use matterwave_core::lattice::{Structure, MAX_INDEX};
use matterwave_core::table;
use matterwave_gen_tables::structure::{self, STRUCTURES};
use matterwave_gen_tables::{generate, CrystalRow, Generated, REGENERATE, TOML_PATH};

fn root() -> &'static Path {
    Path::new(concat!(env!("CARGO_MANIFEST_DIR"), "/.."))
}

fn toml_rows() -> Vec<CrystalRow> {
    // Read from disk at run time, so that an edit to the TOML without regenerating is
    // caught even before anything is rebuilt.
    let path = root().join(TOML_PATH);
    let text = std::fs::read_to_string(&path)
        .unwrap_or_else(|e| panic!("cannot read {}: {e}", path.display()));
    matterwave_gen_tables::parse(&text).unwrap_or_else(|e| panic!("{TOML_PATH}: {e}"))
}

/// Fails, naming the file, the first line that differs and the command to run, when
/// the generated file on disk is not what the generator writes.
fn assert_fresh(file: &Generated) {
    let on_disk = std::fs::read_to_string(root().join(file.path)).ok();
    if let Some(why) = file.staleness(on_disk.as_deref()) {
        panic!("{why}; run `{REGENERATE}`");
    }
}

#[test]
fn data_rs_matches_generator() {
    let [core, _] = generate(&toml_rows());
    assert_eq!(core.path, "core/src/table/data.rs");
    assert_fresh(&core);
}

#[test]
fn table_sources_rs_matches_generator() {
    let [_, sources] = generate(&toml_rows());
    assert_eq!(sources.path, "console-host/src/table_sources.rs");
    assert_fresh(&sources);
}

/// The generator's own list of structures (it does not link the core) names the core's
/// structures in the core's order, with the core's variant and crystal system.
#[test]
fn generator_structures_are_the_cores() {
    assert_eq!(STRUCTURES.len(), Structure::ALL.len());
    for (g, c) in STRUCTURES.iter().zip(Structure::ALL) {
        assert_eq!(g.name, c.name(), "{c:?}");
        assert_eq!(g.variant, format!("{c:?}"), "{c:?}");
        assert_eq!(
            format!("{:?}", g.system),
            format!("{:?}", c.system()),
            "{c:?}"
        );
    }
    assert_eq!(structure::MAX_INDEX, MAX_INDEX);
}

/// Same f32 value, allowing one unit of rounding (f64 text -> f32 directly in the core,
/// via f64 here).
fn same_f32(core: f32, toml: f64) -> bool {
    let t = toml as f32;
    (core - t).abs() <= f32::EPSILON * t.abs()
}

fn same_opt(core: Option<f32>, toml: Option<f64>) -> bool {
    match (core, toml) {
        (None, None) => true,
        (Some(c), Some(t)) => same_f32(c, t),
        _ => false,
    }
}

#[test]
fn core_rows_equal_toml_rows() {
    let rows = toml_rows();
    let core = table::all();
    assert_eq!(
        core.len(),
        rows.len(),
        "core table has {} rows, TOML has {}; run `{REGENERATE}`",
        core.len(),
        rows.len()
    );
    for (c, r) in core.iter().zip(&rows) {
        let what = format!("core row {:?}; run `{REGENERATE}`", r.id);
        assert_eq!(c.id, r.id, "{what}");
        assert_eq!(c.name, r.name, "{what}");
        assert_eq!(c.structure.name(), r.structure.name, "{what}");
        assert!(same_f32(c.a_a, r.a_a), "a: {} vs {}, {what}", c.a_a, r.a_a);
        assert!(
            same_f32(c.b_a, r.b_or_a()),
            "b: {} vs {}, {what}",
            c.b_a,
            r.b_or_a()
        );
        assert!(
            same_f32(c.c_a, r.c_or_a()),
            "c: {} vs {}, {what}",
            c.c_a,
            r.c_or_a()
        );
        assert!(same_f32(c.a_uncertainty_a, r.a_uncertainty_a), "{what}");
        assert!(same_f32(c.temperature_k, r.temperature_k), "{what}");
        assert!(same_opt(c.work_function_ev, r.work_function_ev), "{what}");
        assert!(
            same_opt(c.inner_potential_ev, r.inner_potential_ev),
            "{what}"
        );
        let e = &r.expansion;
        assert!(
            same_f32(c.expansion.alpha_a_ppm_per_k, e.alpha_a_ppm_per_k)
                && same_f32(
                    c.expansion.alpha_c_ppm_per_k,
                    e.alpha_c_ppm_per_k.unwrap_or(e.alpha_a_ppm_per_k)
                )
                && same_f32(c.expansion.min_k, e.range_k[0])
                && same_f32(c.expansion.max_k, e.range_k[1]),
            "expansion: {what}"
        );
        assert!(
            same_form(c.inner_potential_form, r.inner_potential_form.as_ref()),
            "V0(E): {what}"
        );
        assert_eq!(c.faces.len(), r.faces.len(), "{what}");
        for (cf, rf) in c.faces.iter().zip(&r.faces) {
            assert!(
                same_form(cf.inner_potential_form, rf.inner_potential_form.as_ref()),
                "face V0(E): {what}"
            );
            assert_eq!(cf.miller, rf.miller, "{what}");
            assert!(same_opt(cf.work_function_ev, rf.work_function_ev), "{what}");
            assert!(
                same_opt(cf.inner_potential_ev, rf.inner_potential_ev),
                "{what}"
            );
        }
        assert_eq!(table::find(&r.id).map(|x| x.id), Ok(c.id), "{what}");
    }
}

/// The core's V0(E) form is the TOML row's, to f32.
fn same_form(
    c: Option<matterwave_core::inner::V0Form>,
    r: Option<&matterwave_gen_tables::V0FormRow>,
) -> bool {
    match (c, r) {
        (None, None) => true,
        (Some(c), Some(r)) => {
            same_f32(c.max_ev, r.max_ev)
                && same_f32(c.b_ev, r.b_ev)
                && same_f32(c.c_ev, r.c_ev)
                && same_f32(c.d_ev, r.d_ev)
        }
        _ => false,
    }
}

/// The console's V0(E) form with its source is the TOML row's.
fn host_form(h: Option<host::V0FormSources>) -> Option<(f64, f64, f64, f64, String)> {
    h.map(|h| (h.max_ev, h.b_ev, h.c_ev, h.d_ev, h.source.to_string()))
}

/// The TOML row's V0(E) form as [`host_form`] gives it.
fn row_form(r: Option<&matterwave_gen_tables::V0FormRow>) -> Option<(f64, f64, f64, f64, String)> {
    r.map(|r| (r.max_ev, r.b_ev, r.c_ev, r.d_ev, r.source.clone()))
}

/// A value and its source as the console holds them, as the TOML row's pair of fields.
fn pair(s: Option<host::Sourced>) -> (Option<f64>, Option<String>) {
    (s.map(|s| s.value), s.map(|s| s.source.to_string()))
}

#[test]
fn host_rows_equal_toml_rows() {
    let rows = toml_rows();
    let hosted = host::all();
    assert_eq!(
        hosted.len(),
        rows.len(),
        "console table has {} rows, TOML has {}; run `{REGENERATE}`",
        hosted.len(),
        rows.len()
    );
    for (h, r) in hosted.iter().zip(&rows) {
        let what = format!("console row {:?}; run `{REGENERATE}`", r.id);
        assert_eq!(h.id, r.id, "{what}");
        assert_eq!(h.name, r.name, "{what}");
        assert_eq!(h.structure.name(), r.structure.name, "{what}");
        // f64 text -> f64 literal: exactly the same value.
        assert_eq!(h.a_a, r.a_a, "a: {what}");
        assert_eq!(h.b_a, r.b_a, "b: {what}");
        assert_eq!(h.c_a, r.c_a, "c: {what}");
        assert_eq!(h.a_uncertainty_a, r.a_uncertainty_a, "uncertainty: {what}");
        assert_eq!(h.temperature_k, r.temperature_k, "temperature: {what}");
        assert_eq!(h.lattice_source, r.lattice_source, "lattice source: {what}");
        assert_eq!(
            pair(h.work_function_ev),
            (r.work_function_ev, r.work_function_source.clone()),
            "work function: {what}"
        );
        assert_eq!(
            pair(h.inner_potential_ev),
            (r.inner_potential_ev, r.inner_potential_source.clone()),
            "inner potential: {what}"
        );
        let e = &r.expansion;
        assert_eq!(
            (
                h.expansion.alpha_a_ppm_per_k,
                h.expansion.alpha_c_ppm_per_k,
                h.expansion.range_k,
                h.expansion.source
            ),
            (
                e.alpha_a_ppm_per_k,
                e.alpha_c_ppm_per_k,
                e.range_k,
                e.source.as_str()
            ),
            "expansion: {what}"
        );
        assert_eq!(
            host_form(h.inner_potential_form),
            row_form(r.inner_potential_form.as_ref()),
            "V0(E): {what}"
        );
        assert_eq!(h.faces.len(), r.faces.len(), "faces: {what}");
        for (k, (hf, rf)) in h.faces.iter().zip(&r.faces).enumerate() {
            let what = format!("face #{}, {what}", k + 1);
            assert_eq!(hf.miller, rf.miller, "{what}");
            assert_eq!(
                pair(hf.work_function_ev),
                (rf.work_function_ev, rf.work_function_source.clone()),
                "work function: {what}"
            );
            assert_eq!(
                pair(hf.inner_potential_ev),
                (rf.inner_potential_ev, rf.inner_potential_source.clone()),
                "inner potential: {what}"
            );
            assert_eq!(
                host_form(hf.inner_potential_form),
                row_form(rf.inner_potential_form.as_ref()),
                "face V0(E): {what}"
            );
        }
        assert_eq!(host::find(&r.id).map(|x| x.id), Some(h.id), "{what}");
    }
}

#[test]
fn every_core_row_builds_a_cell() {
    for c in table::all() {
        let cell = c
            .cell()
            .unwrap_or_else(|e| panic!("crystal {:?}: Cell::new failed: {e}", c.id));
        assert_eq!(cell.structure, c.structure, "{}", c.id);
        assert!(cell.volume_a3() > 0.0, "{}", c.id);
    }
}

#[test]
fn core_table_is_sorted_and_unique() {
    let ids: Vec<&str> = table::all().iter().map(|c| c.id).collect();
    let mut sorted = ids.clone();
    sorted.sort_unstable();
    sorted.dedup();
    assert_eq!(ids, sorted);
}
