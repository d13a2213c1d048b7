//! Integration tests of the mesher, by topic.

/// Circular arcs: nodes on the true circle, chord error within the tolerance.
mod arcs;
/// The mesh size predicted before meshing, and the node budget.
mod budget;
/// Shared helpers: small geometries and mesh measurements.
mod common;
/// Singular points and their exponents on whole geometries.
mod corners;
/// Bad geometry and parameters give errors, never panics.
mod errors;
/// The open boundary's mapped exterior.
mod exterior;
/// Grading towards singular corners follows h₀·(r/R)^(1−μ).
mod grading;
/// Reading grid files made elsewhere (VTU in every encoding, legacy VTK).
mod import;
/// The modules form no import cycle.
mod layers;
/// Random simple polygons with holes: termination, validity, coverage, areas.
mod props;
/// Thin electrodes: both faces meshed, square-root ends, misplacement refused.
mod thin;
