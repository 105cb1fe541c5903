//! The free parameters a design search may turn, and how each changes a
//! copy of the budget.

use crate::model::{Budget, ParamId, Presentation, Variation};
use crate::quantity::{format_fraction, format_quantity, format_si, Dimension};
use crate::stage::{StageKind, TailKind};

/// Resistor tolerance classes of IEC 60062's letter code, loosest first
/// (F, D, C, B, W, P, L; letters from memory).
pub const RESISTOR_CLASSES: [(f64, &str); 7] = [
    (1e-2, "F"),
    (5e-3, "D"),
    (2.5e-3, "C"),
    (1e-3, "B"),
    (5e-4, "W"),
    (2e-4, "P"),
    (1e-4, "L"),
];

/// Capacitor tolerance classes of IEC 60062's letter code, loosest first
/// (M, K, J, G, F, D; letters from memory).
pub const CAPACITOR_CLASSES: [(f64, &str); 6] = [
    (0.2, "M"),
    (0.1, "K"),
    (0.05, "J"),
    (0.02, "G"),
    (0.01, "F"),
    (0.005, "D"),
];

/// Ratio tolerances of matched networks, loosest first (common practice,
/// no source).
pub const RATIO_STEPS: [f64; 6] = [1e-3, 5e-4, 2.5e-4, 1e-4, 5e-5, 2e-5];

/// TCR tracking steps, ppm/K as fractions per kelvin, loosest first (common
/// practice, no source).
pub const TRACKING_STEPS: [f64; 7] = [50e-6, 25e-6, 10e-6, 5e-6, 2e-6, 1e-6, 0.5e-6];

/// Source-imbalance tolerances tried, loosest first.
pub const SOURCE_STEPS: [f64; 8] = [0.2, 0.1, 0.05, 0.02, 0.01, 5e-3, 2e-3, 1e-3];

/// What a search turns.
#[derive(Debug, Clone, PartialEq)]
pub enum Knob {
    /// The tolerance of a stage's resistors (one class for all).
    ResistorClass {
        /// The stage it acts on.
        stage: usize,
        /// The parameters it sets.
        params: Vec<ParamId>,
    },
    /// A matched network's ratio tolerance.
    NetworkRatio {
        /// The stage it acts on.
        stage: usize,
        /// The parameters it sets.
        params: Vec<ParamId>,
    },
    /// The tolerance of the input filter's capacitors to ground.
    FilterCapacitors {
        /// The stage it acts on.
        stage: usize,
        /// The parameters it sets.
        params: Vec<ParamId>,
    },
    /// The tolerance of the source impedances (the allowed imbalance).
    SourceImbalance {
        /// The stage it acts on.
        stage: usize,
        /// The parameters it sets.
        params: Vec<ParamId>,
    },
    /// The tracking of a stage's resistor temperature coefficients (a
    /// network's own deviations sit within ±tracking/2; separate parts'
    /// coefficients within ±tcr, which is what is sized then).
    Tracking {
        /// The stage it acts on.
        stage: usize,
        /// The parameters it sets.
        params: Vec<ParamId>,
        /// Whether the resistors form a matched network.
        network: bool,
    },
    /// A three-op-amp in-amp's first-stage gain, through RG.
    FirstStageGain {
        /// The stage it acts on.
        stage: usize,
        /// The gain resistor (its base value).
        rg: ParamId,
        /// RF1 + RF2, ohms.
        feedback: f64,
    },
    /// A pair's tail output resistance.
    TailResistance {
        /// The stage it acts on.
        stage: usize,
        /// The tail resistance (its base value).
        param: ParamId,
    },
}

/// Which knob a user names.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum KnobKind {
    /// `resistors`
    Resistors,
    /// `network-ratio`
    NetworkRatio,
    /// `filter-capacitors`
    FilterCapacitors,
    /// `source-imbalance`
    SourceImbalance,
    /// `tracking`
    Tracking,
    /// `first-stage-gain`
    FirstStageGain,
    /// `tail`
    Tail,
}

/// Why a knob cannot be found.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{0}")]
pub struct KnobError(pub String);

fn stage_params(
    budget: &Budget,
    stage: usize,
    keep: impl Fn(&crate::model::Parameter) -> bool,
) -> Vec<ParamId> {
    budget
        .parameters
        .iter()
        .filter(|(_, p)| p.stage == stage && keep(p))
        .map(|(id, _)| id)
        .collect()
}

impl Knob {
    /// Find the knob of `kind` in `budget`, in the stage labelled `stage`
    /// or the first stage where it applies.
    pub fn find(budget: &Budget, kind: KnobKind, stage: Option<&str>) -> Result<Knob, KnobError> {
        let candidates: Vec<usize> = match stage {
            Some(label) => {
                let index = budget
                    .chain
                    .iter()
                    .position(|s| s.label == label)
                    .ok_or_else(|| {
                        let labels: Vec<&str> =
                            budget.chain.iter().map(|s| s.label.as_str()).collect();
                        KnobError(format!(
                            "no stage is labelled `{label}`; the stages are: {}",
                            labels.join(", ")
                        ))
                    })?;
                vec![index]
            }
            None => (0..budget.chain.len()).collect(),
        };
        let is_resistance = |p: &crate::model::Parameter| {
            p.presentation == Presentation::Value(Dimension::Resistance)
        };
        for &index in &candidates {
            let kind_here = &budget.chain[index].kind;
            let knob = match kind {
                KnobKind::Resistors => {
                    let params = stage_params(budget, index, |p| {
                        is_resistance(p)
                            && matches!(p.variation, Variation::Relative { .. })
                            && !matches!(kind_here, StageKind::SourceNetwork(_))
                    });
                    (!params.is_empty()).then_some(Knob::ResistorClass {
                        stage: index,
                        params,
                    })
                }
                KnobKind::NetworkRatio => {
                    let params = stage_params(budget, index, |p| p.name.ends_with(" ratio error"));
                    (!params.is_empty()).then_some(Knob::NetworkRatio {
                        stage: index,
                        params,
                    })
                }
                KnobKind::FilterCapacitors => {
                    let params = stage_params(budget, index, |p| p.name.starts_with("filter C"));
                    (!params.is_empty()).then_some(Knob::FilterCapacitors {
                        stage: index,
                        params,
                    })
                }
                KnobKind::SourceImbalance => {
                    let params = stage_params(budget, index, |p| {
                        p.name.starts_with("source R") || p.name.starts_with("bridge arm")
                    });
                    (!params.is_empty()).then_some(Knob::SourceImbalance {
                        stage: index,
                        params,
                    })
                }
                KnobKind::Tracking => {
                    // The resistors whose ratio sets the CMRR: a three-op-amp
                    // in-amp's difference stage (its first-stage resistors set
                    // the gain, not the rejection), or every resistor of a
                    // difference amplifier.
                    let in_ratio = |p: &crate::model::Parameter| match kind_here {
                        StageKind::ThreeOpAmpInAmp(_) => p.field.contains(".difference_stage."),
                        _ => true,
                    };
                    let params =
                        stage_params(budget, index, |p| p.name.ends_with(" TC") && in_ratio(p));
                    let network = !stage_params(budget, index, |p| p.name == "network TC (shared)")
                        .is_empty();
                    (!params.is_empty()).then_some(Knob::Tracking {
                        stage: index,
                        params,
                        network,
                    })
                }
                KnobKind::FirstStageGain => match kind_here {
                    StageKind::ThreeOpAmpInAmp(amp) => {
                        let nominal = |id: ParamId| budget.parameters.get(id).nominal;
                        Some(Knob::FirstStageGain {
                            stage: index,
                            rg: budget.parameters.base_of(amp.rg),
                            feedback: nominal(amp.rf1) + nominal(amp.rf2),
                        })
                    }
                    _ => None,
                },
                KnobKind::Tail => match kind_here {
                    StageKind::DifferentialPair(pair) => match pair.tail.kind {
                        TailKind::Resistor(r) | TailKind::OutputResistance(r) => {
                            Some(Knob::TailResistance {
                                stage: index,
                                param: budget.parameters.base_of(r),
                            })
                        }
                        _ => None,
                    },
                    _ => None,
                },
            };
            if let Some(knob) = knob {
                return Ok(knob);
            }
        }
        Err(KnobError(match kind {
            KnobKind::Resistors => "no amplifier stage has toleranced resistors to size".into(),
            KnobKind::NetworkRatio => "no stage has a matched network with a ratio tolerance (`network: {ratio_tolerance: …}`)".into(),
            KnobKind::FilterCapacitors => "the source network has no filter capacitors".into(),
            KnobKind::SourceImbalance => "the source network has no toleranced source impedance".into(),
            KnobKind::Tracking => "no stage's resistors have temperature coefficients (`tcr` or a network's `tracking`)".into(),
            KnobKind::FirstStageGain => "no three-op-amp instrumentation amplifier to set the gain of".into(),
            KnobKind::Tail => "no differential pair with a resistor or stated output-resistance tail".into(),
        }))
    }

    /// The stage it acts on.
    pub fn stage(&self) -> usize {
        match self {
            Knob::ResistorClass { stage, .. }
            | Knob::NetworkRatio { stage, .. }
            | Knob::FilterCapacitors { stage, .. }
            | Knob::SourceImbalance { stage, .. }
            | Knob::Tracking { stage, .. }
            | Knob::FirstStageGain { stage, .. }
            | Knob::TailResistance { stage, .. } => *stage,
        }
    }

    /// The parameters it turns (their contributions are its own).
    pub fn params(&self) -> Vec<ParamId> {
        match self {
            Knob::ResistorClass { params, .. }
            | Knob::NetworkRatio { params, .. }
            | Knob::FilterCapacitors { params, .. }
            | Knob::SourceImbalance { params, .. }
            | Knob::Tracking { params, .. } => params.clone(),
            Knob::FirstStageGain { rg, .. } => vec![*rg],
            Knob::TailResistance { param, .. } => vec![*param],
        }
    }

    /// The discrete settings it is tried at, loosest (cheapest) first, with
    /// their names; `None` for a continuous knob.
    pub fn steps(&self) -> Option<Vec<(f64, String)>> {
        let classes = |list: &[(f64, &str)]| {
            list.iter()
                .map(|(t, code)| (*t, format!("{} ({code})", format_fraction(*t))))
                .collect()
        };
        match self {
            Knob::ResistorClass { .. } => Some(classes(&RESISTOR_CLASSES)),
            Knob::FilterCapacitors { .. } => Some(classes(&CAPACITOR_CLASSES)),
            Knob::NetworkRatio { .. } => Some(
                RATIO_STEPS
                    .iter()
                    .map(|t| (*t, format_fraction(*t)))
                    .collect(),
            ),
            Knob::SourceImbalance { .. } => Some(
                SOURCE_STEPS
                    .iter()
                    .map(|t| (*t, format_fraction(*t)))
                    .collect(),
            ),
            Knob::Tracking { .. } => Some(
                TRACKING_STEPS
                    .iter()
                    .map(|t| (*t, format_quantity(*t, Dimension::TemperatureCoefficient)))
                    .collect(),
            ),
            Knob::FirstStageGain { .. } | Knob::TailResistance { .. } => None,
        }
    }

    /// A copy of `budget` with the knob at `setting` (a tolerance, a
    /// tracking, a first-stage gain, or a tail resistance).
    pub fn apply(&self, budget: &Budget, setting: f64) -> Budget {
        let mut budget = budget.clone();
        match self {
            Knob::ResistorClass { params, .. }
            | Knob::FilterCapacitors { params, .. }
            | Knob::SourceImbalance { params, .. } => {
                for id in params {
                    budget.parameters.get_mut(*id).variation =
                        Variation::Relative { tolerance: setting };
                }
            }
            Knob::NetworkRatio { params, .. }
            | Knob::Tracking {
                params,
                network: true,
                ..
            } => {
                for id in params {
                    budget.parameters.get_mut(*id).variation = Variation::SignedBound {
                        magnitude: setting / 2.0,
                    };
                }
            }
            Knob::Tracking {
                params,
                network: false,
                ..
            } => {
                for id in params {
                    budget.parameters.get_mut(*id).variation =
                        Variation::SignedBound { magnitude: setting };
                }
            }
            Knob::FirstStageGain { rg, feedback, .. } => {
                budget.parameters.get_mut(*rg).nominal = feedback / (setting - 1.0);
            }
            Knob::TailResistance { param, .. } => {
                budget.parameters.get_mut(*param).nominal = setting;
            }
        }
        budget
    }

    /// The knob's present setting in `budget`.
    pub fn current(&self, budget: &Budget) -> Option<f64> {
        let first = *self.params().first()?;
        let p = budget.parameters.get(first);
        match (self, p.variation) {
            (Knob::FirstStageGain { feedback, .. }, _) => Some(1.0 + feedback / p.nominal),
            (Knob::TailResistance { .. }, _) => Some(p.nominal),
            (_, Variation::Relative { tolerance }) => Some(tolerance),
            (Knob::Tracking { network: false, .. }, Variation::SignedBound { magnitude }) => {
                Some(magnitude)
            }
            (_, Variation::SignedBound { magnitude }) => Some(2.0 * magnitude),
            _ => None,
        }
    }

    /// The SI unit of a setting's number: `fraction` for a tolerance (0.001
    /// is 0.1 %), `1/K` for a temperature coefficient, `V/V` for a gain,
    /// `ohm` for a resistance.
    pub fn setting_unit(&self) -> &'static str {
        match self {
            Knob::FirstStageGain { .. } => "V/V",
            Knob::TailResistance { .. } => "ohm",
            Knob::Tracking { .. } => "1/K",
            _ => "fraction",
        }
    }

    /// A setting as an engineer writes it.
    pub fn describe(&self, setting: f64) -> String {
        match self {
            Knob::FirstStageGain { .. } => format!("G1 = {}", format_si(setting, "V/V")),
            Knob::TailResistance { .. } => format!("tail {}", format_si(setting, "Ω")),
            Knob::Tracking { .. } => format_quantity(setting, Dimension::TemperatureCoefficient),
            _ => format_fraction(setting),
        }
    }
}
