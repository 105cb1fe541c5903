//! Validation of the discrete differential pair.

use super::{Range, Validator};
use crate::budget::raw::{
    PerLeg, RawDifferentialPair, RawPairDevice, RawPairOutput, RawTail, Scalar,
};
use crate::model::{ParamId, Parameter, Presentation, Variation};
use crate::quantity::Dimension;
use crate::stage::{
    DifferentialPair, PairDevice, PairHeadroom, PairOutput, StageKind, Tail, TailKind,
};

/// The device temperature when the file gives none, in kelvin; at 300 K,
/// kT/q = 25.85 mV.
pub const DEFAULT_DEVICE_TEMPERATURE_K: f64 = 300.0;

impl Validator<'_> {
    pub(super) fn differential_pair(
        &mut self,
        raw: &RawDifferentialPair,
        path: &str,
        stage: usize,
    ) -> Option<StageKind> {
        let problems_before = self.problems.len();
        let field = |name: &str| format!("{path}.{name}");
        // Which fields each device type takes.
        let (needs, refuses): (&[&str], &[&str]) = match raw.device {
            RawPairDevice::Bjt => (
                &["tail_current", "beta", "early_voltage"],
                &["overdrive", "gm", "r_pi", "ro"],
            ),
            RawPairDevice::Mosfet => (
                &["tail_current", "overdrive", "early_voltage"],
                &["beta", "gm", "r_pi", "ro"],
            ),
            RawPairDevice::SmallSignal => {
                (&["gm"], &["beta", "early_voltage", "overdrive", "offset"])
            }
        };
        let given = |name: &str| match name {
            "tail_current" => raw.tail_current.is_some(),
            "beta" => raw.beta.is_some(),
            "early_voltage" => raw.early_voltage.is_some(),
            "overdrive" => raw.overdrive.is_some(),
            "gm" => raw.gm.is_some(),
            "r_pi" => raw.r_pi.is_some(),
            "ro" => raw.ro.is_some(),
            "offset" => raw.offset.is_some(),
            _ => false,
        };
        let device_name = match raw.device {
            RawPairDevice::Bjt => "bjt",
            RawPairDevice::Mosfet => "mosfet",
            RawPairDevice::SmallSignal => "small_signal",
        };
        for name in needs.iter().filter(|n| !given(n)) {
            self.problem(
                path,
                format!("a `{device_name}` pair needs `{name}`"),
                format!("add `{name}: …` (see the README's differential pair fields)"),
            );
        }
        for name in refuses.iter().filter(|n| given(n)) {
            self.problem(
                &field(name),
                format!("`{name}` does not apply to a `{device_name}` pair"),
                match raw.device {
                    RawPairDevice::SmallSignal => "remove it: with `device: small_signal` give gm, r_pi and ro directly, and any mismatch as `gm_mismatch`".to_string(),
                    _ => "remove it, or choose the device type it belongs to".to_string(),
                },
            );
        }
        if self.problems.len() > problems_before {
            return None;
        }
        let tail_current = raw.tail_current.as_ref().and_then(|c| {
            self.part(
                c,
                &field("tail_current"),
                Dimension::Current,
                "tail current".into(),
                stage,
            )
        });
        let legs = |this: &mut Self,
                    value: &Option<PerLeg>,
                    name: &str,
                    dimension: Dimension,
                    label: &str| {
            this.optional_leg_parts(value, &field(name), dimension, label, stage)
        };
        let device = match raw.device {
            RawPairDevice::Bjt => {
                let beta = legs(self, &raw.beta, "beta", Dimension::Number, "β");
                let early = legs(
                    self,
                    &raw.early_voltage,
                    "early_voltage",
                    Dimension::Voltage,
                    "Early voltage",
                );
                match (beta, early) {
                    ([Some(b0), Some(b1)], [Some(e0), Some(e1)]) => Some(PairDevice::Bjt {
                        beta: [b0, b1],
                        early_voltage: [e0, e1],
                    }),
                    _ => None,
                }
            }
            RawPairDevice::Mosfet => {
                let overdrive = raw.overdrive.as_ref().and_then(|o| {
                    self.part(
                        o,
                        &field("overdrive"),
                        Dimension::Voltage,
                        "overdrive".into(),
                        stage,
                    )
                });
                let early = legs(
                    self,
                    &raw.early_voltage,
                    "early_voltage",
                    Dimension::Voltage,
                    "Early voltage",
                );
                match (overdrive, early) {
                    (Some(overdrive), [Some(e0), Some(e1)]) => Some(PairDevice::Mosfet {
                        overdrive,
                        early_voltage: [e0, e1],
                    }),
                    _ => None,
                }
            }
            RawPairDevice::SmallSignal => {
                let gm = legs(self, &raw.gm, "gm", Dimension::Conductance, "gm");
                let r_pi = legs(self, &raw.r_pi, "r_pi", Dimension::Resistance, "r_π");
                let ro = legs(self, &raw.ro, "ro", Dimension::Resistance, "r_o");
                match gm {
                    [Some(g0), Some(g1)] => Some(PairDevice::SmallSignal {
                        gm: [g0, g1],
                        r_pi,
                        ro,
                    }),
                    _ => None,
                }
            }
        };
        let offset = raw.offset.as_ref().and_then(|o| {
            let q = self.quantity(
                o,
                &field("offset"),
                Dimension::Voltage,
                Range::Positive,
                false,
            )?;
            Some(self.bound(
                "input offset",
                q.value,
                &field("offset"),
                stage,
                Dimension::Voltage,
                q.distribution,
            ))
        });
        let gm_mismatch = raw.gm_mismatch.as_ref().and_then(|m| {
            let q = self.quantity(
                m,
                &field("gm_mismatch"),
                Dimension::Fraction,
                Range::Positive,
                false,
            )?;
            Some(self.bound(
                "gm mismatch",
                q.value,
                &field("gm_mismatch"),
                stage,
                Dimension::Fraction,
                q.distribution,
            ))
        });
        let degeneration = legs(
            self,
            &raw.degeneration,
            "degeneration",
            Dimension::Resistance,
            "RE",
        );
        let load = self.leg_parts(
            &raw.load_resistance,
            &field("load_resistance"),
            Dimension::Resistance,
            "RC",
            stage,
        );
        let temperature =
            self.device_temperature(raw.temperature.as_ref(), &field("temperature"), stage);
        let headroom = self.pair_headroom(raw, path, tail_current.is_some());
        let tail = self.tail(
            &raw.tail,
            &field("tail"),
            stage,
            raw.device,
            tail_current.is_some(),
        );
        if self.problems.len() > problems_before {
            return None;
        }
        Some(StageKind::DifferentialPair(DifferentialPair {
            device: device?,
            tail_current,
            offset,
            gm_mismatch,
            degeneration,
            load: [load[0]?, load[1]?],
            tail: tail?,
            output: match raw.output {
                RawPairOutput::Differential => PairOutput::Differential,
                RawPairOutput::SingleEnded => PairOutput::SingleEnded,
            },
            temperature: temperature?,
            headroom,
        }))
    }

    /// The pair's device temperature: its own fixed `temperature`, or the
    /// ambient of the budget's temperature range (reference plus the
    /// excursion), or 300 K.
    fn device_temperature(
        &mut self,
        own: Option<&Scalar>,
        path: &str,
        stage: usize,
    ) -> Option<ParamId> {
        let fixed = |this: &mut Self, kelvin: f64| {
            this.parameters.add(Parameter {
                name: "device temperature".into(),
                stage,
                field: path.into(),
                nominal: kelvin,
                variation: Variation::Fixed,
                presentation: Presentation::Value(Dimension::Temperature),
                shape: None,
            })
        };
        match (own, self.temperature) {
            (Some(_), Some(_)) => {
                self.problem(
                    path,
                    "the pair has its own `temperature`, but the budget already gives a temperature range that the devices follow",
                    "remove the pair's `temperature`; its devices sit at the budget's ambient",
                );
                None
            }
            (Some(text), None) => {
                let q =
                    self.quantity(text, path, Dimension::Temperature, Range::Positive, false)?;
                Some(fixed(self, q.value))
            }
            (None, Some(range)) => {
                let base = fixed(self, range.reference_k);
                let per_kelvin = self.parameters.add(Parameter {
                    name: "device temperature coefficient".into(),
                    stage,
                    field: path.into(),
                    nominal: 1.0 / range.reference_k,
                    variation: Variation::Fixed,
                    presentation: Presentation::Value(Dimension::TemperatureCoefficient),
                    shape: None,
                });
                Some(self.parameters.add_derived(
                    Parameter {
                        name: "device temperature".into(),
                        stage,
                        field: path.into(),
                        nominal: range.reference_k,
                        variation: Variation::Derived,
                        presentation: Presentation::Value(Dimension::Temperature),
                        shape: None,
                    },
                    base,
                    Vec::new(),
                    vec![per_kelvin],
                ))
            }
            (None, None) => Some(fixed(self, DEFAULT_DEVICE_TEMPERATURE_K)),
        }
    }

    /// `supply`, `input_drop` and `saturation`, all or none.
    fn pair_headroom(
        &mut self,
        raw: &RawDifferentialPair,
        path: &str,
        has_current: bool,
    ) -> Option<PairHeadroom> {
        let fields = [
            ("supply", &raw.supply),
            ("input_drop", &raw.input_drop),
            ("saturation", &raw.saturation),
        ];
        let given = fields.iter().filter(|(_, v)| v.is_some()).count();
        if given == 0 {
            return None;
        }
        if given < 3 {
            let missing: Vec<&str> = fields
                .iter()
                .filter(|(_, v)| v.is_none())
                .map(|(n, _)| *n)
                .collect();
            self.problem(
                path,
                format!("the headroom check needs `supply`, `input_drop` and `saturation` together; missing: {}", missing.join(", ")),
                "add them (e.g. `supply: 12 V`, `input_drop: 650 mV` for a BJT's Vbe, `saturation: 300 mV`), or remove the others",
            );
            return None;
        }
        if !has_current {
            self.problem(
                path,
                "the headroom check needs the pair's `tail_current` to find the collector voltages",
                "add `tail_current: …`",
            );
            return None;
        }
        let volts = |this: &mut Self, name: &str, value: &Option<Scalar>| {
            let q = this.quantity(
                value.as_ref()?,
                &format!("{path}.{name}"),
                Dimension::Voltage,
                Range::NonNegative,
                false,
            )?;
            Some(q.value)
        };
        let supply = volts(self, "supply", &raw.supply);
        let input_drop = volts(self, "input_drop", &raw.input_drop);
        let saturation = volts(self, "saturation", &raw.saturation);
        Some(PairHeadroom {
            supply: supply?,
            input_drop: input_drop?,
            saturation: saturation?,
        })
    }

    fn tail(
        &mut self,
        raw: &RawTail,
        path: &str,
        stage: usize,
        device: RawPairDevice,
        has_current: bool,
    ) -> Option<Tail> {
        let field = |name: &str| format!("{path}.{name}");
        let kinds = [
            raw.resistor.is_some(),
            raw.current_source.is_some(),
            raw.degenerated_source.is_some(),
            raw.cascode.is_some(),
            raw.output_resistance.is_some(),
        ];
        if kinds.iter().filter(|k| **k).count() != 1 {
            self.problem(
                path,
                "the tail needs exactly one of `resistor`, `current_source`, `degenerated_source`, `cascode` or `output_resistance`",
                "keep one, e.g. `tail: {resistor: 10k ±1 %, capacitance: 2 pF}`",
            );
            return None;
        }
        let capacitance = raw.capacitance.as_ref().and_then(|c| {
            self.part(
                c,
                &field("capacitance"),
                Dimension::Capacitance,
                "tail C".into(),
                stage,
            )
        });
        let resistance = |this: &mut Self, scalar: &Scalar, name: &str, label: &str| {
            this.part(
                scalar,
                &field(name),
                Dimension::Resistance,
                label.into(),
                stage,
            )
        };
        let kind = if let Some(r) = &raw.resistor {
            TailKind::Resistor(resistance(self, r, "resistor", "tail R")?)
        } else if let Some(r) = &raw.output_resistance {
            TailKind::OutputResistance(resistance(self, r, "output_resistance", "tail R_out")?)
        } else {
            let (name, source) = [
                ("current_source", &raw.current_source),
                ("degenerated_source", &raw.degenerated_source),
                ("cascode", &raw.cascode),
            ]
            .into_iter()
            .find_map(|(name, source)| source.as_ref().map(|s| (name, s)))?;
            let device_path = field(name);
            if !has_current {
                self.problem(
                    &device_path,
                    "a transistor tail needs the pair's `tail_current`",
                    "add `tail_current: …` to the pair",
                );
                return None;
            }
            let early_voltage = self.part(
                &source.early_voltage,
                &format!("{device_path}.early_voltage"),
                Dimension::Voltage,
                "tail Early voltage".into(),
                stage,
            )?;
            let beta = source.beta.as_ref().and_then(|b| {
                self.part(
                    b,
                    &format!("{device_path}.beta"),
                    Dimension::Number,
                    "tail β".into(),
                    stage,
                )
            });
            let overdrive = source.overdrive.as_ref().and_then(|o| {
                self.part(
                    o,
                    &format!("{device_path}.overdrive"),
                    Dimension::Voltage,
                    "tail overdrive".into(),
                    stage,
                )
            });
            if name != "degenerated_source" && source.degeneration.is_some() {
                self.problem(
                    &format!("{device_path}.degeneration"),
                    "`degeneration` belongs to a `degenerated_source` tail",
                    "remove it, or use `degenerated_source`",
                );
                return None;
            }
            let needs_device = name != "current_source";
            if needs_device {
                let expected = match device {
                    RawPairDevice::Bjt => Some("beta"),
                    RawPairDevice::Mosfet => Some("overdrive"),
                    RawPairDevice::SmallSignal => None,
                };
                let ok = match expected {
                    Some("beta") => beta.is_some() && overdrive.is_none(),
                    Some(_) => overdrive.is_some() && beta.is_none(),
                    None => beta.is_some() != overdrive.is_some(),
                };
                if !ok {
                    self.problem(
                        &device_path,
                        "this tail's transistor needs its `beta` (a BJT) or its `overdrive` (a MOSFET), matching the pair's devices",
                        match expected {
                            Some(field) => format!("add `{field}: …` to the tail transistor, and nothing of the other kind"),
                            None => "add exactly one of `beta` or `overdrive`".to_string(),
                        },
                    );
                    return None;
                }
            }
            match name {
                "current_source" => TailKind::CurrentSource { early_voltage },
                "degenerated_source" => {
                    let Some(re) = &source.degeneration else {
                        self.problem(
                            &device_path,
                            "a degenerated source needs its `degeneration` resistor",
                            "add `degeneration: …`, or use `current_source`",
                        );
                        return None;
                    };
                    let degeneration = resistance(
                        self,
                        re,
                        &format!("{name}.degeneration"),
                        "tail degeneration",
                    )?;
                    TailKind::Degenerated {
                        early_voltage,
                        degeneration,
                        beta,
                        overdrive,
                    }
                }
                _ => TailKind::Cascode {
                    early_voltage,
                    beta,
                    overdrive,
                },
            }
        };
        Some(Tail { kind, capacitance })
    }
}
