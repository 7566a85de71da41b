//! The overlayer part of `mwctl verify`: the controller's `beams` with an overlayer
//! set, against the oracle's own superstructure search (`oracle::super_beams`, and
//! `oracle::domain_union` for `domains=all`: a box search of the superstructure's
//! reciprocal lattice in f64, positions by projection, domains as Cartesian
//! rotations and mirrors — written apart from the core's integer-matrix code).
//!
//! Per listed beam: its position must be one of the oracle's beams (matched in h and k
//! within 1e-6), its exit angle and azimuth within the exit tolerance, and the number of
//! domains holding it the oracle's. Per reply: every oracle beam within the list's
//! |g| disk (`g_max=` when the list is cut) must be listed ("overlayer_listing" counts
//! each beam missing or unknown, tolerance 0).

use super::{field, Case, Errors, Extent};
use crate::oracle::{self, ORuleMesh};
use matterwave_core::table;
use std::collections::BTreeMap;

/// An overlayer of a verify case: the matrix as sent and as f64, and whether its
/// domains count.
#[derive(Clone, Debug)]
pub(super) struct Layer {
    text: &'static str,
    m: [[f64; 2]; 2],
    domains: bool,
}

/// Overlayers with published patterns (common practice, no single source): p(2×2) and
/// c(2×2) and the two-domain (2×1) on square meshes, (√3×√3)R30° with and without its
/// domains on hexagonal ones, and an oblique cell with every domain of each mesh.
const LAYERS: [(&str, &str, [[f64; 2]; 2], bool); 7] = [
    ("square", "2,0,0,2", [[2.0, 0.0], [0.0, 2.0]], false),
    ("square", "1,1,-1,1", [[1.0, 1.0], [-1.0, 1.0]], false),
    ("square", "2,0,0,1", [[2.0, 0.0], [0.0, 1.0]], true),
    ("square", "2,1,-1,1", [[2.0, 1.0], [-1.0, 1.0]], true),
    ("hexagonal", "2,1,-1,1", [[2.0, 1.0], [-1.0, 1.0]], false),
    ("hexagonal", "2,1,-1,1", [[2.0, 1.0], [-1.0, 1.0]], true),
    ("hexagonal", "3,1,-1,2", [[3.0, 1.0], [-1.0, 2.0]], true),
];

/// The faces the overlayers go on: (crystal, face, mesh kind).
const FACES: [(&str, [i32; 3], &str); 4] = [
    ("cu", [1, 0, 0], "square"),
    ("ni", [1, 0, 0], "square"),
    ("pt", [1, 1, 1], "hexagonal"),
    ("cu", [1, 1, 1], "hexagonal"),
];

/// The overlayer cases: each overlayer on each face of its mesh kind, at a few
/// energies and incidences.
pub(super) fn cases(extent: Extent) -> Vec<Case> {
    let incidences: &[(f64, f64, f64)] = match extent {
        Extent::Full => &[
            (20.0, 0.0, 0.0),
            (65.0, 0.0, 0.0),
            (140.0, 7.5, 21.0),
            (400.0, 12.5, 33.0),
        ],
        Extent::Quick => &[(65.0, 0.0, 0.0), (140.0, 7.5, 21.0)],
    };
    let mut out = Vec::new();
    for (id, face, kind) in FACES {
        let Ok(crystal) = table::find(id) else {
            continue;
        };
        for (_, text, m, domains) in LAYERS.iter().filter(|l| l.0 == kind) {
            for &(e, t, az) in incidences {
                let f = format!("{},{},{}", face[0], face[1], face[2]);
                let d = if *domains { "all" } else { "one" };
                out.push(Case {
                    crystal,
                    face,
                    energy_ev: e,
                    tilt_deg: t,
                    azimuth_deg: az,
                    overlayer: Some(Layer {
                        text,
                        m: *m,
                        domains: *domains,
                    }),
                    surface: None,
                    // Two lines: one request holds at most 120 bytes.
                    requests: vec![
                        format!(
                            "set crystal={id} face={f} energy={e} tilt={t} azimuth={az} sample=0 cathode=0 offset=0"
                        ),
                        format!("set overlayer={text} domains={d} beam=0,0"),
                        "beams".into(),
                    ],
                });
            }
        }
    }
    out
}

/// A reply's `h=`/`k=` value: a whole number or a fraction.
fn fraction(line: &str, key: &str) -> Option<f64> {
    let v = crate::link::session::reply_field(line, key)?;
    match v.split_once('/') {
        Some((n, d)) => Some(n.parse::<f64>().ok()? / d.parse::<f64>().ok()?),
        None => v.parse().ok(),
    }
}

/// Checks one `beams` reply of an overlayer case against the oracle.
pub(super) fn check(
    case: &Case,
    layer: &Layer,
    om: &ORuleMesh,
    lines: &[String],
    errs: &mut BTreeMap<&'static str, Errors>,
) {
    let b = oracle::super_vectors(om.a1, om.a2, layer.m);
    let (e, t, az) = (case.energy_ev, case.tilt_deg, case.azimuth_deg);
    let want = if layer.domains {
        oracle::domain_union(om.a1, om.a2, om.normal, b, e, t, az).1
    } else {
        oracle::super_beams(om.a1, om.a2, om.normal, b, e, t, az)
    };
    let where_ = |hk: [f64; 2]| {
        format!(
            "{} {:?} overlayer {} domains={} [{:.4}, {:.4}] E={e} tilt={t} az={az}",
            case.crystal.id, case.face, layer.text, layer.domains, hk[0], hk[1]
        )
    };
    let Some(last) = lines.last() else {
        return;
    };
    let g_max = field(last, "g_max").unwrap_or(f64::INFINITY);
    let mut listed = 0usize;
    for l in lines.iter().filter(|l| l.starts_with("- ")) {
        let (Some(h), Some(k), Some(exit)) = (fraction(l, "h"), fraction(l, "k"), field(l, "exit"))
        else {
            continue;
        };
        listed += 1;
        let Some(ob) = want
            .iter()
            .find(|o| (o.hk[0] - h).abs() < 1e-6 && (o.hk[1] - k).abs() < 1e-6)
        else {
            errs.entry("overlayer_listing").or_default().add(1.0, || {
                format!("{}: not a beam of the oracle", where_([h, k]))
            });
            continue;
        };
        if ob.exit_polar_deg <= 85.0 {
            errs.entry("overlayer_exit_deg")
                .or_default()
                .add((exit - ob.exit_polar_deg).abs(), || where_(ob.hk));
            if ob.exit_polar_deg >= 0.5 {
                if let Some(a) = field(l, "exit_azimuth") {
                    let mut d = a - ob.exit_azimuth_deg;
                    d -= 360.0 * (d / 360.0).round();
                    errs.entry("overlayer_exit_deg")
                        .or_default()
                        .add(d.abs(), || where_(ob.hk));
                }
            }
        }
        let n_dom =
            crate::link::session::reply_field(l, "domains").map_or(0, |d| d.split(',').count());
        let expect = if layer.domains { ob.domains.len() } else { 1 };
        errs.entry("overlayer_listing")
            .or_default()
            .add(if n_dom == expect { 0.0 } else { 1.0 }, || {
                format!("{}: {n_dom} domains, oracle {expect}", where_(ob.hk))
            });
    }
    // Every oracle beam inside the listed disk is listed (a relative 1e-5 margin at the
    // disk's edge, where f32 and f64 may round either way).
    let inside = want
        .iter()
        .filter(|o| o.g_inv_a <= g_max * (1.0 - 1e-5))
        .count();
    let edge = want
        .iter()
        .filter(|o| (o.g_inv_a - g_max).abs() <= g_max * 1e-5)
        .count();
    let missing = inside.saturating_sub(listed);
    let extra = listed.saturating_sub(inside + edge);
    errs.entry("overlayer_listing")
        .or_default()
        .add((missing + extra) as f64, || {
            format!(
                "{}: {listed} listed, oracle {inside} (+{edge} at the edge)",
                where_([0.0, 0.0])
            )
        });
}
