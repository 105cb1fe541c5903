//! From the raw schema to the validated model: parse every value against
//! its field's dimension, check it is physical, check the chain's order,
//! and collect every problem with its position.

use super::error::Diagnostic;
use super::locate::SourceMap;
use super::raw::{
    PerLeg, RawBudget, RawCable, RawDifferenceAmp, RawInterference, RawJudgement, RawOpAmp,
    RawRequirement, RawSource, RawStage, Scalar,
};
use crate::model::{
    Amplitude, Budget, ErrorLimit, Interference, Judgement, MinimumCmrr, ParamId, Parameter,
    Parameters, Presentation, Requirement, Safety, Variation,
};
use crate::quantity::{parse_quantity, Dimension, Quantity};
use crate::stage::{DifferenceAmp, Leg, OpAmp, SourceImpedance, SourceNetwork, Stage, StageKind};

/// What the validator produced: the budget, or every problem found.
pub type Validated = Result<Budget, Vec<Diagnostic>>;

/// Validate a raw budget. `file` names it in messages; `map` gives positions.
pub fn validate(raw: RawBudget, file: &str, map: &SourceMap) -> Validated {
    let mut v = Validator {
        file,
        map,
        problems: Vec::new(),
        parameters: Parameters::new(),
    };
    let budget = v.budget(raw);
    if v.problems.is_empty() {
        Ok(budget)
    } else {
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
}

struct Validator<'a> {
    file: &'a str,
    map: &'a SourceMap,
    problems: Vec<Diagnostic>,
    parameters: Parameters,
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
        };
        if !ok {
            let (what, fix) = match range {
                Range::Positive => (
                    "above zero",
                    "give a positive value, or leave the field out when the part is absent",
                ),
                Range::NonNegative => ("zero or above", "give a value of zero or more"),
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
        Some(self.add_value(
            name,
            stage,
            path,
            quantity.value,
            quantity.tolerance,
            dimension,
        ))
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

    fn budget(&mut self, raw: RawBudget) -> Budget {
        if raw.name.trim().is_empty() {
            self.problem(
                "name",
                "the budget's name is empty",
                "give the design a name, e.g. `name: scale front end, rev B`",
            );
        }
        let chain = self.chain(&raw.chain);
        let requirement = raw.requirement.as_ref().and_then(|r| self.requirement(r));
        let full_scale = requirement.as_ref().and_then(|r| r.full_scale_volts);
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
        let has_points = !interference.is_empty()
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
            interference,
            requirement,
            extra_frequencies_hz,
            safety: Safety {
                patient_connected: raw.patient_connected.unwrap_or(false),
                mains_referenced: raw.mains_referenced.unwrap_or(false),
            },
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

    fn source(&mut self, raw: &RawSource, path: &str, stage: usize) -> Option<StageKind> {
        let problems_before = self.problems.len();
        let impedance = match (&raw.resistance, &raw.bridge_arm) {
            (Some(resistance), None) => {
                let [rp, rn] = self.leg_parts(
                    resistance,
                    &format!("{path}.resistance"),
                    Dimension::Resistance,
                    "source R",
                    stage,
                );
                let [cp, cn] = self.optional_leg_parts(
                    &raw.capacitance,
                    &format!("{path}.capacitance"),
                    Dimension::Capacitance,
                    "source C",
                    stage,
                );
                match (rp, rn) {
                    (Some(rp), Some(rn)) => Some([
                        SourceImpedance::Resistive {
                            resistance: rp,
                            capacitance: cp,
                        },
                        SourceImpedance::Resistive {
                            resistance: rn,
                            capacitance: cn,
                        },
                    ]),
                    _ => None,
                }
            }
            (None, Some(arm)) => {
                if raw.capacitance.is_some() {
                    self.problem(
                        &format!("{path}.capacitance"),
                        "`capacitance` is the parallel capacitance of a resistive source and does not apply to a bridge",
                        "remove `capacitance`, or describe the source with `resistance` instead of `bridge_arm`",
                    );
                }
                let arm_path = format!("{path}.bridge_arm");
                let arms = [
                    self.part(
                        arm,
                        &arm_path,
                        Dimension::Resistance,
                        "bridge arm (excitation to p)".into(),
                        stage,
                    ),
                    self.part(
                        arm,
                        &arm_path,
                        Dimension::Resistance,
                        "bridge arm (p to ground)".into(),
                        stage,
                    ),
                    self.part(
                        arm,
                        &arm_path,
                        Dimension::Resistance,
                        "bridge arm (excitation to n)".into(),
                        stage,
                    ),
                    self.part(
                        arm,
                        &arm_path,
                        Dimension::Resistance,
                        "bridge arm (n to ground)".into(),
                        stage,
                    ),
                ];
                match arms {
                    [Some(a), Some(b), Some(c), Some(d)] => Some([
                        SourceImpedance::BridgeNode {
                            upper_arm: a,
                            lower_arm: b,
                        },
                        SourceImpedance::BridgeNode {
                            upper_arm: c,
                            lower_arm: d,
                        },
                    ]),
                    _ => None,
                }
            }
            (Some(_), Some(_)) => {
                self.problem(
                    path,
                    "both `resistance` and `bridge_arm` are given; a source has one or the other",
                    "keep `bridge_arm` for a full bridge (each output node sees two arms in parallel), or `resistance` for any other source",
                );
                None
            }
            (None, None) => {
                self.problem(
                    path,
                    "the source impedance is missing",
                    "add `resistance: …` (per leg, e.g. `175 ±0.1 %` or `{p: 10k, n: 15k}`) or `bridge_arm: …` for a full bridge",
                );
                None
            }
        };
        let (cable, guard_drive) = match &raw.cable {
            Some(cable) => self.cable(cable, &format!("{path}.cable"), stage),
            None => ([None, None], 0.0),
        };
        let series = self.optional_leg_parts(
            &raw.series_resistance,
            &format!("{path}.series_resistance"),
            Dimension::Resistance,
            "series R",
            stage,
        );
        let filter = self.optional_leg_parts(
            &raw.filter_capacitance,
            &format!("{path}.filter_capacitance"),
            Dimension::Capacitance,
            "filter C",
            stage,
        );
        let input_r = self.optional_leg_parts(
            &raw.input_resistance,
            &format!("{path}.input_resistance"),
            Dimension::Resistance,
            "input R",
            stage,
        );
        let input_c = self.optional_leg_parts(
            &raw.input_capacitance,
            &format!("{path}.input_capacitance"),
            Dimension::Capacitance,
            "input C",
            stage,
        );
        let differential_capacitance = raw.differential_capacitance.as_ref().and_then(|c| {
            self.part(
                c,
                &format!("{path}.differential_capacitance"),
                Dimension::Capacitance,
                "differential C".into(),
                stage,
            )
        });
        let impedance = impedance?;
        if self.problems.len() > problems_before {
            return None;
        }
        let leg = |i: usize| Leg {
            source: impedance[i],
            cable_capacitance: cable[i],
            series_resistance: series[i],
            filter_capacitance: filter[i],
            input_resistance: input_r[i],
            input_capacitance: input_c[i],
        };
        Some(StageKind::SourceNetwork(SourceNetwork {
            legs: [leg(0), leg(1)],
            differential_capacitance,
            guard_drive,
        }))
    }

    /// The cable: capacitance per length (per leg) times length, and the
    /// guard drive.
    fn cable(&mut self, raw: &RawCable, path: &str, stage: usize) -> ([Option<ParamId>; 2], f64) {
        let length = self.quantity(
            &raw.length,
            &format!("{path}.length"),
            Dimension::Length,
            Range::Positive,
            false,
        );
        let guard = match &raw.guard_drive {
            Some(g) => {
                let guard_path = format!("{path}.guard_drive");
                match self.quantity(
                    g,
                    &guard_path,
                    Dimension::Fraction,
                    Range::NonNegative,
                    false,
                ) {
                    Some(q) if q.value > 1.0 => {
                        self.problem(&guard_path, format!("`{}` drives the shield beyond the common mode", g.0.trim()), "a guard drive lies between `0 %` (grounded shield) and `100 %` (perfect guard)");
                        0.0
                    }
                    Some(q) => q.value,
                    None => 0.0,
                }
            }
            None => 0.0,
        };
        let capacitance_path = format!("{path}.capacitance");
        let (p, n, p_path, n_path) = match &raw.capacitance {
            PerLeg::Both(s) => (s, s, capacitance_path.clone(), capacitance_path.clone()),
            PerLeg::Each { p, n } => (
                p,
                n,
                format!("{capacitance_path}.p"),
                format!("{capacitance_path}.n"),
            ),
        };
        let mut ids = [None, None];
        for (leg, (scalar, leg_path)) in [(p, p_path), (n, n_path)].into_iter().enumerate() {
            let per_length = self.quantity(
                scalar,
                &leg_path,
                Dimension::CapacitancePerLength,
                Range::Positive,
                true,
            );
            if let (Some(per_length), Some(length)) = (per_length, &length) {
                ids[leg] = Some(self.add_value(
                    format!("cable C ({})", if leg == 0 { "p" } else { "n" }),
                    stage,
                    &leg_path,
                    per_length.value * length.value,
                    per_length.tolerance,
                    Dimension::Capacitance,
                ));
            } else if matches!(raw.capacitance, PerLeg::Both(_)) {
                break;
            }
        }
        (ids, guard)
    }

    fn difference_amp(
        &mut self,
        raw: &RawDifferenceAmp,
        path: &str,
        stage: usize,
    ) -> Option<StageKind> {
        let problems_before = self.problems.len();
        let r1 = self.part(
            &raw.r1,
            &format!("{path}.r1"),
            Dimension::Resistance,
            "R1".into(),
            stage,
        );
        let r2 = self.part(
            &raw.r2,
            &format!("{path}.r2"),
            Dimension::Resistance,
            "R2".into(),
            stage,
        );
        let r3 = self.part(
            &raw.r3,
            &format!("{path}.r3"),
            Dimension::Resistance,
            "R3".into(),
            stage,
        );
        let r4 = self.part(
            &raw.r4,
            &format!("{path}.r4"),
            Dimension::Resistance,
            "R4".into(),
            stage,
        );
        let reference_resistance = raw.reference_resistance.as_ref().and_then(|r| {
            self.part(
                r,
                &format!("{path}.reference_resistance"),
                Dimension::Resistance,
                "Rref".into(),
                stage,
            )
        });
        let opamp = match &raw.opamp {
            Some(opamp) => self.opamp(opamp, &format!("{path}.opamp"), stage),
            None => OpAmp::default(),
        };
        if self.problems.len() > problems_before {
            return None;
        }
        Some(StageKind::DifferenceAmp(DifferenceAmp {
            r1: r1?,
            r2: r2?,
            r3: r3?,
            r4: r4?,
            reference_resistance,
            opamp,
        }))
    }

    fn opamp(&mut self, raw: &RawOpAmp, path: &str, stage: usize) -> OpAmp {
        let open_loop_gain = raw.open_loop_gain.as_ref().and_then(|g| {
            let gain_path = format!("{path}.open_loop_gain");
            let id = self.part(
                g,
                &gain_path,
                Dimension::Gain,
                "op-amp open-loop gain".into(),
                stage,
            )?;
            if self.parameters.get(id).nominal <= 1.0 {
                self.problem(
                    &gain_path,
                    format!(
                        "`{}` is not an op-amp's open-loop gain: it must exceed 1 V/V (0 dB)",
                        g.0.trim()
                    ),
                    "give the data-sheet DC gain, e.g. `120 dB` or `1M`",
                );
                return None;
            }
            Some(id)
        });
        let gain_bandwidth_hz = raw.gain_bandwidth.as_ref().and_then(|g| {
            self.part(
                g,
                &format!("{path}.gain_bandwidth"),
                Dimension::Frequency,
                "op-amp gain-bandwidth".into(),
                stage,
            )
        });
        let cmrr_reciprocal = raw.cmrr.as_ref().and_then(|c| {
            let cmrr_path = format!("{path}.cmrr");
            let q = self.quantity(c, &cmrr_path, Dimension::Decibels, Range::Positive, false)?;
            if q.value <= 1.0 {
                self.problem(
                    &cmrr_path,
                    format!(
                        "`{}` is not a usable CMRR: it must be above 0 dB",
                        c.0.trim()
                    ),
                    "give the data-sheet minimum, e.g. `100 dB`",
                );
                return None;
            }
            Some(self.parameters.add(Parameter {
                name: "op-amp CMRR".into(),
                stage,
                field: cmrr_path,
                nominal: 0.0,
                variation: Variation::SignedBound {
                    magnitude: 1.0 / q.value,
                },
                presentation: Presentation::ReciprocalCmrr,
            }))
        });
        let cmrr_corner_hz = raw.cmrr_corner.as_ref().and_then(|c| {
            let corner_path = format!("{path}.cmrr_corner");
            if raw.cmrr.is_none() {
                self.problem(
                    &corner_path,
                    "a CMRR corner is given without a CMRR",
                    "add `cmrr: …` (the DC minimum, e.g. `100 dB`) or remove `cmrr_corner`",
                );
                return None;
            }
            self.fixed(
                c,
                &corner_path,
                Dimension::Frequency,
                "op-amp CMRR corner".into(),
                stage,
            )
        });
        OpAmp {
            open_loop_gain,
            gain_bandwidth_hz,
            cmrr_reciprocal,
            cmrr_corner_hz,
        }
    }

    fn amplitude(&mut self, scalar: &Scalar, path: &str) -> Option<Amplitude> {
        let q = self.quantity(scalar, path, Dimension::Voltage, Range::Positive, false)?;
        Some(Amplitude {
            volts: q.value,
            form: q.form,
        })
    }

    fn interference(
        &mut self,
        raw: &RawInterference,
        path: &str,
        full_scale: Option<f64>,
    ) -> Option<Interference> {
        let frequency = self.quantity(
            &raw.frequency,
            &format!("{path}.frequency"),
            Dimension::Frequency,
            Range::NonNegative,
            false,
        );
        let amplitude_path = format!("{path}.amplitude");
        let amplitude = self.amplitude(&raw.amplitude, &amplitude_path);
        let (frequency, amplitude) = (frequency?, amplitude?);
        let text = raw.amplitude.0.trim();
        if frequency.value == 0.0 && amplitude.form.is_some() {
            self.problem(
                &amplitude_path,
                format!("`{text}` gives an rms, peak or peak-to-peak form to a DC common mode"),
                "write a DC common mode as a plain voltage, e.g. `2.5 V`",
            );
            return None;
        }
        if frequency.value > 0.0 && amplitude.form.is_none() {
            self.problem(&amplitude_path, format!("`{text}` does not say whether the alternating amplitude is rms, peak or peak-to-peak"), format!("write `{text} rms`, `{text} pk` or `{text} pp`"));
            return None;
        }
        let max_error = raw
            .max_error
            .as_ref()
            .and_then(|e| self.error_limit(e, &format!("{path}.max_error"), full_scale));
        if raw.name.trim().is_empty() {
            self.problem(
                &format!("{path}.name"),
                "the interference source has no name",
                "name it, e.g. `name: mains hum on the cable`",
            );
        }
        Some(Interference {
            name: raw.name.trim().to_string(),
            amplitude,
            frequency_hz: frequency.value,
            max_error,
        })
    }

    /// An allowed error: a voltage, or a fraction of full scale. The full
    /// scale is resolved later against the requirement.
    fn error_limit(
        &mut self,
        scalar: &Scalar,
        path: &str,
        full_scale: Option<f64>,
    ) -> Option<ErrorLimit> {
        if parse_quantity(&scalar.0, Dimension::Fraction).is_ok() {
            let q = self.quantity(scalar, path, Dimension::Fraction, Range::Positive, false)?;
            return Some(ErrorLimit::OfFullScale {
                fraction: q.value,
                full_scale_volts: full_scale.unwrap_or(f64::NAN),
            });
        }
        if let Err(error) = parse_quantity(&scalar.0, Dimension::Voltage) {
            self.problem(
                path,
                error.to_string(),
                "write a voltage referred to the input (e.g. `1 uV rms`, `0.5 uV`) or a fraction of full scale (e.g. `10 ppm`, `0.01 %`)",
            );
            return None;
        }
        let q = self.quantity(scalar, path, Dimension::Voltage, Range::Positive, false)?;
        Some(ErrorLimit::Volts(Amplitude {
            volts: q.value,
            form: q.form,
        }))
    }

    fn requirement(&mut self, raw: &RawRequirement) -> Option<Requirement> {
        let full_scale_volts = raw.full_scale.as_ref().and_then(|f| {
            let q = self.quantity(
                f,
                "requirement.full_scale",
                Dimension::Voltage,
                Range::Positive,
                false,
            )?;
            if q.form.is_some() {
                self.problem(
                    "requirement.full_scale",
                    "a full scale is the largest differential input, a plain voltage",
                    "write it without rms/pk/pp, e.g. `10 mV`",
                );
                return None;
            }
            Some(q.value)
        });
        let max_error = raw
            .max_error
            .as_ref()
            .and_then(|e| self.error_limit(e, "requirement.max_error", full_scale_volts));
        let min_cmrr = raw
            .min_cmrr
            .iter()
            .enumerate()
            .filter_map(|(i, point)| {
                let path = format!("requirement.min_cmrr[{i}]");
                let at = self.quantity(
                    &point.at,
                    &format!("{path}.at"),
                    Dimension::Frequency,
                    Range::NonNegative,
                    false,
                );
                let cmrr = self.quantity(
                    &point.cmrr,
                    &format!("{path}.cmrr"),
                    Dimension::Decibels,
                    Range::Positive,
                    false,
                );
                Some(MinimumCmrr {
                    frequency_hz: at?.value,
                    cmrr_db: 20.0 * cmrr?.value.log10(),
                })
            })
            .collect();
        Some(Requirement {
            judged_on: match raw.judged_on.unwrap_or(RawJudgement::WorstCase) {
                RawJudgement::WorstCase => Judgement::WorstCase,
                RawJudgement::Rss => Judgement::Rss,
                RawJudgement::Nominal => Judgement::Nominal,
            },
            min_cmrr,
            max_error,
            full_scale_volts,
        })
    }

    /// Cross-checks of error limits: a fraction of full scale needs a full
    /// scale, and an unqualified voltage limit cannot apply to an
    /// alternating source.
    fn check_error_limits(
        &mut self,
        raw: &[RawInterference],
        sources: &[Interference],
        requirement: Option<&Requirement>,
    ) {
        if raw.len() != sources.len() {
            return; // a source already failed validation
        }
        let full_scale = requirement.and_then(|r| r.full_scale_volts);
        let default_limit = requirement.and_then(|r| r.max_error);
        if let Some(ErrorLimit::OfFullScale { .. }) = default_limit {
            if full_scale.is_none() {
                self.problem("requirement.max_error", "the allowed error is a fraction of full scale, but no full scale is given", "add `full_scale: …` to the requirement (the largest differential input, e.g. `10 mV`), or give the error in volts");
            }
        }
        for (i, (raw_source, source)) in raw.iter().zip(sources).enumerate() {
            let own = raw_source.max_error.is_some();
            let path = if own {
                format!("interference[{i}].max_error")
            } else {
                "requirement.max_error".to_string()
            };
            match source.max_error.or(default_limit) {
                Some(ErrorLimit::OfFullScale { .. }) if own && full_scale.is_none() => {
                    self.problem(&path, "the allowed error is a fraction of full scale, but the requirement gives no full scale", "add `full_scale: …` to the requirement, or give the error in volts");
                }
                Some(ErrorLimit::Volts(limit))
                    if limit.form.is_none() && source.frequency_hz > 0.0 =>
                {
                    self.problem(&path, format!("the allowed error has no rms, peak or peak-to-peak form, but `{}` is alternating", source.name), "add the form, e.g. `1 uV rms` or `2 uV pp`");
                }
                _ => {}
            }
        }
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
