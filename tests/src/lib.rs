//! Cross-crate conformance and end-to-end tests (see `tests/tests/`), and what the
//! tests share: one random generator ([`Rng`]), the bridge from the core's table to the
//! oracle ([`ocell`], [`exact`]) and the console harness ([`console`]).

use matterwave_console::oracle::{self, OCell};
use matterwave_core::table;

pub mod console;

/// SplitMix64: a small deterministic generator, so every failure reproduces from its
/// seed. Shared by the randomised tests.
pub struct Rng(pub u64);

impl Rng {
    /// Next 64 random bits. (Not an `Iterator`: the stream never ends.)
    #[allow(clippy::should_implement_trait)]
    pub fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// A generator whose state is `seed` scrambled, so that nearby seeds give unrelated
    /// streams.
    pub fn seeded(seed: u64) -> Rng {
        Rng(seed.wrapping_mul(0x9E37_79B9_7F4A_7C15) ^ 0xD1B5_4A32_D192_ED03)
    }

    /// Uniform in (0, 1): never 0, so its logarithm is finite.
    pub fn open_unit(&mut self) -> f64 {
        ((self.next() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }

    /// Standard normal (Box–Muller).
    pub fn normal(&mut self) -> f64 {
        let (u, v) = (self.open_unit(), self.open_unit());
        (-2.0 * u.ln()).sqrt() * (2.0 * std::f64::consts::PI * v).cos()
    }

    /// Uniform in [0, 1).
    pub fn unit(&mut self) -> f64 {
        (self.next() >> 11) as f64 / (1u64 << 53) as f64
    }

    /// Uniform in [lo, hi).
    pub fn range(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.unit()
    }

    /// Uniform in [lo, hi] as f32.
    pub fn rangef(&mut self, lo: f32, hi: f32) -> f32 {
        (self.range(lo as f64, hi as f64) as f32).clamp(lo, hi)
    }

    /// Uniform integer in [0, n) (n > 0).
    pub fn below(&mut self, n: usize) -> usize {
        (self.next() >> 33) as usize % n
    }

    /// Uniform integer in [lo, hi].
    pub fn int(&mut self, lo: i32, hi: i32) -> i32 {
        (lo as i64 + (self.next() % (hi as i64 - lo as i64 + 1) as u64) as i64) as i32
    }

    /// +1 or −1.
    pub fn sign(&mut self) -> f64 {
        if self.next() & 1 == 0 {
            1.0
        } else {
            -1.0
        }
    }

    /// True with probability `p`.
    pub fn chance(&mut self, p: f64) -> bool {
        self.unit() < p
    }

    /// An index drawn with the given weights.
    pub fn weighted(&mut self, w: &[u32]) -> usize {
        let total: u32 = w.iter().sum();
        let mut x = (self.next() % total as u64) as u32;
        for (i, wi) in w.iter().enumerate() {
            if x < *wi {
                return i;
            }
            x -= wi;
        }
        w.len() - 1
    }

    /// One element of a non-empty slice.
    pub fn select<T: Copy>(&mut self, v: &[T]) -> T {
        v[(self.next() % v.len() as u64) as usize]
    }

    /// Log-uniform energy in [lo, hi] eV, as f32.
    pub fn energy(&mut self, lo: f64, hi: f64) -> f32 {
        self.range(lo.ln(), hi.ln()).exp().clamp(lo, hi) as f32
    }

    /// A non-zero rod with |h|, |k| ≤ 3.
    pub fn rod(&mut self) -> [i32; 2] {
        loop {
            let r = [self.int(-3, 3), self.int(-3, 3)];
            if r != [0, 0] {
                return r;
            }
        }
    }
}

/// The oracle's cell for a crystal of the core's table (the same constants, in f64).
pub fn ocell(c: &table::Crystal) -> OCell {
    let s = oracle::structure_from_name(c.structure.name()).expect("oracle knows every structure");
    OCell {
        structure: s,
        a: c.a_a as f64,
        b: c.b_a as f64,
        c: c.c_a as f64,
    }
}

/// The oracle's cell for the bulk cell of a core `Face` (the same constants, in f64).
pub fn ocell_of_face(f: &matterwave_core::surface::Face) -> OCell {
    let s =
        oracle::structure_from_name(f.cell.structure.name()).expect("oracle knows every structure");
    OCell {
        structure: s,
        a: f.cell.a_a as f64,
        b: f.cell.b_a as f64,
        c: f.cell.c_a as f64,
    }
}

/// A lattice vector given in half conventional axes (as the core's `Face` stores its
/// mesh) rebuilt exactly in f64 from the oracle's cell vectors.
pub fn exact(oc: &OCell, half: [i32; 3]) -> [f64; 3] {
    let a = oc.direct_vectors();
    let mut v = [0.0; 3];
    for (i, vi) in v.iter_mut().enumerate() {
        *vi = (0..3).map(|j| a[j][i] * half[j] as f64 * 0.5).sum();
    }
    v
}
