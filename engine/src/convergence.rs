//! Grid-convergence study of a computed quantity: observed order, Richardson
//! extrapolation and the grid convergence index.
//!
//! # Algorithm
//! For values f₁ (finest), f₂, f₃ on meshes of N₁ > N₂ > N₃ unknowns in two dimensions the
//! refinement ratios are r₂₁ = (N₁/N₂)^(1/2) and r₃₂ = (N₂/N₃)^(1/2). With ε₂₁ = f₂ − f₁,
//! ε₃₂ = f₃ − f₂ and s = sign(ε₃₂/ε₂₁), the observed order p solves
//!
//! ```text
//! p = | ln|ε₃₂/ε₂₁| + q(p) | / ln r₂₁,    q(p) = ln((r₂₁^p − s)/(r₃₂^p − s))
//! ```
//!
//! (fixed-point iteration; q = 0 for a constant ratio). The extrapolated value is
//! f_ext = (r₂₁^p·f₁ − f₂)/(r₂₁^p − 1) and the fine-grid convergence index
//! GCI = F_s·|(f₂ − f₁)/f₁|/(r₂₁^p − 1) with safety factor F_s = 1.25. The convergence is
//! monotone when 0 < ε₂₁/ε₃₂ < 1, oscillatory when the ratio is negative and divergent when
//! it exceeds 1 — the signature of a singular quantity (a peak field at a sharp edge), whose
//! value keeps growing under refinement.
//!
//! # References
//! - P. J. Roache, "Perspective: a method for uniform reporting of grid refinement
//!   studies", J. Fluids Eng. 116 (1994) 405–413, doi:10.1115/1.2910291.
//! - I. B. Celik, U. Ghia, P. J. Roache, C. J. Freitas, H. Coleman, P. E. Raad, "Procedure
//!   for estimation and reporting of uncertainty due to discretization in CFD
//!   applications", J. Fluids Eng. 130 (2008) 078001, doi:10.1115/1.2960953.

/// How the last three values behave.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ConvergenceKind {
    /// The changes shrink with the same sign.
    Monotone,
    /// The changes alternate in sign.
    Oscillatory,
    /// The changes grow: the quantity does not converge (for a peak field, a sign of a
    /// singularity).
    Divergent,
    /// The last two values are equal to round-off: converged as far as can be seen.
    Converged,
}

/// The outcome of a grid-convergence study on the three finest meshes.
#[derive(Clone, Debug, PartialEq)]
pub struct ConvergenceStudy {
    /// Behaviour of the changes.
    pub kind: ConvergenceKind,
    /// Observed order p in the mesh size h (NaN when it cannot be defined).
    pub observed_order: f64,
    /// Richardson-extrapolated value (the finest value when extrapolation is not valid).
    pub extrapolated: f64,
    /// Fine-grid convergence index, relative (NaN when not defined).
    pub gci_fine: f64,
    /// Relative change between the two finest values.
    pub relative_change: f64,
}

/// Safety factor of the grid convergence index for three or more meshes (Roache 1994).
pub const GCI_SAFETY_FACTOR: f64 = 1.25;

/// Studies the last three (unknowns, value) pairs of a refinement sequence (coarse to
/// fine) of a two-dimensional discretisation.
///
/// # Panics
/// If fewer than three pairs are given or the unknown counts do not increase.
#[track_caller]
pub fn grid_convergence(sequence: &[(usize, f64)]) -> ConvergenceStudy {
    assert!(sequence.len() >= 3, "a convergence study needs three meshes");
    let k = sequence.len();
    let (n3, f3) = sequence[k - 3];
    let (n2, f2) = sequence[k - 2];
    let (n1, f1) = sequence[k - 1];
    assert!(n1 > n2 && n2 > n3, "unknown counts must increase");
    let r21 = (n1 as f64 / n2 as f64).sqrt();
    let r32 = (n2 as f64 / n3 as f64).sqrt();
    let e21 = f2 - f1;
    let e32 = f3 - f2;
    let relative_change = if f1 != 0.0 { (e21 / f1).abs() } else { e21.abs() };
    let scale = f1.abs().max(f2.abs()).max(f3.abs()).max(f64::MIN_POSITIVE);
    if e21.abs() <= 64.0 * f64::EPSILON * scale {
        return ConvergenceStudy {
            kind: ConvergenceKind::Converged,
            observed_order: f64::NAN,
            extrapolated: f1,
            gci_fine: 0.0,
            relative_change,
        };
    }
    let ratio = e21 / e32;
    let kind = if ratio < 0.0 {
        ConvergenceKind::Oscillatory
    } else if ratio < 1.0 {
        ConvergenceKind::Monotone
    } else {
        ConvergenceKind::Divergent
    };
    let s = (e32 / e21).signum();
    let mut p = (e32 / e21).abs().ln() / r21.ln();
    for _ in 0..100 {
        let q = ((r21.powf(p) - s) / (r32.powf(p) - s)).ln();
        let next = ((e32 / e21).abs().ln() + q).abs() / r21.ln();
        if !next.is_finite() {
            break;
        }
        if (next - p).abs() < 1e-13 * next.abs().max(1.0) {
            p = next;
            break;
        }
        p = next;
    }
    if kind == ConvergenceKind::Divergent {
        // The changes grow: report the growth rate as a negative order.
        p = -(e21 / e32).abs().ln() / r21.ln();
    }
    let (extrapolated, gci_fine) = if kind == ConvergenceKind::Monotone && p > 0.0 {
        let rp = r21.powf(p);
        ((rp * f1 - f2) / (rp - 1.0), GCI_SAFETY_FACTOR * relative_change / (rp - 1.0))
    } else {
        (f1, f64::NAN)
    };
    ConvergenceStudy { kind, observed_order: p, extrapolated, gci_fine, relative_change }
}

/// How a watched quantity's whole sequence behaves, as the convergence study reports it
/// (the verdict on its value is the error bar's: [`crate::certify()`]).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Behaviour {
    /// Fewer than three meshes, or unknown counts that do not increase.
    TooFewMeshes,
    /// The changes shrink with the same sign.
    Monotone,
    /// The changes alternate in sign.
    Oscillatory,
    /// The changes grow, and are above the remeshing noise.
    Divergent,
    /// The changes grow but stay below [`crate::SETTLED_FRACTION`] of the tolerance: noise
    /// of remeshing, not a trend.
    Settled,
    /// The last two values agree to round-off.
    Converged,
}

impl Behaviour {
    /// The word the reports use.
    pub fn word(self) -> &'static str {
        match self {
            Behaviour::TooFewMeshes => "too few meshes",
            Behaviour::Monotone => "monotone",
            Behaviour::Oscillatory => "oscillatory",
            Behaviour::Divergent => "divergent",
            Behaviour::Settled => "settled",
            Behaviour::Converged => "converged",
        }
    }
}

/// The convergence study of a whole sequence against a relative tolerance: its behaviour,
/// the study of the three finest meshes (when there are three with increasing unknowns),
/// and whether it is flagged as singular.
#[derive(Clone, Debug, PartialEq)]
pub struct SequenceVerdict {
    /// How the sequence behaves.
    pub behaviour: Behaviour,
    /// The study of the three finest meshes.
    pub study: Option<ConvergenceStudy>,
    /// Set when the changes grow above the remeshing noise: the sign of a singular
    /// quantity, which has no converged limit.
    pub flagged: bool,
}

/// Judges a sequence (`(unknowns, value)`, coarse to fine) against `tolerance`: changes that
/// grow mean something only while they are above the noise of remeshing,
/// [`crate::SETTLED_FRACTION`] of the tolerance — the same fraction the error bars use to
/// call a sequence settled.
pub fn sequence_verdict(sequence: &[(usize, f64)], tolerance: f64) -> SequenceVerdict {
    let n = sequence.len();
    if n < 3 || !sequence[n - 3..].windows(2).all(|w| w[1].0 > w[0].0) {
        return SequenceVerdict { behaviour: Behaviour::TooFewMeshes, study: None, flagged: false };
    }
    let st = grid_convergence(sequence);
    let noise = crate::SETTLED_FRACTION * tolerance;
    let behaviour = match st.kind {
        ConvergenceKind::Monotone => Behaviour::Monotone,
        ConvergenceKind::Oscillatory => Behaviour::Oscillatory,
        ConvergenceKind::Divergent if st.relative_change <= noise => Behaviour::Settled,
        ConvergenceKind::Divergent => Behaviour::Divergent,
        ConvergenceKind::Converged => Behaviour::Converged,
    };
    let growing = st.kind == ConvergenceKind::Divergent || st.observed_order < 0.0;
    let flagged = growing && st.relative_change > noise;
    SequenceVerdict { behaviour, study: Some(st), flagged }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Growth below the remeshing noise is "settled", above it "divergent" and flagged
    /// (the same fraction of the tolerance as the error bars': certify.rs).
    #[test]
    fn growth_below_the_noise_is_settled() {
        let tol = 1e-3;
        let seq = |d: f64| vec![(1000, 1.0), (2000, 1.0 + d), (4000, 1.0 + 3.0 * d)];
        let quiet = sequence_verdict(&seq(0.5 * crate::SETTLED_FRACTION * tol / 2.0), tol);
        assert_eq!(quiet.behaviour, Behaviour::Settled);
        assert!(!quiet.flagged);
        let loud = sequence_verdict(&seq(tol), tol);
        assert_eq!(loud.behaviour, Behaviour::Divergent);
        assert!(loud.flagged);
        assert_eq!(sequence_verdict(&seq(tol)[..2], tol).behaviour, Behaviour::TooFewMeshes);
    }

    /// f(h) = f₀ + C·hᵖ sampled at h = N^(−1/2): the study must return p and f₀ exactly
    /// (Richardson extrapolation is exact for a pure power law — Roache 1994).
    #[test]
    fn pure_power_law_is_recovered_exactly() {
        for (p, ns) in [(2.0, [1000usize, 4000, 16000]), (4.0, [900, 2500, 6400]), (1.5, [1000, 3000, 11000])] {
            let seq: Vec<(usize, f64)> = ns.iter().map(|&n| (n, 7.5 + 3.0 * (n as f64).powf(-p / 2.0))).collect();
            let st = grid_convergence(&seq);
            assert_eq!(st.kind, ConvergenceKind::Monotone);
            // The differences are down to 1e-7 while f carries ~1e-15 round-off, so p is
            // good to ~1e-8 relative; the extrapolated value to round-off.
            assert!((st.observed_order - p).abs() < 1e-6, "{p}: {}", st.observed_order);
            assert!((st.extrapolated - 7.5).abs() < 1e-12, "{}", st.extrapolated);
            assert!(st.gci_fine > 0.0);
        }
    }

    #[test]
    fn growing_changes_are_divergent_with_negative_order() {
        // A singular peak E ∝ h^(λ−1) with λ = 2/3: +26 % per halving of h.
        let seq: Vec<(usize, f64)> =
            [1000usize, 4000, 16000].iter().map(|&n| (n, (n as f64).powf(1.0 / 6.0))).collect();
        let st = grid_convergence(&seq);
        assert_eq!(st.kind, ConvergenceKind::Divergent);
        assert!((st.observed_order + 1.0 / 3.0).abs() < 1e-9, "{}", st.observed_order);
        assert!(st.gci_fine.is_nan());
    }
}
