//! Stage 1: the model file (TOML) → a validated [`Plan`]: the mesher's [`Geometry`] and
//! meshing parameters (SI units), the materials, conductors, boundary, probes and `check`
//! settings, with diagnostics that point into the file.
//!
//! Each table is checked in one place, where it enters — `raw` holds the file as TOML
//! gives it, and one module per table checks it (`materials`, `conductors`, `shapes`,
//! `boundary`, `mesh_controls`, `probes`); [`parse`] reads `[model]` and `[check]` and calls
//! them in order. The stages below (mesher, engine) trust the plan: their own checks are
//! debug assertions or guards for library callers. [`problem`] builds the engine's problem
//! from the plan and [`budget`] fits the run to the machine's memory.
//!
//! Every key is documented in `docs/model-format.md`.

pub mod budget;
pub mod diag;
pub mod problem;

mod boundary;
mod conductors;
pub mod import;
mod load_cases;
mod materials;
mod mesh_controls;
mod probes;
mod raw;
mod shapes;
mod thin;

use boundary::boundary;
use conductors::conductors;
use diag::ModelError;
use materials::materials;
use mesh_controls::mesh_controls;
use mesher::{Geometry, MeshError, RefineParams, Symmetry, Xy};
use probes::{points, probes};
use raw::RawModel;
use shapes::shapes;
use std::ops::Range;
use std::path::Path;
use toml::Spanned as S;

/// A dielectric material.
#[derive(Clone, Debug)]
pub struct Material {
    /// Name.
    pub name: String,
    /// Relative permittivity.
    pub permittivity: f64,
    /// Anisotropic relative permittivity [[εxx, εxy], [εxy, εyy]], if given.
    pub permittivity_tensor: Option<[[f64; 2]; 2]>,
    /// Allowable design stress, kV/mm (user or company data): the value of every load case
    /// without its own, in that case's basis.
    pub allowable_stress_kv_per_mm: Option<f64>,
    /// Allowable stresses of named load cases, kV/mm in each case's basis.
    pub allowable_by_case: Vec<(String, f64)>,
    /// Weibull shape parameter m (in field) for the effective volume, if given.
    pub weibull_shape: Option<f64>,
    /// The gas and its state, for a gas: the discharge-inception checks then apply.
    pub gas: Option<engine::Gas>,
}

impl Material {
    /// The allowable stress of load case `case` (its own value, else the material's
    /// default), kV/mm.
    pub fn allowable_in(&self, case: &str) -> Option<f64> {
        self.allowable_by_case.iter().find(|(n, _)| n == case).map(|v| v.1).or(self.allowable_stress_kv_per_mm)
    }
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

/// A stretch of the outer boundary with its own condition (`[[boundary.piece]]`).
#[derive(Clone, Debug, PartialEq)]
pub struct BoundaryPieceSpec {
    /// Name.
    pub name: String,
    /// The stretch (metres) and its condition, as the engine takes it.
    pub stretch: engine::BoundaryStretch,
}

/// A named point where `solve` and `check` report V and E (`[[point]]`).
#[derive(Clone, Debug, PartialEq)]
pub struct NamedPoint {
    /// Name.
    pub name: String,
    /// Position, metres.
    pub at: mesher::Xy,
}

/// A requested field probe.
#[derive(Clone, Debug, PartialEq)]
pub struct Probe {
    /// Name (letters, digits, '-' and '_'; used in the CSV file name).
    pub name: String,
    /// What to sample.
    pub kind: ProbeKind,
    /// Allowable |E_t| along an interface or surface probe, kV/mm: the value of every load
    /// case without its own.
    pub allowable_tangential_kv_per_mm: Option<f64>,
    /// Allowable |E_t| of named load cases, kV/mm in each case's basis.
    pub allowable_tangential_by_case: Vec<(String, f64)>,
}

impl Probe {
    /// The allowable tangential stress of load case `case`, kV/mm.
    pub fn allowable_tangential_in(&self, case: &str) -> Option<f64> {
        self.allowable_tangential_by_case
            .iter()
            .find(|(n, _)| n == case)
            .map(|v| v.1)
            .or(self.allowable_tangential_kv_per_mm)
    }
}

pub use load_cases::{
    largest_potential, Basis, BreakdownSettings, ElectrodeRef, FieldFactorSpec, GradingSpec, LoadCase, LoadKind,
};

/// A checked model, ready to mesh.
#[derive(Clone, Debug)]
pub struct Plan {
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
    /// Named points (`[[point]]`).
    pub points: Vec<NamedPoint>,
    /// Pieces of the outer boundary with their own conditions (`[[boundary.piece]]`).
    pub boundary_pieces: Vec<BoundaryPieceSpec>,
    /// The load cases (`[[load_case]]`); empty: the model's potentials as given are the one
    /// case.
    pub load_cases: Vec<LoadCase>,
    /// `[breakdown]`: settings of the breakdown checks.
    pub breakdown: BreakdownSettings,
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
    /// `[import]`: the mesh comes from a file instead of the drawn shapes (which are then
    /// none).
    pub import: Option<import::ImportPlan>,
    /// Byte spans of each shape's `name` value, for pointing at shapes in errors.
    shape_spans: Vec<Range<usize>>,
    /// Byte spans of each thin electrode's `name` value.
    thin_spans: Vec<Range<usize>>,
    source: String,
    path: std::path::PathBuf,
}

impl Plan {
    /// Turns a mesher error into a diagnostic pointing at the shape it concerns.
    pub fn mesh_error(&self, e: &MeshError) -> ModelError {
        let shape = e.shape().and_then(|name| self.geometry.shapes.iter().position(|s| s.name == name));
        let thin = e.shape().and_then(|name| self.geometry.thin.iter().position(|t| t.name == name));
        let span = match (shape, thin) {
            (Some(i), _) => Some(self.shape_spans[i].clone()),
            (None, Some(i)) => Some(self.thin_spans[i].clone()),
            (None, None) => None,
        };
        let mut err = ModelError::new(&self.path, &self.source, span, e.message_in(self.unit_m, self.unit));
        if let Some(name) = e.shape() {
            err = err.key(if thin.is_some() && shape.is_none() {
                format!("in thin electrode '{name}'")
            } else {
                format!("in shape '{name}'")
            });
        }
        if let MeshError::OverBudget { vertices, at_least, .. } = e {
            // The memory that mesh would need, solved (engine's measured bytes per unknown;
            // about four unknowns per vertex with quadratic elements).
            let unknowns = vertices * engine::unknowns_per_vertex(self.params.order);
            let bytes = engine::predicted_memory_bytes(unknowns, self.params.order, false);
            let need = format!(
                "solving that mesh would take {}{} of memory",
                if *at_least { "more than " } else { "about " },
                budget::gib(bytes)
            );
            // The note (when the memory set the node budget) names the budget itself.
            let help = match &self.budget_note {
                Some(note) => format!("{need}; {note}"),
                None => format!("{need} (the run's memory budget is {})", budget::gib(self.memory_budget_bytes)),
            };
            err = err.help(help);
        }
        err
    }
}

/// A number as a message shows the value given: plainly in the usual range (50, 0.25),
/// in powers of ten outside it (1e300, inf).
fn num(x: f64) -> String {
    if x == 0.0 || (1e-4..1e7).contains(&x.abs()) {
        format!("{x}")
    } else {
        format!("{x:e}")
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

impl Plan {
    /// A solve error as a model-file diagnostic: at the shape it names, when it names one,
    /// with the table to look at otherwise.
    pub fn solve_error(&self, e: &engine::SolveError) -> ModelError {
        use engine::SolveError as E;
        let region = match e {
            E::NoPermittivity { region } | E::FloatingPart { region, .. } => Some(region.as_str()),
            _ => None,
        };
        if let E::Mesh(m) = e {
            return self.mesh_error(m);
        }
        // The region's shape, or the first shape of the conductor named.
        let shape = region.and_then(|r| self.geometry.shapes.iter().position(|s| s.name == r)).or_else(|| match e {
            E::ConductorOnHeldBoundary { conductor, .. } => {
                let c = self.conductors.iter().position(|k| &k.name == conductor)?;
                self.geometry
                    .shapes
                    .iter()
                    .position(|s| matches!(s.fill, mesher::Fill::Conductor { conductor } if conductor as usize == c))
            }
            _ => None,
        });
        let span = shape.map(|i| self.shape_spans[i].clone());
        // Places in the model's unit, as the file gives them.
        let place = |at: [f64; 2]| {
            format!("({}, {}) {}", num(round4(at[0] / self.unit_m)), num(round4(at[1] / self.unit_m)), self.unit)
        };
        let message = match e {
            E::ConductorOnHeldBoundary { conductor, at, conductor_v, boundary_v } => format!(
                "conductor '{conductor}' touches the outer boundary at {}, which is held at {} V there, while the \
                 conductor {}: a point cannot hold two potentials; move the conductor off the boundary (a gap of \
                 dielectric between them), give it the boundary's potential, or make that stretch zero_flux if it \
                 is a symmetry plane",
                place(*at),
                num(*boundary_v),
                match conductor_v {
                    Some(v) => format!("is at {} V", num(*v)),
                    None => "floats".to_string(),
                }
            ),
            E::FloatingPart { region, at } => format!(
                "region '{region}' (near {}) is cut off from every fixed potential, so its potential is \
                 undetermined; connect it to an electrode through a dielectric, or hold an enclosing conductor at a \
                 potential",
                place(*at)
            ),
            _ => e.to_string(),
        };
        let mut err = ModelError::new(&self.path, &self.source, span, message);
        let look_at = match e {
            E::ConductorOnHeldBoundary { conductor, .. } => format!("[[conductor]] '{conductor}' and [boundary]"),
            _ if shape.is_some() => format!("in shape '{}'", region.unwrap_or_default()),
            E::NoPotentialReference | E::ConductorMismatch { .. } => "[[conductor]] and [boundary]".into(),
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

/// Metres per unit and the unit's canonical name, for a length unit of the model file (the
/// results record the canonical name, so their readers use this too).
pub fn units(name: &str) -> Option<(f64, &'static str)> {
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
pub fn load(path: &Path) -> Result<Plan, ModelError> {
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

/// A region name as probes and load cases refer to it: a drawn shape, or an imported region.
pub(super) struct RegionName {
    /// Shape or region name.
    pub(super) name: String,
    /// A conductor shape (no dielectric region).
    pub(super) conductor: bool,
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

    /// The index of the `table` entry ("material", "conductor") that `given` names, or an
    /// error at it listing the known names; `place` says where it was named ("shape 'x'").
    fn named<'n>(
        &self,
        names: impl Iterator<Item = &'n str> + Clone,
        given: &S<String>,
        table: &str,
        place: &str,
        key: String,
    ) -> Result<usize, ModelError> {
        names.clone().position(|n| n == given.get_ref()).ok_or_else(|| {
            let known: Vec<&str> = names.collect();
            self.err(given.span(), format!("unknown {table} '{}' in {place}", given.get_ref())).key(key).help(
                if known.is_empty() {
                    format!("define it in a [[{table}]] table")
                } else {
                    format!("known {table}s: {}", known.join(", "))
                },
            )
        })
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

    /// A potential within the accepted range, volts.
    fn potential(&self, v: &S<f64>, key: String) -> Result<f64, ModelError> {
        let x = *v.get_ref();
        if x.is_finite() && x.abs() <= MAX_POTENTIAL_V {
            Ok(x)
        } else {
            Err(self
                .err(
                    v.span(),
                    format!("the potential must be a finite number of volts within ±{MAX_POTENTIAL_V:e}, not {x:e}"),
                )
                .key(key)
                .help(LIMIT_HELP))
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
                        "coordinates must be finite numbers within ±{MAX_COORDINATE_M:e} m, not [{}, {}]",
                        num(p[0]),
                        num(p[1])
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
pub fn parse(path: &Path, source: &str) -> Result<Plan, ModelError> {
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

    let import = import::import(&cx, &raw, &materials, &conductors, symmetry)?;
    let (shapes, shape_material, shape_charge_density, shape_spans) = match &import {
        None => shapes(&cx, &raw, &materials, &conductors, unit)?,
        Some(i) => (
            Vec::new(),
            i.region_material.iter().map(|&m| Some(m)).collect(),
            vec![0.0; i.region_material.len()],
            Vec::new(),
        ),
    };
    let region_names: Vec<RegionName> = match &import {
        None => shapes
            .iter()
            .map(|s| RegionName { name: s.name.clone(), conductor: matches!(s.fill, mesher::Fill::Conductor { .. }) })
            .collect(),
        Some(i) => i.spec.region_names.iter().map(|n| RegionName { name: n.clone(), conductor: false }).collect(),
    };

    let (outer, outer_potential_v) = boundary(&cx, &raw, &conductors)?;
    if let (Some(_), mesher::OuterBoundary::Open, Some(b)) = (&import, outer, &raw.boundary) {
        return Err(cx
            .err(b.span(), "an open boundary needs a drawn circular domain; an imported mesh cannot have one".into())
            .key("boundary.outer")
            .help("use outer = \"potential\" or \"zero_flux\" for an imported mesh"));
    }

    let (params, size_points, sets_min_angle, sets_gradation) = mesh_controls(&cx, &raw, &shapes, unit)?;
    let mut probes = probes(&cx, &raw, &region_names, &conductors)?;
    let points = points(&cx, &raw, symmetry == Symmetry::Axisymmetric)?;
    let boundary_pieces = boundary::pieces(
        &cx,
        &raw,
        if import.is_none() { shapes.first().map(|s| &s.outline) } else { None },
        outer,
        &conductors,
    )?;
    let (thin, thin_spans) = thin::thin_electrodes(&cx, &raw, &conductors, import.is_some())?;
    let mut materials = materials;
    let load_cases = load_cases::load_cases(
        &cx,
        &raw,
        &conductors,
        outer_potential_v,
        &region_names,
        &shape_charge_density,
        &mut materials,
        &mut probes,
    )?;
    let breakdown = load_cases::breakdown(&cx, &raw, &conductors, outer_potential_v)?;
    let geometry = Geometry {
        symmetry,
        shapes,
        conductors: conductors.iter().map(|c| c.name.clone()).collect(),
        outer,
        size_points,
        thin,
        boundary_pieces: boundary_pieces
            .iter()
            .map(|b| mesher::BoundaryPiece { curve: b.stretch.curve, wall: b.stretch.wall() })
            .collect(),
    };
    let singular_exclusion_radius_m =
        match raw.check.as_ref().and_then(|c| c.get_ref().singular_exclusion_radius.as_ref()) {
            Some(r) => Some(
                positive(r, "check.singular_exclusion_radius".into(), "the exclusion radius around singular points")?
                    * unit_m,
            ),
            None => None,
        };
    let model = Plan {
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
        points,
        boundary_pieces,
        load_cases,
        breakdown,
        unit_m,
        unit,
        import,
        shape_spans,
        thin_spans,
        source: source.to_string(),
        path: path.to_path_buf(),
    };
    if model.import.is_none() {
        model.geometry.validate().map_err(|e| model.mesh_error(&e))?;
    }
    Ok(model)
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    const FIXTURES: [&str; 6] = [
        include_str!("../../../fixtures/models/l-electrode.toml"),
        include_str!("../../../fixtures/models/busbar-support.toml"),
        include_str!("../../../fixtures/models/gis-spacer.toml"),
        include_str!("../../../fixtures/models/bushing.toml"),
        include_str!("../../../fixtures/models/bushing-sharp.toml"),
        include_str!("../../../fixtures/models/grading-ring.toml"),
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
