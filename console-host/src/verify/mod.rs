//! `mwctl verify`: a sweep of computations sent to a controller over any link, every
//! reply compared twice — with the host's own copy of the core (the same code, run
//! in-process: the lines must be identical, byte for byte) and with the independent
//! f64 oracle (exit angles, exit azimuths, emergence energies, aimed arm angles; the
//! largest and 99th-percentile error per quantity against stated tolerances).
//!
//! The sweep: every table crystal × its table faces and the low-index faces of its
//! system × beam energies 5 eV … 100 keV × tilts × azimuths, each a `set` and a
//! `beams`; then, per crystal and face, in-plane `aim`s of low-order beams on the
//! controller's rig; then overlayers (p(2×2), c(2×2), (√3×√3)R30°, a two-domain (2×1))
//! on square and hexagonal faces, each a `set … overlayer=` and a `beams`, whose
//! fractional-order beams are checked against the oracle's own superstructure search
//! (`overlayer.rs`); then stepped faces (`steps`: the split sub-beams) and screens
//! (`screen`: every spot on a hemispherical screen and a flat detector) against the
//! oracle's own (`surfaces.rs`).

mod overlayer;
mod surfaces;

use crate::error::{CliError, CliResult};
use crate::link::session::Session;
use crate::link::wire::Wire;
use crate::link::{self, LinkSpec};
use crate::oracle;
use matterwave_core::lattice::System;
use matterwave_core::table;
use std::collections::BTreeMap;
use std::io::Write;
use std::time::Instant;

/// Tolerances against the oracle (the core's documented accuracy: docs/FIRMWARE.md,
/// the oracle agreement suite).
pub const EXIT_TOL_DEG: f64 = 0.002;
/// Emergence energies, relative.
pub const EMERGE_TOL_REL: f64 = 2e-5;
/// Half a unit of the last digit the console prints emergence energies with, eV.
pub const EMERGE_PRINT_EV: f64 = 0.0005;
/// Aimed arm angle against the oracle's exit direction at the aimed pose, degrees.
pub const ARM_TOL_DEG: f64 = 0.002;
/// Spot positions on a screen against the oracle's, mm (0.002° at 60 mm is 0.002 mm).
pub const SCREEN_TOL_MM: f64 = 0.002;

/// How much to send.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Extent {
    /// Every energy, tilt and azimuth of the sweep.
    Full,
    /// One face per crystal, four energies, one tilt and azimuth (a minute at 115200
    /// baud).
    Quick,
}

/// Errors of one quantity.
#[derive(Clone, Debug, Default)]
struct Errors {
    values: Vec<f64>,
    worst_case: String,
}

impl Errors {
    fn add(&mut self, err: f64, case: impl FnOnce() -> String) {
        if self.values.iter().all(|&v| err > v) {
            self.worst_case = case();
        }
        self.values.push(err);
    }
    fn max(&self) -> f64 {
        self.values.iter().copied().fold(0.0, f64::max)
    }
    fn p99(&self) -> f64 {
        let mut v = self.values.clone();
        v.sort_by(f64::total_cmp);
        v.get((v.len() as f64 * 0.99) as usize)
            .or(v.last())
            .copied()
            .unwrap_or(0.0)
    }
}

/// The oracle's cell of a table crystal (the same constants, in f64).
fn ocell(c: &table::Crystal) -> Option<oracle::OCell> {
    Some(oracle::OCell {
        structure: oracle::structure_from_name(c.structure.name())?,
        a: f64::from(c.a_a),
        b: f64::from(c.b_a),
        c: f64::from(c.c_a),
    })
}

/// The faces verified for a crystal: its table faces and the low-index ones of its
/// system.
fn faces_of(c: &table::Crystal, extent: Extent) -> Vec<[i32; 3]> {
    let mut v: Vec<[i32; 3]> = c.faces.iter().map(|f| f.miller).collect();
    let low: &[[i32; 3]] = match c.structure.system() {
        System::Hexagonal => &[[0, 0, 1], [1, 0, 0], [1, 1, 0]],
        _ => &[[1, 0, 0], [1, 1, 0], [1, 1, 1]],
    };
    for f in low {
        if !v.contains(f) {
            v.push(*f);
        }
    }
    if extent == Extent::Quick {
        v.truncate(1);
    }
    v
}

fn field(line: &str, key: &str) -> Option<f64> {
    crate::link::session::reply_field(line, key).and_then(|v| v.parse().ok())
}

/// What a verify run found.
#[derive(Debug)]
pub struct Outcome {
    /// The report (also written with `--report`).
    pub report: serde_json::Value,
    /// Whether every reply matched the host and the oracle within tolerance.
    pub pass: bool,
}

/// Runs the sweep over `spec`, printing progress to stderr when it is a terminal and
/// the summary to `out`.
pub fn run(spec: &LinkSpec, extent: Extent, out: &mut dyn Write) -> CliResult<Outcome> {
    let mut dev = link::connect(spec)?;
    let throttle = match spec {
        LinkSpec::Pty { throttle_baud } => *throttle_baud,
        _ => None,
    };
    run_session(&mut dev, &spec_name(spec), throttle, extent, out)
}

/// [`run`] on an open session (`name` for the report; `throttle_baud`: the line rate a
/// throttled link runs at, for the wire-busy figure).
pub fn run_session<W: Wire>(
    dev: &mut Session<W>,
    name: &str,
    throttle_baud: Option<u32>,
    extent: Extent,
    out: &mut dyn Write,
) -> CliResult<Outcome> {
    let mut host = crate::link::device::sim_console()?;
    let cases = plan(extent);
    let total = cases.len();
    let start = Instant::now();
    let progress = std::io::IsTerminal::is_terminal(&std::io::stderr());
    let mut errs: BTreeMap<&'static str, Errors> = BTreeMap::new();
    let mut mismatches: Vec<String> = Vec::new();
    let mut compared_lines = 0u64;
    let mut requests = 0u64;
    for (i, case) in cases.iter().enumerate() {
        for req in &case.requests {
            requests += 1;
            let reply = dev
                .request(req)
                .map_err(|e| CliError::new(format!("verify: {e}")))?;
            let mut got = reply.items.clone();
            got.push(reply.last.clone());
            let want = crate::talk::exchange(&mut host, req);
            compared_lines += want.len() as u64;
            if got != want && mismatches.len() < 20 {
                mismatches.push(format!(
                    "{req}: device {:?} host {:?}",
                    first_difference(&got, &want).0,
                    first_difference(&got, &want).1
                ));
            } else if got != want {
                mismatches.push(String::new());
            }
            check_oracle(case, req, &got, &mut errs);
        }
        if progress && (i % 20 == 0 || i + 1 == total) {
            let el = start.elapsed().as_secs_f64();
            let rate = requests as f64 / el.max(1e-9);
            let eta = el / (i + 1) as f64 * (total - i - 1) as f64;
            eprint!(
                "\rverify: {}/{} cases, {requests} requests, {rate:.0} requests/s, ETA {eta:.0} s   ",
                i + 1,
                total
            );
        }
    }
    if progress {
        eprintln!();
    }
    let seconds = start.elapsed().as_secs_f64();
    let st = dev.stats();
    let wire = throttle_baud.map(|b| {
        // Bytes both ways at the line rate over the elapsed time: the share of the run
        // the wire carried bytes (a full-duplex UART can exceed it only by overlap).
        let rate = crate::link::wire::bytes_per_s(b);
        ((st.bytes_in + st.bytes_out) as f64 / rate / seconds).min(1.0)
    });
    let tol = |q: &str| match q {
        "emergence_rel" => EMERGE_TOL_REL,
        "aim_arm_deg" => ARM_TOL_DEG,
        "overlayer_listing" => 0.0,
        "screen_mm" => SCREEN_TOL_MM,
        _ => EXIT_TOL_DEG,
    };
    let mut quantities = serde_json::Map::new();
    let mut pass = mismatches.is_empty();
    writeln!(
        out,
        "verify over {}: {total} cases, {requests} requests in {seconds:.1} s ({:.0} requests/s)",
        name,
        requests as f64 / seconds.max(1e-9)
    )
    .ok();
    writeln!(
        out,
        "reply lines identical to the host's core: {} of {compared_lines} lines differ",
        mismatches.len()
    )
    .ok();
    for m in mismatches.iter().filter(|m| !m.is_empty()).take(5) {
        writeln!(out, "  differs: {m}").ok();
    }
    writeln!(
        out,
        "{:<18} {:>8} {:>12} {:>12} {:>10}",
        "against the oracle", "n", "max", "p99", "tolerance"
    )
    .ok();
    for (q, e) in &errs {
        let ok = e.max() <= tol(q);
        pass &= ok;
        writeln!(
            out,
            "{:<18} {:>8} {:>12.3e} {:>12.3e} {:>10.1e} {}",
            q,
            e.values.len(),
            e.max(),
            e.p99(),
            tol(q),
            if ok { "ok" } else { "BEYOND" }
        )
        .ok();
        quantities.insert(
            (*q).into(),
            serde_json::json!({
                "n": e.values.len(), "max": e.max(), "p99": e.p99(),
                "tolerance": tol(q), "within": ok, "worst_case": e.worst_case,
            }),
        );
    }
    if let Some(b) = wire {
        writeln!(
            out,
            "wire busy {:.1} % of the time (throttled link)",
            100.0 * b
        )
        .ok();
    }
    writeln!(
        out,
        "{}",
        if pass { "verify: PASS" } else { "verify: FAIL" }
    )
    .ok();
    let report = serde_json::json!({
        "link": name,
        "extent": if extent == Extent::Full { "full" } else { "quick" },
        "cases": total,
        "requests": requests,
        "seconds": seconds,
        "requests_per_s": requests as f64 / seconds.max(1e-9),
        "reply_lines": compared_lines,
        "lines_differing_from_host": mismatches.len(),
        "first_differences": mismatches.iter().filter(|m| !m.is_empty()).take(20).collect::<Vec<_>>(),
        "oracle": quantities,
        "retries": st.retries,
        "dropped_lines": st.dropped_lines,
        "bytes_out": st.bytes_out,
        "bytes_in": st.bytes_in,
        "wire_busy_fraction": wire,
        "pass": pass,
    });
    Ok(Outcome { report, pass })
}

fn spec_name(spec: &LinkSpec) -> String {
    match spec {
        LinkSpec::Sim => "sim".into(),
        LinkSpec::Pty {
            throttle_baud: None,
        } => "pty".into(),
        LinkSpec::Pty {
            throttle_baud: Some(b),
        } => format!("pty@{b}"),
        LinkSpec::Serial { path, baud } => format!("serial:{path}@{baud}"),
        LinkSpec::Qemu { image } => format!("qemu:{image}"),
    }
}

fn first_difference(a: &[String], b: &[String]) -> (String, String) {
    for i in 0..a.len().max(b.len()) {
        let x = a.get(i).cloned().unwrap_or_default();
        let y = b.get(i).cloned().unwrap_or_default();
        if x != y {
            return (x, y);
        }
    }
    (String::new(), String::new())
}

/// One case: the requests to send and what the oracle needs to check the replies.
struct Case {
    crystal: &'static table::Crystal,
    face: [i32; 3],
    energy_ev: f64,
    tilt_deg: f64,
    azimuth_deg: f64,
    /// The overlayer set for the case's `beams`, if any.
    overlayer: Option<overlayer::Layer>,
    /// The stepped face or screen of the case's `steps` or `screen`, if any.
    surface: Option<surfaces::Surface>,
    requests: Vec<String>,
}

fn plan(extent: Extent) -> Vec<Case> {
    let (energies, tilts, azimuths): (&[f64], &[f64], &[f64]) = match extent {
        Extent::Full => (
            &[
                5.0, 15.0, 40.0, 100.0, 250.0, 600.0, 1500.0, 5000.0, 20000.0, 100000.0,
            ],
            &[0.0, 12.5],
            &[0.0, 33.0],
        ),
        Extent::Quick => (&[15.0, 100.0, 600.0, 5000.0], &[7.5], &[21.0]),
    };
    let mut cases = Vec::new();
    for c in table::all() {
        for face in faces_of(c, extent) {
            let f = format!("{},{},{}", face[0], face[1], face[2]);
            for &e in energies {
                for &t in tilts {
                    for &az in azimuths {
                        cases.push(Case {
                            crystal: c,
                            face,
                            energy_ev: e,
                            tilt_deg: t,
                            azimuth_deg: az,
                            overlayer: None,
                            surface: None,
                            requests: vec![
                                format!("set crystal={} face={f} energy={e} tilt={t} azimuth={az} sample=0 cathode=0 offset=0", c.id),
                                "beams".into(),
                            ],
                        });
                    }
                }
            }
            // In-plane aims on the controller's rig at one energy.
            let mut requests = vec![format!(
                "set crystal={} face={f} energy=150 tilt=10 azimuth=free sample=0 cathode=0 offset=0",
                c.id
            )];
            for beam in ["1,0", "0,1", "1,1", "-1,0"] {
                requests.push(format!("aim beam={beam}"));
            }
            cases.push(Case {
                crystal: c,
                face,
                energy_ev: 150.0,
                tilt_deg: 10.0,
                azimuth_deg: f64::NAN,
                overlayer: None,
                surface: None,
                requests,
            });
        }
    }
    cases.extend(overlayer::cases(extent));
    cases.extend(surfaces::cases(extent));
    cases
}

/// Compares a `beams` or `aim` reply with the oracle.
fn check_oracle(
    case: &Case,
    req: &str,
    lines: &[String],
    errs: &mut BTreeMap<&'static str, Errors>,
) {
    let Some(oc) = ocell(case.crystal) else {
        return;
    };
    let Some(om) = oracle::mesh_by_rule(&oc, case.face) else {
        return;
    };
    if let Some(sf) = &case.surface {
        if req.starts_with("steps") || req.starts_with("screen") {
            surfaces::check(case, sf, &om, lines, errs);
        }
        return;
    }
    if let Some(layer) = &case.overlayer {
        if req == "beams" {
            overlayer::check(case, layer, &om, lines, errs);
        }
        return;
    }
    let id = case.crystal.id;
    let where_ = |rod: [i32; 2]| {
        format!(
            "{id} {:?} rod {rod:?} E={} tilt={} az={}",
            case.face, case.energy_ev, case.tilt_deg, case.azimuth_deg
        )
    };
    if req == "beams" {
        for l in lines.iter().filter(|l| l.starts_with("- ")) {
            let (Some(h), Some(k), Some(exit)) = (field(l, "h"), field(l, "k"), field(l, "exit"))
            else {
                continue;
            };
            let rod = [h as i32, k as i32];
            let Some(ob) = oracle::beam_exit(
                om.a1,
                om.a2,
                om.normal,
                rod,
                case.energy_ev,
                case.tilt_deg,
                case.azimuth_deg,
            ) else {
                errs.entry("exit_deg").or_default().add(f64::INFINITY, || {
                    format!("{}: evanescent in the oracle", where_(rod))
                });
                continue;
            };
            // Grazing beams (exit near 90°) are ill-conditioned in angle: compared
            // below 85° as in the oracle agreement suite.
            if ob.exit_polar_deg <= 85.0 {
                errs.entry("exit_deg")
                    .or_default()
                    .add((exit - ob.exit_polar_deg).abs(), || where_(rod));
                if ob.exit_polar_deg >= 0.5 {
                    if let Some(az) = field(l, "exit_azimuth") {
                        let mut d = az - ob.exit_azimuth_deg;
                        d -= 360.0 * (d / 360.0).round();
                        errs.entry("exit_azimuth_deg")
                            .or_default()
                            .add(d.abs(), || where_(rod));
                    }
                }
            }
            if let Some(em) = field(l, "emerge") {
                if let Some(oe) = oracle::emergence_energy_ev(
                    om.a1,
                    om.a2,
                    om.normal,
                    rod,
                    case.tilt_deg,
                    case.azimuth_deg,
                ) {
                    // Streamed with 3 decimals (docs/PROTOCOL.md, Numbers): the half
                    // unit of the last printed digit is the print's, not the math's.
                    let err = ((em - oe).abs() - EMERGE_PRINT_EV).max(0.0) / oe;
                    errs.entry("emergence_rel")
                        .or_default()
                        .add(err, || where_(rod));
                }
            }
        }
    } else if let Some(beam) = req.strip_prefix("aim beam=") {
        let mut it = beam.split(',').filter_map(|x| x.parse::<i32>().ok());
        let (Some(h), Some(k)) = (it.next(), it.next()) else {
            return;
        };
        for l in lines.iter().filter(|l| l.starts_with("- sol=")) {
            let (Some(arm), Some(tilt), Some(az)) =
                (field(l, "arm"), field(l, "tilt"), field(l, "azimuth"))
            else {
                continue;
            };
            // The oracle's exit direction at the pose the controller aimed to.
            if let Some(ob) =
                oracle::beam_exit(om.a1, om.a2, om.normal, [h, k], case.energy_ev, tilt, az)
            {
                let mut d = arm - ob.arm_deg;
                d -= 360.0 * (d / 360.0).round();
                errs.entry("aim_arm_deg")
                    .or_default()
                    .add(d.abs().max(ob.elevation_deg.abs()), || {
                        format!("{id} {:?} aim {h},{k}: tilt {tilt} az {az}", case.face)
                    });
            }
        }
    }
}
