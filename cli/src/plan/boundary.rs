//! `[boundary]`: the outer boundary (an electrode, a symmetry line, or open to infinity) and the
//! check that some potential is fixed.

use super::diag::ModelError;
use super::raw::RawModel;
use super::{Conductor, ConductorKind, Ctx};
use mesher::OuterBoundary;

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
    let fixed = conductors.iter().any(|c| matches!(c.kind, ConductorKind::Fixed { .. }));
    if !fixed && outer == OuterBoundary::ZeroFlux {
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
