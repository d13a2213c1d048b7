//! Meshing parameters and the outcome of a meshing run.

use crate::error::MeshError;
use crate::mesh::Mesh;
use crate::size_field::SizeField;

/// Parameters of a meshing run. Plain values with documented defaults; set them with the
/// consuming `with_*` methods.
#[derive(Clone, Debug, PartialEq)]
pub struct RefineParams {
    /// Largest element edge length, metres. Default: `None`, meaning 1/25 of the domain's
    /// bounding-box diagonal.
    pub max_size_m: Option<f64>,
    /// Smallest element size the grading may ask for, metres. Default: `None`, meaning
    /// 1e-6 of the domain's diagonal.
    pub min_size_m: Option<f64>,
    /// Element order, 1 or 2. Default 2. It decides which corners are graded (exponent
    /// λ < order) and how strongly (μ = f·λ/order).
    pub order: u8,
    /// Minimum interior angle that refinement enforces, degrees, in (0, 33]. Default 30.
    pub min_angle_deg: f64,
    /// Largest ratio between the sizes of neighbouring elements, > 1. Default 1.3.
    pub gradation: f64,
    /// Largest distance between a boundary chord and its arc, as a fraction of the chord
    /// length, in (0, 0.125]. Default 0.025, which means chords at most 0.2·R (8 elements per
    /// quarter circle).
    pub chord_tolerance: f64,
    /// Grading fraction f in (0, 1): the grading exponent is μ = f·λ/order. Default 0.85.
    pub grading_fraction: f64,
    /// Grade the mesh towards singular points. Default true.
    pub grade_corners: bool,
    /// Budget: the run stops adding nodes past this count and reports `complete = false`.
    /// Default 4 000 000.
    pub max_nodes: usize,
    /// Sweeps of vertex smoothing after refinement (see the `smooth` module), at most 20.
    /// Default 0.
    pub smoothing_passes: usize,
}

impl Default for RefineParams {
    fn default() -> Self {
        Self::new()
    }
}

/// The global element size when none is given, as a fraction of the domain's diagonal.
pub const DEFAULT_MAX_SIZE_FRACTION: f64 = 1.0 / 25.0;

impl RefineParams {
    /// The global element size for `geo`: the one given, or
    /// [`DEFAULT_MAX_SIZE_FRACTION`] of the domain's diagonal.
    pub fn max_size_for(&self, geo: &crate::Geometry) -> f64 {
        self.max_size_m.unwrap_or(DEFAULT_MAX_SIZE_FRACTION * geo.scale())
    }

    /// The defaults: automatic max size, order 2, 30°, gradation 1.3, chord tolerance 0.025,
    /// grading fraction 0.85, grading on, 4·10⁶ nodes at most, no smoothing.
    pub fn new() -> Self {
        RefineParams {
            max_size_m: None,
            min_size_m: None,
            order: 2,
            min_angle_deg: 30.0,
            gradation: 1.3,
            chord_tolerance: 0.025,
            grading_fraction: 0.85,
            grade_corners: true,
            max_nodes: 4_000_000,
            smoothing_passes: 0,
        }
    }

    /// Sets the largest element size, metres.
    pub fn with_max_size_m(mut self, h: f64) -> Self {
        self.max_size_m = Some(h);
        self
    }
    /// Sets the smallest element size, metres.
    pub fn with_min_size_m(mut self, h: f64) -> Self {
        self.min_size_m = Some(h);
        self
    }
    /// Sets the element order (1 or 2).
    pub fn with_order(mut self, order: u8) -> Self {
        self.order = order;
        self
    }
    /// Sets the minimum angle, degrees.
    pub fn with_min_angle_deg(mut self, deg: f64) -> Self {
        self.min_angle_deg = deg;
        self
    }
    /// Sets the gradation factor.
    pub fn with_gradation(mut self, g: f64) -> Self {
        self.gradation = g;
        self
    }
    /// Sets the chord tolerance.
    pub fn with_chord_tolerance(mut self, c: f64) -> Self {
        self.chord_tolerance = c;
        self
    }
    /// Sets the grading fraction.
    pub fn with_grading_fraction(mut self, f: f64) -> Self {
        self.grading_fraction = f;
        self
    }
    /// Turns corner grading on or off.
    pub fn with_grade_corners(mut self, on: bool) -> Self {
        self.grade_corners = on;
        self
    }
    /// Sets the node budget.
    pub fn with_max_nodes(mut self, n: usize) -> Self {
        self.max_nodes = n;
        self
    }
    /// Sets the number of smoothing sweeps.
    pub fn with_smoothing_passes(mut self, n: usize) -> Self {
        self.smoothing_passes = n;
        self
    }

    /// Checks every parameter against its range.
    ///
    /// # Errors
    /// [`MeshError::BadParameter`] naming the parameter and its allowed range.
    pub fn validate(&self) -> Result<(), MeshError> {
        let check = |name: &'static str, v: f64, ok: bool, allowed: &'static str| {
            if ok && v.is_finite() {
                Ok(())
            } else {
                Err(MeshError::BadParameter { name, value: v, allowed })
            }
        };
        if let Some(h) = self.max_size_m {
            check("max_size", h, h > 0.0, "a length > 0")?;
        }
        if let Some(h) = self.min_size_m {
            check("min_size", h, h > 0.0, "a length > 0")?;
        }
        check("order", self.order as f64, self.order == 1 || self.order == 2, "1 or 2")?;
        check(
            "min_angle_deg",
            self.min_angle_deg,
            self.min_angle_deg > 0.0 && self.min_angle_deg <= 33.0,
            "more than 0 and at most 33 degrees (higher limits do not terminate)",
        )?;
        check("gradation", self.gradation, self.gradation > 1.0 && self.gradation <= 3.0, "more than 1 and at most 3")?;
        check(
            "chord_tolerance",
            self.chord_tolerance,
            self.chord_tolerance > 0.0 && self.chord_tolerance <= 0.125,
            "more than 0 and at most 0.125",
        )?;
        check(
            "grading_fraction",
            self.grading_fraction,
            self.grading_fraction > 0.0 && self.grading_fraction < 1.0,
            "strictly between 0 and 1",
        )?;
        check("max_nodes", self.max_nodes as f64, self.max_nodes >= 16, "at least 16")?;
        check("smoothing_passes", self.smoothing_passes as f64, self.smoothing_passes <= 20, "at most 20")?;
        Ok(())
    }
}

/// The result of a meshing run: the mesh, and whether refinement finished within budget.
#[derive(Clone, Debug)]
pub struct MeshOutcome {
    /// The mesh (validated).
    pub mesh: Mesh,
    /// False when the node budget stopped the refinement: the mesh is valid but some
    /// triangles may be larger or worse-shaped than asked.
    pub complete: bool,
    /// Why the run is incomplete, if it is.
    pub reason: Option<String>,
    /// The size field the mesh was built for.
    pub size_field: SizeField,
    /// Wall-clock seconds per stage (geometry, boundary, seeding, spade bulk load, spade
    /// refine, extract, validate), for benchmarks and the `debug` command.
    pub timings: Vec<(&'static str, f64)>,
}
