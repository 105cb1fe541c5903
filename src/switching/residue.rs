//! The residue a switching common mode leaves: each harmonic of the
//! waveform through the chain's exact common-mode-to-differential gain,
//! summed into the differential error over one period.
//!
//! The residue is formed at the chain's output (`A_dc(f_n)·c_n` for each
//! harmonic) and referred to the input through the chain's own
//! differential gain at DC, the gain a reading is scaled by. Where the
//! chain's gain is flat this is the sine budget's `ε·V_cm` harmonic by
//! harmonic; where the chain filters, it is what the reading sees.

use super::measure::Measure;
use super::synthesis::sample_periodic;
use super::Residue;
use crate::engine::linalg::C64;
use crate::engine::{chain_response, settle, EngineError, MixedMode, RESOLUTION_FLOOR};
use crate::model::{Budget, ParamId, Switching};
use crate::stage::Point;
use rayon::prelude::*;

/// The most harmonics a switching source may be summed over: above this
/// the solve and the samples grow past an interactive run.
pub const MAX_HARMONICS: u64 = 50_000;

/// The fewest samples per period.
const MIN_SAMPLES: usize = 4096;

/// How many harmonics a source is summed over.
pub fn harmonic_count(source: &Switching) -> u64 {
    ((source.harmonics_to_hz / source.waveform.frequency_hz).floor() as u64).max(1)
}

/// How many samples per period: a power of two, above two per period of
/// the highest harmonic (the series is then sampled without aliasing) and
/// at least [`MIN_SAMPLES`].
pub fn sample_count(harmonics: u64) -> usize {
    (2 * (harmonics as usize + 1))
        .next_power_of_two()
        .max(MIN_SAMPLES)
}

/// One parameter's deviation at each end of its range.
#[derive(Debug, Clone)]
pub struct Deviation {
    /// The parameter.
    pub param: ParamId,
    /// Its value at the low and the high end.
    pub values: [f64; 2],
    /// The change in the residue there, against the nominal residue.
    pub residues: [Residue; 2],
}

/// The residue of one switching source at one temperature: at nominal
/// values, and each varying parameter's deviation at each end of its
/// range alone.
#[derive(Debug, Clone)]
pub struct ResidueAnalysis {
    /// The temperature excursion from the reference, K.
    pub delta_t: f64,
    /// The chain's differential gain at DC, V/V (signed).
    pub gain_dc: f64,
    /// The residue at nominal values, volts referred to the input.
    pub nominal: Residue,
    /// One entry per varying parameter, in parameter order.
    pub deviations: Vec<Deviation>,
    /// A bound on the residue left out by summing only so many harmonics,
    /// volts referred to the input (see [`ResidueAnalysis::truncation`]).
    pub truncation_v: f64,
}

/// The analysis frequencies: DC, then each harmonic.
fn frequencies(source: &Switching) -> Vec<f64> {
    let f0 = source.waveform.frequency_hz;
    (0..=harmonic_count(source))
        .map(|n| n as f64 * f0)
        .collect()
}

/// The chain's mixed-mode response at every frequency, for one set of
/// values.
fn responses(
    budget: &Budget,
    values: &[f64],
    frequencies: &[f64],
) -> Result<Vec<MixedMode>, EngineError> {
    frequencies
        .par_iter()
        .map(|&f| chain_response(&budget.chain, &Point::new(f, values)))
        .collect()
}

/// The residue, referred to the input through `gain_dc`, of the waveform
/// whose coefficients are `waveform` (DC first) through `responses`.
fn residue_from(responses: &[MixedMode], waveform: &[C64], gain_dc: f64, points: usize) -> Residue {
    let at_dc = &responses[0];
    let dc = if (at_dc.dc / at_dc.dd).norm() < RESOLUTION_FLOOR {
        0.0
    } else {
        (at_dc.dc * waveform[0]).re / gain_dc
    };
    let harmonics: Vec<C64> = responses[1..]
        .iter()
        .zip(&waveform[1..])
        .map(|(r, c)| {
            // A conversion below the engine's resolution is exactly zero,
            // as for a sine source (a perfectly matched chain).
            if (r.dc / r.dd).norm() < RESOLUTION_FLOOR {
                C64::new(0.0, 0.0)
            } else {
                r.dc * c / gain_dc
            }
        })
        .collect();
    Residue {
        samples: sample_periodic(dc, &harmonics, points),
        dc,
        harmonics,
    }
}

/// The waveform's coefficients: `c₀` then `c_1 … c_N`.
fn coefficients(source: &Switching) -> Vec<C64> {
    let w = &source.waveform;
    std::iter::once(C64::new(w.mean_v(), 0.0))
        .chain((1..=harmonic_count(source)).map(|n| w.harmonic(n)))
        .collect()
}

/// The DC differential gain, refused when there is none.
fn dc_gain(responses: &[MixedMode]) -> Result<f64, EngineError> {
    let gain = responses[0].dd.re;
    if gain.abs() > 0.0 && gain.is_finite() {
        Ok(gain)
    } else {
        Err(EngineError::NoDifferentialGain { freq_hz: 0.0 })
    }
}

/// Analyse `source` through `budget`'s chain, `delta_t` kelvin from the
/// reference temperature.
pub fn analyse_residue(
    budget: &Budget,
    source: &Switching,
    delta_t: f64,
) -> Result<ResidueAnalysis, EngineError> {
    let freqs = frequencies(source);
    let waveform = coefficients(source);
    let points = sample_count(harmonic_count(source));
    let mut values = budget.parameters.values_at(delta_t);
    settle(budget, &mut values, delta_t)?;
    let values = values;
    let nominal_responses = responses(budget, &values, &freqs)?;
    let gain_dc = dc_gain(&nominal_responses)?;
    let nominal = residue_from(&nominal_responses, &waveform, gain_dc, points);
    // The conversion's bound over the top octave of harmonics, for the
    // truncation: nominal plus every deviation's largest.
    let top = (freqs.len() / 2).max(1);
    let varying: Vec<(ParamId, [f64; 2])> = budget
        .parameters
        .iter()
        .filter_map(|(id, p)| p.extremes().map(|e| (id, e)))
        .collect();
    // Each parameter's two ends, in parallel (each solve is the same
    // whatever the order, so the result does not depend on the threads).
    let moved: Vec<(Deviation, Vec<f64>)> = varying
        .par_iter()
        .map(|&(id, extremes)| {
            let mut values = values.clone();
            let mut residues = Vec::with_capacity(2);
            let mut largest = vec![0.0f64; freqs.len() - top];
            for extreme in extremes {
                values[id.0] = extreme;
                settle(budget, &mut values, delta_t)?;
                let moved = responses(budget, &values, &freqs)?;
                let moved_gain = dc_gain(&moved)?;
                // The deviation of the residue (each referred through its
                // own chain's gain), harmonic by harmonic.
                let residue = residue_from(&moved, &waveform, moved_gain, points);
                residues.push(difference(&residue, &nominal));
                for ((l, m), n) in largest
                    .iter_mut()
                    .zip(&moved[top..])
                    .zip(&nominal_responses[top..])
                {
                    *l = l.max((m.dc - n.dc).norm());
                }
            }
            let [low, high]: [Residue; 2] = residues.try_into().expect("two ends");
            Ok((
                Deviation {
                    param: id,
                    values: extremes,
                    residues: [low, high],
                },
                largest,
            ))
        })
        .collect::<Result<_, EngineError>>()?;
    let mut top_octave: Vec<f64> = nominal_responses[top..]
        .iter()
        .map(|r| r.dc.norm())
        .collect();
    for (_, largest) in &moved {
        for (t, l) in top_octave.iter_mut().zip(largest) {
            *t += l;
        }
    }
    let deviations: Vec<Deviation> = moved.into_iter().map(|(d, _)| d).collect();
    let conversion_bound = top_octave.iter().copied().fold(0.0, f64::max) / gain_dc.abs();
    let truncation_v =
        source.waveform.truncation_bound_v(harmonic_count(source)) * conversion_bound;
    Ok(ResidueAnalysis {
        delta_t,
        gain_dc,
        nominal,
        deviations,
        truncation_v,
    })
}

/// `a − b`, sample by sample and harmonic by harmonic.
fn difference(a: &Residue, b: &Residue) -> Residue {
    Residue {
        samples: a
            .samples
            .iter()
            .zip(&b.samples)
            .map(|(x, y)| x - y)
            .collect(),
        dc: a.dc - b.dc,
        harmonics: a
            .harmonics
            .iter()
            .zip(&b.harmonics)
            .map(|(x, y)| x - y)
            .collect(),
    }
}

/// The linear-bound envelope of the residue: at each sample the nominal
/// residue's magnitude plus each parameter's larger deviation there.
pub fn worst_case_envelope(analysis: &ResidueAnalysis) -> Vec<f64> {
    envelope(analysis, |sum, d| sum + d)
}

/// The RSS envelope: the nominal residue's magnitude plus the root sum of
/// squares of each parameter's larger deviation.
pub fn rss_envelope(analysis: &ResidueAnalysis) -> Vec<f64> {
    let squares = envelope_parts(analysis, |sum, d| sum + d * d);
    analysis
        .nominal
        .samples
        .iter()
        .zip(squares)
        .map(|(n, s)| n.abs() + s.sqrt())
        .collect()
}

fn envelope(analysis: &ResidueAnalysis, add: impl Fn(f64, f64) -> f64) -> Vec<f64> {
    analysis
        .nominal
        .samples
        .iter()
        .zip(envelope_parts(analysis, add))
        .map(|(n, s)| n.abs() + s)
        .collect()
}

fn envelope_parts(analysis: &ResidueAnalysis, add: impl Fn(f64, f64) -> f64) -> Vec<f64> {
    let mut parts = vec![0.0; analysis.nominal.samples.len()];
    for d in &analysis.deviations {
        let [low, high] = &d.residues;
        for ((p, a), b) in parts.iter_mut().zip(&low.samples).zip(&high.samples) {
            *p = add(*p, a.abs().max(b.abs()));
        }
    }
    parts
}

/// The worst sign corner the linear model gives for `measure`: each
/// varying parameter at the end that pushes the residue the same way as
/// the nominal residue (or, where that is zero, as the largest deviation)
/// where the measure is decided — at the envelope's peak for the peak
/// measures, over the window for its mean, along the whole waveform for
/// the rms. Returns the values, solved then exactly by [`corner_residue`].
pub fn corner_values(
    budget: &Budget,
    analysis: &ResidueAnalysis,
    measure: &Measure,
    period_s: f64,
) -> Vec<f64> {
    if *measure == Measure::Rms {
        return rms_corner_values(budget, analysis, period_s);
    }
    // How each candidate residue scores against a direction.
    let score: Box<dyn Fn(&Residue) -> f64> = match *measure {
        Measure::WindowMean { start_s, width_s } => {
            Box::new(move |r: &Residue| super::measure::window_mean(r, period_s, start_s, width_s))
        }
        _ => {
            let envelope = worst_case_envelope(analysis);
            let at = measure.deciding_index(&envelope, period_s).unwrap_or(0);
            Box::new(move |r: &Residue| r.samples[at])
        }
    };
    let mut direction = score(&analysis.nominal).signum();
    if direction == 0.0 {
        direction = analysis
            .deviations
            .iter()
            .flat_map(|d| d.residues.iter().map(&score))
            .max_by(|a, b| a.abs().total_cmp(&b.abs()))
            .map_or(1.0, f64::signum);
    }
    let mut values = budget.parameters.values_at(analysis.delta_t);
    for d in &analysis.deviations {
        let [low, high] = [&d.residues[0], &d.residues[1]].map(|r| direction * score(r));
        values[d.param.0] = if high >= low {
            d.values[1]
        } else {
            d.values[0]
        };
    }
    values
}

/// The corner for the rms: the residue's power is quadratic in the signs,
/// so the parts are taken largest first, each at the end that adds most
/// power to the sum so far (`2⟨R, Δ⟩ + ‖Δ‖²`, by Parseval over the
/// harmonics), starting from the nominal residue — which also decides a
/// matched chain, whose nominal residue is zero.
fn rms_corner_values(budget: &Budget, analysis: &ResidueAnalysis, period_s: f64) -> Vec<f64> {
    let inner = |a: &Residue, b: &Residue| {
        a.dc * b.dc
            + a.harmonics
                .iter()
                .zip(&b.harmonics)
                .map(|(x, y)| 2.0 * (x.conj() * y).re)
                .sum::<f64>()
    };
    let mut order: Vec<&Deviation> = analysis.deviations.iter().collect();
    let size = |d: &Deviation| {
        Measure::Rms
            .of(&d.residues[0], period_s)
            .max(Measure::Rms.of(&d.residues[1], period_s))
    };
    order.sort_by(|a, b| size(b).total_cmp(&size(a)));
    let mut sum = analysis.nominal.clone();
    let mut values = budget.parameters.values_at(analysis.delta_t);
    for d in order {
        let gain = |r: &Residue| 2.0 * inner(&sum, r) + inner(r, r);
        let end = usize::from(gain(&d.residues[1]) >= gain(&d.residues[0]));
        let chosen = &d.residues[end];
        sum.dc += chosen.dc;
        for (s, c) in sum.harmonics.iter_mut().zip(&chosen.harmonics) {
            *s += c;
        }
        values[d.param.0] = d.values[end];
    }
    values
}

/// The residue solved exactly at `values` (a corner), `delta_t` from the
/// reference.
pub fn corner_residue(
    budget: &Budget,
    source: &Switching,
    mut values: Vec<f64>,
    delta_t: f64,
) -> Result<Residue, EngineError> {
    settle(budget, &mut values, delta_t)?;
    let freqs = frequencies(source);
    let moved = responses(budget, &values, &freqs)?;
    let gain = dc_gain(&moved)?;
    Ok(residue_from(
        &moved,
        &coefficients(source),
        gain,
        sample_count(harmonic_count(source)),
    ))
}

/// The common-mode waveform itself, sampled as the residues are.
pub fn common_mode_samples(source: &Switching) -> Vec<f64> {
    let points = sample_count(harmonic_count(source));
    let period = source.waveform.period_s();
    (0..points)
        .map(|i| source.waveform.value_at(period * i as f64 / points as f64))
        .collect()
}
