//! The validated budget: what the engine computes from. Built only by the
//! validator in [`crate::budget`]; the engine never sees budget-file text.

mod budget;
mod digital_filter;
mod params;

pub use budget::{
    describe_volts, Amplitude, BridgeExcitation, Budget, Edge, ErrorLimit, ExcitationRipple,
    Interference, Judgement, Measurand, MinimumCmrr, NullTrim, Production, RatiometricReference,
    Requirement, Safety, SampleWindow, Sense, SweepRange, Switching, Tare, TemperatureRange,
    Trapezoid,
};
pub use digital_filter::{DigitalFilter, FilterError, ResponseTable, SincFilter, SincForm};
pub use params::{Derivation, ParamId, Parameter, Parameters, Presentation, Variation};
