//! `mwctl demo`: a one-screen walk-through in an invented bench scenario.
//!
//! Scenario (ours, for demonstration only): a silver (100) crystal on the "bench B"
//! goniometer, a LaB6-cathode gun (work function 2.7 eV, a typical value) set to 95 eV,
//! the sample tilted 6° toward the arm.

use crate::calc::{self, GunArgs, IvArgs};
use crate::error::{CliError, CliResult};
use crate::output::Format;

/// Runs the demo and returns its text: sections with titles (`table`), or one JSON
/// document with every section and the controller's replies (`json`). CSV is refused:
/// the sections are different tables.
pub fn run(format: Format) -> CliResult<String> {
    let gun = GunArgs {
        energy: 95.0,
        cathode_work_function: 2.7,
        sample_work_function: calc::EvOrFace::Ev(4.64),
        energy_offset: 0.0,
    };
    let iv = IvArgs {
        rod: [1, 0],
        from: 40.0,
        to: 400.0,
        tilt: 6.0,
        azimuth: 0.0,
        inner_potential: None,
        cathode_work_function: 2.7,
        sample_work_function: calc::EvOrFace::Ev(4.64),
        energy_offset: 0.0,
        sample: calc::SampleArgs::default(),
        v0_model: matterwave_core::inner::V0ModelKind::Constant,
    };
    let sections = [
        (
            "beam",
            "beam: 95 eV nominal, LaB6 cathode 2.7 eV, Ag sample 4.64 eV",
            calc::wavelength(&gun, Some(calc::EvOrFace::Ev(10.0)))?,
        ),
        (
            "beams",
            "beams of Ag(100), tilt 6 deg",
            calc::beams(
                "ag",
                &calc::SampleArgs::default(),
                "100",
                &gun,
                6.0,
                0.0,
                40,
            )?,
        ),
        (
            "iv_peaks",
            "I-V maxima of the (1,0) beam, 40-400 eV nominal",
            calc::ivpeaks("ag", "100", &iv, 40)?,
        ),
    ];
    let session = simulator_session()?;
    match format {
        Format::Csv => Err(CliError::new(
            "demo --format csv: the demo has several tables; use --format table or json",
        )),
        Format::Json => {
            let mut doc = serde_json::Map::new();
            doc.insert(
                "cautions".into(),
                serde_json::Value::from(crate::cli::CAUTIONS),
            );
            for (key, _, report) in &sections {
                let v: serde_json::Value = serde_json::from_str(&report.render(Format::Json))
                    .map_err(|e| CliError::new(format!("demo: {e}")))?;
                doc.insert((*key).into(), v);
            }
            // One object per reply line, each with its request: what `mwctl talk
            // --format json` prints for the same session.
            let mut controller: Vec<serde_json::Value> = Vec::new();
            for (req, replies) in &session {
                for l in replies {
                    let mut v = crate::talk::reply_json(l);
                    if let Some(o) = v.as_object_mut() {
                        o.insert("request".into(), serde_json::Value::from(&**req));
                    }
                    controller.push(v);
                }
            }
            doc.insert("controller".into(), serde_json::Value::from(controller));
            Ok(crate::output::json_text(&serde_json::Value::Object(doc)))
        }
        Format::Table => {
            let mut out = format!("== safety\n{}\n\n", crate::cli::CAUTIONS);
            for (_, title, report) in &sections {
                out.push_str(&format!("== {title}\n{}\n", report.render(format)));
            }
            out.push_str(
                "== the controller (in-process simulator): aim, move, read, plan an I-V sweep\n",
            );
            for (req, replies) in &session {
                out.push_str(&format!("> {req}\n"));
                for line in replies {
                    out.push_str(&format!("< {line}\n"));
                }
            }
            Ok(out)
        }
    }
}

/// The same scenario driven through the controller's own console on simulated axes.
fn simulator_session() -> CliResult<Vec<(&'static str, Vec<String>)>> {
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
    Ok(requests
        .into_iter()
        .map(|r| (r, crate::talk::exchange(&mut console, r)))
        .collect())
}
