//! The `mesh` stage's results: the mesh statistics, regions and singular points in the
//! model's unit, with their terminal text (JSON is their serde form). Shared by every
//! command, which all mesh first.

use crate::plan::{ConductorKind, Plan};
use engine::StretchCondition;
use mesher::{GradingStatus, MeshOutcome, Symmetry};
use serde::Serialize;

/// Statistics of a meshing run, in the model's length unit.
#[derive(Serialize, Debug)]
pub struct MeshReport {
    /// Model name.
    pub model: String,
    /// "planar" or "axisymmetric".
    pub symmetry: &'static str,
    /// Length unit of every length below.
    pub length_unit: &'static str,
    /// Element order.
    pub order: u8,
    /// Node count.
    pub nodes: usize,
    /// Triangle count.
    pub triangles: usize,
    /// Smallest interior angle, degrees.
    pub min_angle_deg: f64,
    /// Largest circumradius-to-shortest-edge ratio.
    pub max_radius_edge_ratio: f64,
    /// Shortest edge.
    pub edge_length_min: f64,
    /// Longest edge.
    pub edge_length_max: f64,
    /// Refinement finished within the node budget.
    pub refinement_complete: bool,
    /// Why not, if not.
    pub note: Option<String>,
    /// The outer boundary condition, in words.
    pub outer_boundary: String,
    /// The pieces of the outer boundary with their own conditions (`[[boundary.piece]]`).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub boundary_pieces: Vec<PieceReport>,
    /// Conductors and how their potential is set.
    pub conductors: Vec<ConductorReport>,
    /// The thin electrodes (`[[thin_electrode]]`): their conductor, length and edges.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub thin_electrodes: Vec<PieceReport>,
    /// Per region.
    pub regions: Vec<RegionReport>,
    /// Singular points.
    pub singular_points: Vec<SingularReport>,
    /// What the user should know about this mesh: singular points left ungraded and why.
    pub warnings: Vec<String>,
}

/// One piece of the outer boundary, or one thin electrode.
#[derive(Serialize, Debug)]
pub struct PieceReport {
    /// Name.
    pub name: String,
    /// Its condition, in words.
    pub condition: String,
    /// Its length, model unit.
    pub length: f64,
    /// Mesh edges on it.
    pub edges: usize,
}

/// One conductor.
#[derive(Serialize, Debug)]
pub struct ConductorReport {
    /// Name.
    pub name: String,
    /// Potential in volts for a fixed conductor.
    pub potential_v: Option<f64>,
    /// Net charge for a floating conductor (C, or C/m in planar models).
    pub floating_charge_c: Option<f64>,
}

/// One region's figures.
#[derive(Serialize, Debug)]
pub struct RegionReport {
    /// Region id: the `region` cell array of the VTU files.
    pub id: u32,
    /// The mapped open-boundary exterior (its coordinates are not physical; pictures skip it).
    pub exterior: bool,
    /// Shape name.
    pub name: String,
    /// Material name.
    pub material: String,
    /// Relative permittivity.
    pub permittivity: f64,
    /// Allowable design stress, kV/mm, if given.
    pub allowable_stress_kv_per_mm: Option<f64>,
    /// Triangle count.
    pub triangles: usize,
    /// Area in the model unit squared.
    pub area: f64,
}

/// One singular point.
#[derive(Serialize, Debug)]
pub struct SingularReport {
    /// x (r).
    pub x: f64,
    /// y (z).
    pub y: f64,
    /// Kind, in words.
    pub kind: &'static str,
    /// Opening angle of the dielectric wedge, degrees.
    pub opening_deg: f64,
    /// Exponent λ of the potential.
    pub lambda: f64,
    /// Exponent λ − 1 of the field.
    pub field_exponent: f64,
    /// True if the field itself is unbounded.
    pub field_singular: bool,
    /// Conductor at the point.
    pub conductor: Option<String>,
    /// Regions around the point.
    pub regions: Vec<String>,
    /// On the symmetry axis (a conical point: Legendre exponent with one dielectric, planar
    /// approximation where several meet).
    pub on_axis: bool,
    /// How the mesh is graded towards the point.
    pub grading: Option<GradingReport>,
}

/// The grading towards one singular point, lengths in the model unit.
#[derive(Serialize, Debug)]
pub struct GradingReport {
    /// "graded", "graded to min_size", "off", "node budget reached" or "not reached".
    pub status: &'static str,
    /// Radius R of the grading zone.
    pub radius: f64,
    /// Element size h₀ at the edge of the zone.
    pub outer_size: f64,
    /// Exponent μ: the size falls like r^(1−μ) towards the point.
    pub mu: f64,
    /// Size the law asks for at the point (innermost size, or min_size if larger).
    pub target_size: f64,
    /// Longest mesh edge ending at the point.
    pub achieved_size: f64,
}

/// Words for a grading verdict.
fn grading_status(s: GradingStatus) -> &'static str {
    match s {
        GradingStatus::Graded => "graded",
        GradingStatus::AtFloor => "graded to min_size",
        GradingStatus::Off => "off",
        GradingStatus::BudgetReached => "node budget reached",
        _ => "not reached",
    }
}

/// A warning for a singular point the mesh is not graded towards, if it is not.
fn grading_warning(label: &str, s: &mesher::SingularPoint, k: f64, unit: &str, max_nodes: usize) -> Option<String> {
    let g = s.grading?;
    let at = format!("{label} at ({}, {}) {unit}", sig(s.at[0] / k), sig(s.at[1] / k));
    let sizes = format!(
        "elements of {} {unit} at the point where the grading law asks for {} {unit}",
        sig(g.achieved_m / k),
        sig(g.target_m / k)
    );
    let why = match g.status {
        GradingStatus::Graded | GradingStatus::AtFloor => return None,
        GradingStatus::Off => "grading is turned off (`grade_corners = false` in [mesh]); remove that line to grade it".to_string(),
        GradingStatus::BudgetReached => format!(
            "the node budget (max_nodes = {max_nodes}) stopped the refinement first; raise `max_nodes` or coarsen `max_size` in [mesh]"
        ),
        _ => "the mesher did not follow its size field there (a defect: please report it with the model); a [[mesh.point]] with the asked size at the point forces it".to_string(),
    };
    Some(format!("{at} is left ungraded ({sizes}): {why}. The field near it is under-resolved and the figures that depend on it (peak stresses nearby, charges, energy) are less accurate than the mesh size suggests."))
}

/// Builds the report for a mesh of a model.
pub fn report(model: &Plan, out: &MeshOutcome) -> MeshReport {
    report_of(model, &out.mesh, out.complete, out.reason.clone())
}

/// The mesh report of any mesh of the model (`complete` and `note` as the mesher gave them).
pub fn report_of(model: &Plan, mesh: &mesher::Mesh, complete: bool, note: Option<String>) -> MeshReport {
    let st = mesh.stats();
    let k = model.unit_m;
    let regions = st
        .per_region
        .iter()
        .map(|&(r, n, a)| {
            // The open-boundary exterior is the mesh's extra last region, filled by the domain's
            // material.
            let m = model
                .shape_material
                .get(r as usize)
                .copied()
                .unwrap_or(model.shape_material[0])
                .map(|m| &model.materials[m]);
            RegionReport {
                id: r,
                exterior: mesh.exterior.is_some_and(|e| e.region == r),
                name: mesh.shape_names[r as usize].clone(),
                material: m.map(|m| m.name.clone()).unwrap_or_default(),
                permittivity: m.map(|m| m.permittivity).unwrap_or(f64::NAN),
                allowable_stress_kv_per_mm: m.and_then(|m| m.allowable_stress_kv_per_mm),
                triangles: n,
                area: a / (k * k),
            }
        })
        .collect();
    let singular_points = mesh
        .singular_points
        .iter()
        .map(|s| SingularReport {
            x: s.at[0] / k,
            y: s.at[1] / k,
            kind: s.kind.label(),
            opening_deg: s.opening.to_degrees(),
            lambda: s.lambda,
            field_exponent: s.lambda - 1.0,
            field_singular: s.is_field_singular(),
            conductor: s.conductor.map(|c| mesh.conductor_names[c as usize].clone()),
            regions: s.regions.iter().map(|&r| mesh.shape_names[r as usize].clone()).collect(),
            on_axis: s.on_axis,
            grading: s.grading.map(|g| GradingReport {
                status: grading_status(g.status),
                radius: g.radius_m / k,
                outer_size: g.outer_size_m / k,
                mu: g.mu,
                target_size: g.target_m / k,
                achieved_size: g.achieved_m / k,
            }),
        })
        .collect();
    let mut warnings: Vec<String> = mesh
        .singular_points
        .iter()
        .enumerate()
        .filter_map(|(i, s)| {
            grading_warning(&format!("singular point S{}", i + 1), s, k, model.unit, model.params.max_nodes)
        })
        .collect();
    warnings.extend(potential_jumps(model));
    // A dielectric shape that the shapes painted after it cover entirely has no elements:
    // it would vanish from the results without a word.
    for (i, shape) in model.geometry.shapes.iter().enumerate() {
        let meshed = st.per_region.iter().any(|&(r, n, _)| r as usize == i && n > 0);
        if model.shape_material.get(i).is_some_and(|m| m.is_some()) && !meshed {
            let covers: Vec<&str> = model.geometry.shapes[i + 1..]
                .iter()
                .filter(|o| {
                    shape.outline.curves().iter().all(|c| {
                        o.outline.contains(c.point_at(0.5))
                            || o.outline.distance(c.point_at(0.5)) <= 1e-9 * mesh.scale()
                    })
                })
                .map(|o| o.name.as_str())
                .collect();
            warnings.push(format!(
                "shape '{}' has no elements: the shapes painted after it{} cover it entirely, so it is not part of the results; remove it, or move it after them in the file",
                shape.name,
                if covers.is_empty() { String::new() } else { format!(" ({})", covers.join(", ")) }
            ));
        }
    }
    MeshReport {
        model: model.name.clone(),
        symmetry: match mesh.symmetry {
            Symmetry::Planar => "planar",
            Symmetry::Axisymmetric => "axisymmetric",
        },
        length_unit: model.unit,
        order: mesh.order(),
        nodes: st.num_nodes,
        triangles: st.num_triangles,
        min_angle_deg: st.min_angle_deg,
        max_radius_edge_ratio: st.max_radius_edge_ratio,
        edge_length_min: st.edge_length_range_m[0] / k,
        edge_length_max: st.edge_length_range_m[1] / k,
        refinement_complete: complete,
        note,
        outer_boundary: match (model.outer_potential_v, mesh.exterior) {
            (_, Some(_)) => "open (Kelvin-mapped exterior: the field decays at infinity)".into(),
            (Some(v), None) => format!("fixed potential {v} V"),
            (None, None) => "zero normal flux".into(),
        },
        boundary_pieces: model
            .boundary_pieces
            .iter()
            .map(|b| {
                let (curve, tol) = (&b.stretch.curve, 1e-9 * mesh.scale());
                let on = |v: u32| curve.distance(mesh.nodes[v as usize]).0 <= tol;
                let edges = mesh
                    .edges
                    .iter()
                    .filter(|e| e.tag == mesher::EdgeTag::Outer && on(e.nodes[0]) && on(e.nodes[1]))
                    .count();
                let condition = match &b.stretch.condition {
                    StretchCondition::Conductor(c) => {
                        format!("surface of conductor {}", model.conductors[*c as usize].name)
                    }
                    StretchCondition::ZeroFlux => "zero normal flux".into(),
                    StretchCondition::Potential(t) if t.len() == 1 => format!("fixed potential {} V", t[0].1),
                    StretchCondition::Potential(t) => format!(
                        "potential from {} V to {} V along it ({} points, linear between)",
                        t[0].1,
                        t[t.len() - 1].1,
                        t.len()
                    ),
                };
                PieceReport { name: b.name.clone(), condition, length: curve.length() / k, edges }
            })
            .collect(),
        thin_electrodes: model
            .geometry
            .thin
            .iter()
            .map(|t| {
                let tol = 1e-9 * mesh.scale();
                let on = |v: u32| t.curves.iter().any(|c| c.distance(mesh.nodes[v as usize]).0 <= tol);
                let edges = mesh
                    .edges
                    .iter()
                    .filter(|e| e.tag == mesher::EdgeTag::Conductor(t.conductor) && on(e.nodes[0]) && on(e.nodes[1]))
                    .count();
                PieceReport {
                    name: t.name.clone(),
                    condition: format!(
                        "conductor {}, field on both faces",
                        model.conductors[t.conductor as usize].name
                    ),
                    length: t.curves.iter().map(|c| c.length()).sum::<f64>() / k,
                    edges,
                }
            })
            .collect(),
        conductors: model
            .conductors
            .iter()
            .map(|c| match c.kind {
                ConductorKind::Fixed { potential_v } => {
                    ConductorReport { name: c.name.clone(), potential_v: Some(potential_v), floating_charge_c: None }
                }
                ConductorKind::Floating { charge_c } => {
                    ConductorReport { name: c.name.clone(), potential_v: None, floating_charge_c: Some(charge_c) }
                }
            })
            .collect(),
        regions,
        singular_points,
        warnings,
    }
}

/// The report as a text table.
pub fn render_text(r: &MeshReport) -> String {
    use std::fmt::Write;
    let u = r.length_unit;
    let mut s = String::new();
    let _ = writeln!(s, "model        {}", r.model);
    let _ = writeln!(s, "symmetry     {}", r.symmetry);
    let _ = writeln!(s, "order        {} ({})", r.order, if r.order == 1 { "linear" } else { "quadratic" });
    let _ = writeln!(s, "nodes        {}", r.nodes);
    let _ = writeln!(s, "triangles    {}", r.triangles);
    let _ = writeln!(s, "min angle    {:.1}°", r.min_angle_deg);
    let _ = writeln!(s, "radius/edge  {:.3} (worst circumradius to shortest edge)", r.max_radius_edge_ratio);
    let _ = writeln!(s, "edge length  {} … {} {u}", sig(r.edge_length_min), sig(r.edge_length_max));
    let _ = writeln!(
        s,
        "refinement   {}",
        if r.refinement_complete { "complete" } else { "INCOMPLETE (node budget reached)" }
    );
    if let Some(n) = &r.note {
        let _ = writeln!(s, "note         {n}");
    }
    let _ = writeln!(s, "outer        {}", r.outer_boundary);
    for p in &r.boundary_pieces {
        let _ = writeln!(s, "  piece      {}: {}, {} {u}, {} edges", p.name, p.condition, sig(p.length), p.edges);
    }
    let _ = writeln!(s, "\nconductors");
    for c in &r.conductors {
        let how = match (c.potential_v, c.floating_charge_c) {
            (Some(v), _) => format!("fixed at {v} V"),
            (None, Some(q)) => format!("floating, net charge {q} C"),
            _ => String::new(),
        };
        let _ = writeln!(s, "  {:<20} {how}", c.name);
    }
    for t in &r.thin_electrodes {
        let _ = writeln!(s, "  thin       {}: {}, {} {u}, {} edges", t.name, t.condition, sig(t.length), t.edges);
    }
    let _ = writeln!(s, "\nregions");
    let _ = writeln!(
        s,
        "  {:<20} {:<10} {:>6} {:>10} {:>10} {:>14}",
        "shape",
        "material",
        "εr",
        "E allow",
        "triangles",
        format!("area ({u}²)")
    );
    for g in &r.regions {
        let allow = g.allowable_stress_kv_per_mm.map(|a| format!("{a} kV/mm")).unwrap_or_else(|| "-".into());
        let _ = writeln!(
            s,
            "  {:<20} {:<10} {:>6} {:>10} {:>10} {:>14}",
            g.name,
            g.material,
            g.permittivity,
            allow,
            g.triangles,
            sig(g.area)
        );
    }
    let _ = writeln!(s, "\nsingular points ({})", r.singular_points.len());
    if r.singular_points.is_empty() {
        let _ = writeln!(s, "  none: no re-entrant conductor corner, triple junction or dielectric corner");
    } else {
        let _ = writeln!(
            s,
            "  {:<4} {:<18} {:>12} {:>12} {:>9} {:>8} {:>10}  at",
            "",
            "kind",
            format!("x ({u})"),
            format!("y ({u})"),
            "opening",
            "λ",
            "|E| ~ r^"
        );
        for (i, p) in r.singular_points.iter().enumerate() {
            let mut who = p.regions.join("/");
            if let Some(c) = &p.conductor {
                who = format!("{c} | {who}");
            }
            if p.on_axis {
                who.push_str(" (on axis: conical point)");
            }
            let _ = writeln!(
                s,
                "  S{:<3} {:<18} {:>12} {:>12} {:>8.1}° {:>8.4} {:>10.4}  {}",
                i + 1,
                p.kind,
                sig(p.x),
                sig(p.y),
                p.opening_deg,
                p.lambda,
                p.field_exponent,
                who
            );
        }
        let _ = writeln!(
            s,
            "\n  grading towards them: size h₀ at radius R, falling like r^(1−μ) to the size asked at the point"
        );
        let _ = writeln!(
            s,
            "  {:<4} {:>10} {:>10} {:>6} {:>12} {:>12}  verdict",
            "",
            format!("R ({u})"),
            format!("h₀ ({u})"),
            "μ",
            "asked",
            "at point"
        );
        for (i, p) in r.singular_points.iter().enumerate() {
            if let Some(g) = &p.grading {
                let _ = writeln!(
                    s,
                    "  S{:<3} {:>10} {:>10} {:>6.3} {:>12} {:>12}  {}",
                    i + 1,
                    sig(g.radius),
                    sig(g.outer_size),
                    g.mu,
                    sig(g.target_size),
                    sig(g.achieved_size),
                    g.status
                );
            }
        }
        if r.singular_points.iter().any(|p| p.field_singular) {
            let _ = writeln!(
                s,
                "  λ < 1: the field is infinite at the point and its computed peak grows as the mesh is refined;"
            );
            let _ = writeln!(
                s,
                "  the mesh is graded towards it. Model the real edge radius before quoting a peak stress there."
            );
        }
    }
    for w in &r.warnings {
        let _ = writeln!(s, "\nwarning: {w}");
    }
    s
}

/// Four significant digits, without scientific notation for everyday magnitudes.
pub fn sig(v: f64) -> String {
    if v == 0.0 {
        return "0".into();
    }
    let a = v.abs();
    if (1e-3..1e6).contains(&a) {
        let digits = (3 - a.log10().floor() as i32).max(0) as usize;
        format!("{v:.digits$}")
    } else {
        format!("{v:.3e}")
    }
}

/// A warning for each point where held boundary pieces of different potential meet (or a
/// held piece meets the held rest of the outer boundary at another potential): the field
/// there goes like 1/r and the stored energy diverges, so nothing near it converges.
fn potential_jumps(model: &Plan) -> Vec<String> {
    // (Pieces exist only on drawn models, whose geometry has shapes.)
    if model.boundary_pieces.is_empty() {
        return Vec::new();
    }
    let tol = 1e-9 * model.geometry.scale();
    let k = model.unit_m;
    // The potential at each end of a piece held at a given potential.
    let ends = |p: &crate::plan::BoundaryPieceSpec| -> Vec<(mesher::Xy, f64)> {
        let c = &p.stretch.curve;
        [c.from(), c.to()].into_iter().filter_map(|e| p.stretch.potential_at(e).map(|v| (e, v))).collect()
    };
    let same = |a: mesher::Xy, b: mesher::Xy| (a[0] - b[0]).hypot(a[1] - b[1]) <= tol;
    let mut out = Vec::new();
    let differ = |a: f64, b: f64| (a - b).abs() > 1e-9 * a.abs().max(b.abs()).max(1.0);
    let mut warn = |name: &str, va: f64, what: String, vb: f64, at: mesher::Xy| {
        out.push(format!(
            "boundary piece '{name}' at {va} V meets {what} at {vb} V at ({}, {}) {}: the potential jumps there, so the field goes like 1/r and the stored energy diverges; leave a zero-flux gap or a linear transition between them",
            at[0] / k,
            at[1] / k,
            model.unit
        ))
    };
    for (i, a) in model.boundary_pieces.iter().enumerate() {
        for (at, va) in ends(a) {
            // Other held pieces ending here (each pair once).
            for b in &model.boundary_pieces[i + 1..] {
                for (bt, vb) in ends(b) {
                    if same(bt, at) && differ(va, vb) {
                        warn(&a.name, va, format!("piece '{}'", b.name), vb, at);
                    }
                }
            }
            // No other piece ends here: the rest of the outer boundary continues it.
            let shared = model
                .boundary_pieces
                .iter()
                .enumerate()
                .any(|(j, b)| j != i && (same(b.stretch.curve.from(), at) || same(b.stretch.curve.to(), at)));
            if let (false, Some(v0)) = (shared, model.outer_potential_v) {
                if differ(va, v0) {
                    warn(&a.name, va, "the rest of the outer boundary".into(), v0, at);
                }
            }
        }
    }
    out
}
