//! `[[probe]]`: field probes along a path, along an interface between two shapes, or on a
//! conductor's surface; `[[point]]`: named points where V and E are reported.

use super::diag::ModelError;
use super::raw::RawModel;
use super::{Conductor, Ctx, NamedPoint, Probe, ProbeKind, RegionName};

/// `[[probe]]`: names usable in file names and unique, one kind each (path, interface or
/// conductor surface) naming shapes and conductors that exist.
pub(super) fn probes(
    cx: &Ctx<'_>,
    raw: &RawModel,
    regions: &[RegionName],
    conductors: &[Conductor],
) -> Result<Vec<Probe>, ModelError> {
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
                let s = regions.iter().position(|s| &s.name == *n).ok_or_else(|| {
                    cx.err(pair.span(), format!("probe '{name}' refers to shape '{n}', which does not exist"))
                        .key(key("interface"))
                })?;
                if regions[s].conductor {
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
        let allowable_tangential_kv_per_mm = match &p.allowable_tangential_kv_per_mm {
            Some(a) => {
                if let ProbeKind::Line { .. } = kind {
                    return Err(cx
                        .err(
                            a.span(),
                            "allowable_tangential_kv_per_mm applies to interface and surface probes only".into(),
                        )
                        .key(key("allowable_tangential_kv_per_mm"))
                        .help("a path probe has no tangent of its own: use an interface or conductor_surface probe"));
                }
                Some(cx.positive(a, key("allowable_tangential_kv_per_mm"), "the allowable tangential stress")?)
            }
            None => None,
        };
        probes.push(Probe {
            name,
            kind,
            allowable_tangential_kv_per_mm,
            // Checked against the load cases' names once those are read (`load_cases`).
            allowable_tangential_by_case: Vec::new(),
        });
    }
    Ok(probes)
}

/// `[[point]]`: names unique and non-empty, positions inside the coordinate range (and at
/// x ≥ 0 in an axisymmetric model, where x is the radius).
pub(super) fn points(cx: &Ctx<'_>, raw: &RawModel, axisymmetric: bool) -> Result<Vec<NamedPoint>, ModelError> {
    let mut points: Vec<NamedPoint> = Vec::new();
    for (i, p) in raw.point.iter().enumerate() {
        let p = p.get_ref();
        let key = |k: &str| format!("point[{i}].{k}");
        let name = p.name.get_ref().trim().to_string();
        if name.is_empty() {
            return Err(cx.err(p.name.span(), "a point needs a name".into()).key(key("name")));
        }
        if points.iter().any(|q| q.name == name) {
            return Err(cx
                .err(p.name.span(), format!("point '{name}' is defined twice"))
                .key(key("name"))
                .help("give each point its own name"));
        }
        let at = cx.finite_xy(&p.at, key("at"))?;
        if axisymmetric && at[0] < 0.0 {
            return Err(cx
                .err(p.at.span(), format!("point '{name}' lies at x < 0; in an axisymmetric model x is the radius"))
                .key(key("at"))
                .help("give the point at x ≥ 0 (its mirror image has the same field)"));
        }
        points.push(NamedPoint { name, at });
    }
    Ok(points)
}
