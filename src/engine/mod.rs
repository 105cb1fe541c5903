//! The exact small-signal engine: chain the stages at a frequency, turn the
//! node-voltage response into a mixed-mode one, and split the CM-to-DM
//! conversion into contributions.

mod body;
mod chain;
mod contributions;
mod corners;
mod headroom;
mod kernel;
pub mod lane;
pub mod linalg;
mod mixed_mode;
mod settle;
mod tare;

pub use body::{body_levels, loop_crossing, BodyLevels, LoopCrossing};
pub use chain::{chain_response, stage_loads, EngineError, MAX_STAGES};
pub use contributions::{
    analyse_point, analyse_point_at, nominal_differential_gain, ranking_key, resolved,
    Contribution, PointAnalysis, RESOLUTION_FLOOR,
};
pub use corners::{worst_corner, worst_corners, CornerSearch, EXHAUSTIVE_LIMIT};
pub use headroom::{check_headroom, HeadroomFinding};
pub use kernel::ChainKernel;
pub use mixed_mode::MixedMode;
pub use settle::settle;
pub use tare::{tare_residual, TareResidual};
