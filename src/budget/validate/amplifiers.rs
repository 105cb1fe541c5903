//! Validation of the op-amp based amplifier stages and the integrated
//! instrumentation amplifier.

use super::{Range, Validator};
use crate::budget::raw::{
    PerLeg, RawAdc, RawCmrrAtGain, RawDifferenceAmp, RawIntegratedInAmp, RawOpAmp,
    RawThreeOpAmpInAmp, Scalar,
};
use crate::model::{ParamId, Parameter, Presentation, Variation};
use crate::quantity::{format_si, Dimension};
use crate::stage::{
    Adc, DifferenceAmp, GainSetting, IntegratedInAmp, OpAmp, PinShunt, StageKind, ThreeOpAmpInAmp,
    VoltageRange,
};

impl Validator<'_> {
    pub(super) fn difference_amp(
        &mut self,
        raw: &RawDifferenceAmp,
        path: &str,
        stage: usize,
    ) -> Option<StageKind> {
        self.four_resistor_stage(raw, path, stage, "op-amp")
            .map(StageKind::DifferenceAmp)
    }

    /// R1 to R4, the reference resistance and the op-amp (named `who`).
    fn four_resistor_stage(
        &mut self,
        raw: &RawDifferenceAmp,
        path: &str,
        stage: usize,
        who: &str,
    ) -> Option<DifferenceAmp> {
        let problems_before = self.problems.len();
        let resistor = |this: &mut Self, scalar: &Scalar, field: &str, name: &str| {
            this.part(
                scalar,
                &format!("{path}.{field}"),
                Dimension::Resistance,
                name.into(),
                stage,
            )
        };
        let set = self.resistor_set(raw.tcr.as_ref(), raw.network.as_ref(), path, stage);
        let drifting = |this: &mut Self, scalar: &Scalar, field: &str, name: &str| {
            this.set_resistor(scalar, &format!("{path}.{field}"), name, stage, set)
        };
        let r1 = drifting(self, &raw.r1, "r1", "R1");
        let r2 = drifting(self, &raw.r2, "r2", "R2");
        let r3 = drifting(self, &raw.r3, "r3", "R3");
        let r4 = drifting(self, &raw.r4, "r4", "R4");
        let reference_resistance = raw
            .reference_resistance
            .as_ref()
            .and_then(|r| resistor(self, r, "reference_resistance", "Rref"));
        let opamp = match &raw.opamp {
            Some(opamp) => self.opamp(opamp, &format!("{path}.opamp"), stage, who),
            None => OpAmp::default(),
        };
        let reference_voltage = self.reference_voltage(raw.reference_voltage.as_ref(), path);
        if self.problems.len() > problems_before {
            return None;
        }
        Some(DifferenceAmp {
            r1: r1?,
            r2: r2?,
            r3: r3?,
            r4: r4?,
            reference_resistance,
            reference_voltage,
            opamp,
        })
    }

    pub(super) fn three_opamp_inamp(
        &mut self,
        raw: &RawThreeOpAmpInAmp,
        path: &str,
        stage: usize,
    ) -> Option<StageKind> {
        let problems_before = self.problems.len();
        let set = self.resistor_set(raw.tcr.as_ref(), None, path, stage);
        let resistor = |this: &mut Self, scalar: &Scalar, field: &str, name: &str| {
            this.set_resistor(scalar, &format!("{path}.{field}"), name, stage, set)
        };
        let rg = resistor(self, &raw.rg, "rg", "RG");
        let rf1 = resistor(self, &raw.rf1, "rf1", "RF1");
        let rf2 = resistor(self, &raw.rf2, "rf2", "RF2");
        let pins = self.pins(&raw.input_resistance, &raw.input_capacitance, path, stage);
        let opamp_path = format!("{path}.first_stage_opamps");
        let first_stage = match &raw.first_stage_opamps {
            Some(opamp) => [
                self.opamp(opamp, &opamp_path, stage, "A1"),
                self.opamp(opamp, &opamp_path, stage, "A2"),
            ],
            None => [OpAmp::default(); 2],
        };
        let difference_path = format!("{path}.difference_stage");
        if raw.difference_stage.label.is_some() {
            self.problem(
                &format!("{difference_path}.label"),
                "the difference stage inside an instrumentation amplifier takes no label of its own",
                "label the whole amplifier instead, one level up",
            );
        }
        let difference_stage =
            self.four_resistor_stage(&raw.difference_stage, &difference_path, stage, "A3");
        if self.problems.len() > problems_before {
            return None;
        }
        Some(StageKind::ThreeOpAmpInAmp(ThreeOpAmpInAmp {
            rg: rg?,
            rf1: rf1?,
            rf2: rf2?,
            first_stage,
            pins,
            difference_stage: difference_stage?,
        }))
    }

    pub(super) fn integrated_inamp(
        &mut self,
        raw: &RawIntegratedInAmp,
        path: &str,
        stage: usize,
    ) -> Option<StageKind> {
        let problems_before = self.problems.len();
        let gain = self.gain_setting(raw, path, stage);
        let pins = self.pins(&raw.input_resistance, &raw.input_capacitance, path, stage);
        let nominal_gain = gain.map(|g| match g {
            GainSetting::Direct(id) => self.parameters.get(id).nominal,
            GainSetting::Resistor {
                rg,
                base,
                constant_ohms,
            } => base + constant_ohms / self.parameters.get(rg).nominal,
        });
        let cmrr_db = match (&raw.cmrr, raw.cmrr_by_gain.is_empty()) {
            (Some(cmrr), true) => self.cmrr_db(cmrr, &format!("{path}.cmrr")),
            (None, false) => {
                nominal_gain.and_then(|g| self.cmrr_at_gain(&raw.cmrr_by_gain, g, path))
            }
            (Some(_), false) => {
                self.problem(
                    path,
                    "both `cmrr` and `cmrr_by_gain` are given",
                    "keep one: a single DC minimum, or a table of minimum CMRR against gain",
                );
                None
            }
            (None, true) => None,
        };
        let cmrr_reciprocal = cmrr_db.map(|db| self.cmrr_bound(db, path, stage, "in-amp CMRR"));
        let cmrr_corner_hz = self.cmrr_corner(
            raw.cmrr_corner.as_ref(),
            cmrr_reciprocal.is_some(),
            path,
            stage,
            "in-amp CMRR corner",
        );
        let bandwidth_hz = raw.bandwidth.as_ref().and_then(|b| {
            self.fixed(
                b,
                &format!("{path}.bandwidth"),
                Dimension::Frequency,
                "in-amp bandwidth".into(),
                stage,
            )
        });
        if self.problems.len() > problems_before {
            return None;
        }
        let input_range =
            self.voltage_range(raw.input_range.as_deref(), &format!("{path}.input_range"));
        let output_swing =
            self.voltage_range(raw.output_swing.as_deref(), &format!("{path}.output_swing"));
        Some(StageKind::IntegratedInAmp(IntegratedInAmp {
            gain: gain?,
            cmrr_reciprocal,
            cmrr_corner_hz,
            bandwidth_hz,
            pins,
            input_range,
            output_swing,
            reference_voltage: self.reference_voltage(raw.reference_voltage.as_ref(), path),
            input_bias_current: self.current(
                raw.input_bias_current.as_ref(),
                &format!("{path}.input_bias_current"),
            ),
            input_offset_current: self.current(
                raw.input_offset_current.as_ref(),
                &format!("{path}.input_offset_current"),
            ),
        }))
    }

    pub(super) fn adc(&mut self, raw: &RawAdc, path: &str, stage: usize) -> Option<StageKind> {
        let problems_before = self.problems.len();
        let span = self.quantity(
            &raw.span,
            &format!("{path}.span"),
            Dimension::Voltage,
            Range::Positive,
            false,
        );
        if !(1..=32).contains(&raw.bits) {
            self.problem(
                &format!("{path}.bits"),
                format!("{} bits is not a converter resolution", raw.bits),
                "give the resolution in bits, from 1 to 32",
            );
        }
        let pins = self.pins(&raw.input_resistance, &raw.input_capacitance, path, stage);
        if let Some(filter) = &raw.filter {
            self.converter_filter = self.digital_filter(filter, &format!("{path}.filter"));
        }
        if let Some(reference) = &raw.reference {
            self.converter_reference = self.converter_reference(reference, path);
        }
        let cmrr_reciprocal = raw.cmrr.as_ref().and_then(|c| {
            let db = self.cmrr_db(c, &format!("{path}.cmrr"))?;
            Some(self.cmrr_bound(db, path, stage, "converter CMRR"))
        });
        let cmrr_corner_hz = self.cmrr_corner(
            raw.cmrr_corner.as_ref(),
            cmrr_reciprocal.is_some(),
            path,
            stage,
            "converter CMRR corner",
        );
        if self.problems.len() > problems_before {
            return None;
        }
        let span = span?;
        if span.form.is_some() {
            self.problem(
                &format!("{path}.span"),
                "a converter's span is a plain voltage",
                "write the full differential span, e.g. `5 V` for ±2.5 V",
            );
            return None;
        }
        Some(StageKind::Adc(Adc {
            cmrr_reciprocal,
            cmrr_corner_hz,
            pins,
            span_volts: span.value,
            bits: raw.bits,
        }))
    }

    /// A data-sheet current (a bias or offset current), in amperes.
    fn current(&mut self, raw: Option<&Scalar>, path: &str) -> Option<f64> {
        self.quantity(raw?, path, Dimension::Current, Range::NonNegative, false)
            .map(|q| q.value)
    }

    /// A `[low, high]` voltage range.
    /// A plain DC voltage of either sign (no amplitude form, no
    /// tolerance); a problem naming `fix` otherwise.
    pub(super) fn plain_voltage(&mut self, raw: &Scalar, path: &str, fix: &str) -> Option<f64> {
        match crate::quantity::parse_quantity(&raw.0, Dimension::Voltage) {
            Ok(q) if q.form.is_none() && q.tolerance.is_none() => self
                .plausible(raw, path, Dimension::Voltage, q.value)
                .then_some(q.value),
            Ok(_) => {
                self.problem(
                    path,
                    format!("`{}` is not a plain voltage", raw.0.trim()),
                    fix,
                );
                None
            }
            Err(error) => {
                self.problem(path, error.to_string(), error.fix());
                None
            }
        }
    }

    /// A stage's `reference_voltage`, 0 V when absent.
    fn reference_voltage(&mut self, raw: Option<&Scalar>, path: &str) -> f64 {
        raw.and_then(|raw| {
            self.plain_voltage(
                raw,
                &format!("{path}.reference_voltage"),
                "write the DC voltage at the reference pin against ground, e.g. `2.5 V`",
            )
        })
        .unwrap_or(0.0)
    }

    pub(super) fn voltage_range(
        &mut self,
        raw: Option<&[Scalar]>,
        path: &str,
    ) -> Option<VoltageRange> {
        let raw = raw?;
        if raw.len() != 2 {
            self.problem(
                path,
                format!(
                    "a range has two voltages, low then high; {} given",
                    raw.len()
                ),
                "write e.g. `[-4.8 V, 4.8 V]`",
            );
            return None;
        }
        let mut ends = [0.0; 2];
        for (i, (end, text)) in ends.iter_mut().zip(raw).enumerate() {
            *end = self.plain_voltage(
                text,
                &format!("{path}[{i}]"),
                "write a DC voltage against ground, e.g. `-4.8 V`",
            )?;
        }
        if ends[0] >= ends[1] {
            self.problem(
                path,
                "the range's low end is not below its high end",
                "write `[low, high]`, e.g. `[-4.8 V, 4.8 V]`",
            );
            return None;
        }
        Some(VoltageRange {
            low: ends[0],
            high: ends[1],
        })
    }

    /// `gain`, or `gain_resistor` with `gain_law`.
    fn gain_setting(
        &mut self,
        raw: &RawIntegratedInAmp,
        path: &str,
        stage: usize,
    ) -> Option<GainSetting> {
        match (&raw.gain, &raw.gain_resistor, &raw.gain_law) {
            (Some(gain), None, None) => {
                let gain_path = format!("{path}.gain");
                let id = self.part(
                    gain,
                    &gain_path,
                    Dimension::Gain,
                    "in-amp gain".into(),
                    stage,
                )?;
                if self.parameters.get(id).nominal < 1.0 {
                    self.problem(&gain_path, format!("`{}` is below 1 V/V, which an instrumentation amplifier does not provide", gain.0.trim()), "give the configured gain, e.g. `100` or `40 dB`");
                    return None;
                }
                Some(GainSetting::Direct(id))
            }
            (None, Some(rg), Some(law)) => {
                let rg = self.part(
                    rg,
                    &format!("{path}.gain_resistor"),
                    Dimension::Resistance,
                    "RG".into(),
                    stage,
                );
                let base = self.quantity(
                    &law.base,
                    &format!("{path}.gain_law.base"),
                    Dimension::Gain,
                    Range::Positive,
                    false,
                );
                let constant = self.quantity(
                    &law.constant,
                    &format!("{path}.gain_law.constant"),
                    Dimension::Resistance,
                    Range::Positive,
                    false,
                );
                Some(GainSetting::Resistor {
                    rg: rg?,
                    base: base?.value,
                    constant_ohms: constant?.value,
                })
            }
            (None, Some(_), None) => {
                self.problem(path, "a gain resistor is given without the gain law that turns it into a gain", "add `gain_law: {base: 1, constant: …}` from the data sheet (G = base + constant/RG)");
                None
            }
            (None, None, Some(_)) => {
                self.problem(
                    path,
                    "a gain law is given without a gain resistor",
                    "add `gain_resistor: …`, or give `gain: …` directly",
                );
                None
            }
            (None, None, None) => {
                self.problem(path, "the gain is missing", "add `gain: …` (e.g. `100`), or `gain_resistor: …` with `gain_law: {base: 1, constant: …}`");
                None
            }
            (Some(_), _, _) => {
                self.problem(
                    &format!("{path}.gain"),
                    "the gain is given both directly and by a gain resistor",
                    "keep `gain`, or keep `gain_resistor` with `gain_law`",
                );
                None
            }
        }
    }

    /// The minimum CMRR at `gain` from a table, interpolated in dB against
    /// log gain.
    fn cmrr_at_gain(&mut self, table: &[RawCmrrAtGain], gain: f64, path: &str) -> Option<f64> {
        let mut rows = Vec::new();
        for (i, row) in table.iter().enumerate() {
            let row_path = format!("{path}.cmrr_by_gain[{i}]");
            let g = self.quantity(
                &row.gain,
                &format!("{row_path}.gain"),
                Dimension::Gain,
                Range::Positive,
                false,
            );
            let c = self.cmrr_db(&row.cmrr, &format!("{row_path}.cmrr"));
            if let (Some(g), Some(c)) = (g, c) {
                rows.push((g.value.log10(), c));
            }
        }
        if rows.len() != table.len() {
            return None;
        }
        rows.sort_by(|a, b| a.0.total_cmp(&b.0));
        let x = gain.log10();
        let (first, last) = (rows[0], rows[rows.len() - 1]);
        if x < first.0 - 1e-9 || x > last.0 + 1e-9 {
            self.problem(
                &format!("{path}.cmrr_by_gain"),
                format!(
                    "the configured gain ({}) lies outside the table ({} to {})",
                    format_si(gain, "V/V"),
                    format_si(10f64.powf(first.0), "V/V"),
                    format_si(10f64.powf(last.0), "V/V")
                ),
                "add a row for the gain in use from the data sheet; the tool does not extrapolate a minimum",
            );
            return None;
        }
        let upper = rows
            .iter()
            .position(|r| r.0 >= x - 1e-12)
            .unwrap_or(rows.len() - 1);
        if upper == 0 || (rows[upper].0 - x).abs() < 1e-12 {
            return Some(rows[upper].1);
        }
        let (lo, hi) = (rows[upper - 1], rows[upper]);
        Some(lo.1 + (hi.1 - lo.1) * (x - lo.0) / (hi.0 - lo.0))
    }

    /// The corner above which a CMRR falls 20 dB/decade; refused when no
    /// CMRR is given.
    fn cmrr_corner(
        &mut self,
        raw: Option<&Scalar>,
        has_cmrr: bool,
        path: &str,
        stage: usize,
        name: &str,
    ) -> Option<ParamId> {
        let corner = raw?;
        let corner_path = format!("{path}.cmrr_corner");
        if !has_cmrr {
            self.problem(
                &corner_path,
                "a CMRR corner is given without a CMRR",
                "add the DC minimum CMRR (e.g. `cmrr: 100 dB`), or remove `cmrr_corner`",
            );
            return None;
        }
        self.fixed(
            corner,
            &corner_path,
            Dimension::Frequency,
            name.into(),
            stage,
        )
    }

    /// A CMRR in dB, above 0 dB.
    fn cmrr_db(&mut self, scalar: &Scalar, path: &str) -> Option<f64> {
        let q = self.quantity(scalar, path, Dimension::Decibels, Range::Positive, false)?;
        if q.value <= 1.0 {
            self.problem(
                path,
                format!(
                    "`{}` is not a usable CMRR: it must be above 0 dB",
                    scalar.0.trim()
                ),
                "give the data-sheet minimum, e.g. `100 dB`",
            );
            return None;
        }
        Some(20.0 * q.value.log10())
    }

    /// The signed reciprocal of a minimum CMRR: nominal zero, bounded.
    fn cmrr_bound(&mut self, cmrr_db: f64, path: &str, stage: usize, name: &str) -> ParamId {
        self.parameters.add(Parameter {
            name: name.into(),
            stage,
            field: format!("{path}.cmrr"),
            nominal: 0.0,
            variation: Variation::SignedBound {
                magnitude: 10f64.powf(-cmrr_db / 20.0),
            },
            presentation: Presentation::ReciprocalCmrr,
            shape: None,
        })
    }

    /// Input pin shunts from per-leg resistance and capacitance.
    fn pins(
        &mut self,
        resistance: &Option<PerLeg>,
        capacitance: &Option<PerLeg>,
        path: &str,
        stage: usize,
    ) -> [PinShunt; 2] {
        let r = self.optional_leg_parts(
            resistance,
            &format!("{path}.input_resistance"),
            Dimension::Resistance,
            "input R",
            stage,
        );
        let c = self.optional_leg_parts(
            capacitance,
            &format!("{path}.input_capacitance"),
            Dimension::Capacitance,
            "input C",
            stage,
        );
        [
            PinShunt {
                resistance: r[0],
                capacitance: c[0],
            },
            PinShunt {
                resistance: r[1],
                capacitance: c[1],
            },
        ]
    }

    /// An op-amp's data; its parameters are named after `who` (`op-amp`,
    /// `A1`, …).
    pub(super) fn opamp(&mut self, raw: &RawOpAmp, path: &str, stage: usize, who: &str) -> OpAmp {
        let open_loop_gain = raw.open_loop_gain.as_ref().and_then(|g| {
            let gain_path = format!("{path}.open_loop_gain");
            let id = self.part(
                g,
                &gain_path,
                Dimension::Gain,
                format!("{who} open-loop gain"),
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
                format!("{who} gain-bandwidth"),
                stage,
            )
        });
        let cmrr_reciprocal = raw.cmrr.as_ref().and_then(|c| {
            let db = self.cmrr_db(c, &format!("{path}.cmrr"))?;
            Some(self.cmrr_bound(db, path, stage, &format!("{who} CMRR")))
        });
        let cmrr_corner_hz = self.cmrr_corner(
            raw.cmrr_corner.as_ref(),
            raw.cmrr.is_some(),
            path,
            stage,
            &format!("{who} CMRR corner"),
        );
        OpAmp {
            open_loop_gain,
            gain_bandwidth_hz,
            cmrr_reciprocal,
            cmrr_corner_hz,
            input_range: self
                .voltage_range(raw.input_range.as_deref(), &format!("{path}.input_range")),
            output_swing: self
                .voltage_range(raw.output_swing.as_deref(), &format!("{path}.output_swing")),
            input_bias_current: self.current(
                raw.input_bias_current.as_ref(),
                &format!("{path}.input_bias_current"),
            ),
            input_offset_current: self.current(
                raw.input_offset_current.as_ref(),
                &format!("{path}.input_offset_current"),
            ),
        }
    }
}
