//! The worst sign corner: every varying parameter at one end of its range,
//! chosen to make the conversion largest, solved exactly. Searched
//! exhaustively when there are at most [`EXHAUSTIVE_LIMIT`] parameters
//! (2^n corners, one flip per step in Gray-code order); otherwise by a
//! directed search: from the corner where each parameter sits at the end
//! that is worse alone, and from the corner whose signs line up with the
//! running sum of the contributions, largest first, flip one parameter at a
//! time while the conversion grows.
//!
//! The exhaustive search solves each corner once for every frequency of a
//! temperature at the same time, through the many-frequency kernel
//! ([`super::ChainKernel`]), the 2^n corners split into fixed chunks over
//! every core; each frequency's worst corner is the first in Gray-code
//! order to reach the largest |ε|² (to 9 significant digits, so a tie
//! to rounding is no tie-break by noise), whatever the threads did, and is
//! then solved exactly at one point.
//!
//! `cmrr budget` and `cmrr yield` both take their worst corner from here.

use super::chain::{chain_response, EngineError};
use super::contributions::{ranking_key, resolved, Contribution, PointAnalysis};
use super::kernel::ChainKernel;
use super::linalg::C64;
use super::settle::settle;
use crate::model::{Budget, ParamId};
use crate::stage::Point;
use rayon::prelude::*;

/// Up to this many varying parameters, every corner is tried.
pub const EXHAUSTIVE_LIMIT: usize = 12;
/// Passes of single flips in the directed search.
const MAX_PASSES: usize = 50;
/// Corners per unit of work in the exhaustive search.
const CORNER_CHUNK: u64 = 128;

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

/// Search the worst corner of each of `analyses` (points of `budget`, each
/// with its frequency, temperature and contributions). Points at one
/// temperature with the same varying parameters and ends, few enough to
/// try every corner, are searched together; the others one by one.
pub fn worst_corners(
    budget: &Budget,
    analyses: &[&PointAnalysis],
) -> Result<Vec<CornerSearch>, EngineError> {
    let mut found: Vec<Option<CornerSearch>> = vec![None; analyses.len()];
    for (index, analysis) in analyses.iter().enumerate() {
        if found[index].is_some() {
            continue;
        }
        if analysis.contributions.len() > EXHAUSTIVE_LIMIT {
            found[index] = Some(directed(budget, analysis)?);
            continue;
        }
        let together: Vec<usize> = (index..analyses.len())
            .filter(|&other| found[other].is_none() && same_corners(analysis, analyses[other]))
            .collect();
        let group: Vec<&PointAnalysis> = together.iter().map(|&i| analyses[i]).collect();
        for (slot, search) in together.into_iter().zip(exhaustive(budget, &group)?) {
            found[slot] = Some(search);
        }
    }
    Ok(found.into_iter().flatten().collect())
}

/// Search the worst corner of `budget` at the frequency and temperature of
/// `analysis`, from its nominal conversion and each varying parameter's
/// contribution at both ends.
pub fn worst_corner(
    budget: &Budget,
    analysis: &PointAnalysis,
) -> Result<CornerSearch, EngineError> {
    Ok(worst_corners(budget, &[analysis])?.remove(0))
}

/// Whether two points share their corners: the same temperature and the
/// same parameters with the same ends.
fn same_corners(a: &PointAnalysis, b: &PointAnalysis) -> bool {
    a.delta_t == b.delta_t
        && a.contributions.len() == b.contributions.len()
        && a.contributions.iter().zip(&b.contributions).all(|(x, y)| {
            x.param == y.param && x.ends[0].0 == y.ends[0].0 && x.ends[1].0 == y.ends[1].0
        })
}

/// The values at the corner whose ends are `choice` (0 low, 1 high per
/// contribution), the others as in `base`.
fn corner_values(base: &[f64], contributions: &[Contribution], choice: u64, into: &mut [f64]) {
    into.copy_from_slice(base);
    for (i, c) in contributions.iter().enumerate() {
        into[c.param.0] = c.ends[((choice >> i) & 1) as usize].0;
    }
}

/// The largest |ε|² seen at each frequency and the first corner (in
/// Gray-code order) to reach it.
type Bests = Vec<(f64, u64)>;

/// Every corner of a group of points sharing their corners.
fn exhaustive(budget: &Budget, group: &[&PointAnalysis]) -> Result<Vec<CornerSearch>, EngineError> {
    let first = group[0];
    let (delta_t, contributions) = (first.delta_t, &first.contributions);
    let n = contributions.len();
    let frequencies: Vec<f64> = group.iter().map(|a| a.freq_hz).collect();
    let base = budget.parameters.values_at(delta_t);
    let corners = 1u64 << n;
    let kernel = ChainKernel::new();
    let search_chunk = |chunk: u64| -> Result<Bests, EngineError> {
        let mut values = base.clone();
        let mut stages = Vec::with_capacity(budget.chain.len());
        let mut squared = vec![0.0; frequencies.len()];
        let mut bests: Bests = vec![(f64::NEG_INFINITY, 0); frequencies.len()];
        for k in chunk * CORNER_CHUNK..((chunk + 1) * CORNER_CHUNK).min(corners) {
            let gray = k ^ (k >> 1);
            corner_values(&base, contributions, gray, &mut values);
            settle(budget, &mut values, delta_t)?;
            kernel.solve(
                &budget.chain,
                &values,
                &mut stages,
                &frequencies,
                &mut squared,
            )?;
            for (slot, best) in squared.iter().zip(&mut bests) {
                // Ties to rounding (a circuit symmetric under flipping
                // every sign) go to the first corner in Gray-code order.
                if ranking_key(*slot) > ranking_key(best.0) {
                    *best = (*slot, k);
                }
            }
        }
        Ok(bests)
    };
    let chunks: Vec<Result<Bests, EngineError>> = (0..corners.div_ceil(CORNER_CHUNK))
        .into_par_iter()
        .map(search_chunk)
        .collect();
    let mut bests: Bests = vec![(f64::NEG_INFINITY, 0); frequencies.len()];
    for chunk in chunks {
        for (best, theirs) in bests.iter_mut().zip(chunk?) {
            if ranking_key(theirs.0) > ranking_key(best.0) {
                *best = theirs;
            }
        }
    }
    let mut values = base.clone();
    group
        .iter()
        .zip(bests)
        .map(|(analysis, (_, k))| {
            let gray = k ^ (k >> 1);
            corner_values(&base, contributions, gray, &mut values);
            settle(budget, &mut values, delta_t)?;
            let conversion =
                chain_response(&budget.chain, &Point::new(analysis.freq_hz, &values))?.conversion();
            let choice: Vec<usize> = (0..n).map(|i| ((gray >> i) & 1) as usize).collect();
            Ok(search(analysis, conversion, &choice, true, corners))
        })
        .collect()
}

/// A corner found: its exact conversion, linear prediction and values.
fn search(
    analysis: &PointAnalysis,
    conversion: C64,
    choice: &[usize],
    exhaustive: bool,
    evaluated: u64,
) -> CornerSearch {
    let contributions = &analysis.contributions;
    let linear = contributions
        .iter()
        .zip(choice)
        .fold(analysis.nominal, |sum, (c, &end)| sum + c.ends[end].1);
    CornerSearch {
        conversion,
        linear,
        exhaustive,
        evaluated,
        values: contributions
            .iter()
            .zip(choice)
            .map(|(c, &end)| (c.param, c.ends[end].0))
            .collect(),
    }
}

/// The directed search, for more than [`EXHAUSTIVE_LIMIT`] parameters.
fn directed(budget: &Budget, analysis: &PointAnalysis) -> Result<CornerSearch, EngineError> {
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
    let (conversion, choice) = best.expect("two starts were searched");
    Ok(search(analysis, conversion, &choice, false, evaluated))
}
