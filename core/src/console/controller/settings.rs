//! The settings the console keeps, and the one table of their keys: `set`, `get`,
//! `dump` and `help` all read [`SETTING_KEYS`], so a key is named in one place.

use embedded_io::Write;

use super::args::{miller_text, parse_branch, parse_num};
use super::fault::{check_used, check_used_or, Accepted, Fault, Result};
use super::{Console, Rw, Stream};
use crate::beam::{self, Gun, GunInput};
use crate::console::board::{AxisDriver, Detector, Interlock};
use crate::console::wire::token::Args;
use crate::error::{Error, Quantity};
use crate::goniometer::{AimRequest, Branch, CheckedRig, Mode, Rig};
use crate::inner::{self, V0Model, V0ModelKind};
use crate::lattice::{parse_miller, Miller, System};
use crate::surface::{Face, FracRod, Relaxation, Superstructure};
use crate::table::{self, Crystal};

/// Every setting the console keeps (what `dump` saves and `reset` restores).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Settings {
    /// Gun energy and corrections.
    pub gun: Gun,
    /// Inner potential, eV; `None` = the table's value for the face.
    pub inner_potential_ev: Option<f32>,
    /// Whether the sample work function follows the table's value for the face.
    pub sample_from_table: bool,
    /// The crystal.
    pub crystal: &'static Crystal,
    /// Sample temperature for the lattice constants, K; `None` = the table's.
    pub temperature_k: Option<f32>,
    /// The face (computed from the crystal and the Miller indices).
    pub face: Face,
    /// Sample tilt, degrees (also the tilt axis target of `aim`).
    pub tilt_deg: f32,
    /// Sample azimuth for two-circle aiming, degrees; `None` = in-plane mode.
    pub azimuth_deg: Option<f32>,
    /// The beam `aim` and the plans use: a whole rod, or a fractional-order beam of
    /// the overlayer.
    pub beam: FracRod,
    /// Axes and detector acceptance, checked whenever they change.
    pub rig: CheckedRig,
    /// Branch preference of `aim`, `budget` and the plans.
    pub branch: Branch,
    /// Top-layer relaxation of the I-V plan's predicted maxima.
    pub relax: Relaxation,
    /// The inner-potential model of the I-V plan and the detector: a constant V0, or
    /// the table's V0(E) form for the face (kept only while the face has one and the
    /// relaxation is 0).
    pub v0_model: V0ModelKind,
    /// The overlayer (a superstructure on the face's mesh, kept as its matrix), or
    /// `None` for the bare face. Its beams are those `beams` lists and a fractional
    /// `beam=` must be one of.
    pub overlayer: Option<Superstructure>,
    /// Whether the overlayer's rotational and mirror domains (from the mesh's point
    /// group) count with it: `domains=all` (true) or `one`.
    pub domains: bool,
}

impl Settings {
    /// Factory settings: Cu(100), 100 eV, tilt 20°, specular beam, the default rig.
    pub fn defaults() -> crate::error::Result<Settings> {
        let crystal = table::find("cu")?;
        let face = Face::new(&crystal.cell()?, [1, 0, 0])?;
        Ok(Settings {
            gun: Gun::plain(100.0),
            inner_potential_ev: None,
            sample_from_table: false,
            crystal,
            temperature_k: None,
            face,
            tilt_deg: 20.0,
            azimuth_deg: None,
            beam: FracRod::whole([0, 0]),
            rig: CheckedRig::new(Rig::bench_default())?,
            branch: Branch::Nearest,
            relax: Relaxation::NONE,
            v0_model: V0ModelKind::Constant,
            overlayer: None,
            domains: false,
        })
    }

    pub(super) fn mode(&self) -> Mode {
        self.azimuth_deg.map_or(Mode::InPlane, Mode::AtAzimuth)
    }

    /// A branch of +1 or −1 needs in-plane aiming (`azimuth=free`).
    pub(super) fn check_branch(&self) -> Result<()> {
        if self.azimuth_deg.is_some() && self.branch != Branch::Nearest {
            return Err(Error::BranchNeedsInPlane.into());
        }
        Ok(())
    }

    /// The aiming request for `rod` at the current settings and the energy at the
    /// sample `energy_ev`, on `branch`.
    pub(super) fn aim_request(
        &self,
        rod: [i32; 2],
        energy_ev: f32,
        branch: Branch,
    ) -> AimRequest<'_> {
        AimRequest::new(&self.face, rod, energy_ev, self.tilt_deg)
            .with_mode(self.mode())
            .with_branch(branch)
    }

    /// The inner potential in use, eV: the set value, else the table's for the face,
    /// else 10 eV.
    pub(super) fn inner_potential(&self) -> f32 {
        self.inner_potential_ev
            .or_else(|| self.crystal.inner_potential_for(self.face.miller))
            .unwrap_or(10.0)
    }

    /// The inner-potential model in use: the constant [`Settings::inner_potential`],
    /// or the table's V0(E) form for the face (`set` keeps that choice valid, so the
    /// error, [`Error::NoEnergyForm`], comes only from a hand-built `Settings`).
    pub(super) fn v0(&self) -> crate::error::Result<V0Model> {
        inner::model_for(
            self.v0_model,
            self.inner_potential(),
            self.crystal.inner_potential_form_for(self.face.miller),
        )
    }
}

/// Which setting a key names.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Key {
    /// Nominal gun energy, eV.
    Energy,
    /// Kinetic energy at the sample, eV (read only).
    Kinetic,
    /// Wavelength at the sample, Å (read only).
    Wavelength,
    /// Cathode work function, eV.
    Cathode,
    /// Sample work function, eV.
    Sample,
    /// Energy offset, eV.
    Offset,
    /// Inner potential, eV, or `table`.
    InnerPotential,
    /// Crystal id.
    Crystal,
    /// Face Miller indices.
    Face,
    /// Sample tilt, degrees.
    Tilt,
    /// Azimuth, degrees, or `free` (in-plane aiming).
    Azimuth,
    /// Beam rod `h,k`.
    Beam,
    /// Detector acceptance half-angle, degrees.
    Acceptance,
    /// Branch preference: `nearest`, `+1` or `-1`.
    Branch,
    /// Sample temperature, K, or `table`.
    Temperature,
    /// Top-layer relaxation Δd12, percent.
    RelaxD12,
    /// Relaxation Δd23, percent.
    RelaxD23,
    /// Inner-potential model: `constant` or `energy`.
    V0Model,
    /// Overlayer: `none`, a matrix or Wood notation.
    Overlayer,
    /// Whether the overlayer's domains count: `one` or `all`.
    Domains,
}

/// One setting key as the protocol names it.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct SettingKey {
    /// The key word in `set`, `get` and `dump`.
    pub name: &'static str,
    /// The setting.
    pub key: Key,
    /// Whether `set` accepts it (false for values derived from others).
    pub settable: bool,
    /// The settings line of the dump (0 to 3) that carries it, for settable keys.
    pub dump_line: u8,
}

const fn k(name: &'static str, key: Key, settable: bool, dump_line: u8) -> SettingKey {
    SettingKey {
        name,
        key,
        settable,
        dump_line,
    }
}

/// Every setting key, in the order `get` prints them and `set` applies them (the
/// crystal before the face it is read against).
pub const SETTING_KEYS: [SettingKey; 20] = [
    k("energy", Key::Energy, true, 0),
    k("kinetic", Key::Kinetic, false, 0),
    k("wavelength", Key::Wavelength, false, 0),
    k("cathode", Key::Cathode, true, 0),
    k("sample", Key::Sample, true, 0),
    k("offset", Key::Offset, true, 0),
    k("v0", Key::InnerPotential, true, 0),
    k("crystal", Key::Crystal, true, 1),
    k("temperature", Key::Temperature, true, 2),
    k("face", Key::Face, true, 1),
    k("tilt", Key::Tilt, true, 1),
    k("azimuth", Key::Azimuth, true, 1),
    k("acceptance", Key::Acceptance, true, 2),
    k("branch", Key::Branch, true, 1),
    k("relax_d12", Key::RelaxD12, true, 3),
    k("relax_d23", Key::RelaxD23, true, 3),
    k("v0_model", Key::V0Model, true, 3),
    k("overlayer", Key::Overlayer, true, 4),
    k("domains", Key::Domains, true, 4),
    k("beam", Key::Beam, true, 4),
];

/// The words of `domains=`: the overlayer alone, or with its domains.
pub(super) const DOMAIN_WORDS: [(&str, bool); 2] = [("one", false), ("all", true)];

/// Lines of the dump that [`SETTING_KEYS`] fill: five, so that each fits one request
/// line with its checksum at the longest values `set` accepts (every number at 15
/// bytes, face, overlayer and beam at their limits; `tests/tests/reply_lengths.rs`).
/// The branch stays on the line with the azimuth, which it depends on; the beam comes
/// last, after the face and the overlayer it must belong to.
pub(super) const SETTING_DUMP_LINES: u8 = 5;

/// What `set` changed besides the fields it was given.
#[derive(Default)]
pub(super) struct SetNotes<'a> {
    /// The text given with `overlayer=` (read once the face is known).
    pub(super) overlayer: Option<&'a str>,
    /// The text given with `beam=`.
    pub(super) beam: Option<&'a str>,
    /// Miller indices given with `face=`.
    miller: Option<Miller>,
    /// Whether `crystal=` was given.
    crystal: bool,
    /// Whether `temperature=` was given.
    temperature: bool,
    /// Whether a key of the rig's geometry (`acceptance=`) was given.
    geometry: bool,
    /// The detector acceptance given with `acceptance=`, degrees.
    acceptance_deg: Option<f32>,
    /// Whether `v0_model=` was given.
    v0_model: bool,
}

/// Applies `key=value` to `s`.
fn apply<'a>(s: &mut Settings, notes: &mut SetNotes<'a>, key: Key, v: &'a str) -> Result<()> {
    match key {
        Key::Energy => s.gun.nominal_ev = parse_num(v)?,
        Key::Cathode => s.gun.cathode_work_function_ev = beam::check_work_function(parse_num(v)?)?,
        Key::Sample => {
            s.sample_from_table = v == "table";
            if !s.sample_from_table {
                s.gun.sample_work_function_ev = beam::check_work_function(parse_num(v)?)?;
            }
        }
        Key::Offset => s.gun.offset_ev = parse_num(v)?,
        Key::InnerPotential => {
            s.inner_potential_ev = if v == "table" {
                None
            } else {
                Some(beam::check_inner_potential(parse_num(v)?)?)
            }
        }
        Key::Crystal => {
            s.crystal = table::find(v)?;
            notes.crystal = true;
        }
        Key::Temperature => {
            s.temperature_k = if v == "table" {
                None
            } else {
                Some(parse_num(v)?)
            };
            notes.temperature = true;
        }
        Key::Face => {
            let hex = s.crystal.structure.system() == System::Hexagonal;
            notes.miller = Some(parse_miller(v, hex)?);
        }
        Key::Tilt => s.tilt_deg = crate::surface::check_tilt(parse_num(v)?)?,
        Key::Azimuth => {
            s.azimuth_deg = if v == "free" {
                None
            } else {
                let x = parse_num(v)?;
                if x.abs() > 360.0 {
                    return Err(Error::TooHigh(Quantity::Azimuth).into());
                }
                Some(x)
            }
        }
        Key::Beam => {
            s.beam = FracRod::parse(v)?;
            notes.beam = Some(v);
        }
        Key::Overlayer => notes.overlayer = Some(v),
        Key::Domains => {
            s.domains = DOMAIN_WORDS
                .iter()
                .find(|(w, _)| *w == v)
                .map(|(_, b)| *b)
                .ok_or_else(|| {
                    Fault::from(Error::BadValue)
                        .because("not a domains word")
                        .accepting(Accepted::Domains)
                })?;
        }
        Key::Acceptance => notes.acceptance_deg = Some(parse_num(v)?),
        Key::Branch => s.branch = parse_branch(v)?,
        Key::RelaxD12 => s.relax = Relaxation::new(parse_num(v)?, s.relax.d23_pct)?,
        Key::RelaxD23 => s.relax = Relaxation::new(s.relax.d12_pct, parse_num(v)?)?,
        Key::V0Model => {
            s.v0_model = V0ModelKind::from_name(v).ok_or_else(|| {
                Fault::from(Error::BadValue)
                    .because("no such inner-potential model")
                    .accepting(Accepted::V0Models)
            })?;
            notes.v0_model = true;
        }
        Key::Kinetic | Key::Wavelength => return Err(Error::UnknownArgument.into()),
    }
    Ok(())
}

impl Settings {
    /// Writes `key=value` for `get` (`for_dump` false: values in use) or `dump`
    /// (`for_dump` true: the setting as `set` takes it back).
    pub(super) fn write_key<W: Write>(
        &self,
        key: &SettingKey,
        for_dump: bool,
        rw: &mut Rw<'_, W>,
    ) -> Result<()> {
        let n = key.name;
        match key.key {
            Key::Energy => rw.field_f32_rt(n, self.gun.nominal_ev),
            Key::Kinetic => rw.field_f32_rt(n, self.gun.kinetic_energy_ev()?),
            Key::Wavelength => {
                rw.field_f32_rt(n, beam::wavelength_a(self.gun.kinetic_energy_ev()?)?)
            }
            Key::Cathode => rw.field_f32_rt(n, self.gun.cathode_work_function_ev),
            Key::Sample if for_dump && self.sample_from_table => rw.field_str(n, "table"),
            Key::Sample => rw.field_f32_rt(n, self.gun.sample_work_function_ev),
            Key::Offset => rw.field_f32_rt(n, self.gun.offset_ev),
            Key::InnerPotential => match (for_dump, self.inner_potential_ev) {
                (true, None) => rw.field_str(n, "table"),
                (true, Some(v)) => rw.field_f32_rt(n, v),
                (false, _) => rw.field_f32_rt(n, self.inner_potential()),
            },
            Key::Crystal => rw.field_str(n, self.crystal.id),
            Key::Temperature => match (for_dump, self.temperature_k) {
                (true, None) => rw.field_str(n, "table"),
                (_, Some(t)) => rw.field_f32_rt(n, t),
                (false, None) => rw.field_f32_rt(n, self.crystal.temperature_k),
            },
            Key::Face => {
                let mut b = [0u8; 40];
                rw.field_str(n, miller_text(self.face.miller, &mut b))
            }
            Key::Tilt => rw.field_f32_rt(n, self.tilt_deg),
            Key::Azimuth => match self.azimuth_deg {
                Some(v) => rw.field_f32_rt(n, v),
                None => rw.field_str(n, "free"),
            },
            Key::Beam => {
                let mut b: heapless::String<40> = heapless::String::new();
                // 40 bytes hold any beam `set` accepts (two fractions of ±9801/99).
                let _ = self.beam.write_to(&mut b);
                rw.field_str(n, &b)
            }
            Key::Overlayer => match self.overlayer {
                None => rw.field_str(n, "none"),
                Some(o) => {
                    let mut b: heapless::String<40> = heapless::String::new();
                    // 40 bytes hold any matrix (four entries of ±24/4 at most 5 bytes).
                    let _ = o.write_to(&mut b);
                    rw.field_str(n, &b)
                }
            },
            Key::Domains => rw.field_str(n, if self.domains { "all" } else { "one" }),
            Key::Acceptance => rw.field_f32_rt(n, self.rig.acceptance_deg),
            Key::Branch => rw.field_str(n, self.branch.word()),
            Key::RelaxD12 => rw.field_f32_rt(n, self.relax.d12_pct),
            Key::RelaxD23 => rw.field_f32_rt(n, self.relax.d23_pct),
            Key::V0Model => rw.field_str(n, self.v0_model.name()),
        };
        Ok(())
    }
}

impl<A: AxisDriver, D: Detector, I: Interlock> Console<A, D, I> {
    /// `set key=value ...`: every key checked and applied to a copy, committed only
    /// when all are valid. A crystal given without a face switches to that crystal's
    /// first table face, and the `ok` line says so (`face=… face_from=table`).
    #[inline(never)]
    pub(super) fn cmd_set<W: Write>(
        &mut self,
        a: &mut Args<'_>,
        rw: &mut Rw<'_, W>,
    ) -> Result<Option<Stream>> {
        if a.is_empty() {
            return Err(Fault::from(Error::MissingArgument)
                .because("nothing to set: give key=value")
                .accepting(Accepted::SetKeys));
        }
        let mut s = self.settings;
        let mut notes = SetNotes::default();
        for key in SETTING_KEYS.iter().filter(|k| k.settable) {
            if let Some(v) = a.get(key.name) {
                apply(&mut s, &mut notes, key.key, v).map_err(|f| f.at(key.name, v))?;
                notes.geometry |= key.key == Key::Acceptance;
            }
        }
        // A key `get` knows but `set` does not take is read only, not unknown.
        if let Some((k, v)) = a.first_unused().and_then(|t| t.split_once('=')) {
            if SETTING_KEYS.iter().any(|sk| sk.name == k && !sk.settable) {
                return Err(Fault::from(Error::UnknownArgument)
                    .at(k, v)
                    .because("read-only setting")
                    .accepting(Accepted::SetKeys));
            }
        }
        check_used_or(a, Accepted::SetKeys)?;
        // The acceptance bounds the steps and residuals of every axis: it is rig
        // geometry, changed only at rest.
        if notes.geometry {
            self.require_at_rest()?;
        }
        let from_table = notes.crystal && notes.miller.is_none();
        let miller = match (notes.miller, from_table) {
            (Some(m), _) => Some(m),
            (None, true) => Some(
                s.crystal
                    .faces
                    .first()
                    .map(|f| f.miller)
                    .ok_or(Error::FaceNeeded)?,
            ),
            (None, false) => None,
        };
        // A new crystal without `temperature=` goes back to the table temperature (its
        // expansion range differs from the old crystal's), and the `ok` line says so.
        let temperature_reset = notes.crystal && !notes.temperature && s.temperature_k.is_some();
        if temperature_reset {
            s.temperature_k = None;
        }
        // A new temperature rebuilds the face.
        let rebuild = notes.temperature || temperature_reset;
        let miller = miller.or(rebuild.then_some(s.face.miller));
        if let Some(m) = miller {
            let key = if notes.temperature {
                "temperature"
            } else {
                "crystal"
            };
            let cell = s
                .crystal
                .cell_at(s.temperature_k)
                .map_err(|e| Fault::from(e).on_key(key))?;
            s.face = Face::new(&cell, m)?;
        }
        if s.sample_from_table {
            s.gun.sample_work_function_ev = s
                .crystal
                .work_function_for(s.face.miller)
                .ok_or(Error::NoTableValue(Quantity::WorkFunction))?;
        }
        // A bad gun setting names its key (the sum: the energy, which it starts from).
        s.gun.kinetic_energy_at().map_err(|(input, e)| {
            Fault::from(e).on_key(match input {
                GunInput::Nominal | GunInput::Sum => "energy",
                GunInput::CathodeWorkFunction => "cathode",
                GunInput::SampleWorkFunction => "sample",
                GunInput::Offset => "offset",
            })
        })?;
        let v0_reset = s.check_v0_model(notes.v0_model)?;
        let (overlayer_reset, beam_reset) = s.check_overlayer(&self.settings, &notes)?;
        if let Some(a) = notes.acceptance_deg {
            let mut rig = *s.rig.rig();
            rig.acceptance_deg = a;
            s.rig = CheckedRig::new(rig)?;
        }
        s.check_branch()?;
        self.settings = s;
        self.solutions.clear();
        rw.ok();
        if from_table {
            let mut b = [0u8; 40];
            rw.field_str("crystal", s.crystal.id)
                .field_str("face", miller_text(s.face.miller, &mut b))
                .field_str("face_from", "table");
        }
        if temperature_reset {
            rw.field_f32_rt("temperature", s.crystal.temperature_k)
                .field_str("temperature_from", "table");
        }
        if v0_reset {
            rw.field_str("v0_model", s.v0_model.name())
                .field_str("v0_model_from", "no_form");
        }
        if overlayer_reset {
            rw.field_str("overlayer", "none")
                .field_str("overlayer_from", "new_face");
        }
        if beam_reset {
            rw.field_str("beam", "0,0")
                .field_str("beam_from", "overlayer");
        }
        Ok(None)
    }

    /// `get [key]`: one setting on the `ok` line, or all of them streamed, one item each
    /// in table order.
    pub(super) fn cmd_get<W: Write>(
        &mut self,
        a: &mut Args<'_>,
        rw: &mut Rw<'_, W>,
    ) -> Result<Option<Stream>> {
        let want = a.positional(0);
        check_used(a)?;
        if let Some(w) = want {
            if !SETTING_KEYS.iter().any(|k| k.name == w) {
                return Err(Fault::from(Error::UnknownArgument)
                    .quoting(w)
                    .because("unknown setting")
                    .accepting(Accepted::GetKeys));
            }
        }
        let s = &self.settings;
        // Fails early (before `ok` or the first item) when the gun settings give no
        // valid energy.
        s.gun.kinetic_energy_ev()?;
        let Some(key) = want.and_then(|w| SETTING_KEYS.iter().find(|k| k.name == w)) else {
            // Every setting, one item each: no single line holds them all.
            return Ok(Some(Stream::Get(0)));
        };
        rw.ok();
        s.write_key(key, false, rw)?;
        Ok(None)
    }
}

impl Settings {
    /// Keeps the inner-potential model valid after `set`: `energy` needs the table's
    /// V0(E) form for the face ([`Error::NoEnergyForm`]) and no relaxation
    /// ([`Error::RelaxationNeedsConstantV0`]), both refused when `v0_model=` was
    /// `given`. Otherwise a new crystal or face without a form takes the model back to
    /// `constant` (true: the `ok` line says so), so that every dump line replays on its
    /// own; a relaxation given with the model `energy` in place is refused.
    fn check_v0_model(&mut self, given: bool) -> Result<bool> {
        if self.v0_model != V0ModelKind::Energy {
            return Ok(false);
        }
        let has_form = self
            .crystal
            .inner_potential_form_for(self.face.miller)
            .is_some();
        if !has_form {
            if given {
                return Err(Fault::from(Error::NoEnergyForm).at("v0_model", "energy"));
            }
            self.v0_model = V0ModelKind::Constant;
            return Ok(true);
        }
        if !self.relax.is_none() {
            let fault = Fault::from(Error::RelaxationNeedsConstantV0);
            return Err(if given {
                fault.at("v0_model", "energy")
            } else {
                fault.on_key(if self.relax.d12_pct != 0.0 {
                    "relax_d12"
                } else {
                    "relax_d23"
                })
            });
        }
        Ok(false)
    }
}
