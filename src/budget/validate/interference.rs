//! Validation of interference sources and the requirement.

use super::{Range, Validator};
use crate::budget::raw::{
    RawBridgeRating, RawInterference, RawJudgement, RawMeasurand, RawProduction, RawRequirement,
    RawShape, RawSweep, RawTare, Scalar,
};
use crate::model::{
    Amplitude, BridgeExcitation, ErrorLimit, ExcitationRipple, Interference, Judgement, Measurand,
    MinimumCmrr, Production, Requirement, Sense, SweepRange, Tare,
};
use crate::quantity::{format_si, parse_quantity, AmplitudeForm, Dimension, SpreadShape};

/// The words that count a converter's codes in a limit.
const CODE_UNITS: [&str; 6] = ["lsb", "lsbs", "code", "codes", "count", "counts"];

/// How closely a stated full scale must agree with the measurand's rated
/// output (relative).
const FULL_SCALE_AGREEMENT: f64 = 1e-6;

/// `1 LSB`, `0.5 counts rms`, `0.005 kg`: a plain number, one unit word and
/// an optional rms/pk/pp form; `None` for anything else.
fn counted(text: &str) -> Option<(f64, String, Option<AmplitudeForm>)> {
    let end = text
        .find(|c: char| !(c.is_ascii_digit() || matches!(c, '.' | 'e' | 'E' | '+' | '-')))
        .unwrap_or(text.len());
    let amount: f64 = text[..end].trim().parse().ok()?;
    let mut words: Vec<&str> = text[end..].split_whitespace().collect();
    let form = match words.last().copied() {
        Some("rms") => Some(AmplitudeForm::Rms),
        Some("pk" | "peak") => Some(AmplitudeForm::Peak),
        Some("pp" | "p-p") => Some(AmplitudeForm::PeakToPeak),
        _ => None,
    };
    if form.is_some() {
        words.pop();
    }
    match words.as_slice() {
        [unit] => Some((amount, unit.to_string(), form)),
        _ => None,
    }
}

/// `excitation/2` → `Some(Some(0.5))`; `excitation/…` that is not a share
/// → `Some(None)`; anything else → `None`.
fn excitation_share(text: &str) -> Option<Option<f64>> {
    let rest = text.trim().strip_prefix("excitation")?.trim();
    if rest.is_empty() {
        return Some(Some(1.0));
    }
    let divisor = rest.strip_prefix('/')?.trim().parse::<f64>().ok();
    Some(
        divisor
            .filter(|d| d.is_finite() && *d >= 1.0)
            .map(|d| 1.0 / d),
    )
}

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
        let (raw_amplitude, amplitude_path) = match (&raw.amplitude, &raw.excitation_ripple) {
            (Some(a), None) => (a, format!("{path}.amplitude")),
            (None, Some(r)) => (r, format!("{path}.excitation_ripple")),
            (Some(_), Some(_)) => {
                self.problem(
                    &format!("{path}.excitation_ripple"),
                    "a source is either a common mode (`amplitude`) or a ripple on the bridge's excitation (`excitation_ripple`), not both",
                    "keep one: the common mode a ripple puts on the bridge follows from the excitation's wiring",
                );
                return None;
            }
            (None, None) => {
                self.problem(
                    path,
                    "the interference source has no amplitude",
                    "give `amplitude: 1 V rms` (a common mode), or `excitation_ripple: 5 mV rms` (a ripple on the bridge's excitation)",
                );
                return None;
            }
        };
        let amplitude = match (&raw.excitation_ripple, excitation_share(&raw_amplitude.0)) {
            (Some(_), _) => self.amplitude(raw_amplitude, &amplitude_path),
            (None, Some(share)) => self.excitation_amplitude(share, raw_amplitude, &amplitude_path),
            (None, None) => self.amplitude(raw_amplitude, &amplitude_path),
        };
        let (frequency, amplitude) = (frequency?, amplitude?);
        let text = raw_amplitude.0.trim();
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
        let frequency_drift = raw
            .frequency_drift
            .as_ref()
            .and_then(|d| self.frequency_drift(d, path, frequency.value))
            .unwrap_or(0.0);
        let tare = match &raw.tare {
            Some(t) => Some(self.tare(t, path, frequency.value, &amplitude)?),
            None => None,
        };
        let (amplitude, excitation_ripple) = match raw.excitation_ripple {
            Some(_) => {
                let ripple = self.excitation_ripple(amplitude, &amplitude_path)?;
                let common_mode = Amplitude {
                    volts: ripple.1,
                    form: amplitude.form,
                };
                (common_mode, Some(ripple.0))
            }
            None => (amplitude, None),
        };
        Some(Interference {
            name: raw.name.trim().to_string(),
            excitation_ripple,
            amplitude,
            frequency_hz: frequency.value,
            max_error,
            frequency_drift,
            tare,
        })
    }

    /// A ripple on the bridge's excitation, and the common mode it puts on
    /// the bridge's outputs (halfway up the bridge); needs a bridge
    /// measurand.
    fn excitation_ripple(
        &mut self,
        stated: Amplitude,
        path: &str,
    ) -> Option<(ExcitationRipple, f64)> {
        let Some(excitation) = self.measurand.as_ref().and_then(|m| m.excitation) else {
            if self.measurand_refused {
                return None;
            }
            self.problem(
                path,
                "a ripple on the excitation needs the bridge it excites, and the measurand names none",
                "add `measurand: {unit: …, bridge: {sensitivity: …, excitation: 5 V, capacity: …}}`, or give the ripple's common mode as `amplitude`",
            );
            return None;
        };
        let across_bridge_v = excitation.across_bridge(stated.volts);
        Some((
            ExcitationRipple {
                stated,
                across_bridge_v,
                differential_v: excitation.sensitivity * across_bridge_v,
            },
            excitation.point_up_the_bridge(stated.volts, 0.5),
        ))
    }

    /// A DC source's tare: how far its common mode may move from its value
    /// at calibration, in volts or as a fraction of the amplitude;
    /// refused on an alternating source, whose error no zero calibration
    /// removes.
    fn tare(
        &mut self,
        raw: &RawTare,
        path: &str,
        frequency_hz: f64,
        amplitude: &Amplitude,
    ) -> Option<Tare> {
        let at = format!("{path}.tare");
        if frequency_hz > 0.0 {
            self.problem(
                &at,
                "a tare removes a constant offset; the error an alternating source leaves changes sign with it and is not removed by a zero calibration",
                "remove `tare`, or use it on a DC source (`frequency: 0 Hz`)",
            );
            return None;
        }
        let field = format!("{at}.varies_by");
        let text = raw.varies_by.0.trim();
        let relative = text.ends_with('%') || text.ends_with("ppm");
        let varies_by_v = if relative {
            let share = self.quantity(
                &raw.varies_by,
                &field,
                Dimension::Fraction,
                Range::NonNegative,
                false,
            )?;
            share.value * amplitude.volts
        } else {
            self.quantity(
                &raw.varies_by,
                &field,
                Dimension::Voltage,
                Range::NonNegative,
                false,
            )?
            .value
        };
        Some(Tare { varies_by_v })
    }

    /// A source's frequency drift, a fraction below 50 %; refused on a DC
    /// source.
    fn frequency_drift(&mut self, raw: &Scalar, path: &str, frequency_hz: f64) -> Option<f64> {
        let at = format!("{path}.frequency_drift");
        let drift = self.quantity(raw, &at, Dimension::Fraction, Range::NonNegative, false)?;
        if frequency_hz == 0.0 {
            self.problem(
                &at,
                "a DC source has no frequency to drift",
                "remove `frequency_drift`, or give the source its frequency",
            );
            return None;
        }
        if drift.value >= 0.5 {
            self.problem(
                &at,
                format!("a drift of {} is not a frequency tolerance", raw.0.trim()),
                "give how far the frequency may stray either side, below 50 %, e.g. `frequency_drift: 1 %`",
            );
            return None;
        }
        Some(drift.value)
    }

    /// A DC common mode stated as a share of the measurand's bridge
    /// excitation (`excitation/2`).
    fn excitation_amplitude(
        &mut self,
        share: Option<f64>,
        raw: &Scalar,
        path: &str,
    ) -> Option<Amplitude> {
        let text = raw.0.trim();
        let Some(share) = share else {
            self.problem(
                path,
                format!("`{text}` is not a share of the excitation"),
                "write `excitation/2` (a bridge excited from ground: its common mode is half the excitation), or `excitation/N` with N a number from 1 up",
            );
            return None;
        };
        let Some(excitation) = self.measurand.as_ref().and_then(|m| m.excitation) else {
            if self.measurand_refused {
                return None;
            }
            self.problem(
                path,
                format!("`{text}` needs a bridge excitation, and the measurand names none"),
                "add `measurand: {unit: …, bridge: {sensitivity: …, excitation: 5 V, capacity: …}}`, or give the amplitude in volts",
            );
            return None;
        };
        Some(Amplitude {
            volts: excitation.point_up_the_bridge(excitation.volts, share),
            form: None,
        })
    }

    /// An allowed error: a voltage, a fraction of full scale, a number of
    /// the converter's codes (`1 LSB`, `2 counts`), or an amount of the
    /// measured quantity (`0.005 kg`). The full scale is resolved later
    /// against the requirement.
    pub(super) fn error_limit(
        &mut self,
        scalar: &Scalar,
        path: &str,
        full_scale: Option<f64>,
    ) -> Option<ErrorLimit> {
        let text = scalar.0.trim();
        if let Some((amount, unit, form)) = counted(text) {
            if CODE_UNITS.contains(&unit.to_ascii_lowercase().as_str()) {
                if !self.ends_in_converter {
                    self.problem(
                        path,
                        format!("`{text}` counts the converter's codes, but the chain does not end in a converter"),
                        "add the `adc` stage that ends the chain, or give the error in volts referred to the input (e.g. `1 uV rms`)",
                    );
                    return None;
                }
                if !(amount.is_finite() && amount > 0.0) {
                    self.problem(
                        path,
                        format!("`{text}` is not a positive number of codes"),
                        "give e.g. `1 LSB` or `0.5 LSB rms`",
                    );
                    return None;
                }
                return Some(ErrorLimit::Codes {
                    codes: amount,
                    form,
                });
            }
            if let Some(measurand) = &self.measurand {
                if unit == measurand.unit {
                    if !(amount.is_finite() && amount > 0.0) {
                        self.problem(
                            path,
                            format!("`{text}` is not a positive amount"),
                            format!("give e.g. `0.01 {unit}`"),
                        );
                        return None;
                    }
                    return Some(ErrorLimit::InMeasurand {
                        amount,
                        form,
                        volts_per_unit: measurand.volts_per_unit,
                    });
                }
            }
        }
        if parse_quantity(&scalar.0, Dimension::Fraction).is_ok() {
            let q = self.quantity(scalar, path, Dimension::Fraction, Range::Positive, false)?;
            return Some(ErrorLimit::OfFullScale {
                fraction: q.value,
                full_scale_volts: full_scale.unwrap_or(f64::NAN),
            });
        }
        if let Err(error) = parse_quantity(&scalar.0, Dimension::Voltage) {
            let in_units = match &self.measurand {
                Some(m) => format!(", in the measurand's unit (e.g. `0.01 {}`)", m.unit),
                None => String::new(),
            };
            let codes = if self.ends_in_converter {
                ", in the converter's codes (e.g. `1 LSB`)"
            } else {
                ""
            };
            self.problem(
                path,
                error.to_string(),
                format!("write a voltage referred to the input (e.g. `1 uV rms`, `0.5 uV`), a fraction of full scale (e.g. `10 ppm`, `0.01 %`){codes}{in_units}"),
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
        let stated = raw.full_scale.as_ref().and_then(|f| {
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
        let rated = self.measurand.as_ref().and_then(|m| m.full_scale_volts);
        if let (Some(stated), Some(rated)) = (stated, rated) {
            if (stated - rated).abs() > FULL_SCALE_AGREEMENT * rated {
                self.problem(
                    "requirement.full_scale",
                    format!(
                        "the full scale {} disagrees with the measurand's rated output {}",
                        format_si(stated, "V"),
                        format_si(rated, "V")
                    ),
                    "leave `full_scale` out (the measurand's rating sets it), or correct one of the two",
                );
            }
        }
        let full_scale_volts = stated.or(rated);
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
        let full_scale = requirement
            .and_then(|r| r.full_scale_volts)
            .or(self.measurand.as_ref().and_then(|m| m.full_scale_volts));
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
                    self.problem(&path, "the allowed error is a fraction of full scale, but neither the requirement nor the measurand gives a full scale", "add `full_scale: …` to the requirement, or a rating to the measurand (`bridge: {…}`, or `capacity` with `volts_per_unit`), or give the error in volts");
                }
                Some(ErrorLimit::Volts(limit))
                    if limit.form.is_none() && source.frequency_hz > 0.0 =>
                {
                    self.problem(&path, format!("the allowed error has no rms, peak or peak-to-peak form, but `{}` is alternating", source.name), "add the form, e.g. `1 uV rms` or `2 uV pp`");
                }
                Some(limit)
                    if limit
                        .allowed_conversion(&source.amplitude, Some(1.0))
                        .is_none() =>
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
        self.check_filter_covers(sources);
    }

    /// A response table is not extrapolated: every alternating source's
    /// band must lie within it.
    fn check_filter_covers(&mut self, sources: &[Interference]) {
        let Some(filter) = self.converter_filter.clone() else {
            return;
        };
        for (i, source) in sources.iter().enumerate() {
            if source.frequency_hz == 0.0 {
                continue;
            }
            let [lo, hi] = source.frequency_band();
            if let Err(error) = filter.worst_gain(lo, hi) {
                self.problem(
                    &format!("interference[{i}].frequency"),
                    format!("`{}`: {error}", source.name),
                    "extend the converter filter's table to cover the source's frequency (and its drift), or use a `sinc` filter",
                );
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
        let taken = CODE_UNITS.contains(&unit.to_ascii_lowercase().as_str())
            || ["%", "ppm", "V"].contains(&unit.as_str())
            || unit.split_whitespace().count() != 1;
        if taken {
            self.problem(
                "measurand.unit",
                format!("`{unit}` cannot name the measured quantity: limits already read it as codes, a fraction of full scale or a voltage, or it is more than one word"),
                "name the quantity's unit in one word, e.g. `unit: kg`, `unit: degC`, `unit: A`",
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
                if raw.capacity.is_some() {
                    self.problem(
                        "measurand.capacity",
                        "a bridge's capacity belongs in its rating",
                        "move `capacity` into `bridge: {…}`",
                    );
                    return None;
                }
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
                let leads = self.bridge_leads(bridge);
                let (sensitivity, excitation, capacity) =
                    (sensitivity?.value, excitation?.value, capacity?.value);
                let (lead_ohms, bridge_ohms, sense) = leads?;
                let excitation = BridgeExcitation {
                    volts: excitation,
                    sensitivity,
                    lead_ohms,
                    bridge_ohms,
                    sense,
                };
                let share = excitation.across_bridge(1.0);
                if !(share >= 1e-3 && excitation.low_end(1.0).is_finite()) {
                    self.problem(
                        "measurand.bridge.lead_resistance",
                        format!("leads of {} each would leave the bridge {} of its excitation", format_si(lead_ohms, "Ω"), crate::quantity::format_fraction(share)),
                        "give each excitation lead's resistance in ohms (a few ohms for tens of metres of cable), below the bridge's own",
                    );
                    return None;
                }
                let full_scale = excitation.full_scale_volts();
                return Some(Measurand {
                    unit,
                    volts_per_unit: full_scale / capacity,
                    full_scale_volts: Some(full_scale),
                    excitation: Some(excitation),
                });
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
        let full_scale_volts = match &raw.capacity {
            Some(c) => Some(
                self.quantity(
                    c,
                    "measurand.capacity",
                    Dimension::Number,
                    Range::Positive,
                    false,
                )?
                .value
                    * volts_per_unit,
            ),
            None => None,
        };
        Some(Measurand {
            unit,
            volts_per_unit,
            full_scale_volts,
            excitation: None,
        })
    }

    /// A bridge's excitation leads: each lead's resistance with the
    /// bridge's own (both or neither), and where the excitation is sensed
    /// (`local`, the default, or `remote`).
    fn bridge_leads(&mut self, bridge: &RawBridgeRating) -> Option<(f64, f64, Sense)> {
        let sense = match bridge.sense.as_deref().map(str::trim) {
            None | Some("local") => Sense::Local,
            Some("remote") => Sense::Remote,
            Some(other) => {
                self.problem(
                    "measurand.bridge.sense",
                    format!("`{other}` is not where an excitation is sensed"),
                    "write `sense: local` (held at the instrument, four wires) or `sense: remote` (held at the bridge through sense leads, six wires)",
                );
                return None;
            }
        };
        let ohms = |v: &mut Self, raw: &Option<Scalar>, field: &str, range: Range| {
            raw.as_ref().map(|r| {
                v.quantity(
                    r,
                    &format!("measurand.bridge.{field}"),
                    Dimension::Resistance,
                    range,
                    false,
                )
                .map(|q| q.value)
            })
        };
        let lead = ohms(
            self,
            &bridge.lead_resistance,
            "lead_resistance",
            Range::NonNegative,
        );
        let own = ohms(self, &bridge.resistance, "resistance", Range::Positive);
        match (lead, own) {
            (None, None) if bridge.sense.is_some() => {
                self.problem(
                    "measurand.bridge.sense",
                    "where the excitation is sensed matters only through the leads' resistance, and none is given",
                    "add `lead_resistance: 1.5 Ω` (each excitation lead) and `resistance: 350 Ω` (the bridge's input), or remove `sense`",
                );
                None
            }
            (None, None) => Some((0.0, 0.0, sense)),
            (Some(lead), Some(own)) => Some((lead?, own?, sense)),
            (Some(_), None) => {
                self.problem(
                    "measurand.bridge.lead_resistance",
                    "the leads' share of the excitation needs the bridge's own resistance",
                    "add `resistance: 350 Ω` (the bridge's input resistance) beside `lead_resistance`",
                );
                None
            }
            (None, Some(_)) => {
                self.problem(
                    "measurand.bridge.resistance",
                    "the bridge's resistance is used only with the leads' resistance, and none is given",
                    "add `lead_resistance: 1.5 Ω` (each excitation lead), or remove `resistance`",
                );
                None
            }
        }
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
