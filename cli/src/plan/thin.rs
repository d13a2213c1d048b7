//! `[[thin_electrode]]`: conductors of zero thickness (grading foils, plates seen edge-on),
//! a polyline (`along`) or an arc (`arc`) inside the domain, part of a conductor's surface
//! with the field on both faces.

use super::boundary::arc_curve;
use super::diag::ModelError;
use super::raw::RawModel;
use super::{Conductor, Ctx};
use mesher::{Curve, ThinElectrode};
use std::ops::Range;

/// The thin electrodes, in metres, with the span of each one's name (for the mesher's
/// errors about it).
pub(super) fn thin_electrodes(
    cx: &Ctx<'_>,
    raw: &RawModel,
    conductors: &[Conductor],
    imported: bool,
) -> Result<(Vec<ThinElectrode>, Vec<Range<usize>>), ModelError> {
    let mut out: Vec<ThinElectrode> = Vec::new();
    let mut spans = Vec::new();
    for (i, t) in raw.thin_electrode.iter().enumerate() {
        let whole = t.span();
        let t = t.get_ref();
        let key = |k: &str| format!("thin_electrode[{i}].{k}");
        let name = t.name.get_ref().trim().to_string();
        if name.is_empty() {
            return Err(cx.err(t.name.span(), "a thin electrode needs a name".into()).key(key("name")));
        }
        let clash = out.iter().any(|o| o.name == name) || raw.shape.iter().any(|s| s.get_ref().name.get_ref() == &name);
        if clash {
            return Err(cx
                .err(t.name.span(), format!("the name '{name}' is used twice (thin electrodes and shapes)"))
                .key(key("name"))
                .help("give each shape and thin electrode its own name"));
        }
        if imported {
            return Err(cx
                .err(whole, "thin electrodes need drawn shapes; an imported mesh brings its own conductors".into())
                .key(key("name")));
        }
        let names = conductors.iter().map(|k| k.name.as_str());
        let conductor =
            cx.named(names, &t.conductor, "conductor", &format!("thin electrode '{name}'"), key("conductor"))? as u32;
        let curves = match (&t.along, &t.arc) {
            (Some(a), None) => {
                let pts = a.get_ref();
                if pts.len() < 2 {
                    return Err(cx
                        .err(a.span(), format!("thin electrode '{name}' needs at least two points"))
                        .key(key("along"))
                        .help("along = [[x0, y0], [x1, y1], ...]: a polyline"));
                }
                let mut xy = Vec::with_capacity(pts.len());
                for (k, p) in pts.iter().enumerate() {
                    xy.push(cx.finite_xy(p, key(&format!("along[{k}]")))?);
                }
                let mut curves = Vec::new();
                for (k, w) in xy.windows(2).enumerate() {
                    if w[0] == w[1] {
                        return Err(cx
                            .err(pts[k + 1].span(), "this point repeats the one before it".into())
                            .key(key(&format!("along[{}]", k + 1))));
                    }
                    curves.push(Curve::Line { from: w[0], to: w[1] });
                }
                curves
            }
            (None, Some(a)) => vec![arc_curve(cx, a.get_ref(), &key)?],
            _ => {
                return Err(cx
                    .err(whole, format!("thin electrode '{name}' needs exactly one of along or arc"))
                    .key(key("along"))
                    .help("along = [[x0, y0], [x1, y1], ...] for a polyline, arc = { center, radius, from_deg, to_deg } for an arc"))
            }
        };
        out.push(ThinElectrode { name, curves, conductor });
        spans.push(t.name.span());
    }
    Ok((out, spans))
}
