//! The float backend: every transcendental the crate uses goes through here.
//!
//! By default these call `libm` (correctly rounded or within an ulp or two). With the
//! `fast-math` feature they call `micromath`'s approximations instead: smaller and
//! faster on a Cortex-M4F, but only good to roughly 1e-4 relative — not for conformance.
//! Also here: three-vector helpers and the degree/radian conversions.

/// π as f32.
pub const PI: f32 = core::f32::consts::PI;

#[cfg(not(feature = "fast-math"))]
mod backend {
    /// Square root.
    #[inline]
    pub fn sqrt(x: f32) -> f32 {
        libm::sqrtf(x)
    }
    /// Sine of an angle in radians.
    #[inline]
    pub fn sin(x: f32) -> f32 {
        libm::sinf(x)
    }
    /// Cosine of an angle in radians.
    #[inline]
    pub fn cos(x: f32) -> f32 {
        libm::cosf(x)
    }
    /// Tangent of an angle in radians.
    #[inline]
    pub fn tan(x: f32) -> f32 {
        libm::tanf(x)
    }
    /// Arcsine, radians.
    #[inline]
    pub fn asin(x: f32) -> f32 {
        libm::asinf(x)
    }
    /// Arccosine, radians.
    #[inline]
    pub fn acos(x: f32) -> f32 {
        libm::acosf(x)
    }
    /// Four-quadrant arctangent of y/x, radians.
    #[inline]
    pub fn atan2(y: f32, x: f32) -> f32 {
        libm::atan2f(y, x)
    }
    /// e^x.
    #[inline]
    pub fn exp(x: f32) -> f32 {
        libm::expf(x)
    }
    /// Natural logarithm.
    #[inline]
    pub fn ln(x: f32) -> f32 {
        libm::logf(x)
    }
}

#[cfg(feature = "fast-math")]
mod backend {
    use micromath::F32Ext;
    /// Square root.
    #[inline]
    pub fn sqrt(x: f32) -> f32 {
        F32Ext::sqrt(x)
    }
    /// Sine of an angle in radians.
    #[inline]
    pub fn sin(x: f32) -> f32 {
        F32Ext::sin(x)
    }
    /// Cosine of an angle in radians.
    #[inline]
    pub fn cos(x: f32) -> f32 {
        F32Ext::cos(x)
    }
    /// Tangent of an angle in radians.
    #[inline]
    pub fn tan(x: f32) -> f32 {
        F32Ext::tan(x)
    }
    /// Arcsine, radians.
    #[inline]
    pub fn asin(x: f32) -> f32 {
        F32Ext::asin(x)
    }
    /// Arccosine, radians.
    #[inline]
    pub fn acos(x: f32) -> f32 {
        F32Ext::acos(x)
    }
    /// Four-quadrant arctangent of y/x, radians.
    #[inline]
    pub fn atan2(y: f32, x: f32) -> f32 {
        F32Ext::atan2(y, x)
    }
    /// e^x.
    #[inline]
    pub fn exp(x: f32) -> f32 {
        F32Ext::exp(x)
    }
    /// Natural logarithm.
    #[inline]
    pub fn ln(x: f32) -> f32 {
        F32Ext::ln(x)
    }
}

pub use backend::{acos, asin, atan2, cos, exp, ln, sin, sqrt, tan};

/// Largest integer not greater than `x` (exact in both backends).
#[inline]
pub fn floor(x: f32) -> f32 {
    libm::floorf(x)
}

/// Nearest integer to `x`, halves away from zero (exact in both backends).
#[inline]
pub fn round(x: f32) -> f32 {
    libm::roundf(x)
}

/// Degrees to radians.
#[inline]
pub fn rad(deg: f32) -> f32 {
    deg * (PI / 180.0)
}

/// Radians to degrees.
#[inline]
pub fn deg(rad: f32) -> f32 {
    rad * (180.0 / PI)
}

/// `asin` with the argument clamped to [-1, 1], so rounding just past 1 gives 90°, not NaN.
#[inline]
pub fn asin_clamped(x: f32) -> f32 {
    asin(x.clamp(-1.0, 1.0))
}

/// Sine and cosine of an angle in degrees.
#[inline]
pub fn sin_cos_deg(angle_deg: f32) -> (f32, f32) {
    let r = rad(angle_deg);
    (sin(r), cos(r))
}

/// A Cartesian three-vector (Å or 1/Å, as the caller's context says).
pub type Vec3 = [f32; 3];

/// Dot product.
#[inline]
pub fn dot(a: Vec3, b: Vec3) -> f32 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

/// Cross product a × b.
#[inline]
pub fn cross(a: Vec3, b: Vec3) -> Vec3 {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}

/// Euclidean length.
#[inline]
pub fn norm(a: Vec3) -> f32 {
    sqrt(dot(a, a))
}

/// a·s
#[inline]
pub fn scale(a: Vec3, s: f32) -> Vec3 {
    [a[0] * s, a[1] * s, a[2] * s]
}

/// a + b
#[inline]
pub fn add(a: Vec3, b: Vec3) -> Vec3 {
    [a[0] + b[0], a[1] + b[1], a[2] + b[2]]
}

/// a − b
#[inline]
pub fn sub(a: Vec3, b: Vec3) -> Vec3 {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}

/// `a / |a|`, or `None` for a zero-length or non-finite vector.
#[inline]
pub fn unit(a: Vec3) -> Option<Vec3> {
    let n = norm(a);
    if n > 0.0 && n.is_finite() {
        Some(scale(a, 1.0 / n))
    } else {
        None
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn degrees_round_trip() {
        assert!((deg(rad(37.5)) - 37.5).abs() < 1e-5);
    }

    #[test]
    fn cross_is_right_handed() {
        assert_eq!(cross([1.0, 0.0, 0.0], [0.0, 1.0, 0.0]), [0.0, 0.0, 1.0]);
    }

    #[test]
    fn asin_clamped_never_nan() {
        assert!((asin_clamped(1.000_001) - PI / 2.0).abs() < 1e-6);
    }
}
