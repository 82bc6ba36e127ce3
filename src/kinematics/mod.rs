//! Kinematic analysis of a given linkage: positions, rates, range of motion and sweeps.

pub mod analysis;
pub mod position;
pub mod range;
pub mod rates;
pub mod sweep;
