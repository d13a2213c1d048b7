//! Integration tests of the electrostatic solve against closed forms, by topic.

/// Breakdown checks (utilisation factor, stressed volume, peaks, creepage) against closed forms.
mod checks;
/// Capacitance of coaxial cylinders and concentric spheres (closed forms).
mod closed_forms;
/// Geometry helpers.
mod common;
/// The re-entrant corner benchmark: uniform and graded convergence rates.
mod corner;
/// Goal-oriented estimates of a charge, a floating potential and a local field.
mod goals;
/// Error bars against true errors on closed forms (containment and sharpness).
mod honesty;
/// The coaxial closed form on meshes imported from files made elsewhere.
mod import;
/// The L-shaped corner benchmark's exact solution and problem.
pub mod lshape;
/// Linear potentials reproduced exactly; invariants of the solution.
mod patch;
