//! The `cmrr residue` report: each switching source's residue over one
//! period, as the budget judges it, with the waveforms themselves (CSV and
//! JSON) and a plot of them.

use super::csv::{escape, number};
use super::switching::switching_section;
use super::table::verdict_sentence;
use super::{Render, Report, Verdict};
use crate::plot::{plot_residue, PlotError, ResiduePlot, TimeCurve};
use crate::quantity::format_si;
use crate::verdict::{JudgedSwitching, SwitchingResult, SCHEMA_VERSION};
use serde::Serialize;

/// The residue waveforms at one temperature, volts referred to the input.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WaveformsAt {
    /// The temperature, kelvin; null at the reference.
    pub temperature_k: Option<f64>,
    /// At nominal values.
    pub nominal_rti_v: Vec<f64>,
    /// At the worst corner.
    pub worst_corner_rti_v: Vec<f64>,
    /// The linear bound's envelope (a magnitude: the residue of any corner
    /// lies within ± it, to first order).
    pub worst_case_bound_rti_v: Vec<f64>,
    /// The RSS envelope (a magnitude).
    pub rss_bound_rti_v: Vec<f64>,
}

/// The waveforms of one source, sampled every `time_step_s` from the start
/// of the rising edge over one period.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Waveforms {
    /// The time between samples, seconds.
    pub time_step_s: f64,
    /// The common-mode waveform, volts.
    pub common_mode_v: Vec<f64>,
    /// The residues where the figures are shown, then at the worse end of
    /// the temperature range.
    pub at: Vec<WaveformsAt>,
}

/// One switching source's figures and waveforms.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ResidueSource {
    /// The figures and the check, as in the budget report.
    #[serde(flatten)]
    pub result: SwitchingResult,
    /// The waveforms.
    pub waveforms: Waveforms,
}

/// What `cmrr residue` reports.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ResidueReport {
    /// Version of the JSON layout (shared with the budget report).
    pub schema_version: u32,
    /// The budget's name.
    pub budget: String,
    /// Safety cautions that apply.
    pub cautions: Vec<String>,
    /// What the residue leaves out.
    pub outside_the_model: String,
    /// The switching sources shown.
    pub sources: Vec<ResidueSource>,
    /// How many headroom findings the budget has (see `cmrr budget`).
    pub headroom_findings: usize,
    /// The budget's verdict (every source and frequency, not only these).
    pub verdict: Verdict,
}

/// Every `stride`-th sample.
fn thinned(samples: &[f64], stride: usize) -> Vec<f64> {
    samples.iter().copied().step_by(stride).collect()
}

impl Waveforms {
    /// At most `samples` per period: every k-th computed sample (the
    /// plot is drawn from every sample; this is for the data written).
    pub fn thinned(&self, samples: usize) -> Waveforms {
        let stride = self.common_mode_v.len().div_ceil(samples.max(1)).max(1);
        Waveforms {
            time_step_s: self.time_step_s * stride as f64,
            common_mode_v: thinned(&self.common_mode_v, stride),
            at: self
                .at
                .iter()
                .map(|w| WaveformsAt {
                    temperature_k: w.temperature_k,
                    nominal_rti_v: thinned(&w.nominal_rti_v, stride),
                    worst_corner_rti_v: thinned(&w.worst_corner_rti_v, stride),
                    worst_case_bound_rti_v: thinned(&w.worst_case_bound_rti_v, stride),
                    rss_bound_rti_v: thinned(&w.rss_bound_rti_v, stride),
                })
                .collect(),
        }
    }
}

impl ResidueReport {
    /// The same report with every source's waveforms thinned to at most
    /// `samples` per period.
    pub fn thinned(mut self, samples: usize) -> ResidueReport {
        for source in &mut self.sources {
            source.waveforms = source.waveforms.thinned(samples);
        }
        self
    }
}

/// Assemble the report from the judged budget and its switching sources,
/// keeping those `keep` accepts, with every computed sample.
pub fn build_residue_report(
    report: &Report,
    judged: Vec<JudgedSwitching>,
    keep: impl Fn(&str) -> bool,
) -> ResidueReport {
    let sources = judged
        .into_iter()
        .filter(|j| keep(&j.result.source))
        .map(|j| ResidueSource {
            waveforms: Waveforms {
                time_step_s: j.result.time_step_s,
                common_mode_v: j.common_mode,
                at: j
                    .waveforms
                    .into_iter()
                    .map(|w| WaveformsAt {
                        temperature_k: w.temperature_k,
                        nominal_rti_v: w.nominal,
                        worst_corner_rti_v: w.worst_corner,
                        worst_case_bound_rti_v: w.worst_case,
                        rss_bound_rti_v: w.rss,
                    })
                    .collect(),
            },
            result: j.result,
        })
        .collect();
    ResidueReport {
        schema_version: SCHEMA_VERSION,
        budget: report.budget.clone(),
        cautions: report.cautions.clone(),
        outside_the_model: crate::verdict::OUTSIDE_THE_SWITCHING_MODEL.to_string(),
        sources,
        headroom_findings: report.headroom.len(),
        verdict: report.verdict.clone(),
    }
}

const CSV_HEADER: &str = "source,temperature_k,time_s,common_mode_v,nominal_rti_v,worst_corner_rti_v,worst_case_bound_rti_v,rss_bound_rti_v,nominal_rto_v,worst_corner_rto_v";

impl Render for ResidueReport {
    const KIND: &'static str = "residue";

    fn table(&self) -> String {
        let mut out = format!("Switching residue: {}\n", self.budget);
        for caution in &self.cautions {
            out.push_str(&format!("\n{caution}\n"));
        }
        out.push_str(&format!("note: {}\n", self.outside_the_model));
        for source in &self.sources {
            out.push('\n');
            out.push_str(&switching_section(&source.result));
        }
        out.push('\n');
        out.push_str(&verdict_sentence(&self.verdict, self.headroom_findings));
        out
    }

    fn csv(&self) -> String {
        let mut out = String::from(CSV_HEADER);
        out.push('\n');
        for source in &self.sources {
            let w = &source.waveforms;
            let gain = source.result.differential_gain;
            for at in &w.at {
                let kelvin = at.temperature_k.map(number).unwrap_or_default();
                for (i, cm) in w.common_mode_v.iter().enumerate() {
                    let fields = [
                        escape(&source.result.source),
                        kelvin.clone(),
                        number(i as f64 * w.time_step_s),
                        number(*cm),
                        number(at.nominal_rti_v[i]),
                        number(at.worst_corner_rti_v[i]),
                        number(at.worst_case_bound_rti_v[i]),
                        number(at.rss_bound_rti_v[i]),
                        number(at.nominal_rti_v[i] * gain),
                        number(at.worst_corner_rti_v[i] * gain),
                    ];
                    out.push_str(&fields.join(","));
                    out.push('\n');
                }
            }
        }
        out
    }
}

/// The residue plot of one source: the common mode above; the judged
/// total's residue, the nominal one and the linear bound's envelope below,
/// the allowed band, the blanking or sampling window shaded and the
/// settling times marked.
pub fn render_residue_svg(source: &ResidueSource) -> Result<String, PlotError> {
    let r = &source.result;
    let w = &source.waveforms;
    let at = &w.at[0];
    let period = 1.0 / r.frequency_hz;
    let mut curves = vec![
        TimeCurve {
            label: "worst corner".into(),
            samples: at.worst_corner_rti_v.clone(),
            envelope: false,
        },
        TimeCurve {
            label: "worst-case bound".into(),
            samples: at.worst_case_bound_rti_v.clone(),
            envelope: true,
        },
    ];
    if at.nominal_rti_v.iter().any(|v| *v != 0.0) {
        curves.push(TimeCurve {
            label: "nominal".into(),
            samples: at.nominal_rti_v.clone(),
            envelope: false,
        });
    }
    let figures = &r.reference;
    let fall_start = r.rise_time_s / 2.0 + r.duty * period - r.fall_time_s / 2.0;
    let mut settling = Vec::new();
    if let Some(s) = &figures.settling {
        let judged = |t: &super::Totals<Option<f64>>| t.judged(r.judged_on);
        let falling = s.after_falling_s.as_ref().map(judged);
        for (start, time) in [
            (0.0, judged(&s.after_rising_s)),
            (fall_start, falling.flatten()),
        ] {
            if let Some(t) = time.filter(|t| *t > 0.0) {
                settling.push((start + t, format!("settled {}", format_si(t, "s"))));
            }
        }
    }
    let (shaded, shaded_label) = match (r.blanking_s, &r.sample) {
        (Some(b), _) if r.single_edge => (
            vec![(0.0, b)],
            Some(format!("blanking {}", format_si(b, "s"))),
        ),
        (Some(b), _) => (
            vec![(0.0, b), (fall_start, fall_start + b)],
            Some(format!("blanking {}", format_si(b, "s"))),
        ),
        (None, Some(sample)) => {
            let start = match sample.after {
                crate::model::Edge::Rising => 0.0,
                crate::model::Edge::Falling => fall_start,
            } + sample.delay_s
                - sample.window_s / 2.0;
            (
                vec![(start, start + sample.window_s)],
                Some(format!(
                    "sampling window {}",
                    format_si(sample.window_s, "s")
                )),
            )
        }
        _ => (Vec::new(), None),
    };
    let settle_note = figures
        .settling
        .as_ref()
        .map(|s| {
            let falling = s.after_falling_s.as_ref().map(|f| f.judged(r.judged_on));
            if s.after_rising_s.judged(r.judged_on).is_none() && falling.flatten().is_none() {
                " — does not settle".to_string()
            } else {
                format!(
                    " — settles {}",
                    super::switching::settling_pair(s, r.judged_on)
                )
            }
        })
        .unwrap_or_default();
    plot_residue(&ResiduePlot {
        title: format!("{}: residue RTI{settle_note}", r.source),
        // A single edge shows the half period after it.
        period_s: if r.single_edge { period / 2.0 } else { period },
        common_mode: w.common_mode_v.clone(),
        curves,
        band_v: figures.settling.as_ref().map(|s| s.band_rti_v),
        settling,
        shaded,
        shaded_label,
    })
}
