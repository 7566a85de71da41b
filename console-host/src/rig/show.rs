//! A rig as a rig file, as a report, and its words (approach, zones).

use super::*;

/// The word of an approach direction in rig files (the core's one vocabulary).
pub fn approach_word(a: Approach) -> &'static str {
    a.word()
}

/// Zones as `[[from, to], ...]` (TOML syntax), degrees.
pub fn zones_text(ax: &AxisConfig) -> String {
    let parts: Vec<String> = ax
        .zones
        .iter()
        .flatten()
        .map(|z| format!("[{}, {}]", z.from_deg, z.to_deg))
        .collect();
    format!("[{}]", parts.join(", "))
}

/// The zones of an axis as a list of `[from, to]` pairs, degrees.
pub(super) fn zones_value(ax: &AxisConfig) -> Cell {
    Cell::List(
        ax.zones
            .iter()
            .flatten()
            .map(|z| Cell::List(vec![Cell::F32(z.from_deg, 3), Cell::F32(z.to_deg, 3)]))
            .collect(),
    )
}

/// The rig as a complete rig file that [`parse`] reads back to the same rig (steps per
/// degree are written directly).
pub fn to_toml(r: &RigFile) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "# Effective rig, written by `mwctl rig show --toml` (format: docs/RIG.md)."
    );
    let _ = writeln!(s, "name = {:?}", r.name);
    let _ = writeln!(s, "\n[detector]\nacceptance_deg = {}", r.rig.acceptance_deg);
    for id in AxisId::ALL {
        let Ok(ax) = r.rig.axis(id) else { continue };
        let _ = writeln!(s, "\n[{}]", id.name());
        let _ = writeln!(s, "steps_per_deg = {}", ax.steps_per_deg);
        let _ = writeln!(s, "home_offset_deg = {}", ax.home_offset_deg);
        let _ = writeln!(s, "wrap = {}", ax.wrap);
        if !ax.wrap {
            let _ = writeln!(s, "min_deg = {}", ax.min_deg);
            let _ = writeln!(s, "max_deg = {}", ax.max_deg);
        }
        let _ = writeln!(s, "zones = {}", zones_text(ax));
        let _ = writeln!(s, "backlash_deg = {}", ax.backlash_deg);
        let _ = writeln!(s, "approach = {:?}", approach_word(ax.approach));
        let _ = writeln!(s, "max_speed_deg_s = {}", ax.max_speed_deg_s);
        let _ = writeln!(s, "accel_deg_s2 = {}", ax.accel_deg_s2);
    }
    s
}

/// `mwctl rig show` / `mwctl rig check`: the effective rig as a report.
pub fn report(r: &RigFile) -> Report {
    let mut rep = Report::default();
    rep.field("name", "rig", Cell::Text(r.name.clone()));
    rep.field("source", "from", Cell::Text(r.source.clone()));
    rep.field(
        "acceptance_deg",
        "detector acceptance half-angle (deg)",
        Cell::F32(r.rig.acceptance_deg, 3),
    );
    rep.field(
        "mode",
        "arm",
        Cell::Text(
            if r.rig.elevation.is_some() {
                "two-circle (arm + elevation)"
            } else {
                "one-circle (arm only)"
            }
            .to_string(),
        ),
    );
    let mut list = List {
        key: "axes",
        columns: vec![
            col("axis", "axis"),
            col("steps_per_deg", "steps/deg"),
            col("step_deg", "step (deg)"),
            col("home_offset_deg", "home (deg)"),
            col("min_deg", "min (deg)"),
            col("max_deg", "max (deg)"),
            col("wrap", "wrap"),
            col("zones", "zones (deg)"),
            col("backlash_deg", "backlash (deg)"),
            col("approach", "approach"),
            col("max_speed_deg_s", "speed (deg/s)"),
            col("accel_deg_s2", "accel (deg/s²)"),
        ],
        rows: Vec::new(),
    };
    for id in AxisId::ALL {
        let Ok(ax) = r.rig.axis(id) else { continue };
        let (min, max) = if ax.wrap {
            (Cell::Missing, Cell::Missing)
        } else {
            (Cell::F32(ax.min_deg, 3), Cell::F32(ax.max_deg, 3))
        };
        list.rows.push(vec![
            Cell::Text(id.name().to_string()),
            Cell::F32(ax.steps_per_deg, 4),
            Cell::F32(1.0 / ax.steps_per_deg, 6),
            Cell::F32(ax.home_offset_deg, 3),
            min,
            max,
            Cell::Bool(ax.wrap),
            zones_value(ax),
            Cell::F32(ax.backlash_deg, 3),
            Cell::Text(approach_word(ax.approach).to_string()),
            Cell::F32(ax.max_speed_deg_s, 2),
            Cell::F32(ax.accel_deg_s2, 2),
        ]);
    }
    rep.list = Some(list);
    rep
}
