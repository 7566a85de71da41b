//! `mwctl demo`: a one-screen walk-through in an invented bench scenario.
//!
//! Scenario (ours, for demonstration only): a silver (100) crystal on the "bench B"
//! goniometer, a LaB6-cathode gun (work function 2.7 eV, a typical value) set to 95 eV,
//! the sample tilted 6° toward the arm.

use crate::calc::{self, GunArgs, IvArgs};
use crate::error::CliResult;
use crate::output::Format;

/// Runs the demo and returns its text.
pub fn run(format: Format) -> CliResult<String> {
    let gun = GunArgs {
        energy: 95.0,
        cathode_work_function: 2.7,
        sample_work_function: 4.64,
        energy_offset: 0.0,
    };
    let mut out = String::new();
    let mut section = |title: &str, body: String| {
        if format == Format::Table {
            out.push_str(&format!("== {title}\n"));
        }
        out.push_str(&body);
        if format == Format::Table {
            out.push('\n');
        }
    };
    if format == Format::Table {
        section("safety", format!("{}\n", crate::cli::CAUTIONS));
    }
    section(
        "beam: 95 eV nominal, LaB6 cathode 2.7 eV, Ag sample 4.64 eV",
        calc::wavelength(&gun, Some(10.0))?.render(format),
    );
    section(
        "beams of Ag(100), tilt 6 deg",
        calc::beams("ag", "100", &gun, 6.0, 0.0, 40)?.render(format),
    );
    let iv = IvArgs {
        rod: [1, 0],
        from: 40.0,
        to: 400.0,
        tilt: 6.0,
        azimuth: 0.0,
        inner_potential: None,
        cathode_work_function: 2.7,
        sample_work_function: 4.64,
        energy_offset: 0.0,
    };
    section(
        "I-V maxima of the (1,0) beam, 40-400 eV nominal",
        calc::ivpeaks("ag", "100", &iv, 40)?.render(format),
    );
    if format == Format::Table {
        section(
            "the controller (in-process simulator): aim, move, read, plan an I-V sweep",
            simulator_session()?,
        );
    }
    Ok(out)
}

/// The same scenario driven through the controller's own console on simulated axes.
fn simulator_session() -> CliResult<String> {
    let mut console = crate::talk::sim_console()?;
    let requests = [
        "set crystal=ag face=100 energy=95 cathode=2.7 sample=4.64 tilt=6 beam=1,0",
        "aim",
        "enable",
        "move sol=0",
        "read",
        "plan kind=iv from=40 to=240 step=20 dwell=2",
        "disable",
    ];
    let mut text = String::new();
    for r in requests {
        text.push_str(&format!("> {r}\n"));
        for line in crate::talk::exchange(&mut console, r) {
            text.push_str(&format!("< {line}\n"));
        }
    }
    Ok(text)
}
