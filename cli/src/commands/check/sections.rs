//! The parts of `check`'s results built from the loop's history: each quantity's
//! convergence study with its error bar, the region peaks' bars and statuses, and the
//! singular-point section on the final mesh.

use crate::plan::Plan;
use crate::results::check::{
    field_with_bar, length_text, status_word, BarReport, QuantityStudy, SequencePoint, SingularResult,
};
use crate::results::solve::RegionResult;
use engine::{
    grid_convergence, singular_coefficient, singular_coefficient_dual, singular_field_factor, singular_radius_above,
    ConvergenceKind, Solution,
};
use mesher::{Mesh, Xy};

/// Each region's peak gets the bar of the watched peak away from singular points where it
/// is that peak; a region whose peak sits at a singular point says so, with the peak away
/// from it.
pub(super) fn annotate_regions(regions: &mut [RegionResult], convergence: &[QuantityStudy]) {
    for g in regions {
        let name = format!("peak field in {} away from singular points", g.name);
        let watched = convergence.iter().find(|q| q.quantity == name);
        if g.near_singular_point.is_some() {
            g.status = Some(match watched {
                Some(q) => format!(
                    "singular — mesh-dependent; away from singular points {} ({})",
                    field_with_bar(&q.error_bar),
                    q.error_bar.status
                ),
                None => "singular — mesh-dependent".into(),
            });
            continue;
        }
        if let Some(q) = watched {
            let same = (q.error_bar.value - g.e_max_v_per_m).abs() <= 1e-9 * g.e_max_v_per_m.abs();
            if same {
                g.error_bar_v_per_m = q.error_bar.absolute;
                g.status = Some(q.error_bar.status.to_string());
            } else {
                g.status = Some(format!("the peak away from singular points is {}", field_with_bar(&q.error_bar)));
            }
        }
    }
}

/// The bars and verdicts of the named points' potentials and fields, from their studies;
/// a point inside a disc around a singular point (`discs`) has a mesh-dependent field.
pub(super) fn annotate_points(
    points: &mut [crate::results::solve::PointResult],
    convergence: &[QuantityStudy],
    discs: &[(mesher::Xy, f64)],
) {
    for p in points {
        let singular = engine::in_exclusion_disc(discs, p.at_m);
        let n = p.sides.len();
        for s in &mut p.sides {
            let (v, e) = super::watch::point_quantity_names(&p.name, &s.region, n);
            if let Some(q) = convergence.iter().find(|q| q.quantity == v) {
                s.potential_error_bar_v = q.error_bar.absolute;
                s.potential_status = Some(q.error_bar.status.to_string());
            }
            if let Some(q) = convergence.iter().find(|q| q.quantity == e) {
                s.e_error_bar_v_per_m = q.error_bar.absolute;
                s.e_status =
                    Some(if singular { "singular — mesh-dependent".into() } else { q.error_bar.status.to_string() });
            }
        }
    }
}

/// The convergence study of one sequence, with the error bar at each mesh and at the end.
pub(super) fn study(
    quantity: String,
    unit: &'static str,
    seq: &[(usize, f64)],
    per_mesh: &[(&engine::ErrorBar, Option<f64>)],
    last: &engine::ErrorBar,
    tolerance: f64,
) -> QuantityStudy {
    let increasing = |w: &[(usize, f64)]| w.windows(2).all(|p| p[1].0 > p[0].0);
    let sequence: Vec<SequencePoint> = seq
        .iter()
        .enumerate()
        .map(|(k, &(n, v))| {
            let relative_change = (k > 0).then(|| {
                let prev = seq[k - 1].1;
                if v != 0.0 {
                    ((v - prev) / v).abs()
                } else {
                    (v - prev).abs()
                }
            });
            let observed_order = (k >= 2 && increasing(&seq[k - 2..=k]))
                .then(|| grid_convergence(&seq[k - 2..=k]).observed_order)
                .filter(|p| p.is_finite());
            let (bar, own) = per_mesh[k];
            SequencePoint {
                unknowns: n,
                value: v,
                relative_change,
                observed_order,
                own_estimate: own,
                error_bar: bar.absolute.is_finite().then_some(bar.absolute),
                status: status_word(bar.status),
            }
        })
        .collect();
    let error_bar = BarReport::of(last);
    // The verdict on the sequence is the engine's (one reading of the tolerance).
    let v = engine::sequence_verdict(seq, tolerance);
    let st = v.study.as_ref();
    QuantityStudy {
        quantity,
        unit,
        sequence,
        behaviour: v.behaviour.word(),
        observed_order: st.map(|s| s.observed_order).filter(|p| p.is_finite()),
        extrapolated: st.filter(|s| s.kind == ConvergenceKind::Monotone).map(|s| s.extrapolated),
        gci: st.map(|s| s.gci_fine).filter(|g| g.is_finite()),
        flagged: v.flagged.then(|| {
            "the changes grow under refinement (negative observed order): a sign of a singularity; this value has no converged limit".to_string()
        }),
        error_bar,
    }
}

/// The singular-point section on the final mesh.
pub(super) fn singular_section(model: &Plan, mesh: &Mesh, sol: &Solution, discs: &[(Xy, f64)]) -> Vec<SingularResult> {
    let k = model.unit_m;
    mesh.singular_points
        .iter()
        .enumerate()
        .map(|(i, s)| {
            let id = format!("S{}", i + 1);
            let allowable = s
                .regions
                .iter()
                .filter_map(|&r| model.shape_material.get(r as usize).copied().flatten())
                .filter_map(|m| model.materials[m].allowable_stress_kv_per_mm)
                .reduce(f64::min);
            let radius = discs.iter().find(|d| d.0 == s.at).map(|d| d.1);
            let v0 = s.conductor.map(|c| sol.conductor_potentials[c as usize]);
            let (dual, ring) = match (radius, v0, s.is_field_singular()) {
                (Some(r), Some(v0), true) => (
                    singular_coefficient_dual(mesh, sol, s, v0, r),
                    singular_coefficient(mesh, sol, s, v0, 0.5 * r).map(|f| f.coefficient),
                ),
                _ => (None, None),
            };
            let factor = singular_field_factor(s);
            let radius_above = match (dual, allowable, factor) {
                (Some(c), Some(a), Some(f)) if c != 0.0 => Some(singular_radius_above(s.lambda, f, c, a * 1e6) / k),
                _ => None,
            };
            let note = if !s.is_field_singular() {
                format!("λ = {:.4} ≥ 1: the field is bounded here", s.lambda)
            } else {
                let mut n = format!(
                    "singular: λ = {:.4}, |E| ≈ {}·r^({:.4}); the peak field here is mesh-dependent and left out of the convergence criterion",
                    s.lambda,
                    match (dual, factor) {
                        (Some(c), Some(f)) => format!("{:.4e}", f * c.abs()),
                        _ => "k·|A|".into(),
                    },
                    s.lambda - 1.0
                );
                if let Some(r) = radius_above {
                    // Below a nanometre a length means nothing physical: say so, as the
                    // breakdown checks do.
                    let within = if r * k < 1e-9 {
                        "less than 1 nm of the point, below any real edge radius".to_string()
                    } else {
                        format!("{} of the point", length_text(r * k, model.unit_m, model.unit))
                    };
                    n.push_str(&format!("; |E| exceeds the allowable {} kV/mm within {within}", allowable.unwrap_or(0.0)));
                }
                if dual.is_none() {
                    n.push_str("; coefficient not extracted (it is, where a conductor bounds the field: corners, triple junctions, conical tips on the axis with one dielectric)");
                }
                n.push_str("; model the real edge radius to get a design value");
                n
            };
            SingularResult {
                id,
                at: [s.at[0] / k, s.at[1] / k],
                kind: s.kind.label(),
                lambda: s.lambda,
                field_singular: s.is_field_singular(),
                coefficient: dual,
                field_factor: factor.filter(|_| dual.is_some()),
                coefficient_ring_fit: ring,
                extraction_radius_m: radius.filter(|_| dual.is_some()),
                allowable_kv_per_mm: allowable,
                radius_above_allowable: radius_above,
                note,
                coefficient_error_bar: None,
            }
        })
        .collect()
}
