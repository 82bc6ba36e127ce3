//! Reports for people and programs: the `check` summary and the `sweep` table.

pub mod check;
pub mod table;

/// Radians to degrees, rounded to 1e-9 degree so that files do not carry float noise.
pub fn deg(rad: f64) -> f64 {
    (rad.to_degrees() * 1e9).round() / 1e9
}

/// An angle in degrees wrapped into `[0, 360)`.
pub fn deg_wrapped(rad: f64) -> f64 {
    let d = deg(rad).rem_euclid(360.0);
    if d >= 360.0 - 1e-9 {
        0.0
    } else {
        d
    }
}
