//! `mwctl`: thin wrapper over `matterwave_console::cli`.

use clap::Parser;
use std::io::Write;
use std::process::ExitCode;

fn main() -> ExitCode {
    let cli = matterwave_console::cli::Cli::parse();
    match matterwave_console::cli::run(&cli) {
        Ok(text) => {
            let mut out = std::io::stdout().lock();
            // A closed pipe (e.g. `| head`) is not an error worth a message.
            let _ = out.write_all(text.as_bytes());
            let _ = out.flush();
            ExitCode::SUCCESS
        }
        Err(e) => {
            eprintln!("mwctl: error: {e}");
            ExitCode::from(2)
        }
    }
}
