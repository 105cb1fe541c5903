//! A periodic waveform sampled from its Fourier series, by an inverse fast
//! Fourier transform (iterative radix-2 Cooley–Tukey).

use crate::engine::linalg::C64;
use std::f64::consts::PI;

/// The waveform `dc + Σ_{n=1}^{N} 2·Re(c_n e^{j2πnm/M})` at `M = points`
/// evenly spaced times over one period (`m = 0 … M−1`), `c_n` being
/// `harmonics[n − 1]`. `points` must be a power of two above `2N`.
pub fn sample_periodic(dc: f64, harmonics: &[C64], points: usize) -> Vec<f64> {
    assert!(points.is_power_of_two() && points > 2 * harmonics.len());
    let mut spectrum = vec![C64::new(0.0, 0.0); points];
    spectrum[0] = C64::new(dc, 0.0);
    for (n, c) in harmonics.iter().enumerate() {
        spectrum[n + 1] = *c;
        spectrum[points - n - 1] = c.conj();
    }
    inverse_transform(&mut spectrum);
    spectrum.into_iter().map(|x| x.re).collect()
}

/// In place: `x_m ← Σ_k X_k e^{+j2πkm/M}` (no scaling).
fn inverse_transform(data: &mut [C64]) {
    let len = data.len();
    let bits = len.trailing_zeros();
    if bits == 0 {
        return;
    }
    for i in 0..len {
        let j = i.reverse_bits() >> (usize::BITS - bits);
        if j > i {
            data.swap(i, j);
        }
    }
    let mut half = 1;
    while half < len {
        let step = PI / half as f64;
        // Twiddles computed directly (not by repeated multiplication), so
        // rounding does not build up over long transforms.
        let twiddles: Vec<C64> = (0..half)
            .map(|k| C64::from_polar(1.0, step * k as f64))
            .collect();
        for block in data.chunks_exact_mut(2 * half) {
            let (low, high) = block.split_at_mut(half);
            for ((a, b), w) in low.iter_mut().zip(high.iter_mut()).zip(&twiddles) {
                let t = *b * w;
                *b = *a - t;
                *a += t;
            }
        }
        half *= 2;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn the_transform_agrees_with_the_direct_sum() {
        // The direct evaluation of the finite Fourier series is the
        // definition; the fast transform must reproduce it (to rounding).
        let harmonics: Vec<C64> = (1..=37)
            .map(|n| {
                C64::new(
                    (n as f64).sin() / n as f64,
                    (0.3 * n as f64).cos() / n as f64,
                )
            })
            .collect();
        let points = 128;
        let fast = sample_periodic(0.25, &harmonics, points);
        for (m, value) in fast.iter().enumerate() {
            let direct = 0.25
                + harmonics
                    .iter()
                    .enumerate()
                    .map(|(k, c)| {
                        let angle = 2.0 * PI * ((k + 1) * m) as f64 / points as f64;
                        2.0 * (c * C64::from_polar(1.0, angle)).re
                    })
                    .sum::<f64>();
            assert_relative_eq!(*value, direct, epsilon = 1e-12);
        }
    }
}
