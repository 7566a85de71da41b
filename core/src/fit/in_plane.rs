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
