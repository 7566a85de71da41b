//! The one arm-zero model: the in-plane arm angle of a beam, fitted for the arm zero and
//! the gun's energy offset. The console's `fit kind=armzero` and `mwctl calc fit
//! arm-zero` both call [`arm_zero_in_plane`].

use super::{arm_zero_and_energy_offset, Fit2};
use crate::error::{Error, Result};
use crate::goniometer;
use crate::surface::Face;

/// An in-plane arm-zero fit and the branch it used.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct InPlaneArmFit {
    /// `params` = [arm zero δ0 (degrees), gun energy offset ΔE (eV)], with σ.
    pub fit: Fit2,
    /// The branch (+1: g along +e1, −1: along −e1) whose angles lie nearest the data.
    pub branch: i8,
}

/// Fits the arm zero δ0 and the gun offset ΔE to measured arm angles of rod `rod` of
/// `face` at tilt `tilt_deg`, in-plane: measured = δ(E_nominal + `contact_ev` + ΔE) + δ0
/// with δ from [`goniometer::in_plane_arm_deg`]. `contact_ev` is the cathode minus the
/// sample work function, eV. `points` are (nominal energy eV, measured arm degrees).
///
/// The branch is the one whose model angles (without offsets) lie nearest the data.
/// Errors: the specular beam (its angle does not depend on the energy) →
/// `DegenerateFit`; a beam evanescent at some energy on both branches → `Evanescent`;
/// otherwise those of [`arm_zero_and_energy_offset`].
pub fn arm_zero_in_plane(
    face: &Face,
    rod: [i32; 2],
    tilt_deg: f32,
    contact_ev: f32,
    points: &[(f32, f32)],
) -> Result<InPlaneArmFit> {
    if face.rod_inv_a(rod) == [0.0, 0.0] {
        return Err(Error::DegenerateFit);
    }
    let model = |branch: i8, e: f32| {
        goniometer::in_plane_arm_deg(face, rod, tilt_deg, branch, e + contact_ev)
    };
    let mut best: Option<(i8, f32)> = None;
    for branch in [1i8, -1] {
        let mut sum = 0.0f32;
        for &(e, arm) in points {
            match model(branch, e) {
                Ok(m) => sum += goniometer::wrap_180(arm - m).abs(),
                Err(_) => sum = f32::INFINITY,
            }
        }
        if best.is_none_or(|(_, b)| sum < b) {
            best = Some((branch, sum));
        }
    }
    let branch = best.map_or(1, |b| b.0);
    let fit = arm_zero_and_energy_offset(|e| model(branch, e), points)?;
    Ok(InPlaneArmFit { fit, branch })
}

/// One measured position of a beam for [`arm_zero_in_plane_beams`]: the rod, the branch
/// it was aimed on, the nominal gun energy and the arm angle where its peak was centred.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct BeamArm {
    /// The beam's rod (h, k) on the face.
    pub rod: [i32; 2],
    /// The branch it was measured on: +1 (g along +e1) or −1 (along −e1).
    pub branch: i8,
    /// Nominal gun energy, eV (the console's `energy`).
    pub nominal_ev: f32,
    /// Arm angle of the centred peak, degrees (the console's arm angle).
    pub arm_deg: f32,
}

/// The model arm angle of `p` at the offsets `params` = [δ0 (degrees), ΔE (eV)]:
/// δ(E_nominal + `contact_ev` + ΔE) + δ0, δ from [`goniometer::in_plane_arm_deg`] — the
/// model [`arm_zero_in_plane_beams`] fits, so `p.arm_deg` minus this is the residual of
/// point `p`, degrees.
///
/// Errors: a branch other than ±1 → `BadValue`; those of
/// [`goniometer::in_plane_arm_deg`].
pub fn in_plane_arm_at_offsets_deg(
    face: &Face,
    tilt_deg: f32,
    contact_ev: f32,
    params: [f32; 2],
    p: &BeamArm,
) -> Result<f32> {
    if p.branch != 1 && p.branch != -1 {
        return Err(Error::BadValue);
    }
    let e = p.nominal_ev + contact_ev + params[1];
    Ok(goniometer::in_plane_arm_deg(face, p.rod, tilt_deg, p.branch, e)? + params[0])
}

/// Fits one arm zero δ0 and one gun offset ΔE to the measured arm angles of several
/// beams of `face` at tilt `tilt_deg`, in-plane, each on its own branch: measured =
/// δ(E_nominal + `contact_ev` + ΔE) + δ0 with δ from [`goniometer::in_plane_arm_deg`]
/// (the model of [`arm_zero_in_plane`], shared by all points; see
/// [`in_plane_arm_at_offsets_deg`]). `contact_ev` is the cathode minus the sample work
/// function, eV. Beams at several energies, or several beams, separate δ0 from ΔE; the
/// specular beam (its angle does not depend on the energy) adds to δ0 only.
///
/// Errors: a branch other than ±1 → `BadValue`; a beam evanescent at a point's energy →
/// `Evanescent`; otherwise those of [`super::arm_zero_and_energy_offset_multi`] (fewer
/// than 3 points, a degenerate set, no convergence).
///
/// ```
/// use matterwave_core::fit::{arm_zero_in_plane_beams, in_plane_arm_at_offsets_deg, BeamArm};
/// use matterwave_core::{surface::Face, table};
/// let face = Face::new(&table::find("cu").unwrap().cell().unwrap(), [1, 0, 0]).unwrap();
/// let truth = [0.4f32, -1.5]; // δ0 = 0.4°, ΔE = −1.5 eV
/// let mut pts = [(1, 0, 1, 80.0f32), (1, 0, 1, 160.0), (1, 1, 1, 120.0), (1, 1, -1, 200.0)]
///     .map(|(h, k, b, e)| BeamArm { rod: [h, k], branch: b, nominal_ev: e, arm_deg: 0.0 });
/// for p in pts.iter_mut() {
///     p.arm_deg = in_plane_arm_at_offsets_deg(&face, 10.0, 0.0, truth, p).unwrap();
/// }
/// let f = arm_zero_in_plane_beams(&face, 10.0, 0.0, &pts).unwrap();
/// assert!((f.params[0] - 0.4).abs() < 1e-3 && (f.params[1] + 1.5).abs() < 1e-2);
/// ```
pub fn arm_zero_in_plane_beams(
    face: &Face,
    tilt_deg: f32,
    contact_ev: f32,
    points: &[BeamArm],
) -> Result<Fit2> {
    let model = |i: usize, e: f32| -> Result<f32> {
        let p = points.get(i).ok_or(Error::TooFewPoints)?;
        if p.branch != 1 && p.branch != -1 {
            return Err(Error::BadValue);
        }
        goniometer::in_plane_arm_deg(face, p.rod, tilt_deg, p.branch, e + contact_ev)
    };
    super::arm::arm_fit(model, points.len(), |i| {
        points.get(i).map(|p| (i, p.nominal_ev, p.arm_deg))
    })
}
