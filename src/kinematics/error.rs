//! The kinematics layer's error: unchecked numbers given to its studies (tolerances, widths,
//! layers). The solvers themselves never fail with an error: they return a status.

/// Bad input to a kinematic study; each variant names the field and the value.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum KinematicsError {
    /// A tolerance, clearance, width or radius is negative, NaN or infinite.
    #[error("{field} must be a non-negative finite number, got {value}")]
    NotNonNegative {
        /// Which quantity.
        field: &'static str,
        /// The offending value.
        value: f64,
    },
    /// A body was put on layer 0, which is the frame.
    #[error("the {body} cannot be on layer 0: layer 0 is the frame, links start at 1")]
    FrameLayer {
        /// Which body.
        body: &'static str,
    },
    /// Two bodies pinned together were put on one layer: a pin joint needs two.
    #[error("the {first} and the {second} are pinned together and cannot share layer {layer}")]
    SharedLayer {
        /// One body.
        first: &'static str,
        /// The other body.
        second: &'static str,
        /// The layer both were given.
        layer: u8,
    },
}

/// `value` if it is finite and not negative, else [`KinematicsError::NotNonNegative`].
pub(crate) fn non_negative(field: &'static str, value: f64) -> Result<f64, KinematicsError> {
    if value.is_finite() && value >= 0.0 {
        Ok(value)
    } else {
        Err(KinematicsError::NotNonNegative { field, value })
    }
}
