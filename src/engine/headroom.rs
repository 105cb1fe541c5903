//! The headroom check: does every node with a stated range stay inside it,
//! given the interference and the full-scale signal?
//!
//! Each stage names its probed nodes ([`Probe`]) as linear functions of its
//! input pins. Carried back through the stages before it, a probe becomes a
//! response to the sensor's (vdm, vcm). At nominal values, a node's extremes
//! are its bias, plus the DC level the stages before it set at its stage's
//! inputs (a pair's collectors, carried on at DC), plus the DC common modes
//! (as written, positive), plus the
//! peaks of every alternating source at its own frequency, plus the
//! full-scale differential input (and a body's electrode offset) either
//! way. Adding the peaks is the worst
//! case: sources at different frequencies line up at some instant.

use super::chain::{stage_loads, EngineError};
use super::linalg::{Mat2, C64};
use crate::model::Budget;
use crate::stage::Point;

/// A node that leaves its allowed range.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct HeadroomFinding {
    /// The stage's label.
    pub stage: String,
    /// The node, e.g. `A1 output`.
    pub node: String,
    /// Its lowest voltage, in volts.
    pub low_v: f64,
    /// Its highest voltage, in volts.
    pub high_v: f64,
    /// The lowest allowed, in volts.
    pub allowed_low_v: f64,
    /// The highest allowed, in volts (null when unbounded).
    pub allowed_high_v: Option<f64>,
}

/// A probe's response to the sensor, per volt of vdm and vcm.
#[derive(Debug, Clone, Copy)]
struct Response {
    differential: C64,
    common: C64,
}

/// A probe with its response to the sensor.
#[derive(Debug, Clone)]
struct ProbeResponse {
    name: String,
    bias: f64,
    /// Per volt at the stage's own input pins.
    coefficients: [C64; 2],
    low: f64,
    high: f64,
    response: Response,
}

/// Per stage, per probe: its response at `freq_hz`.
fn probe_responses(
    budget: &Budget,
    values: &[f64],
    freq_hz: f64,
) -> Result<Vec<Vec<ProbeResponse>>, EngineError> {
    let point = Point::new(freq_hz, values);
    let loads = stage_loads(&budget.chain, &point)?;
    let mut upstream = Mat2::IDENTITY;
    let mut all = Vec::new();
    for (stage, load) in budget.chain.iter().zip(&loads) {
        let mut stage_probes = Vec::new();
        for probe in stage.kind.probes(&point, load) {
            let [a, b] = probe.coefficients;
            let per_emf = [
                a * upstream.0[0][0] + b * upstream.0[1][0],
                a * upstream.0[0][1] + b * upstream.0[1][1],
            ];
            // (e_p, e_n) = (vcm + vdm/2, vcm − vdm/2).
            let response = Response {
                differential: (per_emf[0] - per_emf[1]) / 2.0,
                common: per_emf[0] + per_emf[1],
            };
            stage_probes.push(ProbeResponse {
                name: probe.name,
                bias: probe.bias,
                coefficients: probe.coefficients,
                low: probe.low,
                high: probe.high,
                response,
            });
        }
        all.push(stage_probes);
        upstream = stage.kind.transfer(&point, load)? * upstream;
    }
    Ok(all)
}

/// The DC level at each stage's input pins that the stages before it set
/// by themselves (a pair's collectors): each stage's own output levels,
/// carried on through the stages after it at DC.
fn input_levels(budget: &Budget, values: &[f64]) -> Result<Vec<[f64; 2]>, EngineError> {
    let point = Point::new(0.0, values);
    let loads = stage_loads(&budget.chain, &point)?;
    let mut level = [0.0; 2];
    let mut levels = Vec::new();
    for (stage, load) in budget.chain.iter().zip(&loads) {
        levels.push(level);
        let carried = stage
            .kind
            .transfer(&point, load)?
            .apply([C64::new(level[0], 0.0), C64::new(level[1], 0.0)]);
        let own = stage.kind.output_levels(&point, load);
        level = [carried[0].re + own[0], carried[1].re + own[1]];
    }
    Ok(levels)
}

/// The largest DC difference between a body's electrodes, volts (0 without
/// a body).
fn electrode_offset(budget: &Budget) -> f64 {
    budget
        .chain
        .iter()
        .filter_map(|stage| match &stage.kind {
            crate::stage::StageKind::SourceNetwork(network) => network.body,
            _ => None,
        })
        .map(|body| body.electrode_offset)
        .sum()
}

/// Check every probed node of the chain at nominal values.
pub fn check_headroom(budget: &Budget) -> Result<Vec<HeadroomFinding>, EngineError> {
    let mut values = budget.parameters.nominal_values();
    super::settle::settle(budget, &mut values, 0.0)?;
    let at_dc = probe_responses(budget, &values, 0.0)?;
    let levels = input_levels(budget, &values)?;
    let mut ac: Vec<(f64, Vec<Vec<ProbeResponse>>)> = Vec::new();
    for source in budget.interference.iter().filter(|s| s.frequency_hz > 0.0) {
        ac.push((
            source.amplitude.peak_volts(),
            probe_responses(budget, &values, source.frequency_hz)?,
        ));
    }
    let dc_common: f64 = budget
        .interference
        .iter()
        .filter(|s| s.frequency_hz == 0.0)
        .map(|s| s.amplitude.volts)
        .sum();
    // The full-scale input and the electrodes' DC offset are differential,
    // either sign.
    let full_scale = budget.full_scale_volts().unwrap_or(0.0) + electrode_offset(budget);
    let mut findings = Vec::new();
    for (stage_index, stage_probes) in at_dc.iter().enumerate() {
        for (probe_index, probe) in stage_probes.iter().enumerate() {
            let dc = probe.response;
            let [a, b] = probe.coefficients;
            let [level_p, level_n] = levels[stage_index];
            let centre = probe.bias + (a * level_p + b * level_n).re + (dc.common * dc_common).re;
            let swing: f64 = ac
                .iter()
                .map(|(peak, responses)| {
                    responses[stage_index][probe_index].response.common.norm() * peak
                })
                .sum::<f64>()
                + dc.differential.norm() * full_scale;
            let (lowest, highest) = (centre - swing, centre + swing);
            if lowest < probe.low || highest > probe.high {
                findings.push(HeadroomFinding {
                    stage: budget.chain[stage_index].label.clone(),
                    node: probe.name.clone(),
                    low_v: lowest,
                    high_v: highest,
                    allowed_low_v: probe.low,
                    allowed_high_v: probe.high.is_finite().then_some(probe.high),
                });
            }
        }
    }
    Ok(findings)
}
