//! The mesher's error type: every variant names the shape, the place and the fix.

/// A point, metres (the geometry's `Xy`, spelled out so that errors depend on no stage).
type Xy = [f64; 2];
use std::fmt;

/// Everything that can be wrong with a geometry or a mesh.
///
/// Coordinates in messages are in metres, as the geometry holds them; the command-line front
/// end converts them back to the model's length unit.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub enum MeshError {
    /// The geometry has no shape at all.
    NoDomain,
    /// The first shape (the domain) is a conductor.
    DomainIsConductor {
        /// Shape name.
        shape: String,
    },
    /// Two shapes share a name.
    DuplicateName {
        /// The repeated name.
        name: String,
    },
    /// A shape refers to a conductor that does not exist.
    UnknownConductor {
        /// Shape name.
        shape: String,
        /// The bad index.
        index: u32,
    },
    /// A number that must be finite and positive is not.
    BadNumber {
        /// Shape name (or the mesh-control section).
        shape: String,
        /// Which quantity.
        what: String,
        /// The value given.
        value: f64,
    },
    /// A shape without curves or with fewer than three corners.
    EmptyShape {
        /// Shape name.
        shape: String,
    },
    /// A curve whose start and end coincide.
    DegenerateCurve {
        /// Shape name.
        shape: String,
        /// Where.
        at: Xy,
    },
    /// The outline does not return to its start.
    NotClosed {
        /// Shape name.
        shape: String,
        /// End of the curve before the gap.
        gap_from: Xy,
        /// Start of the curve after the gap.
        gap_to: Xy,
    },
    /// An arc radius shorter than half its chord.
    ArcTooShort {
        /// Shape name.
        shape: String,
        /// Arc start.
        from: Xy,
        /// Arc end.
        to: Xy,
        /// Radius given.
        radius: f64,
        /// Half the chord: the smallest possible radius.
        min_radius: f64,
    },
    /// The outline encloses no area.
    ZeroArea {
        /// Shape name.
        shape: String,
    },
    /// The outline crosses itself.
    SelfIntersecting {
        /// Shape name.
        shape: String,
        /// A crossing point.
        at: Xy,
    },
    /// A shape reaches outside the domain (the first shape).
    OutsideDomain {
        /// Shape name.
        shape: String,
        /// Domain shape name.
        domain: String,
        /// A point of the shape outside the domain.
        at: Xy,
    },
    /// A point with x < 0 in an axisymmetric model.
    NegativeRadius {
        /// Shape name.
        shape: String,
        /// The offending point.
        at: Xy,
    },
    /// Two different conductors touch, so the potential would jump at a point.
    ConductorsTouch {
        /// First conductor name.
        first: String,
        /// Second conductor name.
        second: String,
        /// Where they touch.
        at: Xy,
    },
    /// A thin electrode lies along the outer boundary, where it has the field on one face
    /// only.
    ThinOnBoundary {
        /// The thin electrode's name.
        name: String,
        /// A point of the stretch.
        at: Xy,
    },
    /// An open boundary needs a circular domain.
    OpenBoundaryShape {
        /// The domain shape's name.
        shape: String,
    },
    /// A parameter of the meshing run is out of range.
    BadParameter {
        /// Parameter name.
        name: &'static str,
        /// Value given.
        value: f64,
        /// Allowed range, in words.
        allowed: &'static str,
    },
    /// The triangulation library rejected the input (overlapping constraints after the
    /// arrangement step); this points to a bug or to features below the resolution limit.
    Triangulation {
        /// What went wrong.
        detail: String,
    },
    /// The mesh the sizes ask for would exceed the node budget (predicted from the size field
    /// before meshing, or counted while meshing).
    OverBudget {
        /// Predicted (or counted) vertices.
        vertices: f64,
        /// The count is a lower bound: the prediction stopped once it passed the budget.
        at_least: bool,
        /// The budget (`max_nodes`, vertices).
        max_nodes: usize,
        /// What asks for most of the triangles, its share (0–1), and what it names (a
        /// shape's name, a size point's position, a singular point's label).
        cause: (SizeSource, f64, String),
        /// The size that source asks for, metres (its smallest over the domain for graded
        /// sources: the floor, the innermost grading size).
        size_m: f64,
    },
    /// A mesh fails a consistency check.
    InvalidMesh {
        /// What failed, with ids and coordinates.
        detail: String,
    },
}

impl fmt::Display for MeshError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        self.render(f, 1.0, "m")
    }
}

/// Lengths in the unit the user wrote the model in.
struct Len(f64, f64, &'static str);
impl fmt::Display for Len {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{} {}", fmt_num(self.0 / self.1), self.2)
    }
}
fn fmt_num(v: f64) -> String {
    if v == 0.0 || (1e-3..1e6).contains(&v.abs()) {
        let s = format!("{v:.6}");
        let s = s.trim_end_matches('0').trim_end_matches('.');
        s.to_string()
    } else {
        // Mantissa without trailing zeros: 1e-15, 2.5e7.
        let s = format!("{v:.6e}");
        match s.split_once('e') {
            Some((m, e)) => format!("{}e{e}", m.trim_end_matches('0').trim_end_matches('.')),
            None => s,
        }
    }
}

impl MeshError {
    /// The message with coordinates and lengths given in the model's unit
    /// (`metres_per_unit`, e.g. 0.001 for millimetres, named `unit`).
    pub fn message_in(&self, metres_per_unit: f64, unit: &'static str) -> String {
        struct W<'a>(&'a MeshError, f64, &'static str);
        impl fmt::Display for W<'_> {
            fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
                self.0.render(f, self.1, self.2)
            }
        }
        W(self, metres_per_unit, unit).to_string()
    }

    fn render(&self, f: &mut fmt::Formatter<'_>, k: f64, unit: &'static str) -> fmt::Result {
        use MeshError::*;
        let p = |x: &Xy| format!("({}, {}) {unit}", fmt_num(x[0] / k), fmt_num(x[1] / k));
        let l = |v: f64| Len(v, k, unit);
        match self {
            NoDomain => write!(f, "the model has no shape; the first shape is the domain (for example a rectangle filled with the surrounding dielectric)"),
            DomainIsConductor { shape } => write!(f, "shape '{shape}' is the first shape, so it is the domain, but it is a conductor; put the surrounding dielectric first"),
            DuplicateName { name } => write!(f, "two shapes are named '{name}'; give each shape its own name"),
            UnknownConductor { shape, index } => write!(f, "shape '{shape}' refers to conductor #{index}, which does not exist"),
            BadNumber { shape, what, value } => write!(f, "shape '{shape}': {what} is {value}; it must be a finite number greater than zero"),
            EmptyShape { shape } => write!(f, "shape '{shape}' has too few points or curves to enclose an area"),
            DegenerateCurve { shape, at } => write!(f, "shape '{shape}' has a curve of zero length at {}; remove the repeated point", p(at)),
            NotClosed { shape, gap_from, gap_to } => write!(f, "the outline of shape '{shape}' is not closed: it stops at {} and continues at {}; make each piece start where the previous one ends, and the last end at the start", p(gap_from), p(gap_to)),
            ArcTooShort { shape, from, to, radius, min_radius } => write!(f, "shape '{shape}': the arc from {} to {} has radius {}, shorter than half its chord ({}); no circle of that radius passes through both points, so use a radius of at least {}", p(from), p(to), l(*radius), l(*min_radius), l(*min_radius)),
            ZeroArea { shape } => write!(f, "shape '{shape}' encloses no area; check its size and points"),
            SelfIntersecting { shape, at } => write!(f, "the outline of shape '{shape}' crosses itself near {}; reorder its points so that the outline goes round once", p(at)),
            OutsideDomain { shape, domain, at } => write!(f, "shape '{shape}' reaches outside the domain '{domain}' at {}; enlarge the domain or move the shape inside it", p(at)),
            NegativeRadius { shape, at } => write!(f, "shape '{shape}' reaches x = {} < 0 in an axisymmetric model (x is the radius); keep every point at x ≥ 0, the axis is x = 0", l(at[0])),
            ConductorsTouch { first, second, at } => write!(f, "conductors '{first}' and '{second}' touch at {}; the potential cannot jump between them at a point: separate them by a dielectric gap or make them one conductor", p(at)),
            ThinOnBoundary { name, at } => write!(f, "thin electrode '{name}' runs along the outer boundary near {}, where only one face meets the field; give that stretch as a [[boundary.piece]] with conductor = \"...\" instead, or move the electrode inside", p(at)),
            OpenBoundaryShape { shape } => write!(f, "an open boundary needs a circular domain: make the first shape '{shape}' a circle (planar) or a half disc centred on the axis (axisymmetric), enclosing every part of the model"),
            BadParameter { name, value, allowed } => write!(f, "mesh parameter {name} = {value} is out of range; allowed: {allowed}"),
            Triangulation { detail } => write!(f, "triangulation failed: {detail}"),
            OverBudget { vertices, at_least, max_nodes, cause, size_m } => {
                let n = if *vertices < 1e6 { format!("{vertices:.0}") } else { format!("{vertices:.2e}") };
                let count = if *at_least { format!("more than {n}") } else { format!("about {n}") };
                let share = format!("{:.0} %", 100.0 * cause.1);
                let what = match cause.0 {
                    SizeSource::MaxSize => format!("the global element size (max_size = {}); raise max_size in [mesh]", l(*size_m)),
                    SizeSource::MinSize => format!("the smallest element size (min_size = {}); raise min_size in [mesh]", l(*size_m)),
                    SizeSource::Shape(_) => format!("shape '{}', whose max_size is {}; raise it", cause.2, l(*size_m)),
                    SizeSource::Point(_) => format!("the size point {} (size {}); raise its size", cause.2, l(*size_m)),
                    SizeSource::Arc => "the small-radius arcs, meshed to the chord tolerance; raise chord_tolerance in [mesh]".to_string(),
                    SizeSource::Corner(_) => format!("the grading towards singular point {}; raise min_size or set grade_corners = false in [mesh]", cause.2),
                    SizeSource::Background => "the sizes the adaptive loop asked for; loosen the tolerance".to_string(),
                };
                write!(f, "the mesh would have {count} vertices (predicted from the element sizes before meshing), over the node budget max_nodes = {max_nodes}; {share} of its triangles come from {what}")
            }
            InvalidMesh { detail } => write!(f, "invalid mesh: {detail}"),
        }
    }
}

impl std::error::Error for MeshError {}

impl MeshError {
    /// The shape the error is about, if it is about one (lets a front end point at the
    /// shape's entry in the model file).
    pub fn shape(&self) -> Option<&str> {
        use MeshError::*;
        match self {
            DomainIsConductor { shape }
            | UnknownConductor { shape, .. }
            | BadNumber { shape, .. }
            | EmptyShape { shape }
            | DegenerateCurve { shape, .. }
            | NotClosed { shape, .. }
            | ArcTooShort { shape, .. }
            | ZeroArea { shape }
            | SelfIntersecting { shape, .. }
            | OutsideDomain { shape, .. }
            | NegativeRadius { shape, .. }
            | OpenBoundaryShape { shape } => Some(shape),
            ThinOnBoundary { name, .. } => Some(name),
            DuplicateName { name } => Some(name),
            OverBudget { cause: (SizeSource::Shape(_), _, name), .. } => Some(name),
            _ => None,
        }
    }
}

/// What asked for the size at a point: the setting a user would change to coarsen the mesh
/// there.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum SizeSource {
    /// The global maximum size (`max_size`).
    MaxSize,
    /// The floor (`min_size`): every other source asks for less.
    MinSize,
    /// A shape's own maximum size (shape index).
    Shape(usize),
    /// A size point (index in `Geometry::size_points`).
    Point(usize),
    /// The chord tolerance along a small-radius arc.
    Arc,
    /// The grading towards a singular point (index in the mesh's singular points).
    Corner(usize),
    /// Sizes requested on an earlier mesh (the adaptive loop).
    Background,
}
