//! The `solve` stage's results: the record written to `results.json` (conductors,
//! capacitance, region peaks, probes, warnings, cautions), its checks and its terminal
//! text, and the files written beside it. `check` extends the same record.

use crate::plan::{ConductorKind, Plan, ProbeKind};
use crate::results::mesh::MeshReport;
use crate::results::write::write_atomic;
use crate::{CliError, Result};
use engine::{element_fields, Problem};
use mesher::{CellArray, NodeArray, Symmetry};
use serde::Serialize;

/// The cautions shown with every result (see the README).
pub const CAUTIONS: [&str; 3] = [
    "Computed stresses come from an idealised electrostatic model (linear, homogeneous materials; nominal geometry; no space or surface charge, voids, particles, roughness, moisture or ageing). They are indicative design aids: type and routine tests under the applicable apparatus standards, local codes and licensed engineering practice decide.",
    "Allowable stresses are user data; material strengths from standardised material tests are not design values.",
    "A peak at or next to a singular point (λ < 1) grows as the mesh is refined and has no physical value: model the real edge radius or use integral criteria.",
];

impl Results {
    /// The first result derived from the solution that is not a finite number, named (no
    /// NaN or infinity may reach the terminal or `results.json`, where it would print as
    /// "NaN" or `null`; the solve itself already refuses non-finite potentials, charges,
    /// energy and capacitances: `engine::SolveError::NonFinite`).
    pub fn first_non_finite(&self) -> Option<String> {
        let bad = |x: f64| !x.is_finite();
        for r in &self.regions {
            if bad(r.e_max_v_per_m) || r.utilisation.is_some_and(bad) || r.error_bar_v_per_m.is_some_and(bad) {
                return Some(format!("peak field in region '{}'", r.name));
            }
        }
        for p in &self.probes {
            if bad(p.e_max_v_per_m) || p.e_t_max_v_per_m.is_some_and(bad) {
                return Some(format!("largest field along probe '{}'", p.name));
            }
        }
        for p in &self.points {
            for s in &p.sides {
                let bars = [s.potential_error_bar_v, s.e_error_bar_v_per_m];
                if bad(s.potential_v) || bad(s.e_abs_v_per_m) || bars.iter().flatten().any(|&b| bad(b)) {
                    return Some(format!("field at point '{}'", p.name));
                }
            }
        }
        self.checks.as_ref().and_then(|c| c.first_non_finite())
    }
}

/// Refuses results with a non-finite number in them (see [`Results::first_non_finite`]).
pub fn finite_or_error(model: &Plan, results: &Results) -> Result<()> {
    match results.first_non_finite() {
        Some(q) => Err(solve_error(model, engine::SolveError::NonFinite { quantity: q })),
        None => Ok(()),
    }
}

/// `results.json`, documented in `docs/results-format.md`.
#[derive(Serialize, Debug)]
pub struct Results {
    /// Schema name and version.
    pub schema: &'static str,
    /// The mesh statistics and singular points (lengths in the model unit, as `mesh` prints).
    pub mesh: MeshReport,
    /// Unknowns of the reduced system.
    pub unknowns: usize,
    /// True for planar models: charges, capacitances and energy are per metre of depth.
    pub per_metre_depth: bool,
    /// Conductors: potential (solved for floating ones) and charge.
    pub conductors: Vec<ConductorResult>,
    /// Stored energy, J (J/m planar).
    pub energy_j: f64,
    /// Maxwell capacitance matrix of the fixed conductors, F (F/m planar).
    pub capacitance_matrix_f: CapacitanceMatrix,
    /// Peak field per region.
    pub regions: Vec<RegionResult>,
    /// Field probes and their CSV files.
    pub probes: Vec<ProbeResult>,
    /// V and E at the named points of `[[point]]` (also in points.csv).
    pub points: Vec<PointResult>,
    /// The breakdown checks per load case (filled by the command after the analysis).
    pub checks: Option<crate::results::checks::Checks>,
    /// Wall-clock seconds per stage.
    pub timings_s: Vec<(String, f64)>,
    /// Cautions that apply to every figure above.
    pub cautions: Vec<&'static str>,
    /// Every warning of the run (the mesh's among them), one sentence each with the place
    /// and the fix; empty when there is none.
    pub warnings: Vec<String>,
}

/// One conductor's result.
#[derive(Serialize, Debug)]
pub struct ConductorResult {
    /// Name.
    pub name: String,
    /// Floating (potential solved for) or fixed.
    pub floating: bool,
    /// Potential, V.
    pub potential_v: f64,
    /// Net charge, C (C/m planar).
    pub charge_c: f64,
}

/// The capacitance matrix with its row/column names.
#[derive(Serialize, Debug)]
pub struct CapacitanceMatrix {
    /// Conductor names, in row and column order.
    pub conductors: Vec<String>,
    /// Values, F (F/m planar).
    pub values: Vec<Vec<f64>>,
}

/// One probe's summary (the samples are in its CSV file).
#[derive(Serialize, Debug)]
pub struct ProbeResult {
    /// Probe name.
    pub name: String,
    /// "line", "interface" or "conductor_surface".
    pub kind: &'static str,
    /// CSV file name, in the output folder.
    pub file: String,
    /// Number of samples.
    pub samples: usize,
    /// Largest |E| over the samples (both sides of an interface), V/m.
    pub e_max_v_per_m: f64,
    /// Largest |Eₜ| over the samples (interfaces and surfaces), V/m.
    pub e_t_max_v_per_m: Option<f64>,
}

/// V and E at one named point.
#[derive(Serialize, Debug)]
pub struct PointResult {
    /// The point's name.
    pub name: String,
    /// Position, metres.
    pub at_m: [f64; 2],
    /// One entry per region the point lies in: two on an interface, none inside a
    /// conductor or outside the domain.
    pub sides: Vec<PointSideResult>,
    /// Why `sides` is empty, or which singular point is near (the field there is
    /// mesh-dependent).
    pub note: Option<String>,
}

/// V and E at a point, in one region.
#[derive(Serialize, Debug)]
pub struct PointSideResult {
    /// Region (shape) name.
    pub region: String,
    /// Potential, V.
    pub potential_v: f64,
    /// E = −∇V, V/m (the element field, averaged over the region's elements at the point).
    pub e_v_per_m: [f64; 2],
    /// |E|, V/m.
    pub e_abs_v_per_m: f64,
    /// `check` only: the potential's error bar, V.
    pub potential_error_bar_v: Option<f64>,
    /// `check` only: the potential's verdict.
    pub potential_status: Option<String>,
    /// `check` only: |E|'s error bar, V/m.
    pub e_error_bar_v_per_m: Option<f64>,
    /// `check` only: |E|'s verdict ("converged", "not converged", or "singular —
    /// mesh-dependent" within a singular point's disc).
    pub e_status: Option<String>,
}

/// One region's peak field.
#[derive(Serialize, Debug)]
pub struct RegionResult {
    /// Shape name.
    pub name: String,
    /// Material name.
    pub material: String,
    /// Largest |E| at a vertex of the region (the recovered field of the region's elements
    /// there; one-sided maximum at singular points), V/m.
    pub e_max_v_per_m: f64,
    /// The same in kV/mm.
    pub e_max_kv_per_mm: f64,
    /// Where, metres.
    pub at_m: [f64; 2],
    /// The singular point (S1, S2 … as in the mesh report) within two element sizes of the
    /// peak, if any: the peak is then mesh-dependent.
    pub near_singular_point: Option<String>,
    /// Allowable stress, kV/mm, if the material gives one.
    pub allowable_kv_per_mm: Option<f64>,
    /// E_max / allowable.
    pub utilisation: Option<f64>,
    /// `check` only: the error bar of the peak, V/m (see docs/results-format.md), when the
    /// peak lies away from singular points.
    pub error_bar_v_per_m: Option<f64>,
    /// `check` only: "converged", "not converged", or "singular — mesh-dependent" for a
    /// peak at a singular point; `solve` (one mesh, no study) leaves it out.
    pub status: Option<String>,
}

/// A solve error as a user error naming the model file.
pub fn solve_error(model: &Plan, e: engine::SolveError) -> CliError {
    CliError::from(model.solve_error(&e))
}

/// What `solve` writes besides results.json: the solution, its fields and the probe files.
#[derive(Debug)]
pub struct Analysis {
    /// The solution.
    pub sol: engine::Solution,
    /// Element and nodal fields.
    pub fields: engine::ElementFields,
    /// Probe CSV files: (file name, contents).
    pub probe_files: Vec<(String, String)>,
}

/// Fields, region peaks, probes and the results record (timings left empty for the
/// caller) of one solution.
pub fn analyse(
    model: &Plan,
    mesh: &mesher::Mesh,
    mesh_report: MeshReport,
    problem: &Problem,
    sol: engine::Solution,
    fixed: &[usize],
    cmat: Vec<Vec<f64>>,
) -> (Results, Analysis) {
    let fields = element_fields(mesh, problem, &sol);
    let regions = fields
        .region_peaks
        .iter()
        .map(|p| {
            let r = p.region as usize;
            let mat = model.shape_material[r].map(|m| &model.materials[m]);
            // Local element size: the longest edge of the triangles at the peak's vertex.
            let h = mesh
                .triangles
                .iter()
                .filter(|tri| tri.contains(&p.node))
                .flat_map(|tri| {
                    (0..3).map(move |i| {
                        let (a, b) = (mesh.nodes[tri[i] as usize], mesh.nodes[tri[(i + 1) % 3] as usize]);
                        (a[0] - b[0]).hypot(a[1] - b[1])
                    })
                })
                .fold(0.0, f64::max);
            let near = singular_point_within(mesh, p.at, 2.0 * h).map(|i| format!("S{}", i + 1));
            let allow = mat.and_then(|m| m.allowable_stress_kv_per_mm);
            RegionResult {
                name: mesh.shape_names[r].clone(),
                material: mat.map(|m| m.name.clone()).unwrap_or_default(),
                e_max_v_per_m: p.e_max_v_per_m,
                e_max_kv_per_mm: p.e_max_v_per_m / 1e6,
                at_m: p.at,
                near_singular_point: near,
                allowable_kv_per_mm: allow,
                utilisation: allow.map(|a| p.e_max_v_per_m / 1e6 / a),
                error_bar_v_per_m: None,
                status: None,
            }
        })
        .collect();
    let mut probe_files: Vec<(String, String)> = Vec::new();
    let mut probes = Vec::new();
    for p in &model.probes {
        let file = format!("probe-{}.csv", p.name);
        let mut csv = String::new();
        use std::fmt::Write as _;
        let (kind, n, e_max, et_max) = match &p.kind {
            ProbeKind::Line { path, samples } => {
                let rows = engine::probe_line(mesh, &sol, path, *samples);
                let _ = writeln!(csv, "s_m,x_m,y_m,region,potential_v,ex_v_per_m,ey_v_per_m,e_v_per_m");
                for r in &rows {
                    let region = r.region.map(|k| mesh.shape_names[k as usize].as_str()).unwrap_or("");
                    let e = r.e[0].hypot(r.e[1]);
                    let _ = writeln!(
                        csv,
                        "{:e},{:e},{:e},{region},{:e},{:e},{:e},{:e}",
                        r.s, r.at[0], r.at[1], r.potential, r.e[0], r.e[1], e
                    );
                }
                ("line", rows.len(), line_peak(&rows, |_| true), None)
            }
            ProbeKind::Interface(..) | ProbeKind::ConductorSurface(_) => {
                let (which, kind) = interface_selector(&p.kind).expect("an interface or surface probe");
                let rows = engine::probe_interface(mesh, &sol, which);
                let _ = writeln!(
                    csv,
                    "s_m,x_m,y_m,potential_v,region_1,en_1_v_per_m,et_1_v_per_m,e_1_v_per_m,region_2,en_2_v_per_m,et_2_v_per_m,e_2_v_per_m"
                );
                for r in &rows {
                    let side = |f: Option<&engine::SideField>| match f {
                        Some(f) => {
                            let e = f.e_n.hypot(f.e_t);
                            (mesh.shape_names[f.region as usize].clone(), f.e_n, f.e_t, e)
                        }
                        None => (String::new(), f64::NAN, f64::NAN, f64::NAN),
                    };
                    let a = side(Some(&r.first));
                    let b = side(r.second.as_ref());
                    let _ = writeln!(
                        csv,
                        "{:e},{:e},{:e},{:e},{},{:e},{:e},{:e},{},{:e},{:e},{:e}",
                        r.s, r.at[0], r.at[1], r.potential, a.0, a.1, a.2, a.3, b.0, b.1, b.2, b.3
                    );
                }
                let (e_max, et_max) = interface_peak(&rows, |_| true);
                (kind, rows.len(), e_max, Some(et_max))
            }
        };
        probes.push(ProbeResult {
            name: p.name.clone(),
            kind,
            file: file.clone(),
            samples: n,
            e_max_v_per_m: e_max,
            e_t_max_v_per_m: et_max,
        });
        probe_files.push((file, csv));
    }
    let results = Results {
        schema: "fieldgrade-results/1",
        unknowns: sol.num_unknowns,
        per_metre_depth: mesh.symmetry == Symmetry::Planar,
        conductors: model
            .conductors
            .iter()
            .enumerate()
            .map(|(i, c)| ConductorResult {
                name: c.name.clone(),
                floating: matches!(c.kind, ConductorKind::Floating { .. }),
                potential_v: sol.conductor_potentials[i],
                charge_c: sol.conductor_charges[i],
            })
            .collect(),
        energy_j: sol.energy,
        capacitance_matrix_f: CapacitanceMatrix {
            conductors: fixed.iter().map(|&i| model.conductors[i].name.clone()).collect(),
            values: cmat,
        },
        regions,
        probes,
        // Filled by the command (`point_results`: the recovered field needs the
        // factorised solution).
        points: Vec::new(),
        checks: None,
        timings_s: Vec::new(),
        cautions: CAUTIONS.to_vec(),
        warnings: mesh_report.warnings.clone(),
        mesh: mesh_report,
    };
    (results, Analysis { sol, fields, probe_files })
}

/// V and the recovered E at the model's named points (`[[point]]`), bars left empty.
pub fn point_results(model: &Plan, mesh: &mesher::Mesh, solved: &engine::FactoredSolution) -> Vec<PointResult> {
    if model.points.is_empty() {
        return Vec::new();
    }
    let positions: Vec<mesher::Xy> = model.points.iter().map(|p| p.at).collect();
    let grid = mesher::triangle_grid(mesh, 0.0);
    let values = solved.point_values(mesh, &positions);
    model
        .points
        .iter()
        .zip(values)
        .map(|(p, sides)| {
            let note = if sides.is_empty() {
                Some(
                    "outside the dielectric mesh: inside a conductor (V is its potential, E = 0) or outside the domain"
                        .into(),
                )
            } else {
                near_singular_point(mesh, &grid, p.at)
            };
            PointResult {
                name: p.name.clone(),
                at_m: p.at,
                sides: sides
                    .iter()
                    .map(|s| PointSideResult {
                        region: mesh.shape_names[s.region as usize].clone(),
                        potential_v: s.potential,
                        e_v_per_m: s.e,
                        e_abs_v_per_m: s.e[0].hypot(s.e[1]),
                        potential_error_bar_v: None,
                        potential_status: None,
                        e_error_bar_v_per_m: None,
                        e_status: None,
                    })
                    .collect(),
                note,
            }
        })
        .collect()
}

/// A note naming the field-singular point within two element sizes of `p`, if any (the
/// field there grows as the mesh is refined); `grid` is the mesh's triangle grid.
fn near_singular_point(mesh: &mesher::Mesh, grid: &mesher::BucketGrid, p: mesher::Xy) -> Option<String> {
    let mut h: f64 = 0.0;
    grid.for_each_near(p, 0.0, |t| {
        let tri = mesh.triangles[t as usize];
        for i in 0..3 {
            let (a, b) = (mesh.nodes[tri[i] as usize], mesh.nodes[tri[(i + 1) % 3] as usize]);
            h = h.max((a[0] - b[0]).hypot(a[1] - b[1]));
        }
    });
    singular_point_within(mesh, p, 2.0 * h)
        .map(|i| format!("within two element sizes of singular point S{}: the field there is mesh-dependent", i + 1))
}

/// The field-singular point nearest to `p` within `reach` (metres), by its index.
fn singular_point_within(mesh: &mesher::Mesh, p: mesher::Xy, reach: f64) -> Option<usize> {
    mesh.singular_points
        .iter()
        .enumerate()
        .filter(|(_, s)| s.is_field_singular())
        .map(|(i, s)| (i, (s.at[0] - p[0]).hypot(s.at[1] - p[1])))
        .filter(|&(_, d)| d <= reach)
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .map(|(i, _)| i)
}

/// points.csv: one row per point and side (a point outside the dielectric mesh gets one
/// row with empty values). Bars are empty after `solve`.
pub fn points_csv(points: &[PointResult]) -> String {
    use std::fmt::Write as _;
    let mut csv = String::from(
        "name,x_m,y_m,region,potential_v,ex_v_per_m,ey_v_per_m,e_v_per_m,potential_bar_v,potential_status,e_bar_v_per_m,e_status\n",
    );
    let opt = |v: Option<f64>| v.map(|x| format!("{x:e}")).unwrap_or_default();
    for p in points {
        if p.sides.is_empty() {
            let _ = writeln!(csv, "{},{:e},{:e},,,,,,,,,", p.name, p.at_m[0], p.at_m[1]);
        }
        for s in &p.sides {
            let _ = writeln!(
                csv,
                "{},{:e},{:e},{},{:e},{:e},{:e},{:e},{},{},{},{}",
                p.name,
                p.at_m[0],
                p.at_m[1],
                s.region,
                s.potential_v,
                s.e_v_per_m[0],
                s.e_v_per_m[1],
                s.e_abs_v_per_m,
                opt(s.potential_error_bar_v),
                s.potential_status.as_deref().unwrap_or(""),
                opt(s.e_error_bar_v_per_m),
                s.e_status.as_deref().unwrap_or("")
            );
        }
    }
    csv
}

/// The selector and report label of an interface or conductor-surface probe (None for a
/// line probe).
pub fn interface_selector(kind: &ProbeKind) -> Option<(engine::InterfaceSelector, &'static str)> {
    match *kind {
        ProbeKind::Interface(a, b) => Some((engine::InterfaceSelector::Regions(a, b), "interface")),
        ProbeKind::ConductorSurface(c) => Some((engine::InterfaceSelector::Conductor(c), "conductor_surface")),
        ProbeKind::Line { .. } => None,
    }
}

/// The largest finite |E| over the line-probe samples whose position `keep` accepts.
pub fn line_peak(rows: &[engine::LineSample], keep: impl Fn(mesher::Xy) -> bool) -> f64 {
    rows.iter().filter(|r| keep(r.at)).map(|r| r.e[0].hypot(r.e[1])).filter(|e| e.is_finite()).fold(0.0, f64::max)
}

/// The largest finite |E| and |Eₜ| over both sides of the interface samples whose position
/// `keep` accepts.
pub fn interface_peak(rows: &[engine::InterfaceSample], keep: impl Fn(mesher::Xy) -> bool) -> (f64, f64) {
    rows.iter()
        .filter(|r| keep(r.at))
        .flat_map(|r| std::iter::once(&r.first).chain(r.second.as_ref()))
        .map(|f| (f.e_n.hypot(f.e_t), f.e_t.abs()))
        .filter(|(e, _)| e.is_finite())
        .fold((0.0, 0.0), |m, (e, et)| (m.0.max(e), m.1.max(et)))
}

/// Writes fields.vtu, the probe CSVs and the `extra` files (name, contents) into `out`,
/// each atomically, the extra ones last.
///
/// # Errors
/// I/O errors, naming the file.
pub fn write_outputs(
    out: &std::path::Path,
    mesh: &mesher::Mesh,
    problem: &Problem,
    analysis: &Analysis,
    extra: &[(String, String)],
    encoding: mesher::VtuEncoding,
) -> Result<()> {
    let (sol, fields) = (&analysis.sol, &analysis.fields);
    std::fs::create_dir_all(out)
        .map_err(|e| CliError::io(format!("cannot create the output folder '{}'", out.display()), e))?;
    let potential = &sol.potential;
    let e_vec: Vec<f64> = fields.centroid.iter().flat_map(|e| [e[0], e[1], 0.0]).collect();
    let e_mag: Vec<f64> = fields.max_magnitude.clone();
    let eps: Vec<f64> = mesh.regions.iter().map(|&r| problem.permittivity[r as usize]).collect();
    let d_vec: Vec<f64> = fields
        .centroid
        .iter()
        .zip(&mesh.regions)
        .flat_map(|(e, &r)| {
            let t = problem.tensor.get(r as usize).copied().flatten().unwrap_or_else(|| {
                let s = problem.permittivity[r as usize];
                [[s, 0.0], [0.0, s]]
            });
            let k = engine::EPSILON_0;
            [k * (t[0][0] * e[0] + t[0][1] * e[1]), k * (t[1][0] * e[0] + t[1][1] * e[1]), 0.0]
        })
        .collect();
    let e_nodal: Vec<f64> = fields.nodal.iter().flat_map(|e| [e[0], e[1], 0.0]).collect();
    let mut cells = vec![
        CellArray { name: "E_centroid_V_per_m", components: 3, values: &e_vec },
        CellArray { name: "E_max_V_per_m", components: 1, values: &e_mag },
        CellArray { name: "relative_permittivity", components: 1, values: &eps },
    ];
    // With scalar permittivities D = ε₀·εᵣ·E_centroid holds exactly and both factors are in
    // the file: D is written only where a tensor makes it more than their product.
    if problem.tensor.iter().any(Option::is_some) {
        cells.insert(2, CellArray { name: "D_centroid_C_per_m2", components: 3, values: &d_vec });
    }
    write_atomic(&out.join("fields.vtu"), |w| {
        let mut w = w;
        mesher::write_vtu(
            mesh,
            &[
                NodeArray { name: "potential_V", components: 1, values: potential },
                NodeArray { name: "E_recovered_V_per_m", components: 3, values: &e_nodal },
            ],
            &cells,
            encoding,
            &mut w,
        )
    })?;
    for (file, text) in analysis.probe_files.iter().chain(extra) {
        write_atomic(&out.join(file), |w| w.write_all(text.as_bytes()))?;
    }
    Ok(())
}

/// The summary printed by `solve`.
pub fn render_text(r: &Results, unit_m: f64, unit: &str) -> String {
    use std::fmt::Write;
    let mut s = String::new();
    let depth = if r.per_metre_depth { "/m" } else { "" };
    let _ = writeln!(
        s,
        "model        {}\nsymmetry     {}\nmesh         {} nodes, {} triangles, order {}, {} unknowns",
        r.mesh.model, r.mesh.symmetry, r.mesh.nodes, r.mesh.triangles, r.mesh.order, r.unknowns
    );
    let _ = writeln!(s, "energy       {:.6e} J{depth}", r.energy_j);
    let _ = writeln!(s, "\nconductors");
    for c in &r.conductors {
        let _ = writeln!(
            s,
            "  {:<20} {:>14.6e} V {:>14.6e} C{depth}{}",
            c.name,
            c.potential_v,
            c.charge_c,
            if c.floating { "  (floating)" } else { "" }
        );
    }
    if !r.capacitance_matrix_f.conductors.is_empty() {
        let _ = writeln!(s, "\ncapacitance matrix (F{depth})");
        let _ = write!(s, "  {:<20}", "");
        for n in &r.capacitance_matrix_f.conductors {
            let _ = write!(s, " {n:>14}");
        }
        let _ = writeln!(s);
        for (n, row) in r.capacitance_matrix_f.conductors.iter().zip(&r.capacitance_matrix_f.values) {
            let _ = write!(s, "  {n:<20}");
            for v in row {
                let _ = write!(s, " {v:>14.6e}");
            }
            let _ = writeln!(s);
        }
    }
    let _ = writeln!(s, "\npeak field per region (recovered vertex values within the region)");
    let _ = writeln!(
        s,
        "  {:<20} {:<10} {:>12} {:>11} {:>22} {:>10} {:>8}  note",
        "region",
        "material",
        "E max kV/mm",
        "",
        format!("at ({unit})"),
        "allowable",
        "util."
    );
    for g in &r.regions {
        let at = format!("({:.4}, {:.4})", g.at_m[0] / unit_m, g.at_m[1] / unit_m);
        let allow = g.allowable_kv_per_mm.map(|a| format!("{a}")).unwrap_or_else(|| "-".into());
        let util = g.utilisation.map(|u| format!("{u:.3}")).unwrap_or_else(|| "-".into());
        let note = match (&g.near_singular_point, &g.status) {
            (Some(sp), Some(st)) => format!("at singular point {sp}: {st}"),
            (Some(sp), None) => format!("at singular point {sp}: singular — mesh-dependent"),
            (None, Some(st)) => st.clone(),
            (None, None) => String::new(),
        };
        let bar = match g.error_bar_v_per_m {
            Some(b) => format!("± {:.2e}", b / 1e6),
            None => String::new(),
        };
        let _ = writeln!(
            s,
            "  {:<20} {:<10} {:>12.4} {:>11} {:>22} {:>10} {:>8}  {note}",
            g.name, g.material, g.e_max_kv_per_mm, bar, at, allow, util
        );
    }
    if !r.probes.is_empty() {
        let _ = writeln!(s, "\nprobes");
        for p in &r.probes {
            let et = p.e_t_max_v_per_m.map(|v| format!(", max |Et| {:.4} kV/mm", v / 1e6)).unwrap_or_default();
            let _ = writeln!(
                s,
                "  {:<20} {:<17} {:>6} samples, max |E| {:.4} kV/mm{et} -> {}",
                p.name,
                p.kind,
                p.samples,
                p.e_max_v_per_m / 1e6,
                p.file
            );
        }
    }
    if !r.points.is_empty() {
        let _ = writeln!(s, "\npoints (model potentials; E in kV/mm)");
        let _ = writeln!(
            s,
            "  {:<16} {:<20} {:>14} {:>10} {:>12} {:>10}  at ({unit})",
            "point", "region", "V", "± V", "|E| kV/mm", "± kV/mm"
        );
        for p in &r.points {
            let at = format!("({:.4}, {:.4})", p.at_m[0] / unit_m, p.at_m[1] / unit_m);
            if p.sides.is_empty() {
                let _ = writeln!(s, "  {:<16} {:<20} {:>14} {:>10} {:>12} {:>10}  {at}", p.name, "-", "-", "", "-", "");
            }
            for side in &p.sides {
                let bar = |b: Option<f64>, k: f64| b.map(|x| format!("± {:.2e}", x / k)).unwrap_or_default();
                let _ = writeln!(
                    s,
                    "  {:<16} {:<20} {:>14.6e} {:>10} {:>12.5} {:>10}  {at}",
                    p.name,
                    side.region,
                    side.potential_v,
                    bar(side.potential_error_bar_v, 1.0),
                    side.e_abs_v_per_m / 1e6,
                    bar(side.e_error_bar_v_per_m, 1e6)
                );
            }
            if let Some(n) = &p.note {
                let _ = writeln!(s, "    {}: {n}", p.name);
            }
        }
    }
    for w in &r.mesh.warnings {
        let _ = writeln!(s, "\nwarning: {w}");
    }
    if let Some(c) = &r.checks {
        s.push_str(&crate::results::checks::render_checks(c, r.per_metre_depth, unit_m, unit));
    }
    let _ = writeln!(s, "\ncautions");
    for c in &r.cautions {
        let _ = writeln!(s, "  - {c}");
    }
    s
}
