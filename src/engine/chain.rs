//! Solving the whole chain at one point.

use super::kernel::step;
use super::linalg::Mat2;
use super::mixed_mode::MixedMode;
use crate::stage::{Admittance, Frequency, Point, SingularStage, Stage};

/// The longest chain the engine solves (a fixed bound keeps the per-point
/// solve free of heap allocation).
pub const MAX_STAGES: usize = 16;

/// Why the chain has no usable solution at a point.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum EngineError {
    /// A stage's circuit is singular.
    #[error(transparent)]
    Singular(#[from] SingularStage),
    /// A stage of the chain, named by its label, is singular.
    #[error("stage `{label}`: {cause}; a likely cause is a part of that stage at an extreme (an open or shorted resistor, a gain or gain-bandwidth far from its neighbours'): check its values")]
    InStage {
        /// The stage's label.
        label: String,
        /// What failed.
        cause: SingularStage,
    },
    /// The solve overflowed or lost every digit: values too far apart in
    /// magnitude to combine in double precision.
    #[error("the solve at {} gives no finite result: the budget's values are too far apart in magnitude to combine; check the largest and smallest values (resistances, capacitances, gains)", crate::quantity::format_si(*.freq_hz, "Hz"))]
    NotFinite {
        /// The frequency.
        freq_hz: f64,
    },
    /// More stages than [`MAX_STAGES`].
    #[error("the chain has {count} stages; at most {MAX_STAGES} are supported")]
    TooManyStages {
        /// How many there are.
        count: usize,
    },
    /// The chain passes no differential signal, so nothing can be referred
    /// to its input.
    #[error("the chain has no differential gain at {}, so errors cannot be referred to its input; a likely cause is a stage whose gain is zero there (a gain resistor, gain or gain-bandwidth at an extreme)", crate::quantity::format_si(*.freq_hz, "Hz"))]
    NoDifferentialGain {
        /// The frequency.
        freq_hz: f64,
    },
}

/// The load each stage drives at `point`, from the last stage back: each
/// stage is loaded by the input admittance of the next, which may itself
/// depend on its own load. The last stage drives nothing.
pub fn stage_loads(chain: &[Stage], point: &Point) -> Result<[Mat2; MAX_STAGES], EngineError> {
    let mut loads = [Mat2::ZERO; MAX_STAGES];
    if chain.len() > MAX_STAGES {
        return Err(EngineError::TooManyStages { count: chain.len() });
    }
    for index in (0..chain.len().saturating_sub(1)).rev() {
        loads[index] = chain[index + 1]
            .kind
            .input_admittance(point, &loads[index + 1]);
    }
    Ok(loads)
}

/// The mixed-mode response of the whole chain at `point`, from the sensor's
/// (vdm, vcm) to the last stage's output.
///
/// Each stage is solved with the input admittance of the stage after it as
/// its load, so the source network and the first amplifier are solved
/// together; stages are multiplied in node-voltage form, which keeps a
/// single-ended output (output, ground) exact when a differential stage
/// follows it. The same composition, over many frequencies at once, is the
/// Monte Carlo's ([`super::ChainKernel`]).
pub fn chain_response(chain: &[Stage], point: &Point) -> Result<MixedMode, EngineError> {
    if chain.len() > MAX_STAGES {
        return Err(EngineError::TooManyStages { count: chain.len() });
    }
    let w = Frequency::new(point.freq_hz);
    let mut load = Admittance::open();
    let mut total = None;
    for stage in chain.iter().rev() {
        let values = stage.kind.values(point.values);
        if !step(&values, &w, &mut load, &mut total) {
            return Err(EngineError::InStage {
                label: stage.label.clone(),
                cause: SingularStage {
                    stage: stage.kind.solve_name(),
                    freq_hz: point.freq_hz,
                },
            });
        }
    }
    let total = match total {
        Some(transfer) => {
            transfer
                .matrix("chain", point.freq_hz)
                .map_err(|_| EngineError::NotFinite {
                    freq_hz: point.freq_hz,
                })?
        }
        None => Mat2::IDENTITY,
    };
    let response = MixedMode::from_nodes(&total);
    let gain = response.dd.norm();
    if gain.is_nan() || !response.dc.norm().is_finite() {
        return Err(EngineError::NotFinite {
            freq_hz: point.freq_hz,
        });
    }
    if gain == 0.0 || !gain.is_finite() {
        return Err(EngineError::NoDifferentialGain {
            freq_hz: point.freq_hz,
        });
    }
    Ok(response)
}
