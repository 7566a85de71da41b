//! Relaxed I-V maxima by an explicit atom-by-atom sum, and the split spots of a step
//! array by root finding: f64, from the physics stated in the core's `surface::relax`
//! and `surface::steps` docs, not from their code.
//!
//! The relaxed intensity is summed atom by atom over an explicit column (atoms found by
//! enumerating the conventional cells, classed modulo the surface mesh), period by
//! period down to an attenuation of 1e-12, with no closed-form series; maxima by a
//! dense grid and a parabola. Split spots solve L·(g·ŝ + δ) − q(δ)·h = j by bisection.

use super::lab::LabFrame;
use super::vec::*;
use super::*;

/// One surface column of atoms between the top plane and one period down: positions
/// (crystal frame, Å), the period d (Å), the downward repeat vector and the top two
/// spacings.
struct OColumn {
    atoms: Vec<V3>,
    normal: V3,
    z_top: f64,
    d: f64,
    down: V3,
    d12: f64,
    d23: f64,
    /// Cube root of the volume per atom, Å.
    mono_a: f64,
}

fn column(cell: &OCell, a1: V3, a2: V3, normal: V3, hkl: [i32; 3]) -> OColumn {
    let n = unit(normal);
    let d = layer_spacing_a(cell, hkl);
    let (b1, b2) = rod_basis(a1, a2, n);
    let avec = cell.direct_vectors();
    let reach = norm(a1) + norm(a2) + 3.0 * d + norm(add(add(avec[0], avec[1]), avec[2]));
    let bvec = cell.reciprocal_vectors();
    let bound: Vec<i64> = bvec
        .iter()
        .map(|b| (reach * norm(*b)).ceil() as i64 + 1)
        .collect();
    let basis = cell.structure.basis();
    let mut all: Vec<V3> = Vec::new();
    for i in -bound[0]..=bound[0] {
        for j in -bound[1]..=bound[1] {
            for k in -bound[2]..=bound[2] {
                for (x, _) in &basis {
                    let f = [i as f64 + x[0], j as f64 + x[1], k as f64 + x[2]];
                    let r = add(
                        add(scale(f[0], avec[0]), scale(f[1], avec[1])),
                        scale(f[2], avec[2]),
                    );
                    if norm(r) <= reach {
                        all.push(r);
                    }
                }
            }
        }
    }
    // Distinct heights modulo d, the widest gap, the top plane below it.
    let tol = 1e-7 * d;
    let mut hs: Vec<f64> = all.iter().map(|r| dot(*r, n).rem_euclid(d)).collect();
    hs.sort_by(|a, b| b.total_cmp(a));
    hs.dedup_by(|a, b| (*a - *b).abs() < tol);
    if hs.len() > 1 && (hs[0] - (hs[hs.len() - 1] + d)).abs() < tol {
        hs.pop();
    }
    let m = hs.len();
    let gap_below = |i: usize| {
        if i + 1 < m {
            hs[i] - hs[i + 1]
        } else {
            hs[i] - (hs[0] - d)
        }
    };
    let mut top = 0;
    let mut widest = -1.0;
    for jj in 0..m {
        let above = gap_below((jj + m - 1) % m);
        if above > widest + 1e-4 * d {
            widest = above;
            top = jj;
        }
    }
    let z_top = hs[top];
    let d12 = gap_below(top);
    let d23 = gap_below((top + 1) % m);
    // The atoms with height in (z_top − d, z_top], one per class modulo the mesh.
    let mut atoms: Vec<V3> = Vec::new();
    let mut keys: Vec<(i64, i64, i64)> = Vec::new();
    for r in &all {
        let z = dot(*r, n);
        if !(z <= z_top + tol && z > z_top - d + tol) {
            continue;
        }
        let s1 = dot(*r, b1).rem_euclid(1.0);
        let s2 = dot(*r, b2).rem_euclid(1.0);
        let key = (
            ((s1 * 1e6).round() as i64) % 1_000_000,
            ((s2 * 1e6).round() as i64) % 1_000_000,
            ((z - z_top) / d * 1e6).round() as i64,
        );
        if !keys.contains(&key) {
            keys.push(key);
            atoms.push(*r);
        }
    }
    // A lattice vector one period down.
    let down = cell
        .lattice_points_near_origin(reach)
        .into_iter()
        .filter(|r| (dot(*r, n) + d).abs() < tol)
        .min_by(|a, b| norm(*a).total_cmp(&norm(*b)))
        .unwrap_or([f64::NAN; 3]);
    let per_atom = cell.volume_a3() / basis.len() as f64;
    OColumn {
        atoms,
        normal: n,
        z_top,
        d,
        down,
        d12,
        d23,
        mono_a: per_atom.cbrt(),
    }
}

/// Incidence geometry of one rod: q⊥ in/out inside at an energy.
struct Geometry {
    g_c: V3,
    g_lab: V3,
    u: V3,
    v0: f64,
}

impl Geometry {
    /// (K, K⊥,in, K⊥,out) inside at outside energy `e`, for in-plane lab vector `g`.
    fn perp(&self, e: f64, g: V3) -> Option<(f64, f64, f64)> {
        let q = 1.0 / wavelength_a(e);
        let k = 1.0 / wavelength_a(e + self.v0);
        let kin = scale(q, self.u);
        let kout = add(kin, g);
        let a = k * k - dot(kin, kin);
        let b = k * k - dot(kout, kout);
        if a <= 0.0 || b <= 0.0 {
            None
        } else {
            Some((k, a.sqrt(), b.sqrt()))
        }
    }
}

/// Seah–Dench attenuation length (elements), Å, at energy `e` (eV) for monolayer
/// thickness `a` (Å): (538/E² + 0.41·√(a_nm·E)) monolayers.
fn seah_dench_a(e: f64, a: f64) -> f64 {
    (538.0 / (e * e) + 0.41 * (a / 10.0 * e).sqrt()) * a
}

fn intensity(col: &OColumn, geo: &Geometry, e: f64, up1: f64, up2: f64) -> f64 {
    let Some((k, pin, pout)) = geo.perp(e, geo.g_lab) else {
        return -1.0;
    };
    let q = pin + pout;
    let mu = (k / pin + k / pout) / (2.0 * seah_dench_a(e, col.mono_a));
    let (mut re, mut im) = (0.0, 0.0);
    let tol = 1e-6 * col.d;
    let mut j = 0usize;
    loop {
        let shift = scale(j as f64, col.down);
        let damp_period = (-mu * col.d * j as f64).exp();
        if damp_period < 1e-12 || j > 100_000 {
            break;
        }
        for r0 in &col.atoms {
            let r = add(*r0, shift);
            let nrm = col.normal;
            let depth = col.z_top - dot(r, nrm);
            let mut zup = 0.0;
            if depth.abs() < tol {
                zup = up1;
            } else if (depth - col.d12).abs() < tol {
                zup = up2;
            }
            let phase = dot(geo.g_c, r) + q * (dot(r, nrm) + zup);
            let turns = phase - phase.floor();
            let w = (-mu * depth).exp();
            let (s, c) = (2.0 * std::f64::consts::PI * turns).sin_cos();
            re += w * c;
            im += w * s;
        }
        j += 1;
    }
    re * re + im * im
}

/// The energy of the largest intensity in [lo, hi]: a grid of 2000, then a parabola.
fn maximum(col: &OColumn, geo: &Geometry, lo: f64, hi: f64, up1: f64, up2: f64) -> f64 {
    let nstep = 2000;
    let at = |e: f64| intensity(col, geo, e, up1, up2);
    let es: Vec<f64> = (0..=nstep)
        .map(|i| lo + (hi - lo) * i as f64 / nstep as f64)
        .collect();
    let vs: Vec<f64> = es.iter().map(|e| at(*e)).collect();
    let (ib, _) = vs.iter().enumerate().fold(
        (0, f64::MIN),
        |b, (i, v)| if *v > b.1 { (i, *v) } else { b },
    );
    if ib == 0 || ib == nstep {
        return es[ib];
    }
    let (y0, y1, y2) = (vs[ib - 1], vs[ib], vs[ib + 1]);
    let h = es[1] - es[0];
    let den = y0 - 2.0 * y1 + y2;
    if den == 0.0 {
        es[ib]
    } else {
        es[ib] + 0.5 * h * (y0 - y2) / den
    }
}

/// How far a top-layer relaxation (Δd12, Δd23 in percent) moves the kinematic I-V
/// maximum of rod `rod` whose bulk G has normal component `g_perp_inv_a` (1/Å), eV:
/// the maximum of the relaxed column's intensity minus the bulk-terminated one's, both
/// searched where q = K⊥,in + K⊥,out lies within ±0.35/d of G⊥. Face (hkl) with mesh
/// (a1, a2) and `normal` (crystal frame), tilt, azimuth, V0 as [`iv_peaks`].
#[allow(clippy::too_many_arguments)]
pub fn relaxed_shift_ev(
    cell: &OCell,
    hkl: [i32; 3],
    a1: [f64; 3],
    a2: [f64; 3],
    normal: [f64; 3],
    rod: [i32; 2],
    tilt_deg: f64,
    azimuth_deg: f64,
    v0_ev: f64,
    g_perp_inv_a: f64,
    d12_pct: f64,
    d23_pct: f64,
) -> Option<f64> {
    let col = column(cell, a1, a2, normal, hkl);
    let nc = unit(normal);
    let frame = LabFrame::new(a1, nc, tilt_deg, azimuth_deg);
    let g_c = rod_vector(a1, a2, nc, rod);
    let geo = Geometry {
        g_c,
        g_lab: mat_vec(&frame.rot, g_c),
        u: frame.k_par_in_per_q(),
        v0: v0_ev,
    };
    let q_of = |e: f64| geo.perp(e, geo.g_lab).map(|(_, a, b)| a + b);
    // The energies where q = G⊥ ∓ 0.35/d, by bisection from just above emergence.
    let e_min = {
        let mut lo = 1e-3;
        while q_of(lo).is_none() && lo < 1e6 {
            lo *= 1.01;
        }
        lo.max(1.0)
    };
    let find = |target: f64| -> Option<f64> {
        let f = |e: f64| q_of(e).map_or(-1.0, |q| q - target);
        let (lo, hi) = (e_min, 3.0e5);
        if f(lo) >= 0.0 {
            return Some(lo);
        }
        if f(hi) < 0.0 {
            return None;
        }
        Some(bisect(lo, hi, f, true))
    };
    let w = 0.35 / col.d;
    let lo = find(g_perp_inv_a - w)?;
    let hi = find(g_perp_inv_a + w)?;
    let up2 = d23_pct / 100.0 * col.d23;
    let up1 = d12_pct / 100.0 * col.d12 + up2;
    let bulk = maximum(&col, &geo, lo, hi, 0.0, 0.0);
    let moved = maximum(&col, &geo, lo, hi, up1, up2);
    Some(moved - bulk)
}

/// One sub-beam of a split spot: its offset δ along the step-down direction (1/Å) and
/// where it leaves.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct OSubBeam {
    /// Terrace-phase index j.
    pub index: i64,
    /// δ, 1/Å.
    pub offset_inv_a: f64,
    /// Exit angles and arm angles as [`beam_exit`] gives them.
    pub exit: OBeam,
}

/// The two sub-beams nearest the terrace beam (δ ≥ 0 first, then δ < 0) of rod `rod`
/// on terraces of width `terrace_a` and steps `height_a` high going down along the
/// surface-frame azimuth `step_azimuth_deg` (from â1 toward n̂ × â1), at `energy_ev`,
/// tilt, azimuth and V0: each solves L·(g·ŝ + δ) − q(δ)·h = j by bisection, q the
/// inside normal momentum transfer of the sub-beam itself.
#[allow(clippy::too_many_arguments)]
pub fn split_spots(
    a1: [f64; 3],
    a2: [f64; 3],
    normal: [f64; 3],
    rod: [i32; 2],
    energy_ev: f64,
    tilt_deg: f64,
    azimuth_deg: f64,
    v0_ev: f64,
    terrace_a: f64,
    height_a: f64,
    step_azimuth_deg: f64,
) -> Vec<OSubBeam> {
    let nc = unit(normal);
    let u1 = unit(sub(a1, scale(dot(a1, nc), nc)));
    let u2 = cross(nc, u1);
    let (sa, ca) = step_azimuth_deg.to_radians().sin_cos();
    let s_hat = add(scale(ca, u1), scale(sa, u2));
    let frame = LabFrame::new(a1, nc, tilt_deg, azimuth_deg);
    let g_c = rod_vector(a1, a2, nc, rod);
    let geo = Geometry {
        g_c,
        g_lab: mat_vec(&frame.rot, g_c),
        u: frame.k_par_in_per_q(),
        v0: v0_ev,
    };
    let q_at = |delta: f64| {
        let v = mat_vec(&frame.rot, add(g_c, scale(delta, s_hat)));
        geo.perp(energy_ev, v).map(|(_, a, b)| a + b)
    };
    let gs = dot(g_c, s_hat);
    let (l, h) = (terrace_a, height_a);
    let f = |delta: f64, j: f64| q_at(delta).map(|q| l * (gs + delta) - q * h - j);
    let Some(q0) = q_at(0.0) else {
        return Vec::new();
    };
    // The j whose root lies nearest above 0, and the one below it.
    let u0 = q0 * h - l * gs;
    let mut out = Vec::new();
    for j in [-(u0.floor()), -(u0.floor()) - 1.0] {
        // F rises with δ along the chord (dq/dδ·h ≪ L for these steps).
        let (lo, hi) = (-1.5 / l, 1.5 / l);
        let (Some(flo), Some(fhi)) = (f(lo, j), f(hi, j)) else {
            continue;
        };
        if flo > 0.0 || fhi < 0.0 {
            continue;
        }
        let delta = bisect(lo, hi, |x| f(x, j).unwrap_or(f64::NAN), false);
        let q = 1.0 / wavelength_a(energy_ev);
        let k_par = add(
            scale(q, frame.k_par_in_per_q()),
            mat_vec(&frame.rot, add(g_c, scale(delta, s_hat))),
        );
        let kp2 = dot(k_par, k_par);
        if kp2 > q * q {
            continue;
        }
        let kperp = (q * q - kp2).sqrt();
        let k_out = add(k_par, scale(kperp, frame.n));
        let d = unit(k_out);
        let mut arm = (-d[1]).atan2(-d[0]).to_degrees();
        if arm <= -180.0 {
            arm += 360.0;
        }
        out.push(OSubBeam {
            index: j as i64,
            offset_inv_a: delta,
            exit: OBeam {
                exit_polar_deg: kp2.sqrt().atan2(kperp).to_degrees(),
                exit_azimuth_deg: dot(k_par, frame.e2)
                    .atan2(dot(k_par, frame.e1))
                    .to_degrees(),
                arm_deg: arm,
                elevation_deg: d[2].clamp(-1.0, 1.0).asin().to_degrees(),
                k_out_lab: k_out,
            },
        });
    }
    out
}
