//! The model file (TOML): parsing, checking with diagnostics that point into the file, and
//! conversion to the mesher's [`Geometry`] (SI units) and meshing parameters.
//!
//! Every key is documented in `docs/model-format.md`.

use crate::diag::ModelError;
use mesher::{Curve, Fill, Geometry, MeshError, OuterBoundary, Outline, RefineParams, Shape, SizePoint, Symmetry, Xy};
use serde::Deserialize;
use std::ops::Range;
use std::path::Path;
use toml::Spanned;

type S<T> = Spanned<T>;

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
struct RawModel {
    model: Option<S<RawHeader>>,
    #[serde(default)]
    material: Vec<S<RawMaterial>>,
    #[serde(default)]
    conductor: Vec<S<RawConductor>>,
    #[serde(default)]
    shape: Vec<S<RawShape>>,
    boundary: Option<S<RawBoundary>>,
    mesh: Option<S<RawMesh>>,
    check: Option<S<RawCheck>>,
    #[serde(default)]
    probe: Vec<S<RawProbe>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
struct RawCheck {
    singular_exclusion_radius: Option<S<f64>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
struct RawProbe {
    name: S<String>,
    path: Option<S<Vec<S<[f64; 2]>>>>,
    samples: Option<S<i64>>,
    interface: Option<S<[String; 2]>>,
    conductor_surface: Option<S<String>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
struct RawHeader {
    name: Option<String>,
    symmetry: Option<S<String>>,
    length_unit: Option<S<String>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
struct RawMaterial {
    name: S<String>,
    permittivity: S<f64>,
    permittivity_tensor: Option<S<[[f64; 2]; 2]>>,
    allowable_stress_kv_per_mm: Option<S<f64>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
struct RawConductor {
    name: S<String>,
    potential_v: Option<S<f64>>,
    floating: Option<S<bool>>,
    charge_c: Option<S<f64>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
struct RawShape {
    name: S<String>,
    material: Option<S<String>>,
    conductor: Option<S<String>>,
    max_size: Option<S<f64>>,
    charge_density_c_per_m3: Option<S<f64>>,
    rectangle: Option<S<RawRect>>,
    circle: Option<S<RawCircle>>,
    polygon: Option<S<Vec<S<[f64; 2]>>>>,
    path: Option<S<RawPath>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
struct RawRect {
    corner: S<[f64; 2]>,
    size: S<[f64; 2]>,
    fillet: Option<S<f64>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
struct RawCircle {
    center: S<[f64; 2]>,
    radius: S<f64>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
struct RawPath {
    start: S<[f64; 2]>,
    steps: Vec<S<RawStep>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
struct RawStep {
    line_to: Option<S<[f64; 2]>>,
    arc_to: Option<S<[f64; 2]>>,
    radius: Option<S<f64>>,
    turn: Option<S<String>>,
    large: Option<bool>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
struct RawBoundary {
    outer: Option<S<String>>,
    potential_v: Option<S<f64>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
struct RawMesh {
    max_size: Option<S<f64>>,
    min_size: Option<S<f64>>,
    order: Option<S<i64>>,
    min_angle_deg: Option<S<f64>>,
    gradation: Option<S<f64>>,
    chord_tolerance: Option<S<f64>>,
    grading_fraction: Option<S<f64>>,
    grade_corners: Option<bool>,
    max_nodes: Option<S<i64>>,
    #[serde(default)]
    point: Vec<S<RawPoint>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
struct RawPoint {
    at: S<[f64; 2]>,
    size: S<f64>,
}

/// A dielectric material.
#[derive(Clone, Debug)]
pub struct Material {
    /// Name.
    pub name: String,
    /// Relative permittivity.
    pub permittivity: f64,
    /// Anisotropic relative permittivity [[εxx, εxy], [εxy, εyy]], if given.
    pub permittivity_tensor: Option<[[f64; 2]; 2]>,
    /// Allowable design stress, kV/mm (user or company data).
    pub allowable_stress_kv_per_mm: Option<f64>,
}

/// How a conductor's potential is set.
#[derive(Clone, Debug, PartialEq)]
pub enum ConductorKind {
    /// Held at a potential, volts.
    Fixed {
        /// Potential, V.
        potential_v: f64,
    },
    /// Floating: unknown potential, given net charge (C, or C/m in planar models).
    Floating {
        /// Net charge.
        charge_c: f64,
    },
}

/// A conductor of the model.
#[derive(Clone, Debug)]
pub struct Conductor {
    /// Name.
    pub name: String,
    /// Fixed or floating.
    pub kind: ConductorKind,
}

/// What a probe samples.
#[derive(Clone, Debug, PartialEq)]
pub enum ProbeKind {
    /// A polyline (metres) sampled at `samples` equally spaced points.
    Line {
        /// Corner points, metres.
        path: Vec<Xy>,
        /// Number of samples.
        samples: usize,
    },
    /// The interface between two dielectric shapes (shape indices).
    Interface(u32, u32),
    /// The surface of a conductor (conductor index).
    ConductorSurface(u32),
}

/// A requested field probe.
#[derive(Clone, Debug, PartialEq)]
pub struct Probe {
    /// Name (letters, digits, '-' and '_'; used in the CSV file name).
    pub name: String,
    /// What to sample.
    pub kind: ProbeKind,
}

/// A checked model, ready to mesh.
#[derive(Clone, Debug)]
pub struct Model {
    /// The model's name (from `[model] name`, or the file stem).
    pub name: String,
    /// Geometry in SI units.
    pub geometry: Geometry,
    /// Meshing parameters in SI units.
    pub params: RefineParams,
    /// The model sets `[mesh] min_angle_deg` and `[mesh] gradation` itself (the adaptive
    /// loop of `check` keeps them then, instead of its own choice).
    pub sets_min_angle: bool,
    /// See `sets_min_angle`.
    pub sets_gradation: bool,
    /// Materials.
    pub materials: Vec<Material>,
    /// Material index of each shape (None for conductor shapes).
    pub shape_material: Vec<Option<usize>>,
    /// Volume charge density of each shape, C/m³ (0 where none is given).
    pub shape_charge_density: Vec<f64>,
    /// Conductors.
    pub conductors: Vec<Conductor>,
    /// Outer boundary potential, if the outer boundary is an electrode.
    pub outer_potential_v: Option<f64>,
    /// Field probes.
    pub probes: Vec<Probe>,
    /// `[check] singular_exclusion_radius`: the radius of the disc around every
    /// field-singular point that `check` leaves out of the watched peaks, metres (None: the
    /// default from the geometry).
    pub singular_exclusion_radius_m: Option<f64>,
    /// Set when the memory budget lowered `max_nodes`: the sentence a refusal over the node
    /// budget adds (see `budget::prepare`).
    pub budget_note: Option<String>,
    /// The run's memory budget, bytes (set by `budget::prepare`; infinite until then).
    pub memory_budget_bytes: f64,
    /// Metres per model length unit.
    pub unit_m: f64,
    /// Name of the model length unit.
    pub unit: &'static str,
    /// Byte spans of each shape's `name` value, for pointing at shapes in errors.
    shape_spans: Vec<Range<usize>>,
    source: String,
    path: std::path::PathBuf,
}

impl Model {
    /// Turns a mesher error into a diagnostic pointing at the shape it concerns.
    pub fn mesh_error(&self, e: &MeshError) -> ModelError {
        let span = e
            .shape()
            .and_then(|name| self.geometry.shapes.iter().position(|s| s.name == name))
            .map(|i| self.shape_spans[i].clone());
        let mut err = ModelError::new(&self.path, &self.source, span, e.message_in(self.unit_m, self.unit));
        if let Some(name) = e.shape() {
            err = err.key(format!("in shape '{name}'"));
        }
        if let MeshError::OverBudget { vertices, at_least, .. } = e {
            // The memory that mesh would need, solved (engine's measured bytes per unknown;
            // about four unknowns per vertex with quadratic elements).
            let unknowns = vertices * engine::unknowns_per_vertex(self.params.order);
            let bytes = engine::predicted_memory_bytes(unknowns, self.params.order, false);
            let mut help = format!(
                "solving that mesh would take {}{:.1} GB of memory (the run's memory budget is {:.1} GB)",
                if *at_least { "more than " } else { "about " },
                bytes / 1e9,
                self.memory_budget_bytes / 1e9
            );
            if let Some(note) = &self.budget_note {
                help = format!("{help}; {note}");
            }
            err = err.help(help);
        }
        err
    }
}

/// `x` to four significant digits, for messages.
fn round4(x: f64) -> f64 {
    if x == 0.0 || !x.is_finite() {
        return x;
    }
    let k = 10f64.powi(3 - x.abs().log10().floor() as i32);
    (x * k).round() / k
}

/// Largest potential accepted, V: a million times the highest transmission voltages, and
/// small enough that every energy, charge and field derived from it stays finite in double
/// precision (ε₀·V² ≈ 10¹³ J/m; a field of V over 10⁻¹² m is 10²⁴ V/m).
const MAX_POTENTIAL_V: f64 = 1e12;
/// Largest floating-conductor charge accepted, C.
const MAX_CHARGE_C: f64 = 1e3;
/// Largest volume charge density accepted, C/m³.
const MAX_CHARGE_DENSITY: f64 = 1e12;
/// Largest relative permittivity accepted (ferroelectric ceramics reach about 10⁴).
const MAX_PERMITTIVITY: f64 = 1e6;
/// Largest coordinate accepted, m.
const MAX_COORDINATE_M: f64 = 1e6;
/// What the range errors add.
const LIMIT_HELP: &str =
    "the limits keep every result a finite number (docs/model-format.md lists them); check the value and its unit";

impl Model {
    /// A solve error as a model-file diagnostic: at the shape it names, when it names one,
    /// with the table to look at otherwise.
    pub fn solve_error(&self, e: &engine::SolveError) -> ModelError {
        use engine::SolveError as E;
        let region = match e {
            E::BadPermittivity { region, .. }
            | E::BadTensor { region, .. }
            | E::BadChargeDensity { region, .. }
            | E::FloatingPart { region, .. } => Some(region.as_str()),
            _ => None,
        };
        if let E::Mesh(m) = e {
            return self.mesh_error(m);
        }
        let shape = region.and_then(|r| self.geometry.shapes.iter().position(|s| s.name == r));
        let span = shape.map(|i| self.shape_spans[i].clone());
        let mut err = ModelError::new(&self.path, &self.source, span, e.to_string());
        let look_at = match e {
            _ if shape.is_some() => format!("in shape '{}'", region.unwrap_or_default()),
            E::BadConductor { .. } | E::NoPotentialReference | E::ConductorMismatch { .. } => {
                "[[conductor]] and [boundary]".into()
            }
            E::NonFinite { .. } => {
                "[[conductor]] potentials and charges, [[material]] permittivities, shape charge densities".into()
            }
            E::FactorOverBudget { .. } | E::FirstMeshOverBudget { .. } => {
                "[mesh] max_size, min_size and the shapes' max_size".into()
            }
            E::NotPositiveDefinite { .. } | E::Factorisation { .. } => {
                "the shapes around the node named, with `fieldgrade mesh --svg`".into()
            }
            _ => String::new(),
        };
        if !look_at.is_empty() {
            err = err.key(look_at);
        }
        err
    }
}

fn units(name: &str) -> Option<(f64, &'static str)> {
    Some(match name {
        "m" => (1.0, "m"),
        "cm" => (1e-2, "cm"),
        "mm" => (1e-3, "mm"),
        "um" | "µm" => (1e-6, "µm"),
        "in" => (0.0254, "in"),
        _ => return None,
    })
}

/// Reads, parses and checks a model file.
///
/// # Errors
/// A [`ModelError`] naming file, line, column and key, for unreadable files, TOML syntax
/// errors, unknown keys, and every inconsistency listed in `docs/model-format.md`.
pub fn load(path: &Path) -> Result<Model, ModelError> {
    let bytes = std::fs::read(path).map_err(|e| {
        ModelError::new(path, "", None, format!("cannot read the model file: {e}"))
            .help("check the path and that the file is readable")
    })?;
    let source = String::from_utf8(bytes).map_err(|e| {
        // Where the first invalid byte is: line and column of the valid text before it.
        let good = e.utf8_error().valid_up_to();
        let bytes = e.as_bytes();
        let before = String::from_utf8_lossy(&bytes[..good]);
        let line = before.matches('\n').count() + 1;
        let column = before.rsplit('\n').next().map(|l| l.chars().count()).unwrap_or(0) + 1;
        let nul = bytes.iter().take(8192).any(|&b| b == 0);
        ModelError::new(
            path,
            "",
            None,
            format!(
                "the model file is not UTF-8 text: byte 0x{:02x} at line {line}, column {column} (byte {good}) is not valid UTF-8{}",
                bytes[good],
                if nul { "; the file looks binary" } else { "" }
            ),
        )
        .help("a model file is TOML text: save it as UTF-8 (a µ or ε typed in another encoding is the usual cause)")
    })?;
    parse(path, &source)
}

/// What every table's checks need: the file (for messages), its text and the length unit.
struct Ctx<'a> {
    path: &'a Path,
    source: &'a str,
    /// Metres per model unit.
    unit_m: f64,
}

impl Ctx<'_> {
    /// An error marked at `span`.
    fn err(&self, span: Range<usize>, msg: String) -> ModelError {
        ModelError::new(self.path, self.source, Some(span), msg)
    }

    /// A finite number greater than zero.
    fn positive(&self, v: &S<f64>, key: String, what: &str) -> Result<f64, ModelError> {
        let x = *v.get_ref();
        if x.is_finite() && x > 0.0 {
            Ok(x)
        } else {
            Err(self.err(v.span(), format!("{what} must be a finite number greater than zero, not {x}")).key(key))
        }
    }

    /// A point in the model unit, within the coordinate range, in metres.
    fn finite_xy(&self, v: &S<[f64; 2]>, key: String) -> Result<Xy, ModelError> {
        let unit_m = self.unit_m;
        let p = *v.get_ref();
        if p.iter().all(|c| c.is_finite() && (c * unit_m).abs() <= MAX_COORDINATE_M) {
            Ok([p[0] * unit_m, p[1] * unit_m])
        } else {
            Err(self
                .err(
                    v.span(),
                    format!(
                        "coordinates must be finite numbers within ±{MAX_COORDINATE_M:e} m, not [{:e}, {:e}]",
                        p[0], p[1]
                    ),
                )
                .key(key)
                .help(LIMIT_HELP))
        }
    }
}

/// Parses and checks model text (`path` is used in messages only).
///
/// # Errors
/// See [`load`].
pub fn parse(path: &Path, source: &str) -> Result<Model, ModelError> {
    let err = |span: Range<usize>, msg: String| ModelError::new(path, source, Some(span), msg);
    let raw: RawModel = toml::from_str(source).map_err(|e| {
        let msg = e.message().trim().to_string();
        let help = if msg.contains("unknown field") {
            Some("check the spelling; every key is listed in docs/model-format.md")
        } else if msg.contains("missing field") {
            Some("add the missing key; docs/model-format.md shows an example of each table")
        } else {
            None
        };
        let mut m = ModelError::new(path, source, e.span(), format!("the model file is not valid: {msg}"));
        if let Some(h) = help {
            m = m.help(h);
        }
        m
    })?;

    // [model]
    let (mut name, mut symmetry, mut unit_m, mut unit) = (None, Symmetry::Planar, 1e-3, "mm");
    if let Some(h) = &raw.model {
        let h = h.get_ref();
        name = h.name.clone();
        if let Some(s) = &h.symmetry {
            symmetry = match s.get_ref().as_str() {
                "planar" => Symmetry::Planar,
                "axisymmetric" => Symmetry::Axisymmetric,
                other => {
                    return Err(err(s.span(), format!("unknown symmetry '{other}'"))
                        .key("model.symmetry")
                        .help("use \"planar\" or \"axisymmetric\""))
                }
            };
        }
        if let Some(u) = &h.length_unit {
            (unit_m, unit) = units(u.get_ref()).ok_or_else(|| {
                err(u.span(), format!("unknown length unit '{}'", u.get_ref()))
                    .key("model.length_unit")
                    .help("use one of \"m\", \"cm\", \"mm\", \"um\", \"in\"")
            })?;
        }
    }
    let name = name.unwrap_or_else(|| path.file_stem().map(|s| s.to_string_lossy().into_owned()).unwrap_or_default());

    let cx = Ctx { path, source, unit_m };
    let positive = |v: &S<f64>, key: String, what: &str| cx.positive(v, key, what);

    let materials = materials(&cx, &raw)?;

    let conductors = conductors(&cx, &raw)?;

    let (shapes, shape_material, shape_charge_density, shape_spans) = shapes(&cx, &raw, &materials, &conductors, unit)?;

    let (outer, outer_potential_v) = boundary(&cx, &raw, &conductors)?;

    let (params, size_points, sets_min_angle, sets_gradation) = mesh_controls(&cx, &raw, &shapes, unit)?;
    let probes = probes(&cx, &raw, &shapes, &conductors)?;
    let geometry = Geometry {
        symmetry,
        shapes,
        conductors: conductors.iter().map(|c| c.name.clone()).collect(),
        outer,
        size_points,
    };
    let singular_exclusion_radius_m =
        match raw.check.as_ref().and_then(|c| c.get_ref().singular_exclusion_radius.as_ref()) {
            Some(r) => Some(
                positive(r, "check.singular_exclusion_radius".into(), "the exclusion radius around singular points")?
                    * unit_m,
            ),
            None => None,
        };
    let model = Model {
        name,
        geometry,
        params,
        singular_exclusion_radius_m,
        budget_note: None,
        memory_budget_bytes: f64::INFINITY,
        sets_min_angle,
        sets_gradation,
        materials,
        shape_material,
        shape_charge_density,
        conductors,
        outer_potential_v,
        probes,
        unit_m,
        unit,
        shape_spans,
        source: source.to_string(),
        path: path.to_path_buf(),
    };
    model.geometry.validate().map_err(|e| model.mesh_error(&e))?;
    Ok(model)
}

/// `[[shape]]`: names unique, one outline each (rectangle, circle, polygon or path) inside
/// the coordinate range, a material or a conductor that exists, sizes and charge densities
/// in range. Returns the shapes, each one's material, charge density and span.
#[allow(clippy::type_complexity)]
fn shapes(
    cx: &Ctx<'_>,
    raw: &RawModel,
    materials: &[Material],
    conductors: &[Conductor],
    unit: &'static str,
) -> Result<(Vec<Shape>, Vec<Option<usize>>, Vec<f64>, Vec<Range<usize>>), ModelError> {
    let (source, unit_m) = (cx.source, cx.unit_m);
    if source.lines().all(|l| l.trim().is_empty() || l.trim_start().starts_with('#')) {
        return Err(ModelError::new(cx.path, cx.source, None, "the model file is empty (it has no table, only blank lines or comments)")
            .help("start from a demo in fixtures/models/ or from docs/model-format.md: a model needs [[material]], [[conductor]] and [[shape]] tables"));
    }
    if raw.shape.is_empty() {
        return Err(ModelError::new(cx.path, cx.source, None, "the model has no shape")
            .key("shape")
            .help("add a first [[shape]]: it is the domain, e.g. a rectangle filled with the surrounding dielectric"));
    }
    let mut shapes: Vec<Shape> = Vec::new();
    let mut shape_material = Vec::new();
    let mut shape_charge_density = Vec::new();
    let mut shape_spans = Vec::new();
    for (i, sh) in raw.shape.iter().enumerate() {
        let whole = sh.span();
        let sh = sh.get_ref();
        let sname = sh.name.get_ref().clone();
        let key = |k: &str| format!("shape[{i}].{k}");
        if shapes.iter().any(|o| o.name == sname) {
            return Err(cx
                .err(sh.name.span(), format!("shape '{sname}' is defined twice"))
                .key(key("name"))
                .help("give each shape its own name"));
        }
        let (fill, mat) = match (&sh.material, &sh.conductor) {
            (Some(m), None) => {
                let k = materials.iter().position(|x| &x.name == m.get_ref()).ok_or_else(|| {
                    let known: Vec<&str> = materials.iter().map(|x| x.name.as_str()).collect();
                    cx.err(m.span(), format!("unknown material '{}' in shape '{sname}'", m.get_ref()))
                        .key(key("material"))
                        .help(if known.is_empty() {
                            "define it in a [[material]] table".to_string()
                        } else {
                            format!("known materials: {}", known.join(", "))
                        })
                })?;
                (Fill::Dielectric { permittivity: materials[k].permittivity }, Some(k))
            }
            (None, Some(c)) => {
                let k = conductors.iter().position(|x| &x.name == c.get_ref()).ok_or_else(|| {
                    let known: Vec<&str> = conductors.iter().map(|x| x.name.as_str()).collect();
                    cx.err(c.span(), format!("unknown conductor '{}' in shape '{sname}'", c.get_ref()))
                        .key(key("conductor"))
                        .help(if known.is_empty() {
                            "define it in a [[conductor]] table".to_string()
                        } else {
                            format!("known conductors: {}", known.join(", "))
                        })
                })?;
                (Fill::Conductor { conductor: k as u32 }, None)
            }
            (Some(m), Some(_)) => {
                return Err(cx
                    .err(m.span(), format!("shape '{sname}' has both a material and a conductor"))
                    .key(key("material"))
                    .help("a shape is either a dielectric (material = ...) or a conductor (conductor = ...)"))
            }
            (None, None) => {
                return Err(cx
                    .err(sh.name.span(), format!("shape '{sname}' has neither a material nor a conductor"))
                    .key(key("material"))
                    .help("add material = \"<name>\" or conductor = \"<name>\""))
            }
        };
        if i == 0 && mat.is_none() {
            return Err(cx
                .err(
                    sh.name.span(),
                    format!("the first shape '{sname}' is the domain and must be a dielectric, not a conductor"),
                )
                .key(key("conductor"))
                .help("put the surrounding dielectric (e.g. a rectangle of air or oil) first"));
        }
        let kinds = [sh.rectangle.is_some(), sh.circle.is_some(), sh.polygon.is_some(), sh.path.is_some()]
            .iter()
            .filter(|b| **b)
            .count();
        if kinds != 1 {
            return Err(cx
                .err(
                    whole,
                    format!(
                        "shape '{sname}' must have exactly one of rectangle, circle, polygon or path (it has {kinds})"
                    ),
                )
                .key(format!("shape[{i}]")));
        }
        let me = |e: MeshError, span: Range<usize>| cx.err(span, e.message_in(unit_m, unit));
        let outline = if let Some(r) = &sh.rectangle {
            let r = r.get_ref();
            let c = cx.finite_xy(&r.corner, key("rectangle.corner"))?;
            let s = *r.size.get_ref();
            for (k, v) in s.iter().enumerate() {
                if !(v.is_finite() && *v > 0.0) {
                    return Err(cx
                        .err(
                            r.size.span(),
                            format!(
                                "the rectangle's {} must be a finite number greater than zero, not {v}",
                                ["width", "height"][k]
                            ),
                        )
                        .key(key("rectangle.size")));
                }
            }
            let fillet = match &r.fillet {
                Some(f) => {
                    let v = *f.get_ref();
                    if !(v.is_finite() && v >= 0.0 && v <= 0.5 * s[0].min(s[1])) {
                        return Err(cx
                            .err(
                                f.span(),
                                format!(
                                    "the fillet radius {v} must be between 0 and half the shorter side ({})",
                                    0.5 * s[0].min(s[1])
                                ),
                            )
                            .key(key("rectangle.fillet")));
                    }
                    v * unit_m
                }
                None => 0.0,
            };
            Outline::rectangle(&sname, c, [s[0] * unit_m, s[1] * unit_m], fillet).map_err(|e| me(e, r.size.span()))?
        } else if let Some(c) = &sh.circle {
            let c = c.get_ref();
            let center = cx.finite_xy(&c.center, key("circle.center"))?;
            let rad = cx.positive(&c.radius, key("circle.radius"), "the radius")?;
            Outline::circle(&sname, center, rad * unit_m).map_err(|e| me(e, c.radius.span()))?
        } else if let Some(p) = &sh.polygon {
            let mut pts = Vec::new();
            for (k, q) in p.get_ref().iter().enumerate() {
                pts.push(cx.finite_xy(q, key(&format!("polygon[{k}]")))?);
            }
            for k in 0..pts.len() {
                if pts.len() >= 2 && pts[k] == pts[(k + 1) % pts.len()] {
                    let q = &p.get_ref()[(k + 1) % pts.len()];
                    return Err(cx
                        .err(q.span(), format!("polygon point {} repeats the point before it", (k + 1) % pts.len()))
                        .key(key("polygon"))
                        .help("remove the repeated point; the outline closes by itself"));
                }
            }
            Outline::polygon(&sname, &pts).map_err(|e| me(e, p.span()))?
        } else {
            let pth = sh.path.as_ref().unwrap();
            let pr = pth.get_ref();
            let mut at = cx.finite_xy(&pr.start, key("path.start"))?;
            let mut curves = Vec::new();
            for (k, st) in pr.steps.iter().enumerate() {
                let sspan = st.span();
                let st = st.get_ref();
                let kk = key(&format!("path.steps[{k}]"));
                match (&st.line_to, &st.arc_to) {
                    (Some(to), None) => {
                        if st.radius.is_some() || st.turn.is_some() || st.large.is_some() {
                            return Err(cx
                                .err(sspan, "a line_to step takes no radius, turn or large".into())
                                .key(kk)
                                .help("use arc_to for an arc"));
                        }
                        let to = cx.finite_xy(to, kk.clone())?;
                        if to == at {
                            return Err(cx
                                .err(sspan, "this step does not move: it ends where it starts".into())
                                .key(kk));
                        }
                        curves.push(Curve::Line { from: at, to });
                        at = to;
                    }
                    (None, Some(to_s)) => {
                        let to = cx.finite_xy(to_s, kk.clone())?;
                        let Some(r) = &st.radius else {
                            return Err(cx
                                .err(sspan, "an arc_to step needs a radius".into())
                                .key(kk)
                                .help("add radius = <length>, and turn = \"ccw\" or \"cw\""));
                        };
                        let rad = cx.positive(r, format!("{kk}.radius"), "the arc radius")?;
                        let ccw = match st.turn.as_ref().map(|t| t.get_ref().as_str()) {
                            None | Some("ccw") => true,
                            Some("cw") => false,
                            Some(o) => {
                                return Err(cx
                                    .err(st.turn.as_ref().unwrap().span(), format!("unknown turn '{o}'"))
                                    .key(format!("{kk}.turn"))
                                    .help("use \"ccw\" (counter-clockwise, the default) or \"cw\""))
                            }
                        };
                        let c = Curve::arc_through(&sname, at, to, rad * unit_m, ccw, st.large.unwrap_or(false))
                            .map_err(|e| me(e, r.span()))?;
                        curves.push(c);
                        at = to;
                    }
                    _ => return Err(cx.err(sspan, "each step needs exactly one of line_to or arc_to".into()).key(kk)),
                }
            }
            Outline::new(&sname, curves).map_err(|e| me(e, pth.span()))?
        };
        let max_size_m = match &sh.max_size {
            Some(h) => Some(cx.positive(h, key("max_size"), "max_size")? * unit_m),
            None => None,
        };
        let rho = match &sh.charge_density_c_per_m3 {
            Some(r) => {
                let v = *r.get_ref();
                if !(v.is_finite() && v.abs() <= MAX_CHARGE_DENSITY) {
                    return Err(cx.err(r.span(), format!("the charge density must be a finite number of C/m³ within ±{MAX_CHARGE_DENSITY:e}, not {v:e}"))
                        .key(key("charge_density_c_per_m3"))
                        .help(LIMIT_HELP));
                }
                if mat.is_none() {
                    return Err(cx
                        .err(r.span(), "a conductor shape cannot carry a volume charge density".into())
                        .key(key("charge_density_c_per_m3")));
                }
                v
            }
            None => 0.0,
        };
        shapes.push(Shape { name: sname, outline, fill, max_size_m });
        shape_material.push(mat);
        shape_charge_density.push(rho);
        shape_spans.push(sh.name.span());
    }

    Ok((shapes, shape_material, shape_charge_density, shape_spans))
}

/// `[[probe]]`: names usable in file names and unique, one kind each (path, interface or
/// conductor surface) naming shapes and conductors that exist.
fn probes(cx: &Ctx<'_>, raw: &RawModel, shapes: &[Shape], conductors: &[Conductor]) -> Result<Vec<Probe>, ModelError> {
    let mut probes: Vec<Probe> = Vec::new();
    for (i, p) in raw.probe.iter().enumerate() {
        let whole = p.span();
        let p = p.get_ref();
        let key = |k: &str| format!("probe[{i}].{k}");
        let name = p.name.get_ref().clone();
        if name.is_empty() || !name.chars().all(|c| c.is_ascii_alphanumeric() || c == '-' || c == '_') {
            return Err(cx
                .err(p.name.span(), format!("probe name '{name}' is not usable in a file name"))
                .key(key("name"))
                .help("use letters, digits, '-' and '_' only"));
        }
        if probes.iter().any(|q| q.name == name) {
            return Err(cx
                .err(p.name.span(), format!("probe '{name}' is defined twice"))
                .key(key("name"))
                .help("give each probe its own name"));
        }
        let kinds =
            [p.path.is_some(), p.interface.is_some(), p.conductor_surface.is_some()].iter().filter(|b| **b).count();
        if kinds != 1 {
            return Err(cx
                .err(
                    whole,
                    format!(
                        "probe '{name}' needs exactly one of path, interface or conductor_surface (it has {kinds})"
                    ),
                )
                .key(format!("probe[{i}]")));
        }
        if let (Some(n), None) = (&p.samples, &p.path) {
            return Err(cx
                .err(
                    n.span(),
                    "samples applies to path probes only; interface and surface probes sample every mesh edge".into(),
                )
                .key(key("samples")));
        }
        let kind = if let Some(path) = &p.path {
            let mut pts = Vec::new();
            for (k, q) in path.get_ref().iter().enumerate() {
                pts.push(cx.finite_xy(q, key(&format!("path[{k}]")))?);
            }
            if pts.len() < 2 {
                return Err(cx.err(path.span(), "a probe path needs at least two points".into()).key(key("path")));
            }
            let samples = match &p.samples {
                Some(n) => {
                    let v = *n.get_ref();
                    if !(2..=1_000_000).contains(&v) {
                        return Err(cx
                            .err(n.span(), format!("samples = {v} is out of range"))
                            .key(key("samples"))
                            .help("use 2 to 1000000"));
                    }
                    v as usize
                }
                None => 200,
            };
            ProbeKind::Line { path: pts, samples }
        } else if let Some(pair) = &p.interface {
            let [a, b] = pair.get_ref();
            let mut idx = [0u32; 2];
            for (k, n) in [a, b].iter().enumerate() {
                let s = shapes.iter().position(|s| &s.name == *n).ok_or_else(|| {
                    cx.err(pair.span(), format!("probe '{name}' refers to shape '{n}', which does not exist"))
                        .key(key("interface"))
                })?;
                if let Fill::Conductor { .. } = shapes[s].fill {
                    return Err(cx
                        .err(
                            pair.span(),
                            format!("shape '{n}' is a conductor; an interface probe is between two dielectric shapes"),
                        )
                        .key(key("interface"))
                        .help("use conductor_surface = \"<conductor>\" for an electrode surface"));
                }
                idx[k] = s as u32;
            }
            if idx[0] == idx[1] {
                return Err(cx
                    .err(pair.span(), "an interface probe needs two different shapes".into())
                    .key(key("interface")));
            }
            ProbeKind::Interface(idx[0], idx[1])
        } else {
            let c = p.conductor_surface.as_ref().unwrap();
            let k = conductors.iter().position(|x| &x.name == c.get_ref()).ok_or_else(|| {
                cx.err(c.span(), format!("probe '{name}' refers to conductor '{}', which does not exist", c.get_ref()))
                    .key(key("conductor_surface"))
            })?;
            ProbeKind::ConductorSurface(k as u32)
        };
        probes.push(Probe { name, kind });
    }
    Ok(probes)
}

/// `[[material]]`: names unique, permittivity (scalar and tensor) and allowable stress in
/// range.
fn materials(cx: &Ctx<'_>, raw: &RawModel) -> Result<Vec<Material>, ModelError> {
    let mut materials: Vec<Material> = Vec::new();
    for (i, m) in raw.material.iter().enumerate() {
        let m = m.get_ref();
        let n = m.name.get_ref();
        if n.trim().is_empty() {
            return Err(cx.err(m.name.span(), "a material name is empty".into()).key(format!("material[{i}].name")));
        }
        if materials.iter().any(|o| &o.name == n) {
            return Err(cx
                .err(m.name.span(), format!("material '{n}' is defined twice"))
                .key(format!("material[{i}].name"))
                .help("give each material its own name"));
        }
        let eps = cx.positive(&m.permittivity, format!("material[{i}].permittivity"), "the relative permittivity")?;
        if eps > MAX_PERMITTIVITY {
            return Err(cx
                .err(m.permittivity.span(), format!("the relative permittivity {eps:e} is above {MAX_PERMITTIVITY:e}"))
                .key(format!("material[{i}].permittivity"))
                .help(LIMIT_HELP));
        }
        let allow = match &m.allowable_stress_kv_per_mm {
            Some(a) => {
                Some(cx.positive(a, format!("material[{i}].allowable_stress_kv_per_mm"), "the allowable stress")?)
            }
            None => None,
        };
        let tensor = match &m.permittivity_tensor {
            Some(t) => {
                let e = *t.get_ref();
                let finite = e.iter().flatten().all(|v| v.is_finite());
                let sym = (e[0][1] - e[1][0]).abs() <= 1e-12 * (e[0][0].abs() + e[1][1].abs());
                if !(finite && sym && e[0][0] > 0.0 && e[0][0] * e[1][1] - e[0][1] * e[1][0] > 0.0) {
                    return Err(cx
                        .err(t.span(), format!("the permittivity tensor {e:?} is not symmetric positive definite"))
                        .key(format!("material[{i}].permittivity_tensor"))
                        .help("use [[εxx, εxy], [εxy, εyy]] with εxx > 0 and εxx·εyy > εxy²"));
                }
                Some(e)
            }
            None => None,
        };
        materials.push(Material {
            name: n.clone(),
            permittivity: eps,
            permittivity_tensor: tensor,
            allowable_stress_kv_per_mm: allow,
        });
    }

    Ok(materials)
}

/// `[[conductor]]`: names unique, a fixed potential or floating (with its charge), in range.
fn conductors(cx: &Ctx<'_>, raw: &RawModel) -> Result<Vec<Conductor>, ModelError> {
    let mut conductors: Vec<Conductor> = Vec::new();
    for (i, c) in raw.conductor.iter().enumerate() {
        let span = c.span();
        let c = c.get_ref();
        let n = c.name.get_ref();
        if conductors.iter().any(|o| &o.name == n) {
            return Err(cx
                .err(c.name.span(), format!("conductor '{n}' is defined twice"))
                .key(format!("conductor[{i}].name"))
                .help("give each conductor its own name; several shapes may refer to one conductor"));
        }
        let floating = c.floating.as_ref().map(|f| *f.get_ref()).unwrap_or(false);
        let kind =
            match (&c.potential_v, floating) {
                (Some(v), false) => {
                    let x = *v.get_ref();
                    if !(x.is_finite() && x.abs() <= MAX_POTENTIAL_V) {
                        return Err(cx
                            .err(
                                v.span(),
                                format!(
                            "the potential must be a finite number of volts within ±{MAX_POTENTIAL_V:e}, not {x:e}"
                        ),
                            )
                            .key(format!("conductor[{i}].potential_v"))
                            .help(LIMIT_HELP));
                    }
                    if let Some(q) = &c.charge_c {
                        return Err(cx
                            .err(q.span(), "a conductor at a fixed potential cannot also have a given charge".into())
                            .key(format!("conductor[{i}].charge_c"))
                            .help("remove charge_c, or replace potential_v by floating = true"));
                    }
                    ConductorKind::Fixed { potential_v: x }
                }
                (None, true) => {
                    let q = c.charge_c.as_ref().map(|q| *q.get_ref()).unwrap_or(0.0);
                    if !(q.is_finite() && q.abs() <= MAX_CHARGE_C) {
                        return Err(cx.err(
                        c.charge_c.as_ref().unwrap().span(),
                        format!("the charge must be a finite number of coulombs within ±{MAX_CHARGE_C:e}, not {q:e}"),
                    )
                    .key(format!("conductor[{i}].charge_c"))
                    .help(LIMIT_HELP));
                    }
                    ConductorKind::Floating { charge_c: q }
                }
                (Some(v), true) => {
                    return Err(cx
                        .err(v.span(), format!("conductor '{n}' has both a potential and floating = true"))
                        .key(format!("conductor[{i}]"))
                        .help("keep potential_v for an electrode, or floating = true for a floating conductor"))
                }
                (None, false) => {
                    return Err(cx
                        .err(span, format!("conductor '{n}' has neither a potential nor floating = true"))
                        .key(format!("conductor[{i}]"))
                        .help("add potential_v = <volts>, or floating = true"))
                }
            };
        conductors.push(Conductor { name: n.clone(), kind });
    }

    Ok(conductors)
}

/// `[boundary]` and the potential reference: the outer boundary's kind and potential, and
/// at least one fixed potential somewhere.
fn boundary(
    cx: &Ctx<'_>,
    raw: &RawModel,
    conductors: &[Conductor],
) -> Result<(OuterBoundary, Option<f64>), ModelError> {
    let mut outer = OuterBoundary::ZeroFlux;
    let mut outer_potential_v = None;
    if let Some(b) = &raw.boundary {
        let bspan = b.span();
        let b = b.get_ref();
        let kind = b.outer.as_ref().map(|o| (o.get_ref().as_str(), o.span()));
        match kind {
            None | Some(("zero_flux", _)) => {
                if let Some(v) = &b.potential_v {
                    return Err(cx
                        .err(v.span(), "potential_v is given but the outer boundary is zero_flux".into())
                        .key("boundary.potential_v")
                        .help("set outer = \"potential\" to hold the outer boundary at this potential"));
                }
            }
            Some(("potential", _)) => {
                let v = b.potential_v.as_ref().ok_or_else(|| {
                    cx.err(bspan.clone(), "outer = \"potential\" needs potential_v".into())
                        .key("boundary.potential_v")
                        .help("add potential_v = 0.0 for an earthed enclosure")
                })?;
                let x = *v.get_ref();
                if !(x.is_finite() && x.abs() <= MAX_POTENTIAL_V) {
                    return Err(cx
                        .err(
                            v.span(),
                            format!(
                                "the potential must be a finite number of volts within ±{MAX_POTENTIAL_V:e}, not {x:e}"
                            ),
                        )
                        .key("boundary.potential_v")
                        .help(LIMIT_HELP));
                }
                outer = OuterBoundary::FixedPotential;
                outer_potential_v = Some(x);
            }
            Some(("open", _)) => {
                if let Some(v) = &b.potential_v {
                    return Err(cx
                        .err(v.span(), "potential_v is given but the outer boundary is open (0 V at infinity)".into())
                        .key("boundary.potential_v"));
                }
                outer = OuterBoundary::Open;
            }
            Some((o, span)) => {
                return Err(cx
                    .err(span, format!("unknown outer boundary '{o}'"))
                    .key("boundary.outer")
                    .help("use \"zero_flux\" (the default), \"potential\" or \"open\""))
            }
        }
    }

    // A potential reference: a conductor at a fixed potential, or an outer boundary held at
    // one (or at 0 V at infinity); floating conductors alone leave the level undetermined.
    let fixed = conductors.iter().any(|c| matches!(c.kind, ConductorKind::Fixed { .. }));
    if !fixed && outer == OuterBoundary::ZeroFlux {
        let floating: Vec<&str> = conductors.iter().map(|c| c.name.as_str()).collect();
        let (span, what) = match raw.conductor.first() {
            Some(c) => (
                Some(c.span()),
                format!(
                    "no potential reference: the conductors ({}) are all floating and the outer boundary is zero_flux, so the potential level is undetermined",
                    floating.iter().map(|n| format!("'{n}'")).collect::<Vec<_>>().join(", ")
                ),
            ),
            None => (None, "no potential reference: the model has no conductor and the outer boundary is zero_flux".to_string()),
        };
        return Err(ModelError::new(cx.path, cx.source, span, what)
            .key("conductor")
            .help("give one conductor potential_v = <volts> instead of floating = true, or hold the outer boundary: [boundary] outer = \"potential\", potential_v = 0.0"));
    }

    Ok((outer, outer_potential_v))
}

/// `[mesh]` and its `[[mesh.point]]`s: every control in range, min_size below max_size,
/// points inside the domain.
fn mesh_controls(
    cx: &Ctx<'_>,
    raw: &RawModel,
    shapes: &[Shape],
    unit: &'static str,
) -> Result<(RefineParams, Vec<SizePoint>, bool, bool), ModelError> {
    let unit_m = cx.unit_m;
    // The domain (the first shape) and its bounding-box diagonal, the scale the defaults and
    // tolerances refer to.
    let domain = shapes.first().map(|d| {
        let b = d.outline.bbox();
        (d, (b[2] - b[0]).hypot(b[3] - b[1]))
    });
    let mut params = RefineParams::new();
    let mut size_points = Vec::new();
    let (mut sets_min_angle, mut sets_gradation) = (false, false);
    if let Some(m) = &raw.mesh {
        let m = m.get_ref();
        sets_min_angle = m.min_angle_deg.is_some();
        sets_gradation = m.gradation.is_some();
        if let Some(h) = &m.max_size {
            params = params.with_max_size_m(cx.positive(h, "mesh.max_size".into(), "max_size")? * unit_m);
        }
        if let Some(h) = &m.min_size {
            params = params.with_min_size_m(cx.positive(h, "mesh.min_size".into(), "min_size")? * unit_m);
            let (lo, hi) = (params.min_size_m.unwrap_or(0.0), params.max_size_m);
            // Against the default max_size (1/25 of the domain's diagonal) when none is given.
            if let Some(max) = hi.or(domain.map(|(_, diagonal)| mesher::DEFAULT_MAX_SIZE_FRACTION * diagonal)) {
                if lo > max {
                    return Err(cx.err(
                        h.span(),
                        format!(
                            "min_size = {} is larger than max_size = {}{}",
                            round4(lo / unit_m),
                            round4(max / unit_m),
                            if hi.is_none() { " (the default, 1/25 of the domain's diagonal)" } else { "" }
                        ),
                    )
                    .key("mesh.min_size")
                    .help(
                        "min_size is the smallest element size the grading may ask for: make it smaller than max_size",
                    ));
                }
            }
        }
        if let Some(o) = &m.order {
            let v = *o.get_ref();
            if v != 1 && v != 2 {
                return Err(cx
                    .err(o.span(), format!("element order {v} is not available"))
                    .key("mesh.order")
                    .help("use 1 (linear) or 2 (quadratic)"));
            }
            params = params.with_order(v as u8);
        }
        let ranged = |v: &Option<S<f64>>,
                      key: &str,
                      lo: f64,
                      hi: f64,
                      lo_open: bool|
         -> Result<Option<f64>, ModelError> {
            match v {
                None => Ok(None),
                Some(s) => {
                    let x = *s.get_ref();
                    let ok = x.is_finite() && (if lo_open { x > lo } else { x >= lo }) && x <= hi;
                    if ok {
                        Ok(Some(x))
                    } else {
                        Err(cx.err(s.span(), format!("{key} = {x} is out of range")).key(format!("mesh.{key}")).help(
                            format!("use a value {} {lo} and at most {hi}", if lo_open { "above" } else { "from" }),
                        ))
                    }
                }
            }
        };
        if let Some(x) = ranged(&m.min_angle_deg, "min_angle_deg", 0.0, 33.0, true)? {
            params = params.with_min_angle_deg(x);
        }
        if let Some(x) = ranged(&m.gradation, "gradation", 1.0, 3.0, true)? {
            params = params.with_gradation(x);
        }
        if let Some(x) = ranged(&m.chord_tolerance, "chord_tolerance", 0.0, 0.125, true)? {
            params = params.with_chord_tolerance(x);
        }
        if let Some(x) = ranged(&m.grading_fraction, "grading_fraction", 0.0, 0.99, true)? {
            params = params.with_grading_fraction(x);
        }
        if let Some(g) = m.grade_corners {
            params = params.with_grade_corners(g);
        }
        if let Some(n) = &m.max_nodes {
            let v = *n.get_ref();
            if !(16..=100_000_000).contains(&v) {
                return Err(cx
                    .err(n.span(), format!("max_nodes = {v} is out of range"))
                    .key("mesh.max_nodes")
                    .help("use a count from 16 to 100000000"));
            }
            params = params.with_max_nodes(v as usize);
        }
        for (k, p) in m.point.iter().enumerate() {
            let p = p.get_ref();
            let at = cx.finite_xy(&p.at, format!("mesh.point[{k}].at"))?;
            let size = cx.positive(&p.size, format!("mesh.point[{k}].size"), "the point size")? * unit_m;
            if let Some((d, diagonal)) = domain {
                if !d.outline.contains(at) && d.outline.distance(at) > 1e-9 * diagonal {
                    return Err(cx
                        .err(
                            p.at.span(),
                            format!(
                                "the point ({}, {}) {} lies outside the domain '{}', so its size would be ignored",
                                at[0] / unit_m,
                                at[1] / unit_m,
                                unit,
                                d.name
                            ),
                        )
                        .key(format!("mesh.point[{k}].at"))
                        .help("move the point inside the first shape, or remove it"));
                }
            }
            size_points.push(SizePoint { at, size_m: size });
        }
    }
    Ok((params, size_points, sets_min_angle, sets_gradation))
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    const FIXTURES: [&str; 6] = [
        include_str!("../../fixtures/models/l-electrode.toml"),
        include_str!("../../fixtures/models/busbar-support.toml"),
        include_str!("../../fixtures/models/gis-spacer.toml"),
        include_str!("../../fixtures/models/bushing.toml"),
        include_str!("../../fixtures/models/bushing-sharp.toml"),
        include_str!("../../fixtures/models/grading-ring.toml"),
    ];

    #[test]
    fn every_demo_model_parses() {
        for text in FIXTURES {
            parse(Path::new("demo.toml"), text).unwrap();
        }
    }

    proptest! {
        #![proptest_config(ProptestConfig { cases: 256, ..ProptestConfig::default() })]

        /// Mutated demo models (characters deleted, replaced or inserted, numbers flipped
        /// in sign or scale) never panic the parser: each is a model or a located error.
        #[test]
        fn mutated_models_never_panic(
            which in 0usize..5,
            edits in prop::collection::vec((0.0f64..1.0, 0u8..4, prop::sample::select(vec!['0', '-', '.', '"', '[', ']', '=', 'e', '\n', ',', '9', 'x'])), 1..6),
        ) {
            let mut text: Vec<char> = FIXTURES[which].chars().collect();
            for (pos, op, ch) in edits {
                if text.is_empty() {
                    break;
                }
                let i = ((pos * text.len() as f64) as usize).min(text.len() - 1);
                match op {
                    0 => {
                        text.remove(i);
                    }
                    1 => text[i] = ch,
                    2 => text.insert(i, ch),
                    _ => {
                        // Negate or blow up the number under the cursor, if any.
                        if text[i].is_ascii_digit() {
                            text.insert(i, if ch == '-' { '-' } else { '9' });
                        }
                    }
                }
            }
            let s: String = text.into_iter().collect();
            match parse(Path::new("mutated.toml"), &s) {
                Ok(_) => {}
                Err(e) => {
                    // The message names the file; rendering it must not panic either.
                    let msg = e.to_string();
                    prop_assert!(msg.contains("mutated.toml"), "{msg}");
                }
            }
        }
    }
}
