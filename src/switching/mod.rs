//! Switching common modes in time: a periodic trapezoid (a PWM edge's
//! common-mode step, a ground that shifts with each switching edge) taken
//! through the chain harmonic by harmonic, and the differential residue it
//! leaves over one period: its peak, its rms, how long after each edge it
//! settles into a band, and what a converter's sampling window sees.
//!
//! The waveform's Fourier series is exact ([`series`]); each harmonic goes
//! through the same exact chain solve as a sine source; the sum is
//! truncated at a stated frequency with the part left out bounded
//! ([`ResidueAnalysis::truncation_v`]).

pub mod measure;
pub mod residue;
mod series;
pub mod synthesis;

pub use measure::{settling_time, Measure};
pub use residue::{
    analyse_residue, common_mode_samples, corner_residue, corner_values, harmonic_count,
    rss_envelope, sample_count, worst_case_envelope, Deviation, ResidueAnalysis, MAX_HARMONICS,
};

use crate::engine::linalg::C64;

/// One residue waveform over a period, volts referred to the input.
#[derive(Debug, Clone, PartialEq)]
pub struct Residue {
    /// Its mean.
    pub dc: f64,
    /// Its complex Fourier coefficients `c_1 … c_N` (the waveform is
    /// `dc + Σ 2·Re(c_n e^{jnω₀t})`).
    pub harmonics: Vec<C64>,
    /// Its values at evenly spaced times over the period, from the start
    /// of the rising edge.
    pub samples: Vec<f64>,
}
