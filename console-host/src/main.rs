//! `mwctl`: thin wrapper over `matterwave_console::cli`.

use matterwave_console::cli::{self, Parsed};
use std::io::Write;
use std::process::ExitCode;

fn main() -> ExitCode {
    let cli = match cli::parse(std::env::args_os()) {
        Parsed::Run(c) => c,
        Parsed::Print(help) => help.exit(),
        Parsed::Usage(line) => {
            // One line, like every error of mwctl (clap's own would take 3–20).
            eprintln!("mwctl: error: {line}");
            return ExitCode::from(2);
        }
    };
    let mut out = std::io::BufWriter::new(std::io::stdout().lock());
    match cli::run(&cli, &mut out) {
        Ok(()) => {
            // A closed pipe (e.g. `| head`) is not an error worth a message.
            let _ = out.flush();
            ExitCode::SUCCESS
        }
        Err(e) => {
            let _ = out.flush();
            eprintln!("mwctl: error: {e}");
            ExitCode::from(2)
        }
    }
}
