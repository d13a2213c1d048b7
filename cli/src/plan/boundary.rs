//! `[boundary]`: the outer boundary (an electrode, a symmetry line, or open to infinity), its
//! pieces with conditions of their own (`[[boundary.piece]]`), and the check that some
//! potential is fixed.

use super::diag::ModelError;
use super::raw::RawModel;
use super::{BoundaryPieceSpec, Conductor, ConductorKind, Ctx};
use engine::{BoundaryStretch, StretchCondition};
use mesher::{Curve, OuterBoundary, Outline};

/// `[boundary]` and the potential reference: the outer boundary's kind and potential, and
/// at least one fixed potential somewhere.
pub(super) fn boundary(
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
                let x = cx.potential(v, "boundary.potential_v".into())?;
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
    let held_piece =
        raw.boundary.as_ref().is_some_and(|b| b.get_ref().piece.iter().any(|p| p.get_ref().zero_flux.is_none()));
    let fixed = conductors.iter().any(|c| matches!(c.kind, ConductorKind::Fixed { .. }));
    if !fixed && !held_piece && outer == OuterBoundary::ZeroFlux {
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

/// `[[boundary.piece]]`: each a straight stretch (`along`) or an arc (`arc`) lying on the
/// domain's outline (`domain`, metres), with exactly one condition: `potential_v`,
/// `zero_flux = true`, `potential_from_v` with `potential_to_v` (linear along it), or
/// `potential_table` ([arc length in the model unit, V] pairs, ascending).
pub(super) fn pieces(
    cx: &Ctx<'_>,
    raw: &RawModel,
    domain: Option<&Outline>,
    outer: OuterBoundary,
    conductors: &[Conductor],
) -> Result<Vec<BoundaryPieceSpec>, ModelError> {
    let Some(b) = &raw.boundary else { return Ok(Vec::new()) };
    let mut out: Vec<BoundaryPieceSpec> = Vec::new();
    for (i, p) in b.get_ref().piece.iter().enumerate() {
        let whole = p.span();
        let p = p.get_ref();
        let key = |k: &str| format!("boundary.piece[{i}].{k}");
        let name = p.name.get_ref().trim().to_string();
        if name.is_empty() {
            return Err(cx.err(p.name.span(), "a boundary piece needs a name".into()).key(key("name")));
        }
        if out.iter().any(|q| q.name == name) {
            return Err(cx
                .err(p.name.span(), format!("boundary piece '{name}' is defined twice"))
                .key(key("name"))
                .help("give each piece its own name"));
        }
        let Some(domain) = domain else {
            return Err(cx
                .err(whole, "boundary pieces need drawn shapes; an imported mesh names its boundary by tags".into())
                .key(key("name"))
                .help("tag the boundary lines in the file and map them in [[import.boundary]]"));
        };
        if outer == OuterBoundary::Open {
            return Err(cx
                .err(
                    whole,
                    "an open boundary has no pieces: it is the circle around the model, at 0 V at infinity".into(),
                )
                .key(key("name"))
                .help(
                    "use outer = \"potential\" or \"zero_flux\" to give pieces of the boundary their own conditions",
                ));
        }
        let curve = match (&p.along, &p.arc) {
            (Some(a), None) => {
                let [p0, p1] = a.get_ref();
                let from = cx.finite_xy(p0, key("along[0]"))?;
                let to = cx.finite_xy(p1, key("along[1]"))?;
                if from == to {
                    return Err(cx.err(a.span(), "the piece starts and ends at the same point".into()).key(key("along")));
                }
                Curve::Line { from, to }
            }
            (None, Some(a)) => arc_curve(cx, a.get_ref(), &key)?,
            _ => {
                return Err(cx
                    .err(whole, format!("boundary piece '{name}' needs exactly one of along or arc"))
                    .key(key("along"))
                    .help("along = [[x0, y0], [x1, y1]] for a straight stretch, arc = { center, radius, from_deg, to_deg } for an arc"))
            }
        };
        // On the domain's outline: both ends and points between them.
        let tol = 1e-9 * domain.bbox().iter().fold(0.0f64, |m, v| m.max(v.abs())).max(cx.unit_m);
        for k in 0..=8 {
            let q = curve.point_at(k as f64 / 8.0);
            let d = domain.curves().iter().map(|c| c.distance(q).0).fold(f64::INFINITY, f64::min);
            if d > tol {
                return Err(cx
                    .err(
                        p.along.as_ref().map_or_else(|| p.arc.as_ref().map_or(whole.clone(), |a| a.span()), |a| a.span()),
                        format!(
                            "boundary piece '{name}' leaves the domain's outline: its point ({}, {}) is {} away from it",
                            q[0] / cx.unit_m,
                            q[1] / cx.unit_m,
                            d / cx.unit_m
                        ),
                    )
                    .key(key("along"))
                    .help("a piece is a stretch of the first shape's outline: give points on it (a straight side between two of its points, or an arc of one of its arcs)"));
            }
        }
        let length = curve.length();
        let conditions = [
            p.potential_v.is_some(),
            p.zero_flux.is_some(),
            p.potential_from_v.is_some() || p.potential_to_v.is_some(),
            p.potential_table.is_some(),
            p.conductor.is_some(),
        ]
        .iter()
        .filter(|b| **b)
        .count();
        if conditions != 1 {
            return Err(cx
                .err(whole, format!("boundary piece '{name}' needs exactly one condition (it has {conditions})"))
                .key(key("potential_v"))
                .help("potential_v = <V>, zero_flux = true, potential_from_v and potential_to_v (linear along it), potential_table = [[s, V], ...], or conductor = \"<name>\""));
        }
        let condition = if let Some(c) = &p.conductor {
            let names = conductors.iter().map(|k| k.name.as_str());
            let k = cx.named(names, c, "conductor", &format!("boundary piece '{name}'"), key("conductor"))?;
            StretchCondition::Conductor(k as u32)
        } else if let Some(v) = &p.potential_v {
            StretchCondition::Potential(vec![(0.0, cx.potential(v, key("potential_v"))?)])
        } else if let Some(z) = &p.zero_flux {
            if !*z.get_ref() {
                return Err(cx
                    .err(z.span(), "zero_flux = false gives no condition".into())
                    .key(key("zero_flux"))
                    .help("leave the piece out for the outer boundary's own condition, or give it a potential"));
            }
            StretchCondition::ZeroFlux
        } else if let Some(t) = &p.potential_table {
            let mut table: Vec<(f64, f64)> = Vec::new();
            for (k, e) in t.get_ref().iter().enumerate() {
                let [sv, v] = *e.get_ref();
                let s = sv * cx.unit_m;
                if !(sv.is_finite() && s >= -1e-12 * length && s <= length * (1.0 + 1e-12)) {
                    return Err(cx
                        .err(e.span(), format!("arc length {sv} is outside the piece (0 to {})", length / cx.unit_m))
                        .key(key(&format!("potential_table[{k}]"))));
                }
                if table.last().is_some_and(|l| s <= l.0) {
                    return Err(cx
                        .err(e.span(), "the table's arc lengths must increase".into())
                        .key(key(&format!("potential_table[{k}]"))));
                }
                if !(v.is_finite() && v.abs() <= super::MAX_POTENTIAL_V) {
                    return Err(cx
                        .err(e.span(), format!("the potential {v} is not a finite number of volts in range"))
                        .key(key(&format!("potential_table[{k}]"))));
                }
                table.push((s, v));
            }
            if table.len() < 2 {
                return Err(cx
                    .err(t.span(), "a potential table needs at least two rows".into())
                    .key(key("potential_table"))
                    .help("use potential_v for a constant potential"));
            }
            StretchCondition::Potential(table)
        } else {
            let (Some(a), Some(b)) = (&p.potential_from_v, &p.potential_to_v) else {
                return Err(cx
                    .err(whole, "a linear potential needs both potential_from_v and potential_to_v".into())
                    .key(key("potential_from_v")));
            };
            StretchCondition::Potential(vec![
                (0.0, cx.potential(a, key("potential_from_v"))?),
                (length, cx.potential(b, key("potential_to_v"))?),
            ])
        };
        // Pieces may meet at their ends but not overlap: an edge would have two conditions.
        if let Some(other) = out.iter().find(|q| {
            let on = |a: &Curve, b: &Curve| [0.25, 0.5, 0.75].iter().any(|&t| a.distance(b.point_at(t)).0 <= tol);
            on(&q.stretch.curve, &curve) || on(&curve, &q.stretch.curve)
        }) {
            return Err(cx
                .err(p.name.span(), format!("boundary piece '{name}' overlaps piece '{}'", other.name))
                .key(key("along"))
                .help("pieces may meet end to end; split the boundary so that each stretch has one condition"));
        }
        out.push(BoundaryPieceSpec { name, stretch: BoundaryStretch { curve, condition } });
    }
    Ok(out)
}

/// An arc given as `{ center, radius, from_deg, to_deg }` (model units, degrees from +x,
/// counter-clockwise when to_deg > from_deg), in metres; `key` names its fields.
pub(super) fn arc_curve(
    cx: &Ctx<'_>,
    a: &super::raw::RawArcPiece,
    key: &dyn Fn(&str) -> String,
) -> Result<Curve, ModelError> {
    let center = cx.finite_xy(&a.center, key("arc.center"))?;
    let radius = cx.positive(&a.radius, key("arc.radius"), "the radius")? * cx.unit_m;
    let (d0, d1) = (*a.from_deg.get_ref(), *a.to_deg.get_ref());
    let sweep = d1 - d0;
    if !(d0.is_finite() && d1.is_finite() && sweep.abs() > 0.0 && sweep.abs() < 360.0) {
        return Err(cx
            .err(a.to_deg.span(), format!("the arc must sweep between 0° and 360° (it sweeps {sweep}°)"))
            .key(key("arc.to_deg"))
            .help("angles in degrees from +x; to_deg > from_deg runs counter-clockwise"));
    }
    Ok(Curve::Arc { center, radius, start: d0.to_radians(), sweep: sweep.to_radians() })
}
