//! Rendering `console-host/src/table_sources.rs`, the console's citation table, from
//! the rows: every number as f64, as written in the table, beside where it comes from.
//! Unlike the firmware's table it keeps b and c as the table gives them (`None` where
//! the structure takes none).
//!
//! The types it fills (`CrystalSources`, `FaceSources`, `Sourced`) are defined in the
//! console's `tables` module.

use crate::render::{float_lit, header, opt_lit, push_lines, str_lit, struct_list};
use crate::row::{CrystalRow, FaceRow, V0FormRow};

/// The Rust source of `console-host/src/table_sources.rs` for these rows, formatted
/// exactly as rustfmt (edition 2021, default settings) leaves it.
pub fn render_sources_table(rows: &[CrystalRow]) -> String {
    let mut out = header();
    out.push_str("#![allow(clippy::all)]\n");
    let faces = rows.iter().any(|r| !r.faces.is_empty());
    let sourced = rows.iter().any(|r| {
        r.work_function_ev.is_some()
            || r.inner_potential_ev.is_some()
            || r.faces
                .iter()
                .any(|f| f.work_function_ev.is_some() || f.inner_potential_ev.is_some())
    });
    let forms = rows.iter().any(|r| {
        r.inner_potential_form.is_some() || r.faces.iter().any(|f| f.inner_potential_form.is_some())
    });
    let mut types = vec!["CrystalSources", "ExpansionSources"];
    if faces {
        types.push("FaceSources");
    }
    if sourced {
        types.push("Sourced");
    }
    if forms {
        types.push("V0FormSources");
    }
    match types.as_slice() {
        [one] => out.push_str(&format!("use crate::tables::{one};\n")),
        many => out.push_str(&format!("use crate::tables::{{{}}};\n", many.join(", "))),
    }
    out.push_str("use matterwave_core::lattice::Structure;\n\n");
    out.push_str("pub(crate) static CRYSTALS: &[CrystalSources] = ");
    struct_list(&mut out, 0, "CrystalSources", rows, crystal_fields);
    out.push_str(";\n");
    out
}

/// `field: None,` or `field: Some(Sourced { value, source }),` in rustfmt's layout.
fn sourced(
    out: &mut String,
    indent: usize,
    field: &str,
    value: Option<f64>,
    source: &Option<String>,
) {
    let pad = " ".repeat(indent);
    match (value, source) {
        (Some(value), Some(source)) => {
            out.push_str(&format!("{pad}{field}: Some(Sourced {{\n"));
            push_lines(
                out,
                indent + 4,
                [
                    format!("value: {},", float_lit(value)),
                    format!("source: {},", str_lit(source)),
                ],
            );
            out.push_str(&format!("{pad}}}),\n"));
        }
        // The parser pairs every value with its source; a lone one cannot occur.
        _ => out.push_str(&format!("{pad}{field}: None,\n")),
    }
}

fn crystal_fields(out: &mut String, indent: usize, r: &CrystalRow) {
    push_lines(
        out,
        indent,
        [
            format!("id: {},", str_lit(&r.id)),
            format!("name: {},", str_lit(&r.name)),
            format!("structure: Structure::{},", r.structure.variant),
            format!("a_a: {},", float_lit(r.a_a)),
            format!("b_a: {},", opt_lit(r.b_a)),
            format!("c_a: {},", opt_lit(r.c_a)),
            format!("a_uncertainty_a: {},", float_lit(r.a_uncertainty_a)),
            format!("temperature_k: {},", float_lit(r.temperature_k)),
            format!("lattice_source: {},", str_lit(&r.lattice_source)),
        ],
    );
    sourced(
        out,
        indent,
        "work_function_ev",
        r.work_function_ev,
        &r.work_function_source,
    );
    sourced(
        out,
        indent,
        "inner_potential_ev",
        r.inner_potential_ev,
        &r.inner_potential_source,
    );
    form_field(out, indent, r.inner_potential_form.as_ref());
    let e = &r.expansion;
    let pad = " ".repeat(indent);
    out.push_str(&format!("{pad}expansion: ExpansionSources {{\n"));
    push_lines(
        out,
        indent + 4,
        [
            format!("alpha_a_ppm_per_k: {},", float_lit(e.alpha_a_ppm_per_k)),
            format!("alpha_c_ppm_per_k: {},", opt_lit(e.alpha_c_ppm_per_k)),
            format!(
                "range_k: [{}, {}],",
                float_lit(e.range_k[0]),
                float_lit(e.range_k[1])
            ),
            format!("source: {},", str_lit(&e.source)),
        ],
    );
    out.push_str(&format!("{pad}}},\n"));
    out.push_str(&format!("{}faces: ", " ".repeat(indent)));
    struct_list(out, indent, "FaceSources", &r.faces, face_fields);
    out.push_str(",\n");
}

fn face_fields(out: &mut String, indent: usize, f: &FaceRow) {
    let [h, k, l] = f.miller;
    push_lines(out, indent, [format!("miller: [{h}, {k}, {l}],")]);
    sourced(
        out,
        indent,
        "work_function_ev",
        f.work_function_ev,
        &f.work_function_source,
    );
    sourced(
        out,
        indent,
        "inner_potential_ev",
        f.inner_potential_ev,
        &f.inner_potential_source,
    );
    form_field(out, indent, f.inner_potential_form.as_ref());
}

/// `inner_potential_form: None,` or `inner_potential_form: Some(V0FormSources { .. }),`.
fn form_field(out: &mut String, indent: usize, form: Option<&V0FormRow>) {
    let pad = " ".repeat(indent);
    match form {
        None => out.push_str(&format!("{pad}inner_potential_form: None,\n")),
        Some(v) => {
            out.push_str(&format!(
                "{pad}inner_potential_form: Some(V0FormSources {{\n"
            ));
            push_lines(
                out,
                indent + 4,
                [
                    format!("max_ev: {},", float_lit(v.max_ev)),
                    format!("b_ev: {},", float_lit(v.b_ev)),
                    format!("c_ev: {},", float_lit(v.c_ev)),
                    format!("d_ev: {},", float_lit(v.d_ev)),
                    format!("source: {},", str_lit(&v.source)),
                ],
            );
            out.push_str(&format!("{pad}}}),\n"));
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::parse;
    use crate::render::tests::assert_rustfmt_stable;
    use crate::testdata::{with, GOOD};

    #[test]
    fn render_shape() {
        let rows = parse(GOOD).unwrap();
        let src = render_sources_table(&rows);
        assert!(src.starts_with("// @generated by `cargo run -p matterwave-gen-tables`"));
        assert!(src.contains("#![allow(clippy::all)]\nuse crate::tables::{CrystalSources, ExpansionSources, FaceSources, Sourced, V0FormSources};\nuse matterwave_core::lattice::Structure;\n"));
        assert!(src.contains("        structure: Structure::Hcp,\n"));
        assert!(
            src.contains("        a_a: 3.6,\n        b_a: None,\n        c_a: None,\n"),
            "cubic: neither b nor c"
        );
        assert!(src.contains("        a_a: 2.5,\n        b_a: None,\n        c_a: Some(4.1),\n"));
        assert!(src.contains("        lattice_source: \"test\",\n"));
        assert!(src.contains("        work_function_ev: Some(Sourced {\n            value: 4.5,\n            source: \"test\",\n        }),\n"));
        assert!(src.contains("        faces: &[FaceSources {\n            miller: [1, 1, 1],\n            work_function_ev: Some(Sourced {\n                value: 4.9,\n                source: \"test\",\n            }),\n            inner_potential_ev: None,\n            inner_potential_form: None,\n        }],\n"));
        assert!(src.ends_with("];\n"));
    }

    #[test]
    fn imports_only_the_types_used() {
        let bare = with("[[crystal.face]]\nmiller = [1, 1, 1]\nwork_function_ev = 4.9\nwork_function_source = \"test\"\n", "")
            .replacen("[[crystal.face]]\nmiller = [0, 0, 1]\n", "", 1)
            .replacen("work_function_ev = 4.5\nwork_function_source = \"test\"\n", "", 1)
            .replacen("inner_potential_ev = 10.0\ninner_potential_source = \"test\"\n", "", 1)
            .replacen("inner_potential_form = { max_ev = 10.3, b_ev = 0.75, c_ev = 76.6, d_ev = 11.4 }\ninner_potential_form_source = \"test\"\n", "", 1);
        let src = render_sources_table(&parse(&bare).unwrap());
        assert!(
            src.contains("use crate::tables::{CrystalSources, ExpansionSources};\n"),
            "{src}"
        );
        let faces_only = bare.replacen(
            "expansion_source = \"test\"\n",
            "expansion_source = \"test\"\n[[crystal.face]]\nmiller = [1, 0, 0]\n",
            1,
        );
        let src = render_sources_table(&parse(&faces_only).unwrap());
        assert!(
            src.contains("use crate::tables::{CrystalSources, ExpansionSources, FaceSources};\n"),
            "{src}"
        );
    }

    /// The renderer's layout must be what rustfmt makes of it, for every list shape and
    /// for source strings longer than a line.
    #[test]
    fn render_is_rustfmt_stable() {
        assert_rustfmt_stable("sources", render_sources_table);
    }
}
