//! `[mesh]` and `[[mesh.point]]`: the element order, sizes, grading and the node limit.

use super::diag::ModelError;
use super::raw::RawModel;
use super::{round4, Ctx};
use mesher::{RefineParams, Shape, SizePoint};
use toml::Spanned as S;

/// `[mesh]` and its `[[mesh.point]]`s: every control in range, min_size below max_size,
/// points inside the domain.
pub(super) fn mesh_controls(
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
