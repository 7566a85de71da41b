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
    /// Square root: micromath's estimate (a few per cent off) refined by two Newton
    /// steps, y ← (y + x/y)/2, which bring it to f32 rounding.
    #[inline]
    pub fn sqrt(x: f32) -> f32 {
        let y = F32Ext::sqrt(x);
        if y.is_nan() || y <= 0.0 || y.is_infinite() {
            return y;
        }
        let y = 0.5 * (y + x / y);
        0.5 * (y + x / y)
    }
    /// `x` reduced by the nearest multiple j of π/2: (r, j mod 4), |r| ≤ π/4. π/2 is
    /// split in three parts so that r keeps f32 precision for |x| up to ~10^4 rad.
    #[inline]
    fn reduce(x: f32) -> (f32, u32) {
        const TWO_OVER_PI: f32 = core::f32::consts::FRAC_2_PI;
        // π/2 = P1 + P2 + P3, P1 and P2 with few significant bits (exact products).
        const P1: f32 = 1.5703125;
        const P2: f32 = 4.837_513e-4;
        const P3: f32 = 7.549_79e-8;
        let j = libm::roundf(x * TWO_OVER_PI);
        let r = ((x - j * P1) - j * P2) - j * P3;
        // `j` is an integer-valued float; its low two bits pick the quadrant.
        (r, (j as i32 as u32) & 3)
    }
    /// Sine on [−π/4, π/4]: odd polynomial, error below 1 ulp there (coefficients of the
    /// classic single-precision minimax fit, from memory).
    #[inline]
    fn sin_kernel(r: f32) -> f32 {
        let z = r * r;
        r + r * z * (-1.666_665_5e-1 + z * (8.332_161e-3 + z * -1.951_529_6e-4))
    }
    /// Cosine on [−π/4, π/4]: even polynomial (same source).
    #[inline]
    fn cos_kernel(r: f32) -> f32 {
        let z = r * r;
        1.0 - 0.5 * z + z * z * (4.166_664_6e-2 + z * (-1.388_731_6e-3 + z * 2.443_315_7e-5))
    }
    /// Sine of an angle in radians (f32 range reduction and polynomials; no f64).
    #[inline]
    pub fn sin(x: f32) -> f32 {
        if !x.is_finite() {
            return f32::NAN;
        }
        let (r, q) = reduce(x);
        match q {
            0 => sin_kernel(r),
            1 => cos_kernel(r),
            2 => -sin_kernel(r),
            _ => -cos_kernel(r),
        }
    }
    /// Cosine of an angle in radians (f32 range reduction and polynomials; no f64).
    #[inline]
    pub fn cos(x: f32) -> f32 {
        if !x.is_finite() {
            return f32::NAN;
        }
        let (r, q) = reduce(x);
        match q {
            0 => cos_kernel(r),
            1 => -sin_kernel(r),
            2 => -cos_kernel(r),
            _ => sin_kernel(r),
        }
    }
    /// Tangent of an angle in radians.
    #[inline]
    pub fn tan(x: f32) -> f32 {
        F32Ext::tan(x)
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
