//! Applying an alignment: onto the controller (its energy offset, and the arm's home
//! offset with the arm's position declared again in the new calibration), and into a
//! copy of a rig file — never over the file itself.

use super::measure::{num, ok};
use super::Alignment;
use crate::error::{CliError, CliResult};
use crate::link::session::Session;
use crate::link::wire::Wire;
use std::path::{Path, PathBuf};

/// What was applied.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Applied {
    /// Whether the controller's settings were changed.
    pub device: bool,
    /// The corrected rig copy written, if any.
    pub rig_out: Option<PathBuf>,
}

/// Refuses a copy that would overwrite its input or any existing file, before anything
/// is measured, and reads the input as a rig.
pub(super) fn check_rig_paths(input: &Path, out: &Path) -> CliResult<()> {
    crate::rig::load(input).map_err(|e| CliError::new(e.to_string()))?;
    let same = match (input.canonicalize(), out.canonicalize()) {
        (Ok(a), Ok(b)) => a == b,
        _ => input == out,
    };
    if same {
        return Err(CliError::new(format!(
            "--rig-out {}: that is the input rig file; align writes a corrected copy, never over the input: give another --rig-out",
            out.display()
        )));
    }
    if out.exists() {
        return Err(CliError::new(format!(
            "--rig-out {}: the file exists; align does not overwrite files: remove it or give another name",
            out.display()
        )));
    }
    Ok(())
}

/// The text of a rig file with the arm's `home_offset_deg` made `value` — the line
/// replaced in the `[arm]` table, or added under its header — every other line as it
/// was. `None` when the file has no `[arm]` table.
pub fn with_arm_home_offset(text: &str, value: f32) -> Option<String> {
    let mut out = Vec::new();
    let mut in_arm = false;
    let mut done = false;
    let mut seen_arm = false;
    let line_for = |indent: &str| format!("{indent}home_offset_deg = {value}");
    for line in text.lines() {
        let t = line.trim();
        if t.starts_with('[') {
            if in_arm && !done {
                // The arm table ended without the key: add it at its end.
                out.push(line_for(""));
                done = true;
            }
            in_arm = t == "[arm]";
            seen_arm |= in_arm;
            out.push(line.to_string());
            continue;
        }
        let key = t.split('=').next().map(str::trim);
        if in_arm && !done && key == Some("home_offset_deg") {
            let indent = &line[..line.len() - line.trim_start().len()];
            out.push(line_for(indent));
            done = true;
            continue;
        }
        out.push(line.to_string());
    }
    if in_arm && !done {
        out.push(line_for(""));
        done = true;
    }
    if !seen_arm || !done {
        return None;
    }
    let mut s = out.join("\n");
    s.push('\n');
    Some(s)
}

/// Writes the copy of `input` with the arm's home offset corrected by the alignment's
/// arm zero (the file's own home offset minus δ0) to `out`, which must not exist; the
/// copy is read back as a rig and must hold the new value.
pub fn write_rig_copy(a: &Alignment, input: &Path, out: &Path) -> CliResult<f32> {
    check_rig_paths(input, out)?;
    let rf = crate::rig::load(input).map_err(|e| CliError::new(e.to_string()))?;
    let new = rf.rig.arm.home_offset_deg - a.arm_zero_deg();
    let text = std::fs::read_to_string(input)
        .map_err(|e| CliError::new(format!("--rig {}: {e}", input.display())))?;
    let copy = with_arm_home_offset(&text, new).ok_or_else(|| {
        CliError::new(format!(
            "--rig {}: no [arm] table to correct (docs/RIG.md)",
            input.display()
        ))
    })?;
    let back = crate::rig::parse(&copy, &out.display().to_string())
        .map_err(|e| CliError::new(format!("the corrected copy does not read back: {e}")))?;
    if back.rig.arm.home_offset_deg.to_bits() != new.to_bits() {
        return Err(CliError::new(format!(
            "the corrected copy reads back an arm home offset of {} instead of {new}",
            back.rig.arm.home_offset_deg
        )));
    }
    // create_new: never over a file that appeared meanwhile.
    let mut f = std::fs::OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(out)
        .map_err(|e| CliError::new(format!("--rig-out {}: {e}", out.display())))?;
    std::io::Write::write_all(&mut f, copy.as_bytes())
        .map_err(|e| CliError::new(format!("--rig-out {}: {e}", out.display())))?;
    Ok(new)
}

/// Applies `a` to the controller — `set offset=ΔE`, the arm's `home_offset_deg` less
/// δ0, and the arm's position declared again (`home name=arm at=` its angle in the new
/// calibration: the same step count) — and, with `rig` = (input, output), writes the
/// corrected rig copy. Motion is left disabled.
pub fn apply<W: Wire>(
    s: &mut Session<W>,
    a: &Alignment,
    rig: Option<(&Path, &Path)>,
) -> CliResult<super::Applied> {
    ok(s, "disable")?;
    let pos = ok(s, "pos")?.last;
    let arm_now = num(&pos, "arm")?;
    let steps_before = num(&pos, "arm_steps")?;
    ok(s, &format!("set offset={}", a.energy_offset_ev()))?;
    ok(
        s,
        &format!("axis name=arm home_offset_deg={}", a.new_home_offset_deg()),
    )?;
    let at = arm_now - a.arm_zero_deg();
    ok(s, &format!("home name=arm at={at}"))?;
    let after = ok(s, "pos")?.last;
    if num(&after, "arm_steps")? != steps_before {
        return Err(CliError::new(format!(
            "align: after the new home offset the arm's step count changed ({steps_before} → {}): check `pos` and declare the arm's position with home name=arm at=DEG",
            num(&after, "arm_steps")?
        )));
    }
    let rig_out = match rig {
        Some((i, o)) => {
            write_rig_copy(a, i, o)?;
            Some(o.to_path_buf())
        }
        None => None,
    };
    Ok(Applied {
        device: true,
        rig_out,
    })
}

#[cfg(test)]
mod tests {
    use super::with_arm_home_offset;

    #[test]
    fn the_arm_home_offset_line_is_replaced_or_added_and_nothing_else_changes() {
        let t = "name = \"x\"\n[arm]\n# c\nhome_offset_deg = -0.35\nmin_deg = -1\n[tilt]\nhome_offset_deg = 2\n";
        let c = with_arm_home_offset(t, 0.25).unwrap();
        assert_eq!(
            c,
            "name = \"x\"\n[arm]\n# c\nhome_offset_deg = 0.25\nmin_deg = -1\n[tilt]\nhome_offset_deg = 2\n"
        );
        let t = "[arm]\nmin_deg = -1\n[tilt]\n";
        assert_eq!(
            with_arm_home_offset(t, -1.5).unwrap(),
            "[arm]\nmin_deg = -1\nhome_offset_deg = -1.5\n[tilt]\n"
        );
        assert_eq!(with_arm_home_offset("[tilt]\n", 1.0), None);
    }
}
