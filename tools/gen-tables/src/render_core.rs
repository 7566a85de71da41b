//! Rendering `core/src/table/data.rs`, the firmware's fixed f32 crystal table, from
//! the rows. The firmware carries no sources; it stores b and c for every cell (b = a
//! and c = a where the table gives none).

use crate::render::{float_lit, header, opt_lit, push_lines, struct_list};
use crate::row::{CrystalRow, FaceRow, V0FormRow};

/// The Rust source of `core/src/table/data.rs` for these rows, formatted exactly as
/// rustfmt (edition 2021, default settings) leaves it, so `cargo fmt --check` passes on
/// the generated file.
pub fn render_core_table(rows: &[CrystalRow]) -> String {
    let mut out = header();
    out.push_str("#![allow(clippy::all)]\n");
    let mut types = vec!["Crystal", "Expansion"];
    if rows.iter().any(|r| !r.faces.is_empty()) {
        types.push("FaceInfo");
    }
    let forms = rows.iter().any(|r| {
        r.inner_potential_form.is_some() || r.faces.iter().any(|f| f.inner_potential_form.is_some())
    });
    if forms {
        types.push("V0Form");
    }
    out.push_str(&format!("use super::{{{}}};\n", types.join(", ")));
    out.push_str("use crate::lattice::Structure;\n\n");
    out.push_str("pub(super) static CRYSTALS: &[Crystal] = ");
    struct_list(&mut out, 0, "Crystal", rows, crystal_fields);
    out.push_str(";\n");
    out
}

fn crystal_fields(out: &mut String, indent: usize, r: &CrystalRow) {
    push_lines(
        out,
        indent,
        [
            format!("id: {:?},", r.id),
            format!("name: {:?},", r.name),
            format!("structure: Structure::{},", r.structure.variant),
            format!("a_a: {},", float_lit(r.a_a)),
            format!("b_a: {},", float_lit(r.b_or_a())),
            format!("c_a: {},", float_lit(r.c_or_a())),
            format!("a_uncertainty_a: {},", float_lit(r.a_uncertainty_a)),
            format!("temperature_k: {},", float_lit(r.temperature_k)),
            format!("work_function_ev: {},", opt_lit(r.work_function_ev)),
            format!("inner_potential_ev: {},", opt_lit(r.inner_potential_ev)),
        ],
    );
    form_field(out, indent, r.inner_potential_form.as_ref());
    let e = &r.expansion;
    let pad = " ".repeat(indent);
    out.push_str(&format!("{pad}expansion: Expansion {{\n"));
    push_lines(
        out,
        indent + 4,
        [
            format!("alpha_a_ppm_per_k: {},", float_lit(e.alpha_a_ppm_per_k)),
            format!(
                "alpha_c_ppm_per_k: {},",
                float_lit(e.alpha_c_ppm_per_k.unwrap_or(e.alpha_a_ppm_per_k))
            ),
            format!("min_k: {},", float_lit(e.range_k[0])),
            format!("max_k: {},", float_lit(e.range_k[1])),
        ],
    );
    out.push_str(&format!("{pad}}},\n"));
    out.push_str(&format!("{}faces: ", " ".repeat(indent)));
    struct_list(out, indent, "FaceInfo", &r.faces, face_fields);
    out.push_str(",\n");
}

fn face_fields(out: &mut String, indent: usize, f: &FaceRow) {
    let [h, k, l] = f.miller;
    push_lines(
        out,
        indent,
        [
            format!("miller: [{h}, {k}, {l}],"),
            format!("inner_potential_ev: {},", opt_lit(f.inner_potential_ev)),
            format!("work_function_ev: {},", opt_lit(f.work_function_ev)),
        ],
    );
    form_field(out, indent, f.inner_potential_form.as_ref());
}

/// `inner_potential_form: None,` or `inner_potential_form: Some(V0Form { .. }),`.
fn form_field(out: &mut String, indent: usize, form: Option<&V0FormRow>) {
    let pad = " ".repeat(indent);
    match form {
        None => out.push_str(&format!("{pad}inner_potential_form: None,\n")),
        Some(v) => {
            out.push_str(&format!("{pad}inner_potential_form: Some(V0Form {{\n"));
            push_lines(
                out,
                indent + 4,
                [
                    format!("max_ev: {},", float_lit(v.max_ev)),
                    format!("b_ev: {},", float_lit(v.b_ev)),
                    format!("c_ev: {},", float_lit(v.c_ev)),
                    format!("d_ev: {},", float_lit(v.d_ev)),
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
    use crate::testdata::GOOD;

    #[test]
    fn render_shape() {
        let rows = parse(GOOD).unwrap();
        let src = render_core_table(&rows);
        assert!(src.starts_with("// @generated"));
        assert!(src.contains("#![allow(clippy::all)]\nuse super::{Crystal, Expansion, FaceInfo, V0Form};\nuse crate::lattice::Structure;\n"));
        assert!(src.contains("        structure: Structure::Hcp,\n"));
        assert!(src.contains("        c_a: 3.6,\n"), "cubic c is a");
        assert!(
            src.contains("        b_a: 2.5,\n        c_a: 4.1,\n"),
            "hcp b is a"
        );
        assert!(src.contains("        temperature_k: 293.0,\n"));
        assert!(src.contains("        faces: &[FaceInfo {\n            miller: [1, 1, 1],\n            inner_potential_ev: None,\n            work_function_ev: Some(4.9),\n            inner_potential_form: None,\n        }],\n"));
        assert!(src.contains("        expansion: Expansion {\n            alpha_a_ppm_per_k: 16.5,\n            alpha_c_ppm_per_k: 16.5,\n            min_k: 100.0,\n            max_k: 700.0,\n        },\n"), "cubic: c expands as a");
        assert!(!src.contains("test\""), "the firmware carries no sources");
        assert!(src.ends_with("];\n"));
    }

    /// The renderer's layout must be what rustfmt makes of it, for every list shape.
    #[test]
    fn render_is_rustfmt_stable() {
        assert_rustfmt_stable("core", render_core_table);
    }
}
