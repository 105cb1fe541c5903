//! The validated budget: what the engine computes from. Built only by the
//! validator in [`crate::budget`]; the engine never sees budget-file text.

mod budget;
mod params;

pub use budget::{
    describe_volts, Amplitude, Budget, Edge, ErrorLimit, Interference, Judgement, Measurand,
    MinimumCmrr, NullTrim, Production, Requirement, Safety, SampleWindow, SweepRange, Switching,
    TemperatureRange, Trapezoid,
};
pub use params::{Derivation, ParamId, Parameter, Parameters, Presentation, Variation};
