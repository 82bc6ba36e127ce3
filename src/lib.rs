//! # crankwright
//!
//! Dimensional synthesis and verification of planar four-bar linkages.
//!
//! The crate follows the data: a [`FourBar`] linkage model, its kinematics (Newton-Raphson
//! position analysis on the loop-closure equations, continuation sweeps, rates, range of
//! motion), and on top of those the synthesis tasks and reports.
//!
//! ```
//! use crankwright::{Assembly, CouplerPoint, FourBar, GrashofClass};
//! use crankwright::kinematics::position::{position_at, NewtonOptions};
//! use nalgebra::Point2;
//!
//! // A crank-rocker: ground 80, crank 25, coupler 70, output 55 (mm).
//! let l = FourBar::new(
//!     Point2::new(0.0, 0.0),
//!     Point2::new(80.0, 0.0),
//!     25.0,
//!     70.0,
//!     55.0,
//!     CouplerPoint { p: 30.0, q: 15.0 },
//!     Assembly::Open,
//! )?;
//! assert_eq!(l.grashof(), GrashofClass::CrankRocker);
//! let pose = position_at(&l, 0.5, &NewtonOptions::default()).expect("assembles");
//! // The loop closes: |B - A| equals the coupler length.
//! let gap = (l.joint_b(pose.theta4) - l.joint_a(pose.theta2)).norm();
//! assert!((gap - 70.0).abs() < 1e-9);
//! # Ok::<(), crankwright::LinkageError>(())
//! ```
//!
//! Kinematics only: strength, pinch points, guarding and safety of a real machine follow
//! local machinery codes and licensed engineering practice.

pub mod design;
pub mod exact;
pub mod feasibility;
pub mod fsutil;
pub mod input;
pub mod kinematics;
pub mod linkage;
pub mod report;
pub mod scenario;
pub mod synthesis;
pub mod task;

pub use design::{load_designs, Design, DesignFile};
pub use input::InputError;
pub use kinematics::analysis::{analyse, Analysis, AnalysisOptions};
pub use kinematics::position::{
    closed_form, solve_position, NewtonOptions, Pose, PositionSolve, PositionStatus,
};
pub use kinematics::range::InputRange;
pub use kinematics::rates::{rates, Rates};
pub use kinematics::sweep::{sweep, Sweep, SweepOptions, TraceEnd, Tracer};
pub use linkage::{Assembly, CouplerPoint, FourBar, GrashofClass, LinkageError};

/// The caution printed with every report: this is kinematics only.
pub const SAFETY_NOTE: &str = "Kinematic design only: link strength, pinch and crush points, \
guarding and safety are not checked; they follow local machinery codes and licensed \
engineering practice.";
