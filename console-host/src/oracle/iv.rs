//! Kinematic I-V peak energies by bisection.

use super::vec::*;
use super::*;

/// A kinematic I-V maximum.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct OPeak {
    /// Beam energy outside, eV.
    pub energy_ev: f64,
    /// Conventional indices of the bulk G responsible.
    pub g_hkl: [i32; 3],
    /// G·n̂, Å⁻¹.
    pub g_perp_inv_a: f64,
}

/// Kinematic I-V peak energies of rod (h, k), with refraction by the inner potential
/// `v0_ev`, sorted, within [`from_ev`, `to_ev`]; only where the beam exists outside
/// (above its emergence energy). See [`iv_peaks_all`] for the unfiltered list.
#[allow(clippy::too_many_arguments)]
pub fn iv_peaks(
    cell: &OCell,
    a1: [f64; 3],
    a2: [f64; 3],
    normal: [f64; 3],
    rod: [i32; 2],
    tilt_deg: f64,
    azimuth_deg: f64,
    v0_ev: f64,
    from_ev: f64,
    to_ev: f64,
) -> Vec<OPeak> {
    iv_peaks_impl(
        cell,
        a1,
        a2,
        normal,
        rod,
        tilt_deg,
        azimuth_deg,
        v0_ev,
        from_ev,
        to_ev,
        true,
    )
}

/// As [`iv_peaks`], but also listing solutions where the outgoing beam propagates
/// inside the crystal yet is still evanescent outside.
#[allow(clippy::too_many_arguments)]
pub fn iv_peaks_all(
    cell: &OCell,
    a1: [f64; 3],
    a2: [f64; 3],
    normal: [f64; 3],
    rod: [i32; 2],
    tilt_deg: f64,
    azimuth_deg: f64,
    v0_ev: f64,
    from_ev: f64,
    to_ev: f64,
) -> Vec<OPeak> {
    iv_peaks_impl(
        cell,
        a1,
        a2,
        normal,
        rod,
        tilt_deg,
        azimuth_deg,
        v0_ev,
        from_ev,
        to_ev,
        false,
    )
}

#[allow(clippy::too_many_arguments)]
pub(super) fn iv_peaks_impl(
    cell: &OCell,
    a1: V3,
    a2: V3,
    normal: V3,
    rod: [i32; 2],
    tilt_deg: f64,
    azimuth_deg: f64,
    v0_ev: f64,
    from_ev: f64,
    to_ev: f64,
    require_emerged: bool,
) -> Vec<OPeak> {
    let mut peaks = Vec::new();
    let lo_e = from_ev.max(1e-9).max(-v0_ev + 1e-9);
    if !(lo_e.is_finite() && to_ev.is_finite() && to_ev > lo_e) {
        return peaks;
    }
    let nc = unit(normal);
    let g_c = rod_vector(a1, a2, nc, rod);
    let frame = LabFrame::new(a1, nc, tilt_deg, azimuth_deg);
    let g_lab = mat_vec(&frame.rot, g_c);
    let u = frame.k_par_in_per_q();

    // Sum of the inside normal components, K⊥,in + K⊥,out, or None where either
    // beam is evanescent inside.
    let perp_sum = |e: f64| -> Option<f64> {
        let q = 1.0 / wavelength_a(e);
        let k_in = 1.0 / wavelength_a(e + v0_ev);
        let kp_in = scale(q, u);
        let kp_out = add(kp_in, g_lab);
        let s_in = k_in * k_in - dot(kp_in, kp_in);
        let s_out = k_in * k_in - dot(kp_out, kp_out);
        if s_in < 0.0 || s_out < 0.0 {
            None
        } else {
            Some(s_in.sqrt() + s_out.sqrt())
        }
    };
    let emerged = |e: f64| {
        let q = 1.0 / wavelength_a(e);
        norm(add(scale(q, u), g_lab)) <= q * (1.0 + 1e-12)
    };

    // Bulk G with in-plane part g: G = g + t n̂, t > 0. Its conventional index along
    // the direct vector with the largest normal component fixes t; the others must
    // then come out integral.
    let k_max = 1.0 / wavelength_a(to_ev + v0_ev);
    let t_max = 2.0 * k_max * (1.0 + 1e-9) + 1e-9;
    let avec = cell.direct_vectors();
    let j = (0..3)
        .max_by(|&x, &y| dot(nc, avec[x]).abs().total_cmp(&dot(nc, avec[y]).abs()))
        .unwrap_or(2);
    let nj = dot(nc, avec[j]);
    let gj = dot(g_c, avec[j]);
    let m_a = gj;
    let m_b = gj + t_max * nj;
    let (m_lo, m_hi) = (m_a.min(m_b).floor() as i64, m_a.max(m_b).ceil() as i64);
    let mut gs: Vec<([i32; 3], f64)> = Vec::new();
    for m in m_lo..=m_hi {
        let t = (m as f64 - gj) / nj;
        if t <= 0.0 || t > t_max {
            continue;
        }
        let g_full = add(g_c, scale(t, nc));
        let frac: Vec<f64> = avec.iter().map(|a| dot(g_full, *a)).collect();
        if frac.iter().any(|x| (x - x.round()).abs() > 1e-6) {
            continue;
        }
        let hkl = [
            frac[0].round() as i32,
            frac[1].round() as i32,
            frac[2].round() as i32,
        ];
        // Re-derive G from the integer indices and apply the selection literally.
        let gv = cell.g_vector(hkl);
        let gperp = dot(gv, nc);
        let inplane = sub(gv, scale(gperp, nc));
        if norm(sub(inplane, g_c)) < 1e-9 && gperp > 0.0 && cell.allowed(hkl) {
            gs.push((hkl, gperp));
        }
    }
    if gs.is_empty() {
        return peaks;
    }

    // Sample the perpendicular sum on a grid uniform in sqrt(E), then bisect every
    // crossing of each G⊥.
    let (s_lo, s_hi) = (lo_e.sqrt(), to_ev.sqrt());
    let k_span = 1.0 / wavelength_a(to_ev + v0_ev) - 1.0 / wavelength_a(lo_e + v0_ev);
    let steps = ((k_span / 5e-4).ceil() as usize).clamp(4000, 2_000_000);
    let grid: Vec<(f64, Option<f64>)> = (0..=steps)
        .map(|i| {
            let s = s_lo + (s_hi - s_lo) * i as f64 / steps as f64;
            let e = if i == steps { to_ev } else { s * s };
            (e, perp_sum(e))
        })
        .collect();
    for &(hkl, gperp) in &gs {
        let h = |e: f64| perp_sum(e).map_or(f64::NAN, |s| s - gperp);
        if let Some(v) = grid[0].1 {
            if v == gperp {
                peaks.push(OPeak {
                    energy_ev: grid[0].0,
                    g_hkl: hkl,
                    g_perp_inv_a: gperp,
                });
            }
        }
        for w in grid.windows(2) {
            let (e0, Some(v0)) = w[0] else { continue };
            let (e1, Some(v1)) = w[1] else { continue };
            let (d0, d1) = (v0 - gperp, v1 - gperp);
            if (d0 < 0.0) != (d1 < 0.0) {
                let e = if d1 == 0.0 {
                    e1
                } else {
                    bisect(e0, e1, h, false)
                };
                peaks.push(OPeak {
                    energy_ev: e,
                    g_hkl: hkl,
                    g_perp_inv_a: gperp,
                });
            }
        }
    }
    peaks.retain(|p| {
        p.energy_ev >= from_ev && p.energy_ev <= to_ev && (!require_emerged || emerged(p.energy_ev))
    });
    peaks.sort_by(|a, b| a.energy_ev.total_cmp(&b.energy_ev));
    peaks
}
