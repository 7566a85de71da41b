//! Bounded rod searches: the beams of a face within a disk of k∥.
//!
//! A rod g = h·b1 + k·b2 (face frame, 1/Å) carries a propagating beam when
//! |k∥,in + R(φ)·g| ≤ 1/λ, i.e. when g lies in the disk of radius 1/λ about
//! c = −R(−φ)·k∥,in. Every search here walks only the rows h whose chord meets its disk,
//! and on each row only the chord (h = g·a1, k = g·a2, as a_i·b_j = δ_ij), so the work is
//! the number of rods in the disk plus one step per row: bounded by the disk, never by a
//! fixed box of indices. Sorted lists ([`Face::beams`]) search a disk of |g| grown until
//! it holds one more beam than the buffer, so their work is bounded by the buffer.

use super::{beam_before, Face, Incidence, SurfaceBeam};
use crate::error::{Error, Result};
use crate::listing::{insert_sorted, Listing};
use crate::math;

/// Largest |h| or |k| a search visits (the beam functions' index limit).
const INDEX_LIMIT: i32 = 4096;

/// Relative margin on a disk's radius so that f32 rounding never drops a rod on its
/// edge; the beam test itself decides.
const EDGE: f32 = 1.0e-4;

/// A disk of rod vectors g in the face frame: centre and radius, 1/Å.
#[derive(Clone, Copy, Debug, PartialEq)]
struct Disk {
    centre: [f32; 2],
    radius: f32,
}

/// Iterator over the beams of a face at one incidence within a disk of g (see
/// [`Face::beams_iter`] and [`Face::beams_near`]), in rod-index order: h ascending,
/// then k.
#[derive(Clone, Copy, Debug)]
pub struct BeamIter {
    face: Face,
    inc: Incidence,
    disk: Disk,
    /// Beams with |g| above this are skipped, 1/Å.
    max_g_inv_a: f32,
    /// Only rods with lo ≤ g·m ≤ hi: (m, lo, hi), m a face-frame vector.
    band: Option<([f32; 2], f32, f32)>,
    h: i32,
    h_end: i32,
    k: i32,
    k_end: i32,
}

impl Face {
    /// Iterator over every propagating beam at `inc`, in rod-index order (no buffer
    /// needed). It visits only the rods in the disk where beams propagate, so each
    /// `next` does work bounded by one row of it. The iterator holds its own copy of the
    /// face, so it can be kept across calls (e.g. to stream a list one line at a time).
    pub fn beams_iter(&self, inc: &Incidence) -> BeamIter {
        BeamIter::new(self, inc, self.propagating(inc), f32::INFINITY)
    }

    /// Iterator over the beams at `inc` whose k∥ (surface frame of the incidence, as
    /// [`SurfaceBeam::k_par_inv_a`]) lies within `radius_inv_a` of `k_par_inv_a`, in
    /// rod-index order: the search behind "what does the detector see".
    pub fn beams_near(
        &self,
        inc: &Incidence,
        k_par_inv_a: [f32; 2],
        radius_inv_a: f32,
    ) -> BeamIter {
        // k∥,out = k∥,in + R(φ)·g, so g = R(−φ)·(k∥,out − k∥,in).
        let centre = self.g_of_k_par(inc, k_par_inv_a);
        let near = Disk {
            centre,
            radius: radius_inv_a.max(0.0),
        };
        // Search whichever disk is smaller; the beam test applies the propagation one.
        let prop = self.propagating(inc);
        let disk = if near.radius < prop.radius {
            near
        } else {
            prop
        };
        BeamIter::new(self, inc, disk, f32::INFINITY)
    }

    /// Iterator over the beams at `inc` with |g| ≤ `max_g_inv_a` (1/Å), in rod-index
    /// order, visiting only the rods of the smaller of that disk and the propagating
    /// one. [`Face::covers_all`] says whether the disk holds every beam.
    pub fn beams_within(&self, inc: &Incidence, max_g_inv_a: f32) -> BeamIter {
        let prop = self.propagating(inc);
        let r = max_g_inv_a.max(0.0);
        let disk = if prop.radius < r {
            prop
        } else {
            Disk {
                centre: [0.0, 0.0],
                radius: r,
            }
        };
        BeamIter::new(self, inc, disk, r)
    }

    /// Whether every beam at `inc` has |g| ≤ `max_g_inv_a` (1/Å), judged from the disk
    /// where beams propagate (so `false` may still hold no beam beyond).
    pub fn covers_all(&self, inc: &Incidence, max_g_inv_a: f32) -> bool {
        let p = self.propagating(inc);
        math::sqrt(p.centre[0] * p.centre[0] + p.centre[1] * p.centre[1]) + p.radius <= max_g_inv_a
    }

    /// Iterator over the beams at `inc` whose k∥ component along e2 (the second
    /// component of [`SurfaceBeam::k_par_inv_a`], 1/Å; the lab's vertical) lies in
    /// [`lo_inv_a`, `hi_inv_a`], in rod-index order: the beams whose elevation lies in a
    /// band, as an arm sweep at one elevation crosses them. Only the rods of that strip
    /// of the propagating disk are visited.
    pub fn beams_in_band(&self, inc: &Incidence, lo_inv_a: f32, hi_inv_a: f32) -> BeamIter {
        let mut it = BeamIter::new(self, inc, self.propagating(inc), f32::INFINITY);
        // k∥,y = (R(φ)·g)_y = g·(sin φ, cos φ).
        let (s, c) = math::sin_cos_deg(inc.azimuth_deg);
        it.band = Some(([s, c], lo_inv_a, hi_inv_a));
        it.start_row();
        it
    }

    /// The rod whose g puts k∥ (surface frame of the incidence, 1/Å) nearest
    /// `k_par_inv_a` in index terms: g = R(−φ)·(k∥ − k∥,in) rounded to whole (h, k)
    /// (h = g·a1, k = g·a2), each clamped to ±4096.
    pub fn rod_nearest(&self, inc: &Incidence, k_par_inv_a: [f32; 2]) -> [i32; 2] {
        let g = self.g_of_k_par(inc, k_par_inv_a);
        let a = &self.mesh_2d_a;
        let lim = INDEX_LIMIT as f32;
        let idx =
            |v: [f32; 2]| math::clamp(math::round(g[0] * v[0] + g[1] * v[1]), -lim, lim) as i32;
        [idx(a[0]), idx(a[1])]
    }

    /// g (face frame) of an outgoing k∥ (surface frame of the incidence): R(−φ)·(k∥ − k∥,in).
    fn g_of_k_par(&self, inc: &Incidence, k_par_inv_a: [f32; 2]) -> [f32; 2] {
        let kin = inc.k_par_in();
        let d = [k_par_inv_a[0] - kin[0], k_par_inv_a[1] - kin[1]];
        let (s, c) = math::sin_cos_deg(inc.azimuth_deg);
        [d[0] * c + d[1] * s, -d[0] * s + d[1] * c]
    }

    /// Every beam at `inc`, sorted by |g| (specular first; equal |g| by rod indices,
    /// descending), into `out`. When `out` is short, the smallest |g| are kept and the
    /// listing says it was truncated. The search covers a disk of |g| that starts with
    /// room for about twice `out.len()` rods and doubles until it holds more beams than
    /// `out` or every beam, so its work is bounded by the buffer, not by the energy.
    ///
    /// ```
    /// use matterwave_core::lattice::{Cell, Structure};
    /// use matterwave_core::surface::{Face, Incidence, SurfaceBeam};
    /// let f = Face::new(&Cell::new(Structure::Fcc, 3.615, 0.0, 0.0).unwrap(), [1, 1, 1]).unwrap();
    /// let mut out = [SurfaceBeam::EMPTY; 32];
    /// let list = f.beams(&Incidence::normal(200.0).unwrap(), &mut out).unwrap();
    /// assert_eq!(list.stored, 19); // specular + three rings of six
    /// assert!(!list.truncated);
    /// ```
    pub fn beams(&self, inc: &Incidence, out: &mut [SurfaceBeam]) -> Result<Listing> {
        if out.is_empty() {
            return Err(Error::EmptyBuffer);
        }
        let prop = self.propagating(inc);
        let c = prop.centre;
        // The farthest |g| any beam can have.
        let g_all = math::sqrt(c[0] * c[0] + c[1] * c[1]) + prop.radius;
        // A disk of area ≈ 2·(n + 1) mesh cells of the reciprocal lattice, plus a row.
        let cell_inv_a2 = 1.0 / self.area_a2().max(f32::MIN_POSITIVE);
        let n = out.len() as f32 + 1.0;
        let b = &self.recip_2d_inv_a;
        let row = math::sqrt(b[0][0] * b[0][0] + b[0][1] * b[0][1])
            + math::sqrt(b[1][0] * b[1][0] + b[1][1] * b[1][1]);
        let mut r = math::sqrt(2.0 * n * cell_inv_a2 / core::f32::consts::PI) + row;
        loop {
            let all = r >= g_all;
            let search = Disk {
                centre: [0.0, 0.0],
                radius: r,
            };
            let disk = if all || prop.radius < r { prop } else { search };
            let mut stored = 0usize;
            let mut truncated = false;
            for beam in BeamIter::new(self, inc, disk, if all { f32::INFINITY } else { r }) {
                truncated |= insert_sorted(out, &mut stored, beam, beam_before);
            }
            // Every beam beyond the disk has a larger |g| than every beam in it: with one
            // dropped, the stored ones are the smallest of all.
            if truncated || all {
                return Ok(Listing { stored, truncated });
            }
            r *= 2.0;
        }
    }

    /// The disk of g where beams propagate at `inc`.
    fn propagating(&self, inc: &Incidence) -> Disk {
        let kin = inc.k_par_in();
        let (s, c) = math::sin_cos_deg(inc.azimuth_deg);
        Disk {
            // −R(−φ)·k∥,in
            centre: [-(kin[0] * c + kin[1] * s), kin[0] * s - kin[1] * c],
            radius: inc.k_inv_a,
        }
    }
}

impl BeamIter {
    /// The incidence the beams are computed at.
    pub(crate) fn incidence(&self) -> &Incidence {
        &self.inc
    }

    fn new(face: &Face, inc: &Incidence, disk: Disk, max_g_inv_a: f32) -> BeamIter {
        let radius = disk.radius * (1.0 + EDGE) + EDGE;
        let a1 = face.mesh_2d_a[0];
        // |a1|: a face's a1 lies along e1; a superstructure's search mesh
        // (`goniometer::super_view`) may have its first vector anywhere.
        let a1_len = if a1[1] == 0.0 {
            a1[0].abs()
        } else {
            math::sqrt(a1[0] * a1[0] + a1[1] * a1[1])
        };
        let mid = disk.centre[0] * a1[0] + disk.centre[1] * a1[1];
        let lo = math::floor(mid - radius * a1_len);
        let hi = math::floor(mid + radius * a1_len) + 1.0;
        let lim = INDEX_LIMIT as f32;
        let mut it = BeamIter {
            face: *face,
            inc: *inc,
            disk: Disk {
                centre: disk.centre,
                radius,
            },
            max_g_inv_a,
            band: None,
            h: math::clamp(lo, -lim, lim + 1.0) as i32,
            h_end: math::clamp(hi, -lim, lim + 1.0) as i32,
            k: 0,
            k_end: 0,
        };
        it.start_row();
        it
    }

    /// Sets `k..k_end` to the chord of row `h` (empty when the row misses the disk).
    fn start_row(&mut self) {
        let b = &self.face.recip_2d_inv_a;
        let h = self.h as f32;
        // p = h·b1 − c; |p + k·b2|² ≤ r² is a quadratic in k.
        let p = [
            h * b[0][0] - self.disk.centre[0],
            h * b[0][1] - self.disk.centre[1],
        ];
        let b2 = b[1];
        let qa = b2[0] * b2[0] + b2[1] * b2[1];
        let qb = b2[0] * p[0] + b2[1] * p[1];
        let qc = p[0] * p[0] + p[1] * p[1] - self.disk.radius * self.disk.radius;
        let disc = qb * qb - qa * qc;
        if qa <= 0.0 || disc < 0.0 {
            self.k = 0;
            self.k_end = 0;
            return;
        }
        let root = math::sqrt(disc);
        let mut k_lo = math::floor((-qb - root) / qa);
        let mut k_hi = math::floor((-qb + root) / qa) + 2.0;
        if let Some((m, lo, hi)) = self.band {
            // g·m = h·(b1·m) + k·(b2·m) within [lo, hi].
            let pm = h * (b[0][0] * m[0] + b[0][1] * m[1]);
            let q = b2[0] * m[0] + b2[1] * m[1];
            if q.abs() > 1.0e-12 {
                let pad = EDGE * self.inc.k_inv_a;
                let (x, y) = ((lo - pad - pm) / q, (hi + pad - pm) / q);
                let (x, y) = if x <= y { (x, y) } else { (y, x) };
                k_lo = k_lo.max(math::floor(x) - 1.0);
                k_hi = k_hi.min(math::floor(y) + 2.0);
            } else if pm < lo - EDGE * self.inc.k_inv_a || pm > hi + EDGE * self.inc.k_inv_a {
                k_hi = k_lo;
            }
        }
        let lim = INDEX_LIMIT as f32;
        self.k = math::clamp(k_lo, -lim, lim + 1.0) as i32;
        self.k_end = math::clamp(k_hi.max(k_lo), -lim, lim + 1.0) as i32;
    }

    /// Moves to the next row and its chord.
    fn advance_row(&mut self) {
        self.h += 1;
        self.start_row();
    }
}

impl Iterator for BeamIter {
    type Item = SurfaceBeam;

    fn next(&mut self) -> Option<SurfaceBeam> {
        while self.h < self.h_end {
            while self.k < self.k_end {
                let rod = [self.h, self.k];
                self.k += 1;
                let g = self.face.rod_turned(rod, &self.inc);
                if let Some(b) = super::beam_from(rod, g, &self.inc) {
                    let in_band = self
                        .band
                        .is_none_or(|(_, lo, hi)| (lo..=hi).contains(&b.k_par_inv_a[1]));
                    if b.g_inv_a <= self.max_g_inv_a && in_band {
                        return Some(b);
                    }
                }
            }
            self.advance_row();
        }
        None
    }
}

#[cfg(test)]
mod tests {
    extern crate std;
    use super::*;
    use crate::lattice::{Cell, Structure};
    use std::vec;
    use std::vec::Vec;

    /// Every propagating beam by brute force over the whole box of indices that can
    /// reach (|h| ≤ |k∥ reach|·|a1|, the same for k), in rod-index order.
    fn brute(f: &Face, inc: &Incidence) -> Vec<SurfaceBeam> {
        let reach = inc.k_inv_a * (1.0 + inc.sin_tilt.abs());
        let hm = (reach * f.a1_len_a()) as i32 + 1;
        let km = (reach * f.a2_len_a()) as i32 + 1;
        let mut v = Vec::new();
        for h in -hm..=hm {
            for k in -km..=km {
                if let Ok(b) = f.beam([h, k], inc) {
                    v.push(b);
                }
            }
        }
        v
    }

    fn faces() -> Vec<Face> {
        let mut v = Vec::new();
        for (s, a, c) in [
            (Structure::Fcc, 3.615, 0.0),
            (Structure::Bcc, 3.165, 0.0),
            (Structure::Hcp, 2.507, 4.070),
            (Structure::RockSalt, 6.293, 0.0),
        ] {
            let cell = Cell::new(s, a, a, c).unwrap();
            for m in [[1, 0, 0], [1, 1, 0], [1, 1, 1], [3, 2, 1], [7, 5, 3]] {
                if let Ok(f) = Face::new(&cell, m) {
                    v.push(f);
                }
            }
        }
        v
    }

    #[test]
    fn the_chord_walk_finds_exactly_the_beams_of_the_box() {
        let mut checked = 0;
        for f in faces() {
            for (e, t, az) in [
                (30.0, 0.0, 0.0),
                (150.0, 20.0, 33.0),
                (400.0, -60.0, 190.0),
                (2000.0, 85.0, -75.0),
            ] {
                let inc = Incidence::new(e, t, az).unwrap();
                let want = brute(&f, &inc);
                let got: Vec<SurfaceBeam> = f.beams_iter(&inc).collect();
                assert_eq!(got, want, "{:?} {e} eV tilt {t} az {az}", f.miller);
                checked += want.len();
            }
        }
        assert!(checked > 10_000, "{checked} beams compared");
    }

    #[test]
    fn a_band_walk_finds_exactly_the_beams_of_the_band() {
        let mut checked = 0;
        for f in faces() {
            for (e, t, az) in [(150.0, 20.0, 33.0), (2000.0, -40.0, 100.0)] {
                let inc = Incidence::new(e, t, az).unwrap();
                let u = inc.k_inv_a;
                for (lo, hi) in [(-0.05 * u, 0.05 * u), (0.3 * u, 0.45 * u), (-u, -0.9 * u)] {
                    let want: Vec<SurfaceBeam> = brute(&f, &inc)
                        .into_iter()
                        .filter(|b| (lo..=hi).contains(&b.k_par_inv_a[1]))
                        .collect();
                    let got: Vec<SurfaceBeam> = f.beams_in_band(&inc, lo, hi).collect();
                    assert_eq!(got, want, "{:?} {e} eV band {lo}..{hi}", f.miller);
                    checked += want.len();
                }
            }
        }
        assert!(checked > 1000, "{checked} beams compared");
    }

    #[test]
    fn sorted_lists_are_the_smallest_and_truncation_is_exact() {
        for f in faces().into_iter().step_by(3) {
            let inc = Incidence::new(300.0, 25.0, 10.0).unwrap();
            let mut all = brute(&f, &inc);
            all.sort_by(|a, b| {
                if beam_before(a, b) {
                    core::cmp::Ordering::Less
                } else if beam_before(b, a) {
                    core::cmp::Ordering::Greater
                } else {
                    core::cmp::Ordering::Equal
                }
            });
            for n in [1usize, 2, 3, 7, 19, all.len() - 1, all.len(), all.len() + 5] {
                let mut out = vec![SurfaceBeam::EMPTY; n];
                let l = f.beams(&inc, &mut out).unwrap();
                assert_eq!(l.stored, n.min(all.len()), "{:?} n={n}", f.miller);
                assert_eq!(l.truncated, n < all.len(), "{:?} n={n}", f.miller);
                for (g, w) in out[..l.stored].iter().zip(&all) {
                    assert!(
                        (g.g_inv_a - w.g_inv_a).abs() <= 1e-5 * w.g_inv_a.max(1.0),
                        "{:?} n={n}: {g:?} vs {w:?}",
                        f.miller
                    );
                }
            }
        }
    }

    #[test]
    fn a_short_list_at_300_kev_is_cut_and_starts_at_the_specular() {
        // Rocksalt a = 6.293 Å (7,5,3): over 10^5 beams propagate at 300 keV; a buffer of
        // 8 gets the 8 smallest |g| and says the list was cut.
        let f = Face::new(
            &Cell::new(Structure::RockSalt, 6.293, 0.0, 0.0).unwrap(),
            [7, 5, 3],
        )
        .unwrap();
        let inc = Incidence::new(300_000.0, 30.0, 0.0).unwrap();
        let mut out = [SurfaceBeam::EMPTY; 8];
        let l = f.beams(&inc, &mut out).unwrap();
        assert!(l.truncated && l.stored == 8);
        assert_eq!(out[0].rod, [0, 0]);
        let prop = f.propagating(&inc);
        let rods_in_prop = core::f32::consts::PI * prop.radius * prop.radius * f.area_a2();
        assert!(rods_in_prop > 1.0e5, "{rods_in_prop}");
    }
}
