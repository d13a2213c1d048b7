//! How strongly the mesh is graded towards each singular point, and whether the finished
//! mesh follows.
//!
//! # Algorithm
//! A singular point of exponent λ, for elements of order p, is graded by the law
//!
//! ```text
//! h(r) = max(h₀·(r/R)^(1−μ), r₀)   for r < R,   μ = f·λ/p,   r₀ = R·(h₀/R)^(1/μ),
//! ```
//!
//! where h₀ is the size the other sources of the size field ask for at the point, R the
//! radius of the grading zone ([`grading_radius`]) and r₀ the innermost size, where the law
//! meets h = r (see the `size_field` module for the theory). After meshing, the longest
//! mesh edge that ends at the point is compared with the size the law asks for there (r₀,
//! or the size floor if that is larger): within [`GRADED_WITHIN`] times it, the point is
//! graded. Anything else is reported with its reason, so that a solve on the mesh can say
//! that the stress near the point rests on an ungraded mesh.
//!
//! # References
//! - T. Apel, A.-M. Sändig, J. R. Whiteman, "Graded mesh refinement and error estimates for
//!   finite element solutions of elliptic boundary value problems in non-smooth domains",
//!   Math. Methods Appl. Sci. 19 (1996) 63–85 (the innermost elements of size h^(1/μ)).

use crate::geometry::{norm, sub};
use crate::mesh::Mesh;
pub use crate::singular_point::{Grading, GradingStatus, GRADED_WITHIN};

/// Least radius of a grading zone, in elements of the size around it.
pub(crate) const GRADING_RADIUS_SIZES: f64 = 4.0;

/// Radius R of the grading zone of a singular point where the shortest piece of outline
/// meeting it has length `shortest` and the other sources ask for size `h0`:
/// R = max(shortest/2, 4·h₀).
///
/// Half the shortest piece is a length of the geometry, so that R stays fixed as the mesh
/// is refined (the regime of the convergence theory). But a short piece at the point (a
/// thin electrode's end face, a side split where another shape touches it) makes it
/// smaller than the elements there, and the law h₀·(r/R)^(1−μ) then asks for nothing
/// smaller than h₀: the point would go ungraded. At least four elements of size h₀ across
/// the zone make the law take effect on every mesh; the innermost size is then at most
/// 4·4^(−1/μ)·h₀ (0.35·h₀ for linear elements at a right-angled conductor edge, 0.03·h₀ for
/// quadratic ones).
pub(crate) fn grading_radius(shortest: f64, h0: f64) -> f64 {
    (0.5 * shortest).max(GRADING_RADIUS_SIZES * h0)
}

/// The grading law asked for at one singular point.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct GradingLaw {
    pub h0: f64,
    pub radius: f64,
    pub mu: f64,
}

impl GradingLaw {
    /// The innermost size r₀ = R·(h₀/R)^(1/μ).
    pub fn innermost(&self) -> f64 {
        self.radius * (self.h0 / self.radius).powf(1.0 / self.mu)
    }
}

/// What decided the laws: whether they were applied, the floor and the node budget's
/// outcome.
pub(crate) struct AuditInput<'a> {
    /// The law per singular point (computed even with grading off, to say what it would
    /// have asked).
    pub laws: &'a [GradingLaw],
    /// The laws were added to the size field (`RefineParams::grade_corners`).
    pub applied: bool,
    pub floor: f64,
    pub complete: bool,
}

/// Measures the finished mesh at every singular point and records the verdict in
/// `mesh.singular_points[k].grading`.
///
/// # Panics
/// If `input.laws` does not hold one entry per singular point (a programming error).
#[track_caller]
pub(crate) fn audit(mesh: &mut Mesh, input: &AuditInput<'_>) {
    assert_eq!(input.laws.len(), mesh.singular_points.len(), "one grading law per singular point");
    // The longest edge ending at each point's vertex.
    let vertices = mesh.singular_vertices();
    let mut point_of = vec![u32::MAX; mesh.num_vertices as usize];
    for (k, v) in vertices.iter().enumerate() {
        if let Some(v) = v {
            point_of[*v as usize] = k as u32;
        }
    }
    let mut longest = vec![0.0f64; mesh.singular_points.len()];
    for tri in &mesh.triangles {
        for (i, &v) in tri.iter().enumerate() {
            let k = point_of[v as usize];
            if k != u32::MAX {
                let p = mesh.nodes[v as usize];
                for w in [tri[(i + 1) % 3], tri[(i + 2) % 3]] {
                    longest[k as usize] = longest[k as usize].max(norm(sub(mesh.nodes[w as usize], p)));
                }
            }
        }
    }
    for (k, s) in mesh.singular_points.iter_mut().enumerate() {
        let law = input.laws[k];
        let achieved = longest[k];
        let r0 = law.innermost();
        let target = r0.max(input.floor);
        let status = if !input.applied {
            GradingStatus::Off
        } else if achieved <= GRADED_WITHIN * target {
            if r0 < input.floor {
                GradingStatus::AtFloor
            } else {
                GradingStatus::Graded
            }
        } else if !input.complete {
            GradingStatus::BudgetReached
        } else {
            GradingStatus::NotReached
        };
        s.grading = Some(Grading {
            outer_size_m: law.h0,
            radius_m: law.radius,
            mu: law.mu,
            target_m: target,
            achieved_m: achieved,
            status,
        });
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn innermost_size_is_where_the_law_meets_h_equals_r() {
        let law = GradingLaw { h0: 0.01, radius: 0.04, mu: 0.85 * (2.0 / 3.0) / 2.0 };
        let r0 = law.innermost();
        assert!((law.h0 * (r0 / law.radius).powf(1.0 - law.mu) - r0).abs() <= 8.0 * f64::EPSILON * r0);
        // The radius rule: a short piece does not shrink the zone below four sizes.
        assert_eq!(grading_radius(1e-3, 1e-3), 4e-3);
        assert_eq!(grading_radius(0.08, 1e-3), 0.04);
    }
}
