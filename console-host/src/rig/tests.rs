//! Unit tests of rig files.

use super::*;

const GOOD: &str = include_str!("../../../docs/rigs/bench-b.toml");

fn with(from: &str, to: &str) -> String {
    assert!(GOOD.contains(from), "example lacks {from:?}");
    GOOD.replacen(from, to, 1)
}

fn err(text: &str) -> String {
    parse(text, "b.toml").unwrap_err().to_string()
}

#[test]
fn example_rig_parses() {
    let r = parse(GOOD, "bench-b.toml").unwrap();
    assert_eq!(r.name, "bench B");
    assert!(r.rig.elevation.is_some());
    assert!(r.rig.azimuth.wrap);
    assert!(r.rig.arm.zones[0].is_some() && r.rig.arm.zones[1].is_some());
}

#[test]
fn toml_dump_reads_back() {
    for r in [RigFile::built_in(), parse(GOOD, "bench-b.toml").unwrap()] {
        let again = parse(&to_toml(&r), "dump.toml").unwrap();
        assert_eq!(again.rig, r.rig);
        assert_eq!(again.name, r.name);
    }
}

#[test]
fn errors_name_the_field() {
    let cases: &[(String, &str)] = &[
        (
            with("zones = [[-11, 11]", "zones = [[11, -11]"),
            "axis \"arm\": field \"zones\"[0]: from must be below to",
        ),
        (
            with("[arm]", "[arm]\ncolour = 3"),
            "axis \"arm\": field \"colour\": unknown field",
        ),
        (with("name = ", "nmae = "), "field \"nmae\": unknown field"),
        (
            with("acceptance_deg = 0.8", "acceptance_deg = 25"),
            "[detector]: field \"acceptance_deg\"",
        ),
        (
            with("approach = \"from-above\"", "approach = \"up\""),
            "field \"approach\"",
        ),
        (
            with("max_speed_deg_s = 12", "max_speed_deg_s = -1"),
            "field \"max_speed_deg_s\"",
        ),
        (
            with("min_deg = -168", "min_deg = 200"),
            "field \"max_deg\": must be above min_deg",
        ),
        (
            with("[tilt]", "[tilt]\nsteps_per_deg = 10"),
            "field \"full_steps\": give either",
        ),
        (
            with("wrap = true", "wrap = true\nmin_deg = 0"),
            "axis \"azimuth\": field \"min_deg\"",
        ),
        (
            with(
                "zones = [[-11, 11]",
                "zones = [[-11, 11], [1, 2], [3, 4], [5, 6]",
            ),
            "field \"zones\"[4]: at most 4",
        ),
        (
            with("zones = [[-11, 11]", "zones = [[-11, 11], [\"a\", 2]"),
            "field \"zones\"[1]",
        ),
        (
            with("zones = [[-11, 11]", "zones = [[-170, 170]"),
            "forbid the whole range",
        ),
        (
            with("backlash_deg = 0.04", "backlash_deg = \"x\""),
            "field \"backlash_deg\": must be a number",
        ),
        (
            "[arm]\nsteps_per_deg = 10\n".to_string(),
            "field \"detector\": missing",
        ),
        ("x = [".to_string(), "not valid TOML"),
    ];
    for (text, want) in cases {
        let e = err(text);
        assert!(e.starts_with("rig file b.toml: "), "{e}");
        assert!(e.contains(want), "{want:?} not in {e:?}");
        assert!(!e.contains('\n'), "{e:?}");
    }
}

#[test]
fn step_counter_range_is_checked() {
    let e = err(&with("microsteps = 32", "microsteps = 4096"));
    assert!(
        e.contains("axis \"arm\"") && e.contains("microsteps from home"),
        "{e}"
    );
}
