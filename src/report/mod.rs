//! The budget report: what `cmrr budget` computes, as data. Renderers turn
//! it into a terminal table, JSON or CSV; the JSON form is a versioned
//! contract (see README, "JSON output").

mod build;
mod cautions;
mod checks;
pub mod compare;
pub mod csv;
pub mod design;
mod facts;
pub mod json;
pub mod sweep;
pub mod table;
pub mod yield_report;

pub use build::build_report;
pub use cautions::cautions as cautions_for;

use crate::engine::HeadroomFinding;
use crate::model::Judgement;
use crate::quantity::AmplitudeForm;
use serde::{Serialize, Serializer};

/// Version of the JSON report layout. Raised on any change that could break
/// a reader; adding a field is not such a change.
pub const SCHEMA_VERSION: u32 = 1;

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

/// The three totals a budget reports.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Totals<T> {
    /// Sum of the magnitudes of all contributions: an upper bound.
    pub worst_case: T,
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
            Judgement::Rss => self.rss,
            Judgement::Nominal => self.nominal,
        }
    }

    /// Apply `f` to each total.
    pub fn map<U>(&self, f: impl Fn(T) -> U) -> Totals<U> {
        Totals {
            worst_case: f(self.worst_case),
            rss: f(self.rss),
            nominal: f(self.nominal),
        }
    }
}

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
    /// Its share of the worst-case total, 0 to 1.
    pub share: f64,
}

/// The exact solve at the corner the worst case assumes: every deviation
/// at once, each at the sign that adds most to the total.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Corner {
    /// CMRR solved exactly at that corner.
    pub cmrr_db: Db,
    /// Magnitude of the interaction, `|ε_corner − (ε_nominal + Σ Δε)|`
    /// (exact minus its linear prediction), referred to the input.
    pub interaction: f64,
    /// The interaction as a fraction of the worst-case total.
    pub interaction_share: f64,
}

/// One requirement check.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Check {
    /// What was required, e.g. `CMRR ≥ 100.0 dB at 50.0 Hz`.
    pub limit: String,
    /// What was achieved, in the same terms.
    pub achieved: String,
    /// Margin in dB: positive when met.
    pub margin_db: Db,
    /// The chain CMRR this check allows at the least (for an error limit:
    /// the limit over the source's amplitude).
    pub allowed_cmrr_db: Db,
    /// Whether it is met.
    pub met: bool,
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
    /// The error as ppm of the full-scale input (peak error over full
    /// scale), when the requirement gives a full scale.
    pub error_fs_ppm: Option<Totals<f64>>,
    /// The exact worst-aligned corner and its interaction.
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
    /// The requirement's outcome (judged on the worse of the reference
    /// temperature and the worse end of the range); null when no
    /// requirement applies.
    pub requirement: Option<RequirementOutcome>,
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
    /// The exact worst-aligned corner there.
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
    /// The exact worst-aligned corner and its interaction.
    pub corner: Corner,
    /// The contributors, largest first.
    pub contributions: Vec<ContributionRow>,
    /// The same analysis at the worse end of the temperature range.
    pub at_temperature: Option<TemperatureResult>,
    /// The requirement's outcome; null when no requirement applies.
    pub requirement: Option<RequirementOutcome>,
}

/// The verdict over the whole budget.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Verdict {
    /// True when every check is met, false when any is missed, null when the
    /// budget states no requirement.
    pub met: Option<bool>,
    /// The smallest margin over every check, in dB; null without checks.
    pub margin_db: Option<Db>,
}

/// Everything `cmrr budget` reports.
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
    /// The overall verdict.
    pub verdict: Verdict,
}
