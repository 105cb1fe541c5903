//! The stage kinds of a signal chain, each with its exact small-signal
//! solve.
//!
//! A stage is seen from the chain as a two-port on node voltages: its two
//! input pins (p, n) load whatever drives them with an input admittance
//! matrix, and it maps its input pin voltages to its two output node
//! voltages with a 2x2 transfer matrix, given the admittance of whatever it
//! drives. A single-ended output is the pair (output, reference), the
//! reference being ground. The chain module turns products of these into
//! differential/common-mode (mixed-mode) responses.
//!
//! Each stage's physics is written once: [`StageSolve::values`] computes
//! what does not depend on frequency from one set of parameter values, and
//! [`SmallSignal::solve`] is the exact per-frequency solve, written over
//! [`Lane`] so that the same code serves a single analysis point (one
//! complex value) and the Monte Carlo (several frequencies at once). It is
//! division-free (see [`two_port`]).
//!
//! To add a stage kind: write its module here (parameters as
//! [`ParamId`](crate::model::ParamId)s, its values and its solve), add a
//! variant to [`StageKind`] and [`StageValues`], and teach the budget
//! file's raw schema and validator to build it (see DEVELOPERS.md).

mod adc;
mod body;
mod difference_amp;
mod differential_pair;
mod integrated_inamp;
mod opamp;
mod pins;
mod source_network;
mod three_opamp_inamp;
pub mod two_port;

pub use crate::engine::lane::Lane;
pub use adc::{Adc, AdcValues};
pub use body::{
    coupling as body_coupling, Body, BodyValues, Compensation, DriveGain, ReferenceElectrode,
    RightLegDrive,
};
pub use difference_amp::{DifferenceAmp, DifferenceValues};
pub use differential_pair::{
    DifferentialPair, PairDevice, PairHeadroom, PairOutput, PairSmallSignal, PairValues, Tail,
    TailKind, K_OVER_Q,
};
pub use integrated_inamp::{GainSetting, IntegratedInAmp, IntegratedValues};
pub use opamp::{OpAmp, OpAmpValues};
pub use pins::{PinShunt, PinValues};
pub use source_network::{BodyResponse, Leg, SourceImpedance, SourceNetwork, SourceValues};
pub use three_opamp_inamp::{ThreeOpAmpInAmp, ThreeOpAmpValues};
pub use two_port::{Admittance, Frequency, Rows, SmallSignal, Solved, Transfer};

use crate::engine::linalg::{Mat2, C64};

/// One frequency and one set of parameter values at which to solve.
#[derive(Debug, Clone, Copy)]
pub struct Point<'a> {
    /// Frequency in hertz.
    pub freq_hz: f64,
    /// Parameter values, indexed by [`ParamId`](crate::model::ParamId).
    pub values: &'a [f64],
}

impl<'a> Point<'a> {
    /// A point at `freq_hz` with the given parameter values.
    pub fn new(freq_hz: f64, values: &'a [f64]) -> Point<'a> {
        Point { freq_hz, values }
    }

    /// The value of a parameter.
    pub fn value(&self, id: crate::model::ParamId) -> f64 {
        self.values[id.0]
    }

    /// The value of an optional parameter, or `default` when absent.
    pub fn value_or(&self, id: Option<crate::model::ParamId>, default: f64) -> f64 {
        id.map_or(default, |id| self.value(id))
    }
}

/// Why a stage has no unique small-signal solution at a point.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("the {stage} has no unique small-signal solution at {} (a singular circuit)", crate::quantity::format_si(*.freq_hz, "Hz"))]
pub struct SingularStage {
    /// The stage kind that failed.
    pub stage: &'static str,
    /// The frequency at which it failed.
    pub freq_hz: f64,
}

/// The exact small-signal behaviour of a stage, in node-voltage form.
pub trait StageSolve {
    /// Its frequency-independent values, from which [`SmallSignal::solve`]
    /// solves each frequency.
    type Values: SmallSignal;
    /// The kind's name, for errors.
    const NAME: &'static str;

    /// Its values for one set of parameter values.
    fn values(&self, values: &[f64]) -> Self::Values;

    /// Its solve at one point, driving `load`.
    fn solved_at(&self, point: &Point, load: &Mat2) -> Solved<C64> {
        self.values(point.values).solve(
            &Frequency::new(point.freq_hz),
            &Admittance::from_matrix(load),
        )
    }

    /// The admittance its input pins present to whatever drives them,
    /// `[i_p, i_n] = Y [v_p, v_n]` (currents flowing into the pins), when
    /// its outputs drive `load`.
    fn input_admittance(&self, point: &Point, load: &Mat2) -> Mat2 {
        self.solved_at(point, load).input.matrix()
    }

    /// The transfer from its input pin voltages to its output node voltages,
    /// given the admittance `load` of what it drives.
    fn transfer(&self, point: &Point, load: &Mat2) -> Result<Mat2, SingularStage> {
        self.solved_at(point, load)
            .transfer
            .matrix(Self::NAME, point.freq_hz)
    }

    /// Internal and output nodes whose voltage must stay within a range
    /// (input common-mode ranges, output swings, transistor saturation),
    /// each as a linear function of the stage's input pin voltages plus a
    /// bias. Stages with no stated ranges have none.
    fn probes(&self, _point: &Point, _load: &Mat2) -> Vec<Probe> {
        Vec::new()
    }

    /// The DC voltages its outputs sit at by the stage's own supplies and
    /// bias, with its inputs at 0 V and its outputs driving `load`; read at
    /// DC (`point` at 0 Hz). Zero for stages whose outputs rest at ground
    /// or whose levels are not stated.
    fn output_levels(&self, _point: &Point, _load: &Mat2) -> [f64; 2] {
        [0.0; 2]
    }
}

/// A node voltage to keep within limits: `bias + coefficients · [v_p, v_n]`
/// must stay within `[low, high]`.
#[derive(Debug, Clone, PartialEq)]
pub struct Probe {
    /// What the node is, e.g. `A1 output` or `Q1 collector-emitter`.
    pub name: String,
    /// Its small-signal voltage per volt at the stage's p and n pins.
    pub coefficients: [C64; 2],
    /// Its DC operating-point voltage beyond the signal, in volts.
    pub bias: f64,
    /// The lowest allowed voltage.
    pub low: f64,
    /// The highest allowed voltage.
    pub high: f64,
}

/// A voltage range, low to high, in volts.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct VoltageRange {
    /// The lowest voltage.
    pub low: f64,
    /// The highest voltage.
    pub high: f64,
}

impl VoltageRange {
    /// A probe on this range.
    pub fn probe(&self, name: impl Into<String>, coefficients: [C64; 2], bias: f64) -> Probe {
        Probe {
            name: name.into(),
            coefficients,
            bias,
            low: self.low,
            high: self.high,
        }
    }
}

/// A stage of the chain, with the label the user gave it.
#[derive(Debug, Clone, PartialEq)]
pub struct Stage {
    /// The user's label, or the kind's default name.
    pub label: String,
    /// What it is.
    pub kind: StageKind,
}

/// The kinds of stage the engine can solve.
// A chain holds at most 16 stages and the engine reads them in its inner
// loop; keeping the larger variants inline avoids a pointer chase there.
#[allow(clippy::large_enum_variant)]
#[derive(Debug, Clone, PartialEq)]
pub enum StageKind {
    /// Source impedances, cable, input filter: drives the first amplifier.
    SourceNetwork(SourceNetwork),
    /// One op-amp and four resistors.
    DifferenceAmp(DifferenceAmp),
    /// Two followers sharing a gain resistor, then a difference amplifier.
    ThreeOpAmpInAmp(ThreeOpAmpInAmp),
    /// An instrumentation amplifier as a data-sheet block.
    IntegratedInAmp(IntegratedInAmp),
    /// A discrete long-tailed pair.
    DifferentialPair(DifferentialPair),
    /// A differential-input converter, last in the chain.
    Adc(Adc),
}

impl StageKind {
    /// The kind's name as printed.
    pub fn kind_name(&self) -> &'static str {
        match self {
            StageKind::SourceNetwork(_) => "source network",
            StageKind::DifferenceAmp(_) => "difference amplifier",
            StageKind::ThreeOpAmpInAmp(_) => "three-op-amp instrumentation amplifier",
            StageKind::IntegratedInAmp(_) => "integrated instrumentation amplifier",
            StageKind::DifferentialPair(_) => "differential pair",
            StageKind::Adc(_) => "converter",
        }
    }

    /// Whether the stage amplifies (presents an amplifier input); a source
    /// network does not.
    pub fn is_amplifier(&self) -> bool {
        !matches!(self, StageKind::SourceNetwork(_))
    }

    /// Its frequency-independent values for one set of parameter values.
    pub fn values(&self, values: &[f64]) -> StageValues {
        match self {
            StageKind::SourceNetwork(stage) => StageValues::SourceNetwork(stage.values(values)),
            StageKind::DifferenceAmp(stage) => StageValues::DifferenceAmp(stage.values(values)),
            StageKind::ThreeOpAmpInAmp(stage) => StageValues::ThreeOpAmpInAmp(stage.values(values)),
            StageKind::IntegratedInAmp(stage) => StageValues::IntegratedInAmp(stage.values(values)),
            StageKind::DifferentialPair(stage) => {
                StageValues::DifferentialPair(stage.values(values))
            }
            StageKind::Adc(stage) => StageValues::Adc(stage.values(values)),
        }
    }
}

/// Call `$body` with `$stage` bound to the stage inside a [`StageKind`].
macro_rules! each_kind {
    ($kind:expr, $stage:ident => $body:expr) => {
        match $kind {
            StageKind::SourceNetwork($stage) => $body,
            StageKind::DifferenceAmp($stage) => $body,
            StageKind::ThreeOpAmpInAmp($stage) => $body,
            StageKind::IntegratedInAmp($stage) => $body,
            StageKind::DifferentialPair($stage) => $body,
            StageKind::Adc($stage) => $body,
        }
    };
}

impl StageKind {
    /// See [`StageSolve::input_admittance`].
    pub fn input_admittance(&self, point: &Point, load: &Mat2) -> Mat2 {
        each_kind!(self, stage => stage.input_admittance(point, load))
    }

    /// See [`StageSolve::transfer`].
    pub fn transfer(&self, point: &Point, load: &Mat2) -> Result<Mat2, SingularStage> {
        each_kind!(self, stage => stage.transfer(point, load))
    }

    /// See [`StageSolve::probes`].
    pub fn probes(&self, point: &Point, load: &Mat2) -> Vec<Probe> {
        each_kind!(self, stage => stage.probes(point, load))
    }

    /// See [`StageSolve::output_levels`].
    pub fn output_levels(&self, point: &Point, load: &Mat2) -> [f64; 2] {
        each_kind!(self, stage => stage.output_levels(point, load))
    }

    /// The kind's name for errors (see [`StageSolve::NAME`]).
    pub fn solve_name(&self) -> &'static str {
        fn name<S: StageSolve>(_: &S) -> &'static str {
            S::NAME
        }
        each_kind!(self, stage => name(stage))
    }
}

/// A stage's frequency-independent values, by kind (see
/// [`StageKind::values`]).
// Held in the Monte Carlo's per-trial scratch and read in its inner loop;
// inline variants avoid a pointer chase there.
#[allow(clippy::large_enum_variant)]
#[derive(Debug, Clone, PartialEq)]
pub enum StageValues {
    /// A source network's.
    SourceNetwork(SourceValues),
    /// A difference amplifier's.
    DifferenceAmp(DifferenceValues),
    /// A three-op-amp in-amp's.
    ThreeOpAmpInAmp(ThreeOpAmpValues),
    /// An integrated in-amp's.
    IntegratedInAmp(IntegratedValues),
    /// A differential pair's.
    DifferentialPair(PairValues),
    /// A converter's.
    Adc(AdcValues),
}

impl SmallSignal for StageValues {
    #[inline(always)]
    fn solve<N: Lane>(&self, w: &Frequency<N>, load: &Admittance<N>) -> Solved<N> {
        match self {
            StageValues::SourceNetwork(v) => v.solve(w, load),
            StageValues::DifferenceAmp(v) => v.solve(w, load),
            StageValues::ThreeOpAmpInAmp(v) => v.solve(w, load),
            StageValues::IntegratedInAmp(v) => v.solve(w, load),
            StageValues::DifferentialPair(v) => v.solve(w, load),
            StageValues::Adc(v) => v.solve(w, load),
        }
    }
}
