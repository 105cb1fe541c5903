//! Production spread: Monte Carlo over the parameters' distributions with
//! the exact engine, streaming statistics, and the worst sign corner.

mod rng;

pub use rng::SplitMix64;
pub mod production;
mod run;
mod sampler;
mod stats;

pub use run::{
    run_yield, TemperatureMode, TrialCheck, YieldError, YieldOptions, YieldRun, MAX_TRIALS,
};
pub use sampler::Sampler;
pub use stats::{wilson_interval, CmrrHistogram, BIN_DB, HISTOGRAM_LOW_DB};
