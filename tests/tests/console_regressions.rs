//! Named regressions for the console: each test is one sequence that once did the wrong
//! thing, run on the simulated board.

use matterwave_core::table;
use matterwave_tests::console::{last, request, sim_console as console, SimConsole as Con};

/// An `aim` that fails must not leave the previous beam's solutions for `move sol=`
/// (the arm would go to the old beam). Common practice, no source.
#[test]
fn failed_aim_forgets_earlier_solutions() {
    let mut c = console();
    assert!(last(&request(&mut c, "enable")).starts_with("ok"));
    let first = request(&mut c, "aim");
    assert!(last(&first).starts_with("ok count="), "{first}");
    assert_ne!(last(&first), "ok count=0", "{first}");
    // (5,0) of Cu(100) at 100 eV is evanescent: |g| = 5/2.556 Å⁻¹ > 1/λ = 0.82 Å⁻¹.
    let failed = request(&mut c, "aim beam=5,0");
    assert!(last(&failed).starts_with("err 201"), "{failed}");
    let moved = request(&mut c, "move sol=0");
    assert!(last(&moved).starts_with("err 412"), "{moved}");
    assert!(request(&mut c, "status").contains(" solutions=0 "));
}

/// `set crystal=X` without `face=` switches to X's first table face and says so; it
/// never keeps a face read against another crystal.
#[test]
fn crystal_change_takes_the_crystals_first_table_face() {
    let mut c = console();
    for cr in table::all() {
        let Some(first) = cr.faces.first() else {
            continue;
        };
        let r = request(&mut c, &format!("set crystal={}", cr.id));
        let want: Vec<String> = first.miller.iter().map(i32::to_string).collect();
        assert_eq!(
            last(&r),
            format!(
                "ok crystal={} face={} face_from=table",
                cr.id,
                want.join(",")
            ),
            "{r}"
        );
        assert_eq!(c.settings().face.miller, first.miller, "{}", cr.id);
        assert!(std::ptr::eq(c.settings().crystal, cr));
    }
    // With a face given, that face is used and nothing is added to the reply.
    let r = request(&mut c, "set crystal=cu face=1,1,1");
    assert_eq!(last(&r), "ok");
    assert_eq!(c.settings().face.miller, [1, 1, 1]);
}

/// The console's axis keys are the rig file's (docs/RIG.md): `spd=` — which reads as a
/// speed — is refused and changes nothing; `steps_per_deg=` sets steps per degree.
#[test]
fn axis_keys_are_the_rig_file_keys() {
    let mut c = console();
    let before = c.settings().rig.arm;
    let r = request(&mut c, "axis name=arm spd=15");
    assert!(last(&r).starts_with("err 404"), "{r}");
    assert_eq!(c.settings().rig.arm, before);
    let r = request(
        &mut c,
        "axis name=arm steps_per_deg=1422.2222 approach=from-above",
    );
    assert!(
        last(&r).starts_with("ok name=arm steps_per_deg=1422.2222 "),
        "{r}"
    );
    assert!(last(&r).contains(" approach=from-above "), "{r}");
    assert_eq!(c.settings().rig.arm.steps_per_deg, 1422.2222);
    let r = request(&mut c, "axis name=arm approach=above");
    assert!(last(&r).starts_with("err 407"), "{r}");
}

/// The same axis checks on the console: each refused request changes nothing.
#[test]
fn axis_and_zone_changes_are_checked_whole() {
    let mut c = console();
    for (line, code) in [
        // Home (step 0) outside the limits.
        ("axis name=arm home_offset_deg=-170", "err 315"),
        ("axis name=arm min_deg=10", "err 315"),
        // A zone reaching beyond the arm's 165° limit.
        ("zone name=arm i=1 from=150 to=170", "err 317"),
        // Overlapping the factory gun zone [-12°, 12°].
        ("zone name=arm i=1 from=5 to=20", "err 318"),
        // Limits beyond the step counter's reach from home (2^24 steps).
        ("axis name=arm steps_per_deg=200000", "err 316"),
    ] {
        let before = *c.settings();
        let r = request(&mut c, line);
        assert!(last(&r).starts_with(code), "{line}: {r}");
        assert_eq!(*c.settings(), before, "{line} changed the settings");
    }
    // A zone over the whole tilt range (limits ±80°) leaves no free step.
    let before = *c.settings();
    let r = request(&mut c, "zone name=tilt i=0 from=-80 to=80");
    assert!(last(&r).starts_with("err 319"), "{r}");
    assert_eq!(*c.settings(), before);
    // Zones with gaps between them are accepted.
    for line in [
        "zone name=tilt i=0 from=-80 to=0",
        "zone name=tilt i=1 from=0.5 to=80",
        "zone name=tilt i=2 from=0.1 to=0.4",
    ] {
        let r = request(&mut c, line);
        assert!(last(&r).starts_with("ok"), "{line}: {r}");
    }
}

/// `stop` latches: after it, motion needs a new `enable` (common practice, no source:
/// an emergency stop must not be undone by the next queued move).
#[test]
fn stop_latches_until_enable() {
    let mut c = console();
    assert!(last(&request(&mut c, "enable")).starts_with("ok"));
    assert!(last(&request(&mut c, "move arm=40")).starts_with("ok"));
    assert!(last(&request(&mut c, "stop")).starts_with("ok"));
    assert!(!c.enabled());
    let r = request(&mut c, "move arm=50");
    assert!(last(&r).starts_with("err 408"), "{r}");
    assert!(last(&request(&mut c, "enable")).starts_with("ok"));
    assert!(last(&request(&mut c, "move arm=50")).starts_with("ok"));
    let stops = c.axes.stops;
    assert!(last(&request(&mut c, "disable")).starts_with("ok"));
    assert_eq!(c.axes.stops, stops + 1, "disable stops motion first");
    assert!(last(&request(&mut c, "reset")).starts_with("ok"));
    assert_eq!(c.axes.stops, stops + 2, "reset stops motion first");
}

/// `beams` at 300 keV on a high-index face once streamed every propagating beam (over a
/// million lines). It lists every beam with |g| ≤ g_max and says where it cut. The
/// expected count is the number of rods h·b1 + k·b2 with |g| ≤ g_max, counted here in
/// f64 from the face's reciprocal mesh (at 300 keV every such rod propagates: |g| ≪ 1/λ).
#[test]
fn beams_at_300_kev_are_bounded_and_say_where_they_stop() {
    let mut c = console();
    assert!(last(&request(
        &mut c,
        "set crystal=kcl face=12,11,7 energy=300000 tilt=30"
    ))
    .starts_with("ok"));
    let r = request(&mut c, "beams");
    let end = last(&r);
    assert!(
        end.starts_with("ok count=") && end.contains(" truncated=1 g_max="),
        "{end}"
    );
    let field = |k: &str| -> f64 {
        end.split(' ')
            .find_map(|t| t.strip_prefix(k))
            .and_then(|v| v.parse().ok())
            .unwrap_or_else(|| panic!("no {k} in {end}"))
    };
    let (count, g_max) = (field("count="), field("g_max="));
    let items = r.lines().filter(|l| l.starts_with("- ")).count();
    assert_eq!(items as f64, count);
    assert!((300.0..=600.0).contains(&count), "{count} beams");
    let b = c.settings().face.recip_2d_inv_a.map(|v| v.map(f64::from));
    let mut want = 0;
    for h in -200i32..=200 {
        for k in -200i32..=200 {
            let g = [
                f64::from(h) * b[0][0] + f64::from(k) * b[1][0],
                f64::from(h) * b[0][1] + f64::from(k) * b[1][1],
            ];
            if (g[0] * g[0] + g[1] * g[1]).sqrt() <= g_max {
                want += 1;
            }
        }
    }
    // Rods within f32 rounding of the rim may fall either side.
    assert!(
        (count - f64::from(want)).abs() <= 2.0,
        "{count} listed, {want} rods within {g_max}"
    );
    // At 100 eV the whole list fits: no cut.
    assert!(last(&request(&mut c, "set face=1,0,0 energy=100")).starts_with("ok"));
    let end = last(&request(&mut c, "beams")).to_string();
    assert!(
        end.starts_with("ok count=") && !end.contains("truncated"),
        "{end}"
    );
}

/// `sample=table` takes the table's work function for the face (tables/crystals.toml,
/// each value with its cited source) and follows the face when it changes; `dump`
/// replays it as `table`.
#[test]
fn sample_work_function_from_the_table_follows_the_face() {
    let mut c = console();
    let cu = table::find("cu").unwrap();
    let get = |c: &mut Con| -> f32 {
        let r = request(c, "get sample");
        last(&r)
            .strip_prefix("ok sample=")
            .and_then(|v| v.parse().ok())
            .unwrap_or_else(|| panic!("{r}"))
    };
    assert!(last(&request(&mut c, "set crystal=cu face=1,0,0 sample=table")).starts_with("ok"));
    assert_eq!(get(&mut c), cu.work_function_for([1, 0, 0]).unwrap());
    assert!(last(&request(&mut c, "set face=1,1,1")).starts_with("ok"));
    assert_eq!(get(&mut c), cu.work_function_for([1, 1, 1]).unwrap());
    assert!(request(&mut c, "dump").contains(" sample=table"));
    assert!(last(&request(&mut c, "set sample=4.0")).starts_with("ok"));
    assert_eq!(get(&mut c), 4.0);
    assert!(!request(&mut c, "dump").contains(" sample=table"));
}
