//! `mwctl completions SHELL` and `mwctl man`: shell completion scripts and a roff man
//! page, both generated from the clap definitions in [`crate::cli`], so they list exactly
//! the commands and options the program accepts.

use crate::cli::Cli;
use crate::error::{CliError, CliResult};
use crate::output::Format;
use clap::CommandFactory;
use clap_complete::Shell;
use std::path::Path;

/// These commands print a script or a roff page, never a table or JSON: any `--format`
/// but the default is refused with one line saying so.
pub fn text_only(f: Format, what: &str, prints: &str) -> CliResult<()> {
    let name = match f {
        Format::Table => return Ok(()),
        Format::Json => "json",
        Format::Csv => "csv",
    };
    Err(CliError::new(format!(
        "{what} --format {name}: it prints {prints}, which has no JSON or CSV form; leave out --format"
    )))
}

/// Writes the completion script for `shell` to `out`. The script is made in memory
/// first (clap_complete panics on a write error), so a closed pipe ends it quietly.
pub fn completions(shell: Shell, out: &mut dyn std::io::Write) -> CliResult<()> {
    let mut cmd = Cli::command();
    let mut text = Vec::new();
    clap_complete::generate(shell, &mut cmd, "mwctl", &mut text);
    let _ = out.write_all(&text);
    Ok(())
}

/// Writes the man page of `mwctl` (roff, section 1) to `out`; with `dir`, writes instead
/// one page per command and subcommand (`mwctl.1`, `mwctl-calc.1`, `mwctl-calc-aim.1`,
/// …) into that folder and names each file written on `out`.
pub fn man(dir: Option<&Path>, out: &mut dyn std::io::Write) -> CliResult<()> {
    let cmd = Cli::command();
    match dir {
        None => {
            let mut text = Vec::new();
            clap_mangen::Man::new(cmd)
                .render(&mut text)
                .map_err(|e| CliError::new(format!("man: making the page: {e}")))?;
            // A closed pipe (e.g. `| head`) ends the output quietly, as for every report.
            let _ = out.write_all(&text);
            Ok(())
        }
        Some(d) => {
            std::fs::create_dir_all(d).map_err(|e| {
                CliError::new(format!("man --dir {}: cannot create it: {e}", d.display()))
            })?;
            clap_mangen::generate_to(cmd, d).map_err(|e| {
                CliError::new(format!("man --dir {}: writing the pages: {e}", d.display()))
            })?;
            let mut names: Vec<String> = std::fs::read_dir(d)
                .map_err(|e| CliError::new(format!("man --dir {}: {e}", d.display())))?
                .filter_map(|e| e.ok())
                .map(|e| e.file_name().to_string_lossy().into_owned())
                .filter(|n| n.starts_with("mwctl") && n.ends_with(".1"))
                .collect();
            names.sort();
            for n in names {
                let _ = writeln!(out, "{}", d.join(n).display());
            }
            Ok(())
        }
    }
}
