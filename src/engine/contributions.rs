//! Splitting the chain's CM-to-DM conversion into contributions.
//!
//! At one frequency: the conversion `ε = Adc/Add` (referred to the input) is
//! solved exactly with every parameter at its nominal value (the systematic
//! part), then once per varying parameter with that parameter alone at the
//! extreme of its range that makes `|ε|` larger (its worst-case sign); its
//! contribution is the difference from the nominal solve. The totals are
//!
//! - worst case: `|ε_nominal| + Σ |Δε_k|`, an upper bound to first order;
//! - RSS: `|ε_nominal| + √(Σ |Δε_k|²)`, systematic part added linearly,
//!   random parts (independent, each at the same confidence) in quadrature;
//! - nominal: `|ε_nominal|`.
//!
//! The chain is also solved exactly at the corner the worst case assumes:
//! every parameter at once, the largest first, each at the extreme that
//! adds most to the running sum (for a real-valued conversion at DC, all
//! contributions in phase). What the exact corner differs from its linear
//! prediction (`ε_nominal + Σ Δε_k`) is the interaction, reported rather
//! than hidden.

use super::chain::{chain_response, EngineError};
use super::linalg::C64;
use crate::model::{Budget, ParamId};
use crate::stage::Point;

/// Conversions below this magnitude (a CMRR above 240 dB) are beneath the
/// resolution of a double-precision solve and are treated as exactly zero:
/// a perfectly matched chain reports an infinite CMRR.
pub const RESOLUTION_FLOOR: f64 = 1e-12;

fn resolved(magnitude: f64) -> f64 {
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
    /// The chain's differential gain `Add` at nominal values.
    pub differential_gain: C64,
    /// The conversion `ε` at nominal values (the systematic part).
    pub nominal: C64,
    /// One entry per varying parameter, in parameter order.
    pub contributions: Vec<Contribution>,
    /// `ε` solved exactly at the worst-aligned corner: every parameter at
    /// once, each at the extreme that adds most to the running sum.
    pub corner: C64,
    /// The linear prediction at that corner: `ε_nominal + Σ Δε_k` with the
    /// corner's signs.
    pub corner_linear: C64,
}

impl PointAnalysis {
    /// `|ε_nominal|`, zero below the resolution floor.
    pub fn nominal_magnitude(&self) -> f64 {
        resolved(self.nominal.norm())
    }

    /// Worst case: `|ε_nominal| + Σ |Δε_k|`.
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

    /// `|ε|` at the worst-aligned corner, zero below the floor.
    pub fn corner_magnitude(&self) -> f64 {
        resolved(self.corner.norm())
    }

    /// The interaction: the exact corner minus its linear prediction.
    pub fn interaction(&self) -> C64 {
        self.corner - self.corner_linear
    }

    /// The magnitude of the interaction, zero below the floor.
    pub fn interaction_magnitude(&self) -> f64 {
        resolved(self.interaction().norm())
    }
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
    let nominal_response = chain_response(&budget.chain, &Point::new(freq_hz, &values))?;
    let nominal = nominal_response.conversion();
    // Each varying parameter at each of its extremes, alone.
    let mut swings: Vec<(ParamId, [(f64, C64); 2])> = Vec::new();
    for (id, parameter) in budget.parameters.iter() {
        let Some(extremes) = parameter.extremes() else {
            continue;
        };
        let mut deviations = [(0.0, C64::new(0.0, 0.0)); 2];
        for (slot, extreme) in deviations.iter_mut().zip(extremes) {
            values[id.0] = extreme;
            parameters.resolve(&mut values, delta_t);
            let conversion =
                chain_response(&budget.chain, &Point::new(freq_hz, &values))?.conversion();
            *slot = (extreme, conversion - nominal);
        }
        values[id.0] = parameter.nominal;
        parameters.resolve(&mut values, delta_t);
        swings.push((id, deviations));
    }
    // A contribution is the larger of the two swings.
    let contributions: Vec<Contribution> = swings
        .iter()
        .map(|(id, [low, high])| {
            let (value, deviation) = if high.1.norm() >= low.1.norm() {
                *high
            } else {
                *low
            };
            Contribution {
                param: *id,
                value,
                deviation,
            }
        })
        .collect();
    // The corner the worst case assumes: largest swings first, each at the
    // extreme that adds most to the running sum, then solved exactly.
    let mut order: Vec<usize> = (0..swings.len()).collect();
    order.sort_by(|&a, &b| {
        contributions[b]
            .deviation
            .norm()
            .total_cmp(&contributions[a].deviation.norm())
    });
    let mut running = nominal;
    for index in order {
        let (id, [low, high]) = swings[index];
        let (value, deviation) = if (running + high.1).norm() >= (running + low.1).norm() {
            high
        } else {
            low
        };
        running += deviation;
        values[id.0] = value;
    }
    parameters.resolve(&mut values, delta_t);
    let corner = chain_response(&budget.chain, &Point::new(freq_hz, &values))?.conversion();
    Ok(PointAnalysis {
        freq_hz,
        differential_gain: nominal_response.dd,
        nominal,
        contributions,
        corner,
        corner_linear: running,
    })
}
