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

mod decimal;

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
/// The result is the nearest `f32` to the decimal value (correct rounding, ties to
/// even, as Rust's `str::parse`), after a strict syntax check, by the module's own
/// exact routine (`decimal.rs`: an `f32` estimate corrected by exact integer
/// comparisons), a small fraction of the flash `core`'s parser takes. Rejected: empty text, a lone sign,
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
    let (negative, body) = split_sign(bytes);
    for word in [&b"nan"[..], b"inf", b"infinity"] {
        if body.eq_ignore_ascii_case(word) {
            return Err(NumError::NotFinite);
        }
    }
    if !is_decimal_syntax(body) {
        return Err(NumError::Syntax);
    }
    let value = decimal::to_f32(body).ok_or(NumError::OutOfRange)?;
    if value == 0.0 {
        return Ok(0.0);
    }
    Ok(if negative { -value } else { value })
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
        // Below 2^32 the hardware's 32-bit divide does it (a u64 division is a library
        // call on 32-bit targets).
        let (q, r) = match u32::try_from(v) {
            Ok(w) => (u64::from(w / 10), w % 10),
            Err(_) => (v / 10, (v % 10) as u32),
        };
        if let Some(slot) = tmp.get_mut(n) {
            *slot = b'0' + r as u8;
        }
        n += 1;
        v = q;
        if v == 0 || n >= tmp.len() {
            break;
        }
    }
    for (dst, src) in digits.iter_mut().zip(tmp.iter().take(n).rev()) {
        *dst = *src;
    }
    n
}

/// `10^n` for n ≤ 19, the largest power of ten below 2^64.
const POW10_U64: [u64; 20] = [
    1,
    10,
    100,
    1_000,
    10_000,
    100_000,
    1_000_000,
    10_000_000,
    100_000_000,
    1_000_000_000,
    10_000_000_000,
    100_000_000_000,
    1_000_000_000_000,
    10_000_000_000_000,
    100_000_000_000_000,
    1_000_000_000_000_000,
    10_000_000_000_000_000,
    100_000_000_000_000_000,
    1_000_000_000_000_000_000,
    10_000_000_000_000_000_000,
];

/// `10^n` for n ≤ 9, the powers of ten below 2^32.
const POW10_U32: [u32; 10] = [
    1,
    10,
    100,
    1_000,
    10_000,
    100_000,
    1_000_000,
    10_000_000,
    100_000_000,
    1_000_000_000,
];

/// `10^n` as u64 for n ≤ 19 (a table look-up).
fn pow10_u64(n: u32) -> Option<u64> {
    POW10_U64.get(n as usize).copied()
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
    let len = write_f32(x, decimals, buf).unwrap_or(0);
    text(buf, len)
}

/// [`format_f32`] written to the front of `dst` (printable ASCII); the length, or
/// `None` (nothing usable written) when it does not fit. The digits are written in
/// place from the right, with 32-bit division where the scaled value allows.
pub fn write_f32(x: f32, decimals: u8, dst: &mut [u8]) -> Option<usize> {
    let d = usize::from(decimals.min(MAX_DECIMALS));
    // Non-finite values and values without a fixed-point form here.
    let Some(q) = x.is_finite().then(|| scaled_round(x, d as u32)).flatten() else {
        return write_f32_roundtrip(x, dst);
    };
    let negative = q != 0 && x.is_sign_negative();
    // q < 10^19: the first power of ten above it gives the digit count (32-bit
    // comparisons for the usual magnitudes).
    let n = match u32::try_from(q) {
        Ok(w) => POW10_U32.iter().position(|&p| p > w).unwrap_or(10),
        Err(_) => POW10_U64.iter().position(|&p| p > q).unwrap_or(19),
    }
    .max(1);
    // At least d + 1 digits: leading zeros pad.
    let width = n.max(d + 1);
    let len = usize::from(negative) + width + usize::from(d > 0);
    let out = dst.get_mut(..len)?;
    let mut v = q;
    let mut written = 0;
    for (i, slot) in out.iter_mut().rev().enumerate() {
        *slot = if d > 0 && i == d {
            b'.'
        } else if written < width {
            written += 1;
            let (rest, digit) = match u32::try_from(v) {
                Ok(w) => (u64::from(w / 10), w % 10),
                Err(_) => (v / 10, (v % 10) as u32),
            };
            v = rest;
            b'0' + digit as u8
        } else {
            b'-'
        };
    }
    Some(len)
}

/// [`format_f32_roundtrip`] written to the front of `dst`; the length, or `None` when it
/// does not fit.
pub fn write_f32_roundtrip(x: f32, dst: &mut [u8]) -> Option<usize> {
    let mut nb: NumBuf = [0; NUM_BUF_LEN];
    copy_to(format_f32_roundtrip(x, &mut nb).as_bytes(), dst)
}

/// [`format_i32`] written to the front of `dst`; the length, or `None` when it does not
/// fit.
pub fn write_i32(x: i32, dst: &mut [u8]) -> Option<usize> {
    let mut nb: NumBuf = [0; NUM_BUF_LEN];
    copy_to(format_i32(x, &mut nb).as_bytes(), dst)
}

/// `src` copied to the front of `dst`: its length, or `None` when it does not fit.
fn copy_to(src: &[u8], dst: &mut [u8]) -> Option<usize> {
    let out = dst.get_mut(..src.len())?;
    out.copy_from_slice(src);
    Some(src.len())
}

/// Unsigned integers for the exact digit generation of [`shortest_digits`]: `u64` for
/// the magnitudes the protocol sends (checked, so an overflow falls back), and the
/// 192-bit [`Big`] for every other finite `f32`.
trait Nat: Copy + PartialOrd {
    fn from_u64(v: u64) -> Self;
    /// `self · 2^n`; `None` on overflow.
    fn shl(self, n: u32) -> Option<Self>;
    /// `self · k`; `None` on overflow.
    fn mul(self, k: u32) -> Option<Self>;
    /// `self + o`; `None` on overflow.
    fn add(self, o: Self) -> Option<Self>;
    /// `self − o` for `self ≥ o`.
    fn sub(self, o: Self) -> Self;
}

impl Nat for u64 {
    fn from_u64(v: u64) -> Self {
        v
    }
    fn shl(self, n: u32) -> Option<Self> {
        (n < 64 && self.leading_zeros() >= n).then(|| self << n)
    }
    fn mul(self, k: u32) -> Option<Self> {
        self.checked_mul(u64::from(k))
    }
    fn add(self, o: Self) -> Option<Self> {
        self.checked_add(o)
    }
    fn sub(self, o: Self) -> Self {
        self.wrapping_sub(o)
    }
}

/// A 192-bit unsigned integer, little-endian 32-bit limbs: room for every value the
/// digit generation of an `f32` needs (below 2^160).
#[derive(Clone, Copy, PartialEq, Eq)]
struct Big([u32; 6]);

impl PartialOrd for Big {
    fn partial_cmp(&self, o: &Self) -> Option<core::cmp::Ordering> {
        // Most significant limb first.
        Some(self.0.iter().rev().cmp(o.0.iter().rev()))
    }
}

impl Nat for Big {
    fn from_u64(v: u64) -> Self {
        Big([v as u32, (v >> 32) as u32, 0, 0, 0, 0])
    }
    fn shl(self, n: u32) -> Option<Self> {
        let (words, bits) = ((n / 32) as usize, n % 32);
        let mut out = [0u32; 6];
        for (i, &w) in self.0.iter().enumerate() {
            if w == 0 {
                continue;
            }
            let wide = u64::from(w) << bits;
            for (j, part) in [
                (i + words, wide as u32),
                (i + words + 1, (wide >> 32) as u32),
            ] {
                if part != 0 {
                    *out.get_mut(j)? |= part;
                }
            }
        }
        Some(Big(out))
    }
    fn mul(self, k: u32) -> Option<Self> {
        let mut out = [0u32; 6];
        let mut carry = 0u64;
        for (o, &w) in out.iter_mut().zip(self.0.iter()) {
            let v = u64::from(w) * u64::from(k) + carry;
            *o = v as u32;
            carry = v >> 32;
        }
        (carry == 0).then_some(Big(out))
    }
    fn add(self, o: Self) -> Option<Self> {
        let mut out = [0u32; 6];
        let mut carry = 0u64;
        for ((r, &a), &b) in out.iter_mut().zip(self.0.iter()).zip(o.0.iter()) {
            let v = u64::from(a) + u64::from(b) + carry;
            *r = v as u32;
            carry = v >> 32;
        }
        (carry == 0).then_some(Big(out))
    }
    fn sub(self, o: Self) -> Self {
        let mut out = [0u32; 6];
        let mut borrow = 0i64;
        for ((r, &a), &b) in out.iter_mut().zip(self.0.iter()).zip(o.0.iter()) {
            let v = i64::from(a) - i64::from(b) - borrow;
            *r = v as u32;
            borrow = i64::from(v < 0);
        }
        Big(out)
    }
}

/// `v · 10^n`.
fn mul_pow10<N: Nat>(mut v: N, mut n: u32) -> Option<N> {
    while n >= 9 {
        v = v.mul(1_000_000_000)?;
        n -= 9;
    }
    v.mul(10u32.pow(n))
}

/// The shortest decimal digits that read back as `a` (a finite `f32` > 0; the
/// nearest to `a` among those of that length): `(digits, count, k)` with
/// `a ≈ 0.d1d2…dn · 10^k`. Exact integer arithmetic (Steele and White's free-format
/// method, as refined by Burger and Dybvig): `a = r/s`, the halfway points to the
/// neighbouring `f32` at `(r ± m)/s`, included when the mantissa is even (ties to even
/// when read back). `None` if a value overflows `N`.
fn shortest_digits<N: Nat>(a: f32) -> Option<([u8; 12], usize, i32)> {
    let bits = a.to_bits();
    let biased = (bits >> 23) & 0xFF;
    let (m, e) = decompose(a);
    let even = m & 1 == 0;
    // The lower neighbour is nearer (half the spacing) at a power of two above the
    // smallest normal binade.
    let asym = m == 1 << 23 && biased > 1;
    let (mut r, mut s, mut mp, mut mm);
    if e >= 0 {
        let be = e.unsigned_abs();
        let unit = N::from_u64(1).shl(be)?;
        if asym {
            r = N::from_u64(m).shl(be + 2)?;
            s = N::from_u64(4);
            mp = unit.shl(1)?;
        } else {
            r = N::from_u64(m).shl(be + 1)?;
            s = N::from_u64(2);
            mp = unit;
        }
        mm = unit;
    } else if asym {
        r = N::from_u64(m << 2);
        s = N::from_u64(1).shl(2 + e.unsigned_abs())?;
        mp = N::from_u64(2);
        mm = N::from_u64(1);
    } else {
        r = N::from_u64(m << 1);
        s = N::from_u64(1).shl(1 + e.unsigned_abs())?;
        mp = N::from_u64(1);
        mm = N::from_u64(1);
    }
    // k: a ∈ [2^b, 2^(b+1)); start from an estimate of ⌊b·log10 2⌋ − 1, never too high,
    // and raise it until the upper halfway point lies below 10^k.
    let top_bit = 63 - m.leading_zeros() as i32;
    let b = e + top_bit;
    let mut k = ((b * 1233) >> 12) - 1;
    if k >= 0 {
        s = mul_pow10(s, k.unsigned_abs())?;
    } else {
        let n = k.unsigned_abs();
        r = mul_pow10(r, n)?;
        mp = mul_pow10(mp, n)?;
        mm = mul_pow10(mm, n)?;
    }
    loop {
        let high = r.add(mp)?;
        if (even && high >= s) || (!even && high > s) {
            s = s.mul(10)?;
            k += 1;
        } else {
            break;
        }
    }
    let mut digits = [0u8; 12];
    let mut n = 0usize;
    loop {
        r = r.mul(10)?;
        mp = mp.mul(10)?;
        mm = mm.mul(10)?;
        let mut d = 0u8;
        while r >= s {
            r = r.sub(s);
            d += 1;
        }
        let high_sum = r.add(mp)?;
        let low = if even { r <= mm } else { r < mm };
        let high = if even { high_sum >= s } else { high_sum > s };
        let last = match (low, high) {
            (false, false) => None,
            (true, false) => Some(d),
            (false, true) => Some(d + 1),
            (true, true) => {
                // Both neighbours read back: the nearer one (2r against s); a tie goes
                // up, as Rust's own formatting (and rounding half away from zero) does.
                let twice = r.mul(2)?;
                if twice < s {
                    Some(d)
                } else {
                    Some(d + 1)
                }
            }
        };
        let slot = digits.get_mut(n)?;
        *slot = last.unwrap_or(d);
        n += 1;
        if last.is_some() {
            break;
        }
    }
    // A last digit rounded up to 10 carries into the digits before it.
    let mut i = n;
    while i > 0 && digits.get(i - 1) == Some(&10) {
        if let Some(dd) = digits.get_mut(i - 1) {
            *dd = 0;
        }
        i -= 1;
        match i.checked_sub(1).and_then(|j| digits.get_mut(j)) {
            Some(prev) => *prev += 1,
            None => {
                // Every digit carried: 0.99… became 1.0.
                digits = [0u8; 12];
                if let Some(first) = digits.first_mut() {
                    *first = 1;
                }
                n = 1;
                k += 1;
                break;
            }
        }
    }
    for d in digits.iter_mut().take(n) {
        *d += b'0';
    }
    Some((digits, n, k))
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

/// Format `x` as the shortest decimal that parses back (with [`parse_f32`] or Rust's
/// `str::parse`) to exactly the same `f32`.
///
/// Guarantee: for every finite `x`, the text has the fewest significant digits (at
/// most 9) of any decimal that reads back as `x`, and of those the one nearest to `x`.
/// Method: exact integer digit generation (no floating point, no parse-back); 64-bit
/// arithmetic for the usual magnitudes, 192-bit beyond. Notation is fixed point for
/// 1e-4 ≤ |x| < 1e7 (`0.00015`, `1234567`, `-2.5`) and scientific outside (`1.5e-7`,
/// `3.4028235e38`). Zero (either sign) is `0`; NaN and infinities are `nan`, `inf`,
/// `-inf`.
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
    let (digits, n, k) = shortest_digits::<u64>(a)
        .or_else(|| shortest_digits::<Big>(a))
        .unwrap_or(([b'0'; 12], 1, 1));
    write_decimal(
        &mut out,
        x < 0.0,
        digits.get(..n).unwrap_or(&[]),
        k.saturating_sub(1),
    );
    let len = out.len;
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
