//! Position sweep benchmark (written in the kinematics work).

fn main() {}
