//! Splitting the chain's CM-to-DM conversion into contributions.
//!
//! At one frequency: the conversion `ε = Adc/Add` (referred to the input) is
//! solved exactly with every parameter at its nominal value (the systematic
//! part), then once per varying parameter at each end of its range, alone;
//! its contribution is the larger difference from the nominal solve (its
//! worst-case sign). The totals are
//!
//! - worst case (the linear bound): `|ε_nominal| + Σ |Δε_k|`, an upper
//!   bound to first order;
//! - RSS: `|ε_nominal| + √(Σ |Δε_k|²)`, systematic part added linearly,
//!   random parts (independent, each at the same confidence) in quadrature;
//! - nominal: `|ε_nominal|`.
//!
//! The chain can also be solved exactly at its worst sign corner
//! ([`super::worst_corner`]): every varying parameter at one end of its
//! range at once. The linear bound adds magnitudes; where the
//! contributions are out of phase (a capacitor mismatch against a resistor
//! mismatch) no corner reaches it, and the corner is the exact figure. What
//! the corner's exact conversion differs from its linear prediction
//! (`ε_nominal + Σ Δε_k` at the corner's signs) is the interaction,
//! reported rather than hidden.

use super::chain::{chain_response, EngineError};
use super::linalg::C64;
use super::settle::settle;
use crate::model::{Budget, ParamId};
use crate::stage::Point;

/// Conversions below this magnitude (a CMRR above 240 dB) are beneath the
/// resolution of a double-precision solve and are treated as exactly zero:
/// a perfectly matched chain reports an infinite CMRR.
pub const RESOLUTION_FLOOR: f64 = 1e-12;

/// A value rounded to 9 significant digits, for ranking: two contributions
/// that differ only by rounding (a matched p and n leg, say) then tie, and
/// keep their budget order, whatever order of operations computed them.
pub fn ranking_key(value: f64) -> f64 {
    if value == 0.0 || !value.is_finite() {
        return value;
    }
    let scale = 10f64.powi(8 - value.abs().log10().floor() as i32);
    (value * scale).round() / scale
}

/// A magnitude, zero below the resolution floor.
pub fn resolved(magnitude: f64) -> f64 {
    if magnitude < RESOLUTION_FLOOR {
        0.0
    } else {
        magnitude
    }
}

/// One parameter's share of the conversion at one frequency.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Contribution {
    /// The parameter moved.
    pub param: ParamId,
    /// The value it was moved to (its worst-case extreme).
    pub value: f64,
    /// The change in `ε` it causes alone, against the nominal solve.
    pub deviation: C64,
    /// Both ends of its range, low then high, each with the change in `ε`
    /// it causes there alone.
    pub ends: [(f64, C64); 2],
}

impl Contribution {
    /// The magnitude of its conversion, zero below the resolution floor.
    pub fn magnitude(&self) -> f64 {
        resolved(self.deviation.norm())
    }
}

/// The full analysis of the chain at one frequency.
#[derive(Debug, Clone, PartialEq)]
pub struct PointAnalysis {
    /// The frequency in hertz.
    pub freq_hz: f64,
    /// The temperature excursion from the reference, K.
    pub delta_t: f64,
    /// The chain's differential gain `Add` at nominal values.
    pub differential_gain: C64,
    /// The conversion `ε` at nominal values (the systematic part).
    pub nominal: C64,
    /// One entry per varying parameter, in parameter order.
    pub contributions: Vec<Contribution>,
}

impl PointAnalysis {
    /// `|ε_nominal|`, zero below the resolution floor.
    pub fn nominal_magnitude(&self) -> f64 {
        resolved(self.nominal.norm())
    }

    /// Worst case (the linear bound): `|ε_nominal| + Σ |Δε_k|`.
    pub fn worst_case(&self) -> f64 {
        self.nominal_magnitude()
            + self
                .contributions
                .iter()
                .map(Contribution::magnitude)
                .sum::<f64>()
    }

    /// RSS: `|ε_nominal| + √(Σ |Δε_k|²)`.
    pub fn rss(&self) -> f64 {
        let random: f64 = self
            .contributions
            .iter()
            .map(|c| c.magnitude().powi(2))
            .sum();
        self.nominal_magnitude() + random.sqrt()
    }

    /// The largest phase difference, in degrees from 0 to 90, between the
    /// largest contribution and any other of at least a tenth of its size
    /// (signs being free, a contribution and its opposite are the same
    /// direction); `None` when no other is that large.
    pub fn phase_spread_deg(&self) -> Option<f64> {
        let largest = self
            .contributions
            .iter()
            .filter(|c| c.magnitude() > 0.0)
            .max_by(|a, b| a.magnitude().total_cmp(&b.magnitude()))?;
        self.contributions
            .iter()
            .filter(|c| c.param != largest.param && c.magnitude() >= 0.1 * largest.magnitude())
            .map(|c| {
                let angle = (largest.deviation / c.deviation).arg().abs().to_degrees();
                if angle > 90.0 {
                    180.0 - angle
                } else {
                    angle
                }
            })
            .max_by(f64::total_cmp)
    }
}

/// The chain's differential gain `Add` at `freq_hz` with every value as
/// given, `delta_t` kelvin from the reference.
pub fn nominal_differential_gain(
    budget: &Budget,
    freq_hz: f64,
    delta_t: f64,
) -> Result<C64, EngineError> {
    let mut values = budget.parameters.values_at(delta_t);
    settle(budget, &mut values, delta_t)?;
    Ok(chain_response(&budget.chain, &Point::new(freq_hz, &values))?.dd)
}

/// Analyse the budget's chain at `freq_hz` at the reference temperature.
pub fn analyse_point(budget: &Budget, freq_hz: f64) -> Result<PointAnalysis, EngineError> {
    analyse_point_at(budget, freq_hz, 0.0)
}

/// Analyse the budget's chain at `freq_hz`, `delta_t` kelvin from the
/// reference temperature (temperature coefficients then contribute).
pub fn analyse_point_at(
    budget: &Budget,
    freq_hz: f64,
    delta_t: f64,
) -> Result<PointAnalysis, EngineError> {
    let parameters = &budget.parameters;
    let mut values = parameters.values_at(delta_t);
    settle(budget, &mut values, delta_t)?;
    let nominal_response = chain_response(&budget.chain, &Point::new(freq_hz, &values))?;
    let nominal = nominal_response.conversion();
    // Each varying parameter at each of its extremes, alone.
    let mut contributions = Vec::new();
    for (id, parameter) in budget.parameters.iter() {
        let Some(extremes) = parameter.extremes() else {
            continue;
        };
        let mut ends = [(0.0, C64::new(0.0, 0.0)); 2];
        for (slot, extreme) in ends.iter_mut().zip(extremes) {
            values[id.0] = extreme;
            settle(budget, &mut values, delta_t)?;
            let conversion =
                chain_response(&budget.chain, &Point::new(freq_hz, &values))?.conversion();
            *slot = (extreme, conversion - nominal);
        }
        values[id.0] = parameter.nominal;
        settle(budget, &mut values, delta_t)?;
        // A contribution is the larger of the two swings.
        let [low, high] = ends;
        let (value, deviation) = if high.1.norm() >= low.1.norm() {
            high
        } else {
            low
        };
        contributions.push(Contribution {
            param: id,
            value,
            deviation,
            ends,
        });
    }
    Ok(PointAnalysis {
        freq_hz,
        delta_t,
        differential_gain: nominal_response.dd,
        nominal,
        contributions,
    })
}
