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
//! To add a stage kind: write its module here (parameters as
//! [`ParamId`](crate::model::ParamId)s, the exact solve in
//! [`StageSolve`]), add a variant to [`StageKind`], and teach the budget
//! file's raw schema and validator to build it (see DEVELOPERS.md).

mod adc;
mod difference_amp;
mod differential_pair;
mod integrated_inamp;
mod opamp;
mod pins;
mod source_network;
mod three_opamp_inamp;

pub use adc::Adc;
pub use difference_amp::DifferenceAmp;
pub use differential_pair::{
    DifferentialPair, PairDevice, PairHeadroom, PairOutput, PairSmallSignal, Tail, TailKind,
    K_OVER_Q,
};
pub use integrated_inamp::{GainSetting, IntegratedInAmp};
pub use opamp::OpAmp;
pub use pins::PinShunt;
pub use source_network::{Leg, SourceImpedance, SourceNetwork};
pub use three_opamp_inamp::ThreeOpAmpInAmp;

use crate::engine::linalg::{Mat2, C64};

/// One frequency and one set of parameter values at which to solve.
#[derive(Debug, Clone, Copy)]
pub struct Point<'a> {
    /// Frequency in hertz.
    pub freq_hz: f64,
    /// The complex frequency `s = j 2π f`.
    pub s: C64,
    /// Parameter values, indexed by [`ParamId`](crate::model::ParamId).
    pub values: &'a [f64],
}

impl<'a> Point<'a> {
    /// A point at `freq_hz` with the given parameter values.
    pub fn new(freq_hz: f64, values: &'a [f64]) -> Point<'a> {
        Point {
            freq_hz,
            s: C64::new(0.0, 2.0 * std::f64::consts::PI * freq_hz),
            values,
        }
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
    /// The admittance its input pins present to whatever drives them,
    /// `[i_p, i_n] = Y [v_p, v_n]` (currents flowing into the pins), when
    /// its outputs drive `load`. Stages whose outputs are ideal sources
    /// ignore the load.
    fn input_admittance(&self, point: &Point, load: &Mat2) -> Mat2;

    /// The transfer from its input pin voltages to its output node voltages,
    /// given the admittance `load` of what it drives.
    fn transfer(&self, point: &Point, load: &Mat2) -> Result<Mat2, SingularStage>;

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

    fn solver(&self) -> &dyn StageSolve {
        match self {
            StageKind::SourceNetwork(stage) => stage,
            StageKind::DifferenceAmp(stage) => stage,
            StageKind::ThreeOpAmpInAmp(stage) => stage,
            StageKind::IntegratedInAmp(stage) => stage,
            StageKind::DifferentialPair(stage) => stage,
            StageKind::Adc(stage) => stage,
        }
    }
}

impl StageSolve for StageKind {
    fn input_admittance(&self, point: &Point, load: &Mat2) -> Mat2 {
        self.solver().input_admittance(point, load)
    }

    fn transfer(&self, point: &Point, load: &Mat2) -> Result<Mat2, SingularStage> {
        self.solver().transfer(point, load)
    }

    fn probes(&self, point: &Point, load: &Mat2) -> Vec<Probe> {
        self.solver().probes(point, load)
    }

    fn output_levels(&self, point: &Point, load: &Mat2) -> [f64; 2] {
        self.solver().output_levels(point, load)
    }
}
