//! Random numbers for Monte Carlo: SplitMix64 (Steele, Lea and Flood,
//! "Fast splittable pseudorandom number generators", OOPSLA 2014), one
//! stream per trial derived from the master seed and the trial index, so a
//! trial draws the same values whichever thread runs it.

/// A SplitMix64 generator, with the second normal deviate of the last
/// pair kept for the next call.
#[derive(Debug, Clone)]
pub struct SplitMix64 {
    state: u64,
    spare_normal: Option<f64>,
}

const GOLDEN_GAMMA: u64 = 0x9e37_79b9_7f4a_7c15;

fn mix(mut z: u64) -> u64 {
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

impl SplitMix64 {
    /// A generator starting from `seed`.
    pub fn new(seed: u64) -> SplitMix64 {
        SplitMix64 {
            state: seed,
            spare_normal: None,
        }
    }

    /// The stream of trial `index` under `master`: independent of every
    /// other trial's and of the order trials are run in.
    pub fn for_trial(master: u64, index: u64) -> SplitMix64 {
        SplitMix64::new(mix(
            master ^ mix(index.wrapping_add(1).wrapping_mul(GOLDEN_GAMMA))
        ))
    }

    /// The next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        self.state = self.state.wrapping_add(GOLDEN_GAMMA);
        mix(self.state)
    }

    /// Uniform in [0, 1), 53 bits.
    pub fn next_f64(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
    }

    /// Uniform in [−1, 1).
    pub fn symmetric(&mut self) -> f64 {
        2.0 * self.next_f64() - 1.0
    }

    /// A standard normal deviate: Marsaglia and Bray's polar method
    /// ("A convenient method for generating normal variables", SIAM Review
    /// 6, 1964), which gives two independent deviates per accepted pair;
    /// the second is kept for the next call.
    pub fn normal(&mut self) -> f64 {
        if let Some(z) = self.spare_normal.take() {
            return z;
        }
        loop {
            let (u, v) = (self.symmetric(), self.symmetric());
            let s = u * u + v * v;
            if s > 0.0 && s < 1.0 {
                let factor = (-2.0 * s.ln() / s).sqrt();
                self.spare_normal = Some(v * factor);
                return u * factor;
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn matches_the_reference_sequence() {
        // SplitMix64 seeded with 1234567: the first outputs of the
        // reference C implementation (Vigna's splitmix64.c), from memory.
        let mut rng = SplitMix64::new(1234567);
        let expected = [
            6457827717110365317u64,
            3203168211198807973,
            9817491932198370423,
        ];
        for want in expected {
            assert_eq!(rng.next_u64(), want);
        }
    }

    #[test]
    fn uniform_and_normal_moments() {
        let mut rng = SplitMix64::new(42);
        let n = 200_000;
        let (mut sum, mut sum_sq) = (0.0, 0.0);
        for _ in 0..n {
            let z = rng.normal();
            sum += z;
            sum_sq += z * z;
        }
        let mean = sum / n as f64;
        let variance = sum_sq / n as f64 - mean * mean;
        assert!(
            mean.abs() < 0.01 && (variance - 1.0).abs() < 0.01,
            "{mean} {variance}"
        );
        // The polar method's two deviates of a pair are independent: their
        // correlation is within a few standard errors (1/√n) of zero.
        let pairs = n / 2;
        let product: f64 = (0..pairs).map(|_| rng.normal() * rng.normal()).sum();
        let correlation = product / pairs as f64;
        assert!(
            correlation.abs() < 4.0 / (pairs as f64).sqrt(),
            "{correlation}"
        );
        let u: f64 = (0..n).map(|_| rng.next_f64()).sum::<f64>() / n as f64;
        assert!((u - 0.5).abs() < 0.005);
    }

    #[test]
    fn trial_streams_differ_and_repeat() {
        let a = SplitMix64::for_trial(7, 0).next_u64();
        let b = SplitMix64::for_trial(7, 1).next_u64();
        assert_ne!(a, b);
        assert_eq!(a, SplitMix64::for_trial(7, 0).next_u64());
    }
}
