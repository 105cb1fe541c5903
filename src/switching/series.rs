//! The exact Fourier series of a trapezoidal waveform.
//!
//! The waveform's derivative is two rectangles: `ΔV/t_r` over the rising
//! edge and `−ΔV/t_f` over the falling edge. A rectangle of height `h` and
//! width `w` centred at `t_c` has the Fourier coefficient
//! `(h·w/T)·sinc(nω₀w/2)·e^{−jnω₀t_c}` (with `sinc x = sin x / x`), and
//! integrating divides the `n`-th coefficient by `jnω₀`. So, with time
//! counted from the start of the rising edge (its centre at `t_r/2`, the
//! falling edge's at `t_r/2 + D·T`):
//!
//! `c_n = (ΔV/T)/(jnω₀) · [sinc(nω₀t_r/2)·e^{−jnω₀t_r/2}
//!        − sinc(nω₀t_f/2)·e^{−jnω₀(t_r/2 + DT)}]`,
//!
//! and `c₀ = V_low + D·ΔV` (linear edges are antisymmetric about their
//! 50 % points, so the mean is that of a rectangle of width `D·T`). The
//! waveform is `c₀ + Σ_{n≥1} 2·Re(c_n e^{jnω₀t})`. Since `|sinc x| ≤ 1/|x|`,
//! `|c_n| ≤ 2ΔV(1/t_r + 1/t_f)/(T n² ω₀²)`, so the harmonics above the `N`-th
//! together swing less than `ΔV·T·(1/t_r + 1/t_f)/(π²N)` (using
//! `Σ_{n>N} 1/n² < 1/N`): the bound on the truncation.

use crate::engine::linalg::C64;
use crate::model::{Edge, Trapezoid};
use std::f64::consts::PI;

/// `sin x / x`, 1 at 0.
fn sinc(x: f64) -> f64 {
    if x.abs() < 1e-8 {
        1.0 - x * x / 6.0
    } else {
        x.sin() / x
    }
}

impl Trapezoid {
    /// The period, seconds.
    pub fn period_s(&self) -> f64 {
        1.0 / self.frequency_hz
    }

    /// The step between the two levels, volts (negative when the high
    /// level is below the low one).
    pub fn step_v(&self) -> f64 {
        self.high_v - self.low_v
    }

    /// The mean level `c₀`, volts.
    pub fn mean_v(&self) -> f64 {
        self.low_v + self.duty * self.step_v()
    }

    /// The `n`-th complex Fourier coefficient `c_n` (`n ≥ 1`), volts, with
    /// time counted from the start of the rising edge.
    pub fn harmonic(&self, n: u64) -> C64 {
        let period = self.period_s();
        let omega = 2.0 * PI * self.frequency_hz * n as f64;
        let rise_centre = self.rise_s / 2.0;
        let fall_centre = rise_centre + self.duty * period;
        let rising = C64::from_polar(sinc(omega * self.rise_s / 2.0), -omega * rise_centre);
        let falling = C64::from_polar(sinc(omega * self.fall_s / 2.0), -omega * fall_centre);
        (rising - falling) * (self.step_v() / period) / C64::new(0.0, omega)
    }

    /// A bound on the largest swing of the harmonics above the `n`-th,
    /// volts: `ΔV·T·(1/t_r + 1/t_f)/(π²n)`.
    pub fn truncation_bound_v(&self, n: u64) -> f64 {
        self.step_v().abs() * self.period_s() * (1.0 / self.rise_s + 1.0 / self.fall_s)
            / (PI * PI * n as f64)
    }

    /// When each edge starts, seconds from the start of the rising edge.
    pub fn edge_start_s(&self, edge: Edge) -> f64 {
        match edge {
            Edge::Rising => 0.0,
            Edge::Falling => self.rise_s / 2.0 + self.duty * self.period_s() - self.fall_s / 2.0,
        }
    }

    /// The interval from the start of `edge` to the start of the other
    /// edge, seconds from the start of the rising edge: what the residue
    /// has to settle in.
    pub fn interval_after(&self, edge: Edge) -> (f64, f64) {
        let fall = self.edge_start_s(Edge::Falling);
        match edge {
            Edge::Rising => (0.0, fall),
            Edge::Falling => (fall, self.period_s()),
        }
    }

    /// The waveform's value at `t` seconds after the start of a rising
    /// edge (any `t`; the waveform repeats), straight from its definition.
    pub fn value_at(&self, t: f64) -> f64 {
        let period = self.period_s();
        let t = t.rem_euclid(period);
        let fall = self.edge_start_s(Edge::Falling);
        let level = if t < self.rise_s {
            t / self.rise_s
        } else if t < fall {
            1.0
        } else if t < fall + self.fall_s {
            1.0 - (t - fall) / self.fall_s
        } else {
            0.0
        };
        self.low_v + level * self.step_v()
    }

    /// The waveform's exact rms value over a period, volts: each plateau
    /// contributes its level squared times its duration, each linear edge
    /// `t_e·(L² + LH + H²)/3`.
    pub fn rms_v(&self) -> f64 {
        let (low, high) = (self.low_v, self.high_v);
        let edges = self.rise_s + self.fall_s;
        let high_time = self.duty * self.period_s() - edges / 2.0;
        let low_time = self.period_s() - high_time - edges;
        let mean_square = (low * low * low_time
            + high * high * high_time
            + edges * (low * low + low * high + high * high) / 3.0)
            / self.period_s();
        mean_square.sqrt()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn pwm() -> Trapezoid {
        Trapezoid {
            low_v: -0.1,
            high_v: 0.3,
            frequency_hz: 20e3,
            duty: 0.3,
            rise_s: 50e-9,
            fall_s: 80e-9,
        }
    }

    #[test]
    fn symmetric_edges_match_the_published_double_sinc_envelope() {
        // Paul, "Introduction to Electromagnetic Compatibility", 2nd ed.
        // (Wiley, 2006), §3.2, the spectrum of a trapezoidal pulse train
        // with equal rise and fall times (from memory):
        // |c_n| = A (τ/T) |sinc(nπτ/T)| |sinc(nπ t_r/T)|, with τ the width
        // between 50 % points and sinc x = sin x / x.
        let w = Trapezoid {
            fall_s: 50e-9,
            ..pwm()
        };
        let period = w.period_s();
        let tau = w.duty * period;
        for n in [1u64, 2, 3, 7, 50, 333, 4000, 19999] {
            let x = n as f64 * PI;
            let expected =
                w.step_v() * tau / period * sinc(x * tau / period) * sinc(x * w.rise_s / period);
            assert_relative_eq!(w.harmonic(n).norm(), expected.abs(), max_relative = 1e-9);
        }
        assert_relative_eq!(w.mean_v(), -0.1 + 0.3 * 0.4);
    }

    #[test]
    fn parseval_the_harmonics_carry_the_waveforms_power() {
        // Parseval's theorem for a Fourier series: the mean square is
        // c₀² + Σ 2|c_n|² (e.g. Oppenheim and Willsky, "Signals and
        // Systems", 2nd ed., 1997, eq. 3.67). The tail above N falls as
        // 1/N³, so 200,000 harmonics leave far less than 1e-9.
        let w = pwm();
        let sum: f64 = w.mean_v().powi(2)
            + (1..=200_000u64)
                .map(|n| 2.0 * w.harmonic(n).norm_sqr())
                .sum::<f64>();
        assert_relative_eq!(sum.sqrt(), w.rms_v(), max_relative = 1e-9);
    }

    #[test]
    fn the_truncated_series_stays_within_its_bound() {
        // The partial sum of 2,000 harmonics against the waveform's own
        // definition, everywhere within the stated truncation bound (which
        // is derived in this module's header).
        let w = pwm();
        let n = 2_000u64;
        let coefficients: Vec<C64> = (1..=n).map(|k| w.harmonic(k)).collect();
        let bound = w.truncation_bound_v(n);
        let mut largest: f64 = 0.0;
        for i in 0..997 {
            let t = w.period_s() * i as f64 / 997.0;
            let omega = 2.0 * PI * w.frequency_hz * t;
            let sum = w.mean_v()
                + coefficients
                    .iter()
                    .enumerate()
                    .map(|(k, c)| 2.0 * (c * C64::from_polar(1.0, omega * (k + 1) as f64)).re)
                    .sum::<f64>();
            largest = largest.max((sum - w.value_at(t)).abs());
        }
        assert!(largest <= bound, "{largest} > {bound}");
        assert!(
            largest > bound / 1e3,
            "the bound is not loose by more than 1000×"
        );
    }
}
