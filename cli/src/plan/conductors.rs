//! `[[conductor]]`: electrodes at a fixed potential and floating conductors with their charge.

use super::diag::ModelError;
use super::raw::RawModel;
use super::{Conductor, ConductorKind, Ctx, LIMIT_HELP, MAX_CHARGE_C};

/// `[[conductor]]`: names unique, a fixed potential or floating (with its charge), in range.
pub(super) fn conductors(cx: &Ctx<'_>, raw: &RawModel) -> Result<Vec<Conductor>, ModelError> {
    let mut conductors: Vec<Conductor> = Vec::new();
    for (i, c) in raw.conductor.iter().enumerate() {
        let span = c.span();
        let c = c.get_ref();
        let n = c.name.get_ref();
        if conductors.iter().any(|o| &o.name == n) {
            return Err(cx
                .err(c.name.span(), format!("conductor '{n}' is defined twice"))
                .key(format!("conductor[{i}].name"))
                .help("give each conductor its own name; several shapes may refer to one conductor"));
        }
        let floating = c.floating.as_ref().map(|f| *f.get_ref()).unwrap_or(false);
        let kind =
            match (&c.potential_v, floating) {
                (Some(v), false) => {
                    let x = cx.potential(v, format!("conductor[{i}].potential_v"))?;
                    if let Some(q) = &c.charge_c {
                        return Err(cx
                            .err(q.span(), "a conductor at a fixed potential cannot also have a given charge".into())
                            .key(format!("conductor[{i}].charge_c"))
                            .help("remove charge_c, or replace potential_v by floating = true"));
                    }
                    ConductorKind::Fixed { potential_v: x }
                }
                (None, true) => {
                    let q = c.charge_c.as_ref().map(|q| *q.get_ref()).unwrap_or(0.0);
                    if !(q.is_finite() && q.abs() <= MAX_CHARGE_C) {
                        return Err(cx.err(
                        c.charge_c.as_ref().unwrap().span(),
                        format!("the charge must be a finite number of coulombs within ±{MAX_CHARGE_C:e}, not {q:e}"),
                    )
                    .key(format!("conductor[{i}].charge_c"))
                    .help(LIMIT_HELP));
                    }
                    ConductorKind::Floating { charge_c: q }
                }
                (Some(v), true) => {
                    return Err(cx
                        .err(v.span(), format!("conductor '{n}' has both a potential and floating = true"))
                        .key(format!("conductor[{i}]"))
                        .help("keep potential_v for an electrode, or floating = true for a floating conductor"))
                }
                (None, false) => {
                    return Err(cx
                        .err(span, format!("conductor '{n}' has neither a potential nor floating = true"))
                        .key(format!("conductor[{i}]"))
                        .help("add potential_v = <volts>, or floating = true"))
                }
            };
        conductors.push(Conductor { name: n.clone(), kind });
    }

    Ok(conductors)
}
