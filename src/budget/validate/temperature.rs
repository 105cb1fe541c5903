//! Validation of the temperature range and of resistors' temperature
//! coefficients.

use super::{Range, Validator};
use crate::budget::raw::{RawNetwork, RawTemperature, Scalar};
use crate::model::{ParamId, Parameter, Presentation, TemperatureRange, Variation};
use crate::quantity::Dimension;
use crate::quantity::SpreadShape;

/// How a stage's resistors are made: separate parts, or one matched
/// network whose resistors share an absolute error and hold their ratios
/// to a tighter tolerance; and how they drift with temperature.
#[derive(Debug, Clone, Copy, Default)]
pub(super) struct ResistorSet {
    /// The network's shared relative error (cancels in ratios).
    shared_error: Option<ParamId>,
    /// Each network resistor's own error bound, half the ratio tolerance,
    /// and its spread.
    own_error: Option<(f64, Option<SpreadShape>)>,
    /// Temperature drift.
    drift: Option<Drift>,
}

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

    /// A stage's resistor set from its `tcr` (separate parts) or `network`
    /// (one matched network) fields.
    pub(super) fn resistor_set(
        &mut self,
        tcr: Option<&Scalar>,
        network: Option<&RawNetwork>,
        path: &str,
        stage: usize,
    ) -> ResistorSet {
        let mut set = ResistorSet::default();
        let drifts =
            tcr.is_some() || network.is_some_and(|n| n.tcr.is_some() || n.tracking.is_some());
        if drifts && self.temperature.is_none() {
            let field = if tcr.is_some() {
                "tcr".to_string()
            } else {
                "network.tcr".to_string()
            };
            self.problem(
                &format!("{path}.{field}"),
                "temperature coefficients are given, but the budget has no temperature range to apply them over",
                "add `temperature: {reference: 25 degC, range: [0 degC, 70 degC]}` at the top level",
            );
            return set;
        }
        match (tcr, network) {
            (Some(_), Some(_)) => {
                self.problem(path, "both `tcr` (separate parts) and `network` (one matched network) are given", "keep `tcr` for separate resistors, or give the network's `tcr` and `tracking` inside `network`");
            }
            (Some(tcr), None) => {
                if let Some(q) = self.quantity(
                    tcr,
                    &format!("{path}.tcr"),
                    Dimension::TemperatureCoefficient,
                    Range::Positive,
                    false,
                ) {
                    set.drift = Some(Drift::Separate { tcr: q.value });
                }
            }
            (None, Some(network)) => set = self.network(network, &format!("{path}.network"), stage),
            (None, None) => {}
        }
        set
    }

    fn network(&mut self, raw: &RawNetwork, path: &str, stage: usize) -> ResistorSet {
        let mut set = ResistorSet::default();
        if raw.tolerance.is_none()
            && raw.ratio_tolerance.is_none()
            && raw.tcr.is_none()
            && raw.tracking.is_none()
        {
            self.problem(
                path,
                "the network states nothing",
                "give its `tolerance`, `ratio_tolerance`, and/or `tcr` with `tracking`",
            );
            return set;
        }
        if let Some((tolerance, shape)) =
            self.network_tolerance(raw.tolerance.as_ref(), &format!("{path}.tolerance"))
        {
            set.shared_error = Some(self.bound(
                "network error (shared)",
                tolerance,
                &format!("{path}.tolerance"),
                stage,
                Dimension::Fraction,
                shape,
            ));
        }
        if let Some((ratio, shape)) = self.network_tolerance(
            raw.ratio_tolerance.as_ref(),
            &format!("{path}.ratio_tolerance"),
        ) {
            set.own_error = Some((ratio / 2.0, shape));
        }
        match (&raw.tcr, &raw.tracking) {
            (Some(tcr), Some(tracking)) => {
                let tcr = self.quantity(
                    tcr,
                    &format!("{path}.tcr"),
                    Dimension::TemperatureCoefficient,
                    Range::Positive,
                    false,
                );
                let tracking = self.quantity(
                    tracking,
                    &format!("{path}.tracking"),
                    Dimension::TemperatureCoefficient,
                    Range::Positive,
                    false,
                );
                if let (Some(tcr), Some(tracking)) = (tcr, tracking) {
                    let shared = self.bound(
                        "network TC (shared)",
                        tcr.value,
                        &format!("{path}.tcr"),
                        stage,
                        Dimension::TemperatureCoefficient,
                        None,
                    );
                    set.drift = Some(Drift::Network {
                        shared,
                        tracking: tracking.value,
                    });
                }
            }
            (None, None) => {}
            _ => {
                self.problem(
                    path,
                    "a network's `tcr` and `tracking` go together",
                    "give both (e.g. `tcr: 25 ppm/K, tracking: 2 ppm/K`), or neither",
                );
            }
        }
        set
    }

    /// A network tolerance, written like `0.1 %` or `0.01 % normal`.
    fn network_tolerance(
        &mut self,
        text: Option<&Scalar>,
        path: &str,
    ) -> Option<(f64, Option<SpreadShape>)> {
        let text = text?;
        let words: Vec<&str> = text.0.split_whitespace().collect();
        let shape = match words.last().copied() {
            Some("uniform") => Some(SpreadShape::Uniform),
            Some("normal") => Some(SpreadShape::Normal),
            Some("truncated") => Some(SpreadShape::Truncated),
            _ => None,
        };
        let value_text = if shape.is_some() {
            words[..words.len() - 1].join(" ")
        } else {
            text.0.clone()
        };
        let q = self.quantity(
            &Scalar(value_text),
            path,
            Dimension::Fraction,
            Range::Positive,
            false,
        )?;
        if q.value >= 1.0 {
            self.problem(
                path,
                "a tolerance of 100 % or more is not physical",
                "give the network's tolerance below 100 %, e.g. `0.1 %`",
            );
            return None;
        }
        Some((q.value, shape))
    }

    /// A quantity of unknown sign around zero, bounded by `magnitude`.
    pub(super) fn bound(
        &mut self,
        name: &str,
        magnitude: f64,
        path: &str,
        stage: usize,
        dimension: Dimension,
        shape: Option<SpreadShape>,
    ) -> ParamId {
        self.parameters.add(Parameter {
            name: name.into(),
            stage,
            field: path.into(),
            nominal: 0.0,
            variation: Variation::SignedBound { magnitude },
            presentation: Presentation::Value(dimension),
            shape,
        })
    }

    /// A resistor of a stage, made as `set` says: returns the parameter the
    /// stage uses.
    pub(super) fn set_resistor(
        &mut self,
        scalar: &Scalar,
        path: &str,
        name: &str,
        stage: usize,
        set: ResistorSet,
    ) -> Option<ParamId> {
        let in_network = set.shared_error.is_some() || set.own_error.is_some();
        let base = if in_network {
            let q = self.quantity(scalar, path, Dimension::Resistance, Range::Positive, true)?;
            if q.tolerance.is_some() {
                self.problem(path, format!("`{}` carries its own tolerance, but it belongs to a network whose tolerances set its spread", scalar.0.trim()), "write the nominal value alone (e.g. `10k`) and state the spread under `network`");
                return None;
            }
            self.add_value(
                name.into(),
                stage,
                path,
                q.value,
                None,
                Dimension::Resistance,
            )
        } else {
            self.part(scalar, path, Dimension::Resistance, name.into(), stage)?
        };
        if !in_network && set.drift.is_none() {
            return Some(base);
        }
        let mut factors = Vec::new();
        factors.extend(set.shared_error);
        if let Some((bound, shape)) = set.own_error {
            factors.push(self.bound(
                &format!("{name} ratio error"),
                bound,
                path,
                stage,
                Dimension::Fraction,
                shape,
            ));
        }
        let mut coefficients = Vec::new();
        match set.drift {
            Some(Drift::Separate { tcr }) => coefficients.push(self.bound(
                &format!("{name} TC"),
                tcr,
                path,
                stage,
                Dimension::TemperatureCoefficient,
                None,
            )),
            Some(Drift::Network { shared, tracking }) => {
                coefficients.push(shared);
                coefficients.push(self.bound(
                    &format!("{name} TC"),
                    tracking / 2.0,
                    path,
                    stage,
                    Dimension::TemperatureCoefficient,
                    None,
                ));
            }
            None => {}
        }
        let parameter = self.parameters.get(base).clone();
        Some(self.parameters.add_derived(
            Parameter {
                name: format!("{name} as built"),
                variation: Variation::Derived,
                ..parameter
            },
            base,
            factors,
            coefficients,
        ))
    }
}
