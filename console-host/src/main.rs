//! `mwctl`: thin wrapper over `matterwave_console::cli`.

use clap::Parser;
use std::io::Write;
use std::process::ExitCode;

fn main() -> ExitCode {
    let cli = matterwave_console::cli::Cli::parse();
    let mut out = std::io::BufWriter::new(std::io::stdout().lock());
    match matterwave_console::cli::run(&cli, &mut out) {
        Ok(()) => {
            // A closed pipe (e.g. `| head`) is not an error worth a message.
            let _ = out.flush();
            ExitCode::SUCCESS
        }
        Err(e) => {
            eprintln!("mwctl: error: {e}");
            ExitCode::from(2)
        }
    }
}
