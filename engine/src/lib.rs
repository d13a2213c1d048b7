//! Mesh → solution: the physics and numerics stage of fieldgrade.
//!
//! The pipeline, one data type per stage, one direction:
//!
//! ```text
//! model file ──(cli)──► mesher::Geometry ──(mesher)──► mesher::Mesh ──(engine)──► Solution
//! ```
//!
//! `engine` takes a [`mesher::Mesh`] and a [`Problem`] (permittivity per region, how each
//! conductor is held, the outer boundary) and solves the electrostatic problem
//! −∇·(ε∇V) = 0 with linear or quadratic (isoparametric) triangles, planar or
//! axisymmetric. It never parses files and never prints: the command-line front end does
//! both.
//!
//! # Brief overview
//! - [`Problem`], [`ConductorSpec`]: the physics.
//! - [`solve()`] → [`Solution`]: nodal potentials, conductor potentials and charges
//!   (reaction method), stored energy.
//! - [`element_fields`] → [`ElementFields`]: E per element and the peak |E| per region
//!   with its location.
//! - [`capacitance_matrix`]: the Maxwell capacitance matrix of the fixed conductors.
//! - [`FactoredSolution::point_values`]: V and the recovered E at named points, per side
//!   on an interface ([`point_regions`]: the sides).
//! - [`probe_line`], [`probe_interface`]: V and E along a polyline, and normal and
//!   tangential E on both sides of an interface or on a conductor surface.
//! - [`grid_convergence`]: observed order, Richardson extrapolation and grid convergence
//!   index of a quantity over a refinement sequence.
//! - [`estimate_error`]: recovery-based error estimate (P1 and P2); [`adapt()`],
//!   [`adapt_watching`]: the adaptive loop; [`singular_coefficient_dual`],
//!   [`singular_coefficient`]: the coefficient of the singular term at a conductor corner.
//! - breakdown checks: [`stress_check`] (utilisation, margin, verdict with the error bar),
//!   [`local_peaks`], [`electrode_distance`] and [`field_utilisation`], [`stressed_volume`]
//!   (and the Weibull effective volume), [`creepage_path`]; [`exclusion_discs`] around
//!   singular points.
//! - [`space`]: reference elements and quadrature rules.
//!
//! Status: the solve, fields, capacitance matrix, probes, open boundary, error estimate,
//! adaptive loop and singular coefficients are in place and checked against closed forms
//! and published benchmarks (see the tests beside each module).
//!
//! ```
//! use engine::{solve, ConductorSpec, Problem, EPSILON_0};
//! use mesher::{generate, Fill, Geometry, OuterBoundary, Outline, RefineParams, Shape, Symmetry};
//! // Coaxial cylinders, inner radius 1 cm at 1 V, outer radius 3 cm earthed, air.
//! let shapes = vec![
//!     Shape { name: "gap".into(), fill: Fill::Dielectric { permittivity: 1.0 }, max_size_m: None,
//!             outline: Outline::circle("gap", [0.0, 0.0], 0.03)? },
//!     Shape { name: "core".into(), fill: Fill::Conductor { conductor: 0 }, max_size_m: None,
//!             outline: Outline::circle("core", [0.0, 0.0], 0.01)? },
//! ];
//! let geo = Geometry { symmetry: Symmetry::Planar, shapes, conductors: vec!["core".into()],
//!                      outer: OuterBoundary::FixedPotential, size_points: vec![], thin: vec![], boundary_pieces: vec![] };
//! let mesh = generate(&geo, &RefineParams::new().with_max_size_m(0.004))?.mesh;
//! let problem = Problem { permittivity: vec![1.0, 1.0], conductors: vec![ConductorSpec::Fixed { potential_v: 1.0 }],
//!                         outer_potential_v: Some(0.0), ..Default::default() };
//! let sol = solve(&mesh, &problem).unwrap();
//! // Capacitance per metre 2πε₀/ln(b/a), from the charge at 1 V.
//! let exact = 2.0 * std::f64::consts::PI * EPSILON_0 / 3f64.ln();
//! assert!((sol.conductor_charges[0] - exact).abs() < 1e-3 * exact);
//! # Ok::<(), mesher::MeshError>(())
//! ```
//!
//! # Crate features
//! None. Sparse Cholesky comes from `faer`; no `faer` type appears in the public API.
#![forbid(unsafe_code)]
#![deny(missing_docs)]
#![warn(missing_debug_implementations)]

mod adapt;
mod budget;
mod certify;
mod checks;
mod convergence;
mod error;
mod estimate;
mod fields;
mod goal;
mod ordering;
mod probe;
mod problem;
mod singular;
mod solve;
pub mod space;

pub use adapt::{
    adapt, adapt_from, adapt_watching, AdaptOutcome, AdaptParams, AdaptStep, AdaptiveMesh, MeshSource, StepTimings,
    Watched,
};
pub use budget::{predicted_memory_bytes, unknowns_per_vertex, unknowns_within};
pub use certify::{
    certify, BarStatus, ErrorBar, QuantityClass, FUNCTIONAL_ESTIMATE_SAFETY, ORDER_BAND, SETTLED_FRACTION,
};
pub use checks::{
    condenser_grading, creepage_path, electrode_distance, field_line_starts, field_utilisation, local_peaks,
    stress_check, stressed_volume, trace_field_lines, CreepageChain, CreepagePath, CreepageRow, Electrode, FieldLine,
    GapDistance, Gas, GasKind, GradingLayer, GradingStack, LineEnd, LocalPeak, PeakSite, StressCheck, StressedVolume,
    Verdict, WeibullVolume,
};
pub use convergence::{
    grid_convergence, sequence_verdict, Behaviour, ConvergenceKind, ConvergenceStudy, SequenceVerdict,
    GCI_SAFETY_FACTOR,
};
pub use error::SolveError;
pub use estimate::{estimate_error, ErrorEstimate};
pub use fields::{
    element_fields, energy_error, exclusion_discs, in_exclusion_disc, region_peaks_away_from, ElementFields, RegionPeak,
};
pub use goal::{goal_estimates, Goal, GoalEstimate};
pub use probe::{
    point_regions, probe_interface, probe_line, InterfaceSample, InterfaceSelector, LineSample, PointSide, SideField,
};
pub use problem::{BoundaryStretch, ConductorSpec, Problem, StretchCondition};
pub use singular::{
    singular_coefficient, singular_coefficient_dual, singular_field, singular_field_factor, singular_radius_above,
    SingularFit,
};
pub use solve::{
    capacitance_matrix, check_contacts, reduced_system, solve, solve_factored, solve_with_capacitance, solver_ordering,
    CapacitanceMatrix, FactoredSolution, ReducedSystem, Solution, SolveTimings, EPSILON_0,
};
