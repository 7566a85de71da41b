//! Parsing and formatting numbers for the protocol, without `core::fmt` for floats.
//!
//! * [`parse_f32`] / [`parse_i32`]: strict decimal syntax; NaN, infinities, hex and
//!   out-of-range values are errors, never special values.
//! * [`format_f32`]: fixed point with exactly `decimals` places, correctly rounded from
//!   the exact binary value (ties to even, as Rust's `{:.N}`).
//! * [`format_f32_roundtrip`]: a short decimal that parses back to the same `f32`.
//! * [`format_i32`]: plain integers.
//!
//! Formatting writes into a caller's [`NumBuf`] (24 bytes, enough for every output) and
//! returns the text as a `&str` borrowed from it.
//!
//! ```
//! use matterwave_core::console::num::{self, NumBuf, NumError};
//! assert_eq!(num::parse_f32("-12.5e1"), Ok(-125.0));
//! assert_eq!(num::parse_f32("nan"), Err(NumError::NotFinite));
//! assert_eq!(num::parse_f32("1e39"), Err(NumError::OutOfRange));
//! let mut buf: NumBuf = [0; 24];
//! assert_eq!(num::format_f32(2.675, 2, &mut buf), "2.67"); // 2.675f32 is 2.67499995…
//! assert_eq!(num::format_f32_roundtrip(0.1, &mut buf), "0.1");
//! assert_eq!(num::format_f32_roundtrip(1.5e-7, &mut buf), "1.5e-7");
//! assert_eq!(num::format_i32(i32::MIN, &mut buf), "-2147483648");
//! ```

/// Size of a formatting buffer.
pub const NUM_BUF_LEN: usize = 24;

/// A buffer for the formatting functions; every output fits.
pub type NumBuf = [u8; NUM_BUF_LEN];

/// The most decimals [`format_f32`] writes; larger requests are clamped to this.
pub const MAX_DECIMALS: u8 = 9;

/// Why a number was rejected.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum NumError {
    /// No characters at all.
    Empty,
    /// Not a decimal number (letters, spaces, hex, a lone sign, a second point, …).
    Syntax,
    /// `nan`, `inf` or `infinity` (any case, any sign): the protocol takes finite
    /// numbers only.
    NotFinite,
    /// A well-formed number too large for the type (beyond ±3.4028235e38 for `f32`,
    /// outside −2147483648..=2147483647 for `i32`).
    OutOfRange,
}

impl NumError {
    /// A short message for an error reply.
    pub const fn message(self) -> &'static str {
        match self {
            NumError::Empty => "missing number",
            NumError::Syntax => "not a decimal number",
            NumError::NotFinite => "NaN and infinity are not accepted; give a finite number",
            NumError::OutOfRange => "number out of range",
        }
    }
}

/// Split an optional leading `+` or `-`: `(negative, rest)`.
fn split_sign(b: &[u8]) -> (bool, &[u8]) {
    match b {
        [b'-', rest @ ..] => (true, rest),
        [b'+', rest @ ..] => (false, rest),
        _ => (false, b),
    }
}

/// Number of leading ASCII digits.
fn count_digits(b: &[u8]) -> usize {
    b.iter().take_while(|c| c.is_ascii_digit()).count()
}

/// Whether `b` (after the sign) is `digits [. digits] [e|E [sign] digits]` with at
/// least one mantissa digit; `.5` and `5.` are accepted.
fn is_decimal_syntax(b: &[u8]) -> bool {
    let int_digits = count_digits(b);
    let mut rest = b.get(int_digits..).unwrap_or(&[]);
    let mut frac_digits = 0;
    if let [b'.', after @ ..] = rest {
        frac_digits = count_digits(after);
        rest = after.get(frac_digits..).unwrap_or(&[]);
    }
    if int_digits == 0 && frac_digits == 0 {
        return false;
    }
    match rest {
        [] => true,
        [b'e' | b'E', exp @ ..] => {
            let (_, exp) = split_sign(exp);
            let n = count_digits(exp);
            n > 0 && n == exp.len()
        }
        _ => false,
    }
}

/// Parse a decimal `f32`: optional sign, digits with an optional point, optional
/// exponent (`-12.5`, `3e2`, `.5`, `5.`, `+1E-3`).
///
/// The result is the nearest `f32` to the decimal value (correct rounding, via
/// `core`'s parser after a strict syntax check). Rejected: empty text, a lone sign,
/// spaces anywhere, hex, `_` separators, NaN and infinities ([`NumError::NotFinite`]),
/// and values that round beyond the largest finite `f32` ([`NumError::OutOfRange`] —
/// never infinity). Values below the smallest subnormal round to zero. Negative zero
/// is normalised to `+0.0`.
///
/// ```
/// # use matterwave_core::console::num::{parse_f32, NumError};
/// assert_eq!(parse_f32(".5"), Ok(0.5));
/// assert_eq!(parse_f32("5."), Ok(5.0));
/// assert_eq!(parse_f32("-0").map(f32::to_bits), Ok(0));
/// assert_eq!(parse_f32("-Infinity"), Err(NumError::NotFinite));
/// assert_eq!(parse_f32("0x10"), Err(NumError::Syntax));
/// assert_eq!(parse_f32("-"), Err(NumError::Syntax));
/// assert_eq!(parse_f32(" 1"), Err(NumError::Syntax));
/// ```
pub fn parse_f32(s: &str) -> Result<f32, NumError> {
    let bytes = s.as_bytes();
    if bytes.is_empty() {
        return Err(NumError::Empty);
    }
    let (_, body) = split_sign(bytes);
    for word in [&b"nan"[..], b"inf", b"infinity"] {
        if body.eq_ignore_ascii_case(word) {
            return Err(NumError::NotFinite);
        }
    }
    if !is_decimal_syntax(body) {
        return Err(NumError::Syntax);
    }
    let value: f32 = s.parse().map_err(|_| NumError::Syntax)?;
    if !value.is_finite() {
        return Err(NumError::OutOfRange);
    }
    if value == 0.0 {
        return Ok(0.0);
    }
    Ok(value)
}

/// Parse a decimal `i32`: optional sign and at least one digit (leading zeros allowed).
///
/// ```
/// # use matterwave_core::console::num::{parse_i32, NumError};
/// assert_eq!(parse_i32("-2147483648"), Ok(i32::MIN));
/// assert_eq!(parse_i32("2147483648"), Err(NumError::OutOfRange));
/// assert_eq!(parse_i32("1.0"), Err(NumError::Syntax));
/// assert_eq!(parse_i32("+007"), Ok(7));
/// ```
pub fn parse_i32(s: &str) -> Result<i32, NumError> {
    let bytes = s.as_bytes();
    if bytes.is_empty() {
        return Err(NumError::Empty);
    }
    let (negative, digits) = split_sign(bytes);
    if digits.is_empty() || count_digits(digits) != digits.len() {
        return Err(NumError::Syntax);
    }
    // Accumulate as a negative number so that i32::MIN fits.
    let mut acc: i32 = 0;
    for &d in digits {
        acc = acc
            .checked_mul(10)
            .and_then(|a| a.checked_sub(i32::from(d.wrapping_sub(b'0'))))
            .ok_or(NumError::OutOfRange)?;
    }
    if negative {
        Ok(acc)
    } else {
        acc.checked_neg().ok_or(NumError::OutOfRange)
    }
}

/// A bounded writer into a formatting buffer; bytes beyond its end are dropped.
struct Out<'a> {
    buf: &'a mut [u8],
    len: usize,
}

impl<'a> Out<'a> {
    fn new(buf: &'a mut [u8]) -> Self {
        Self { buf, len: 0 }
    }

    fn push(&mut self, b: u8) {
        if let Some(slot) = self.buf.get_mut(self.len) {
            *slot = b;
            self.len += 1;
        }
    }

    fn push_all(&mut self, bytes: &[u8]) {
        for &b in bytes {
            self.push(b);
        }
    }
}

/// The first `len` bytes of `buf` as text ("" if they are not; never the case here,
/// as only ASCII is written).
fn text(buf: &[u8], len: usize) -> &str {
    buf.get(..len)
        .and_then(|b| core::str::from_utf8(b).ok())
        .unwrap_or("")
}

/// Decimal digits of `v`, most significant first, into `digits`; returns the count.
fn u64_digits(mut v: u64, digits: &mut [u8; 20]) -> usize {
    let mut tmp = [0u8; 20];
    let mut n = 0;
    loop {
        if let Some(slot) = tmp.get_mut(n) {
            *slot = b'0' + (v % 10) as u8;
        }
        n += 1;
        v /= 10;
        if v == 0 || n >= tmp.len() {
            break;
        }
    }
    for (dst, src) in digits.iter_mut().zip(tmp.iter().take(n).rev()) {
        *dst = *src;
    }
    n
}

/// `10^n` as u64 for n ≤ 19.
fn pow10_u64(n: u32) -> Option<u64> {
    10u64.checked_pow(n)
}

/// Write "nan", "inf" or "-inf" for a non-finite value; `None` if finite.
fn non_finite(x: f32, out: &mut Out<'_>) -> Option<()> {
    if x.is_nan() {
        out.push_all(b"nan");
        Some(())
    } else if x.is_infinite() {
        if x < 0.0 {
            out.push(b'-');
        }
        out.push_all(b"inf");
        Some(())
    } else {
        None
    }
}

/// `|x|` as `m · 2^e` with integer `m < 2^24` (exact for every finite `f32`).
fn decompose(x: f32) -> (u64, i32) {
    let bits = x.to_bits();
    let biased = ((bits >> 23) & 0xFF) as i32;
    let fraction = u64::from(bits & 0x007F_FFFF);
    if biased == 0 {
        (fraction, -149)
    } else {
        (fraction | 0x0080_0000, biased - 150)
    }
}

/// `round(|x| · 10^d)` exactly, ties to even; `None` if it is 10^19 or more.
fn scaled_round(x: f32, d: u32) -> Option<u64> {
    let (m, e) = decompose(x);
    let scale = pow10_u64(d)?;
    let limit = pow10_u64(19)?;
    let q = if e >= 0 {
        // m < 2^24, so m · 2^e stays below 2^63 for e ≤ 39.
        if e > 39 {
            return None;
        }
        (m << e).checked_mul(scale)?
    } else {
        // m · 10^d < 2^24 · 10^9 < 2^54: no overflow.
        let v = m.checked_mul(scale)?;
        let shift = e.unsigned_abs();
        if shift >= 64 {
            0 // v < 2^54 < 2^(shift-1): rounds down to zero.
        } else {
            let q = v >> shift;
            let r = v & ((1u64 << shift) - 1);
            let half = 1u64 << (shift - 1);
            if r > half || (r == half && q & 1 == 1) {
                q + 1
            } else {
                q
            }
        }
    };
    if q >= limit {
        None
    } else {
        Some(q)
    }
}

/// Format `x` in fixed point with `decimals` places (clamped to [`MAX_DECIMALS`]).
///
/// Rounding is exact: the decimal is the correctly rounded value of the `f32`'s exact
/// binary value, ties to even. A result that rounds to zero has no sign (`-0.001` with
/// 2 decimals is `0.00`; `-0.0` is `0`). NaN gives `nan`, infinities `inf` / `-inf`
/// (the protocol never sends them, but this never panics). Values with
/// `|x| · 10^decimals ≥ 10^19` (e.g. beyond 1e10 at 9 decimals) do not have a
/// fixed-point form here and are written as by [`format_f32_roundtrip`].
///
/// ```
/// # use matterwave_core::console::num::format_f32;
/// let mut buf = [0u8; 24];
/// assert_eq!(format_f32(-12.5, 3, &mut buf), "-12.500");
/// assert_eq!(format_f32(0.5, 0, &mut buf), "0");   // tie to even
/// assert_eq!(format_f32(1.5, 0, &mut buf), "2");
/// assert_eq!(format_f32(-0.0, 1, &mut buf), "0.0");
/// assert_eq!(format_f32(f32::NAN, 1, &mut buf), "nan");
/// assert_eq!(format_f32(3.0e20, 2, &mut buf), "3e20");
/// ```
pub fn format_f32(x: f32, decimals: u8, buf: &mut NumBuf) -> &str {
    let d = u32::from(decimals.min(MAX_DECIMALS));
    // Non-finite values and values without a fixed-point form here.
    let Some(q) = x.is_finite().then(|| scaled_round(x, d)).flatten() else {
        return format_f32_roundtrip(x, buf);
    };
    let mut out = Out::new(buf);
    let mut digits = [0u8; 20];
    let n = u64_digits(q, &mut digits);
    let d = d as usize;
    if q != 0 && x.is_sign_negative() {
        out.push(b'-');
    }
    // Pad with leading zeros to at least d + 1 digits.
    let width = n.max(d + 1);
    let pad = width - n;
    for i in 0..width {
        if i == width - d && d > 0 {
            out.push(b'.');
        }
        let digit = if i < pad {
            b'0'
        } else {
            digits.get(i - pad).copied().unwrap_or(b'0')
        };
        out.push(digit);
    }
    let len = out.len;
    text(buf, len)
}

/// Exact powers of ten representable in f64.
const POW10_F64: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
];

/// `10^n` in f64 for n ≥ 0 (exact to n = 22, within a few ulp beyond).
fn pow10_f64(n: u32) -> f64 {
    let mut r = 1.0f64;
    let mut n = n.min(400) as usize;
    while n > 22 {
        r *= 1e22;
        n -= 22;
    }
    r * POW10_F64.get(n).copied().unwrap_or(1.0)
}

/// The `p` significant digits of `a > 0` as an integer in `10^(p-1)..10^p`, and the
/// decimal exponent `k` of the first digit (`a ≈ digits · 10^(k-p+1)`). Computed in f64,
/// whose 53 bits carry the 24-bit `f32` value exactly and leave the few rounding steps
/// far below the 9th significant digit.
fn significant_digits(a: f32, p: u32) -> (u64, i32) {
    let (m, e) = decompose(a);
    // Position of m's highest set bit (m > 0 as a ≠ 0): a ∈ [2^b, 2^(b+1)).
    let top_bit = 63 - m.leading_zeros() as i32;
    let binary_exp = e + top_bit;
    // floor(binary_exp · log10 2) via 1233/4096; off by at most one, fixed below.
    let mut k = (binary_exp * 1233) >> 12;
    let lo = pow10_u64(p.saturating_sub(1)).unwrap_or(1);
    let hi = pow10_u64(p).unwrap_or(u64::MAX);
    let ax = f64::from(a);
    let mut q = 0u64;
    for _ in 0..4 {
        let s = p as i32 - 1 - k;
        let y = if s >= 0 {
            ax * pow10_f64(s.unsigned_abs())
        } else {
            ax / pow10_f64(s.unsigned_abs())
        };
        // y < 10^10 here, well inside u64; `as` saturates on anything else.
        q = libm::round(y) as u64;
        if q >= hi {
            k += 1;
        } else if q < lo {
            k -= 1;
        } else {
            break;
        }
    }
    (q.clamp(lo, hi.saturating_sub(1)), k)
}

/// Write `±digits×10^k` (digits already stripped of trailing zeros) in fixed notation if
/// -4 ≤ k ≤ 6, else as `d.ddde±k`.
fn write_decimal(out: &mut Out<'_>, negative: bool, digits: &[u8], k: i32) {
    if negative {
        out.push(b'-');
    }
    let n = digits.len() as i32;
    if (-4..=6).contains(&k) {
        if k >= 0 {
            for i in 0..=k {
                out.push(digits.get(i as usize).copied().unwrap_or(b'0'));
            }
            if n > k + 1 {
                out.push(b'.');
                out.push_all(digits.get((k + 1) as usize..).unwrap_or(&[]));
            }
        } else {
            out.push_all(b"0.");
            for _ in 0..(-k - 1) {
                out.push(b'0');
            }
            out.push_all(digits);
        }
    } else {
        let (first, rest) = digits.split_first().unwrap_or((&b'0', &[]));
        out.push(*first);
        if !rest.is_empty() {
            out.push(b'.');
            out.push_all(rest);
        }
        out.push(b'e');
        if k < 0 {
            out.push(b'-');
        }
        let mut exp_digits = [0u8; 20];
        let m = u64_digits(u64::from(k.unsigned_abs()), &mut exp_digits);
        out.push_all(exp_digits.get(..m).unwrap_or(&[]));
    }
}

/// Format `x` as a short decimal that parses back (with [`parse_f32`] or Rust's
/// `str::parse`) to exactly the same `f32`.
///
/// Guarantee: for every finite `x`, the text has at most 9 significant digits and
/// round-trips exactly (9 significant digits always suffice for `f32`). Method: the
/// value is rounded (in f64, which holds the `f32` exactly) to 6, 7, 8 and then 9
/// significant digits (1 to 9 for subnormals) and the first that round-trips is kept,
/// trailing zeros removed — so the result is the shortest possible whenever a
/// representation of 6 or fewer significant digits exists, and short otherwise (over
/// a million random bit patterns in the tests it was always the shortest, but that is
/// not a guarantee for 7 to 9 digits). Notation is fixed point for 1e-4 ≤ |x| < 1e7 (`0.00015`, `1234567`,
/// `-2.5`) and scientific outside (`1.5e-7`, `3.4028235e38`). Zero (either sign) is
/// `0`; NaN and infinities are `nan`, `inf`, `-inf`.
///
/// ```
/// # use matterwave_core::console::num::format_f32_roundtrip;
/// let mut buf = [0u8; 24];
/// assert_eq!(format_f32_roundtrip(-2.5, &mut buf), "-2.5");
/// assert_eq!(format_f32_roundtrip(1.0e7, &mut buf), "1e7");
/// assert_eq!(format_f32_roundtrip(f32::MAX, &mut buf), "3.4028235e38");
/// assert_eq!(format_f32_roundtrip(16_777_217.0, &mut buf), "1.6777216e7");
/// let s = format_f32_roundtrip(0.1 + 0.2, &mut buf);
/// assert_eq!(s.parse::<f32>(), Ok(0.1f32 + 0.2));
/// ```
pub fn format_f32_roundtrip(x: f32, buf: &mut NumBuf) -> &str {
    let mut out = Out::new(buf);
    if non_finite(x, &mut out).is_some() {
        let len = out.len;
        return text(buf, len);
    }
    if x == 0.0 {
        out.push(b'0');
        let len = out.len;
        return text(buf, len);
    }
    let a = x.abs();
    let mut len = 0;
    // With a normal f32's 24-bit precision, a representation of ≤ 6 significant digits
    // is also the correctly rounded 6-digit one; subnormals have less precision, so
    // they try every length.
    let first = if a < f32::MIN_POSITIVE { 1 } else { 6 };
    for p in first..=9u32 {
        let (q, k) = significant_digits(a, p);
        let mut digits = [0u8; 20];
        let n = u64_digits(q, &mut digits);
        let mut used = n;
        while used > 1 && digits.get(used - 1) == Some(&b'0') {
            used -= 1;
        }
        let mut out = Out::new(&mut buf[..]);
        write_decimal(&mut out, x < 0.0, digits.get(..used).unwrap_or(&[]), k);
        len = out.len;
        if text(buf, len).parse::<f32>() == Ok(x) {
            break;
        }
    }
    text(buf, len)
}

/// Format an `i32` in decimal (`i32::MIN` included).
///
/// ```
/// # use matterwave_core::console::num::format_i32;
/// let mut buf = [0u8; 24];
/// assert_eq!(format_i32(-42, &mut buf), "-42");
/// assert_eq!(format_i32(0, &mut buf), "0");
/// ```
pub fn format_i32(x: i32, buf: &mut NumBuf) -> &str {
    let mut out = Out::new(buf);
    if x < 0 {
        out.push(b'-');
    }
    let mut digits = [0u8; 20];
    let n = u64_digits(u64::from(x.unsigned_abs()), &mut digits);
    out.push_all(digits.get(..n).unwrap_or(&[]));
    let len = out.len;
    text(buf, len)
}

#[cfg(test)]
mod tests;
