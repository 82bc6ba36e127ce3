//! Kinematic analysis of a given linkage: positions, rates, range of motion and sweeps.

pub mod analysis;
pub mod error;
#[cfg(test)]
mod fixtures;
pub mod interference;
pub mod parts;
pub mod position;
pub mod range;
pub mod rates;
pub mod statics;
pub mod sweep;
pub mod tolerance;
