//! What a tare leaves of a DC source's offset.
//!
//! A unit calibrated at the reference temperature reads its own offset
//! there, `V_cal · Adc₀` at the output, and subtracts it from every later
//! reading. In use, at a temperature excursion ΔT and with the common mode
//! moved to `V_use`, the offset is `V_use · Adc_T`; the residual, referred
//! to the input through the differential gain in use, is
//!
//! `r = | V_use ε_T − V_cal ε₀ (Add₀ / Add_T) |`,
//!
//! which, with `V_use = V_cal ± ΔV` and the sign of ΔV free, is at most
//! `V |ε_T − ε₀ Add₀/Add_T| + ΔV |ε_T|` (equal to it at DC, where the
//! conversions are real). The tolerances that set the offset at
//! calibration cancel; what stays is their drift (the TCRs), the change of
//! the nominal conversion with temperature, and the conversion of the
//! common mode's own movement.
//!
//! Split like the conversion itself ([`super::contributions`]): the
//! systematic part from the nominal solves at both temperatures, one row per
//! varying parameter from its swings at the same end of its range at both
//! temperatures (a unit keeps its parts), and a directed search for the
//! exact worst corner of the residual.

use super::chain::{chain_response, EngineError};
use super::contributions::{ranking_key, resolved, PointAnalysis};
use super::linalg::C64;
use super::settle::settle;
use crate::model::{Budget, ParamId};
use crate::stage::Point;

/// How many passes of single flips the corner search makes at most.
const MAX_PASSES: usize = 8;

/// The residual of a tared source at one temperature, volts referred to
/// the input.
#[derive(Debug, Clone, PartialEq)]
pub struct TareResidual {
    /// The temperature excursion of use, K (0: at the calibration's own
    /// temperature).
    pub delta_t: f64,
    /// From the nominal solves: what the residual is with values as given.
    pub systematic: f64,
    /// Each varying parameter's residual alone, in parameter order.
    pub rows: Vec<(ParamId, f64)>,
    /// The residual solved exactly at the worst corner the search found.
    pub worst_corner: f64,
    /// How many corners were solved (each at both temperatures).
    pub corners_solved: u64,
}

impl TareResidual {
    /// The linear bound: systematic part plus every row's magnitude.
    pub fn worst_case(&self) -> f64 {
        self.systematic + self.rows.iter().map(|r| r.1).sum::<f64>()
    }

    /// Systematic part plus the root-sum-square of the rows.
    pub fn rss(&self) -> f64 {
        self.systematic + self.rows.iter().map(|r| r.1 * r.1).sum::<f64>().sqrt()
    }
}

/// The residual a tare leaves of a DC common mode of `amplitude_v` volts
/// that may move by `varies_by_v`, calibrated where `calibration` was
/// analysed (the reference temperature) and used where `in_use` was (the
/// same frequency).
pub fn tare_residual(
    budget: &Budget,
    calibration: &PointAnalysis,
    in_use: &PointAnalysis,
    amplitude_v: f64,
    varies_by_v: f64,
) -> Result<TareResidual, EngineError> {
    // The tare is subtracted at the output: referred to the input in use,
    // the calibration's conversion is scaled by the change of gain.
    let ratio = calibration.differential_gain / in_use.differential_gain;
    let residual = |use_epsilon: C64, cal_epsilon: C64| {
        amplitude_v * (use_epsilon - cal_epsilon * ratio).norm() + varies_by_v * use_epsilon.norm()
    };
    let systematic = resolved_volts(residual(in_use.nominal, calibration.nominal), amplitude_v);
    // Each parameter at each end, alone, at both temperatures: its swing
    // from the nominal residual phasor.
    let rows: Vec<(ParamId, f64, usize)> = in_use
        .contributions
        .iter()
        .zip(&calibration.contributions)
        .map(|(u, c)| {
            debug_assert_eq!(u.param, c.param);
            let swing = |end: usize| {
                let (du, dc) = (u.ends[end].1, c.ends[end].1);
                amplitude_v * (du - dc * ratio).norm() + varies_by_v * du.norm()
            };
            let (low, high) = (swing(0), swing(1));
            let worse = usize::from(high >= low);
            (u.param, resolved_volts(low.max(high), amplitude_v), worse)
        })
        .collect();
    let (worst_corner, corners_solved) =
        corner_search(budget, in_use, &rows, (amplitude_v, varies_by_v))?;
    Ok(TareResidual {
        delta_t: in_use.delta_t,
        systematic,
        rows: rows.into_iter().map(|(id, r, _)| (id, r)).collect(),
        worst_corner,
        corners_solved,
    })
}

/// A residual in volts, zero where it is below the engine's resolution
/// relative to the amplitude.
fn resolved_volts(residual: f64, amplitude_v: f64) -> f64 {
    if amplitude_v > 0.0 {
        resolved(residual / amplitude_v) * amplitude_v
    } else {
        residual
    }
}

/// The exact residual at a set of base values: the chain solved at the
/// calibration's temperature and at the temperature of use.
fn exact_residual(
    budget: &Budget,
    base: &[f64],
    freq_hz: f64,
    delta_t: f64,
    (amplitude_v, varies_by_v): (f64, f64),
) -> Result<f64, EngineError> {
    let solve = |dt: f64| -> Result<_, EngineError> {
        let mut values = base.to_vec();
        settle(budget, &mut values, dt)?;
        chain_response(&budget.chain, &Point::new(freq_hz, &values))
    };
    let (calibration, in_use) = (solve(0.0)?, solve(delta_t)?);
    let (use_epsilon, cal_epsilon) = (in_use.conversion(), calibration.conversion());
    let referred = cal_epsilon * calibration.dd / in_use.dd;
    Ok(amplitude_v * (use_epsilon - referred).norm() + varies_by_v * use_epsilon.norm())
}

/// A directed search for the corner where the residual is largest: from
/// each parameter at the end that is worse alone, single flips (largest
/// rows first) kept while they raise the exact residual.
fn corner_search(
    budget: &Budget,
    in_use: &PointAnalysis,
    rows: &[(ParamId, f64, usize)],
    scale: (f64, f64),
) -> Result<(f64, u64), EngineError> {
    let (freq_hz, delta_t) = (in_use.freq_hz, in_use.delta_t);
    let mut base = budget.parameters.values_at(0.0);
    let ends: Vec<[f64; 2]> = in_use
        .contributions
        .iter()
        .map(|c| [c.ends[0].0, c.ends[1].0])
        .collect();
    let mut choice: Vec<usize> = rows.iter().map(|r| r.2).collect();
    for (i, (id, _, _)) in rows.iter().enumerate() {
        base[id.0] = ends[i][choice[i]];
    }
    let mut order: Vec<usize> = (0..rows.len()).collect();
    order.sort_by(|&a, &b| ranking_key(rows[b].1).total_cmp(&ranking_key(rows[a].1)));
    let mut current = exact_residual(budget, &base, freq_hz, delta_t, scale)?;
    let mut solved = 1u64;
    for _ in 0..MAX_PASSES {
        let mut improved = false;
        for &i in order.iter().filter(|&&i| rows[i].1 > 0.0) {
            let id = rows[i].0;
            choice[i] ^= 1;
            base[id.0] = ends[i][choice[i]];
            let tried = exact_residual(budget, &base, freq_hz, delta_t, scale)?;
            solved += 1;
            if tried > current {
                current = tried;
                improved = true;
            } else {
                choice[i] ^= 1;
                base[id.0] = ends[i][choice[i]];
            }
        }
        if !improved {
            break;
        }
    }
    Ok((current, solved))
}
