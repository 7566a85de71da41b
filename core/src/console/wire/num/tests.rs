//! Unit tests of the module.

use super::*;

#[test]
fn parse_accepts() {
    for (s, v) in [
        ("0", 0.0f32),
        ("1", 1.0),
        ("-12.5", -12.5),
        ("+12.5", 12.5),
        ("3e2", 300.0),
        ("3E+2", 300.0),
        ("2.5e-1", 0.25),
        (".5", 0.5),
        ("5.", 5.0),
        ("5.e1", 50.0),
        ("-.5e1", -5.0),
        ("007.50", 7.5),
        ("3.4028235e38", f32::MAX),
        ("1e-45", 1e-45),
        ("1e-60", 0.0),
    ] {
        assert_eq!(parse_f32(s), Ok(v), "{s}");
    }
    assert_eq!(parse_f32("-0.0").map(f32::to_bits), Ok(0));
    assert_eq!(parse_f32("-0e5").map(f32::to_bits), Ok(0));
}

#[test]
fn parse_rejects() {
    for s in [
        "nan",
        "NaN",
        "-nan",
        "inf",
        "+INF",
        "-inf",
        "Infinity",
        "-iNfInItY",
    ] {
        assert_eq!(parse_f32(s), Err(NumError::NotFinite), "{s}");
    }
    for s in [
        "+", "-", ".", "+.", "e5", ".e5", "1e", "1e+", "1e-", "1 ", " 1", "1 0", "0x10", "1_000",
        "1..2", "1.2.3", "--1", "+-1", "1e5.0", "infinit", "nanx", "1,5", "١", "1e\u{0}", "\t1",
    ] {
        assert_eq!(parse_f32(s), Err(NumError::Syntax), "{s:?}");
    }
    assert_eq!(parse_f32(""), Err(NumError::Empty));
    for s in ["1e39", "-1e39", "3.5e38", "1e99999999999999999999"] {
        assert_eq!(parse_f32(s), Err(NumError::OutOfRange), "{s}");
    }
}

#[test]
fn parse_ints() {
    assert_eq!(parse_i32("0"), Ok(0));
    assert_eq!(parse_i32("-0"), Ok(0));
    assert_eq!(parse_i32("2147483647"), Ok(i32::MAX));
    assert_eq!(parse_i32("-2147483648"), Ok(i32::MIN));
    assert_eq!(parse_i32("0000000000002147483647"), Ok(i32::MAX));
    for s in ["2147483648", "-2147483649", "99999999999999999999"] {
        assert_eq!(parse_i32(s), Err(NumError::OutOfRange), "{s}");
    }
    for s in ["+", "-", "1e3", "1.0", " 1", "0x1", "1-"] {
        assert_eq!(parse_i32(s), Err(NumError::Syntax), "{s}");
    }
    assert_eq!(parse_i32(""), Err(NumError::Empty));
}

#[test]
fn fixed_point() {
    let mut buf = [0u8; 24];
    for (x, d, want) in [
        (0.0f32, 0u8, "0"),
        (0.0, 3, "0.000"),
        (1.0, 2, "1.00"),
        (-1.0, 0, "-1"),
        (0.125, 2, "0.12"), // exact tie → even
        (0.375, 2, "0.38"), // exact tie → even
        (2.5, 0, "2"),
        (3.5, 0, "4"),
        (0.1, 9, "0.100000001"), // 0.1f32 = 0.100000001490116…
        (-0.004, 2, "0.00"),
        (-0.006, 2, "-0.01"),
        (123_456.79, 3, "123456.789"), // nearest f32 is 123456.7890625
        (9.9999, 2, "10.00"),
        (16777216.0, 1, "16777216.0"),
        (1.0e-45, 9, "0.000000000"),
        (f32::INFINITY, 2, "inf"),
        (f32::NEG_INFINITY, 2, "-inf"),
        (1.5, 200, "1.500000000"), // clamped to 9
    ] {
        assert_eq!(format_f32(x, d, &mut buf), want, "{x} {d}");
    }
    // The largest fixed-point outputs still fit (expected text from Rust's `{:.9}` / `{:.0}`).
    assert_eq!(format_f32(-9.999e9, 9, &mut buf), "-9998999552.000000000");
    assert_eq!(format_f32(-9.0e18, 0, &mut buf), "-9000000202358128640");
    assert_eq!(format_f32(-f32::MAX, 9, &mut buf), "-3.4028235e38");
}

#[test]
fn roundtrip_examples() {
    let mut buf = [0u8; 24];
    for (x, want) in [
        (0.0f32, "0"),
        (-0.0, "0"),
        (1.0, "1"),
        (-1.0, "-1"),
        (0.1, "0.1"),
        (0.3, "0.3"),
        (123.456, "123.456"),
        (1.0e-4, "0.0001"),
        (9.9e-5, "9.9e-5"),
        (1234567.0, "1234567"),
        (1.0e7, "1e7"),
        (1.5e-7, "1.5e-7"),
        (f32::MAX, "3.4028235e38"),
        (f32::MIN_POSITIVE, "1.1754944e-38"),
        (1.0e-45, "1e-45"),
        (f32::NAN, "nan"),
    ] {
        assert_eq!(format_f32_roundtrip(x, &mut buf), want, "{x}");
    }
}

#[test]
fn roundtrip_sweep() {
    let mut buf = [0u8; 24];
    // A deterministic spread over every exponent, both signs, including subnormals.
    let mut bits = 1u32;
    for _ in 0..20_000 {
        bits = bits.wrapping_mul(1_664_525).wrapping_add(1_013_904_223);
        let x = f32::from_bits(bits);
        if !x.is_finite() {
            continue;
        }
        let s = format_f32_roundtrip(x, &mut buf);
        let back: f32 = s.parse().unwrap();
        assert_eq!(
            back.to_bits(),
            if x == 0.0 { 0 } else { x.to_bits() },
            "{s}"
        );
        assert_eq!(parse_f32(s).map(f32::to_bits), Ok(back.to_bits()));
    }
}

#[test]
fn integers() {
    let mut buf = [0u8; 24];
    assert_eq!(format_i32(0, &mut buf), "0");
    assert_eq!(format_i32(7, &mut buf), "7");
    assert_eq!(format_i32(-10, &mut buf), "-10");
    assert_eq!(format_i32(i32::MAX, &mut buf), "2147483647");
    assert_eq!(format_i32(i32::MIN, &mut buf), "-2147483648");
}

/// Against Rust's own float formatting (std, in tests only).
mod against_std {
    extern crate std;
    use super::*;
    use std::format;
    use std::string::{String, ToString};

    /// The significant digits and exponent of a `d.ddde±k` text.
    fn sci_parts(s: &str) -> (String, i32) {
        let (m, e) = s.split_once('e').unwrap_or((s, "0"));
        (m.replace(['.', '-'], ""), e.parse().unwrap())
    }

    #[test]
    fn roundtrip_is_the_shortest_nearest() {
        // Rust's `{:e}` writes the shortest digits that read back, nearest first.
        let mut buf = [0u8; 24];
        let mut bits = 7u32;
        let specials = [
            1.0e-45f32,
            f32::MIN_POSITIVE,
            f32::MAX,
            16_777_216.0,
            8.0,
            0.125,
        ];
        for i in 0..100_000 {
            bits = bits.wrapping_mul(1_664_525).wrapping_add(1_013_904_223);
            let x = specials.get(i).copied().unwrap_or(f32::from_bits(bits));
            if !x.is_finite() || x == 0.0 {
                continue;
            }
            let ours = format_f32_roundtrip(x, &mut buf).to_string();
            let back: f32 = ours.parse().unwrap();
            assert_eq!(back.to_bits(), x.to_bits(), "{ours}");
            let (want_digits, want_exp) = sci_parts(&format!("{:e}", x.abs()));
            let got = shortest_digits::<Big>(x.abs()).unwrap();
            let got_digits = core::str::from_utf8(&got.0[..got.1]).unwrap();
            assert_eq!(
                (got_digits, got.2 - 1),
                (want_digits.as_str(), want_exp),
                "{x:e}"
            );
            if let Some(fast) = shortest_digits::<u64>(x.abs()) {
                assert_eq!(fast, got, "{x:e}: u64 and 192-bit paths differ");
            }
        }
    }
}

/// The float parser against Rust's own, on many inputs.
mod parser {
    extern crate std;
    use super::*;
    use std::format;
    use std::string::{String, ToString};
    use std::vec::Vec;

    /// A small xorshift generator for the parser sweeps (no dependency).
    struct XorShift(u64);

    impl XorShift {
        fn next(&mut self) -> u64 {
            self.0 ^= self.0 << 13;
            self.0 ^= self.0 >> 7;
            self.0 ^= self.0 << 17;
            self.0
        }
        fn below(&mut self, n: u64) -> u64 {
            self.next() % n
        }
    }

    /// What `parse_f32` must give for a syntactically valid decimal: Rust's `str::parse`
    /// (correctly rounded, ties to even — the reference), infinities as `OutOfRange`,
    /// −0 as +0.
    fn rust_reference(s: &str) -> Result<u32, NumError> {
        let v: f32 = s.parse().expect("valid decimal");
        if v.is_infinite() {
            Err(NumError::OutOfRange)
        } else if v == 0.0 {
            Ok(0)
        } else {
            Ok(v.to_bits())
        }
    }

    #[test]
    fn parse_agrees_with_rust_on_random_decimals() {
        let mut r = XorShift(0x9e37_79b9_7f4a_7c15);
        let mut slow = 0;
        for _ in 0..200_000 {
            let long = r.below(10) == 0;
            let n = 1 + r.below(if long { 140 } else { 12 }) as usize;
            let mut s = String::new();
            if r.below(3) == 0 {
                s.push('-');
            }
            let point = r.below(n as u64 + 1) as usize;
            for i in 0..n {
                if i == point {
                    s.push('.');
                }
                s.push(char::from(b'0' + r.below(10) as u8));
            }
            if r.below(2) == 0 {
                s.push('e');
                s.push_str(&(r.below(100) as i64 - 55).to_string());
            }
            let digits = s.bytes().filter(u8::is_ascii_digit).count();
            if digits > 7 {
                slow += 1;
            }
            assert_eq!(parse_f32(&s).map(f32::to_bits), rust_reference(&s), "{s}");
        }
        assert!(slow > 10_000, "{slow} inputs beyond the fast path");
    }

    #[test]
    fn parse_rounds_halfway_points_to_even() {
        // The exact decimal expansion of the point halfway between two adjacent f32 (exact
        // in f64; at most 113 significant digits, so 120 in `{:.119e}` are exact), and the
        // same text nudged just below and above in its last digit.
        let mut r = XorShift(0x2545_f491_4f6c_dd1d);
        let mut bits: Vec<u32> = (0..20_000)
            .map(|_| (r.next() as u32) % 0x7F7F_FFFF)
            .collect();
        bits.extend([0, 1, 2, 0x007F_FFFF, 0x0080_0000, 0x7F7F_FFFE, 0x7F7F_FFFF]);
        for b in bits {
            let lo = f64::from(f32::from_bits(b));
            let hi = if b == 0x7F7F_FFFF {
                2f64.powi(128)
            } else {
                f64::from(f32::from_bits(b + 1))
            };
            let mid = (lo + hi) / 2.0;
            let exact = format!("{mid:.119e}");
            let (mant, exp) = exact.split_once('e').unwrap();
            let trimmed = mant.trim_end_matches('0');
            assert!(
                trimmed.len() < mant.len(),
                "{exact}: not exact in 120 digits"
            );
            for s in [
                exact.clone(),
                format!("{trimmed}e{exp}"),
                format!("{trimmed}1e{exp}"),
                format!("{mant}1e{exp}"),
            ] {
                assert_eq!(parse_f32(&s).map(f32::to_bits), rust_reference(&s), "{s}");
            }
            // Just below the halfway point: the last nonzero digit lowered by one, then
            // nines.
            let last = trimmed.len() - 1;
            let d = trimmed.as_bytes()[last];
            if d > b'1' && trimmed.contains('.') {
                let below = format!("{}{}999e{exp}", &trimmed[..last], char::from(d - 1));
                assert_eq!(
                    parse_f32(&below).map(f32::to_bits),
                    rust_reference(&below),
                    "{below}"
                );
            }
        }
    }

    #[test]
    fn parse_long_inputs_and_extremes() {
        let long_one = format!("0.{}1e1", "0".repeat(300));
        for s in [
            format!("1{}", "0".repeat(38)),
            format!("3{}", "0".repeat(38)),
            format!("34028235{}", "0".repeat(31)),
            format!("340282356779733661637539395458142568448{}", "0".repeat(3)),
            "340282356779733661637539395458142568447".to_string(),
            "340282356779733661637539395458142568448".to_string(),
            format!("{}1", "0".repeat(500)),
            format!("1.{}1", "0".repeat(500)),
            format!("9{}", "9".repeat(200)),
            long_one,
            "7.006492321624085e-46".to_string(),
            "7.006492321624086e-46".to_string(),
            "1.401298464324817e-45".to_string(),
            "1.1754942e-38".to_string(),
            "1.17549435e-38".to_string(),
            "0.000000000000000000000000000000000000000000001".to_string(),
            "16777217".to_string(),
            "16777219".to_string(),
            "1e-10".to_string(),
            "123456789e-20".to_string(),
            "1e99999999999999999999".to_string(),
            "1e-99999999999999999999".to_string(),
        ] {
            assert_eq!(parse_f32(&s).map(f32::to_bits), rust_reference(&s), "{s}");
        }
    }
}
