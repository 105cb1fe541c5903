//! Drawing a trial's parameter values.
//!
//! A toleranced value is `nominal × (1 + t·x)` and a bound of unknown sign
//! is `m·x`, where x is drawn per the parameter's shape: uniform on
//! [−1, 1]; normal with the tolerance at k σ (x = z/k); or that normal cut
//! off at ±1 (redrawn until inside). Bounds of unknown sign that name no
//! shape (an op-amp's minimum CMRR, an offset) are uniform: any magnitude up
//! to the bound, either sign. A toleranced value that names no shape takes
//! the budget's default.

use super::SplitMix64;
use crate::model::{Budget, ParamId, Production, Variation};
use crate::quantity::SpreadShape;

/// How one varying parameter is drawn.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Draw {
    id: ParamId,
    centre: f64,
    /// The value at x = ±1 minus the centre.
    reach: f64,
    shape: SpreadShape,
    /// Whether the value must stay above zero (a part value).
    positive: bool,
}

/// Draws every varying parameter of a budget for one trial.
#[derive(Debug, Clone)]
pub struct Sampler {
    draws: Vec<Draw>,
    sigmas: f64,
}

impl Sampler {
    /// The sampling plan for `budget`.
    pub fn new(budget: &Budget) -> Sampler {
        let Production {
            shape: default,
            sigmas,
        } = budget.production;
        let draws = budget
            .parameters
            .iter()
            .filter_map(|(id, p)| match p.variation {
                Variation::Relative { tolerance } => Some(Draw {
                    id,
                    centre: p.nominal,
                    reach: p.nominal * tolerance,
                    shape: p.shape.unwrap_or(default),
                    positive: true,
                }),
                Variation::SignedBound { magnitude } => Some(Draw {
                    id,
                    centre: p.nominal,
                    reach: magnitude,
                    shape: p.shape.unwrap_or(SpreadShape::Uniform),
                    positive: false,
                }),
                Variation::Fixed | Variation::Derived => None,
            })
            .collect();
        Sampler { draws, sigmas }
    }

    /// Overwrite the varying entries of `values` with one trial's draw.
    pub fn fill(&self, values: &mut [f64], rng: &mut SplitMix64) {
        for draw in &self.draws {
            values[draw.id.0] = loop {
                let x = match draw.shape {
                    SpreadShape::Uniform => rng.symmetric(),
                    SpreadShape::Normal => rng.normal() / self.sigmas,
                    SpreadShape::Truncated => loop {
                        let x = rng.normal() / self.sigmas;
                        if x.abs() <= 1.0 {
                            break x;
                        }
                    },
                };
                let value = draw.centre + draw.reach * x;
                // A normal tail can reach below zero for a wide tolerance;
                // a part value is redrawn then.
                if !draw.positive || value > 0.0 {
                    break value;
                }
            };
        }
    }
}
