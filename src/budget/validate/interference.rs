//! Validation of interference sources and the requirement.

use super::{Range, Validator};
use crate::budget::raw::{
    RawInterference, RawJudgement, RawMeasurand, RawProduction, RawRequirement, RawShape, RawSweep,
    Scalar,
};
use crate::model::{
    Amplitude, ErrorLimit, Interference, Judgement, Measurand, MinimumCmrr, Production,
    Requirement, SweepRange,
};
use crate::quantity::{parse_quantity, Dimension, SpreadShape};

impl Validator<'_> {
    pub(super) fn amplitude(&mut self, scalar: &Scalar, path: &str) -> Option<Amplitude> {
        let q = self.quantity(scalar, path, Dimension::Voltage, Range::Positive, false)?;
        Some(Amplitude {
            volts: q.value,
            form: q.form,
        })
    }

    pub(super) fn interference(
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
    pub(super) fn error_limit(
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

    /// A voltage with no rms, peak or peak-to-peak form (a level, a full
    /// scale, a reading), read through `quantity` (its range, plausibility
    /// and no tolerance); a form is refused with the caller's `problem` and
    /// `fix`, which say what the field is. (`plain_voltage` is the stage
    /// fields' variant, of either sign, with one message for every slip.)
    pub(super) fn formless_voltage(
        &mut self,
        scalar: &Scalar,
        path: &str,
        range: Range,
        (problem, fix): (&str, &str),
    ) -> Option<f64> {
        let q = self.quantity(scalar, path, Dimension::Voltage, range, false)?;
        if q.form.is_some() {
            self.problem(path, problem, fix);
            return None;
        }
        Some(q.value)
    }

    pub(super) fn requirement(&mut self, raw: &RawRequirement) -> Option<Requirement> {
        let full_scale_volts = raw.full_scale.as_ref().and_then(|f| {
            self.formless_voltage(
                f,
                "requirement.full_scale",
                Range::Positive,
                (
                    "a full scale is the largest differential input, a plain voltage",
                    "write it without rms/pk/pp, e.g. `10 mV`",
                ),
            )
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
                RawJudgement::WorstCorner => Judgement::WorstCorner,
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
    pub(super) fn check_error_limits(
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
                Some(limit @ ErrorLimit::Volts(_))
                    if limit.allowed_conversion(&source.amplitude).is_none() =>
                {
                    let fix = if own {
                        "give the DC error as a plain voltage or rms/peak value, e.g. `50 uV`"
                            .to_string()
                    } else {
                        format!("give `{}` its own `max_error` as a plain voltage (e.g. `max_error: 50 uV`); a DC error's rms and peak are its magnitude", source.name)
                    };
                    self.problem(&path, format!("a peak-to-peak limit means nothing for `{}`, a DC source: a constant error does not swing", source.name), fix);
                }
                _ => {}
            }
        }
    }

    pub(super) fn measurand(&mut self, raw: &RawMeasurand) -> Option<Measurand> {
        let unit = raw.unit.trim().to_string();
        if unit.is_empty() {
            self.problem(
                "measurand.unit",
                "the measured quantity's unit is empty",
                "name it, e.g. `unit: kg`",
            );
            return None;
        }
        let volts_per_unit = match (&raw.volts_per_unit, &raw.bridge) {
            (Some(v), None) => {
                self.quantity(
                    v,
                    "measurand.volts_per_unit",
                    Dimension::Voltage,
                    Range::Positive,
                    false,
                )?
                .value
            }
            (None, Some(bridge)) => {
                let sensitivity = self.quantity(
                    &bridge.sensitivity,
                    "measurand.bridge.sensitivity",
                    Dimension::Gain,
                    Range::Positive,
                    false,
                );
                let excitation = self.quantity(
                    &bridge.excitation,
                    "measurand.bridge.excitation",
                    Dimension::Voltage,
                    Range::Positive,
                    false,
                );
                let capacity = self.quantity(
                    &bridge.capacity,
                    "measurand.bridge.capacity",
                    Dimension::Number,
                    Range::Positive,
                    false,
                );
                sensitivity?.value * excitation?.value / capacity?.value
            }
            _ => {
                self.problem(
                    "measurand",
                    "the measured quantity needs exactly one of `volts_per_unit` or `bridge`",
                    "give `volts_per_unit: 41 uV` (sensor output per unit), or `bridge: {sensitivity: 2 mV/V, excitation: 5 V, capacity: 50}`",
                );
                return None;
            }
        };
        Some(Measurand {
            unit,
            volts_per_unit,
        })
    }

    pub(super) fn sweep_range(&mut self, raw: &RawSweep) -> SweepRange {
        let frequency = |this: &mut Self, value: &Option<Scalar>, field: &str| {
            let q = this.quantity(
                value.as_ref()?,
                &format!("sweep.{field}"),
                Dimension::Frequency,
                Range::Positive,
                false,
            )?;
            Some(q.value)
        };
        let from_hz = frequency(self, &raw.from, "from");
        let to_hz = frequency(self, &raw.to, "to");
        if let (Some(from), Some(to)) = (from_hz, to_hz) {
            if to <= from {
                self.problem(
                    "sweep.to",
                    "the sweep's upper end is not above its lower end",
                    "write `from` below `to`, e.g. `from: 0.1 Hz, to: 1 MHz`",
                );
            }
        }
        if raw.points_per_decade == Some(0) {
            self.problem(
                "sweep.points_per_decade",
                "a sweep needs at least one point per decade",
                "give e.g. `points_per_decade: 20`",
            );
        }
        SweepRange {
            from_hz,
            to_hz,
            per_decade: raw.points_per_decade,
        }
    }

    pub(super) fn production(&mut self, raw: &RawProduction) -> Production {
        let default = Production::default();
        let sigmas = match raw.sigmas {
            Some(k) if !(k.is_finite() && k > 0.0) => {
                self.problem(
                    "production.sigmas",
                    format!("{k} is not a number of standard deviations"),
                    "give a positive number, e.g. `sigmas: 3`",
                );
                default.sigmas
            }
            Some(k) => k,
            None => default.sigmas,
        };
        Production {
            shape: match raw.distribution {
                Some(RawShape::Uniform) => SpreadShape::Uniform,
                Some(RawShape::Normal) => SpreadShape::Normal,
                Some(RawShape::Truncated) => SpreadShape::Truncated,
                None => default.shape,
            },
            sigmas,
        }
    }
}
