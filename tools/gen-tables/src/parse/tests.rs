//! The parser's tests: the shipped table parses, and every kind of mistake is reported
//! at its row, face and field.

use super::*;
use crate::structure::System;
use crate::testdata::{with, GOOD};

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
    assert_eq!(rows[0].structure.name, "fcc");
    assert_eq!(rows[0].c_a, None);
    assert_eq!(rows[0].c_or_a(), 3.6);
    assert_eq!(rows[0].temperature_k, 293.0);
    assert_eq!(rows[0].faces[0].miller, [1, 1, 1]);
    assert_eq!(rows[0].faces[0].inner_potential_ev, None);
    assert_eq!(rows[1].c_a, Some(4.1));
    assert_eq!(rows[1].c_or_a(), 4.1);
    assert_eq!(rows[1].b_or_a(), 2.5);
    assert_eq!(rows[1].structure.system, System::Hexagonal);
    assert!(rows[1].face([0, 0, 1]).is_some());
}

#[test]
fn shipped_table_parses() {
    let path = crate::workspace_root().join(crate::TOML_PATH);
    let text = std::fs::read_to_string(&path).unwrap();
    let rows = parse(&text).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    assert!(rows.len() >= 32, "{} rows", rows.len());
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
fn thermal_expansion_fields() {
    let rows = parse(GOOD).unwrap();
    assert_eq!(rows[0].expansion.alpha_a_ppm_per_k, 16.5);
    assert_eq!(rows[0].expansion.alpha_c_ppm_per_k, None);
    assert_eq!(rows[1].expansion.alpha_a_ppm_per_k, -1.5);
    assert_eq!(rows[1].expansion.range_k, [150.0, 600.0]);
    expect(
        &with("expansion_a_ppm_per_k = 16.5\n", ""),
        Some(1),
        Some("expansion_a_ppm_per_k"),
        "missing",
    );
    expect(
        &with(
            "expansion_a_ppm_per_k = 16.5\n",
            "expansion_a_ppm_per_k = 16.5\nexpansion_c_ppm_per_k = 16.5\n",
        ),
        Some(1),
        Some("expansion_c_ppm_per_k"),
        "cubic",
    );
    expect(
        &with("expansion_c_ppm_per_k = 27\n", ""),
        Some(2),
        Some("expansion_c_ppm_per_k"),
        "missing",
    );
    expect(
        &with(
            "expansion_a_ppm_per_k = 16.5",
            "expansion_a_ppm_per_k = 500",
        ),
        Some(1),
        Some("expansion_a_ppm_per_k"),
        "from -20 to 200",
    );
    expect(
        &with(
            "expansion_range_k = [100, 700]",
            "expansion_range_k = [300, 700]",
        ),
        Some(1),
        Some("expansion_range_k"),
        "table temperature 293 K inside",
    );
    expect(
        &with(
            "expansion_range_k = [100, 700]",
            "expansion_range_k = [700, 100]",
        ),
        Some(1),
        Some("expansion_range_k"),
        "got [700, 100]",
    );
    expect(
        &with("expansion_source = \"test\"\n", ""),
        Some(1),
        Some("expansion_source"),
        "missing",
    );
}

#[test]
fn inner_potential_form_fields() {
    let rows = parse(GOOD).unwrap();
    let f = rows[1].inner_potential_form.as_ref().unwrap();
    assert_eq!((f.max_ev, f.b_ev, f.c_ev, f.d_ev), (10.3, 0.75, 76.6, 11.4));
    assert_eq!(rows[0].inner_potential_form, None);
    expect(
        &with("inner_potential_form_source = \"test\"\n", ""),
        Some(2),
        Some("inner_potential_form_source"),
        "missing",
    );
    expect(
        &with("d_ev = 11.4 }", "e_ev = 11.4 }"),
        Some(2),
        Some("inner_potential_form"),
        "unknown key \"e_ev\"",
    );
    expect(
        &with("max_ev = 10.3", "max_ev = 99"),
        Some(2),
        Some("inner_potential_form"),
        "from 1 to 40",
    );
    expect(
        &with(
            "[[crystal.face]]\nmiller = [0, 0, 1]\n",
            "[[crystal.face]]\nmiller = [0, 0, 1]\ninner_potential_form_source = \"t\"\n",
        ),
        Some(2),
        Some("inner_potential_form_source"),
        "given without inner_potential_form",
    );
}
