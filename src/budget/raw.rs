//! The budget file's raw schema: serde types that check only the shape of
//! the YAML (which fields exist, which are maps or lists). Values stay text
//! until the validator parses them against their field's dimension.

use schemars::JsonSchema;
use serde::de::{self, Deserializer, MapAccess, Visitor};
use serde::Deserialize;
use std::fmt;

/// The whole budget file.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
#[schemars(rename = "BudgetFile")]
pub struct RawBudget {
    pub name: String,
    #[serde(default)]
    pub notes: Option<String>,
    #[serde(default)]
    pub patient_connected: Option<bool>,
    #[serde(default)]
    pub mains_referenced: Option<bool>,
    #[serde(with = "serde_yaml::with::singleton_map_recursive")]
    #[schemars(with = "Vec<RawStage>")]
    pub chain: Vec<RawStage>,
    #[serde(default)]
    pub interference: Vec<RawInterference>,
    #[serde(default)]
    pub switching: Vec<RawSwitching>,
    #[serde(default)]
    pub requirement: Option<RawRequirement>,
    #[serde(default)]
    pub extra_frequencies: Vec<Scalar>,
    #[serde(default)]
    pub temperature: Option<RawTemperature>,
    #[serde(default)]
    pub measurand: Option<RawMeasurand>,
    #[serde(default)]
    pub sweep: Option<RawSweep>,
    #[serde(default)]
    pub production: Option<RawProduction>,
}

/// The default spread of toleranced values.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawProduction {
    #[serde(default)]
    pub distribution: Option<RawShape>,
    #[serde(default)]
    pub sigmas: Option<f64>,
}

/// A spread shape.
#[derive(Debug, Clone, Copy, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum RawShape {
    Uniform,
    Normal,
    Truncated,
}

/// The default range of `cmrr sweep` for this budget.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawSweep {
    #[serde(default)]
    pub from: Option<Scalar>,
    #[serde(default)]
    pub to: Option<Scalar>,
    #[serde(default)]
    pub points_per_decade: Option<u32>,
}

/// The measured quantity, to express errors in its units.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawMeasurand {
    pub unit: String,
    #[serde(default)]
    pub volts_per_unit: Option<Scalar>,
    #[serde(default)]
    pub capacity: Option<Scalar>,
    #[serde(default)]
    pub bridge: Option<RawBridgeRating>,
}

/// A bridge sensor's rating: output per volt of excitation at capacity.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawBridgeRating {
    pub sensitivity: Scalar,
    pub excitation: Scalar,
    pub capacity: Scalar,
    #[serde(default)]
    pub resistance: Option<Scalar>,
    #[serde(default)]
    pub lead_resistance: Option<Scalar>,
    #[serde(default)]
    pub sense: Option<String>,
}

/// The operating temperature range.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawTemperature {
    pub reference: Scalar,
    pub range: Vec<Scalar>,
}

/// A stage's resistors as one matched network: a shared absolute
/// tolerance, a ratio tolerance, and temperature coefficients.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawNetwork {
    #[serde(default)]
    pub tolerance: Option<Scalar>,
    #[serde(default)]
    pub ratio_tolerance: Option<Scalar>,
    #[serde(default)]
    pub tcr: Option<Scalar>,
    #[serde(default)]
    pub tracking: Option<Scalar>,
}

/// One stage, written as a map with a single key naming its kind.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum RawStage {
    Source(Box<RawSource>),
    DifferenceAmp(Box<RawDifferenceAmp>),
    ThreeOpampInamp(Box<RawThreeOpAmpInAmp>),
    IntegratedInamp(Box<RawIntegratedInAmp>),
    DifferentialPair(Box<RawDifferentialPair>),
    Adc(Box<RawAdc>),
}

/// A differential-input converter.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawAdc {
    #[serde(default)]
    pub label: Option<String>,
    pub span: Scalar,
    pub bits: u32,
    #[serde(default)]
    pub cmrr: Option<Scalar>,
    #[serde(default)]
    pub cmrr_corner: Option<Scalar>,
    #[serde(default)]
    pub input_resistance: Option<PerLeg>,
    #[serde(default)]
    pub input_capacitance: Option<PerLeg>,
    #[serde(default)]
    pub filter: Option<RawFilter>,
    #[serde(default)]
    pub reference: Option<RawReference>,
}

/// Where a converter's reference comes from: `from: excitation` (a
/// ratiometric reading), optionally through a single pole (`corner`).
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawReference {
    pub from: String,
    #[serde(default)]
    pub corner: Option<Scalar>,
}

/// A converter's digital filter: exactly one of `sinc` (with
/// `output_rate`, optionally `decimation`), `average_over` (a time),
/// `average_of` (samples, with `sample_rate`) or `table`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawFilter {
    #[serde(default)]
    pub sinc: Option<u32>,
    #[serde(default)]
    pub output_rate: Option<Scalar>,
    #[serde(default)]
    pub decimation: Option<u32>,
    #[serde(default)]
    pub average_over: Option<Scalar>,
    #[serde(default)]
    pub average_of: Option<u32>,
    #[serde(default)]
    pub sample_rate: Option<Scalar>,
    #[serde(default)]
    pub table: Option<Vec<Vec<Scalar>>>,
}

/// The source network.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawSource {
    #[serde(default)]
    pub label: Option<String>,
    #[serde(default)]
    pub resistance: Option<PerLeg>,
    #[serde(default)]
    pub capacitance: Option<PerLeg>,
    #[serde(default)]
    pub bridge_arm: Option<Scalar>,
    #[serde(default)]
    pub cable: Option<RawCable>,
    #[serde(default)]
    pub series_resistance: Option<PerLeg>,
    #[serde(default)]
    pub filter_capacitance: Option<PerLeg>,
    #[serde(default)]
    pub differential_capacitance: Option<Scalar>,
    #[serde(default)]
    pub input_resistance: Option<PerLeg>,
    #[serde(default)]
    pub input_capacitance: Option<PerLeg>,
    #[serde(default)]
    pub body: Option<RawBody>,
}

/// A patient's body behind the electrodes: its coupling to the mains and
/// to earth, and its return to the amplifier.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawBody {
    pub mains_coupling: Scalar,
    pub to_earth: Scalar,
    pub common_to_earth: Scalar,
    #[serde(default)]
    pub mains_to_common: Option<Scalar>,
    #[serde(default)]
    pub reference_electrode: Option<RawElectrode>,
    #[serde(default)]
    pub drive: Option<RawDrive>,
    #[serde(default)]
    pub electrode_offset: Option<Scalar>,
}

/// An electrode's impedance, `R ∥ C`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawElectrode {
    pub resistance: Scalar,
    #[serde(default)]
    pub capacitance: Option<Scalar>,
}

/// A right-leg drive.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawDrive {
    #[serde(default)]
    pub gain: Option<Scalar>,
    #[serde(default)]
    pub corner: Option<Scalar>,
    #[serde(default)]
    pub unity_gain: Option<Scalar>,
    pub output_resistance: Scalar,
    #[serde(default)]
    pub output_range: Option<Vec<Scalar>>,
    #[serde(default)]
    pub sense_resistance: Option<Scalar>,
}

/// The cable between the sensor and the board.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawCable {
    pub capacitance: PerLeg,
    pub length: Scalar,
    #[serde(default)]
    pub guard_drive: Option<Scalar>,
}

/// The four-resistor difference amplifier.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawDifferenceAmp {
    #[serde(default)]
    pub label: Option<String>,
    pub r1: Scalar,
    pub r2: Scalar,
    pub r3: Scalar,
    pub r4: Scalar,
    #[serde(default)]
    pub reference_resistance: Option<Scalar>,
    #[serde(default)]
    pub reference_voltage: Option<Scalar>,
    #[serde(default)]
    pub opamp: Option<RawOpAmp>,
    #[serde(default)]
    pub tcr: Option<Scalar>,
    #[serde(default)]
    pub network: Option<RawNetwork>,
}

/// The three-op-amp instrumentation amplifier.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawThreeOpAmpInAmp {
    #[serde(default)]
    pub label: Option<String>,
    pub rg: Scalar,
    pub rf1: Scalar,
    pub rf2: Scalar,
    #[serde(default)]
    pub input_resistance: Option<PerLeg>,
    #[serde(default)]
    pub input_capacitance: Option<PerLeg>,
    #[serde(default)]
    pub first_stage_opamps: Option<RawOpAmp>,
    #[serde(default)]
    pub tcr: Option<Scalar>,
    pub difference_stage: RawDifferenceAmp,
}

/// An integrated instrumentation amplifier.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawIntegratedInAmp {
    #[serde(default)]
    pub label: Option<String>,
    #[serde(default)]
    pub gain: Option<Scalar>,
    #[serde(default)]
    pub gain_resistor: Option<Scalar>,
    #[serde(default)]
    pub gain_law: Option<RawGainLaw>,
    #[serde(default)]
    pub cmrr: Option<Scalar>,
    #[serde(default)]
    pub cmrr_by_gain: Vec<RawCmrrAtGain>,
    #[serde(default)]
    pub cmrr_corner: Option<Scalar>,
    #[serde(default)]
    pub bandwidth: Option<Scalar>,
    #[serde(default)]
    pub input_resistance: Option<PerLeg>,
    #[serde(default)]
    pub input_capacitance: Option<PerLeg>,
    #[serde(default)]
    pub input_range: Option<Vec<Scalar>>,
    #[serde(default)]
    pub output_swing: Option<Vec<Scalar>>,
    #[serde(default)]
    pub reference_voltage: Option<Scalar>,
    #[serde(default)]
    pub input_bias_current: Option<Scalar>,
    #[serde(default)]
    pub input_offset_current: Option<Scalar>,
}

/// `G = base + constant / RG`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawGainLaw {
    pub base: Scalar,
    pub constant: Scalar,
}

/// A minimum CMRR at one gain.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawCmrrAtGain {
    pub gain: Scalar,
    pub cmrr: Scalar,
}

/// A discrete long-tailed pair.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawDifferentialPair {
    #[serde(default)]
    pub label: Option<String>,
    pub device: RawPairDevice,
    #[serde(default)]
    pub tail_current: Option<Scalar>,
    #[serde(default)]
    pub beta: Option<PerLeg>,
    #[serde(default)]
    pub early_voltage: Option<PerLeg>,
    #[serde(default)]
    pub overdrive: Option<Scalar>,
    #[serde(default)]
    pub gm: Option<PerLeg>,
    #[serde(default)]
    pub r_pi: Option<PerLeg>,
    #[serde(default)]
    pub ro: Option<PerLeg>,
    #[serde(default)]
    pub offset: Option<Scalar>,
    #[serde(default)]
    pub gm_mismatch: Option<Scalar>,
    #[serde(default)]
    pub degeneration: Option<PerLeg>,
    pub load_resistance: PerLeg,
    pub output: RawPairOutput,
    #[serde(default)]
    pub temperature: Option<Scalar>,
    pub tail: RawTail,
    #[serde(default)]
    pub supply: Option<Scalar>,
    #[serde(default)]
    pub input_drop: Option<Scalar>,
    #[serde(default)]
    pub saturation: Option<Scalar>,
}

/// The pair's device type.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum RawPairDevice {
    Bjt,
    Mosfet,
    SmallSignal,
}

/// The pair's output.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum RawPairOutput {
    Differential,
    SingleEnded,
}

/// The pair's tail: one kind, and its capacitance.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawTail {
    #[serde(default)]
    pub resistor: Option<Scalar>,
    #[serde(default)]
    pub current_source: Option<RawTailDevice>,
    #[serde(default)]
    pub degenerated_source: Option<RawTailDevice>,
    #[serde(default)]
    pub cascode: Option<RawTailDevice>,
    #[serde(default)]
    pub output_resistance: Option<Scalar>,
    #[serde(default)]
    pub capacitance: Option<Scalar>,
}

/// The transistor(s) making a tail current.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawTailDevice {
    pub early_voltage: Scalar,
    #[serde(default)]
    pub degeneration: Option<Scalar>,
    #[serde(default)]
    pub beta: Option<Scalar>,
    #[serde(default)]
    pub overdrive: Option<Scalar>,
}

/// An op-amp's data.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawOpAmp {
    #[serde(default)]
    pub open_loop_gain: Option<Scalar>,
    #[serde(default)]
    pub gain_bandwidth: Option<Scalar>,
    #[serde(default)]
    pub cmrr: Option<Scalar>,
    #[serde(default)]
    pub cmrr_corner: Option<Scalar>,
    #[serde(default)]
    pub input_range: Option<Vec<Scalar>>,
    #[serde(default)]
    pub output_swing: Option<Vec<Scalar>>,
    #[serde(default)]
    pub input_bias_current: Option<Scalar>,
    #[serde(default)]
    pub input_offset_current: Option<Scalar>,
}

/// A common-mode interference source.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawInterference {
    pub name: String,
    #[serde(default)]
    pub amplitude: Option<Scalar>,
    #[serde(default)]
    pub excitation_ripple: Option<Scalar>,
    pub frequency: Scalar,
    #[serde(default)]
    pub max_error: Option<Scalar>,
    #[serde(default)]
    pub frequency_drift: Option<Scalar>,
    #[serde(default)]
    pub tare: Option<RawTare>,
}

/// A DC source's offset removed at calibration, and how far its common
/// mode may move since.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawTare {
    pub varies_by: Scalar,
}

/// A switching common-mode waveform: a periodic trapezoid.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawSwitching {
    pub name: String,
    pub low: Scalar,
    pub high: Scalar,
    #[serde(default)]
    pub single_edge: Option<bool>,
    #[serde(default)]
    pub frequency: Option<Scalar>,
    #[serde(default)]
    pub duty: Option<Scalar>,
    #[serde(default)]
    pub rise_time: Option<Scalar>,
    #[serde(default)]
    pub fall_time: Option<Scalar>,
    #[serde(default)]
    pub slew_rate: Option<Scalar>,
    #[serde(default)]
    pub harmonics_to: Option<Scalar>,
    #[serde(default)]
    pub max_error: Option<Scalar>,
    #[serde(default)]
    pub reading: Option<Scalar>,
    #[serde(default)]
    pub blanking: Option<Scalar>,
    #[serde(default)]
    pub sample: Option<RawSample>,
}

/// A converter's sampling window after an edge.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawSample {
    pub after: RawEdge,
    pub delay: Scalar,
    pub window: Scalar,
}

/// A switching edge.
#[derive(Debug, Clone, Copy, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum RawEdge {
    Rising,
    Falling,
}

/// What the design must achieve.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawRequirement {
    #[serde(default)]
    pub judged_on: Option<RawJudgement>,
    #[serde(default)]
    pub full_scale: Option<Scalar>,
    #[serde(default)]
    pub max_error: Option<Scalar>,
    #[serde(default)]
    pub min_cmrr: Vec<RawMinimumCmrr>,
}

/// Which total a requirement is judged on.
#[derive(Debug, Clone, Copy, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum RawJudgement {
    WorstCase,
    WorstCorner,
    Rss,
    Nominal,
}

/// A minimum CMRR at one frequency.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawMinimumCmrr {
    pub at: Scalar,
    pub cmrr: Scalar,
}

/// A value as written: text, or a YAML number turned into text.
#[derive(Debug, Clone, PartialEq)]
pub struct Scalar(pub String);

impl<'de> Deserialize<'de> for Scalar {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        deserializer.deserialize_any(ScalarVisitor)
    }
}

struct ScalarVisitor;

const SCALAR_EXPECTED: &str = "a value such as `10k ±0.1 %`, `4.7 nF`, `50 Hz` or `1 V rms`";

impl<'de> Visitor<'de> for ScalarVisitor {
    type Value = Scalar;

    fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
        f.write_str(SCALAR_EXPECTED)
    }

    fn visit_str<E: de::Error>(self, v: &str) -> Result<Scalar, E> {
        Ok(Scalar(v.to_string()))
    }

    fn visit_i64<E: de::Error>(self, v: i64) -> Result<Scalar, E> {
        Ok(Scalar(v.to_string()))
    }

    fn visit_u64<E: de::Error>(self, v: u64) -> Result<Scalar, E> {
        Ok(Scalar(v.to_string()))
    }

    fn visit_f64<E: de::Error>(self, v: f64) -> Result<Scalar, E> {
        Ok(Scalar(format!("{v}")))
    }
}

/// A per-leg value: one value for both legs, or `{p: …, n: …}`.
#[derive(Debug, Clone, PartialEq)]
pub enum PerLeg {
    /// The same nominal value for both legs (each within its own tolerance).
    Both(Scalar),
    /// A value for each leg.
    Each {
        /// The p (non-inverting side) leg.
        p: Scalar,
        /// The n (inverting side) leg.
        n: Scalar,
    },
}

impl<'de> Deserialize<'de> for PerLeg {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        deserializer.deserialize_any(PerLegVisitor)
    }
}

struct PerLegVisitor;

impl<'de> Visitor<'de> for PerLegVisitor {
    type Value = PerLeg;

    fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
        f.write_str(
            "one value for both legs (e.g. `1k ±1 %`) or a map `{p: …, n: …}` with a value per leg",
        )
    }

    fn visit_str<E: de::Error>(self, v: &str) -> Result<PerLeg, E> {
        ScalarVisitor.visit_str(v).map(PerLeg::Both)
    }

    fn visit_i64<E: de::Error>(self, v: i64) -> Result<PerLeg, E> {
        ScalarVisitor.visit_i64(v).map(PerLeg::Both)
    }

    fn visit_u64<E: de::Error>(self, v: u64) -> Result<PerLeg, E> {
        ScalarVisitor.visit_u64(v).map(PerLeg::Both)
    }

    fn visit_f64<E: de::Error>(self, v: f64) -> Result<PerLeg, E> {
        ScalarVisitor.visit_f64(v).map(PerLeg::Both)
    }

    fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<PerLeg, A::Error> {
        let mut p = None;
        let mut n = None;
        while let Some(key) = map.next_key::<String>()? {
            match key.as_str() {
                "p" if p.is_none() => p = Some(map.next_value::<Scalar>()?),
                "n" if n.is_none() => n = Some(map.next_value::<Scalar>()?),
                "p" | "n" => {
                    return Err(de::Error::duplicate_field(if key == "p" {
                        "p"
                    } else {
                        "n"
                    }))
                }
                other => return Err(de::Error::unknown_field(other, &["p", "n"])),
            }
        }
        match (p, n) {
            (Some(p), Some(n)) => Ok(PerLeg::Each { p, n }),
            (None, _) => Err(de::Error::missing_field("p")),
            (_, None) => Err(de::Error::missing_field("n")),
        }
    }
}

impl JsonSchema for Scalar {
    fn schema_name() -> std::borrow::Cow<'static, str> {
        "Quantity".into()
    }

    fn json_schema(_: &mut schemars::SchemaGenerator) -> schemars::Schema {
        schemars::json_schema!({
            "description": "A value as an engineer writes it: a number, an optional SI prefix, an optional unit, an optional form (rms, pk, pp) and tolerance, e.g. `10k ±0.1 %`, `4.7 nF`, `1 V rms`, `110 dB`, `50 Hz`.",
            "type": ["string", "number"]
        })
    }
}

impl JsonSchema for PerLeg {
    fn schema_name() -> std::borrow::Cow<'static, str> {
        "PerLegQuantity".into()
    }

    fn json_schema(generator: &mut schemars::SchemaGenerator) -> schemars::Schema {
        let one = generator.subschema_for::<Scalar>();
        schemars::json_schema!({
            "description": "One value for both legs (each within its own tolerance), or a value per leg: `{p: 51k, n: 62k}`.",
            "anyOf": [
                one,
                {
                    "type": "object",
                    "properties": {"p": one, "n": one},
                    "required": ["p", "n"],
                    "additionalProperties": false
                }
            ]
        })
    }
}

/// The budget file's JSON Schema (draft 2020-12), generated from the raw
/// schema types, as `cmrr schema` prints it.
pub fn budget_schema() -> String {
    let schema = schemars::schema_for!(RawBudget);
    let mut text = serde_json::to_string_pretty(&schema).expect("a schema serializes");
    text.push('\n');
    text
}
