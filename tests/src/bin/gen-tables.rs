//! Writes `core/src/table/data.rs` (the firmware's fixed crystal table) from
//! `tables/crystals.toml`.
//!
//! ```text
//! cargo run -p matterwave-tests --bin gen-tables            # write the file
//! cargo run -p matterwave-tests --bin gen-tables -- --check # exit 1 if it is stale
//! ```
//!
//! The TOML is read from disk at run time, so the output always reflects the file as it
//! is now. Exit codes: 0 done (or up to date), 1 `--check` found a stale file, 2 the
//! table is invalid or a file could not be read or written.

use std::path::{Path, PathBuf};
use std::process::ExitCode;

use matterwave_console::tables;

const REGENERATE: &str = "cargo run -p matterwave-tests --bin gen-tables";

fn workspace_root() -> PathBuf {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("..");
    root.canonicalize().unwrap_or(root)
}

fn main() -> ExitCode {
    let mut check = false;
    for arg in std::env::args().skip(1) {
        match arg.as_str() {
            "--check" => check = true,
            "-h" | "--help" => {
                println!(
                    "gen-tables: writes core/src/table/data.rs from tables/crystals.toml\n\n\
                     usage: gen-tables [--check]\n\n  \
                     --check  write nothing; exit 1 if core/src/table/data.rs differs from\n           \
                     what the generator would write"
                );
                return ExitCode::SUCCESS;
            }
            other => {
                eprintln!("gen-tables: unknown argument {other:?}; accepted: --check, --help");
                return ExitCode::from(2);
            }
        }
    }

    let root = workspace_root();
    let toml_path = root.join("tables/crystals.toml");
    let out_path = root.join("core/src/table/data.rs");

    let text = match std::fs::read_to_string(&toml_path) {
        Ok(t) => t,
        Err(e) => {
            eprintln!("gen-tables: cannot read {}: {e}", toml_path.display());
            return ExitCode::from(2);
        }
    };
    let rows = match tables::parse(&text) {
        Ok(rows) => rows,
        Err(e) => {
            eprintln!("gen-tables: {}: {e}", toml_path.display());
            return ExitCode::from(2);
        }
    };
    let rendered = tables::render_core_table(&rows);
    let current = std::fs::read_to_string(&out_path).ok();

    if check {
        if current.as_deref() == Some(rendered.as_str()) {
            println!(
                "gen-tables: {} is up to date ({} crystals)",
                out_path.display(),
                rows.len()
            );
            return ExitCode::SUCCESS;
        }
        eprintln!(
            "gen-tables: {} differs from tables/crystals.toml; run `{REGENERATE}`",
            out_path.display()
        );
        return ExitCode::from(1);
    }

    if current.as_deref() == Some(rendered.as_str()) {
        println!(
            "gen-tables: {} already up to date ({} crystals)",
            out_path.display(),
            rows.len()
        );
        return ExitCode::SUCCESS;
    }
    if let Err(e) = std::fs::write(&out_path, rendered) {
        eprintln!("gen-tables: cannot write {}: {e}", out_path.display());
        return ExitCode::from(2);
    }
    println!(
        "gen-tables: wrote {} ({} crystals)",
        out_path.display(),
        rows.len()
    );
    ExitCode::SUCCESS
}
