//! The beams of a [`BeamIter`] in the one listing order of the crate — increasing |g|
//! (specular first), equal |g| by rod indices descending, as [`Face::beams`] sorts them
//! — streamed one at a time without a buffer, so the console's `beams` list and
//! `mwctl calc beams` print the same sequence.

#[cfg(doc)]
use super::Face;
use super::{beam_before, BeamIter, SurfaceBeam};

/// Iterator over the beams of a [`BeamIter`] in the order of [`Face::beams`]: increasing
/// |g|, equal |g| by rod indices descending. Each `next` walks the underlying search once (its disk of rods,
/// bounded as the [`BeamIter`] is) and returns the first beam after the previous one;
/// nothing is stored but that previous beam.
#[derive(Clone, Copy, Debug)]
pub struct SortedBeams {
    all: BeamIter,
    last: Option<SurfaceBeam>,
    done: bool,
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
    /// assert_eq!(streamed, sorted);
    /// ```
    pub fn sorted(self) -> SortedBeams {
        SortedBeams {
            all: self,
            last: None,
            done: false,
        }
    }
}

impl Iterator for SortedBeams {
    type Item = SurfaceBeam;

    fn next(&mut self) -> Option<SurfaceBeam> {
        if self.done {
            return None;
        }
        let mut best: Option<SurfaceBeam> = None;
        // A fresh pass over the search (BeamIter is Copy).
        for b in self.all {
            if self.last.as_ref().is_some_and(|l| !beam_before(l, &b)) {
                continue;
            }
            if best.as_ref().is_none_or(|x| beam_before(&b, x)) {
                best = Some(b);
            }
        }
        self.last = best;
        self.done = best.is_none();
        best
    }
}
