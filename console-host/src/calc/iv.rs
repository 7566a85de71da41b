//! `mwctl calc ivpeaks`: kinematic I-V maxima of one beam, with the order rule and an
//! optional top-layer relaxation (the core's `Face::iv_peaks` and
//! `Face::iv_peaks_relaxed`).

use super::{
    check_angle, check_max, crystal_at, face_fields, face_of, index_values, table_value,
    truncated_field, v0_model, EvOrFace, GunArgs, SampleArgs, TableValue,
};
use crate::error::{CliError, CliResult, Context};
use crate::output::{col, List, Report, Value};
use matterwave_core::inner::{V0Model, V0ModelKind};
use matterwave_core::lattice::System;
use matterwave_core::surface::{Incidence, IvPeak, Relaxation};

/// Arguments of `mwctl calc ivpeaks` other than the crystal and face.
#[derive(Clone, Copy, Debug)]
pub struct IvArgs {
    /// Rod (h, k).
    pub rod: [i32; 2],
    /// Nominal start energy, eV.
    pub from: f32,
    /// Nominal end energy, eV.
    pub to: f32,
    /// Tilt, degrees.
    pub tilt: f32,
    /// Azimuth, degrees.
    pub azimuth: f32,
    /// V0, eV; `None` or `face` = the table's value for the face.
    pub inner_potential: Option<EvOrFace>,
    /// Work functions and offset (energy field unused).
    pub cathode_work_function: f32,
    /// Sample work function, eV, or the table's for the face.
    pub sample_work_function: EvOrFace,
    /// Gun offset, eV.
    pub energy_offset: f32,
    /// Sample temperature.
    pub sample: SampleArgs,
    /// A constant V0 (`inner_potential`) or the table's V0(E) for the face.
    pub v0_model: V0ModelKind,
    /// Top-layer relaxation Δd12 and Δd23, percent.
    pub relax: [f32; 2],
}

/// `mwctl calc ivpeaks`.
pub fn ivpeaks(id: &str, face_text: &str, a: &IvArgs, max: usize) -> CliResult<Report> {
    let c = &crystal_at(id, &a.sample)?;
    let (_, face) = face_of(c, face_text)?;
    let tilt = check_angle(a.tilt, "tilt", matterwave_core::surface::TILT_MAX_DEG)?;
    let azimuth = check_angle(a.azimuth, "azimuth", 360.0)?;
    let v0 = match a.inner_potential {
        Some(EvOrFace::Ev(v)) => v,
        Some(EvOrFace::Face) | None => {
            table_value(TableValue::InnerPotential, "--inner-potential", c, &face)?
        }
    };
    let sample = match a.sample_work_function {
        EvOrFace::Ev(x) => x,
        EvOrFace::Face => {
            table_value(TableValue::WorkFunction, "--sample-work-function", c, &face)?
        }
    };
    let corr = a.cathode_work_function - sample + a.energy_offset;
    // Each end of the range through the core's gun model: an error names the option.
    let gun = |nominal: f32, name: &str| {
        GunArgs {
            energy: nominal,
            cathode_work_function: a.cathode_work_function,
            sample_work_function: EvOrFace::Ev(sample),
            energy_offset: a.energy_offset,
        }
        .kinetic_ev_named(&format!("--{name}"))
    };
    let lo = gun(a.from, "from")?;
    let hi = gun(a.to, "to")?;
    if lo >= hi {
        return Err(CliError::new(format!(
            "--from {} --to {}: 'from' must be below 'to'",
            a.from, a.to
        )));
    }
    let inc = Incidence::new(lo, tilt, azimuth).ctx("incidence")?;
    if let Some(e) = face.emergence_ev(a.rod, &inc) {
        if e >= hi {
            return Err(CliError::core(
                matterwave_core::Error::Evanescent,
                format_args!(
                    "--beam {},{}: the beam emerges only at {:.2} eV at the sample ({:.2} eV nominal), above --to {}",
                    a.rod[0],
                    a.rod[1],
                    e,
                    e - corr,
                    a.to
                ),
            ));
        }
    }
    let relax = Relaxation::new(a.relax[0], a.relax[1]).ctx(format_args!(
        "--relax-d12 {} --relax-d23 {}: accepted ±{} %",
        a.relax[0],
        a.relax[1],
        matterwave_core::surface::RELAX_MAX_PCT
    ))?;
    let model = v0_model(a.v0_model, v0, c, face.miller)?;
    let mut buf = vec![IvPeak::EMPTY; check_max(max)?];
    let mut bulk = vec![IvPeak::EMPTY; buf.len()];
    // The core's one choice of model and relaxation (it refuses V0(E) with a relaxation).
    let l = face
        .iv_peaks_with(a.rod, &inc, &model, lo, hi, &relax, &mut buf)
        .map_err(|e| match (e, model) {
            (matterwave_core::Error::RelaxationNeedsConstantV0, _) => CliError::core(
                e,
                format_args!(
                    "--relax-d12 {} --relax-d23 {} with --inner-potential-model energy",
                    a.relax[0], a.relax[1]
                ),
            ),
            (e, V0Model::Constant(v0)) => CliError::core(e, format_args!("--inner-potential {v0}")),
            (e, V0Model::Energy(_)) => CliError::core(e, "--inner-potential-model energy"),
        })?;
    match model {
        V0Model::Constant(v0) => {
            face.iv_peaks(a.rod, &inc, v0, lo, hi, &mut bulk)
                .ctx(format_args!("--inner-potential {v0}"))?;
        }
        V0Model::Energy(_) => bulk.copy_from_slice(&buf),
    }
    let mut r = Report::default();
    face_fields(&mut r, c, &face);
    r.field(
        "beam",
        "beam",
        Value::Text(format!("{},{}", a.rod[0], a.rod[1])),
    );
    r.field(
        "inner_potential_model",
        "inner-potential model",
        Value::Text(model.name().into()),
    );
    r.field(
        "inner_potential_ev",
        "inner potential (eV)",
        match model {
            V0Model::Constant(v) => Value::F32(v, 2),
            V0Model::Energy(_) => Value::Missing,
        },
    );
    r.field(
        "cathode_work_function_ev",
        "cathode work function (eV)",
        Value::F32(a.cathode_work_function, 3),
    );
    r.field(
        "sample_work_function_ev",
        "sample work function (eV)",
        Value::F32(sample, 3),
    );
    r.field(
        "energy_offset_ev",
        "energy offset (eV)",
        Value::F32(a.energy_offset, 3),
    );
    r.field("tilt_deg", "tilt (deg)", Value::F32(tilt, 3));
    r.field("azimuth_deg", "azimuth (deg)", Value::F32(azimuth, 3));
    r.field(
        "relax_d12_pct",
        "top-layer relaxation Δd12 (%)",
        Value::F32(relax.d12_pct, 2),
    );
    r.field(
        "relax_d23_pct",
        "relaxation Δd23 (%)",
        Value::F32(relax.d23_pct, 2),
    );
    r.field(
        "emergence_ev",
        "beam emerges at (eV)",
        Value::opt(face.emergence_ev(a.rod, &inc), 2),
    );
    let hex = c.structure.system() == System::Hexagonal;
    let mut columns = vec![
        col("energy_ev", "energy (eV)"),
        col("nominal_ev", "nominal (eV)"),
        col("inner_energy_ev", "inside (eV)"),
        col("v0_ev", "V0 (eV)"),
        col("order", "order n"),
        col("shift_ev", "relaxation shift (eV)"),
        col("g_h", "G h"),
        col("g_k", "G k"),
    ];
    if hex {
        columns.push(col("g_i", "G i"));
    }
    columns.extend([col("g_l", "G l"), col("g_perp_inv_a", "G⊥ (1/Å)")]);
    let mut list = List {
        key: "peaks",
        columns,
        rows: Vec::new(),
    };
    for (p, b) in buf[..l.stored].iter().zip(&bulk) {
        let mut row = vec![
            Value::F32(p.energy_ev, 2),
            Value::F32(p.energy_ev - corr, 2),
            Value::F32(p.energy_ev + model.at_ev(p.energy_ev), 2),
            Value::F32(model.at_ev(p.energy_ev), 2),
            Value::Int(p.order.into()),
            Value::F32(p.energy_ev - b.energy_ev, 3),
        ];
        row.extend(index_values(p.g_hkl, hex));
        row.push(Value::F32(p.g_perp_inv_a, 5));
        list.rows.push(row);
    }
    truncated_field(&mut r, l.truncated);
    r.notes.push(
        "Order n = ⌈G⊥·period⌉ (period along the normal, above): the peak's G⊥ lies in ((n−1)/period, n/period]; the same for symmetry-equivalent beams.".into(),
    );
    if !relax.is_none() {
        r.notes.push(
            "Relaxed: each kinematic energy moved by the shift of the maximum of a damped kinematic layer stack (top planes moved, Seah–Dench attenuation length); see the core's surface::relax.".into(),
        );
    }
    r.list = Some(list);
    Ok(r)
}
