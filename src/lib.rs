//! Common-mode rejection budgets for differential sensor front ends.
#![warn(missing_docs)]

pub mod budget;
pub mod design;
pub mod engine;
pub mod model;
pub mod montecarlo;
pub mod plot;
pub mod quantity;
pub mod report;
pub mod stage;
pub mod sweep;
