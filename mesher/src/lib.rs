//! Geometry → mesh: the first stage of fieldgrade.
//!
//! `mesher` turns the cross-section of a high-voltage insulation part — a planar or
//! axisymmetric [`Geometry`] made of shapes bounded by straight lines and circular arcs,
//! painted in order into dielectric regions and conductors — into a quality triangular
//! [`Mesh`], graded towards the points where the electric field is singular. It never solves
//! anything and never reads files: the command-line front end builds the [`Geometry`], the
//! `engine` crate consumes the [`Mesh`].
//!
//! # Brief overview
//! - [`Geometry`], [`Shape`], [`Outline`], [`Curve`]: the exact input.
//! - [`generate`] with [`RefineParams`] → [`MeshOutcome`] holding the [`Mesh`] (plain arrays,
//!   `u32` ids, [`EdgeTag`]s on every boundary and interface edge) and the [`SizeField`].
//! - [`SingularPoint`]s found on the way: every conductor corner re-entrant into a
//!   dielectric, every point where a dielectric interface meets a conductor, every re-entrant
//!   corner of the outer boundary and every dielectric corner, each with its exponent λ
//!   ([`wedge_exponent`]).
//! - [`Mesh::validate`] checks conformity, orientation, tags and P2 node placement; it runs
//!   on every mesh [`generate`] returns.
//!
//! ```
//! use mesher::{generate, Fill, Geometry, OuterBoundary, Outline, RefineParams, Shape, Symmetry};
//! // An L-shaped electrode (conductor 0) in a square box of air, 1 m across.
//! let shapes = vec![
//!     Shape { name: "air".into(), fill: Fill::Dielectric { permittivity: 1.0 }, max_size_m: None,
//!             outline: Outline::rectangle("air", [-1.0, -1.0], [2.0, 2.0], 0.0)? },
//!     Shape { name: "hv".into(), fill: Fill::Conductor { conductor: 0 }, max_size_m: None,
//!             outline: Outline::polygon("hv", &[[-0.5, -0.5], [0.0, -0.5], [0.0, 0.0], [-0.5, 0.0]])? },
//! ];
//! let geo = Geometry { symmetry: Symmetry::Planar, shapes, conductors: vec!["hv".into()],
//!                      outer: OuterBoundary::FixedPotential, size_points: vec![], thin: vec![], boundary_pieces: vec![] };
//! let out = generate(&geo, &RefineParams::new().with_order(1).with_max_size_m(0.1))?;
//! // The square electrode's four corners are re-entrant (θ₀ = 3π/2, λ = 2/3).
//! assert_eq!(out.mesh.singular_points.len(), 4);
//! assert!((out.mesh.singular_points[0].lambda - 2.0 / 3.0).abs() < 1e-9);
//! assert!(out.mesh.stats().min_angle_deg > 20.0);
//! # Ok::<(), mesher::MeshError>(())
//! ```
//!
//! # Crate features
//! None. The crate uses `spade` for the constrained Delaunay triangulation and its exact
//! predicates (no spade type appears in the public API).
//!
//! # References
//! Ruppert (1995), Chew (1993) and Shewchuk (2002) for Delaunay refinement;
//! Babuška–Kellogg–Pitkäranta (1979) and Apel–Sändig–Whiteman (1996) for graded meshes;
//! see the module docs of the size field and the corner analysis.
#![forbid(unsafe_code)]
#![deny(missing_docs)]
#![warn(missing_debug_implementations)]

mod arrangement;
mod bisect;
mod budget;
mod corners;
mod delaunay_refine;
mod error;
mod exterior;
mod geometry;
mod grading;
mod grid;
mod import;
mod import_mesh;
mod mesh;
mod refine;
mod singular_point;
mod size_field;
mod smooth;
mod triangulate;
mod vtu;

pub use bisect::{bisect_to_sizes, Bisected};
pub use budget::{predict, SizePrediction, DELIVERY};
pub use corners::{conical_exponent, legendre_p, wedge_exponent, Sector, SingularKind, SingularPoint, Wall};
pub use error::MeshError;
pub use geometry::{
    BoundaryPiece, Curve, Fill, Geometry, OuterBoundary, Outline, Shape, SizePoint, Symmetry, ThinElectrode, Xy,
};
pub use grading::{Grading, GradingStatus, GRADED_WITHIN};
pub use grid::{triangle_grid, BucketGrid};
pub use import::{read_grid, GridFile, ReadError};
pub use import_mesh::{find_singular_points, import_mesh, BoundaryUse, ImportError, ImportSpec, Imported, RegionUse};
pub use mesh::{ArcGeom, CornerFans, EdgeTag, Exterior, Mesh, MeshStats, TaggedEdge};
pub use refine::{MeshOutcome, RefineParams, DEFAULT_MAX_SIZE_FRACTION};
pub use size_field::{BackgroundSize, SizeField, SizeSource};
pub use triangulate::{generate, generate_with};
pub use vtu::{read_vtu_array, write_vtu, CellArray, NodeArray, VtuEncoding};
