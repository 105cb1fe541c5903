//! The worst sign corner: every varying parameter at one end of its range,
//! chosen to make the conversion largest. Searched exhaustively when there
//! are at most [`EXHAUSTIVE_LIMIT`] parameters (2^n corners, one flip per
//! step in Gray-code order); otherwise by a directed search: from the corner
//! where each parameter sits at the end that is worse alone, and from the
//! corner aligned with the largest contributions, flip one parameter at a
//! time while the conversion grows.

use crate::engine::{analyse_point_at, chain_response, EngineError};
use crate::model::{Budget, ParamId};
use crate::stage::Point;

/// Up to this many varying parameters, every corner is tried.
pub const EXHAUSTIVE_LIMIT: usize = 16;
/// Passes of single flips in the directed search.
const MAX_PASSES: usize = 50;

/// The worst corner found at one frequency.
#[derive(Debug, Clone, PartialEq)]
pub struct WorstCorner {
    /// |ε| at that corner, solved exactly.
    pub conversion: f64,
    /// The first-order worst case (#2's linear bound) at the same point.
    pub linear_bound: f64,
    /// Whether every corner was tried.
    pub exhaustive: bool,
    /// How many corners were solved.
    pub evaluated: u64,
    /// Each varying parameter's value at the corner.
    pub values: Vec<(ParamId, f64)>,
}

/// Search the worst corner of `budget` at `freq_hz`, `delta_t` from the
/// reference temperature.
pub fn worst_corner(
    budget: &Budget,
    freq_hz: f64,
    delta_t: f64,
) -> Result<WorstCorner, EngineError> {
    let parameters = &budget.parameters;
    let varying: Vec<(ParamId, [f64; 2])> = parameters
        .iter()
        .filter_map(|(id, p)| p.extremes().map(|e| (id, e)))
        .collect();
    let analysis = analyse_point_at(budget, freq_hz, delta_t)?;
    let mut values = parameters.values_at(delta_t);
    let evaluate = |values: &mut Vec<f64>| -> Result<f64, EngineError> {
        parameters.resolve(values, delta_t);
        Ok(chain_response(&budget.chain, &Point::new(freq_hz, values))?
            .conversion()
            .norm())
    };
    let mut evaluated = 0u64;
    let n = varying.len();
    let (best_conversion, best_choice) = if n <= EXHAUSTIVE_LIMIT {
        // Gray code: corner k differs from corner k−1 in one parameter.
        let mut choice = vec![0usize; n];
        for (i, (id, ends)) in varying.iter().enumerate() {
            values[id.0] = ends[choice[i]];
        }
        let mut best = (evaluate(&mut values)?, choice.clone());
        evaluated += 1;
        for k in 1u64..(1u64 << n) {
            let flip = k.trailing_zeros() as usize;
            choice[flip] ^= 1;
            let (id, ends) = varying[flip];
            values[id.0] = ends[choice[flip]];
            let conversion = evaluate(&mut values)?;
            evaluated += 1;
            if conversion > best.0 {
                best = (conversion, choice.clone());
            }
        }
        best
    } else {
        // Start 1: each parameter at the end that is worse alone.
        let alone: Vec<usize> = varying
            .iter()
            .map(|(id, ends)| {
                let chosen = analysis
                    .contributions
                    .iter()
                    .find(|c| c.param == *id)
                    .map_or(ends[1], |c| c.value);
                usize::from(chosen == ends[1])
            })
            .collect();
        // Start 2: signs aligned with the running sum, largest first.
        let mut order: Vec<usize> = (0..n).collect();
        let deviation = |i: usize| {
            analysis
                .contributions
                .iter()
                .find(|c| c.param == varying[i].0)
                .map_or(0.0, |c| c.deviation.norm())
        };
        order.sort_by(|&a, &b| deviation(b).total_cmp(&deviation(a)));
        let mut aligned = alone.clone();
        let mut running = analysis.nominal;
        for &i in &order {
            if let Some(c) = analysis
                .contributions
                .iter()
                .find(|c| c.param == varying[i].0)
            {
                // The other end moves ε the opposite way, to first order.
                if (running - c.deviation).norm() > (running + c.deviation).norm() {
                    aligned[i] ^= 1;
                    running -= c.deviation;
                } else {
                    running += c.deviation;
                }
            }
        }
        let mut best: Option<(f64, Vec<usize>)> = None;
        for start in [alone, aligned] {
            let mut choice = start;
            for (i, (id, ends)) in varying.iter().enumerate() {
                values[id.0] = ends[choice[i]];
            }
            let mut current = evaluate(&mut values)?;
            evaluated += 1;
            for _ in 0..MAX_PASSES {
                let mut improved = false;
                for &i in &order {
                    let (id, ends) = varying[i];
                    choice[i] ^= 1;
                    values[id.0] = ends[choice[i]];
                    let conversion = evaluate(&mut values)?;
                    evaluated += 1;
                    if conversion > current {
                        current = conversion;
                        improved = true;
                    } else {
                        choice[i] ^= 1;
                        values[id.0] = ends[choice[i]];
                    }
                }
                if !improved {
                    break;
                }
            }
            if best.as_ref().is_none_or(|b| current > b.0) {
                best = Some((current, choice));
            }
        }
        best.expect("two starts were searched")
    };
    Ok(WorstCorner {
        conversion: best_conversion,
        linear_bound: analysis.worst_case(),
        exhaustive: n <= EXHAUSTIVE_LIMIT,
        evaluated,
        values: varying
            .iter()
            .zip(&best_choice)
            .map(|((id, ends), choice)| (*id, ends[*choice]))
            .collect(),
    })
}
