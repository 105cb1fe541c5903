//! Design from the requirement: the loosest setting of a free parameter
//! that meets the requirement (worst case, or at a stated yield), what each
//! contributor must improve by, what halving each tolerance buys, and the
//! effect of trimming a difference stage.

mod knobs;

pub use knobs::{
    Knob, KnobError, KnobKind, CAPACITOR_CLASSES, RATIO_STEPS, RESISTOR_CLASSES, TRACKING_STEPS,
};

use crate::model::{Budget, Variation};
use crate::montecarlo::production::production_yield_judged;
use crate::montecarlo::{TemperatureMode, YieldOptions};
use crate::stage::StageKind;
use crate::verdict::{judge as judge_budget, ContributionKind, Report, Status, VerdictError};
use serde::Serialize;
use std::sync::atomic::AtomicBool;

/// What a setting must achieve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Goal {
    /// Every requirement met by the report's judged totals (worst case by
    /// default), over the temperature range.
    WorstCase,
    /// At least this fraction of Monte Carlo trials meeting the whole
    /// requirement.
    Yield {
        /// The required fraction.
        fraction: f64,
        /// Trials per setting.
        trials: u64,
        /// The master seed.
        seed: u64,
    },
}

/// Why a design question cannot be answered.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DesignError {
    /// The budget states no requirement to size against.
    #[error("the budget states no requirement, so there is nothing to size against; add a `requirement` (or a source's `max_error`)")]
    NoRequirement,
    /// The knob is not in the budget.
    #[error(transparent)]
    Knob(#[from] KnobError),
    /// The budget could not be judged.
    #[error(transparent)]
    Verdict(#[from] VerdictError),
    /// The Monte Carlo failed.
    #[error(transparent)]
    Yield(#[from] crate::montecarlo::production::YieldReportError),
}

/// One setting tried.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Step {
    /// The setting (a tolerance fraction, a tracking in 1/K, a gain, a
    /// resistance in ohms).
    pub setting: f64,
    /// The setting as text.
    pub label: String,
    /// Whether it meets the goal (never when its figures do not hold).
    pub meets: bool,
    /// Whether its figures hold: no node leaves its range (headroom).
    pub holds: bool,
    /// The smallest requirement margin, dB (worst-case goal).
    pub margin_db: Option<f64>,
    /// The passing fraction (yield goal).
    pub yield_fraction: Option<f64>,
}

/// A contributor the knob cannot overcome.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Blocker {
    /// The contributor.
    pub contributor: String,
    /// Its stage.
    pub stage: String,
    /// Where the requirement is tightest, e.g. `mains hum on the cable`.
    pub at: String,
    /// Its CMRR alone, dB.
    pub cmrr_db: f64,
    /// The CMRR the requirement allows all contributors together there, dB.
    pub allowed_db: f64,
}

/// The answer to a sizing question.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Sizing {
    /// What was sized, e.g. `resistors of gain stage`.
    pub what: String,
    /// The SI unit of every `setting` number below: `fraction` (a
    /// tolerance), `1/K` (a TCR), `V/V` (a gain) or `ohm` (a resistance).
    pub setting_unit: &'static str,
    /// Its setting in the budget as written.
    pub current: Option<String>,
    /// The loosest setting that meets the goal; null when none does.
    pub answer: Option<Step>,
    /// Every setting tried, loosest first.
    pub steps: Vec<Step>,
    /// When no setting meets the goal and other contributors alone exceed
    /// the allowance: the largest of them.
    pub blocker: Option<Blocker>,
}

fn has_requirement(budget: &Budget) -> bool {
    budget.requirement.is_some() || budget.interference.iter().any(|s| s.max_error.is_some())
}

/// One setting judged: whether it meets the goal, whether its figures hold,
/// its smallest margin (worst-case goal) and its yield (yield goal).
struct Judged {
    meets: bool,
    holds: bool,
    margin_db: Option<f64>,
    yield_fraction: Option<f64>,
}

/// Judge one budget against the goal, through the verdict: a setting whose
/// figures do not hold (a headroom finding) meets nothing.
fn judge(budget: &Budget, goal: Goal) -> Result<Judged, DesignError> {
    let verdict = judge_budget(budget)?;
    let holds = verdict.verdict.status != Status::DoesNotHold;
    match goal {
        Goal::WorstCase => Ok(Judged {
            meets: verdict.verdict.status == Status::Met,
            holds,
            margin_db: verdict.verdict.margin_db.map(|m| m.0),
            yield_fraction: None,
        }),
        Goal::Yield {
            fraction,
            trials,
            seed,
        } => {
            let temperature = if budget.temperature.is_some() {
                TemperatureMode::Drawn
            } else {
                TemperatureMode::Reference
            };
            let options = YieldOptions {
                trials,
                seed,
                temperature,
            };
            // The run's temperatures are the verdict's (drawn over the
            // range, judged over it), so the verdict serves the run too.
            let (report, _) = production_yield_judged(
                budget,
                &verdict,
                options,
                &|_| {},
                &AtomicBool::new(false),
            )?;
            let achieved = report.overall_yield.map_or(1.0, |y| y.fraction);
            Ok(Judged {
                meets: holds && achieved >= fraction,
                holds,
                margin_db: None,
                yield_fraction: Some(achieved),
            })
        }
    }
}

fn step(
    knob: &Knob,
    budget: &Budget,
    setting: f64,
    label: String,
    goal: Goal,
) -> Result<Step, DesignError> {
    let judged = judge(&knob.apply(budget, setting), goal)?;
    Ok(Step {
        setting,
        label,
        meets: judged.meets,
        holds: judged.holds,
        margin_db: judged.margin_db,
        yield_fraction: judged.yield_fraction,
    })
}

/// Find the loosest setting of `knob` that meets `goal`.
pub fn size(budget: &Budget, knob: &Knob, goal: Goal) -> Result<Sizing, DesignError> {
    if !has_requirement(budget) {
        return Err(DesignError::NoRequirement);
    }
    let steps: Vec<Step> = match knob.steps() {
        Some(settings) => settings
            .into_iter()
            .map(|(setting, label)| step(knob, budget, setting, label, goal))
            .collect::<Result<_, _>>()?,
        None => continuous(budget, knob, goal)?,
    };
    let answer = match knob {
        // Continuous knobs: the last step is the least that meets.
        Knob::FirstStageGain { .. } | Knob::TailResistance { .. } => {
            steps.iter().rev().find(|s| s.meets).cloned()
        }
        _ => steps.iter().find(|s| s.meets).cloned(),
    };
    let tightest = match knob {
        Knob::FirstStageGain { .. } | Knob::TailResistance { .. } => steps.first(),
        _ => steps.last(),
    };
    let blocker = match (&answer, tightest) {
        (None, Some(tightest)) => blocker(&knob.apply(budget, tightest.setting), knob)?,
        _ => None,
    };
    let what = match knob {
        Knob::ResistorClass { .. } => "resistor tolerance class",
        Knob::NetworkRatio { .. } => "network ratio tolerance",
        Knob::FilterCapacitors { .. } => "filter capacitor tolerance",
        Knob::SourceImbalance { .. } => "source impedance tolerance (allowed imbalance)",
        Knob::Tracking { .. } => "resistor TCR tracking",
        Knob::FirstStageGain { .. } => "first-stage gain",
        Knob::TailResistance { .. } => "tail output resistance",
    };
    Ok(Sizing {
        what: format!("{what} of {}", budget.chain[knob.stage()].label),
        setting_unit: knob.setting_unit(),
        current: knob.current(budget).map(|c| knob.describe(c)),
        answer,
        steps,
        blocker,
    })
}

/// A continuous knob: bisect on a log scale for the least gain or tail
/// resistance that meets the goal; the steps record the bracket, the
/// highest setting first and the answer last.
fn continuous(budget: &Budget, knob: &Knob, goal: Goal) -> Result<Vec<Step>, DesignError> {
    let (low, mut high) = match knob {
        Knob::FirstStageGain { .. } => (1.01f64, 1e4f64),
        _ => (10.0f64, 1e12f64),
    };
    let mut steps = vec![step(knob, budget, high, knob.describe(high), goal)?];
    if !steps[0].holds {
        // Too much gain drives a node out of its range: the answer must lie
        // below the highest setting whose figures still hold.
        let Some(holding) = highest_holding(budget, knob, goal, low, high)? else {
            return Ok(steps);
        };
        high = holding.setting;
        steps.push(holding);
    }
    if !steps.last().is_some_and(|s| s.meets) {
        return Ok(steps);
    }
    let bottom = step(knob, budget, low, knob.describe(low), goal)?;
    if bottom.meets {
        steps.push(bottom);
        return Ok(steps);
    }
    let start = steps.last().expect("a step was tried").clone();
    // The least setting that meets: meeting settings sit at the top.
    steps.push(log_bisect(budget, knob, goal, (low, high), start, |s| {
        !s.meets
    })?);
    Ok(steps)
}

/// Log bisection between `low` and `high` for the boundary of `below`: the
/// settings where `below(step)` holds lie under the boundary, the others
/// above it. Returns the last step tried on the side `best` is on
/// (`best`'s side is `below(best)`), to a relative resolution of 1e-4.
fn log_bisect(
    budget: &Budget,
    knob: &Knob,
    goal: Goal,
    (low, high): (f64, f64),
    best: Step,
    below: impl Fn(&Step) -> bool,
) -> Result<Step, DesignError> {
    let keep_below = below(&best);
    let (mut lo, mut hi) = (low.ln(), high.ln());
    let mut best = best;
    while hi - lo >= 1e-4 {
        let mid = ((lo + hi) / 2.0).exp();
        let trial = step(knob, budget, mid, knob.describe(mid), goal)?;
        if below(&trial) {
            lo = mid.ln();
        } else {
            hi = mid.ln();
        }
        if below(&trial) == keep_below {
            best = trial;
        }
    }
    Ok(best)
}

/// The highest setting between `low` and `high` (which does not hold)
/// whose figures hold, by log bisection; `None` when even `low` does not.
fn highest_holding(
    budget: &Budget,
    knob: &Knob,
    goal: Goal,
    low: f64,
    high: f64,
) -> Result<Option<Step>, DesignError> {
    let bottom = step(knob, budget, low, knob.describe(low), goal)?;
    if !bottom.holds {
        return Ok(None);
    }
    // Holding settings sit at the bottom.
    Ok(Some(log_bisect(
        budget,
        knob,
        goal,
        (low, high),
        bottom,
        |s| s.holds,
    )?))
}

/// Where the requirement is tightest in `budget`: the largest contributor
/// outside `knob`, when those contributors alone exceed the allowance.
fn blocker(budget: &Budget, knob: &Knob) -> Result<Option<Blocker>, DesignError> {
    let report = judge_budget(budget)?;
    let own: Vec<(String, String)> = knob
        .params()
        .iter()
        .map(|id| {
            let p = budget.parameters.get(*id);
            (p.name.clone(), budget.chain[p.stage].label.clone())
        })
        .collect();
    let points = report.judged_points();
    let Some((point, outcome)) = points
        .iter()
        .filter_map(|p| p.requirement.map(|o| (p, o)))
        .min_by(|a, b| a.1.margin_db.0.total_cmp(&b.1.margin_db.0))
    else {
        return Ok(None);
    };
    let allowed_db = outcome.allowed_cmrr_db.0;
    let others: Vec<_> = point
        .contributions
        .iter()
        .filter(|row| {
            row.kind == ContributionKind::Systematic
                || !own.iter().any(|(n, s)| *n == row.name && *s == row.stage)
        })
        .collect();
    let others_sum: f64 = others.iter().map(|row| row.cmrr_db.conversion()).sum();
    if others_sum < outcome.allowed_cmrr_db.conversion() {
        return Ok(None);
    }
    Ok(others.first().map(|row| Blocker {
        contributor: row.name.clone(),
        stage: row.stage.clone(),
        at: point.at.clone(),
        cmrr_db: row.cmrr_db.0,
        allowed_db,
    }))
}

/// One contributor against its share of the allowance.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Allocation {
    /// The contributor.
    pub contributor: String,
    /// Its stage.
    pub stage: String,
    /// Its value and spread.
    pub value: String,
    /// Its CMRR alone now, dB.
    pub cmrr_db: f64,
    /// The CMRR it is allowed alone (an equal share of the allowance), dB.
    pub allowance_db: f64,
    /// How many dB it must improve (zero when within its share).
    pub must_improve_db: f64,
}

/// The allocation at one checked point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AllocationTable {
    /// The source or frequency.
    pub at: String,
    /// The temperature the point is judged at (where it is worst), kelvin;
    /// null at the reference. The contributors are those there.
    pub temperature_k: Option<f64>,
    /// The CMRR the requirement allows all contributors together, dB.
    pub allowed_db: f64,
    /// Each contributor, largest first.
    pub rows: Vec<Allocation>,
}

/// Split each checked point's allowed conversion equally over its
/// contributors (worst case adds magnitudes, so N shares of allowed/N meet
/// it exactly) and say how far each is from its share.
pub fn allocate(report: &Report) -> Vec<AllocationTable> {
    let mut tables = Vec::new();
    for point in report.judged_points() {
        let Some(outcome) = point.requirement else {
            continue;
        };
        let allowed_db = outcome.allowed_cmrr_db.0;
        let active: Vec<_> = point
            .contributions
            .iter()
            .filter(|r| r.cmrr_db.0.is_finite())
            .collect();
        let share_db = allowed_db + 20.0 * (active.len().max(1) as f64).log10();
        tables.push(AllocationTable {
            at: point.at.clone(),
            temperature_k: point.judged.temperature_k,
            allowed_db,
            rows: active
                .iter()
                .map(|r| Allocation {
                    contributor: r.name.clone(),
                    stage: r.stage.clone(),
                    value: r.value.clone(),
                    cmrr_db: r.cmrr_db.0,
                    allowance_db: share_db,
                    must_improve_db: (share_db - r.cmrr_db.0).max(0.0),
                })
                .collect(),
        });
    }
    tables
}

/// What halving one parameter's spread buys.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Sensitivity {
    /// The parameter.
    pub parameter: String,
    /// Its stage.
    pub stage: String,
    /// Its value and spread now.
    pub value: String,
    /// Per interference source (in file order): the judged CMRR gained
    /// (the requirement's total, at the temperature where it is worst), dB.
    pub gain_db: Vec<f64>,
    /// The Monte Carlo yield gained against the whole requirement, when
    /// asked for, in percentage points (the same seed and trials as the
    /// base yield).
    pub yield_gain_points: Option<f64>,
}

/// For every varying parameter, the worst-case CMRR gained at each
/// interference source when its tolerance (or bound) halves; largest gain at
/// the tightest source first.
pub fn sensitivity(
    budget: &Budget,
    yield_trials: Option<(u64, u64)>,
) -> Result<Vec<Sensitivity>, DesignError> {
    let yield_of = |b: &Budget| -> Result<Option<f64>, DesignError> {
        let Some((trials, seed)) = yield_trials else {
            return Ok(None);
        };
        let judged = judge(
            b,
            Goal::Yield {
                fraction: 1.0,
                trials,
                seed,
            },
        )?;
        Ok(judged.yield_fraction)
    };
    let base_yield = yield_of(budget)?;
    let base = judge_budget(budget)?;
    let tightest = base
        .results
        .iter()
        .enumerate()
        .min_by(|a, b| {
            let margin = |r: &crate::verdict::SourceResult| {
                r.requirement
                    .as_ref()
                    .map_or(r.judged.cmrr_db.0, |o| o.margin_db.0)
            };
            margin(a.1).total_cmp(&margin(b.1))
        })
        .map_or(0, |(i, _)| i);
    let mut out = Vec::new();
    for (id, parameter) in budget.parameters.iter().filter(|(_, p)| p.varies()) {
        let mut halved = budget.clone();
        let p = halved.parameters.get_mut(id);
        p.variation = match p.variation {
            Variation::Relative { tolerance } => Variation::Relative {
                tolerance: tolerance / 2.0,
            },
            Variation::SignedBound { magnitude } => Variation::SignedBound {
                magnitude: magnitude / 2.0,
            },
            other => other,
        };
        let report = judge_budget(&halved)?;
        let yield_gain_points = match (base_yield, yield_of(&halved)?) {
            (Some(before), Some(after)) => Some((after - before) * 100.0),
            _ => None,
        };
        out.push(Sensitivity {
            yield_gain_points,
            parameter: parameter.name.clone(),
            stage: budget.chain[parameter.stage].label.clone(),
            value: parameter.describe(),
            gain_db: report
                .results
                .iter()
                .zip(&base.results)
                .map(|(new, old)| new.judged.cmrr_db.0 - old.judged.cmrr_db.0)
                .collect(),
        });
    }
    out.sort_by(|a, b| {
        b.gain_db
            .get(tightest)
            .unwrap_or(&0.0)
            .total_cmp(a.gain_db.get(tightest).unwrap_or(&0.0))
    });
    Ok(out)
}

/// The difference stage of `stage`, for trimming.
fn difference_resistors(budget: &Budget, stage: usize) -> Option<[crate::model::ParamId; 4]> {
    let base = |id| budget.parameters.base_of(id);
    match &budget.chain[stage].kind {
        StageKind::DifferenceAmp(amp) => {
            Some([base(amp.r1), base(amp.r2), base(amp.r3), base(amp.r4)])
        }
        StageKind::ThreeOpAmpInAmp(amp) => {
            let d = &amp.difference_stage;
            Some([base(d.r1), base(d.r2), base(d.r3), base(d.r4)])
        }
        _ => None,
    }
}

/// A copy of `budget` with the difference stage of `stage` trimmed at DC:
/// R1 to R3 exact and R4 within ±`resolution` (the trim's residual ratio
/// error); temperature coefficients stay, so drift over the range remains.
pub fn trimmed(budget: &Budget, stage: usize, resolution: f64) -> Option<Budget> {
    let [r1, r2, r3, r4] = difference_resistors(budget, stage)?;
    let mut trimmed = budget.clone();
    for id in [r1, r2, r3] {
        trimmed.parameters.get_mut(id).variation = Variation::Fixed;
    }
    trimmed.parameters.get_mut(r4).variation = Variation::Relative {
        tolerance: resolution,
    };
    trimmed.parameters.get_mut(r4).name = "R4 (trim residual)".into();
    // A matched network's own errors are trimmed out too.
    for (id, p) in budget.parameters.iter() {
        if p.stage == stage && p.name.ends_with(" ratio error") {
            trimmed.parameters.get_mut(id).variation = Variation::Fixed;
        }
    }
    Some(trimmed)
}

/// How a difference stage is trimmed at DC.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum TrimMethod {
    /// The bench practice: R4 adjusted in each unit until the common-mode
    /// output at DC is zero, which cancels every DC conversion at once (the
    /// resistors' mismatch, the op-amps' own CMRR, a source imbalance),
    /// missing the null by the resolution.
    Null,
    /// The resistors' ratio matched: R1 to R3 exact and R4 within the
    /// resolution; the op-amps' own conversion stays.
    Ratio,
}

impl TrimMethod {
    /// What the method does, in one sentence for a report.
    pub fn explanation(self) -> &'static str {
        match self {
            TrimMethod::Null => "null trim: in each unit R4 is adjusted until the common-mode output at DC is zero (at the reference temperature), cancelling every DC conversion at once, the op-amps' own included; it misses the null by the resolution, and the resistors drift away from it over temperature",
            TrimMethod::Ratio => "ratio trim: the resistors' ratio is matched (R1 to R3 exact, R4 within the resolution); the op-amps' own conversion, the source's and every frequency-dependent contributor stay, and the resistors drift over temperature",
        }
    }
}

/// A copy of `budget` null-trimmed at the difference stage of `stage`: R4
/// solved per unit for a zero common-mode output at DC, within
/// ±`resolution` of the null.
pub fn null_trimmed(budget: &Budget, stage: usize, resolution: f64) -> Option<Budget> {
    let [_, _, _, r4] = difference_resistors(budget, stage)?;
    let mut trimmed = budget.clone();
    let adjusted = trimmed.parameters.get_mut(r4);
    adjusted.variation = Variation::Fixed;
    let field = adjusted.field.clone();
    let residual = trimmed.parameters.add(crate::model::Parameter {
        name: "R4 null-trim residual".into(),
        stage,
        field,
        nominal: 0.0,
        variation: Variation::SignedBound {
            magnitude: resolution,
        },
        presentation: crate::model::Presentation::Value(crate::quantity::Dimension::Fraction),
        shape: None,
    });
    trimmed.null_trim = Some(crate::model::NullTrim {
        adjusted: r4,
        residual,
    });
    Some(trimmed)
}

/// One interference source before and after a trim.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TrimRow {
    /// The source.
    pub source: String,
    /// Its frequency, Hz.
    pub frequency_hz: f64,
    /// The judged total as built, at the reference temperature, dB.
    pub before_db: f64,
    /// The judged total after the trim, at the reference temperature, dB.
    pub after_db: f64,
    /// After the trim, at the worse end of the temperature range, dB.
    pub after_over_temperature_db: Option<f64>,
}

/// What a trim does: the total compared, and each source before and after.
#[derive(Debug, Clone, PartialEq)]
pub struct TrimEffect {
    /// The total the figures are (the requirement's, worst case by default).
    pub judged_on: crate::model::Judgement,
    /// Per interference source.
    pub rows: Vec<TrimRow>,
}

/// The effect of trimming the difference stage of `stage` to
/// `resolution`, per interference source, judged as the verdict judges.
pub fn trim_effect(
    budget: &Budget,
    stage: usize,
    resolution: f64,
    method: TrimMethod,
) -> Result<TrimEffect, DesignError> {
    let trimmed_budget = match method {
        TrimMethod::Null => null_trimmed(budget, stage, resolution),
        TrimMethod::Ratio => trimmed(budget, stage, resolution),
    }
    .ok_or_else(|| {
        DesignError::Knob(KnobError(format!(
            "{} has no difference stage to trim",
            budget.chain[stage].label
        )))
    })?;
    let before = judge_budget(budget)?;
    let after = judge_budget(&trimmed_budget)?;
    let rows = before
        .results
        .iter()
        .zip(&after.results)
        .map(|(b, a)| TrimRow {
            source: b.source.clone(),
            frequency_hz: b.frequency_hz,
            before_db: b.cmrr_db.judged(b.judged.on).0,
            after_db: a.cmrr_db.judged(a.judged.on).0,
            after_over_temperature_db: a
                .at_temperature
                .as_ref()
                .map(|t| t.cmrr_db.judged(a.judged.on).0),
        })
        .collect();
    let judged_on = crate::verdict::judged_on(budget.requirement.as_ref());
    Ok(TrimEffect { judged_on, rows })
}

/// Whether a stage kind has a difference stage a trim can act on.
pub fn is_trimmable(kind: &StageKind) -> bool {
    matches!(
        kind,
        StageKind::DifferenceAmp(_) | StageKind::ThreeOpAmpInAmp(_)
    )
}
