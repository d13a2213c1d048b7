//! `[[material]]`: the dielectrics, their permittivities (scalar or tensor), allowable
//! stresses, Weibull shapes and, for gases, the gas and its state. The one place a permittivity is checked: the mesher and the engine trust it.

use super::diag::ModelError;
use super::raw::{RawGas, RawModel};
use super::{Ctx, Material, LIMIT_HELP, MAX_PERMITTIVITY};
use toml::Spanned as S;

/// `[[material]]`: names unique, permittivity (scalar and tensor), allowable stress and
/// Weibull shape in range (the allowables by load case are read with the load cases).
pub(super) fn materials(cx: &Ctx<'_>, raw: &RawModel) -> Result<Vec<Material>, ModelError> {
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
        let weibull_shape = match &m.weibull_shape {
            Some(w) => {
                let v = cx.positive(w, format!("material[{i}].weibull_shape"), "the Weibull shape parameter")?;
                if v > 1000.0 {
                    return Err(cx
                        .err(w.span(), format!("the Weibull shape parameter {v} is above 1000"))
                        .key(format!("material[{i}].weibull_shape"))
                        .help("typical values in field are 5–40 (oil 5–15, epoxy 10–20, compressed SF6 20–40)"));
                }
                Some(v)
            }
            None => None,
        };
        let gas = match &m.gas {
            Some(g) => Some(gas(cx, g, i)?),
            None => None,
        };
        materials.push(Material {
            name: n.clone(),
            permittivity: eps,
            permittivity_tensor: tensor,
            allowable_stress_kv_per_mm: allow,
            // Checked against the load cases' names once those are read (`load_cases`).
            allowable_by_case: Vec::new(),
            weibull_shape,
            gas,
        });
    }

    Ok(materials)
}

/// `gas = { kind, pressure_bar, temperature_c }`: a known gas, absolute pressure in (0, 100]
/// bar (default 1), temperature in [−60, 200] °C (default 20).
fn gas(cx: &Ctx<'_>, g: &S<RawGas>, i: usize) -> Result<engine::Gas, ModelError> {
    let g = g.get_ref();
    let key = |k: &str| format!("material[{i}].gas.{k}");
    let kind = match g.kind.get_ref().as_str() {
        "dry_air" => engine::GasKind::DryAir,
        "sf6" => engine::GasKind::Sf6,
        other => {
            return Err(cx
                .err(g.kind.span(), format!("unknown gas '{other}'"))
                .key(key("kind"))
                .help("use \"dry_air\" or \"sf6\" (the gases whose ionisation coefficients fieldgrade carries)"))
        }
    };
    let pressure_bar = match &g.pressure_bar {
        Some(p) => {
            let v = cx.positive(p, key("pressure_bar"), "the absolute gas pressure")?;
            if v > 100.0 {
                return Err(cx
                    .err(p.span(), format!("the gas pressure {v} bar is above 100 bar"))
                    .key(key("pressure_bar"))
                    .help("give the absolute pressure in bar (0.1 MPa = 1 bar)"));
            }
            v
        }
        None => 1.0,
    };
    let temperature_c = match &g.temperature_c {
        Some(t) => {
            let v = *t.get_ref();
            if !(-60.0..=200.0).contains(&v) {
                return Err(cx
                    .err(t.span(), format!("the gas temperature {v} °C is outside −60 … 200 °C"))
                    .key(key("temperature_c")));
            }
            v
        }
        None => 20.0,
    };
    Ok(engine::Gas { kind, pressure_bar, temperature_c })
}
