//! `gen-tables`: writes `core/src/table/data.rs` and `console-host/src/table_sources.rs`
//! from `tables/crystals.toml`.
//!
//! ```text
//! cargo run -p matterwave-gen-tables             # write the files that are stale
//! cargo run -p matterwave-gen-tables -- --check  # write nothing; exit 1 if one is stale
//! ```
//!
//! The TOML is read from disk at run time, so the output always reflects the file as it
//! is now. Exit codes: 0 done (or up to date), 1 `--check` found a stale file, 2 the
//! table is invalid, a file could not be read or written, or an argument is unknown.

use std::process::ExitCode;

use matterwave_gen_tables::{
    generate, parse, workspace_root, CORE_TABLE_PATH, REGENERATE, SOURCES_TABLE_PATH, TOML_PATH,
};

fn main() -> ExitCode {
    let mut check = false;
    for arg in std::env::args().skip(1) {
        match arg.as_str() {
            "--check" => check = true,
            "-h" | "--help" => {
                println!(
                    "gen-tables: writes {CORE_TABLE_PATH} and {SOURCES_TABLE_PATH}\n\
                     from {TOML_PATH}\n\n\
                     usage: gen-tables [--check]\n\n  \
                     --check  write nothing; exit 1 if either file differs from what the\n           \
                     generator would write"
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
    let toml_path = root.join(TOML_PATH);
    let text = match std::fs::read_to_string(&toml_path) {
        Ok(t) => t,
        Err(e) => {
            eprintln!("gen-tables: cannot read {}: {e}", toml_path.display());
            return ExitCode::from(2);
        }
    };
    let rows = match parse(&text) {
        Ok(rows) => rows,
        Err(e) => {
            eprintln!("gen-tables: {TOML_PATH}: {e}");
            return ExitCode::from(2);
        }
    };

    let mut stale = 0;
    for file in generate(&rows) {
        let path = root.join(file.path);
        let current = std::fs::read_to_string(&path).ok();
        let Some(why) = file.staleness(current.as_deref()) else {
            println!(
                "gen-tables: {} is up to date ({} crystals)",
                file.path,
                rows.len()
            );
            continue;
        };
        if check {
            eprintln!("gen-tables: {why}; run `{REGENERATE}`");
            stale += 1;
            continue;
        }
        if let Err(e) = std::fs::write(&path, &file.text) {
            eprintln!("gen-tables: cannot write {}: {e}", path.display());
            return ExitCode::from(2);
        }
        println!("gen-tables: wrote {} ({} crystals)", file.path, rows.len());
    }
    if stale > 0 {
        ExitCode::from(1)
    } else {
        ExitCode::SUCCESS
    }
}
