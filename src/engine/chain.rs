//! Solving the whole chain at one point.

use super::linalg::Mat2;
use super::mixed_mode::MixedMode;
use crate::stage::{Point, SingularStage, Stage, StageSolve};

/// The longest chain the engine solves (a fixed bound keeps the per-point
/// solve free of heap allocation).
pub const MAX_STAGES: usize = 16;

/// Why the chain has no usable solution at a point.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum EngineError {
    /// A stage's circuit is singular.
    #[error(transparent)]
    Singular(#[from] SingularStage),
    /// More stages than [`MAX_STAGES`].
    #[error("the chain has {count} stages; at most {MAX_STAGES} are supported")]
    TooManyStages {
        /// How many there are.
        count: usize,
    },
    /// The chain passes no differential signal, so nothing can be referred
    /// to its input.
    #[error("the chain has no differential gain at {freq_hz} Hz, so errors cannot be referred to its input")]
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
/// together; stages are then multiplied in node-voltage form, which keeps a
/// single-ended output (output, ground) exact when a differential stage
/// follows it.
pub fn chain_response(chain: &[Stage], point: &Point) -> Result<MixedMode, EngineError> {
    let loads = stage_loads(chain, point)?;
    let mut total = Mat2::IDENTITY;
    for (stage, load) in chain.iter().zip(&loads) {
        total = stage.kind.transfer(point, load)? * total;
    }
    let response = MixedMode::from_nodes(&total);
    if response.dd.norm() == 0.0 || !response.dd.norm().is_finite() {
        return Err(EngineError::NoDifferentialGain {
            freq_hz: point.freq_hz,
        });
    }
    Ok(response)
}
