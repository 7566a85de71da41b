//! `mwctl calc steps`: a stepped (vicinal) face — the split of one beam at an energy,
//! with the arm angles of its sub-beams, and the specular beam's in-phase and
//! out-of-phase energies. The model is the core's ([`matterwave_core::surface::steps`]).

use super::{
    check_angle, crystal_at, face_fields, face_of, incidence_fields, parse_rod, SampleArgs,
};
use super::{table_value, EvOrFace, GunArgs, TableValue};
use crate::error::{CliError, CliResult, Context};
use crate::output::{col, List, Report, Value};
use matterwave_core::surface::steps::{StepPhase, Steps};
use matterwave_core::surface::Incidence;

/// The options of `mwctl calc steps`.
#[derive(Clone, Debug, clap::Args)]
pub struct StepsArgs {
    /// Crystal id.
    #[arg(long, value_name = "ID")]
    pub crystal: String,
    /// Sample temperature.
    #[command(flatten)]
    pub sample: SampleArgs,
    /// Face of the terraces (as for `beams`).
    #[arg(long, value_name = "HKL", allow_hyphen_values = true)]
    pub face: String,
    /// Gun settings (the energy of the split shown).
    #[command(flatten)]
    pub gun: GunArgs,
    /// Sample tilt α, degrees, within ±89.9 (0: normal incidence).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub tilt: f32,
    /// Sample azimuth φ, degrees, within ±360 (0: a1 along e1, in the scattering plane).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub azimuth: f32,
    /// Miscut angle from the terrace face, degrees (above 0, at most 45).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG",
          required_unless_present = "terrace", conflicts_with = "terrace")]
    pub miscut: Option<f32>,
    /// Terrace width along the step-down direction, Å (0.5 to 100000).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "Å")]
    pub terrace: Option<f32>,
    /// Step height, Å (above 0, at most 100); default a monatomic step of the face
    /// (its interlayer spacing; the period when the atomic planes are unevenly spaced).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "Å")]
    pub step_height: Option<f32>,
    /// Step-down direction: its azimuth in the surface frame, from a1 (e1) toward e2,
    /// degrees.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub step_azimuth: f32,
    /// The beam (rod) H,K of the terraces to split.
    #[arg(
        long,
        value_name = "H,K",
        allow_hyphen_values = true,
        default_value = "0,0"
    )]
    pub beam: String,
    /// Inner potential V0, eV (0 to 100), or `face` (the default): the table's value.
    #[arg(value_parser = super::ev_or_face, long, value_name = "EV|face")]
    pub inner_potential: Option<EvOrFace>,
    /// Start of the range for the in/out-of-phase energies, eV at the sample.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV", default_value_t = 5.0)]
    pub from: f32,
    /// End of that range, eV at the sample.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV", default_value_t = 500.0)]
    pub to: f32,
}

/// Most in/out-of-phase energies listed.
const MAX_PHASES: usize = 200;

/// `mwctl calc steps`.
pub fn steps(a: &StepsArgs) -> CliResult<Report> {
    let c = &crystal_at(&a.crystal, &a.sample)?;
    let (_, face) = face_of(c, &a.face)?;
    let g = &a.gun.at_face(c, &face)?;
    let e = g.kinetic_ev()?;
    let tilt = check_angle(a.tilt, "tilt", matterwave_core::surface::TILT_MAX_DEG)?;
    let azimuth = check_angle(a.azimuth, "azimuth", 360.0)?;
    let inc = Incidence::new(e, tilt, azimuth).ctx("incidence")?;
    let v0 = match a.inner_potential {
        Some(EvOrFace::Ev(v)) => v,
        Some(EvOrFace::Face) | None => {
            table_value(TableValue::InnerPotential, "--inner-potential", c, &face)?
        }
    };
    let h = a.step_height.unwrap_or_else(|| face.monatomic_step_a());
    let st = match (a.miscut, a.terrace) {
        (Some(m), _) => Steps::from_miscut(m, a.step_azimuth, h).ctx(format_args!(
            "--miscut {m} --step-height {h} --step-azimuth {}",
            a.step_azimuth
        ))?,
        (None, Some(l)) => Steps::new(l, h, a.step_azimuth).ctx(format_args!(
            "--terrace {l} --step-height {h} --step-azimuth {}",
            a.step_azimuth
        ))?,
        (None, None) => return Err(CliError::new("give --miscut DEG or --terrace Å")),
    };
    let rod = parse_rod(&a.beam)?;
    let split = face
        .split(&st, rod, &inc, v0)
        .ctx(format_args!("--beam {}", a.beam))?;
    let mut phases = vec![StepPhase::EMPTY; MAX_PHASES];
    let pl = face
        .step_phases(&st, &inc, v0, a.from, a.to, &mut phases)
        .ctx(format_args!("--from {} --to {}", a.from, a.to))?;

    let mut r = Report::default();
    face_fields(&mut r, c, &face);
    g.fields(&mut r, e);
    incidence_fields(&mut r, &inc);
    r.field(
        "inner_potential_ev",
        "inner potential (eV)",
        Value::F32(v0, 2),
    );
    r.field(
        "terrace_a",
        "terrace width L (Å)",
        Value::F32(st.terrace_a, 3),
    );
    r.field(
        "step_height_a",
        "step height h (Å)",
        Value::F32(st.height_a, 4),
    );
    r.field("miscut_deg", "miscut (deg)", Value::F32(st.miscut_deg(), 4));
    r.field(
        "step_azimuth_deg",
        "step-down azimuth (deg)",
        Value::F32(st.azimuth_deg, 3),
    );
    r.field(
        "beam",
        "beam",
        Value::Text(format!("{},{}", rod[0], rod[1])),
    );
    r.field(
        "phase_cycles",
        "terrace phase u (cycles)",
        Value::F32(split.phase_cycles, 4),
    );
    r.field(
        "splitting_inv_a",
        "spot splitting 1/L (1/Å)",
        Value::F32(split.splitting_inv_a, 6),
    );
    r.field(
        "splitting_deg",
        "angle between the two sub-beams (deg)",
        Value::opt(split.angle_deg(), 4),
    );
    let list_of = |in_phase: bool| {
        Value::List(
            phases[..pl.stored]
                .iter()
                .filter(|p| p.in_phase == in_phase)
                .map(|p| Value::F32(p.energy_ev, 2))
                .collect(),
        )
    };
    r.field("in_phase_ev", "specular in phase at (eV)", list_of(true));
    r.field(
        "out_of_phase_ev",
        "specular out of phase at (eV)",
        list_of(false),
    );
    super::truncated_field(&mut r, pl.truncated);
    let mut list = List {
        key: "sub_beams",
        columns: vec![
            col("index", "j"),
            col("offset_inv_a", "δ along ŝ (1/Å)"),
            col("exit_deg", "exit (deg)"),
            col("exit_azimuth_deg", "exit azimuth (deg)"),
            col("arm_deg", "arm (deg)"),
            col("elevation_deg", "elevation (deg)"),
            col("weight", "weight"),
        ],
        rows: Vec::new(),
    };
    for b in split.beams.iter().flatten() {
        list.rows.push(vec![
            Value::Int(b.index.into()),
            Value::F32(b.offset_inv_a, 6),
            Value::F32(b.exit_deg, 3),
            Value::F32(b.exit_azimuth_deg, 2),
            Value::F32(b.arm_deg, 3),
            Value::F32(b.elevation_deg, 3),
            Value::F32(b.weight, 3),
        ]);
    }
    r.notes.push(
        "Kinematic step model: terraces of width L, steps of height h; the phase u = q·h − L·(g·ŝ) (q = K⊥,in + K⊥,out inside, with V0) is whole in phase and n + ½ out of phase; the two sub-beams nearest the terrace beam, weighted by the terrace envelope.".into(),
    );
    r.notes.push(
        "Moving the arm onto a sub-beam moves hardware: the gun runs at high voltage and fast electrons make X-rays; keep clear of the moving arm. The software is not an interlock.".into(),
    );
    r.list = Some(list);
    Ok(r)
}
