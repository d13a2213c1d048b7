//! `[[material]]`: the dielectrics, their permittivities (scalar or tensor) and allowable
//! stresses. The one place a permittivity is checked: the mesher and the engine trust it.

use super::diag::ModelError;
use super::raw::RawModel;
use super::{Ctx, Material, LIMIT_HELP, MAX_PERMITTIVITY};

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
        materials.push(Material {
            name: n.clone(),
            permittivity: eps,
            permittivity_tensor: tensor,
            allowable_stress_kv_per_mm: allow,
            // Checked against the load cases' names once those are read (`load_cases`).
            allowable_by_case: Vec::new(),
            weibull_shape,
        });
    }

    Ok(materials)
}
