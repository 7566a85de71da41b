//! The overlayer and the beam it holds: the lattices of `overlayer=` and `domains=`,
//! whether a fractional `beam=` belongs to them, the grid a fractional beam is a whole
//! rod of, and how `set` keeps the overlayer and the beam valid together.

use super::fault::{Fault, Result};
use super::settings::{SetNotes, Settings};
use crate::error::Error;
use crate::surface::domains::{Overlayer, MAX_DOMAINS};
use crate::surface::{BeamLattices, Face, FracRod, Superstructure};

impl Settings {
    /// The overlayer as the sample shows it: alone, or with its domains (`domains`);
    /// `None` without one.
    pub(super) fn overlayer_model(&self) -> Option<Overlayer> {
        self.overlayer.map(|s| Overlayer::new(s, self.domains))
    }

    /// The lattices of the overlayer's beams (with its domains when `domains` is
    /// set), or `None` without an overlayer. Out of line: the domain search's buffers
    /// stay out of the callers' frames.
    #[inline(never)]
    pub(super) fn lattices(&self) -> crate::error::Result<Option<BeamLattices>> {
        let Some(o) = self.overlayer_model() else {
            return Ok(None);
        };
        let mut sups = [Superstructure::IDENTITY; MAX_DOMAINS];
        let n = o.supers(&self.face, &mut sups);
        BeamLattices::new(sups.get(..n).unwrap_or(&[])).map(Some)
    }

    /// The face whose whole rods hold `pos` and the rod there: the face itself and the
    /// rod for a whole position, else [`Face::fractional_grid`] of its denominator and
    /// its numerators (the grid `mwctl calc aim` and `calc track` use).
    pub(super) fn beam_grid(&self, pos: &FracRod) -> crate::error::Result<(Face, [i32; 2])> {
        match pos.integer() {
            Some(r) => Ok((self.face, r)),
            None => Ok((self.face.fractional_grid(pos.den)?, pos.num)),
        }
    }

    /// The current beam as a whole rod: `Err(IntegerBeamsOnly)` for a fractional one
    /// (for the models of integer-order beams only).
    pub(super) fn integer_beam(&self) -> Result<[i32; 2]> {
        self.beam
            .integer()
            .ok_or_else(|| Fault::from(Error::IntegerBeamsOnly).on_key("beam"))
    }

    /// Checks that `pos` is a beam the console may aim at: a whole rod, or a
    /// fractional beam of the overlayer's lattices ([`Error::NotOverlayerBeam`]).
    pub(super) fn check_beam(&self, pos: &FracRod) -> crate::error::Result<()> {
        if pos.integer().is_some() {
            return Ok(());
        }
        match self.lattices()? {
            Some(l) if l.domains_at(pos) != 0 => Ok(()),
            _ => Err(Error::NotOverlayerBeam),
        }
    }
}

impl Settings {
    /// Keeps the overlayer and the beam valid after `set` (`old`: the settings before
    /// it). `overlayer=` is read on the new face (Wood notation maps to a matrix there);
    /// a new crystal or face without it takes the overlayer back to `none` (true first:
    /// the `ok` line says so). A fractional beam must be one of the overlayer's
    /// ([`Error::NotOverlayerBeam`], refused when `beam=` was given); one that no longer
    /// is goes back to the specular beam (true second).
    pub(super) fn check_overlayer(
        &mut self,
        old: &Settings,
        notes: &SetNotes<'_>,
    ) -> Result<(bool, bool)> {
        let mut overlayer_reset = false;
        match notes.overlayer {
            Some("none") => self.overlayer = None,
            Some(t) => {
                self.overlayer = Some(
                    Superstructure::parse(t, &self.face)
                        .map_err(|e| Fault::from(e).at("overlayer", t))?,
                );
            }
            None => {
                let new_face =
                    self.face.miller != old.face.miller || self.crystal.id != old.crystal.id;
                if new_face && self.overlayer.is_some() {
                    self.overlayer = None;
                    overlayer_reset = true;
                }
            }
        }
        // The grid of the overlayer's beams must be one a beam can name (checked here,
        // so that `beams` and `aim` never meet a lattice they cannot list).
        self.lattices().map_err(|e| {
            let f = Fault::from(e);
            match notes.overlayer {
                Some(t) => f.at("overlayer", t),
                None => f.on_key("domains"),
            }
        })?;
        let mut beam_reset = false;
        if let Err(e) = self.check_beam(&self.beam) {
            if let Some(v) = notes.beam {
                return Err(Fault::from(e).at("beam", v));
            }
            self.beam = FracRod::whole([0, 0]);
            beam_reset = true;
        }
        Ok((overlayer_reset, beam_reset))
    }
}
