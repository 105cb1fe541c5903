//! The verdict: a budget judged once. [`judge`] analyses the chain at every
//! frequency the budget names, at the reference temperature and at the ends
//! of its range, runs the headroom check, and judges every requirement
//! check with its form and margin. Every command (`budget`, `compare`,
//! `yield`, `size`, `improve`, `trim`) judges through it; renderers in
//! [`crate::report`] only render what it returns.
//!
//! The data types here are the JSON contract of `cmrr budget` (see README,
//! "JSON output"); [`SCHEMA_VERSION`] is raised on any change that could
//! break a reader.

mod cautions;
mod checks;
mod facts;
mod judge;
mod switching;

pub use cautions::cautions;
pub use checks::judged_on;
pub(crate) use checks::same_frequency;
pub use facts::OUTSIDE_THE_SWITCHING_MODEL;
pub use judge::{
    judge, judge_in_full, judge_switching_sources, judge_with, Operating, VerdictError,
};
pub use switching::{
    measure_of, JudgedSwitching, ResidueContribution, ResidueFigures, ResidueWaveforms,
    SampleFigures, Settling, SwitchingResult,
};

use crate::engine::HeadroomFinding;
use crate::model::Judgement;
use crate::quantity::AmplitudeForm;
use serde::{Serialize, Serializer};

/// Version of the JSON report layout. Raised on any change that could break
/// a reader; adding a field is not such a change.
///
/// 2: the verdict has a `status` (a headroom finding makes it
/// `does_not_hold` and `met` false); totals gain `worst_corner`; error
/// checks compare like forms (a DC error's rms and peak are its magnitude).
/// 3: every JSON document starts with `report` (its kind); figures are
/// rounded to ten significant digits.
pub const SCHEMA_VERSION: u32 = 3;

/// A ratio in decibels. Serialized as a number, or as the string `"inf"`
/// for an infinite CMRR (a perfectly matched chain); JSON has no infinity.
#[derive(Debug, Clone, Copy, PartialEq, PartialOrd)]
pub struct Db(pub f64);

impl Db {
    /// The CMRR in dB of a conversion of magnitude `epsilon`:
    /// `−20 log10 |ε|`, infinite for zero.
    pub fn from_conversion(epsilon: f64) -> Db {
        if epsilon == 0.0 {
            Db(f64::INFINITY)
        } else {
            Db(-20.0 * epsilon.log10())
        }
    }

    /// The conversion `|ε|` this CMRR allows: `10^(−dB/20)`.
    pub fn conversion(self) -> f64 {
        10f64.powf(-self.0 / 20.0)
    }
}

impl Serialize for Db {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        if self.0.is_infinite() {
            serializer.serialize_str(if self.0 > 0.0 { "inf" } else { "-inf" })
        } else {
            serializer.serialize_f64(self.0)
        }
    }
}

/// The totals a budget reports.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Totals<T> {
    /// Sum of the magnitudes of all contributions: the linear bound.
    pub worst_case: T,
    /// The exact solve at the worst sign corner.
    pub worst_corner: T,
    /// Systematic part plus the root-sum-square of the random parts.
    pub rss: T,
    /// Values as given, no tolerances.
    pub nominal: T,
}

impl<T: Copy> Totals<T> {
    /// The total a requirement is judged on.
    pub fn judged(&self, judgement: Judgement) -> T {
        match judgement {
            Judgement::WorstCase => self.worst_case,
            Judgement::WorstCorner => self.worst_corner,
            Judgement::Rss => self.rss,
            Judgement::Nominal => self.nominal,
        }
    }

    /// Apply `f` to each total.
    pub fn map<U>(&self, f: impl Fn(T) -> U) -> Totals<U> {
        Totals {
            worst_case: f(self.worst_case),
            worst_corner: f(self.worst_corner),
            rss: f(self.rss),
            nominal: f(self.nominal),
        }
    }
}

/// The totals, in the order reports print them.
pub const TOTALS: [Judgement; 4] = [
    Judgement::WorstCase,
    Judgement::WorstCorner,
    Judgement::Rss,
    Judgement::Nominal,
];

/// Whether a contribution is known (from the values as given) or only
/// bounded (a tolerance, a spec limit of unknown sign).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ContributionKind {
    /// The nominal conversion: values as given, added linearly.
    Systematic,
    /// A deviation within a tolerance or bound: added in quadrature for RSS.
    Random,
}

impl ContributionKind {
    /// The name used in JSON and CSV.
    pub fn name(self) -> &'static str {
        match self {
            ContributionKind::Systematic => "systematic",
            ContributionKind::Random => "random",
        }
    }
}

/// One line of the contribution table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ContributionRow {
    /// The parameter, e.g. `R2` or `cable C (n)`; `nominal imbalance` for the
    /// systematic row.
    pub name: String,
    /// The stage's label.
    pub stage: String,
    /// The value and its spread as written, e.g. `10.0 kΩ ±0.1 %`.
    pub value: String,
    /// The budget-file field it came from.
    pub field: String,
    /// Systematic or random.
    pub kind: ContributionKind,
    /// The CMRR this contributor alone would allow.
    pub cmrr_db: Db,
    /// The error it leaves alone, referred to the input, in volts in the
    /// interference's amplitude form (absent for a frequency with no source).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub error_rti_v: Option<f64>,
    /// Its share of the worst-case (linear-bound) sum, 0 to 1.
    pub share: f64,
}

/// One varying parameter's value at the worst corner.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CornerValue {
    /// The parameter.
    pub name: String,
    /// Its stage.
    pub stage: String,
    /// The value, with its unit and the end of its range (`+` or `−`).
    pub value: String,
}

/// The exact solve at the worst sign corner, beside the linear bound.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Corner {
    /// CMRR solved exactly at the worst corner found.
    pub cmrr_db: Db,
    /// The linear bound (the worst-case total) at the same point.
    pub linear_bound_db: Db,
    /// How the corner was searched: `exhaustive` or `directed`.
    pub search: &'static str,
    /// How many corners were solved.
    pub corners_solved: u64,
    /// Magnitude of the interaction, `|ε_corner − (ε_nominal + Σ Δε)|` at
    /// the corner's signs (exact minus its linear prediction), referred to
    /// the input.
    pub interaction: f64,
    /// The interaction as a fraction of the worst-case total.
    pub interaction_share: f64,
    /// How far apart in phase the two largest contributions are, degrees
    /// (0 to 90); null with fewer than two. Out-of-phase contributions are
    /// why the linear bound exceeds the corner.
    pub phase_spread_deg: Option<f64>,
    /// Why the bound and the corner differ, when they differ by more than
    /// 0.1 dB.
    pub why_they_differ: Option<String>,
    /// Every varying parameter's value there.
    pub parameters: Vec<CornerValue>,
}

/// What a requirement check limits.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(rename_all = "snake_case", tag = "type")]
pub enum CheckKind {
    /// A minimum chain CMRR at a frequency.
    MinimumCmrr {
        /// The minimum, dB.
        minimum_db: Db,
    },
    /// A maximum error for an interference source, referred to the input.
    MaximumError {
        /// The source's name.
        source: String,
    },
    /// A maximum residue for a switching source, referred to the input, in
    /// the measure its limit names.
    SwitchingError {
        /// The source's name.
        source: String,
    },
}

/// One requirement check.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Check {
    /// What it limits.
    pub kind: CheckKind,
    /// What was required, e.g. `CMRR ≥ 100.0 dB at 50.0 Hz`.
    pub limit: String,
    /// What was achieved, in the same terms and form.
    pub achieved: String,
    /// Margin in dB: positive when met.
    pub margin_db: Db,
    /// The chain CMRR this check allows at the least (for an error limit:
    /// the limit over the source's amplitude, in like forms).
    pub allowed_cmrr_db: Db,
    /// Whether it is met.
    pub met: bool,
}

/// The figure a point is judged on: the judged total at the temperature
/// where it is worst.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct JudgedFigure {
    /// Which total.
    pub on: Judgement,
    /// Where it is worst, kelvin; null at the reference temperature.
    pub temperature_k: Option<f64>,
    /// The chain's CMRR there.
    pub cmrr_db: Db,
    /// The error left there, referred to the input, volts in the source's
    /// amplitude form; null at a frequency with no source.
    pub error_rti_v: Option<f64>,
}

/// The requirement's outcome at one frequency or source.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RequirementOutcome {
    /// Whether every check is met.
    pub met: bool,
    /// The smallest margin among the checks, in dB.
    pub margin_db: Db,
    /// The least chain CMRR the checks allow together (the tightest).
    pub allowed_cmrr_db: Db,
    /// Which total was judged.
    pub judged_on: Judgement,
    /// Each check.
    pub checks: Vec<Check>,
}

/// The result for one interference source.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SourceResult {
    /// The source's name.
    pub source: String,
    /// Its frequency in hertz (0 for DC).
    pub frequency_hz: f64,
    /// Its common-mode amplitude in volts, in `amplitude_form`.
    pub amplitude_v: f64,
    /// `rms`, `peak` or `peak_to_peak`; null for a DC value.
    pub amplitude_form: Option<AmplitudeForm>,
    /// The chain's differential gain magnitude, V/V.
    pub differential_gain: f64,
    /// The chain's CMRR.
    pub cmrr_db: Totals<Db>,
    /// The error left, referred to the input, volts in `amplitude_form`.
    pub error_rti_v: Totals<f64>,
    /// The error left, referred to the output, volts in `amplitude_form`.
    pub error_rto_v: Totals<f64>,
    /// The peak error as ppm of the full-scale input, when the requirement
    /// gives a full scale.
    pub error_fs_ppm: Option<Totals<f64>>,
    /// The exact worst corner beside the linear bound.
    pub corner: Corner,
    /// The error in codes of the converter at the end of the chain, in
    /// `amplitude_form`; null without a converter.
    pub error_lsb: Option<Totals<f64>>,
    /// The error in units of the measured quantity (`measurand_unit`), in
    /// `amplitude_form`; null without a measurand.
    pub error_measurand: Option<Totals<f64>>,
    /// The contributors, largest first.
    pub contributions: Vec<ContributionRow>,
    /// The same analysis at the worse end of the temperature range; null
    /// without a range.
    pub at_temperature: Option<TemperatureResult>,
    /// The error after the converter's digital filter; null without a
    /// filter and for a DC source (the filter's DC gain is 1).
    pub after_filter: Option<FilteredError>,
    /// What a tare at the reference temperature leaves of this DC source's
    /// offset; null unless the source is tared. A tared source's limit is
    /// judged on it.
    pub after_tare: Option<TaredError>,
    /// For a ripple on the bridge's excitation: what the bridge passes on
    /// differentially, what a ratiometric reference leaves of it, and the
    /// error in the reading with the common mode's; null for any other
    /// source. Its limit is judged on that error.
    pub through_bridge: Option<BridgeRipple>,
    /// The figure the requirement is judged on (the worse of the reference
    /// temperature and the worse end of the range; for a tared source, the
    /// residual where it is worst).
    pub judged: JudgedFigure,
    /// The requirement's outcome; null when no requirement applies.
    pub requirement: Option<RequirementOutcome>,
    /// The largest analog conversion `|ε|` the source's limit allows (the
    /// digital filter and a limit's codes or units accounted for); what
    /// `cmrr yield` checks every trial against. Not part of the JSON.
    #[serde(skip)]
    pub max_conversion: Option<f64>,
}

/// A source's error after the converter's digital filter: the error at the
/// converter's input times the filter's gain, worst over the band the
/// source's frequency may drift in. The analog conversion is taken at the
/// stated frequency.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FilteredError {
    /// The filter, described.
    pub filter: String,
    /// The band searched, Hz (one frequency when the source does not
    /// drift).
    pub band_hz: [f64; 2],
    /// Where in the band the filter passes most, Hz.
    pub worst_at_hz: f64,
    /// The filter's rejection there, dB (−20 log10 |H|).
    pub rejection_db: Db,
    /// The error in the reading, referred to the input, volts in the
    /// source's form.
    pub error_rti_v: Totals<f64>,
    /// The same in codes; null without a converter.
    pub error_lsb: Option<Totals<f64>>,
    /// The same in the measurand's unit; null without a measurand.
    pub error_measurand: Option<Totals<f64>>,
}

/// A ripple on the bridge's excitation, through the bridge itself.
///
/// The bridge passes the ripple across it on as a differential signal in
/// proportion to the reading, `S·δ_b` at capacity. With a reference of the
/// converter's own the reading keeps all of it; with the reference taken
/// from the excitation the reading, a ratio, moves by
/// `(δ/V)·(A_d(f)/A_d(0) − H_ref(f))`, so, referred to the input through
/// `A_d(f)`, `S·δ_b·|1 − H_ref(f)·A_d(0)/A_d(f)|` is left: what the
/// signal path (the source filter, the amplifiers' bandwidth) and the
/// reference path do not share. Voltages in the source's form, referred to
/// the input.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BridgeRipple {
    /// The ripple as stated, at the excitation's source.
    pub ripple_v: f64,
    /// Its part across the bridge (less the leads' share with local
    /// sense).
    pub across_bridge_v: f64,
    /// What the bridge passes on differentially at capacity.
    pub differential_v: f64,
    /// Where the converter's reference comes from, described.
    pub reference: String,
    /// What the reading keeps of the differential part.
    pub left_rti_v: f64,
    /// How much a ratiometric reference cancels, dB (the differential part
    /// over what is left); null with a reference of the converter's own.
    pub cancellation_db: Option<Db>,
    /// The error in the reading: the common mode's error (each total) plus
    /// what is left of the differential part, their magnitudes added (the
    /// common mode's conversion has an unknown sign).
    pub error_rti_v: Totals<f64>,
    /// The same in codes; null without a converter.
    pub error_lsb: Option<Totals<f64>>,
    /// The same in the measurand's unit; null without a measurand.
    pub error_measurand: Option<Totals<f64>>,
}

/// What a tare (zero calibration) at the reference temperature leaves of a
/// DC source's offset: its change with the temperature (the parts' TCRs,
/// the nominal conversion's own drift) and with the common mode moving
/// from its value at calibration. Volts referred to the input.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TaredError {
    /// Where the calibration is made, kelvin; null when the budget states
    /// no temperatures (the calibration and use are then at one
    /// temperature).
    pub calibrated_at_k: Option<f64>,
    /// How far the common mode may move from its value at calibration,
    /// volts.
    pub varies_by_v: f64,
    /// Where the residual is worst, kelvin; null at the calibration's own
    /// temperature.
    pub temperature_k: Option<f64>,
    /// The residual, referred to the input, volts. `worst_corner` is the
    /// exact residual at the worst corner a directed search found.
    pub residual_rti_v: Totals<f64>,
    /// The residual as ppm of the full-scale input, when the requirement
    /// gives a full scale.
    pub residual_fs_ppm: Option<Totals<f64>>,
    /// The residual in codes; null without a converter.
    pub residual_lsb: Option<Totals<f64>>,
    /// The residual in the measurand's unit; null without a measurand.
    pub residual_measurand: Option<Totals<f64>>,
    /// How many corners the search solved (each at both temperatures).
    pub corners_solved: u64,
    /// The contributors to the residual, largest first. Their `cmrr_db` is
    /// the residual over the source's amplitude, in dB: the CMRR a chain
    /// would need to leave that error untared.
    pub contributions: Vec<ContributionRow>,
}

/// The analysis at the worse end of the operating temperature range, where
/// the resistors' temperature coefficients contribute.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TemperatureResult {
    /// The temperature, in kelvin.
    pub temperature_k: f64,
    /// The chain's CMRR there.
    pub cmrr_db: Totals<Db>,
    /// The error left there, referred to the input (null at a frequency
    /// with no source).
    pub error_rti_v: Option<Totals<f64>>,
    /// The exact worst corner there.
    pub corner: Corner,
    /// The contributors there, largest first.
    pub contributions: Vec<ContributionRow>,
}

/// The result at a frequency with no interference source (a required CMRR
/// point or an extra frequency).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FrequencyResult {
    /// The frequency in hertz.
    pub frequency_hz: f64,
    /// The chain's differential gain magnitude, V/V.
    pub differential_gain: f64,
    /// The chain's CMRR.
    pub cmrr_db: Totals<Db>,
    /// The exact worst corner beside the linear bound.
    pub corner: Corner,
    /// The contributors, largest first.
    pub contributions: Vec<ContributionRow>,
    /// The same analysis at the worse end of the temperature range.
    pub at_temperature: Option<TemperatureResult>,
    /// The figure the requirement is judged on.
    pub judged: JudgedFigure,
    /// The requirement's outcome; null when no requirement applies.
    pub requirement: Option<RequirementOutcome>,
}

/// What the verdict says of the design as a whole.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Status {
    /// Every check met, and the figures hold (no headroom finding).
    Met,
    /// Some check missed.
    Missed,
    /// A node leaves its range: the small-signal figures assume linear
    /// operation and do not hold, whatever they say.
    DoesNotHold,
    /// No requirement stated, and no headroom finding.
    NoRequirement,
}

impl Status {
    /// Whether the design fails (missed, or its figures do not hold).
    pub fn fails(self) -> bool {
        matches!(self, Status::Missed | Status::DoesNotHold)
    }
}

/// The verdict over the whole budget.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Verdict {
    /// Met, missed, does not hold (headroom), or no requirement.
    pub status: Status,
    /// True when every check is met and the figures hold; false when a
    /// check is missed or a headroom finding means the figures do not
    /// hold; null when the budget states no requirement and the figures
    /// hold.
    pub met: Option<bool>,
    /// The smallest margin over every check, in dB; null without checks.
    pub margin_db: Option<Db>,
    /// Where that margin is: the source's name or the frequency.
    pub tightest: Option<String>,
}

/// Everything `cmrr budget` reports: the judged budget.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Report {
    /// Version of this layout.
    pub schema_version: u32,
    /// The budget's name.
    pub budget: String,
    /// The budget's notes.
    pub notes: Option<String>,
    /// Safety cautions that apply to this budget.
    pub cautions: Vec<String>,
    /// Remarks on how the budget was read (e.g. parts taken as ideal).
    pub remarks: Vec<String>,
    /// Computed facts about the stages at nominal values (gains, a pair's
    /// tail output resistance and the frequency its capacitance takes over).
    pub facts: Vec<String>,
    /// The unit of `error_measurand`, when the budget names a measurand.
    pub measurand_unit: Option<String>,
    /// Nodes that leave their stated range (input common-mode range, output
    /// swing, transistor saturation) with the interference and full-scale
    /// signal applied: the CMRR figures assume linear operation and do not
    /// hold where there is a finding.
    pub headroom: Vec<HeadroomFinding>,
    /// One entry per interference source, in file order.
    pub results: Vec<SourceResult>,
    /// Further frequencies: required CMRR points and extra frequencies not
    /// already covered by a source.
    pub frequencies: Vec<FrequencyResult>,
    /// One entry per switching source, in file order: the residue over a
    /// period.
    pub switching: Vec<SwitchingResult>,
    /// The overall verdict.
    pub verdict: Verdict,
}

/// One judged point of a report, as the design commands and `compare` read
/// it.
#[derive(Debug, Clone, PartialEq)]
pub struct JudgedPoint<'a> {
    /// The source's name, or the frequency for a point with no source.
    pub at: String,
    /// The frequency, Hz.
    pub frequency_hz: f64,
    /// The figure it is judged on.
    pub judged: &'a JudgedFigure,
    /// The requirement's outcome there, if one applies.
    pub requirement: Option<&'a RequirementOutcome>,
    /// The contributions at the temperature it is judged at, largest first.
    pub contributions: &'a [ContributionRow],
}

impl Report {
    /// Every point of the report, sources first (in file order), then the
    /// further frequencies.
    pub fn judged_points(&self) -> Vec<JudgedPoint<'_>> {
        let mut points = Vec::new();
        for r in &self.results {
            points.push(JudgedPoint {
                at: r.source.clone(),
                frequency_hz: r.frequency_hz,
                judged: &r.judged,
                requirement: r.requirement.as_ref(),
                contributions: match &r.after_tare {
                    Some(tared) => &tared.contributions,
                    None => judged_rows(&r.judged, &r.contributions, &r.at_temperature),
                },
            });
        }
        for f in &self.frequencies {
            points.push(JudgedPoint {
                at: crate::quantity::format_si(f.frequency_hz, "Hz"),
                frequency_hz: f.frequency_hz,
                judged: &f.judged,
                requirement: f.requirement.as_ref(),
                contributions: judged_rows(&f.judged, &f.contributions, &f.at_temperature),
            });
        }
        points
    }
}

impl Report {
    /// The figures at `freq`: the chain's totals there, its worst corner
    /// and the worse end of the range; `None` when the budget names no such
    /// frequency.
    pub fn figures_at(
        &self,
        freq: f64,
    ) -> Option<(Totals<Db>, &Corner, Option<&TemperatureResult>)> {
        let same = |f: f64| same_frequency(f, freq);
        self.results
            .iter()
            .find(|r| same(r.frequency_hz))
            .map(|r| (r.cmrr_db, &r.corner, r.at_temperature.as_ref()))
            .or_else(|| {
                self.frequencies
                    .iter()
                    .find(|f| same(f.frequency_hz))
                    .map(|f| (f.cmrr_db, &f.corner, f.at_temperature.as_ref()))
            })
    }

    /// The worst corner at `freq` over the temperatures judged: the worse
    /// of the figures shown and the worse end of the range.
    pub fn worst_corner_at(&self, freq: f64) -> Option<&Corner> {
        let (_, shown, end) = self.figures_at(freq)?;
        Some(match end {
            Some(t) if t.corner.cmrr_db.0 < shown.cmrr_db.0 => &t.corner,
            _ => shown,
        })
    }
}

/// The contribution rows at the temperature a point is judged at.
fn judged_rows<'a>(
    judged: &JudgedFigure,
    reference: &'a [ContributionRow],
    worse_end: &'a Option<TemperatureResult>,
) -> &'a [ContributionRow] {
    match (judged.temperature_k, worse_end) {
        (Some(_), Some(end)) => &end.contributions,
        _ => reference,
    }
}
