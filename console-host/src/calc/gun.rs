//! The gun options every calculation takes (`--energy`, the work functions, the
//! offset, or `--wavelength`), and the table's per-face values named `face`.

use super::*;

/// A value in eV, or `face`: the crystal table's value for the face in use (the value
/// the controller's `sample=table` and `v0=table` take, from the same core facts:
/// [`Crystal::work_function_for`] and [`Crystal::inner_potential_for`]).
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum EvOrFace {
    /// A value, eV.
    Ev(f32),
    /// The table's value for the face (`face`, also spelled `table` as on the console).
    Face,
}

impl EvOrFace {
    /// The value in eV once resolved ([`GunArgs::at_face`]); NaN while it is still
    /// `face`, which the core refuses as not finite.
    pub fn ev(self) -> f32 {
        match self {
            EvOrFace::Ev(x) => x,
            EvOrFace::Face => f32::NAN,
        }
    }
}

/// Reads an eV value or `face` (or `table`).
pub fn ev_or_face(s: &str) -> Result<EvOrFace, String> {
    match s.trim() {
        "face" | "table" => Ok(EvOrFace::Face),
        _ => crate::number::f32_arg(s)
            .map(EvOrFace::Ev)
            .map_err(|e| format!("{e}; or face for the crystal table's value for the face")),
    }
}

/// Which table value a `face` option asks for.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum TableValue {
    /// The sample's work function, eV.
    WorkFunction,
    /// The inner potential V0, eV.
    InnerPotential,
}

/// The crystal table's value for `face` of `c` (the face's own, else the crystal's),
/// or an error naming `option` when the table has none.
pub fn table_value(what: TableValue, option: &str, c: &Crystal, face: &Face) -> CliResult<f32> {
    let (v, q, word) = match what {
        TableValue::WorkFunction => (
            c.work_function_for(face.miller),
            matterwave_core::Quantity::WorkFunction,
            "work function",
        ),
        TableValue::InnerPotential => (
            c.inner_potential_for(face.miller),
            matterwave_core::Quantity::InnerPotential,
            "inner potential",
        ),
    };
    let hex = c.structure.system() == System::Hexagonal;
    v.ok_or_else(|| CliError {
        code: Some(matterwave_core::Error::NoTableValue(q).code()),
        message: format!(
            "{option} face: the crystal table has no {word} for {} {}; give it in eV (`mwctl crystals --crystal {}` lists the table's values)",
            c.id,
            miller_text(face.miller, hex).replace(' ', ""),
            c.id
        ),
    })
}

/// An error for `option face` on a command without a crystal face.
pub fn no_face_for(option: &str, command: &str) -> CliError {
    CliError::new(format!(
        "{option} face: `{command}` has no --face to look the value up for; give it in eV"
    ))
}

/// Gun energy and its corrections, as given on the command line.
#[derive(Clone, Copy, Debug, clap::Args)]
pub struct GunArgs {
    /// Nominal beam energy e·V_acc, eV (1 to 300000).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV")]
    pub energy: f32,
    /// Cathode work function, eV (adds to the energy at the sample; 0 = no correction).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV", default_value_t = 0.0)]
    pub cathode_work_function: f32,
    /// Sample work function, eV (subtracts from the energy at the sample; 0 = none), or
    /// `face`: the crystal table's value for the face.
    #[arg(value_parser = ev_or_face, long, value_name = "EV|face", default_value = "0")]
    pub sample_work_function: EvOrFace,
    /// Fitted gun energy offset, eV (added to the energy at the sample).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV", default_value_t = 0.0)]
    pub energy_offset: f32,
}

/// The gun options of `mwctl calc wavelength`: those of [`GunArgs`], with the nominal
/// energy given either as `--energy` or through the wavelength wanted at the sample.
#[derive(Clone, Copy, Debug, clap::Args)]
pub struct WavelengthGunArgs {
    /// Nominal beam energy e·V_acc, eV (1 to 300000).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV",
          required_unless_present = "wavelength", conflicts_with = "wavelength")]
    pub energy: Option<f32>,
    /// Wavelength wanted at the sample, Å (0.0197 to 12.26): the nominal energy that
    /// gives it with the corrections below is found (the inverse of --energy).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "Å")]
    pub wavelength: Option<f32>,
    /// Cathode work function, eV (adds to the energy at the sample; 0 = no correction).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV", default_value_t = 0.0)]
    pub cathode_work_function: f32,
    /// Sample work function, eV (subtracts from the energy at the sample; 0 = none).
    #[arg(value_parser = ev_or_face, long, value_name = "EV|face", default_value = "0")]
    pub sample_work_function: EvOrFace,
    /// Fitted gun energy offset, eV (added to the energy at the sample).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "EV", default_value_t = 0.0)]
    pub energy_offset: f32,
}

impl WavelengthGunArgs {
    /// The gun settings: `--energy` as given, or the nominal energy whose kinetic energy
    /// at the sample has the `--wavelength` (core: [`beam::energy_from_wavelength_ev`],
    /// [`Gun::for_kinetic_energy`]).
    pub fn gun_args(&self) -> CliResult<GunArgs> {
        let mut g = GunArgs {
            energy: self.energy.unwrap_or(f32::NAN),
            cathode_work_function: self.cathode_work_function,
            sample_work_function: self.sample_work_function,
            energy_offset: self.energy_offset,
        }
        .without_face("calc wavelength")?;
        let Some(lambda) = self.wavelength else {
            return Ok(g);
        };
        let e =
            beam::energy_from_wavelength_ev(lambda).ctx(format_args!("--wavelength {lambda}"))?;
        let n = g.gun().for_kinetic_energy(e).map_err(|(input, err)| {
            let flag = match input {
                GunInput::CathodeWorkFunction => {
                    format!("--cathode-work-function {}", self.cathode_work_function)
                }
                GunInput::SampleWorkFunction => {
                    format!("--sample-work-function {}", g.sample_ev())
                }
                GunInput::Offset => format!("--energy-offset {}", self.energy_offset),
                _ => {
                    return CliError {
                        code: Some(err.code()),
                        message: format!(
                            "--wavelength {lambda} needs {e} eV at the sample; with the corrections given (cathode {} eV, sample {} eV, offset {} eV) that is a nominal energy of {} eV, and a nominal energy must be above 0 and at most 300000 eV",
                            self.cathode_work_function,
                            g.sample_ev(),
                            self.energy_offset,
                            e - g.correction_ev()
                        ),
                    }
                }
            };
            CliError::core(err, flag)
        })?;
        g.energy = n.nominal_ev;
        Ok(g)
    }
}

impl GunArgs {
    /// These settings with `--sample-work-function face` replaced by the table's value
    /// for `face` of `c`.
    pub fn at_face(&self, c: &Crystal, face: &Face) -> CliResult<GunArgs> {
        let mut g = *self;
        if g.sample_work_function == EvOrFace::Face {
            g.sample_work_function = EvOrFace::Ev(table_value(
                TableValue::WorkFunction,
                "--sample-work-function",
                c,
                face,
            )?);
        }
        Ok(g)
    }

    /// These settings on a command without a face: `--sample-work-function face` is
    /// refused.
    pub fn without_face(&self, command: &str) -> CliResult<GunArgs> {
        if self.sample_work_function == EvOrFace::Face {
            return Err(no_face_for("--sample-work-function", command));
        }
        Ok(*self)
    }

    /// The sample work function, eV (resolved).
    fn sample_ev(&self) -> f32 {
        self.sample_work_function.ev()
    }

    /// The core's gun settings.
    pub fn gun(&self) -> Gun {
        Gun {
            nominal_ev: self.energy,
            cathode_work_function_ev: self.cathode_work_function,
            sample_work_function_ev: self.sample_ev(),
            offset_ev: self.energy_offset,
        }
    }

    /// Kinetic energy at the sample, eV; an error names the option at fault (the sum
    /// names every option that went into it).
    pub fn kinetic_ev(&self) -> CliResult<f32> {
        self.kinetic_ev_named("--energy")
    }

    /// [`GunArgs::kinetic_ev`] with the nominal energy given by `energy_option` (e.g.
    /// `--from` for the start of a range).
    pub fn kinetic_ev_named(&self, energy_option: &str) -> CliResult<f32> {
        self.gun().kinetic_energy_at().map_err(|(input, e)| {
            let flag = match input {
                GunInput::Nominal => format!("{energy_option} {}", self.energy),
                GunInput::CathodeWorkFunction => {
                    format!("--cathode-work-function {}", self.cathode_work_function)
                }
                GunInput::SampleWorkFunction => {
                    format!("--sample-work-function {}", self.sample_ev())
                }
                GunInput::Offset => format!("--energy-offset {}", self.energy_offset),
                GunInput::Sum => {
                    let mut s = format!("{energy_option} {}", self.energy);
                    for (name, x) in [
                        ("--cathode-work-function", self.cathode_work_function),
                        ("--sample-work-function", self.sample_ev()),
                        ("--energy-offset", self.energy_offset),
                    ] {
                        if x != 0.0 {
                            s.push_str(&format!(" {name} {x}"));
                        }
                    }
                    s
                }
            };
            CliError::core(e, flag)
        })
    }

    /// The correction added to a nominal energy to get the kinetic energy, eV.
    pub fn correction_ev(&self) -> f32 {
        self.cathode_work_function - self.sample_ev() + self.energy_offset
    }

    /// The gun fields of a report: nominal energy, the corrections when any is set, and
    /// the energy at the sample.
    pub(crate) fn fields(&self, r: &mut Report, kinetic: f32) {
        r.field(
            "nominal_ev",
            "nominal energy (eV)",
            Value::F32(self.energy, 3),
        );
        if self.correction_ev() != 0.0 {
            r.field(
                "cathode_work_function_ev",
                "cathode work function (eV)",
                Value::F32(self.cathode_work_function, 3),
            );
            r.field(
                "sample_work_function_ev",
                "sample work function (eV)",
                Value::F32(self.sample_ev(), 3),
            );
            r.field(
                "energy_offset_ev",
                "energy offset (eV)",
                Value::F32(self.energy_offset, 3),
            );
        }
        r.field("energy_ev", "energy at sample (eV)", Value::F32(kinetic, 3));
    }
}
