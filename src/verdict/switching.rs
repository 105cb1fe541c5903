//! Judging switching sources: the residue each leaves over a period, at
//! the reference temperature and at the ends of the range, its totals in
//! the measure its limit names, how long it takes to settle after each
//! edge, the contributors, and the requirement check.

use super::{Check, CheckKind, CornerValue, Db, RequirementOutcome, Totals};
use crate::engine::{ranking_key, EngineError};
use crate::model::describe_volts;
use crate::model::{Budget, Edge, ErrorLimit, Judgement, Requirement, Switching};
use crate::quantity::{format_fraction, format_plain, format_si, AmplitudeForm};
use crate::switching::{
    analyse_residue, common_mode_samples, corner_residue, corner_values, harmonic_count,
    rss_envelope, sample_count, settling_time, worst_case_envelope, Measure, Residue,
    ResidueAnalysis, MAX_HARMONICS,
};
use serde::Serialize;

/// How long after an edge the residue settles into its band, per total;
/// null where it is still outside the band at the next edge.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Settling {
    /// The band, volts referred to the input (the source's limit).
    pub band_rti_v: f64,
    /// After the start of the rising edge, seconds.
    pub after_rising_s: Totals<Option<f64>>,
    /// After the start of the falling edge, seconds; null for a single
    /// edge.
    pub after_falling_s: Option<Totals<Option<f64>>>,
}

/// One parameter's share of a switching residue.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ResidueContribution {
    /// The parameter; `nominal imbalance` for the values as given.
    pub name: String,
    /// Its stage's label.
    pub stage: String,
    /// The value and its spread as written.
    pub value: String,
    /// The budget-file field.
    pub field: String,
    /// The judged measure of the residue it adds alone, volts RTI.
    pub residue_rti_v: f64,
    /// Its share of the sum of all contributions' measures, 0 to 1.
    pub share: f64,
}

/// The residue's figures at one temperature.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ResidueFigures {
    /// The temperature, kelvin; null at the reference.
    pub temperature_k: Option<f64>,
    /// The judged measure of the residue, volts referred to the input.
    pub judged_rti_v: Totals<f64>,
    /// Its largest magnitude over the period, volts RTI.
    pub peak_rti_v: Totals<f64>,
    /// Its rms value over the period, volts RTI.
    pub rms_rti_v: Totals<f64>,
    /// Its mean over the sampling window, volts RTI; null without one.
    pub window_mean_rti_v: Option<Totals<f64>>,
    /// How long it takes to settle after each edge; null without a limit
    /// that bounds the residue at every instant.
    pub settling: Option<Settling>,
    /// A bound on what the harmonics above `harmonics_to_hz` could add,
    /// volts RTI (assuming the conversion does not rise above the highest
    /// value it reaches in the top octave summed).
    pub truncation_rti_v: f64,
    /// The contributors to the judged measure, largest first.
    pub contributions: Vec<ResidueContribution>,
    /// Every varying parameter's value at the worst corner.
    pub corner: Vec<CornerValue>,
    /// Why the exact worst corner exceeds the linear bound, when it does by
    /// more than 1 %.
    pub corner_exceeds_bound: Option<String>,
}

/// The converter's sampling window, as judged.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SampleFigures {
    /// The edge the delay counts from.
    pub after: Edge,
    /// From the edge's start to the window's centre, seconds.
    pub delay_s: f64,
    /// The window's width, seconds.
    pub window_s: f64,
}

/// The result for one switching source.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SwitchingResult {
    /// The source's name.
    pub source: String,
    /// One edge rather than a periodic waveform: the rising edge of a
    /// square wave of `frequency_hz`, slow enough that the residue settles
    /// before its next edge; the figures cover the half period after it.
    pub single_edge: bool,
    /// For a single edge, whether the residue was flat (to 0.1 % of its
    /// peak) by the end of the window shown; null for a periodic source.
    pub flat_by_window_end: Option<bool>,
    /// The low level, volts.
    pub low_v: f64,
    /// The high level, volts.
    pub high_v: f64,
    /// The switching frequency, Hz.
    pub frequency_hz: f64,
    /// The duty cycle, 0 to 1.
    pub duty: f64,
    /// The rising edge's duration, seconds.
    pub rise_time_s: f64,
    /// The falling edge's duration, seconds.
    pub fall_time_s: f64,
    /// How many harmonics were summed.
    pub harmonics: u64,
    /// Up to which frequency, Hz.
    pub harmonics_to_hz: f64,
    /// Whether that frequency was stated in the file (otherwise ten over
    /// the shorter edge).
    pub harmonics_to_stated: bool,
    /// The time between samples of the waveforms, seconds.
    pub time_step_s: f64,
    /// The chain's differential gain at DC, through which the residue is
    /// referred to the input, V/V.
    pub differential_gain: f64,
    /// What the limit is compared with: `peak`, `rms`, `peak-to-peak`,
    /// `peak after blanking` or `mean over the sampling window`.
    pub measure: &'static str,
    /// The blanking time after each edge, seconds; null without one.
    pub blanking_s: Option<f64>,
    /// The sampling window; null without one.
    pub sample: Option<SampleFigures>,
    /// The figures at the reference temperature.
    pub reference: ResidueFigures,
    /// The figures at the worse end of the temperature range; null without
    /// a range.
    pub at_temperature: Option<ResidueFigures>,
    /// Which total is judged.
    pub judged_on: Judgement,
    /// Where it is worst, kelvin; null at the reference.
    pub judged_temperature_k: Option<f64>,
    /// The judged measure there, volts RTI.
    pub judged_rti_v: f64,
    /// The requirement's outcome; null without a limit.
    pub requirement: Option<RequirementOutcome>,
}

/// The residue waveforms of one source at one temperature, for plots and
/// data: volts referred to the input, sampled over one period from the
/// start of the rising edge.
#[derive(Debug, Clone, PartialEq)]
pub struct ResidueWaveforms {
    /// The temperature, kelvin; `None` at the reference.
    pub temperature_k: Option<f64>,
    /// At nominal values.
    pub nominal: Vec<f64>,
    /// At the worst corner.
    pub worst_corner: Vec<f64>,
    /// The linear bound's envelope (a magnitude).
    pub worst_case: Vec<f64>,
    /// The RSS envelope (a magnitude).
    pub rss: Vec<f64>,
}

/// One switching source judged, with its waveforms.
#[derive(Debug, Clone, PartialEq)]
pub struct JudgedSwitching {
    /// The figures and the check.
    pub result: SwitchingResult,
    /// The common-mode waveform, volts, sampled like the residues.
    pub common_mode: Vec<f64>,
    /// The residues where the figures are shown, then at the worse end.
    pub waveforms: Vec<ResidueWaveforms>,
}

/// What a source's residue is judged in: the sampling window's mean, the
/// peak after blanking, or the limit's own form (rms, peak-to-peak, peak
/// for a plain voltage or a fraction of full scale).
pub fn measure_of(source: &Switching) -> Measure {
    if let Some(sample) = &source.sample {
        return Measure::window(&source.waveform, sample);
    }
    if source.single_edge {
        return Measure::after_single_edge(&source.waveform, source.blanking_s.unwrap_or(0.0));
    }
    if let Some(blanking) = source.blanking_s {
        return Measure::after_blanking(&source.waveform, blanking);
    }
    match source.max_error.map(|l| l.form()) {
        Some(Some(AmplitudeForm::Rms)) => Measure::Rms,
        Some(Some(AmplitudeForm::PeakToPeak)) => Measure::PeakToPeak,
        _ => Measure::Peak,
    }
}

/// The limit in volts referred to the input, in the measure's terms
/// (validation refuses a limit in codes on a switching source).
fn limit_volts(limit: &ErrorLimit) -> f64 {
    limit.volts_rti(None).map_or(f64::NAN, |a| a.volts)
}

/// The settling band: the limit, where it bounds every instant (a plain or
/// peak voltage, a fraction of full scale).
fn band_of(source: &Switching) -> Option<f64> {
    let limit = source.max_error?;
    match limit.form() {
        None | Some(AmplitudeForm::Peak) => Some(limit_volts(&limit)),
        Some(_) => None,
    }
}

/// A worst corner above the linear bound by more than this share is
/// pointed out.
const CORNER_EXCESS: f64 = 0.01;

/// One temperature's analysis with its worst corner solved.
struct AtTemperature {
    kelvin: Option<f64>,
    analysis: ResidueAnalysis,
    corner_values: Vec<f64>,
    corner: Residue,
    /// The linear bound's envelope, formed once.
    worst_case: Vec<f64>,
    /// The RSS envelope, formed once.
    rss: Vec<f64>,
}

impl AtTemperature {
    fn totals(&self, measure: &Measure, source: &Switching) -> Totals<f64> {
        let period = source.waveform.period_s();
        let m = |r: &Residue| measure.of(r, period);
        let nominal = m(&self.analysis.nominal);
        let parts: Vec<f64> = self
            .analysis
            .deviations
            .iter()
            .map(|d| m(&d.residues[0]).max(m(&d.residues[1])))
            .collect();
        let corner = m(&self.corner);
        // For the instantaneous measures the envelopes are tighter bounds
        // than the sum of the parts' peaks, and are what settling uses.
        match measure {
            Measure::Peak | Measure::AfterBlanking { .. } => Totals {
                worst_case: measure
                    .of_samples(&self.worst_case, period)
                    .expect("a peak measure"),
                worst_corner: corner,
                rss: measure
                    .of_samples(&self.rss, period)
                    .expect("a peak measure"),
                nominal,
            },
            _ => Totals {
                worst_case: nominal + parts.iter().sum::<f64>(),
                worst_corner: corner,
                rss: nominal + parts.iter().map(|p| p * p).sum::<f64>().sqrt(),
                nominal,
            },
        }
    }

    fn waveforms(&self) -> ResidueWaveforms {
        ResidueWaveforms {
            temperature_k: self.kelvin,
            nominal: self.analysis.nominal.samples.clone(),
            worst_corner: self.corner.samples.clone(),
            worst_case: self.worst_case.clone(),
            rss: self.rss.clone(),
        }
    }

    fn settling(&self, source: &Switching) -> Option<Settling> {
        let band = band_of(source)?;
        let settled = |samples: &[f64], edge| settling_time(samples, &source.waveform, edge, band);
        let after = |edge: Edge| Totals {
            worst_case: settled(&self.worst_case, edge),
            worst_corner: settled(&self.corner.samples, edge),
            rss: settled(&self.rss, edge),
            nominal: settled(&self.analysis.nominal.samples, edge),
        };
        Some(Settling {
            band_rti_v: band,
            after_rising_s: after(Edge::Rising),
            after_falling_s: (!source.single_edge).then(|| after(Edge::Falling)),
        })
    }

    fn figures(
        &self,
        budget: &Budget,
        source: &Switching,
        measure: &Measure,
        judgement: Judgement,
    ) -> ResidueFigures {
        let period = source.waveform.period_s();
        let m = |r: &Residue| measure.of(r, period);
        let mut contributions = Vec::new();
        let nominal = m(&self.analysis.nominal);
        if nominal > 0.0 {
            contributions.push(ResidueContribution {
                name: "nominal imbalance".into(),
                stage: "whole chain".into(),
                value: "values as given".into(),
                field: String::new(),
                residue_rti_v: nominal,
                share: 0.0,
            });
        }
        for d in &self.analysis.deviations {
            let p = budget.parameters.get(d.param);
            let part = m(&d.residues[0]).max(m(&d.residues[1]));
            let is_drift = p.presentation
                == crate::model::Presentation::Value(
                    crate::quantity::Dimension::TemperatureCoefficient,
                );
            if is_drift && part == 0.0 {
                continue;
            }
            contributions.push(ResidueContribution {
                name: p.name.clone(),
                stage: budget.chain[p.stage].label.clone(),
                value: p.describe(),
                field: p.field.clone(),
                residue_rti_v: part,
                share: 0.0,
            });
        }
        let sum: f64 = contributions.iter().map(|c| c.residue_rti_v).sum();
        for c in &mut contributions {
            c.share = if sum > 0.0 {
                c.residue_rti_v / sum
            } else {
                0.0
            };
        }
        contributions.sort_by(|a, b| ranking_key(b.share).total_cmp(&ranking_key(a.share)));
        let varying =
            self.analysis.deviations.iter().map(|d| {
                super::judge::corner_value(budget, d.param, self.corner_values[d.param.0])
            });
        let judged = self.totals(measure, source);
        let excess = judged.worst_corner / judged.worst_case - 1.0;
        let corner_exceeds_bound = (excess > CORNER_EXCESS).then(|| {
            format!(
                "the exact worst corner exceeds the linear bound by {:.1} %: the parts' extremes interact (a capacitor at its end also moves the time constant the residue decays with, which a first-order bound misses){}",
                excess * 100.0,
                if judgement == Judgement::WorstCorner {
                    ""
                } else {
                    "; judge this source on `worst_corner`"
                }
            )
        });
        ResidueFigures {
            temperature_k: self.kelvin,
            judged_rti_v: judged,
            peak_rti_v: self.totals(&Measure::Peak, source),
            rms_rti_v: self.totals(&Measure::Rms, source),
            window_mean_rti_v: matches!(measure, Measure::WindowMean { .. })
                .then(|| self.totals(measure, source)),
            settling: self.settling(source),
            truncation_rti_v: self.analysis.truncation_v,
            contributions,
            corner: varying.collect(),
            corner_exceeds_bound,
        }
    }
}

fn analysed(
    budget: &Budget,
    source: &Switching,
    measure: &Measure,
    delta_t: f64,
    kelvin: Option<f64>,
) -> Result<AtTemperature, EngineError> {
    let analysis = analyse_residue(budget, source, delta_t)?;
    let values = corner_values(budget, &analysis, measure, source.waveform.period_s());
    let corner = corner_residue(budget, source, values.clone(), delta_t)?;
    Ok(AtTemperature {
        kelvin,
        worst_case: worst_case_envelope(&analysis),
        rss: rss_envelope(&analysis),
        analysis,
        corner_values: values,
        corner,
    })
}

/// The harmonics a single edge's window is searched with (its slow tail,
/// not its edge, decides whether the residue has settled).
const SEARCH_HARMONICS: f64 = 2048.0;

/// How many times the window may be doubled.
const MAX_DOUBLINGS: u32 = 24;

/// The residue counts as flat when it moves by less than this share of its
/// peak over the last quarter of the window.
const FLAT: f64 = 1e-3;

/// A single edge's source with the period of the slow square wave it is
/// judged as: doubled from the first try until the residue's linear-bound
/// envelope is flat over the last quarter of the half period after the
/// edge (so what is left of it when the next edge comes is below 0.1 % of
/// its peak), and long enough for the blanking or the sampling window.
/// The search runs with few harmonics; the judgement then sums up to the
/// stated frequency (or ten over the edge), within [`MAX_HARMONICS`]
/// over the period chosen. Also returns whether the residue was flat.
fn single_edge_window(
    budget: &Budget,
    source: &Switching,
    delta_t: f64,
) -> Result<(Switching, bool), EngineError> {
    let mut trial = source.clone();
    let needed = source
        .blanking_s
        .unwrap_or(0.0)
        .max(source.sample.map_or(0.0, |s| s.delay_s + s.width_s / 2.0));
    while trial.waveform.period_s() / 2.0 < 2.0 * needed {
        trial.waveform.frequency_hz /= 2.0;
    }
    let mut flat = false;
    for _ in 0..MAX_DOUBLINGS {
        let mut search = trial.clone();
        search.harmonics_to_hz = SEARCH_HARMONICS * trial.waveform.frequency_hz;
        let analysis = analyse_residue(budget, &search, delta_t)?;
        let envelope = worst_case_envelope(&analysis);
        let half = envelope.len() / 2;
        let peak = envelope[..half].iter().copied().fold(0.0, f64::max);
        let tail = &envelope[3 * half / 4..half];
        let (low, high) = tail
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), &v| {
                (l.min(v), h.max(v))
            });
        if peak == 0.0 || high - low <= FLAT * peak {
            flat = true;
            break;
        }
        trial.waveform.frequency_hz /= 2.0;
    }
    let room = MAX_HARMONICS as f64 * trial.waveform.frequency_hz;
    trial.harmonics_to_hz = source.harmonics_to_hz.min(room);
    trial.harmonics_to_stated =
        source.harmonics_to_stated && trial.harmonics_to_hz == source.harmonics_to_hz;
    Ok((trial, flat))
}

/// Judge one switching source at the temperature shown (`shown`: excursion
/// and kelvin) and at the ends of the range (`ends`), the worse end kept.
pub(super) fn judge_switching(
    budget: &Budget,
    source: &Switching,
    shown: (f64, Option<f64>),
    ends: &[(f64, f64)],
    requirement: Option<&Requirement>,
) -> Result<JudgedSwitching, EngineError> {
    let (chosen, flat) = if source.single_edge {
        let (chosen, flat) = single_edge_window(budget, source, shown.0)?;
        (chosen, Some(flat))
    } else {
        (source.clone(), None)
    };
    let source = &chosen;
    let measure = measure_of(source);
    let judgement = super::judged_on(requirement);
    let shown = analysed(budget, source, &measure, shown.0, shown.1)?;
    let mut worse: Option<AtTemperature> = None;
    for &(delta_t, kelvin) in ends {
        let at = analysed(budget, source, &measure, delta_t, Some(kelvin))?;
        let judged = at.totals(&measure, source).judged(judgement);
        if worse
            .as_ref()
            .is_none_or(|w| judged > w.totals(&measure, source).judged(judgement))
        {
            worse = Some(at);
        }
    }
    let shown_judged = shown.totals(&measure, source).judged(judgement);
    let (judged_temperature_k, judged_rti_v) = match &worse {
        Some(w) if w.totals(&measure, source).judged(judgement) > shown_judged => {
            (w.kelvin, w.totals(&measure, source).judged(judgement))
        }
        _ => (shown.kelvin, shown_judged),
    };
    let figures = shown.figures(budget, source, &measure, judgement);
    let worse_figures = worse
        .as_ref()
        .map(|w| w.figures(budget, source, &measure, judgement));
    let check = source.max_error.map(|limit| {
        let settles = worse_figures
            .as_ref()
            .filter(|_| judged_temperature_k != shown.kelvin)
            .unwrap_or(&figures)
            .settling
            .clone();
        let unit = budget.measurand.as_ref().map_or("", |m| m.unit.as_str());
        switching_check(
            source,
            &measure,
            &limit,
            judged_rti_v,
            settles,
            judgement,
            unit,
        )
    });
    let w = &source.waveform;
    let points = sample_count(harmonic_count(source));
    let mut waveforms = vec![shown.waveforms()];
    waveforms.extend(worse.as_ref().map(AtTemperature::waveforms));
    let result = SwitchingResult {
        source: source.name.clone(),
        single_edge: source.single_edge,
        flat_by_window_end: flat,
        low_v: w.low_v,
        high_v: w.high_v,
        frequency_hz: w.frequency_hz,
        duty: w.duty,
        rise_time_s: w.rise_s,
        fall_time_s: w.fall_s,
        harmonics: harmonic_count(source),
        harmonics_to_hz: source.harmonics_to_hz,
        harmonics_to_stated: source.harmonics_to_stated,
        time_step_s: w.period_s() / points as f64,
        differential_gain: shown.analysis.gain_dc.abs(),
        measure: measure.name(),
        blanking_s: source.blanking_s,
        sample: source.sample.map(|s| SampleFigures {
            after: s.after,
            delay_s: s.delay_s,
            window_s: s.width_s,
        }),
        reference: figures,
        at_temperature: worse_figures,
        judged_on: judgement,
        judged_temperature_k,
        judged_rti_v,
        requirement: check.and_then(|c| super::checks::outcome(requirement, vec![c])),
    };
    // A single edge shows the half period after it, the window judged.
    let mut common_mode = common_mode_samples(source);
    if source.single_edge {
        let half = common_mode.len() / 2;
        common_mode.truncate(half);
        for w in &mut waveforms {
            for samples in [
                &mut w.nominal,
                &mut w.worst_corner,
                &mut w.worst_case,
                &mut w.rss,
            ] {
                samples.truncate(half);
            }
        }
    }
    Ok(JudgedSwitching {
        result,
        common_mode,
        waveforms,
    })
}

/// The check of a source's residue against its limit.
fn switching_check(
    source: &Switching,
    measure: &Measure,
    limit: &ErrorLimit,
    achieved_v: f64,
    settling: Option<Settling>,
    judgement: Judgement,
    unit: &str,
) -> Check {
    let allowed = limit_volts(limit);
    let margin = if achieved_v == 0.0 {
        Db(f64::INFINITY)
    } else {
        Db(20.0 * (allowed / achieved_v).log10())
    };
    let what = match (measure, source.blanking_s) {
        (Measure::AfterBlanking { .. }, Some(b)) => {
            format!("peak residue RTI after {} blanking", format_si(b, "s"))
        }
        (Measure::WindowMean { .. }, _) => "residue RTI over the sampling window".to_string(),
        (Measure::Rms, _) => "rms residue RTI".to_string(),
        (Measure::PeakToPeak, _) => "peak-to-peak residue RTI".to_string(),
        _ => "peak residue RTI".to_string(),
    };
    let mut achieved = format!(
        "{what} {}",
        describe_fraction_or_volts(achieved_v, limit, unit)
    );
    if let Some(s) = settling {
        let phrase = |t: Option<f64>, after: &str| match t {
            Some(t) => format!("settles {} after {after}", format_si(t, "s")),
            None => format!("does not settle after {after}"),
        };
        let rising = s.after_rising_s.judged(judgement);
        match &s.after_falling_s {
            Some(falling) => achieved.push_str(&format!(
                "; {}, {}",
                phrase(rising, "the rising edge"),
                phrase(falling.judged(judgement), "the falling edge")
            )),
            None => achieved.push_str(&format!("; {}", phrase(rising, "the edge"))),
        }
    }
    Check {
        kind: CheckKind::SwitchingError {
            source: source.name.clone(),
        },
        limit: format!(
            "{what} ≤ {}",
            describe_fraction_or_volts(allowed, limit, unit)
        ),
        achieved,
        margin_db: margin,
        allowed_cmrr_db: Db(20.0 * (source.waveform.step_v().abs() / allowed).log10()),
        met: margin.0 >= 0.0,
    }
}

/// A residue of `volts` in the limit's terms: a voltage in its form, or
/// the voltage with its share of full scale.
fn describe_fraction_or_volts(volts: f64, limit: &ErrorLimit, unit: &str) -> String {
    match limit {
        ErrorLimit::Volts(a) => describe_volts(volts, a.form),
        ErrorLimit::OfFullScale {
            full_scale_volts, ..
        } => format!(
            "{} ({} of {} full scale)",
            format_si(volts, "V"),
            format_fraction(volts / full_scale_volts),
            format_si(*full_scale_volts, "V")
        ),
        ErrorLimit::OfReading { reading_volts, .. } => format!(
            "{} ({} of the {} reading)",
            format_si(volts, "V"),
            format_fraction(volts / reading_volts),
            format_si(*reading_volts, "V")
        ),
        ErrorLimit::InMeasurand { volts_per_unit, .. } => format!(
            "{} ({} {})",
            format_si(volts, "V"),
            format_plain(volts / volts_per_unit),
            unit
        ),
        ErrorLimit::Codes { .. } => format_si(volts, "V"),
    }
}
