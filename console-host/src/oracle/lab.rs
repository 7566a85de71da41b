//! The lab frame from rotation matrices: exit directions and emergence energies.

use super::vec::*;
use super::*;

/// Lab frame of one sample orientation.
#[derive(Clone, Copy, Debug)]
pub(super) struct LabFrame {
    /// In-plane surface axis e1 (lab).
    pub(super) e1: V3,
    /// In-plane surface axis e2 = ẑ (lab).
    pub(super) e2: V3,
    /// Outward surface normal (lab).
    pub(super) n: V3,
    /// Crystal → lab rotation.
    pub(super) rot: M3,
}

impl LabFrame {
    /// Tilt α, azimuth φ (deg). `a1` and `normal` in the crystal frame; a1's component
    /// along the normal (if any) is ignored.
    pub(super) fn new(a1: V3, normal: V3, tilt_deg: f64, azimuth_deg: f64) -> LabFrame {
        let rz = rot_z(tilt_deg);
        let n = mat_vec(&rz, [-1.0, 0.0, 0.0]);
        let e1 = mat_vec(&rz, [0.0, -1.0, 0.0]);
        let e2 = [0.0, 0.0, 1.0];
        let nc = unit(normal);
        let u1 = unit(sub(a1, scale(dot(a1, nc), nc)));
        let u2 = cross(nc, u1);
        let r0 = frame_map([u1, u2, nc], [e1, e2, n]);
        let rot = mat_mul(&rot_axis(n, azimuth_deg), &r0);
        LabFrame { e1, e2, n, rot }
    }

    /// In-plane part of the incident wavevector per unit 1/λ (k_in = x̂/λ).
    pub(super) fn k_par_in_per_q(&self) -> V3 {
        let x = [1.0, 0.0, 0.0];
        sub(x, scale(dot(x, self.n), self.n))
    }
}

/// A surface beam outside the crystal. Angles in degrees, wavevector in Å⁻¹ (lab).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct OBeam {
    /// Angle between k_out and the outward normal.
    pub exit_polar_deg: f64,
    /// Direction of k∥,out in the surface: atan2(k∥·e2, k∥·e1).
    pub exit_azimuth_deg: f64,
    /// Arm angle δ = atan2(−d̂_y, −d̂_x), in (−180°, 180°].
    pub arm_deg: f64,
    /// Elevation ν = asin(d̂_z).
    pub elevation_deg: f64,
    /// Outgoing wavevector in the lab frame, |k| = 1/λ.
    pub k_out_lab: [f64; 3],
}

/// Exit direction of rod `rod` = (h, k) for mesh (a1, a2) (crystal frame, Å) of a
/// face with outward unit normal `normal` (crystal frame), at beam energy
/// `energy_ev`, sample tilt `tilt_deg` and azimuth `azimuth_deg`. `None` when the
/// beam is evanescent (|k∥,out| > 1/λ).
pub fn beam_exit(
    a1: [f64; 3],
    a2: [f64; 3],
    normal: [f64; 3],
    rod: [i32; 2],
    energy_ev: f64,
    tilt_deg: f64,
    azimuth_deg: f64,
) -> Option<OBeam> {
    let q = 1.0 / wavelength_a(energy_ev);
    if !(q.is_finite() && q > 0.0) {
        return None;
    }
    let frame = LabFrame::new(a1, normal, tilt_deg, azimuth_deg);
    let g = mat_vec(&frame.rot, rod_vector(a1, a2, normal, rod));
    let k_par = add(scale(q, frame.k_par_in_per_q()), g);
    let kp2 = dot(k_par, k_par);
    let kperp2 = q * q - kp2;
    if kperp2 < 0.0 {
        return None;
    }
    let kperp = kperp2.sqrt();
    let k_out = add(k_par, scale(kperp, frame.n));
    let d = unit(k_out);
    let mut arm = (-d[1]).atan2(-d[0]).to_degrees();
    if arm <= -180.0 {
        arm += 360.0;
    }
    Some(OBeam {
        exit_polar_deg: kp2.sqrt().atan2(kperp).to_degrees(),
        exit_azimuth_deg: dot(k_par, frame.e2)
            .atan2(dot(k_par, frame.e1))
            .to_degrees(),
        arm_deg: arm,
        elevation_deg: d[2].clamp(-1.0, 1.0).asin().to_degrees(),
        k_out_lab: k_out,
    })
}

/// Beam energy (eV, outside) at which rod (h, k) becomes tangent to the surface
/// (|k∥,out| = 1/λ) at this tilt and azimuth, by bisection on E in [1e-6, 1e7] eV.
/// `None` for (0,0) or when there is no crossing in that range.
pub fn emergence_energy_ev(
    a1: [f64; 3],
    a2: [f64; 3],
    normal: [f64; 3],
    rod: [i32; 2],
    tilt_deg: f64,
    azimuth_deg: f64,
) -> Option<f64> {
    if rod == [0, 0] {
        return None;
    }
    let frame = LabFrame::new(a1, normal, tilt_deg, azimuth_deg);
    let g = mat_vec(&frame.rot, rod_vector(a1, a2, normal, rod));
    let u = frame.k_par_in_per_q();
    // Positive while evanescent; strictly decreasing in E for tilts below 90°.
    let excess = |e: f64| {
        let q = 1.0 / wavelength_a(e);
        norm(add(scale(q, u), g)) - q
    };
    let (lo, hi) = (1e-6, 1e7);
    if excess(lo) <= 0.0 || excess(hi) > 0.0 {
        return None;
    }
    Some(bisect(lo, hi, excess, true))
}
