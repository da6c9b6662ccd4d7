//! Random numbers for the unit tests that compare two readings on many generated texts: a
//! 64-bit linear congruential generator (Knuth's MMIX constants), the same sequence on every
//! run, so a failing case is found again by its number.

/// A sequence of numbers from a seed.
pub(crate) struct TestNumbers(u64);

impl TestNumbers {
    pub(crate) fn new(seed: u64) -> TestNumbers {
        TestNumbers(seed)
    }

    /// The next number, below `n`.
    pub(crate) fn below(&mut self, n: usize) -> usize {
        self.0 = self
            .0
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (self.0 >> 33) as usize % n
    }
}
