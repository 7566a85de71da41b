//! The running stream: what each `poll` writes for help, the crystal and face lists,
//! beams, aim solutions, plan points and the dump.

use core::fmt::Write as _;
use embedded_io::Write;

use super::args::{miller_text, write_frac, write_refusal};
use super::fault::Accepted;
use super::fault::Result;
use super::fault::{write_err, Fault};
use super::plan::PlanRun;
use super::screen::ScreenRun;
use super::settings::{Settings, SETTING_KEYS};
use super::steps::StepsRun;
use super::{
    Console, Rw, ANGLE_DECIMALS, COMMANDS, ENERGY_DECIMALS, LENGTH_DECIMALS, MAX_SOLUTIONS,
    RESIDUAL_DECIMALS,
};
use crate::budget::ArmBudget;
use crate::console::board::{AxisDriver, Detector, Interlock};
use crate::goniometer::{Refusals, Solution};
use crate::lattice::System;
use crate::surface::{Incidence, OverlayerBeams, SortedBeams, SurfaceBeam};
use crate::table;

/// What a stream reads besides its own state: borrowed from the console beside it.
pub(super) struct Context<'a> {
    pub(super) settings: &'a Settings,
    pub(super) solutions: &'a [Solution],
    pub(super) refusals: &'a Refusals,
}

/// The one stream a console runs at a time.
// No heap to box into: the one running plan lives in place.
#[allow(clippy::large_enum_variant)]
pub(super) enum Stream {
    Idle,
    Help(u8),
    Crystals(u8),
    Faces(u8),
    /// The beams, the count so far, and the |g| limit when it cuts the list.
    Beams(SortedBeams, u32, Option<f32>),
    /// The overlayer's beams (with its domains), the count so far, and the |g| limit
    /// when it cuts the list.
    Overlayer(OverlayerBeams, u32, Option<f32>),
    /// `get` without a key: the next entry of [`SETTING_KEYS`].
    Get(u8),
    Aim(u8),
    Refused(u8),
    Plan(PlanRun),
    Budget(ArmBudget, u8),
    Steps(StepsRun),
    Screen(ScreenRun),
    Dump(u8),
}

impl<A: AxisDriver, D: Detector, I: Interlock> Console<A, D, I> {
    /// Starts the `beams` list at the current settings: every beam with |g| up to the
    /// radius of a disk of about [`BEAM_LIST_RODS`] rods (all of them at low energy).
    #[inline(never)]
    pub(super) fn start_beams(&self) -> Result<Option<Stream>> {
        let s = &self.settings;
        let e = s.gun.kinetic_energy_ev()?;
        let inc = Incidence::new(e, s.tilt_deg, s.azimuth_deg.unwrap_or(0.0))?;
        let f = &s.face;
        // With an overlayer the disk holds about as many rods of its beams' grid (of
        // 1/den in h and k, den² rods per substrate cell), so that a walk costs the same.
        let lattices = s.lattices()?;
        let den = lattices.map_or(1, |l| l.den()) as f32;
        let g_max = crate::math::sqrt(
            BEAM_LIST_RODS as f32 / (core::f32::consts::PI * f.area_a2() * den * den),
        );
        let cut = (!f.covers_all(&inc, g_max)).then_some(g_max);
        // Each list is built by its own function straight into the reply's slot (the
        // same return type), so that no copy of a stream sits in this frame.
        match lattices {
            None => rods_stream(f, &inc, g_max, cut),
            Some(l) => overlayer_stream(f, &inc, l, g_max, cut),
        }
    }
}

/// The bare face's `beams` stream.
#[inline(never)]
fn rods_stream(
    face: &crate::surface::Face,
    inc: &Incidence,
    g_max: f32,
    cut: Option<f32>,
) -> Result<Option<Stream>> {
    Ok(Some(Stream::Beams(
        face.beams_within(inc, g_max).sorted(),
        0,
        cut,
    )))
}

/// The overlayer's `beams` stream. Out of line, so that its grid's copy of the face and
/// its iterator deepen only these requests' frames.
#[inline(never)]
fn overlayer_stream(
    face: &crate::surface::Face,
    inc: &Incidence,
    lattices: crate::surface::BeamLattices,
    g_max: f32,
    cut: Option<f32>,
) -> Result<Option<Stream>> {
    Ok(Some(Stream::Overlayer(
        OverlayerBeams::new(face, inc, lattices, g_max)?,
        0,
        cut,
    )))
}

/// About how many rods the `beams` list searches: the disk of |g| it lists has this
/// many mesh cells of the reciprocal lattice (with an overlayer: of the grid its beams
/// lie on).
pub const BEAM_LIST_RODS: u32 = 400;

impl Stream {
    /// Fills `rw` with the next line; false when that line is the final one.
    pub(super) fn step<W: Write>(&mut self, ctx: &Context<'_>, rw: &mut Rw<'_, W>) -> bool {
        match self {
            Stream::Idle => false,
            Stream::Help(i) => match COMMANDS.get(*i as usize) {
                Some((c, u)) => {
                    rw.item().field_str("cmd", c).text(u);
                    if let Some(keys) = Accepted::keys_of(c) {
                        let mut k = 0;
                        while let Some(name) = keys.word(k) {
                            rw.text(name);
                            k += 1;
                        }
                    }
                    *i += 1;
                    true
                }
                None => {
                    rw.ok().field_i32("count", COMMANDS.len() as i32);
                    false
                }
            },
            Stream::Crystals(i) => match table::all().get(*i as usize) {
                Some(c) => {
                    rw.item()
                        .field_str("id", c.id)
                        .field_str("structure", c.structure.name())
                        .field_f32_rt("a", c.a_a);
                    if c.structure.system() != System::Cubic {
                        if c.structure.system() == System::Orthorhombic {
                            rw.field_f32_rt("b", c.b_a);
                        }
                        rw.field_f32_rt("c", c.c_a);
                    }
                    rw.field_str("name", c.name);
                    *i += 1;
                    true
                }
                None => {
                    rw.ok().field_i32("count", table::all().len() as i32);
                    false
                }
            },
            Stream::Faces(i) => {
                let c = ctx.settings.crystal;
                match c.faces.get(*i as usize) {
                    Some(f) => {
                        let mut b = [0u8; 40];
                        rw.item().field_str("face", miller_text(f.miller, &mut b));
                        if let Some(v) = f.inner_potential_ev {
                            rw.field_f32_rt("v0", v);
                        }
                        if let Some(v) = f.work_function_ev {
                            rw.field_f32_rt("work_function", v);
                        }
                        *i += 1;
                        true
                    }
                    None => {
                        rw.ok()
                            .field_str("crystal", c.id)
                            .field_i32("count", c.faces.len() as i32);
                        false
                    }
                }
            }
            Stream::Beams(iter, n, cut) => match iter.next() {
                Some(b) => {
                    rw.item().field_i32("h", b.rod[0]).field_i32("k", b.rod[1]);
                    write_beam(rw, &b);
                    *n = n.saturating_add(1);
                    true
                }
                None => {
                    write_list_end(rw, *n, *cut);
                    false
                }
            },
            Stream::Overlayer(iter, n, cut) => overlayer_step(iter, n, cut, rw),
            Stream::Get(i) => match SETTING_KEYS.get(usize::from(*i)) {
                Some(key) => {
                    rw.item();
                    if ctx.settings.write_key(key, false, rw).is_err() {
                        // Only the gun's energy can fail, and `get` checks it first.
                        rw.field_str(key.name, "invalid");
                    }
                    *i = i.saturating_add(1);
                    true
                }
                None => {
                    rw.ok().field_i32("count", SETTING_KEYS.len() as i32);
                    false
                }
            },
            Stream::Aim(i) => {
                let k = *i as usize;
                if let Some(s) = ctx.solutions.get(k) {
                    rw.item()
                        .field_i32("sol", k as i32)
                        .field_f32("arm", s.arm.angle_deg, ANGLE_DECIMALS)
                        .field_f32("elevation", s.elevation_deg(), ANGLE_DECIMALS)
                        .field_f32("tilt", s.tilt.angle_deg, ANGLE_DECIMALS)
                        .field_f32("azimuth", s.azimuth.angle_deg, ANGLE_DECIMALS)
                        .field_i32("arm_steps", s.arm.steps)
                        .field_f32("residual", s.arm.residual_deg, RESIDUAL_DECIMALS)
                        .field_i32("branch", s.branch as i32)
                        .field_f32("travel", s.travel_deg, ANGLE_DECIMALS);
                    *i += 1;
                    true
                } else {
                    rw.ok().field_i32("count", ctx.solutions.len() as i32);
                    false
                }
            }
            Stream::Refused(i) => {
                let r = ctx.refusals;
                if let Some(x) = r.list.get(usize::from(*i)) {
                    write_refusal(rw, x, &ctx.settings.rig);
                    *i = i.saturating_add(1);
                    true
                } else {
                    write_err(rw, &Fault::from(r.first_error()), &ctx.settings.rig);
                    if let Some(e) = r.emerges_ev {
                        let mut b = [0u8; crate::console::wire::num::NUM_BUF_LEN];
                        rw.text("(emerges above")
                            .text(crate::console::wire::num::format_f32_roundtrip(e, &mut b))
                            .text("eV at the sample)");
                    }
                    false
                }
            }
            Stream::Plan(run) => run.step(&ctx.settings.rig, rw),
            Stream::Budget(b, i) => super::budget::budget_step(b, i, rw),
            Stream::Steps(run) => run.step(rw),
            Stream::Screen(run) => run.step(rw),
            Stream::Dump(i) => loop {
                match ctx.settings.dump_line(*i, rw) {
                    super::dump::Dump::Line => {
                        *i = i.saturating_add(1);
                        return true;
                    }
                    super::dump::Dump::Skip => *i = i.saturating_add(1),
                    super::dump::Dump::End => {
                        rw.clear();
                        rw.ok();
                        return false;
                    }
                }
            },
        }
    }
}

/// Writes the next line of the overlayer's `beams` list; false when that line is the
/// final one. Out of line, so that its iterator's walk deepens only this list's polls.
#[inline(never)]
fn overlayer_step<W: Write>(
    iter: &mut OverlayerBeams,
    n: &mut u32,
    cut: &Option<f32>,
    rw: &mut Rw<'_, W>,
) -> bool {
    match iter.next() {
        Some(b) => {
            rw.item();
            write_frac(rw, "h", &b.pos, 0);
            write_frac(rw, "k", &b.pos, 1);
            write_beam(rw, &b.beam);
            rw.field_i32("integer", b.integer as i32);
            let mut t: heapless::String<32> = heapless::String::new();
            // Domain indices 0 to 11, comma-separated: at most 26 bytes.
            for d in (0..16).filter(|d| b.domains & (1 << d) != 0) {
                let sep = if t.is_empty() { "" } else { "," };
                let _ = write!(t, "{sep}{d}");
            }
            rw.field_str("domains", &t);
            *n = n.saturating_add(1);
            true
        }
        None => {
            write_list_end(rw, *n, *cut);
            false
        }
    }
}

/// The fields of a `beams` item after its indices: `exit`, `exit_azimuth`, and `row`
/// and `emerge` where the beam has them.
fn write_beam<W: Write>(rw: &mut Rw<'_, W>, b: &SurfaceBeam) {
    rw.field_f32("exit", b.exit_deg, ANGLE_DECIMALS).field_f32(
        "exit_azimuth",
        b.exit_azimuth_deg,
        ANGLE_DECIMALS,
    );
    if let Some(d) = b.row_spacing_a() {
        rw.field_f32("row", d, LENGTH_DECIMALS);
    }
    if let Some(e) = b.emergence_ev {
        rw.field_f32("emerge", e, ENERGY_DECIMALS);
    }
}

/// The final line of a `beams` list: the count, and the |g| limit when it cut the list.
fn write_list_end<W: Write>(rw: &mut Rw<'_, W>, n: u32, cut: Option<f32>) {
    rw.ok().field_i32("count", n as i32);
    if let Some(g) = cut {
        rw.field_i32("truncated", 1).field_f32_rt("g_max", g);
    }
}

const _: () = assert!(MAX_SOLUTIONS <= u8::MAX as usize);
