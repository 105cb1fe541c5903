//! The worst sign corner: every varying parameter at one end of its range,
//! chosen to make the conversion largest, solved exactly. Searched
//! exhaustively when there are at most [`EXHAUSTIVE_LIMIT`] parameters
//! (2^n corners, one flip per step in Gray-code order); otherwise by a
//! directed search: from the corner where each parameter sits at the end
//! that is worse alone, and from the corner whose signs line up with the
//! running sum of the contributions, largest first, flip one parameter at a
//! time while the conversion grows.
//!
//! `cmrr budget` and `cmrr yield` both take their worst corner from here.

use super::chain::{chain_response, EngineError};
use super::contributions::{ranking_key, resolved, PointAnalysis};
use super::linalg::C64;
use super::settle::settle;
use crate::model::{Budget, ParamId};
use crate::stage::Point;

/// Up to this many varying parameters, every corner is tried.
pub const EXHAUSTIVE_LIMIT: usize = 12;
/// Passes of single flips in the directed search.
const MAX_PASSES: usize = 50;

/// The worst corner found at one frequency.
#[derive(Debug, Clone, PartialEq)]
pub struct CornerSearch {
    /// `ε` at that corner, solved exactly.
    pub conversion: C64,
    /// Its linear prediction: `ε_nominal + Σ Δε_k` at the corner's signs.
    pub linear: C64,
    /// Whether every corner was tried.
    pub exhaustive: bool,
    /// How many corners were solved.
    pub evaluated: u64,
    /// Each varying parameter's value at the corner.
    pub values: Vec<(ParamId, f64)>,
}

impl CornerSearch {
    /// `|ε|` at the corner, zero below the resolution floor.
    pub fn magnitude(&self) -> f64 {
        resolved(self.conversion.norm())
    }

    /// The magnitude of the interaction (the exact corner minus its linear
    /// prediction), zero below the floor.
    pub fn interaction_magnitude(&self) -> f64 {
        resolved((self.conversion - self.linear).norm())
    }
}

/// Search the worst corner of `budget` at the frequency and temperature of
/// `analysis`, from its nominal conversion and each varying parameter's
/// contribution at both ends.
pub fn worst_corner(
    budget: &Budget,
    analysis: &PointAnalysis,
) -> Result<CornerSearch, EngineError> {
    let (freq_hz, delta_t) = (analysis.freq_hz, analysis.delta_t);
    let nominal = analysis.nominal;
    let contributions = &analysis.contributions;
    let parameters = &budget.parameters;
    let mut values = parameters.values_at(delta_t);
    let evaluate = |values: &mut Vec<f64>| -> Result<C64, EngineError> {
        settle(budget, values, delta_t)?;
        Ok(chain_response(&budget.chain, &Point::new(freq_hz, values))?.conversion())
    };
    let set = |values: &mut Vec<f64>, i: usize, end: usize| {
        let c = &contributions[i];
        values[c.param.0] = c.ends[end].0;
    };
    let n = contributions.len();
    let mut evaluated = 0u64;
    let (best, choice) = if n <= EXHAUSTIVE_LIMIT {
        // Gray code: corner k differs from corner k−1 in one parameter.
        let mut choice = vec![0usize; n];
        for i in 0..n {
            set(&mut values, i, 0);
        }
        let mut best = (evaluate(&mut values)?, choice.clone());
        evaluated += 1;
        for k in 1u64..(1u64 << n) {
            let flip = k.trailing_zeros() as usize;
            choice[flip] ^= 1;
            set(&mut values, flip, choice[flip]);
            let conversion = evaluate(&mut values)?;
            evaluated += 1;
            if conversion.norm() > best.0.norm() {
                best = (conversion, choice.clone());
            }
        }
        best
    } else {
        // Start 1: each parameter at the end that is worse alone.
        let alone: Vec<usize> = contributions
            .iter()
            .map(|c| usize::from(c.value == c.ends[1].0))
            .collect();
        // Start 2: signs aligned with the running sum, largest first.
        let mut order: Vec<usize> = (0..n).collect();
        order.sort_by(|&a, &b| {
            ranking_key(contributions[b].deviation.norm())
                .total_cmp(&ranking_key(contributions[a].deviation.norm()))
        });
        let mut aligned = vec![0usize; n];
        let mut running = nominal;
        for &i in &order {
            let [low, high] = contributions[i].ends;
            if (running + high.1).norm() >= (running + low.1).norm() {
                aligned[i] = 1;
                running += high.1;
            } else {
                running += low.1;
            }
        }
        let mut best: Option<(C64, Vec<usize>)> = None;
        for start in [alone, aligned] {
            let mut choice = start;
            for (i, &end) in choice.iter().enumerate() {
                set(&mut values, i, end);
            }
            let mut current = evaluate(&mut values)?;
            evaluated += 1;
            for _ in 0..MAX_PASSES {
                let mut improved = false;
                for &i in &order {
                    choice[i] ^= 1;
                    set(&mut values, i, choice[i]);
                    let conversion = evaluate(&mut values)?;
                    evaluated += 1;
                    if conversion.norm() > current.norm() {
                        current = conversion;
                        improved = true;
                    } else {
                        choice[i] ^= 1;
                        set(&mut values, i, choice[i]);
                    }
                }
                if !improved {
                    break;
                }
            }
            if best.as_ref().is_none_or(|b| current.norm() > b.0.norm()) {
                best = Some((current, choice));
            }
        }
        best.expect("two starts were searched")
    };
    let linear = contributions
        .iter()
        .zip(&choice)
        .fold(nominal, |sum, (c, &end)| sum + c.ends[end].1);
    Ok(CornerSearch {
        conversion: best,
        linear,
        exhaustive: n <= EXHAUSTIVE_LIMIT,
        evaluated,
        values: contributions
            .iter()
            .zip(&choice)
            .map(|(c, &end)| (c.param, c.ends[end].0))
            .collect(),
    })
}
