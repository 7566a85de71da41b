//! The float backend: every transcendental the crate uses goes through here.
//!
//! Everything is computed in f32: no f64 arithmetic, which a Cortex-M4F does in
//! software (a test of the firmware image fails if f64 routines appear in it). Both
//! backends share the sine, cosine, tangent and arcsine of this module (f32 range
//! reduction and polynomials) and take arccosine and arctangent from `libm` (whose
//! `acosf`/`atan2f` are f32-only). They differ in:
//!
//! * the square root: correctly rounded by default (`libm::sqrtf`, integer
//!   arithmetic); with `fast-math` a Newton iteration of its own, within one ulp and
//!   about four times faster;
//! * e^x and ln: `libm` by default, `micromath`'s approximations with `fast-math`.
//!
//! Both meet the oracle tolerances (tests/tests/oracle_agreement.rs runs with each).
//! Also here: three-vector helpers and the degree/radian conversions.

/// π as f32.
pub const PI: f32 = core::f32::consts::PI;

/// √x to within one ulp (never more than one ulp off; usually the correctly rounded
/// value) for positive normal `x`: a first guess from the bit pattern (halved exponent,
/// a few per cent off) and three Newton steps y ← (y + x/y)/2, each squaring the
/// relative error.
#[inline]
fn sqrt_newton(x: f32) -> f32 {
    let y = f32::from_bits((x.to_bits() >> 1) + 0x1fbd_1df5);
    let y = 0.5 * (y + x / y);
    let y = 0.5 * (y + x / y);
    0.5 * (y + x / y)
}

/// The special cases of the square root, and subnormal inputs scaled into the normal
/// range: `Err(result)` for 0, negative, NaN and ∞; `Ok((x', scale))` with
/// √x = √x' · scale.
#[inline]
fn sqrt_prepare(x: f32) -> core::result::Result<(f32, f32), f32> {
    if x.is_nan() || x <= 0.0 {
        // ±0 stays ±0; negative and NaN give NaN.
        return Err(if x == 0.0 { x } else { f32::NAN });
    }
    if x == f32::INFINITY {
        return Err(x);
    }
    if x < f32::MIN_POSITIVE {
        // x · 2^24 is exact and normal; √(x · 2^24) = √x · 2^12.
        return Ok((x * 16_777_216.0, 1.0 / 4096.0));
    }
    Ok((x, 1.0))
}

/// √x within one ulp: a first guess from the bit pattern and three Newton steps (about
/// 20 instructions on a Cortex-M4F against about 80 for the correctly rounded
/// `libm::sqrtf`, which computes with integers).
#[inline]
pub fn sqrt_faithful(x: f32) -> f32 {
    match sqrt_prepare(x) {
        Ok((x, scale)) => sqrt_newton(x) * scale,
        Err(r) => r,
    }
}

/// `x` reduced by the nearest multiple j of π/2: (r, j mod 4), |r| ≤ π/4. π/2 is split
/// in three parts so that r keeps f32 precision for |x| up to ~10^4 rad (the angles
/// here are a few radians).
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

/// Sine of an angle in radians (f32 range reduction and polynomials).
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

/// Cosine of an angle in radians (f32 range reduction and polynomials).
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

/// Tangent of an angle in radians: sine over cosine of the reduced angle (a few ulp).
#[inline]
pub fn tan(x: f32) -> f32 {
    if !x.is_finite() {
        return f32::NAN;
    }
    let (r, q) = reduce(x);
    let (s, c) = (sin_kernel(r), cos_kernel(r));
    if q & 1 == 0 {
        s / c
    } else {
        -c / s
    }
}

/// Arcsine, radians: atan2(x, √((1 − x)(1 + x))), which keeps f32 precision near ±1
/// (1 − x is exact there) and near 0. NaN outside [−1, 1].
#[inline]
pub fn asin(x: f32) -> f32 {
    if x.is_nan() || x.abs() > 1.0 {
        return f32::NAN;
    }
    libm::atan2f(x, sqrt((1.0 - x) * (1.0 + x)))
}

/// Arccosine, radians (`libm::acosf`, f32 only).
#[inline]
pub fn acos(x: f32) -> f32 {
    libm::acosf(x)
}

/// Four-quadrant arctangent of y/x, radians (`libm::atan2f`, f32 only).
#[inline]
pub fn atan2(y: f32, x: f32) -> f32 {
    libm::atan2f(y, x)
}

#[cfg(not(feature = "fast-math"))]
mod backend {
    /// Square root, correctly rounded (`libm::sqrtf`: integer arithmetic, no f64).
    #[inline]
    pub fn sqrt(x: f32) -> f32 {
        libm::sqrtf(x)
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
    /// Square root within one ulp.
    #[inline]
    pub fn sqrt(x: f32) -> f32 {
        super::sqrt_faithful(x)
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

pub use backend::{exp, ln, sqrt};

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

/// `x` limited to [`lo`, `hi`] (for `lo` ≤ `hi`, the same value as `f32::clamp`; NaN
/// stays NaN). Unlike `f32::clamp` it never panics — bounds in the wrong order give `lo`
/// or `hi`, not a panic — so no panic message with `core::fmt`'s float formatting
/// (about 10 KB of flash) is linked into a controller image.
#[inline]
pub fn clamp(x: f32, lo: f32, hi: f32) -> f32 {
    let mut y = x;
    if y < lo {
        y = lo;
    }
    if y > hi {
        y = hi;
    }
    y
}

/// `asin` with the argument clamped to [-1, 1], so rounding just past 1 gives 90°, not NaN.
#[inline]
pub fn asin_clamped(x: f32) -> f32 {
    asin(clamp(x, -1.0, 1.0))
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

    /// Distance in ulps between two finite f32 of the same sign.
    fn ulps(a: f32, b: f32) -> u32 {
        (a.to_bits() as i64 - b.to_bits() as i64).unsigned_abs() as u32
    }

    /// Every 251st positive bit pattern (subnormals, normals, ∞ and beyond).
    fn sample() -> impl Iterator<Item = f32> {
        (0..=0x7f80_0000u32).step_by(251).map(f32::from_bits)
    }

    /// Every positive f32 (`cargo test --release -p matterwave-core -- --ignored`).
    #[test]
    #[ignore = "exhaustive: 2^31 inputs, run in release"]
    fn sqrt_faithful_within_one_ulp_everywhere() {
        for b in 0..=0x7f80_0000u32 {
            let x = f32::from_bits(b);
            assert!(ulps(sqrt_faithful(x), libm::sqrtf(x)) <= 1, "{b:#x}");
        }
    }

    #[test]
    fn sqrt_faithful_within_one_ulp() {
        for x in sample().filter(|x| x.is_finite()) {
            assert!(ulps(sqrt_faithful(x), libm::sqrtf(x)) <= 1, "sqrt({x:e})");
        }
        assert_eq!(sqrt_faithful(0.0).to_bits(), 0);
        assert_eq!(sqrt_faithful(-0.0).to_bits(), (-0.0f32).to_bits());
        assert!(sqrt_faithful(-1.0).is_nan());
    }

    #[test]
    fn trig_near_libm() {
        // Angles of this crate: a few turns either way, in 1/1000 degree steps.
        for i in -720_000..=720_000 {
            let x = rad(i as f32 * 0.001);
            let (s, c) = (sin(x), cos(x));
            assert!((s - libm::sinf(x)).abs() <= 1.2e-7, "sin({x})");
            assert!((c - libm::cosf(x)).abs() <= 1.2e-7, "cos({x})");
        }
        for i in -10_000..=10_000 {
            let x = i as f32 * 1e-4;
            let a = asin(x);
            assert!((a - libm::asinf(x)).abs() <= 2.4e-7, "asin({x})");
            assert!(ulps(a.abs(), libm::asinf(x).abs()) <= 2, "asin({x})");
        }
        assert_eq!(asin(1.0), libm::asinf(1.0));
        assert!(asin(1.000_001).is_nan());
        assert!((tan(rad(40.0)) - libm::tanf(rad(40.0))).abs() < 1e-6);
    }
}
