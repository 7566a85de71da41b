//! Cross-crate conformance and end-to-end tests (see `tests/tests/`), and what the
//! tests share.

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
