//! Validation of the temperature range and of resistors' temperature
//! coefficients.

use super::{Range, Validator};
use crate::budget::raw::{RawNetwork, RawTemperature, Scalar};
use crate::model::{ParamId, Parameter, Presentation, TemperatureRange, Variation};
use crate::quantity::Dimension;

/// How a stage's resistors drift with temperature.
#[derive(Debug, Clone, Copy)]
pub(super) enum Drift {
    /// Separate parts: each resistor's coefficient anywhere within ±tcr,
    /// independently.
    Separate {
        /// The bound, 1/K.
        tcr: f64,
    },
    /// One matched network: a shared coefficient within ±tcr (which cancels
    /// in ratios) plus each resistor's own deviation within ±tracking/2, so
    /// that any two differ by at most the tracking.
    Network {
        /// The shared coefficient's parameter.
        shared: ParamId,
        /// The tracking, 1/K.
        tracking: f64,
    },
}

impl Validator<'_> {
    pub(super) fn temperature_range(&mut self, raw: &RawTemperature) -> Option<TemperatureRange> {
        let reference = self.quantity(
            &raw.reference,
            "temperature.reference",
            Dimension::Temperature,
            Range::Positive,
            false,
        );
        if raw.range.len() != 2 {
            self.problem(
                "temperature.range",
                format!(
                    "the range has {} values; it needs the coldest and the hottest",
                    raw.range.len()
                ),
                "write e.g. `range: [0 degC, 70 degC]`",
            );
            return None;
        }
        let ends: Vec<Option<f64>> = raw
            .range
            .iter()
            .enumerate()
            .map(|(i, t)| {
                self.quantity(
                    t,
                    &format!("temperature.range[{i}]"),
                    Dimension::Temperature,
                    Range::Positive,
                    false,
                )
                .map(|q| q.value)
            })
            .collect();
        let (reference_k, low_k, high_k) = (reference?.value, ends[0]?, ends[1]?);
        if low_k >= high_k {
            self.problem(
                "temperature.range",
                "the range's first value must be the colder one, and the two must differ",
                "write `[coldest, hottest]`, e.g. `[0 degC, 70 degC]`",
            );
            return None;
        }
        Some(TemperatureRange {
            reference_k,
            low_k,
            high_k,
        })
    }

    /// A stage's drift setting from its `tcr` or `network` fields.
    pub(super) fn drift(
        &mut self,
        tcr: Option<&Scalar>,
        network: Option<&RawNetwork>,
        path: &str,
        stage: usize,
    ) -> Option<Drift> {
        if (tcr.is_some() || network.is_some()) && self.temperature.is_none() {
            let field = if tcr.is_some() { "tcr" } else { "network" };
            self.problem(
                &format!("{path}.{field}"),
                "temperature coefficients are given, but the budget has no temperature range to apply them over",
                "add `temperature: {reference: 25 degC, range: [0 degC, 70 degC]}` at the top level",
            );
            return None;
        }
        match (tcr, network) {
            (Some(_), Some(_)) => {
                self.problem(path, "both `tcr` (separate parts) and `network` (one matched network) are given", "keep `tcr` for separate resistors, or `network: {tcr: …, tracking: …}` for a matched network");
                None
            }
            (Some(tcr), None) => {
                let q = self.quantity(
                    tcr,
                    &format!("{path}.tcr"),
                    Dimension::TemperatureCoefficient,
                    Range::Positive,
                    false,
                )?;
                Some(Drift::Separate { tcr: q.value })
            }
            (None, Some(network)) => {
                let tcr = self.quantity(
                    &network.tcr,
                    &format!("{path}.network.tcr"),
                    Dimension::TemperatureCoefficient,
                    Range::Positive,
                    false,
                );
                let tracking = self.quantity(
                    &network.tracking,
                    &format!("{path}.network.tracking"),
                    Dimension::TemperatureCoefficient,
                    Range::Positive,
                    false,
                );
                let shared = self.coefficient(
                    "network TC (shared)",
                    tcr?.value,
                    &format!("{path}.network.tcr"),
                    stage,
                );
                Some(Drift::Network {
                    shared,
                    tracking: tracking?.value,
                })
            }
            (None, None) => None,
        }
    }

    /// A temperature coefficient of unknown sign, bounded by `magnitude`.
    fn coefficient(&mut self, name: &str, magnitude: f64, path: &str, stage: usize) -> ParamId {
        self.parameters.add(Parameter {
            name: name.into(),
            stage,
            field: path.into(),
            nominal: 0.0,
            variation: Variation::SignedBound { magnitude },
            presentation: Presentation::Value(Dimension::TemperatureCoefficient),
        })
    }

    /// The resistor `base` made to follow temperature under `drift`: returns
    /// the derived parameter the stage should use (or `base` unchanged).
    pub(super) fn drifting(
        &mut self,
        base: ParamId,
        drift: Option<Drift>,
        stage: usize,
    ) -> ParamId {
        let Some(drift) = drift else { return base };
        let parameter = self.parameters.get(base).clone();
        let (own_bound, mut coefficients) = match drift {
            Drift::Separate { tcr } => (tcr, Vec::new()),
            Drift::Network { shared, tracking } => (tracking / 2.0, vec![shared]),
        };
        let own = self.coefficient(
            &format!("{} TC", parameter.name),
            own_bound,
            &parameter.field,
            stage,
        );
        coefficients.push(own);
        self.parameters.add_derived(
            Parameter {
                name: format!("{} at temperature", parameter.name),
                variation: Variation::Derived,
                ..parameter
            },
            base,
            coefficients,
        )
    }
}
