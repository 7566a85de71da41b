//! matterwave-gen-tables: the one reader of the crystal table `tables/crystals.toml`.
//!
//! It parses and validates the table ([`parse`]) and renders the two files built from
//! it, both checked in:
//!
//! | file | what | renderer |
//! |---|---|---|
//! | `core/src/table/data.rs` | the firmware's fixed f32 table, without sources | [`render_core_table`] |
//! | `console-host/src/table_sources.rs` | the console's f64 values with the source of every number | [`render_sources_table`] |
//!
//! Nothing else reads the TOML: the firmware and `mwctl` compile the generated files.
//! The `gen-tables` binary writes them ([`REGENERATE`]) or checks them ([`CHECK`]);
//! the `table_drift` test in `tests/` runs the same check and compares the compiled
//! tables with the TOML row by row.
//!
//! [`parse`] checks every row and every face and stops at the first problem with a
//! [`TableError`] that names the row (1-based position and id), the face where there is
//! one, the field, what was found and what is accepted, for example
//!
//! ```text
//! crystal #4 (id "fe"): field "a_a": must be a positive number of Å, got -2.87
//! ```
//!
//! Unknown fields are rejected (as `serde(deny_unknown_fields)` would, but with the row
//! named), so a misspelt key never silently drops a value.
//!
//! ```
//! use matterwave_gen_tables::{generate, parse, workspace_root, TOML_PATH};
//! let text = std::fs::read_to_string(workspace_root().join(TOML_PATH)).unwrap();
//! let rows = parse(&text).unwrap();
//! let cu = rows.iter().find(|r| r.id == "cu").unwrap();
//! assert_eq!(cu.name, "copper");
//! assert!((cu.a_a - 3.615).abs() < 0.01);
//! let [core, sources] = generate(&rows);
//! assert_eq!(core.path, "core/src/table/data.rs");
//! assert!(sources.text.contains(&cu.lattice_source));
//! ```
//!
//! The generator does not link `matterwave-core`: it must build and run while the core's
//! table is stale, so it keeps its own list of the core's structures ([`structure`]).

use std::path::{Path, PathBuf};

pub mod check;
mod parse;
mod render;
pub mod render_core;
pub mod render_sources;
pub mod row;
pub mod structure;
#[cfg(test)]
mod testdata;

pub use parse::parse;
pub use render_core::render_core_table;
pub use render_sources::render_sources_table;
pub use row::{CrystalRow, ExpansionRow, FaceRow, TableError, V0FormRow};

/// The crystal table, relative to the workspace root.
pub const TOML_PATH: &str = "tables/crystals.toml";
/// The firmware's generated table, relative to the workspace root.
pub const CORE_TABLE_PATH: &str = "core/src/table/data.rs";
/// The console's generated citation table, relative to the workspace root.
pub const SOURCES_TABLE_PATH: &str = "console-host/src/table_sources.rs";
/// The command that rewrites both generated files.
pub const REGENERATE: &str = "cargo run -p matterwave-gen-tables";
/// The command that checks both generated files and writes nothing.
pub const CHECK: &str = "cargo run -p matterwave-gen-tables -- --check";

/// The workspace root (this crate sits at `tools/gen-tables`).
pub fn workspace_root() -> PathBuf {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("../..");
    root.canonicalize().unwrap_or(root)
}

/// One generated file: where it goes and what it must hold.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Generated {
    /// Path relative to the workspace root.
    pub path: &'static str,
    /// The full text of the file.
    pub text: String,
}

impl Generated {
    /// Why the file on disk (`None` if it could not be read) is stale, or `None` when it
    /// is exactly what the generator writes.
    pub fn staleness(&self, on_disk: Option<&str>) -> Option<String> {
        let on_disk = match on_disk {
            None => return Some(format!("{} is missing", self.path)),
            Some(text) if text == self.text => return None,
            Some(text) => text,
        };
        let line = on_disk
            .lines()
            .zip(self.text.lines())
            .position(|(a, b)| a != b)
            .map(|i| i + 1)
            .unwrap_or_else(|| on_disk.lines().count().min(self.text.lines().count()) + 1);
        Some(format!(
            "{} differs from {TOML_PATH} (first difference at line {line})",
            self.path
        ))
    }
}

/// Both generated files for these rows: the core's table, then the console's.
pub fn generate(rows: &[CrystalRow]) -> [Generated; 2] {
    [
        Generated {
            path: CORE_TABLE_PATH,
            text: render_core_table(rows),
        },
        Generated {
            path: SOURCES_TABLE_PATH,
            text: render_sources_table(rows),
        },
    ]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn staleness_names_the_file_and_the_line() {
        let g = Generated {
            path: CORE_TABLE_PATH,
            text: "a\nb\nc\n".to_string(),
        };
        assert_eq!(g.staleness(Some("a\nb\nc\n")), None);
        assert_eq!(
            g.staleness(Some("a\nx\nc\n")).unwrap(),
            "core/src/table/data.rs differs from tables/crystals.toml (first difference at line 2)"
        );
        assert!(g.staleness(Some("a\nb\n")).unwrap().ends_with("line 3)"));
        assert!(g.staleness(Some("a\nb\nc")).is_some(), "final newline");
        assert_eq!(
            g.staleness(None).unwrap(),
            "core/src/table/data.rs is missing"
        );
    }

    #[test]
    fn generate_renders_both_files() {
        let rows = parse(testdata::GOOD).unwrap();
        let [core, sources] = generate(&rows);
        assert_eq!(core.path, CORE_TABLE_PATH);
        assert_eq!(core.text, render_core_table(&rows));
        assert_eq!(sources.path, SOURCES_TABLE_PATH);
        assert_eq!(sources.text, render_sources_table(&rows));
    }
}
