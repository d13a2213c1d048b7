//! `[[shape]]`: each shape's outline (rectangle with its fillets, circle, polygon, or a path
//! of lines and arcs), its material or conductor, its size and its charge density, checked
//! and converted to metres.

use super::diag::ModelError;
use super::raw::RawModel;
use super::{Conductor, Ctx, Material, LIMIT_HELP, MAX_CHARGE_DENSITY};
use mesher::{Curve, Fill, MeshError, Outline, Shape};
use std::ops::Range;

/// `[[shape]]`: names unique, one outline each (rectangle, circle, polygon or path) inside
/// the coordinate range, a material or a conductor that exists, sizes and charge densities
/// in range. Returns the shapes, each one's material, charge density and span.
#[allow(clippy::type_complexity)]
pub(super) fn shapes(
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
                let names = materials.iter().map(|x| x.name.as_str());
                let k = cx.named(names, m, "material", &format!("shape '{sname}'"), key("material"))?;
                (Fill::Dielectric { permittivity: materials[k].permittivity }, Some(k))
            }
            (None, Some(c)) => {
                let names = conductors.iter().map(|x| x.name.as_str());
                let k = cx.named(names, c, "conductor", &format!("shape '{sname}'"), key("conductor"))?;
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
        let kinds = [
            sh.rectangle.is_some(),
            sh.circle.is_some(),
            sh.polygon.is_some(),
            sh.path.is_some(),
            sh.sector.is_some(),
            sh.half_disc.is_some(),
        ]
        .iter()
        .filter(|b| **b)
        .count();
        if kinds != 1 {
            return Err(cx
                .err(
                    whole,
                    format!(
                        "shape '{sname}' must have exactly one of rectangle, circle, polygon, path, sector or half_disc \
                         (it has {kinds})"
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
        } else if let Some(sec) = &sh.sector {
            sector(cx, sec, &sname, &key, unit)?
        } else if let Some(hd) = &sh.half_disc {
            let h = hd.get_ref();
            let center = cx.finite_xy(&h.center, key("half_disc.center"))?;
            let rad = cx.positive(&h.radius, key("half_disc.radius"), "the radius")? * unit_m;
            // The flat side through the centre; the round side faces `side`.
            let facing = match h.side.as_ref().map(|t| t.get_ref().as_str()) {
                None | Some("+x") => 0.0,
                Some("+y") => 90.0,
                Some("-x") => 180.0,
                Some("-y") => 270.0,
                Some(o) => {
                    return Err(cx
                        .err(h.side.as_ref().map_or(hd.span(), |t| t.span()), format!("unknown side '{o}'"))
                        .key(key("half_disc.side"))
                        .help("use \"+x\" (the default: the half towards larger x, the axisymmetric half), \"-x\", \"+y\" or \"-y\""))
                }
            };
            sector_outline(&sname, center, rad, 0.0, facing - 90.0, 180.0).map_err(|e| me(e, hd.span()))?
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

/// `sector = { center, radius, from_deg, to_deg, inner_radius }`: the circular sector (or,
/// with an inner radius, the annulus sector) swept counter-clockwise from `from_deg` to
/// `to_deg`, in metres.
fn sector(
    cx: &Ctx<'_>,
    sec: &toml::Spanned<super::raw::RawSector>,
    sname: &str,
    key: &dyn Fn(&str) -> String,
    unit: &'static str,
) -> Result<Outline, ModelError> {
    let s = sec.get_ref();
    let center = cx.finite_xy(&s.center, key("sector.center"))?;
    let outer = cx.positive(&s.radius, key("sector.radius"), "the radius")?;
    let inner = match &s.inner_radius {
        None => 0.0,
        Some(r) => {
            let v = *r.get_ref();
            if !(v.is_finite() && v >= 0.0 && v < outer) {
                return Err(cx
                    .err(r.span(), format!("the inner radius {v} must be at least 0 and less than the radius {outer}"))
                    .key(key("sector.inner_radius")));
            }
            v
        }
    };
    let (a0, a1) = (*s.from_deg.get_ref(), *s.to_deg.get_ref());
    for (v, span, k) in [(a0, s.from_deg.span(), "sector.from_deg"), (a1, s.to_deg.span(), "sector.to_deg")] {
        if !(v.is_finite() && v.abs() <= 720.0) {
            return Err(cx
                .err(span, format!("the angle must be a finite number of degrees within ±720, not {v}"))
                .key(key(k)));
        }
    }
    let sweep = a1 - a0;
    if !(sweep > 0.0 && sweep < 360.0) {
        return Err(cx
            .err(
                s.to_deg.span(),
                format!("the sector sweeps {sweep}° from from_deg = {a0} to to_deg = {a1}: it must sweep more than 0° and less than 360°"),
            )
            .key(key("sector.to_deg"))
            .help("angles run counter-clockwise from +x; for a whole disc or ring use circles (a ring is a circle painted over by a smaller one)"));
    }
    sector_outline(sname, center, outer * cx.unit_m, inner * cx.unit_m, a0, sweep)
        .map_err(|e| cx.err(sec.span(), e.message_in(cx.unit_m, unit)))
}

/// The outline of the sector of radius `outer` (metres) about `center` from `from_deg`
/// sweeping `sweep_deg` counter-clockwise, without the disc of radius `inner` (0 for none).
fn sector_outline(
    shape: &str,
    center: mesher::Xy,
    outer: f64,
    inner: f64,
    from_deg: f64,
    sweep_deg: f64,
) -> Result<Outline, MeshError> {
    let (a0, sweep) = (from_deg.to_radians(), sweep_deg.to_radians());
    let at = |r: f64, a: f64| [center[0] + r * a.cos(), center[1] + r * a.sin()];
    let outer_arc = Curve::Arc { center, radius: outer, start: a0, sweep };
    let curves = if inner > 0.0 {
        vec![
            Curve::Line { from: at(inner, a0), to: at(outer, a0) },
            outer_arc,
            Curve::Line { from: at(outer, a0 + sweep), to: at(inner, a0 + sweep) },
            Curve::Arc { center, radius: inner, start: a0 + sweep, sweep: -sweep },
        ]
    } else {
        vec![
            Curve::Line { from: center, to: at(outer, a0) },
            outer_arc,
            Curve::Line { from: at(outer, a0 + sweep), to: center },
        ]
    };
    Outline::new(shape, curves)
}
