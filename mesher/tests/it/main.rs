//! Integration tests of the mesher, by topic.

/// Shared helpers: small geometries and mesh measurements.
mod common;
/// Random simple polygons with holes: termination, validity, coverage, areas.
mod props;
/// Circular arcs: nodes on the true circle, chord error within the tolerance.
mod arcs;
/// Grading towards singular corners follows h₀·(r/R)^(1−μ).
mod grading;
/// Singular points and their exponents on whole geometries.
mod corners;
/// Bad geometry and parameters give errors, never panics.
mod errors;
