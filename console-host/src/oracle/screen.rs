//! Spots on a hemispherical screen or a flat detector, by rotating the lab into the
//! detector's own frame (written from the conventions of docs/CONVENTIONS.md, not from
//! the core): the detector frame is the lab turned by −δ about z, then by −ν about the
//! new y, so that the detector's axis becomes −x; there x (right, seen from behind the
//! detector) is −y and y (up) is z.

use super::vec::*;

/// Turns a lab vector into the frame of a detector whose axis is at arm `arm_deg`,
/// elevation `elevation_deg`.
fn to_detector(v: V3, arm_deg: f64, elevation_deg: f64) -> V3 {
    let w = mat_vec(&rot_z(-arm_deg), v);
    // Rotation about y by −ν: (x, z) → (x·cos ν − z·sin ν, x·sin ν + z·cos ν).
    let (s, c) = elevation_deg.to_radians().sin_cos();
    [w[0] * c - w[2] * s, w[1], w[0] * s + w[2] * c]
}

/// (x, y) in mm where a beam along `k_lab` strikes a hemispherical screen of radius
/// `radius_mm` centred on the sample, its axis at the gun (−x), as the projection onto
/// the plane normal to the axis; `None` beyond the rim at `rim_deg` from the axis.
pub fn hemisphere_spot_mm(k_lab: [f64; 3], radius_mm: f64, rim_deg: f64) -> Option<(f64, f64)> {
    let v = unit(to_detector(k_lab, 0.0, 0.0));
    // The point on the sphere is R·v; its angle from the axis −x:
    let polar = (-v[0]).clamp(-1.0, 1.0).acos().to_degrees();
    if polar > rim_deg {
        return None;
    }
    Some((-radius_mm * v[1], radius_mm * v[2]))
}

/// (x, y) in mm where a beam along `k_lab` meets the plane of a flat detector whose
/// normal is at (`arm_deg`, `elevation_deg`) at `distance_mm` from the sample, with
/// half-sizes `half_w_mm`, `half_h_mm`; `None` when it misses.
pub fn flat_spot_mm(
    k_lab: [f64; 3],
    distance_mm: f64,
    arm_deg: f64,
    elevation_deg: f64,
    half_w_mm: f64,
    half_h_mm: f64,
) -> Option<(f64, f64)> {
    let v = to_detector(k_lab, arm_deg, elevation_deg);
    if v[0] >= 0.0 {
        return None;
    }
    // The ray t·v meets the plane x = −L at t = L/(−v_x).
    let t = distance_mm / -v[0];
    let (x, y) = (-t * v[1], t * v[2]);
    (x.abs() <= half_w_mm && y.abs() <= half_h_mm).then_some((x, y))
}

/// Angle (degrees) between a beam along `k_lab` and the direction back at the gun (−x).
pub fn angle_from_gun_deg(k_lab: [f64; 3]) -> f64 {
    let v = unit(k_lab);
    (-v[0]).clamp(-1.0, 1.0).acos().to_degrees()
}
