//! Decimal text → the nearest `f32` (correct rounding, ties to even), small enough for
//! a controller's flash: no tables of powers, a few small integer routines instead of
//! `core`'s `dec2flt` (about 15 KB on a Cortex-M4F).
//!
//! Method. The significant digits D (at most [`KEEP`] of them, and whether any dropped
//! one is nonzero) and the decimal exponent k give the value V = D·10^k (a little more
//! when digits were dropped). When D < 2^24 and |k| ≤ 10, D and 10^|k| are exact
//! `f32`s and one IEEE multiplication or division rounds V correctly. Otherwise an
//! estimate from `f32` arithmetic is corrected by exact comparisons: V against
//! `f32` values m·2^q and against the points halfway between neighbours, both sides
//! scaled to integers ([`Nat`], up to 768 bits) — first the largest `f32` not above V,
//! by stepping and halving from the estimate, then which side of the halfway point
//! V lies on.
//!
//! Dropped digits: a point halfway between two adjacent `f32` is (2m + 1)·2^(q − 1)
//! with 2m + 1 < 2^25 and q − 1 ≥ −150, so its decimal expansion has at most
//! ⌈25·log10 2 + 150·log10 5⌉ = 113 significant digits (an `f32` value itself fewer).
//! Keeping [`KEEP`] = 120 ≥ 113 digits, such a point is a whole multiple of the unit of
//! D's last digit whenever it is not far from V, so comparing D·10^k with it decides the
//! comparison with V; a tie with dropped nonzero digits means V is above it.

use core::cmp::Ordering;

/// Significant digits kept (see the module docs for why 120 suffice).
const KEEP: usize = 120;

/// Limbs of [`Nat`]: 768 bits hold D·10^38·2^150 and (2^25)·10^165·2^104, the largest
/// products the comparisons form (V between 10^−46 and 10^39).
const LIMBS: usize = 24;

/// A natural number in little-endian 32-bit limbs, `len` of them in use.
#[derive(Clone, Copy)]
struct Nat {
    w: [u32; LIMBS],
    len: usize,
}

impl Nat {
    fn from_u32(v: u32) -> Nat {
        let mut w = [0u32; LIMBS];
        if let Some(first) = w.first_mut() {
            *first = v;
        }
        Nat {
            w,
            len: usize::from(v != 0),
        }
    }

    /// `self · k + add`; false on overflow (the value is then unusable).
    fn mul_add(&mut self, k: u32, add: u32) -> bool {
        let mut carry = u64::from(add);
        for limb in self.w.iter_mut().take(self.len) {
            let v = u64::from(*limb) * u64::from(k) + carry;
            *limb = v as u32;
            carry = v >> 32;
        }
        if carry != 0 {
            match self.w.get_mut(self.len) {
                Some(limb) => {
                    *limb = carry as u32;
                    self.len += 1;
                }
                None => return false,
            }
        }
        true
    }

    /// `self · 10^n`; false on overflow.
    fn mul_pow10(&mut self, mut n: u32) -> bool {
        while n >= 9 {
            if !self.mul_add(1_000_000_000, 0) {
                return false;
            }
            n -= 9;
        }
        self.mul_add(10u32.pow(n), 0)
    }

    /// `self · 2^n`; false on overflow.
    fn shl(&mut self, n: u32) -> bool {
        if self.len == 0 {
            return true;
        }
        let (words, bits) = ((n / 32) as usize, n % 32);
        let mut out = [0u32; LIMBS];
        for (i, &limb) in self.w.iter().enumerate().take(self.len) {
            let wide = u64::from(limb) << bits;
            for (j, part) in [
                (i + words, wide as u32),
                (i + words + 1, (wide >> 32) as u32),
            ] {
                if part != 0 {
                    match out.get_mut(j) {
                        Some(slot) => *slot |= part,
                        None => return false,
                    }
                }
            }
        }
        self.w = out;
        self.len = out.iter().rposition(|&l| l != 0).map_or(0, |i| i + 1);
        true
    }

    fn cmp(&self, o: &Nat) -> Ordering {
        self.len.cmp(&o.len).then_with(|| {
            let a = self.w.iter().take(self.len).rev();
            let b = o.w.iter().take(o.len).rev();
            a.cmp(b)
        })
    }
}

/// The parsed decimal: V = D·10^k (D from `digits`), `sticky` when dropped digits
/// were nonzero.
struct Decimal {
    digits: [u8; KEEP],
    n: usize,
    k: i32,
    sticky: bool,
}

impl Decimal {
    /// Reads `digits [. digits] [e|E [sign] digits]` (the syntax is checked before).
    fn read(b: &[u8]) -> Decimal {
        let mut d = Decimal {
            digits: [0; KEEP],
            n: 0,
            k: 0,
            sticky: false,
        };
        let mut frac = false;
        let mut rest = b;
        while let Some((&c, tail)) = rest.split_first() {
            match c {
                b'0'..=b'9' => {
                    let v = c - b'0';
                    if d.n == 0 && v == 0 {
                        // A leading zero: after the point it shifts the digits down.
                        if frac {
                            d.k = d.k.saturating_sub(1);
                        }
                    } else if let Some(slot) = d.digits.get_mut(d.n) {
                        *slot = v;
                        d.n += 1;
                        if frac {
                            d.k = d.k.saturating_sub(1);
                        }
                    } else {
                        d.sticky |= v != 0;
                        if !frac {
                            d.k = d.k.saturating_add(1);
                        }
                    }
                }
                b'.' => frac = true,
                _ => {
                    d.k = d.k.saturating_add(exponent(tail));
                    break;
                }
            }
            rest = tail;
        }
        d
    }

    /// D as a [`Nat`].
    fn nat(&self) -> Nat {
        let mut x = Nat::from_u32(0);
        for chunk in self.digits.get(..self.n).unwrap_or(&[]).chunks(9) {
            let mut v = 0u32;
            for &c in chunk {
                v = v * 10 + u32::from(c);
            }
            // At most 120 digits: far below 768 bits.
            let _ = x.mul_add(10u32.pow(chunk.len() as u32), v);
        }
        x
    }

    /// The first (up to) nine digits as an integer, and how many they are.
    fn lead(&self) -> (u32, usize) {
        let m = self.n.min(9);
        let v = self
            .digits
            .iter()
            .take(m)
            .fold(0u32, |a, &c| a * 10 + u32::from(c));
        (v, m)
    }
}

/// The exponent after `e`/`E`: an optional sign and digits, saturated at ±10^6.
fn exponent(b: &[u8]) -> i32 {
    let (neg, digits) = match b.split_first() {
        Some((b'-', r)) => (true, r),
        Some((b'+', r)) => (false, r),
        _ => (false, b),
    };
    let mut e = 0i32;
    for &c in digits {
        e = (e * 10 + i32::from(c.wrapping_sub(b'0'))).min(1_000_000);
    }
    if neg {
        -e
    } else {
        e
    }
}

/// `10^n` as an exact `f32` for n ≤ 10.
const POW10_F32: [f32; 11] = [1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10];

/// Exact comparisons of V with dyadic numbers m·2^q.
struct Exact {
    /// D·10^max(k, 0).
    a: Nat,
    /// 10^max(−k, 0).
    p: Nat,
    sticky: bool,
}

impl Exact {
    /// V against m·2^q.
    fn cmp(&self, m: u32, q: i32) -> Ordering {
        let mut a = self.a;
        let mut b = self.p;
        let a_ok = a.shl((-q).max(0).unsigned_abs());
        let b_ok = b.mul_add(m, 0) && b.shl(q.max(0).unsigned_abs());
        let ord = match (a_ok, b_ok) {
            (true, true) => a.cmp(&b),
            (false, true) => Ordering::Greater,
            (true, false) => Ordering::Less,
            (false, false) => Ordering::Equal,
        };
        if ord == Ordering::Equal && self.sticky {
            Ordering::Greater
        } else {
            ord
        }
    }

    /// V against the positive `f32` with bits `bits` (≤ the largest finite one).
    fn cmp_bits(&self, bits: u32) -> Ordering {
        let (m, q) = parts(bits);
        self.cmp(m, q)
    }
}

/// `m · 2^q` of the positive `f32` with bits `bits` (m < 2^24).
fn parts(bits: u32) -> (u32, i32) {
    let biased = (bits >> 23) as i32;
    let fraction = bits & 0x007F_FFFF;
    if biased == 0 {
        (fraction, -149)
    } else {
        (fraction | 0x0080_0000, biased - 150)
    }
}

/// Bits of the largest finite `f32`.
const MAX_BITS: u32 = 0x7F7F_FFFF;

/// The magnitude of the decimal in `b` (syntax checked, sign removed) rounded to the
/// nearest `f32`, ties to even; `None` when it rounds beyond the largest finite `f32`.
pub(super) fn to_f32(b: &[u8]) -> Option<f32> {
    let d = Decimal::read(b);
    if d.n == 0 {
        return Some(0.0);
    }
    // V lies in [10^(p−1), 10^p).
    let p = d.k.saturating_add(d.n as i32);
    if p > 39 {
        return None; // V ≥ 10^39, beyond f32::MAX and half an ulp
    }
    if p < -45 {
        return Some(0.0); // V < 10^−46, below half the smallest subnormal
    }
    let (lead, used) = d.lead();
    if d.n == used && lead < 1 << 24 && (-10..=10).contains(&d.k) {
        // D and 10^|k| are exact: one correctly rounded operation.
        let pow = POW10_F32
            .get(d.k.unsigned_abs() as usize)
            .copied()
            .unwrap_or(1.0);
        let v = lead as f32;
        return Some(if d.k >= 0 { v * pow } else { v / pow });
    }
    // An estimate within a few ulps (normal range), then exact corrections.
    let mut est = lead as f32;
    let mut scale = d.k.saturating_add((d.n - used) as i32);
    while scale > 0 {
        let s = scale.min(10);
        est *= POW10_F32.get(s as usize).copied().unwrap_or(1.0);
        scale -= s;
    }
    while scale < 0 {
        let s = (-scale).min(10);
        est /= POW10_F32.get(s as usize).copied().unwrap_or(1.0);
        scale += s;
    }
    let mut a = d.nat();
    let mut p10 = Nat::from_u32(1);
    // Within the bounds above both fit (see LIMBS).
    let _ = a.mul_pow10(d.k.max(0).unsigned_abs());
    let _ = p10.mul_pow10((-d.k).max(0).unsigned_abs());
    let x = Exact {
        a,
        p: p10,
        sticky: d.sticky,
    };
    let start = est.to_bits().min(MAX_BITS);
    // lo: an f32 ≤ V; hi: one above V (MAX_BITS + 1 stands for the first beyond).
    let (mut lo, mut hi);
    if x.cmp_bits(start) != Ordering::Less {
        lo = start;
        let mut step = 1u32;
        loop {
            let next = lo.saturating_add(step);
            if next > MAX_BITS {
                hi = MAX_BITS + 1;
                break;
            }
            if x.cmp_bits(next) == Ordering::Less {
                hi = next;
                break;
            }
            lo = next;
            step = step.saturating_mul(2);
        }
    } else {
        hi = start;
        let mut step = 1u32;
        loop {
            let next = hi.saturating_sub(step);
            if next == 0 || x.cmp_bits(next) != Ordering::Less {
                lo = next;
                break;
            }
            hi = next;
            step = step.saturating_mul(2);
        }
    }
    while hi - lo > 1 {
        let mid = lo + (hi - lo) / 2;
        if x.cmp_bits(mid) == Ordering::Less {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    // V in [f32(lo), f32(lo + 1)): the nearer, ties to the even mantissa.
    let (m, q) = parts(lo);
    let bits = match x.cmp(2 * m + 1, q - 1) {
        Ordering::Less => lo,
        Ordering::Greater => lo + 1,
        Ordering::Equal => lo + (lo & 1),
    };
    (bits <= MAX_BITS).then(|| f32::from_bits(bits))
}
