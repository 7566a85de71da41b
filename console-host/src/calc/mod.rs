//! `mwctl calc …` and `mwctl crystals`: offline calculations with the core's f32 code,
//! the same code the controller runs.

use crate::error::{CliError, CliResult, Context};
use crate::output::{col, Column, List, Report, Value};
use crate::tables;
use matterwave_core::beam::{self, Beam, Gun, GunInput};
use matterwave_core::lattice::{parse_miller, Cell, Miller, System};
use matterwave_core::reflections::{self, Reflection};
use matterwave_core::surface::{Face, Incidence, SurfaceBeam};
use matterwave_core::table::{self, Crystal};

mod gun;
mod iv;
mod overlayer;
mod sample;
pub mod steps;
pub use gun::{
    ev_or_face, no_face_for, table_value, EvOrFace, GunArgs, TableValue, WavelengthGunArgs,
};
pub use iv::{ivpeaks, IvArgs};
pub use overlayer::{
    frac_component, overlayer_beams, parse_frac_rod, parse_overlayer, Overlayer, OverlayerArgs,
};
pub use sample::{crystal_at, v0_model, v0_model_kind, SampleArgs};

/// Looks up a crystal by id, with a helpful list when unknown.
pub fn crystal(id: &str) -> CliResult<&'static Crystal> {
    let key = id.trim().to_ascii_lowercase();
    table::find(&key).map_err(|e| {
        let ids: Vec<&str> = table::all().iter().map(|c| c.id).collect();
        CliError {
            code: Some(e.code()),
            message: format!("unknown crystal '{id}'; known ids: {}", ids.join(", ")),
        }
    })
}

fn cell_of(c: &Crystal) -> CliResult<Cell> {
    c.cell().ctx(format_args!("crystal {}", c.id))
}

/// Parses a face for a crystal (three or four indices; four only for hexagonal).
pub fn face_of(c: &Crystal, text: &str) -> CliResult<(Cell, Face)> {
    let cell = cell_of(c)?;
    let hex = cell.structure.system() == System::Hexagonal;
    let m = parse_miller(text, hex).map_err(|e| CliError {
        code: Some(e.code()),
        message: format!(
            "--face '{text}': {}; write e.g. 111, 1-10, 1,1,0 or (1 -1 0){}",
            e.message(),
            if hex {
                "; four-index 0001 or 10-10"
            } else {
                ""
            }
        ),
    })?;
    let face = Face::new(&cell, m).ctx(format_args!("--face {text}"))?;
    Ok((cell, face))
}

/// Parses a rod `H,K` (also `H K` or compact `1-1`).
pub fn parse_rod(text: &str) -> CliResult<[i32; 2]> {
    let bad = || {
        CliError::new(format!(
            "--beam '{text}': give two integers H,K such as 1,0 or -1,1 (compact 10 or -11 also works)"
        ))
    };
    let (vals, n) = matterwave_core::lattice::split_indices(text).map_err(|_| bad())?;
    if n != 2 {
        return Err(bad());
    }
    if vals[..2].iter().any(|v| v.abs() > 99) {
        return Err(CliError::new(format!(
            "--beam '{text}': indices beyond ±99 are not supported"
        )));
    }
    Ok([vals[0], vals[1]])
}

fn miller_text(m: Miller, hex: bool) -> String {
    if hex {
        let [h, k, i, l] = matterwave_core::lattice::four_index_plane(m);
        format!("({h} {k} {i} {l})")
    } else {
        format!("({} {} {})", m[0], m[1], m[2])
    }
}

/// `mwctl crystals --crystal ID`: the crystal's faces, each with the work function and
/// inner potential the table gives for it (its own, or the crystal's where it has none:
/// `from` says which) and their sources.
pub fn crystal_faces(id: &str) -> CliResult<Report> {
    let c = crystal(id)?;
    let src =
        tables::find(c.id).ok_or_else(|| CliError::new(format!("--crystal {id}: no sources")))?;
    let hex = c.structure.system() == System::Hexagonal;
    let mut r = Report::default();
    r.field("crystal", "crystal", Value::Text(c.id.into()));
    r.field("name", "name", Value::Text(c.name.into()));
    r.field(
        "structure",
        "structure",
        Value::Text(c.structure.name().into()),
    );
    r.field("a_a", "a (Å)", Value::F64(src.a_a, 4));
    r.field(
        "lattice_source",
        "lattice source",
        Value::Text(src.lattice_source.into()),
    );
    sample::expansion_fields(&mut r, c, src);
    let mut list = List {
        key: "faces",
        columns: vec![
            col("face", "face"),
            col("work_function_ev", "φ (eV)"),
            col("work_function_from", "φ from"),
            col("work_function_source", "φ source"),
            col("inner_potential_ev", "V0 (eV)"),
            col("inner_potential_from", "V0 from"),
            col("inner_potential_source", "V0 source"),
            col("v0_form", "V0(E) [max, b, c, d]"),
            col("v0_form_source", "V0(E) source"),
        ],
        rows: Vec::new(),
    };
    let pick = |own: Option<tables::Sourced>, all: Option<tables::Sourced>| match (own, all) {
        (Some(v), _) => (
            Value::F64(v.value, 2),
            Value::Text("face".into()),
            Value::Text(v.source.into()),
        ),
        (None, Some(v)) => (
            Value::F64(v.value, 2),
            Value::Text("crystal".into()),
            Value::Text(v.source.into()),
        ),
        (None, None) => (Value::Missing, Value::Missing, Value::Missing),
    };
    for f in src.faces {
        let (wf, wf_from, wf_src) = pick(f.work_function_ev, src.work_function_ev);
        let (v0, v0_from, v0_src) = pick(f.inner_potential_ev, src.inner_potential_ev);
        list.rows.push(vec![
            Value::Text(miller_text(f.miller, hex).replace(' ', "")),
            wf,
            wf_from,
            wf_src,
            v0,
            v0_from,
            v0_src,
            sample::form_value(f.inner_potential_form.or(src.inner_potential_form)),
            f.inner_potential_form
                .or(src.inner_potential_form)
                .map_or(Value::Missing, |v| Value::Text(v.source.into())),
        ]);
    }
    r.list = Some(list);
    Ok(r)
}

/// `mwctl crystals`.
pub fn crystals() -> CliResult<Report> {
    let mut list = List {
        key: "crystals",
        columns: vec![
            col("id", "id"),
            col("name", "name"),
            col("structure", "structure"),
            col("a_a", "a (Å)"),
            col("b_a", "b (Å)"),
            col("c_a", "c (Å)"),
            col("temperature_k", "T (K)"),
            col("work_function_ev", "φ (eV)"),
            col("inner_potential_ev", "V0 (eV)"),
            col("faces", "faces"),
            col("source", "lattice source"),
        ],
        rows: Vec::new(),
    };
    for c in table::all() {
        let hex = c.structure.system() == System::Hexagonal;
        let faces: Vec<String> = c
            .faces
            .iter()
            .map(|f| miller_text(f.miller, hex).replace(' ', ""))
            .collect();
        let src = tables::find(c.id)
            .map(|r| r.lattice_source)
            .unwrap_or_default();
        let sys = c.structure.system();
        list.rows.push(vec![
            Value::Text(c.id.into()),
            Value::Text(c.name.into()),
            Value::Text(c.structure.name().into()),
            Value::F32(c.a_a, 4),
            if sys == System::Orthorhombic {
                Value::F32(c.b_a, 4)
            } else {
                Value::Missing
            },
            if sys == System::Cubic {
                Value::Missing
            } else {
                Value::F32(c.c_a, 4)
            },
            Value::F32(c.temperature_k, 0),
            Value::opt(c.work_function_ev, 2),
            Value::opt(c.inner_potential_ev, 1),
            Value::List(faces.into_iter().map(Value::Text).collect()),
            Value::Text(src.into()),
        ]);
    }
    Ok(Report {
        list: Some(list),
        notes: vec![
            "φ and V0 are each crystal's own values; a face may have its own: `mwctl crystals --crystal ID` lists them per face.".into(),
        ],
        ..Report::default()
    })
}

/// `mwctl calc wavelength`.
pub fn wavelength(g: &GunArgs, inner_potential: Option<EvOrFace>) -> CliResult<Report> {
    let g = &g.without_face("calc wavelength")?;
    let inner_potential = match inner_potential {
        Some(EvOrFace::Face) => return Err(no_face_for("--inner-potential", "calc wavelength")),
        Some(EvOrFace::Ev(x)) => Some(x),
        None => None,
    };
    let e = g.kinetic_ev()?;
    let b = Beam::new(e).ctx("energy at the sample")?;
    let mut r = Report::default();
    g.fields(&mut r, e);
    r.field(
        "wavelength_a",
        "wavelength (Å)",
        Value::F32(b.wavelength_a, 6),
    );
    r.field(
        "wavelength_nonrel_a",
        "non-relativistic wavelength (Å)",
        Value::F32(b.wavelength_nonrel_a, 6),
    );
    r.field(
        "wavenumber_inv_a",
        "1/λ (1/Å)",
        Value::F32(b.wavenumber_inv_a, 6),
    );
    r.field("momentum_ev", "p·c (eV)", Value::F32(b.momentum_ev, 1));
    r.field("beta", "v/c", Value::F32(b.beta, 6));
    r.field(
        "velocity_m_s",
        "velocity (m/s)",
        Value::F32(b.velocity_m_s, 0),
    );
    match inner_potential {
        Some(v0) => {
            let li = beam::inner_wavelength_a(e, v0).ctx(format_args!("--inner-potential {v0}"))?;
            r.field(
                "inner_potential_ev",
                "inner potential (eV)",
                Value::F32(v0, 2),
            );
            r.field(
                "inner_wavelength_a",
                "wavelength inside (Å)",
                Value::F32(li, 6),
            );
        }
        None => {
            r.field("inner_potential_ev", "inner potential (eV)", Value::Missing);
            r.field(
                "inner_wavelength_a",
                "wavelength inside (Å)",
                Value::Missing,
            );
        }
    }
    Ok(r)
}

pub(crate) fn check_max(max: usize) -> CliResult<usize> {
    if max == 0 || max > crate::number::MAX_ROWS {
        Err(CliError::new(format!(
            "--max {max}: give 1 to {}",
            crate::number::MAX_ROWS
        )))
    } else {
        Ok(max)
    }
}

fn family_list(cell: &Cell, d_min: f32, max: usize) -> CliResult<(Vec<Reflection>, bool)> {
    let mut buf = vec![Reflection::EMPTY; check_max(max)?];
    let l = reflections::families(cell, d_min, &mut buf).ctx("reflection search")?;
    buf.truncate(l.stored);
    Ok((buf, l.truncated))
}

/// The `truncated` field: whether more rows than `--max` exist.
pub(crate) fn truncated_field(r: &mut Report, truncated: bool) {
    r.field("truncated", "more beyond --max", Value::Bool(truncated));
}

/// What `reflections` and `rings` start with: the crystal's cell, the wavelength at the
/// sample, and a report holding the crystal, the gun fields and the wavelength.
fn bulk_start(
    id: &str,
    s: &SampleArgs,
    g: &GunArgs,
    command: &str,
) -> CliResult<(Cell, f32, Report)> {
    let g = &g.without_face(command)?;
    let c = crystal_at(id, s)?;
    let cell = cell_of(&c)?;
    let e = g.kinetic_ev()?;
    let lambda = beam::wavelength_a(e).ctx("energy at the sample")?;
    let mut r = Report::default();
    r.field("crystal", "crystal", Value::Text(c.id.into()));
    temperature_field(&mut r, &c);
    g.fields(&mut r, e);
    r.field("wavelength_a", "wavelength (Å)", Value::F32(lambda, 6));
    Ok((cell, lambda, r))
}

/// A list of reflection families: h, k, (for a hexagonal crystal the Miller–Bravais i,)
/// l, d, the two `middle` columns, multiplicity.
fn family_table(key: &'static str, hex: bool, middle: [Column; 2], rows: Vec<Vec<Value>>) -> List {
    let [a, b] = middle;
    let mut columns = vec![col("h", "h"), col("k", "k")];
    if hex {
        columns.push(col("i", "i"));
    }
    columns.extend([
        col("l", "l"),
        col("d_a", "d (Å)"),
        a,
        b,
        col("multiplicity", "mult"),
    ]);
    List { key, columns, rows }
}

/// The indices of a plane or reciprocal vector as row values: h, k, l, or for a
/// hexagonal crystal the four Miller–Bravais indices h, k, i, l.
fn index_values(hkl: Miller, hex: bool) -> Vec<Value> {
    let ints = if hex {
        matterwave_core::lattice::four_index_plane(hkl).to_vec()
    } else {
        hkl.to_vec()
    };
    ints.into_iter().map(|x| Value::Int(x.into())).collect()
}

/// A row of [`family_table`].
fn family_row(f: &Reflection, hex: bool, middle: [Value; 2]) -> Vec<Value> {
    let [a, b] = middle;
    let mut row = index_values(f.hkl, hex);
    row.extend([
        Value::F32(f.d_a, 5),
        a,
        b,
        Value::Int(f.multiplicity.into()),
    ]);
    row
}

/// `mwctl calc reflections`.
pub fn reflections(id: &str, s: &SampleArgs, g: &GunArgs, max: usize) -> CliResult<Report> {
    let (cell, lambda, mut r) = bulk_start(id, s, g, "calc reflections")?;
    let (fams, truncated) = family_list(&cell, lambda / 2.0, max)?;
    let hex = cell.structure.system() == System::Hexagonal;
    let mut rows = Vec::new();
    for f in &fams {
        let th = reflections::bragg_deg(f.d_a, lambda, 1).ctx("Bragg angle")?;
        rows.push(family_row(
            f,
            hex,
            [Value::F32(th, 4), Value::F32(2.0 * th, 4)],
        ));
    }
    truncated_field(&mut r, truncated);
    r.list = Some(family_table(
        "reflections",
        hex,
        [
            col("bragg_deg", "θB (deg)"),
            col("two_theta_deg", "2θB (deg)"),
        ],
        rows,
    ));
    Ok(r)
}

/// `mwctl calc rings`.
pub fn rings(
    id: &str,
    s: &SampleArgs,
    g: &GunArgs,
    screen_mm: f32,
    max: usize,
) -> CliResult<Report> {
    let (cell, lambda, mut r) = bulk_start(id, s, g, "calc rings")?;
    if !(screen_mm.is_finite() && screen_mm > 0.0 && screen_mm <= 1.0e5) {
        return Err(CliError::new(format!(
            "--screen-distance {screen_mm}: give a distance in mm, above 0 and at most 100000"
        )));
    }
    // 2θ < 90° needs d > λ/√2.
    let (fams, truncated) = family_list(&cell, lambda / core::f32::consts::SQRT_2, max)?;
    r.field(
        "screen_distance_mm",
        "screen distance (mm)",
        Value::F32(screen_mm, 1),
    );
    r.field(
        "camera_constant_mm_a",
        "camera constant λL (mm·Å)",
        Value::F32(lambda * screen_mm, 4),
    );
    let hex = cell.structure.system() == System::Hexagonal;
    let mut rows = Vec::new();
    for f in &fams {
        let Ok(ring) = reflections::ring(f.d_a, lambda, screen_mm) else {
            continue;
        };
        rows.push(family_row(
            f,
            hex,
            [
                Value::F32(ring.two_theta_deg, 4),
                Value::F32(ring.radius, 3),
            ],
        ));
    }
    truncated_field(&mut r, truncated);
    r.list = Some(family_table(
        "rings",
        hex,
        [
            col("two_theta_deg", "2θB (deg)"),
            col("radius_mm", "R (mm)"),
        ],
        rows,
    ));
    Ok(r)
}

/// The `crystal` and `face` fields of a report.
pub(crate) fn crystal_face_fields(r: &mut Report, c: &Crystal, face: &Face) {
    let hex = c.structure.system() == System::Hexagonal;
    r.field("crystal", "crystal", Value::Text(c.id.into()));
    r.field("face", "face", Value::Text(miller_text(face.miller, hex)));
    temperature_field(r, c);
}

/// The sample temperature the lattice constants were taken at (the table's unless
/// `--temperature`).
pub(crate) fn temperature_field(r: &mut Report, c: &Crystal) {
    r.field(
        "temperature_k",
        "sample temperature (K)",
        Value::F32(c.temperature_k, 2),
    );
}

/// The crystal and face fields, then the face's surface mesh and layer spacing.
pub(crate) fn face_fields(r: &mut Report, c: &Crystal, face: &Face) {
    crystal_face_fields(r, c, face);
    r.field(
        "mesh",
        "surface mesh",
        Value::Text(face.mesh_kind().name().into()),
    );
    r.field("a1_a", "|a1| (Å)", Value::F32(face.a1_len_a(), 4));
    r.field("a2_a", "|a2| (Å)", Value::F32(face.a2_len_a(), 4));
    let hex = c.structure.system() == System::Hexagonal;
    let [d1, d2] = face.mesh_uvw();
    let dir = |d: [i32; 3]| -> Value {
        let ints: Vec<i32> = if hex {
            matterwave_core::lattice::four_index_direction(d).to_vec()
        } else {
            d.to_vec()
        };
        Value::List(ints.into_iter().map(|x| Value::Int(x.into())).collect())
    };
    r.field("a1_uvw", "a1 direction [uvw]", dir(d1));
    r.field("a2_uvw", "a2 direction [uvw]", dir(d2));
    if face.mesh_kind() == matterwave_core::surface::MeshKind::CentredRectangular {
        r.notes.push(
            "Centred-rectangular mesh: beams are indexed on its primitive cell (a1, a2 above, |a1| = |a2|), not on the centred rectangle.".into(),
        );
    }
    r.field(
        "gamma_deg",
        "mesh angle γ (deg)",
        Value::F32(face.gamma_deg(), 3),
    );
    spacing_fields(r, face);
}

/// The face's spacings along the normal: the period (lattice planes) and the atomic
/// planes within it (core [`Face::atomic_planes`]).
fn spacing_fields(r: &mut Report, face: &Face) {
    let p = face.atomic_planes();
    r.field(
        "period_a",
        "period along the normal, lattice planes (Å)",
        Value::F32(p.period_a, 4),
    );
    r.field(
        "atomic_planes",
        "atomic planes per period",
        Value::Int(p.count.into()),
    );
    r.field(
        "interlayer_spacing_a",
        "interlayer spacing d12 of atomic planes (Å)",
        Value::F32(p.d12_a(), 4),
    );
    r.field(
        "interlayer_spacings_a",
        "interlayer spacings d12, d23, … over one period (Å)",
        Value::List(
            p.spacings_a
                .iter()
                .take(p.count.into())
                .map(|d| Value::F32(*d, 4))
                .collect(),
        ),
    );
    r.field(
        "evenly_spaced",
        "atomic planes evenly spaced",
        Value::Bool(p.evenly_spaced()),
    );
}

/// `x` when it is a finite angle within ±`limit` degrees, else an error naming `--name`.
pub(crate) fn check_angle(x: f32, name: &str, limit: f32) -> CliResult<f32> {
    if x.is_finite() && x.abs() <= limit {
        Ok(x)
    } else {
        Err(CliError::new(format!(
            "--{name} {x}: give a finite angle in degrees within ±{limit}"
        )))
    }
}

/// `mwctl calc beams`.
#[allow(clippy::too_many_arguments)]
pub fn beams(
    id: &str,
    s: &SampleArgs,
    face_text: &str,
    g: &GunArgs,
    tilt: f32,
    azimuth: f32,
    max: usize,
) -> CliResult<Report> {
    let c = &crystal_at(id, s)?;
    let (_, face) = face_of(c, face_text)?;
    let g = &g.at_face(c, &face)?;
    let e = g.kinetic_ev()?;
    let tilt = check_angle(tilt, "tilt", matterwave_core::surface::TILT_MAX_DEG)?;
    let azimuth = check_angle(azimuth, "azimuth", 360.0)?;
    let inc = Incidence::new(e, tilt, azimuth).ctx("incidence")?;
    let mut buf = vec![SurfaceBeam::EMPTY; check_max(max)?];
    let l = face.beams(&inc, &mut buf).ctx("beam listing")?;
    let mut r = Report::default();
    face_fields(&mut r, c, &face);
    g.fields(&mut r, e);
    incidence_fields(&mut r, &inc);
    let mut list = List {
        key: "beams",
        columns: vec![
            col("h", "h"),
            col("k", "k"),
            col("row_spacing_a", "row spacing (Å)"),
            col("exit_deg", "exit (deg)"),
            col("exit_azimuth_deg", "exit azimuth (deg)"),
            col("emergence_ev", "emerges at (eV)"),
            col("emergence_nominal_ev", "emerges at nominal (eV)"),
        ],
        rows: Vec::new(),
    };
    for b in &buf[..l.stored] {
        list.rows.push(vec![
            Value::Int(b.rod[0].into()),
            Value::Int(b.rod[1].into()),
            Value::opt(b.row_spacing_a(), 4),
            Value::F32(b.exit_deg, 3),
            Value::F32(b.exit_azimuth_deg, 2),
            Value::opt(b.emergence_ev, 2),
            Value::opt(b.emergence_ev.map(|x| x - g.correction_ev()), 2),
        ]);
    }
    r.field("count", "beams", Value::Int(l.stored as i64));
    truncated_field(&mut r, l.truncated);
    r.list = Some(list);
    Ok(r)
}

/// The incidence a face's beams were computed for: wavelength at the sample, tilt and
/// azimuth (as `Incidence` holds them).
pub(crate) fn incidence_fields(r: &mut Report, inc: &Incidence) {
    r.field(
        "wavelength_a",
        "wavelength (Å)",
        Value::F32(1.0 / inc.k_inv_a, 6),
    );
    r.field("tilt_deg", "tilt (deg)", Value::F32(inc.tilt_deg, 3));
    r.field(
        "azimuth_deg",
        "azimuth (deg)",
        Value::F32(inc.azimuth_deg, 3),
    );
}
