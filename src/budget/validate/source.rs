//! Validation of the source network.

use super::{Range, Validator};
use crate::budget::raw::{PerLeg, RawCable, RawSource};
use crate::model::ParamId;
use crate::quantity::Dimension;
use crate::stage::{Leg, SourceImpedance, SourceNetwork, StageKind};

impl Validator<'_> {
    pub(super) fn source(
        &mut self,
        raw: &RawSource,
        path: &str,
        stage: usize,
    ) -> Option<StageKind> {
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
        let body = raw.body.as_ref().and_then(|body| {
            let body_path = format!("{path}.body");
            if raw.bridge_arm.is_some() {
                self.problem(
                    &body_path,
                    "a body stands behind electrodes, not behind a bridge",
                    "describe the electrodes with `resistance` (and `capacitance`) per leg, or remove `body`",
                );
                return None;
            }
            self.body(body, &body_path, stage, raw.input_resistance.is_some())
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
            body,
        }))
    }

    /// The cable: capacitance per length (per leg) times length, and the
    /// guard drive.
    pub(super) fn cable(
        &mut self,
        raw: &RawCable,
        path: &str,
        stage: usize,
    ) -> ([Option<ParamId>; 2], f64) {
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
                let id = self.add_value(
                    format!("cable C ({})", if leg == 0 { "p" } else { "n" }),
                    stage,
                    &leg_path,
                    per_length.value * length.value,
                    per_length.tolerance,
                    Dimension::Capacitance,
                );
                self.parameters.set_shape(id, per_length.distribution);
                ids[leg] = Some(id);
            } else if matches!(raw.capacitance, PerLeg::Both(_)) {
                break;
            }
        }
        (ids, guard)
    }
}
