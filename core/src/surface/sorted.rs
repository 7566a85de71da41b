//! The beams of a [`BeamIter`] in the one listing order of the crate — increasing |g|
//! (specular first), equal |g| by rod indices descending, as [`Face::beams`] sorts them
//! — streamed one at a time with a fixed window of [`SORTED_WINDOW`] beams (no buffer
//! the size of the list), so the console's `beams` list and `mwctl calc beams` print the
//! same sequence.

use super::overlayer_list::BeamLattices;
#[cfg(doc)]
use super::Face;
use super::{beam_before, BeamIter, SurfaceBeam};
use crate::listing::insert_sorted;

/// Beams a [`SortedBeams`] holds sorted between two passes over its search.
pub const SORTED_WINDOW: usize = 16;

/// Iterator over the beams of a [`BeamIter`] in the order of [`Face::beams`]: increasing
/// |g|, equal |g| by rod indices descending. It walks the underlying search (its disk of
/// rods, bounded as the [`BeamIter`] is) and keeps the next [`SORTED_WINDOW`] beams after
/// the last one returned, sorted by the same insertion as [`Face::beams`]; when they are
/// used up it walks the search again from there. So a `next` does at most one walk, and
/// a list of n beams takes about n / [`SORTED_WINDOW`] + 1 walks, with nothing stored but
/// the window.
#[derive(Clone, Copy, Debug)]
pub struct SortedBeams {
    all: BeamIter,
    window: [SurfaceBeam; SORTED_WINDOW],
    len: usize,
    pos: usize,
    /// The last beam returned: the next walk keeps only the beams after it.
    last: Option<SurfaceBeam>,
    /// Whether the window holds every beam still to come.
    complete: bool,
    /// Only the rods of these lattices are kept (`None`: every rod).
    keep: Option<BeamLattices>,
}

impl BeamIter {
    /// The same beams in the listing order of [`Face::beams`].
    ///
    /// ```
    /// use matterwave_core::lattice::{Cell, Structure};
    /// use matterwave_core::surface::{Face, Incidence, SurfaceBeam};
    /// let f = Face::new(&Cell::new(Structure::Fcc, 3.9242, 0.0, 0.0).unwrap(), [1, 1, 1]).unwrap();
    /// let inc = Incidence::new(143.0, 12.0, 0.0).unwrap();
    /// let mut out = [SurfaceBeam::EMPTY; 64];
    /// let n = f.beams(&inc, &mut out).unwrap().stored;
    /// let streamed: Vec<[i32; 2]> = f.beams_iter(&inc).sorted().map(|b| b.rod).collect();
    /// let sorted: Vec<[i32; 2]> = out[..n].iter().map(|b| b.rod).collect();
    /// assert!(n > 16); // more than one window
    /// assert_eq!(streamed, sorted);
    /// ```
    pub fn sorted(self) -> SortedBeams {
        SortedBeams {
            all: self,
            window: [SurfaceBeam::EMPTY; SORTED_WINDOW],
            len: 0,
            pos: 0,
            last: None,
            complete: false,
            keep: None,
        }
    }

    /// The same beams in the same order, but only those whose rod lies in one of the
    /// lattices of `keep` (filtered during each walk, so the window holds kept beams
    /// only and a `next` still does at most one walk).
    pub(crate) fn sorted_in(self, keep: BeamLattices) -> SortedBeams {
        SortedBeams {
            keep: Some(keep),
            ..self.sorted()
        }
    }
}

impl SortedBeams {
    /// The incidence the beams are computed at.
    pub(crate) fn incidence(&self) -> &super::Incidence {
        self.all.incidence()
    }

    /// Walks the search once and keeps the first beams after `last`.
    fn refill(&mut self) {
        let mut stored = 0usize;
        let mut truncated = false;
        // A fresh pass over the search (BeamIter is Copy).
        for b in self.all {
            if self.last.as_ref().is_some_and(|l| !beam_before(l, &b)) {
                continue;
            }
            if self.keep.as_ref().is_some_and(|k| k.domains_of(b.rod) == 0) {
                continue;
            }
            truncated |= insert_sorted(&mut self.window, &mut stored, b, beam_before);
        }
        self.len = stored;
        self.pos = 0;
        self.complete = !truncated;
    }
}

impl Iterator for SortedBeams {
    type Item = SurfaceBeam;

    fn next(&mut self) -> Option<SurfaceBeam> {
        if self.pos >= self.len {
            if self.complete {
                return None;
            }
            self.refill();
        }
        let b = self
            .window
            .get(self.pos)
            .copied()
            .filter(|_| self.pos < self.len)?;
        self.pos += 1;
        self.last = Some(b);
        Some(b)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::lattice::{Cell, Structure};
    use crate::surface::{Face, Incidence};

    /// The streamed order is the buffer sort's, beam for beam, over lists shorter than,
    /// equal to and many times the window, oblique and off-azimuth (the reference is
    /// `Face::beams`, whose own order the rod-search tests hold to a brute-force sort).
    #[test]
    fn streamed_order_is_the_sorted_listing() {
        let cases = [
            (Structure::Fcc, 3.9242, [1, 1, 1], 40.0, 0.0, 0.0),
            (Structure::Fcc, 3.9242, [1, 1, 1], 143.0, 12.0, 0.0),
            (Structure::Bcc, 3.1652, [1, 1, 0], 212.0, -8.0, 35.0),
            (Structure::Fcc, 4.0853, [1, 0, 0], 95.0, 6.0, 0.0),
            (Structure::Fcc, 3.524, [1, 1, 1], 200.0, 0.0, 0.0),
            (Structure::Bcc, 3.1652, [2, 1, 0], 600.0, 30.0, -70.0),
        ];
        for (s, a, m, e, tilt, az) in cases {
            let f = Face::new(&Cell::new(s, a, a, a).unwrap(), m).unwrap();
            let inc = Incidence::new(e, tilt, az).unwrap();
            let mut out = [SurfaceBeam::EMPTY; 400];
            let l = f.beams(&inc, &mut out).unwrap();
            assert!(!l.truncated);
            let mut it = f.beams_iter(&inc).sorted();
            for (i, want) in out.iter().take(l.stored).enumerate() {
                let got = it
                    .next()
                    .unwrap_or_else(|| panic!("{m:?} {e}: ended at {i}"));
                assert_eq!(got.rod, want.rod, "{m:?} {e} eV: beam {i}");
            }
            assert!(it.next().is_none());
            assert!(it.next().is_none(), "stays ended");
        }
    }
}
