//! Common-mode rejection budgets for differential sensor front ends.
#![warn(missing_docs)]
// No unsafe code, except the call into the Monte Carlo kernel's AVX2 build
// once the processor has reported AVX2 (`montecarlo::fast`), allowed there.
#![deny(unsafe_code)]

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
pub mod switching;
pub mod verdict;
