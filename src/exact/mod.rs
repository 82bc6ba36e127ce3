//! Exact (precision-point) synthesis: the published closed-form and algebraic methods.
//!
//! These are tools of their own and sources of good starting designs for the synthesis
//! engine:
//!
//! - [`chebyshev`]: Chebyshev spacing of precision points;
//! - [`formula`]: formulas `y = f(x)` for function generation;
//! - [`freudenstein`]: Freudenstein's equation for function generation (three precision
//!   points exactly, more by least squares);
//! - [`motion`]: motion generation by Burmester theory (three, four and five poses).
//!
//! Kinematics only: strength, guarding and safety follow local codes and licensed
//! engineering practice ([`crate::SAFETY_NOTE`]).

pub mod chebyshev;
pub mod formula;
pub mod freudenstein;
pub mod motion;
mod poly;
