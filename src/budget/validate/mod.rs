//! From the raw schema to the validated model: parse every value against
//! its field's dimension, check it is physical, check the chain's order,
//! and collect every problem with its position.

mod amplifiers;
mod body;
mod filter;
mod interference;
mod pair;
mod source;
mod switching;
mod temperature;

use super::error::Diagnostic;
use super::locate::SourceMap;
use super::raw::{PerLeg, RawBudget, RawStage, Scalar};
use crate::engine::MAX_STAGES;

/// The most analysis frequencies (interference sources, required minima and
/// extra frequencies together) one budget may name: each is a full analysis
/// with its corner search at up to three temperatures.
pub const MAX_POINTS: usize = 1000;
use crate::model::{
    Budget, DigitalFilter, Interference, Measurand, ParamId, Parameter, Parameters, Presentation,
    Safety, Switching, TemperatureRange, Variation,
};
use crate::quantity::{parse_quantity, Dimension, Quantity};
use crate::stage::Stage;

/// What the validator produced: the budget, or every problem found.
pub type Validated = Result<Budget, Vec<Diagnostic>>;

/// Validate a raw budget. `file` names it in messages; `map` gives positions.
pub fn validate(raw: RawBudget, file: &str, map: &SourceMap) -> Validated {
    let mut v = Validator {
        file,
        map,
        problems: Vec::new(),
        parameters: Parameters::new(),
        temperature: None,
        measurand: None,
        converter_filter: None,
        converter_reference: None,
        measurand_refused: false,
        ends_in_converter: false,
    };
    if !v.bounded(&raw) {
        return Err(v.problems);
    }
    let budget = v.budget(raw);
    if v.problems.is_empty() {
        Ok(budget)
    } else {
        // Every problem, in the order of the file (those without a line
        // last, in the order found).
        v.problems.sort_by_key(|d| {
            d.position
                .map_or((usize::MAX, usize::MAX), |p| (p.line, p.column))
        });
        Err(v.problems)
    }
}

/// How a value's sign is constrained.
#[derive(Clone, Copy, PartialEq)]
enum Range {
    /// Strictly above zero.
    Positive,
    /// Zero or above.
    NonNegative,
    /// Any finite value, of either sign (a level).
    Any,
}

struct Validator<'a> {
    file: &'a str,
    map: &'a SourceMap,
    problems: Vec<Diagnostic>,
    parameters: Parameters,
    /// The budget's temperature range, read before the chain.
    temperature: Option<TemperatureRange>,
    /// The measured quantity, read before the requirement and the sources
    /// (their limits and amplitudes may be stated in its terms).
    measurand: Option<Measurand>,
    /// The digital filter of the converter ending the chain, when it
    /// states one.
    converter_filter: Option<DigitalFilter>,
    /// The converter's reference when taken from the excitation, with the
    /// field that asked for it (checked against the measurand later).
    converter_reference: Option<(crate::model::RatiometricReference, String)>,
    /// Whether the file states a measurand that was refused: what depends
    /// on it is then not refused a second time.
    measurand_refused: bool,
    /// Whether the chain ends in a converter (a limit may then be stated
    /// in its codes).
    ends_in_converter: bool,
}

impl Validator<'_> {
    fn problem(&mut self, path: &str, problem: impl Into<String>, fix: impl Into<String>) {
        let fix = fix.into();
        self.problems.push(Diagnostic {
            file: self.file.to_string(),
            position: self.map.locate(path),
            field: Some(path.to_string()),
            problem: problem.into(),
            fix: (!fix.is_empty()).then_some(fix),
            source_line: None,
        });
    }

    /// Parse a value of a dimension, checking its range. A tolerance is
    /// refused unless `tolerance_allowed`.
    fn quantity(
        &mut self,
        scalar: &Scalar,
        path: &str,
        dimension: Dimension,
        range: Range,
        tolerance_allowed: bool,
    ) -> Option<Quantity> {
        let quantity = match parse_quantity(&scalar.0, dimension) {
            Ok(q) => q,
            Err(error) => {
                self.problem(path, error.to_string(), error.fix());
                return None;
            }
        };
        let ok = match range {
            Range::Positive => quantity.value > 0.0,
            Range::NonNegative => quantity.value >= 0.0,
            Range::Any => true,
        };
        if !ok {
            let (what, fix) = match range {
                Range::Positive => (
                    "above zero",
                    "give a positive value, or leave the field out when the part is absent",
                ),
                Range::NonNegative | Range::Any => {
                    ("zero or above", "give a value of zero or more")
                }
            };
            self.problem(
                path,
                format!(
                    "`{}` is not physical here: a {dimension} must be {what}",
                    scalar.0.trim()
                ),
                fix,
            );
            return None;
        }
        if !self.plausible(scalar, path, dimension, quantity.value) {
            return None;
        }
        if let Some(t) = quantity.tolerance.filter(|t| *t != 0.0 && *t < 1e-12) {
            self.problem(
                path,
                format!(
                    "`{}` has a tolerance of {t:e}, below the 1e-12 (0.000001 ppm) any part is made to",
                    scalar.0.trim()
                ),
                "write the tolerance as a part's data sheet states it, e.g. `±0.01 %` or `±5 ppm`",
            );
            return None;
        }
        if quantity.tolerance.is_some() && !tolerance_allowed {
            self.problem(
                path,
                format!(
                    "`{}` has a tolerance, but this field takes a single value",
                    scalar.0.trim()
                ),
                "remove the `±…` part",
            );
            return None;
        }
        Some(quantity)
    }

    /// Whether `value` (of `dimension`, as parsed from `scalar`) lies in the
    /// plausible range of its kind ([`Dimension::plausible`]); a problem
    /// naming the range otherwise. Zero passes: the field's own range rule
    /// decides it.
    fn plausible(&mut self, scalar: &Scalar, path: &str, dimension: Dimension, value: f64) -> bool {
        let (low, high) = dimension.plausible();
        let magnitude = value.abs();
        if value == 0.0 || (low..=high).contains(&magnitude) {
            return true;
        }
        let symbol = dimension.symbol();
        let shown = |v: f64| match dimension {
            Dimension::Decibels => format!("{:.0} dB", 20.0 * v.log10()),
            Dimension::Fraction => crate::quantity::format_fraction(v),
            Dimension::TemperatureCoefficient => format!("{} ppm/K", v * 1e6),
            _ => crate::quantity::format_si(v, symbol),
        };
        self.problem(
            path,
            format!(
                "`{}` is outside what a {dimension} in a front end can be ({} to {} in magnitude)",
                scalar.0.trim(),
                shown(low),
                shown(high)
            ),
            "check the prefix and the exponent (`10k`, not `10e300`); the README lists these ranges",
        );
        false
    }

    /// Register a circuit part (a toleranced value) as a parameter.
    fn part(
        &mut self,
        scalar: &Scalar,
        path: &str,
        dimension: Dimension,
        name: String,
        stage: usize,
    ) -> Option<ParamId> {
        let quantity = self.quantity(scalar, path, dimension, Range::Positive, true)?;
        let id = self.add_value(
            name,
            stage,
            path,
            quantity.value,
            quantity.tolerance,
            dimension,
        );
        self.parameters.set_shape(id, quantity.distribution);
        Some(id)
    }

    /// A fixed (untoleranced) parameter.
    fn fixed(
        &mut self,
        scalar: &Scalar,
        path: &str,
        dimension: Dimension,
        name: String,
        stage: usize,
    ) -> Option<ParamId> {
        let quantity = self.quantity(scalar, path, dimension, Range::Positive, false)?;
        Some(self.add_value(name, stage, path, quantity.value, None, dimension))
    }

    /// Add a value parameter; a zero or absent tolerance makes it fixed.
    fn add_value(
        &mut self,
        name: String,
        stage: usize,
        path: &str,
        nominal: f64,
        tolerance: Option<f64>,
        dimension: Dimension,
    ) -> ParamId {
        self.parameters.add(Parameter {
            name,
            stage,
            field: path.to_string(),
            nominal,
            variation: tolerance
                .filter(|t| *t > 0.0)
                .map_or(Variation::Fixed, |tolerance| Variation::Relative {
                    tolerance,
                }),
            presentation: Presentation::Value(dimension),
            shape: None,
        })
    }

    /// A per-leg part: one parameter per leg.
    fn leg_parts(
        &mut self,
        value: &PerLeg,
        path: &str,
        dimension: Dimension,
        name: &str,
        stage: usize,
    ) -> [Option<ParamId>; 2] {
        let (p, n, p_path, n_path) = match value {
            PerLeg::Both(s) => (s, s, path.to_string(), path.to_string()),
            PerLeg::Each { p, n } => (p, n, format!("{path}.p"), format!("{path}.n")),
        };
        let p_id = self.part(p, &p_path, dimension, format!("{name} (p)"), stage);
        // One problem per field is enough when both legs share the text.
        if p_id.is_none() && matches!(value, PerLeg::Both(_)) {
            return [None, None];
        }
        let n_id = self.part(n, &n_path, dimension, format!("{name} (n)"), stage);
        [p_id, n_id]
    }

    fn optional_leg_parts(
        &mut self,
        value: &Option<PerLeg>,
        path: &str,
        dimension: Dimension,
        name: &str,
        stage: usize,
    ) -> [Option<ParamId>; 2] {
        match value {
            Some(value) => self.leg_parts(value, path, dimension, name, stage),
            None => [None, None],
        }
    }

    /// Refuse a budget whose lists would make an unbounded run: more
    /// analysis points (interference sources, required minima, extra
    /// frequencies) than [`MAX_POINTS`]. Returns whether it is within.
    fn bounded(&mut self, raw: &RawBudget) -> bool {
        let lists = [
            ("interference", raw.interference.len()),
            ("switching", raw.switching.len()),
            ("extra_frequencies", raw.extra_frequencies.len()),
            (
                "requirement.min_cmrr",
                raw.requirement.as_ref().map_or(0, |r| r.min_cmrr.len()),
            ),
        ];
        let total: usize = lists.iter().map(|(_, n)| n).sum();
        if total <= MAX_POINTS {
            return true;
        }
        let (field, count) = lists
            .iter()
            .max_by_key(|(_, n)| *n)
            .copied()
            .unwrap_or(("interference", total));
        self.problem(
            field,
            format!("the budget names {total} analysis frequencies ({count} here), more than the {MAX_POINTS} one run takes"),
            "name the frequencies that matter (interference sources, required minima), and use `cmrr sweep` for a curve",
        );
        false
    }

    fn budget(&mut self, raw: RawBudget) -> Budget {
        if raw.name.trim().is_empty() {
            self.problem(
                "name",
                "the budget's name is empty",
                "give the design a name, e.g. `name: scale front end, rev B`",
            );
        }
        self.temperature = raw
            .temperature
            .as_ref()
            .and_then(|t| self.temperature_range(t));
        let chain = self.chain(&raw.chain);
        self.measurand = raw.measurand.as_ref().and_then(|m| self.measurand(m));
        self.measurand_refused = raw.measurand.is_some() && self.measurand.is_none();
        self.check_reference_source();
        let requirement = raw.requirement.as_ref().and_then(|r| self.requirement(r));
        let full_scale = requirement
            .as_ref()
            .and_then(|r| r.full_scale_volts)
            .or(self.measurand.as_ref().and_then(|m| m.full_scale_volts));
        let interference: Vec<Interference> = raw
            .interference
            .iter()
            .enumerate()
            .filter_map(|(i, source)| {
                self.interference(source, &format!("interference[{i}]"), full_scale)
            })
            .collect();
        let extra_frequencies_hz: Vec<f64> = raw
            .extra_frequencies
            .iter()
            .enumerate()
            .filter_map(|(i, f)| {
                self.quantity(
                    f,
                    &format!("extra_frequencies[{i}]"),
                    Dimension::Frequency,
                    Range::NonNegative,
                    false,
                )
                .map(|q| q.value)
            })
            .collect();
        self.check_error_limits(&raw.interference, &interference, requirement.as_ref());
        let switching: Vec<Switching> = raw
            .switching
            .iter()
            .enumerate()
            .filter_map(|(i, source)| {
                self.switching(source, &format!("switching[{i}]"), requirement.as_ref())
            })
            .collect();
        let has_points = !interference.is_empty()
            || !switching.is_empty()
            || !extra_frequencies_hz.is_empty()
            || requirement.as_ref().is_some_and(|r| !r.min_cmrr.is_empty());
        if !has_points && self.problems.is_empty() {
            self.problem(
                "interference",
                "there is nothing to analyse: no interference source, no required CMRR and no extra frequency",
                "add an interference source, e.g. `interference: [{name: mains hum, amplitude: 1 V rms, frequency: 50 Hz}]`",
            );
        }
        Budget {
            name: raw.name.trim().to_string(),
            notes: raw.notes.clone(),
            chain,
            parameters: std::mem::take(&mut self.parameters),
            null_trim: None,
            interference,
            switching,
            requirement,
            extra_frequencies_hz,
            safety: Safety {
                patient_connected: raw.patient_connected.unwrap_or(false),
                mains_referenced: raw.mains_referenced.unwrap_or(false),
            },
            temperature: self.temperature,
            measurand: self.measurand.take(),
            digital_filter: self.converter_filter.take(),
            ratiometric_reference: self.converter_reference.take().map(|r| r.0),
            sweep: raw
                .sweep
                .as_ref()
                .map(|s| self.sweep_range(s))
                .unwrap_or_default(),
            production: raw
                .production
                .as_ref()
                .map(|p| self.production(p))
                .unwrap_or_default(),
        }
    }

    fn chain(&mut self, raw: &[RawStage]) -> Vec<Stage> {
        if raw.is_empty() {
            self.problem(
                "chain",
                "the chain is empty",
                "list the stages from the sensor on, e.g. a `source` then a `difference_amp`",
            );
            return Vec::new();
        }
        if raw.len() > MAX_STAGES {
            self.problem(
                "chain",
                format!(
                    "the chain has {} stages; at most {MAX_STAGES} are supported",
                    raw.len()
                ),
                "merge stages, or split the budget in two",
            );
            return Vec::new();
        }
        let mut stages = Vec::new();
        for (index, stage) in raw.iter().enumerate() {
            let path = format!("chain[{index}]");
            let built = match stage {
                RawStage::Source(source) => {
                    if index != 0 {
                        self.problem(
                            &format!("{path}.source"),
                            format!("a source network cannot follow an amplifier (it is stage {} of the chain)", index + 1),
                            "put the source network first: it describes what drives the first amplifier",
                        );
                    }
                    self.source(source, &format!("{path}.source"), index)
                        .map(|s| (s, source.label.clone(), "source network"))
                }
                RawStage::DifferenceAmp(amp) => self
                    .difference_amp(amp, &format!("{path}.difference_amp"), index)
                    .map(|s| (s, amp.label.clone(), "difference amplifier")),
                RawStage::ThreeOpampInamp(amp) => self
                    .three_opamp_inamp(amp, &format!("{path}.three_opamp_inamp"), index)
                    .map(|s| (s, amp.label.clone(), "instrumentation amplifier")),
                RawStage::DifferentialPair(pair) => self
                    .differential_pair(pair, &format!("{path}.differential_pair"), index)
                    .map(|s| (s, pair.label.clone(), "differential pair")),
                RawStage::IntegratedInamp(amp) => self
                    .integrated_inamp(amp, &format!("{path}.integrated_inamp"), index)
                    .map(|s| (s, amp.label.clone(), "integrated in-amp")),
                RawStage::Adc(adc) => {
                    if index + 1 != raw.len() {
                        self.problem(
                            &format!("{path}.adc"),
                            format!(
                                "a converter must be the last stage, but stage {} follows it",
                                index + 2
                            ),
                            "move the `adc` to the end of the chain",
                        );
                    }
                    self.ends_in_converter = true;
                    self.adc(adc, &format!("{path}.adc"), index)
                        .map(|s| (s, adc.label.clone(), "converter"))
                }
            };
            if let Some((kind, label, default_label)) = built {
                let label = label
                    .map(|l| l.trim().to_string())
                    .filter(|l| !l.is_empty())
                    .unwrap_or_else(|| default_label.to_string());
                stages.push(Stage { label, kind });
            }
        }
        if !raw.iter().any(|s| !matches!(s, RawStage::Source(_))) {
            self.problem(
                "chain",
                "the chain has no amplifier: a source network alone has no output to measure",
                "add an amplifier stage after the source, e.g. `- difference_amp: {r1: 10k, r2: 100k, r3: 10k, r4: 100k}`",
            );
        }
        disambiguate_labels(&mut stages);
        stages
    }
}

/// Number repeated default labels: `difference amplifier 1`, `… 2`.
fn disambiguate_labels(stages: &mut [Stage]) {
    let labels: Vec<String> = stages.iter().map(|s| s.label.clone()).collect();
    let mut seen = std::collections::HashMap::<String, usize>::new();
    for (stage, label) in stages.iter_mut().zip(&labels) {
        if labels.iter().filter(|l| *l == label).count() > 1 {
            let count = seen.entry(label.clone()).or_insert(0);
            *count += 1;
            stage.label = format!("{label} {count}");
        }
    }
}
