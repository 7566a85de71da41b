//! The stepped-face and screen part of `mwctl verify`: the controller's `steps` (its two
//! sub-beams) and `screen` (every spot) against the independent f64 oracle —
//! `oracle::split_spots` (each sub-beam's δ by bisection of L·(g·ŝ + δ) − q(δ)·h = j)
//! and `oracle::hemisphere_spot_mm` / `flat_spot_mm` of the oracle's exit direction.
//!
//! Quantities: "steps_exit_deg" (the sub-beams' exit and arm angles, degrees) and
//! "screen_mm" (each spot's x and y, mm, less half a unit of the printed last digit).

use super::{field, Case, Errors, Extent};
use crate::oracle::{self, ORuleMesh};
use matterwave_core::table;
use std::collections::BTreeMap;

/// Half a unit of the last digit the console prints spot positions with, mm.
const SCREEN_PRINT_MM: f64 = 0.0005;

/// What a case's request computes, for the oracle.
#[derive(Clone, Copy, Debug)]
pub(super) enum Surface {
    /// `steps terrace= height= direction=` of rod `rod` with inner potential `v0_ev`.
    Steps {
        rod: [i32; 2],
        terrace_a: f64,
        height_a: f64,
        direction_deg: f64,
        v0_ev: f64,
    },
    /// `screen radius= rim=`.
    Hemisphere { radius_mm: f64, rim_deg: f64 },
    /// `screen distance= half_width= half_height= arm= elevation=`.
    Flat {
        distance_mm: f64,
        half_w_mm: f64,
        half_h_mm: f64,
        arm_deg: f64,
        elevation_deg: f64,
    },
}

/// The cases: Cu(100), Pt(111) and W(110) at a few energies and incidences; steps of
/// several terrace widths and directions on low-order beams; a hemispherical screen and
/// a flat detector.
pub(super) fn cases(extent: Extent) -> Vec<Case> {
    let incidences: &[(f64, f64, f64)] = match extent {
        Extent::Full => &[(45.0, 0.0, 0.0), (120.0, 8.0, 17.0), (300.0, 15.0, -40.0)],
        Extent::Quick => &[(120.0, 8.0, 17.0)],
    };
    let mut out = Vec::new();
    for (id, face) in [("cu", [1, 0, 0]), ("pt", [1, 1, 1]), ("w", [1, 1, 0])] {
        let Ok(crystal) = table::find(id) else {
            continue;
        };
        let f = format!("{},{},{}", face[0], face[1], face[2]);
        for &(e, t, az) in incidences {
            let set = format!(
                "set crystal={id} face={f} energy={e} tilt={t} azimuth={az} sample=0 cathode=0 offset=0 v0=9"
            );
            let mut push = |surface: Surface, beam: Option<[i32; 2]>, req: String| {
                let mut requests = vec![set.clone()];
                if let Some(b) = beam {
                    requests.push(format!("set beam={},{}", b[0], b[1]));
                }
                requests.push(req);
                out.push(Case {
                    crystal,
                    face,
                    energy_ev: e,
                    tilt_deg: t,
                    azimuth_deg: az,
                    overlayer: None,
                    surface: Some(surface),
                    requests,
                });
            };
            for (rod, l, h, dir) in [
                ([0, 0], 40.0, 1.8, 0.0),
                ([1, 0], 25.0, 2.2, 30.0),
                ([0, 1], 60.0, 1.3, -75.0),
            ] {
                push(
                    Surface::Steps {
                        rod,
                        terrace_a: l,
                        height_a: h,
                        direction_deg: dir,
                        v0_ev: 9.0,
                    },
                    Some(rod),
                    format!("steps terrace={l} height={h} direction={dir} from=20 to=40"),
                );
            }
            push(
                Surface::Hemisphere {
                    radius_mm: 66.0,
                    rim_deg: 60.0,
                },
                None,
                "screen radius=66 rim=60".into(),
            );
            push(
                Surface::Flat {
                    distance_mm: 120.0,
                    half_w_mm: 90.0,
                    half_h_mm: 70.0,
                    arm_deg: 20.0,
                    elevation_deg: 5.0,
                },
                None,
                "screen distance=120 half_width=90 half_height=70 arm=20 elevation=5".into(),
            );
        }
    }
    out
}

/// Checks a `steps` or `screen` reply of a case against the oracle.
pub(super) fn check(
    case: &Case,
    surface: &Surface,
    om: &ORuleMesh,
    lines: &[String],
    errs: &mut BTreeMap<&'static str, Errors>,
) {
    let (e, t, az) = (case.energy_ev, case.tilt_deg, case.azimuth_deg);
    let id = case.crystal.id;
    let items = lines.iter().filter(|l| l.starts_with("- "));
    match *surface {
        Surface::Steps {
            rod,
            terrace_a,
            height_a,
            direction_deg,
            v0_ev,
        } => {
            let want = oracle::split_spots(
                om.a1,
                om.a2,
                om.normal,
                rod,
                e,
                t,
                az,
                v0_ev,
                terrace_a,
                height_a,
                direction_deg,
            );
            for l in items.filter(|l| l.starts_with("- sub")) {
                let (Some(j), Some(exit), Some(arm)) =
                    (field(l, "j"), field(l, "exit"), field(l, "arm"))
                else {
                    continue;
                };
                let Some(o) = want.iter().find(|o| o.index as f64 == j) else {
                    errs.entry("steps_exit_deg")
                        .or_default()
                        .add(f64::INFINITY, || {
                            format!(
                                "{id} {:?} rod {rod:?} j={j}: no such sub-beam in the oracle",
                                case.face
                            )
                        });
                    continue;
                };
                // Grazing sub-beams are ill-conditioned in angle (as for the beams).
                if o.exit.exit_polar_deg > 85.0 {
                    continue;
                }
                let mut d = arm - o.exit.arm_deg;
                d -= 360.0 * (d / 360.0).round();
                let err = (exit - o.exit.exit_polar_deg).abs().max(d.abs());
                errs.entry("steps_exit_deg").or_default().add(err, || {
                    format!(
                        "{id} {:?} rod {rod:?} L={terrace_a} h={height_a} j={j} E={e} tilt={t} az={az}",
                        case.face
                    )
                });
            }
        }
        Surface::Hemisphere { .. } | Surface::Flat { .. } => {
            for l in items {
                let (Some(h), Some(k), Some(x), Some(y)) =
                    (field(l, "h"), field(l, "k"), field(l, "x"), field(l, "y"))
                else {
                    continue;
                };
                let rod = [h as i32, k as i32];
                let Some(ob) = oracle::beam_exit(om.a1, om.a2, om.normal, rod, e, t, az) else {
                    continue;
                };
                let spot = match *surface {
                    Surface::Hemisphere { radius_mm, rim_deg } => {
                        oracle::hemisphere_spot_mm(ob.k_out_lab, radius_mm, rim_deg)
                    }
                    Surface::Flat {
                        distance_mm,
                        half_w_mm,
                        half_h_mm,
                        arm_deg,
                        elevation_deg,
                    } => oracle::flat_spot_mm(
                        ob.k_out_lab,
                        distance_mm,
                        arm_deg,
                        elevation_deg,
                        half_w_mm,
                        half_h_mm,
                    ),
                    Surface::Steps { .. } => None,
                };
                let what = || format!("{id} {:?} rod {rod:?} E={e} tilt={t} az={az}", case.face);
                // The same detector 0.01° / 0.01 mm larger: a spot the oracle finds
                // there lies at the edge, where f32 and f64 may round either way.
                let near_edge = match *surface {
                    Surface::Hemisphere { radius_mm, rim_deg } => {
                        oracle::hemisphere_spot_mm(ob.k_out_lab, radius_mm, rim_deg + 0.01)
                            .is_some()
                    }
                    Surface::Flat {
                        distance_mm,
                        half_w_mm,
                        half_h_mm,
                        arm_deg,
                        elevation_deg,
                    } => oracle::flat_spot_mm(
                        ob.k_out_lab,
                        distance_mm,
                        arm_deg,
                        elevation_deg,
                        half_w_mm + 0.01,
                        half_h_mm + 0.01,
                    )
                    .is_some(),
                    Surface::Steps { .. } => false,
                };
                match spot {
                    Some((ox, oy)) => {
                        let err = ((x - ox).abs().max((y - oy).abs()) - SCREEN_PRINT_MM).max(0.0);
                        errs.entry("screen_mm").or_default().add(err, what);
                    }
                    None if near_edge => {}
                    None => errs.entry("screen_mm").or_default().add(f64::INFINITY, || {
                        format!("{}: off the detector in the oracle", what())
                    }),
                }
            }
        }
    }
}
