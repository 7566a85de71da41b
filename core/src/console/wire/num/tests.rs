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
