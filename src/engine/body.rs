//! What a patient's body does in a source network: its voltage against the
//! common with and without the right-leg drive, the drive's output, and
//! the drive loop's phase margin. All from the source network's own solve
//! ([`SourceValues::body_response`], [`SourceValues::loop_gain`]).

use super::chain::{stage_loads, EngineError};
use crate::model::Budget;
use crate::stage::{Point, SourceValues, StageKind, StageValues};

/// The body's levels at one frequency, per volt of mains.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BodyLevels {
    /// The body against the common, V per V of mains.
    pub body: f64,
    /// The same with the reference electrode to the common instead of the
    /// drive; `None` without a drive.
    pub undriven: Option<f64>,
    /// The drive's output, V per V of mains; `None` without a drive.
    pub drive_output: Option<f64>,
}

/// Where the drive's loop gain crosses unity, and its phase margin there.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LoopCrossing {
    /// The crossing, Hz.
    pub frequency_hz: f64,
    /// `180° − |arg L|` there, degrees.
    pub phase_margin_deg: f64,
}

/// The first stage's values, when it is a source network with a body.
fn body_network(budget: &Budget, values: &[f64]) -> Option<SourceValues> {
    let first = budget.chain.first()?;
    match (&first.kind, first.kind.values(values)) {
        (StageKind::SourceNetwork(n), StageValues::SourceNetwork(v)) if n.body.is_some() => Some(v),
        _ => None,
    }
}

/// The body's levels at `freq_hz`, at the parameter values `values`;
/// `None` without a body.
pub fn body_levels(
    budget: &Budget,
    values: &[f64],
    freq_hz: f64,
) -> Result<Option<BodyLevels>, EngineError> {
    let Some(network) = body_network(budget, values) else {
        return Ok(None);
    };
    let loads = stage_loads(&budget.chain, &Point::new(freq_hz, values))?;
    let per_mains = |x: [crate::engine::linalg::C64; 2]| (x[0] + x[1]).norm();
    let Some(response) = network.body_response(freq_hz, &loads[0]) else {
        return Ok(None);
    };
    let body = network.body().expect("a body network has a body");
    let (undriven, drive_output) = if body.driven() {
        let without = network.with_body(body.without_drive());
        (
            without
                .body_response(freq_hz, &loads[0])
                .map(|r| per_mains(r.body)),
            Some(per_mains(response.drive_output)),
        )
    } else {
        (None, None)
    };
    Ok(Some(BodyLevels {
        body: per_mains(response.body),
        undriven,
        drive_output,
    }))
}

/// Points per decade of the search for the loop's unity-gain crossings.
const CROSSING_POINTS_PER_DECADE: usize = 40;

/// The drive loop's unity-gain crossing with the least phase margin,
/// searched from 10 mHz to 100 MHz (each crossing bracketed on a log grid,
/// then bisected in log frequency); `None` without a drive or when the
/// loop gain never crosses unity there.
pub fn loop_crossing(budget: &Budget, values: &[f64]) -> Result<Option<LoopCrossing>, EngineError> {
    let Some(network) = body_network(budget, values) else {
        return Ok(None);
    };
    if !network.body().is_some_and(|b| b.driven()) {
        return Ok(None);
    }
    let gain_at = |f: f64| -> Result<Option<crate::engine::linalg::C64>, EngineError> {
        let loads = stage_loads(&budget.chain, &Point::new(f, values))?;
        Ok(network.loop_gain(f, &loads[0]))
    };
    let (low, high) = (-2.0f64, 8.0f64);
    let steps = ((high - low) * CROSSING_POINTS_PER_DECADE as f64) as usize;
    let at = |k: usize| 10f64.powf(low + (high - low) * k as f64 / steps as f64);
    let mut worst: Option<LoopCrossing> = None;
    let mut previous = (at(0), gain_at(at(0))?);
    for k in 1..=steps {
        let f = at(k);
        let gain = gain_at(f)?;
        if let (Some(a), Some(b)) = (previous.1, gain) {
            if (a.norm() - 1.0) * (b.norm() - 1.0) <= 0.0 && a.norm() != b.norm() {
                let (mut lo, mut hi) = (previous.0.ln(), f.ln());
                let above_at_lo = a.norm() > 1.0;
                for _ in 0..60 {
                    let mid = 0.5 * (lo + hi);
                    match gain_at(mid.exp())? {
                        Some(g) if (g.norm() > 1.0) == above_at_lo => lo = mid,
                        Some(_) => hi = mid,
                        None => break,
                    }
                }
                let crossing = (0.5 * (lo + hi)).exp();
                if let Some(g) = gain_at(crossing)? {
                    let margin = 180.0 - g.arg().to_degrees().abs();
                    if worst.is_none_or(|w| margin < w.phase_margin_deg) {
                        worst = Some(LoopCrossing {
                            frequency_hz: crossing,
                            phase_margin_deg: margin,
                        });
                    }
                }
            }
        }
        previous = (f, gain);
    }
    Ok(worst)
}
