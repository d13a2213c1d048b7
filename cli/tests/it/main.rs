//! End-to-end tests of the `fieldgrade` binary, by topic.

/// Load cases and breakdown checks: scaling, bases, verdicts, errors, the demos' tables.
mod breakdown;
/// Sizes the machine cannot hold are refused before meshing.
mod budget;
/// `fieldgrade check`: adaptivity, convergence and singular-point sections.
mod check;
/// Running the binary and reading what it wrote.
mod common;
/// The corpus of bad inputs in `fixtures/bad/`: message fragments and exit codes.
mod corpus;
/// `fieldgrade debug matrix` dumps a system an independent solver can solve.
mod debug_matrix;
/// Every bad model file gives a located message, exit code 2, and writes nothing.
mod errors;
/// Every singular point the mesh lists is graded by the corner law (checked on the VTU).
mod grading;
/// `[import]`: meshes made elsewhere, solved and refused.
mod import;
/// `fieldgrade mesh` statistics of the shipped demo models (insta snapshots).
mod mesh_report;
/// The files `mesh` writes (VTU, SVG, JSON) are complete and consistent.
mod outputs;
/// `[[boundary.piece]]`: conditions on stretches of the boundary against exact solutions.
mod pieces;
/// `[[point]]`: V and E at named points against closed forms, with `check`'s bars.
mod points;
/// The HTML report and its plots.
mod report;
/// `sector` and `half_disc` shapes against closed forms, and their errors.
mod shapes;
/// `fieldgrade solve`: results, closed-form check, errors.
mod solve;
/// `[[thin_electrode]]`: zero-thickness conductors against conformal maps and elliptic integrals.
mod thin;
