//! Named regressions for the console: each test is one sequence that once did the wrong
//! thing, run on the simulated board.

use matterwave_core::console::sim::{SimAxes, SimDetector, SimInterlock};
use matterwave_core::console::Console;
use matterwave_core::table;

type Con = Console<SimAxes, SimDetector, SimInterlock>;

fn console() -> Con {
    Console::new(
        SimAxes::default(),
        SimDetector::default(),
        SimInterlock { safe: true },
    )
    .expect("factory settings")
}

/// One request, its stream polled out; the whole reply.
fn request(c: &mut Con, line: &str) -> String {
    let mut out = Vec::new();
    for &b in format!("{line}\n").as_bytes() {
        c.push(b, &mut out).expect("reply written");
        while c.poll(&mut out).expect("stream line written") {}
    }
    String::from_utf8(out).expect("ASCII reply")
}

/// The final line of a reply.
fn last(reply: &str) -> &str {
    reply.lines().last().unwrap_or("")
}

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
