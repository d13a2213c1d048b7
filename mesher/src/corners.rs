//! Singular points: where the field (or its gradient) is unbounded, and how strongly.
//!
//! # Algorithm
//! Around each vertex of the arrangement the incident pieces, ordered by the angle of their
//! true tangents, cut the plane into sectors, each filled by a dielectric, a conductor or
//! the outside. A maximal run of dielectric sectors between two *walls* (a conductor: the
//! potential is fixed, u = 0; the outside: zero normal flux, ∂u/∂n = 0, or a fixed potential
//! if the outer boundary is an electrode) carries local solutions
//! u = r^λ·Φ(φ). In a sector of permittivity ε, Φ = a·cos(λφ) + b·sin(λφ), and across an
//! interface Φ and ε·Φ′ are continuous. Writing the state as s = (Φ, ε·Φ′/λ), a sector of
//! opening θ and permittivity ε maps it by
//!
//! ```text
//! M(θ, ε) = [  cos λθ       sin λθ / ε ]
//!           [ −ε sin λθ     cos λθ     ]
//! ```
//!
//! A conductor wall starts with s = (0, 1) and ends with Φ = 0; a zero-flux wall starts with
//! s = (1, 0) and ends with ε·Φ′ = 0. The admissible exponents are the positive roots of the
//! resulting scalar function of λ; the smallest one governs. With one dielectric this gives
//! the classical λ = π/θ₀ (conductor–conductor or flux–flux walls) and λ = π/(2θ₀) (mixed
//! walls). A vertex surrounded only by dielectrics (no wall) is periodic: λ solves
//! tr M(λ) = 2.
//!
//! The field behaves like r^(λ−1): infinite at the point when λ < 1. For Lagrange elements of
//! order p, any non-integer λ < p limits the convergence rate on a uniform mesh, so such points
//! are also graded (see [`crate::SizeField`]).
//!
//! # References
//! - J. D. Jackson, *Classical Electrodynamics*, 3rd ed., Wiley 1999, §2.11 (field near a
//!   conducting wedge, λ = π/θ₀).
//! - P. Grisvard, *Elliptic Problems in Nonsmooth Domains*, Pitman 1985 (corner singularities
//!   of interface and mixed problems).
//! - T. Takuma, "Field behavior at a triple junction in composite dielectric arrangements",
//!   IEEE Trans. Electr. Insul. 26(3) (1991) 500–509.
//!
//! A corner on the symmetry axis of an axisymmetric model is a conical point: with one
//! dielectric between the axis and a conductor surface at polar angle θ₀, V ≈ A·r^ν·P_ν(cos θ)
//! and ν is the smallest root of P_ν(cos θ₀) = 0 ([`conical_exponent`]).
//!
//! # Limitations
//! An axis point where several dielectrics meet keeps the planar exponent of the meridian
//! section (the axis taken as a zero-flux wall); it is flagged `on_axis`.

use crate::arrangement::{Arrangement, Side};
use crate::error::MeshError;
use crate::geometry::{Fill, Geometry, OuterBoundary, Symmetry, Xy};
use crate::singular_point::LAMBDA_TOL;
pub use crate::singular_point::{Sector, SingularKind, SingularPoint, Wall};
use std::f64::consts::TAU;

/// Smallest positive exponent λ ≤ `lambda_max` for a run of dielectric sectors between two
/// walls, or `None` if there is none in that range.
///
/// `walls = None` means the sectors go all the way round (no wall, periodic).
pub fn wedge_exponent(sectors: &[Sector], walls: Option<(Wall, Wall)>, lambda_max: f64) -> Option<f64> {
    let f = |lam: f64| -> f64 {
        let mut s = match walls {
            Some((Wall::Potential, _)) => [0.0, 1.0],
            Some((Wall::ZeroFlux, _)) => [1.0, 0.0],
            None => [1.0, 0.0],
        };
        let mut m = [[1.0, 0.0], [0.0, 1.0]];
        for sec in sectors {
            let (sn, cs) = (lam * sec.angle).sin_cos();
            let e = sec.permittivity;
            let t = [[cs, sn / e], [-e * sn, cs]];
            s = [t[0][0] * s[0] + t[0][1] * s[1], t[1][0] * s[0] + t[1][1] * s[1]];
            m = [
                [t[0][0] * m[0][0] + t[0][1] * m[1][0], t[0][0] * m[0][1] + t[0][1] * m[1][1]],
                [t[1][0] * m[0][0] + t[1][1] * m[1][0], t[1][0] * m[0][1] + t[1][1] * m[1][1]],
            ];
        }
        match walls {
            Some((_, Wall::Potential)) => s[0],
            Some((_, Wall::ZeroFlux)) => s[1],
            None => m[0][0] + m[1][1] - 2.0,
        }
    };
    // Scan for sign changes (and, for the periodic case, touching zeros), then bisect.
    let steps = 4000;
    let lo = 1e-6;
    let h = (lambda_max - lo) / steps as f64;
    let mut prev_l = lo;
    let mut prev_f = f(lo);
    let mut prev_prev_f = prev_f;
    for k in 1..=steps {
        let l = lo + k as f64 * h;
        let fl = f(l);
        if fl == 0.0 {
            return Some(l);
        }
        if prev_f.signum() != fl.signum() {
            return Some(bisect(&f, prev_l, l, prev_f));
        }
        if walls.is_none() && k >= 2 {
            // A local extremum of |f| close to zero without a sign change: a double root.
            if prev_f.abs() < prev_prev_f.abs() && prev_f.abs() < fl.abs() {
                let (mut a, mut b) = (prev_l - h, l);
                for _ in 0..200 {
                    let m1 = a + (b - a) * 0.382;
                    let m2 = a + (b - a) * 0.618;
                    if f(m1).abs() < f(m2).abs() {
                        b = m2;
                    } else {
                        a = m1;
                    }
                    if b - a < 1e-14 {
                        break;
                    }
                }
                let m = 0.5 * (a + b);
                if f(m).abs() < 1e-9 {
                    return Some(m);
                }
            }
        }
        prev_prev_f = prev_f;
        prev_l = l;
        prev_f = fl;
    }
    None
}

/// The root of `f` in [a, b], where f changes sign and f(a) = `fa`, by bisection to the
/// resolution of the arguments.
fn bisect(f: &impl Fn(f64) -> f64, mut a: f64, mut b: f64, mut fa: f64) -> f64 {
    for _ in 0..200 {
        let m = 0.5 * (a + b);
        let fm = f(m);
        if fm.signum() == fa.signum() {
            a = m;
            fa = fm;
        } else {
            b = m;
        }
        if b - a < 1e-15 {
            break;
        }
    }
    0.5 * (a + b)
}

/// Legendre function of the first kind P_ν(x) for real ν ≥ 0 and −1 < x ≤ 1, by the
/// hypergeometric series P_ν(x) = ₂F₁(−ν, ν + 1; 1; (1 − x)/2) (Abramowitz & Stegun 1964,
/// 8.1.2).
pub fn legendre_p(nu: f64, x: f64) -> f64 {
    let z = 0.5 * (1.0 - x);
    let (mut term, mut sum) = (1.0, 1.0);
    for k in 0..200_000 {
        let kf = k as f64;
        term *= (kf - nu) * (kf + nu + 1.0) / ((kf + 1.0) * (kf + 1.0)) * z;
        sum += term;
        if term.abs() < 1e-17 * sum.abs().max(1e-300) && kf > nu {
            break;
        }
    }
    sum
}

/// Singular exponent of a conical point on the symmetry axis: a conductor surface making
/// the polar angle `theta0` with the axis on the field side (the field region is the cone
/// of half-angle θ₀ around the axis). Near the point V ≈ A·r^ν·P_ν(cos θ), and the
/// conductor condition P_ν(cos θ₀) = 0 gives ν (Jackson, Classical Electrodynamics, 3rd
/// ed., 1999, §3.4). ν < 1 (a field singularity) when θ₀ > π/2, i.e. the conductor is a
/// cone pointing into the field. Returns the smallest root in (0, `nu_max`].
pub fn conical_exponent(theta0: f64, nu_max: f64) -> Option<f64> {
    let x = theta0.cos();
    let f = |nu: f64| legendre_p(nu, x);
    let steps = 2000;
    let lo = 1e-6;
    let h = (nu_max - lo) / steps as f64;
    let (mut a, mut fa) = (lo, f(lo));
    for k in 1..=steps {
        let b = lo + k as f64 * h;
        let fb = f(b);
        if fa.signum() != fb.signum() {
            return Some(bisect(&f, a, b, fa));
        }
        a = b;
        fa = fb;
    }
    None
}

/// Finds every point of the arrangement where the solution is singular for elements of
/// order `order` (λ < order and not an integer).
pub(crate) fn find(geo: &Geometry, arr: &Arrangement, order: u8) -> Result<Vec<(usize, SingularPoint)>, MeshError> {
    // Incident directions per vertex: (angle, left side of the outgoing direction).
    let mut inc: Vec<Vec<(f64, Side, Option<Wall>)>> = vec![Vec::new(); arr.vertices.len()];
    let tol = 1e-9 * geo.scale();
    for pc in &arr.pieces {
        // A stretch of the outer boundary with a condition of its own walls off the domain
        // there with that condition.
        let on_outer = pc.left == Side::Outside || pc.right == Side::Outside;
        let wall = if on_outer {
            let mid = pc.curve.point_at(0.5);
            geo.boundary_pieces.iter().find(|b| b.curve.distance(mid).0 <= tol).map(|b| b.wall)
        } else {
            None
        };
        // A thin electrode is a conductor sector of zero opening just before the
        // direction (the sort below is stable): a potential wall on both faces.
        let t0 = pc.curve.tangent_at(0.0);
        let a0 = t0[1].atan2(t0[0]);
        let t1 = pc.curve.tangent_at(1.0);
        let a1 = (-t1[1]).atan2(-t1[0]);
        if let Some(c) = pc.thin {
            inc[pc.v[0]].push((a0, Side::Conductor(c), None));
            inc[pc.v[1]].push((a1, Side::Conductor(c), None));
        }
        inc[pc.v[0]].push((a0, pc.left, wall));
        inc[pc.v[1]].push((a1, pc.right, wall));
    }
    let eps = |k: u32| match geo.shapes[k as usize].fill {
        Fill::Dielectric { permittivity } => permittivity,
        Fill::Conductor { .. } => 1.0,
    };
    let cx = CornerCtx {
        symmetry: geo.symmetry,
        scale: geo.scale(),
        outer_fixed: geo.outer == OuterBoundary::FixedPotential,
        lambda_max: order.max(1) as f64,
        eps: &eps,
        conductor_names: &geo.conductors,
    };
    let mut out = Vec::new();
    for (vi, dirs) in inc.iter_mut().enumerate() {
        if let Some(b) = classify(arr.vertices[vi], dirs, &cx)? {
            out.push((vi, b));
        }
    }
    sort_points(&mut out, |p| &p.1);
    Ok(out)
}

/// Sorts singular points (with whatever they are paired with) by exponent, then position.
pub(crate) fn sort_points<T>(out: &mut [T], point: impl Fn(&T) -> &SingularPoint) {
    out.sort_by(|x, y| {
        let (a, b) = (point(x), point(y));
        a.lambda.total_cmp(&b.lambda).then(a.at[0].total_cmp(&b.at[0])).then(a.at[1].total_cmp(&b.at[1]))
    });
}

/// What classifying a point needs besides its incident directions.
pub(crate) struct CornerCtx<'a> {
    pub(crate) symmetry: Symmetry,
    /// Model size, for tolerances.
    pub(crate) scale: f64,
    /// The outer boundary is an electrode (else zero flux).
    pub(crate) outer_fixed: bool,
    /// Elements' order: exponents below it are singular for them.
    pub(crate) lambda_max: f64,
    /// Relative permittivity of a region.
    pub(crate) eps: &'a dyn Fn(u32) -> f64,
    /// Conductor names, for the touching-conductors error.
    pub(crate) conductor_names: &'a [String],
}

/// The singular point at `at` with incident boundary and interface directions `dirs`
/// (angle, the side on the left of the outgoing direction, and for a stretch of the outer
/// boundary with a condition of its own, its wall), if the smallest exponent of its
/// sectors is singular.
pub(crate) fn classify(
    at: Xy,
    dirs: &mut [(f64, Side, Option<Wall>)],
    cx: &CornerCtx<'_>,
) -> Result<Option<SingularPoint>, MeshError> {
    let scale = cx.scale;
    let lambda_max = cx.lambda_max;
    if dirs.len() < 2 {
        return Ok(None);
    }
    dirs.sort_by(|a, b| a.0.total_cmp(&b.0));
    let n = dirs.len();
    // Sector k goes from direction k to direction k+1 (counter-clockwise).
    let sectors: Vec<(f64, Side)> = (0..n)
        .map(|k| {
            let a0 = dirs[k].0;
            let a1 = if k + 1 < n { dirs[k + 1].0 } else { dirs[0].0 + TAU };
            (a1 - a0, dirs[k].1)
        })
        .collect();
    let conductors: Vec<u32> =
        sectors.iter().filter_map(|s| if let Side::Conductor(c) = s.1 { Some(c) } else { None }).collect();
    if let Some(&c0) = conductors.first() {
        if let Some(&c1) = conductors.iter().find(|&&c| c != c0) {
            return Err(MeshError::ConductorsTouch {
                first: cx.conductor_names[c0 as usize].clone(),
                second: cx.conductor_names[c1 as usize].clone(),
                at,
            });
        }
    }
    let on_axis = cx.symmetry == Symmetry::Axisymmetric && at[0].abs() <= 1e-9 * scale;
    let wall_of = |s: Side| -> Option<Wall> {
        match s {
            Side::Conductor(_) => Some(Wall::Potential),
            Side::Outside => Some(if cx.outer_fixed && !on_axis { Wall::Potential } else { Wall::ZeroFlux }),
            Side::Region(_) => None,
        }
    };
    // The wall bounding a run of dielectric: a wall sector's own, except that outside the
    // domain a stretch of the outer boundary with its own condition (the direction's wall)
    // overrides the outer boundary's.
    let bounding_wall = |s: Side, along: Option<Wall>| -> Wall {
        match (s, along) {
            (Side::Outside, Some(w)) if !on_axis => w,
            _ => wall_of(s).expect("wall sectors have walls"),
        }
    };
    let eps = |s: Side| -> f64 {
        match s {
            Side::Region(k) => (cx.eps)(k),
            _ => 1.0,
        }
    };
    let mut best: Option<SingularPoint> = None;
    let mut consider = |lam: Option<f64>,
                        opening: f64,
                        regions: Vec<u32>,
                        kind: SingularKind,
                        start_angle: f64,
                        sectors: Vec<Sector>,
                        walls: Option<(Wall, Wall)>| {
        if let Some(l) = lam {
            let near_int = (l - l.round()).abs() <= LAMBDA_TOL;
            if l < lambda_max - LAMBDA_TOL && !near_int && best.as_ref().is_none_or(|b| l < b.lambda) {
                best = Some(SingularPoint {
                    at,
                    kind,
                    opening,
                    lambda: l,
                    regions,
                    conductor: conductors.first().copied(),
                    on_axis,
                    start_angle,
                    sectors,
                    walls,
                    grading: None,
                });
            }
        }
    };
    let wall_idx: Vec<usize> = (0..n).filter(|&k| wall_of(sectors[k].1).is_some()).collect();
    if wall_idx.is_empty() {
        // Only dielectrics around the point.
        let secs: Vec<Sector> = sectors.iter().map(|s| Sector { angle: s.0, permittivity: eps(s.1) }).collect();
        let distinct =
            secs.iter().any(|s| (s.permittivity - secs[0].permittivity).abs() > 1e-12 * secs[0].permittivity);
        if distinct {
            let regions =
                sectors.iter().filter_map(|s| if let Side::Region(r) = s.1 { Some(r) } else { None }).collect();
            consider(
                wedge_exponent(&secs, None, lambda_max),
                TAU,
                regions,
                SingularKind::DielectricCorner,
                dirs[0].0,
                secs.clone(),
                None,
            );
        }
    } else {
        // Runs of dielectric sectors between consecutive walls.
        for (w, &k0) in wall_idx.iter().enumerate() {
            let k1 = wall_idx[(w + 1) % wall_idx.len()];
            let start = bounding_wall(sectors[k0].1, dirs[(k0 + 1) % n].2);
            let end = bounding_wall(sectors[k1].1, dirs[k1].2);
            let mut secs = Vec::new();
            let mut regions = Vec::new();
            let mut k = (k0 + 1) % n;
            while k != k1 {
                secs.push(Sector { angle: sectors[k].0, permittivity: eps(sectors[k].1) });
                if let Side::Region(r) = sectors[k].1 {
                    regions.push(r);
                }
                k = (k + 1) % n;
            }
            if secs.is_empty() {
                continue;
            }
            let opening: f64 = secs.iter().map(|s| s.angle).sum();
            let has_cond = matches!(sectors[k0].1, Side::Conductor(_)) || matches!(sectors[k1].1, Side::Conductor(_));
            let multi =
                secs.iter().any(|s| (s.permittivity - secs[0].permittivity).abs() > 1e-12 * secs[0].permittivity);
            // A run that starts and ends at one zero-opening conductor sector goes round the
            // free end of a thin electrode.
            let thin_end = k0 == k1 && sectors[k0].0 == 0.0 && has_cond;
            let kind = match (has_cond, multi) {
                _ if thin_end => SingularKind::ThinEdge,
                (true, false) => SingularKind::ConductorCorner,
                (true, true) => SingularKind::TripleJunction,
                (false, _) => SingularKind::BoundaryCorner,
            };
            // A conical point on the axis: one dielectric between the axis and a
            // conductor follows the Legendre condition, not the planar wedge.
            let axis_to_conductor = on_axis
                && !multi
                && ((sectors[k0].1 == Side::Outside && matches!(sectors[k1].1, Side::Conductor(_)))
                    || (sectors[k1].1 == Side::Outside && matches!(sectors[k0].1, Side::Conductor(_))));
            let lam = if axis_to_conductor {
                conical_exponent(opening, lambda_max)
            } else {
                wedge_exponent(&secs, Some((start, end)), lambda_max)
            };
            consider(lam, opening, regions, kind, dirs[(k0 + 1) % n].0, secs, Some((start, end)));
        }
    }
    Ok(best)
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::PI;

    fn one(angle: f64) -> Vec<Sector> {
        vec![Sector { angle, permittivity: 1.0 }]
    }

    #[test]
    fn single_dielectric_wedges() {
        // Jackson §2.11: conducting wedge of opening θ₀ → λ = π/θ₀.
        for theta in [1.25 * PI, 1.5 * PI, 1.75 * PI, 2.0 * PI] {
            let l = wedge_exponent(&one(theta), Some((Wall::Potential, Wall::Potential)), 2.0).unwrap();
            assert!((l - PI / theta).abs() < 1e-12, "{theta}: {l}");
        }
        // Mixed walls: λ = π/(2θ₀) (Grisvard 1985, mixed Dirichlet–Neumann corner).
        let l = wedge_exponent(&one(PI), Some((Wall::Potential, Wall::ZeroFlux)), 2.0).unwrap();
        assert!((l - 0.5).abs() < 1e-12);
        // Flux–flux walls: λ = π/θ₀.
        let l = wedge_exponent(&one(1.5 * PI), Some((Wall::ZeroFlux, Wall::ZeroFlux)), 2.0).unwrap();
        assert!((l - 2.0 / 3.0).abs() < 1e-12);
    }

    #[test]
    fn equal_permittivity_split_changes_nothing() {
        // Two sectors α, β of equal permittivity behave as one wedge of α + β.
        let (a, b) = (0.6 * PI, 0.9 * PI);
        let s = vec![Sector { angle: a, permittivity: 3.0 }, Sector { angle: b, permittivity: 3.0 }];
        let l = wedge_exponent(&s, Some((Wall::Potential, Wall::Potential)), 2.0).unwrap();
        assert!((l - PI / (a + b)).abs() < 1e-12);
    }

    #[test]
    fn conical_exponent_against_an_independent_ode_solution() {
        // θ₀ = π/2 (a flat conductor face on the axis): P₁(0) = 0, ν = 1 (Jackson §3.4).
        assert!((conical_exponent(PI / 2.0, 2.0).unwrap() - 1.0).abs() < 1e-10);
        // Independent check: integrate the Legendre equation
        // Θ'' + cot θ·Θ' + ν(ν + 1)Θ = 0, Θ(0) = 1, Θ'(0) = 0 (RK4, series start near θ = 0)
        // and bisect on ν for Θ(θ₀) = 0.
        let theta_at = |nu: f64, t0: f64| -> f64 {
            let c = nu * (nu + 1.0);
            let mut t = 1e-4;
            let (mut y, mut yp) = (1.0 - c * t * t / 4.0, -c * t / 2.0);
            let n = 20_000;
            let h = (t0 - t) / n as f64;
            let f = |t: f64, y: f64, yp: f64| -> (f64, f64) { (yp, -yp / t.tan() - c * y) };
            for _ in 0..n {
                let (k1a, k1b) = f(t, y, yp);
                let (k2a, k2b) = f(t + h / 2.0, y + h / 2.0 * k1a, yp + h / 2.0 * k1b);
                let (k3a, k3b) = f(t + h / 2.0, y + h / 2.0 * k2a, yp + h / 2.0 * k2b);
                let (k4a, k4b) = f(t + h, y + h * k3a, yp + h * k3b);
                y += h / 6.0 * (k1a + 2.0 * k2a + 2.0 * k3a + k4a);
                yp += h / 6.0 * (k1b + 2.0 * k2b + 2.0 * k3b + k4b);
                t += h;
            }
            y
        };
        for t0 in [0.6 * PI, 0.75 * PI, 0.9 * PI] {
            let nu = conical_exponent(t0, 2.0).unwrap();
            let (mut l, mut r) = (1e-3, 1.0);
            for _ in 0..60 {
                let m = 0.5 * (l + r);
                if theta_at(m, t0).signum() == theta_at(l, t0).signum() {
                    l = m;
                } else {
                    r = m;
                }
            }
            assert!((nu - l).abs() < 1e-5, "θ₀ = {t0}: series {nu} vs ODE {l}");
            assert!(nu < 1.0);
        }
    }

    #[test]
    fn knife_edge_between_two_dielectrics() {
        // A thin electrode (θ₀ = 2π) lying in the plane interface between two dielectrics:
        // with Φ₁ = b₁ sin λφ and Φ₂ = b₂ sin λ(2π − φ), continuity at φ = π gives b₁ = b₂ and
        // the flux condition (ε₁ + ε₂) cos λπ = 0, so λ = 1/2 for any permittivities
        // (derived here by hand from the matching conditions).
        let s = vec![Sector { angle: PI, permittivity: 1.0 }, Sector { angle: PI, permittivity: 5.0 }];
        let l = wedge_exponent(&s, Some((Wall::Potential, Wall::Potential)), 2.0).unwrap();
        assert!((l - 0.5).abs() < 1e-12, "{l}");
    }
}
