//! Discharge inception in gas: field lines traced on the recovered field, the streamer
//! (ionisation-integral) criterion along each, and the voltage at which it is met.
//!
//! # Method
//! A streamer can start from an avalanche along a field line when
//!
//! ```text
//! ∫₀^{x_c} α_eff(|E(s)|/p) ds ≥ K,   α_eff = α − η (ionisation minus attachment),
//! ```
//!
//! the integral running from the electrode along the line over the stretch where α_eff > 0
//! (the avalanche region, of length x_c) — the Raether/Meek/Schumann criterion. α_eff and K are
//! a pair calibrated together on breakdown data and are never mixed across fits:
//! - dry air (Zaengl & Petcharaks 1994; Petcharaks 1995): α_eff/p = 1.6053·(E/p − 2.165)² −
//!   0.2873 mm⁻¹bar⁻¹ with E/p in kV/(mm·bar), zero at E/p ≈ 2.588, K = 9.15; it reproduces
//!   the uniform-field law U_b = 6.72·√(pd) + 24.36·(pd) kV (pd in bar·cm) within a few per
//!   cent over 1 mm – 10 cm at about 1 bar;
//! - SF6 (Pedersen 1970, 1989): α_eff/p = 27.7·(E/p − 8.88) mm⁻¹bar⁻¹ with E/p in
//!   kV/(mm·bar), K = 10.5; in a uniform field U_b = 88.8·(pd) + 0.38 kV (pd in bar·cm); valid
//!   up to about 1.5 times the critical E/p.
//!
//! (All recalled from memory, `../shared/TRADE.md` §1.6; the consistency of each pair with its
//! uniform-field law is checked by the tests.) The pressure is taken at 20 °C of the same
//! density, p₂₀ = p·293.15 K/T.
//!
//! Field lines start at points of the electrode surfaces in the gas and follow
//! dx/ds = ±E/|E| (the direction that enters the gas) through the recovered field — smooth
//! within a region, one degree better than the elements' own — by the Dormand–Prince 5(4)
//! pair with step control (Dormand & Prince 1980), the step at most half the local element
//! size so that the integrand is resolved, until the line leaves the gas region (a conductor,
//! another dielectric, the outer boundary) or reaches four times the model's size. Because
//! electrostatics is linear the lines are traced once, at the model's potentials; the
//! integral at a voltage scale k uses k·|E(s)|, and the inception scale k_inc, where the
//! weakest line's integral reaches K, is found by bisection (the integral grows with k).
//! The integral converges at sharp edges too, ∫r^(λ−1) dr being finite.
//!
//! # References
//! - H. Raether, *Electron Avalanches and Breakdown in Gases*, Butterworths 1964.
//! - A. Pedersen, "Criteria for spark breakdown in sulfur hexafluoride", IEEE Trans. PAS-89
//!   (1970) 2043–2048 (recalled from memory).
//! - W. S. Zaengl, K. Petcharaks, "Application of streamer breakdown criterion for inhomogeneous
//!   fields in dry air and SF6", *Gaseous Dielectrics VII*, Plenum 1994, 153–159 (recalled
//!   from memory).
//! - J. R. Dormand, P. J. Prince, "A family of embedded Runge–Kutta formulae", J. Comput. Appl.
//!   Math. 6 (1980) 19–26, doi:10.1016/0771-050X(80)90013-3.

use crate::estimate::PrimalRecovery;
use crate::probe::TriangleGrid;
use crate::solve::Solution;
use mesher::{Mesh, Xy};

/// Which gas.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum GasKind {
    /// Dry air.
    DryAir,
    /// Sulphur hexafluoride.
    Sf6,
}

/// A gas and its state.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Gas {
    /// Which gas.
    pub kind: GasKind,
    /// Absolute pressure, bar.
    pub pressure_bar: f64,
    /// Temperature, °C.
    pub temperature_c: f64,
}

/// E/p (kV/(mm·bar)) below which the dry-air fit's α_eff is negative: 2.165 + √(0.2873/1.6053).
const AIR_ZERO: f64 = 2.165 + 0.423_051_6;

impl Gas {
    /// The pressure at 20 °C of the same density, bar (p·293.15 K / T).
    pub fn reduced_pressure_bar(&self) -> f64 {
        self.pressure_bar * 293.15 / (273.15 + self.temperature_c)
    }

    /// The effective ionisation coefficient α_eff = α − η at field `e` (V/m), 1/m (negative
    /// where attachment wins). Dry air below E/p = 2.165 kV/(mm·bar), where the fitted
    /// parabola turns up again, takes the fit's least value.
    pub fn effective_ionisation(&self, e: f64) -> f64 {
        let p = self.reduced_pressure_bar();
        let x = e.abs() / 1e6 / p; // kV/(mm·bar)
        let per_mm_bar = match self.kind {
            GasKind::DryAir => 1.6053 * (x.max(2.165) - 2.165).powi(2) - 0.2873,
            GasKind::Sf6 => 27.7 * (x - 8.88),
        };
        per_mm_bar * p * 1e3
    }

    /// The field (V/m) above which α_eff > 0.
    pub fn critical_field(&self) -> f64 {
        let x = match self.kind {
            GasKind::DryAir => AIR_ZERO,
            GasKind::Sf6 => 8.88,
        };
        x * 1e6 * self.reduced_pressure_bar()
    }

    /// The streamer constant K calibrated with this gas's α_eff.
    pub fn streamer_constant(&self) -> f64 {
        match self.kind {
            GasKind::DryAir => 9.15,
            GasKind::Sf6 => 10.5,
        }
    }

    /// The voltage at which the criterion is met in a uniform gap of `d` metres:
    /// α_eff(U/d)·d = K, by bisection.
    pub fn uniform_inception_voltage(&self, d: f64) -> f64 {
        let k = self.streamer_constant();
        let (mut lo, mut hi) = (self.critical_field(), self.critical_field() * 2.0);
        while self.effective_ionisation(hi) * d < k {
            hi *= 2.0;
        }
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            if self.effective_ionisation(mid) * d < k {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        0.5 * (lo + hi) * d
    }
}

/// How a field line ends.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum LineEnd {
    /// It left the region (at a conductor, another dielectric or the outer boundary).
    LeftRegion,
    /// The field vanished (a stagnation point).
    Stagnation,
    /// It reached the length limit.
    LengthLimit,
}

/// A traced field line, at the model's potentials.
#[derive(Clone, Debug, PartialEq)]
pub struct FieldLine {
    /// Arc length of each point, metres.
    pub s: Vec<f64>,
    /// The points, metres.
    pub at: Vec<Xy>,
    /// |E| at each point, V/m (the recovered field).
    pub e: Vec<f64>,
    /// The potential at each point, V.
    pub v: Vec<f64>,
    /// How it ends.
    pub end: LineEnd,
}

impl FieldLine {
    /// The ionisation integral ∫ α_eff(k·|E|) ds from the start over the stretch where
    /// α_eff > 0, and that stretch's length x_c (metres), at voltage scale `k`.
    pub fn ionisation_integral(&self, gas: &Gas, k: f64) -> (f64, f64) {
        let mut sum = 0.0;
        let alpha = |i: usize| gas.effective_ionisation(k * self.e[i]);
        if self.e.is_empty() || alpha(0) <= 0.0 {
            return (0.0, 0.0);
        }
        for i in 1..self.e.len() {
            let (a0, a1) = (alpha(i - 1), alpha(i));
            let ds = self.s[i] - self.s[i - 1];
            if a1 <= 0.0 {
                // The avalanche region ends inside this step: up to the zero, linearly.
                let f = a0 / (a0 - a1);
                return (sum + 0.5 * a0 * f * ds, self.s[i - 1] + f * ds);
            }
            sum += 0.5 * (a0 + a1) * ds;
        }
        (sum, *self.s.last().unwrap_or(&0.0))
    }

    /// The voltage scale at which the ionisation integral reaches the gas's streamer constant
    /// (None if it does not within a factor 10⁶ of the largest field's critical scale).
    pub fn inception_scale(&self, gas: &Gas) -> Option<f64> {
        let e_max = self.e.iter().copied().fold(0.0, f64::max);
        if e_max <= 0.0 {
            return None;
        }
        let target = gas.streamer_constant();
        let mut lo = gas.critical_field() / e_max;
        let mut hi = 2.0 * lo;
        while self.ionisation_integral(gas, hi).0 < target {
            hi *= 2.0;
            if hi > 1e6 * lo {
                return None;
            }
        }
        for _ in 0..100 {
            let mid = (lo * hi).sqrt();
            if self.ionisation_integral(gas, mid).0 < target {
                lo = mid;
            } else {
                hi = mid;
            }
            if hi - lo <= 1e-13 * hi {
                break;
            }
        }
        Some((lo * hi).sqrt())
    }
}

/// The recovered field of one region at any point.
struct RegionField<'a> {
    mesh: &'a Mesh,
    region: u32,
    grid: TriangleGrid,
    primal: &'a PrimalRecovery,
    potential: &'a [f64],
}

impl RegionField<'_> {
    /// E at `p` and the local element size, if `p` lies in the region.
    fn at(&self, p: Xy) -> Option<([f64; 2], f64)> {
        let (t, xi, eta) = self.grid.locate_where(self.mesh, p, |t| self.mesh.regions[t] == self.region)?;
        let rec = self.primal.field(self.potential);
        let (e, _) = rec.fields_at(self.mesh, &self.primal.quad, t, xi, eta);
        Some((e, (2.0 * self.mesh.triangle_area(t).abs()).sqrt()))
    }

    /// The potential at `p` (NaN outside the region).
    fn potential_at(&self, p: Xy) -> f64 {
        self.grid
            .locate_where(self.mesh, p, |t| self.mesh.regions[t] == self.region)
            .map_or(f64::NAN, |(t, xi, eta)| crate::fields::eval_point(self.mesh, self.potential, t, xi, eta).v)
    }
}

/// Dormand–Prince 5(4) coefficients.
const A: [[f64; 6]; 6] = [
    [1.0 / 5.0, 0.0, 0.0, 0.0, 0.0, 0.0],
    [3.0 / 40.0, 9.0 / 40.0, 0.0, 0.0, 0.0, 0.0],
    [44.0 / 45.0, -56.0 / 15.0, 32.0 / 9.0, 0.0, 0.0, 0.0],
    [19372.0 / 6561.0, -25360.0 / 2187.0, 64448.0 / 6561.0, -212.0 / 729.0, 0.0, 0.0],
    [9017.0 / 3168.0, -355.0 / 33.0, 46732.0 / 5247.0, 49.0 / 176.0, -5103.0 / 18656.0, 0.0],
    [35.0 / 384.0, 0.0, 500.0 / 1113.0, 125.0 / 192.0, -2187.0 / 6784.0, 11.0 / 84.0],
];
/// Fifth-order weights (the last row of `A`) minus the embedded fourth-order ones.
const ERR: [f64; 7] =
    [71.0 / 57600.0, 0.0, -71.0 / 16695.0, 71.0 / 1920.0, -17253.0 / 339200.0, 22.0 / 525.0, -1.0 / 40.0];

/// Up to `count` starting points for field lines in `region`: the vertices of conductor
/// surfaces bordering the region with the highest |E| (the region's recovered field), each
/// at least `separation` metres from the higher ones.
///
/// # Panics
/// If the solution does not belong to the mesh.
#[track_caller]
pub fn field_line_starts(mesh: &Mesh, solution: &Solution, region: u32, count: usize, separation: f64) -> Vec<Xy> {
    assert_eq!(solution.potential.len(), mesh.nodes.len(), "solution and mesh do not match");
    field_line_starts_with(mesh, solution, &PrimalRecovery::new(mesh, &solution.potential), region, count, separation)
}

/// [`field_line_starts`] with the solution's recovery already made.
pub(crate) fn field_line_starts_with(
    mesh: &Mesh,
    solution: &Solution,
    primal: &PrimalRecovery,
    region: u32,
    count: usize,
    separation: f64,
) -> Vec<Xy> {
    let values = crate::fields::region_vertex_values(mesh, solution, primal);
    let mut on_conductor = vec![false; mesh.nodes.len()];
    for e in &mesh.edges {
        if let mesher::EdgeTag::Conductor(_) = e.tag {
            on_conductor[e.nodes[0] as usize] = true;
            on_conductor[e.nodes[1] as usize] = true;
        }
    }
    let mut candidates: Vec<(f64, Xy)> = values
        .iter()
        .filter(|(g, v)| g.region == region && on_conductor[g.node as usize] && v.is_finite() && *v > 0.0)
        .map(|(g, v)| (*v, mesh.nodes[g.node as usize]))
        .collect();
    candidates.sort_by(|a, b| b.0.total_cmp(&a.0));
    let mut out: Vec<Xy> = Vec::new();
    for (_, p) in candidates {
        if out.len() >= count {
            break;
        }
        if out.iter().all(|q| (p[0] - q[0]).hypot(p[1] - q[1]) >= separation) {
            out.push(p);
        }
    }
    out
}

/// Traces a field line in `region` from each of `starts` (points of an electrode surface or
/// inside the region), in the direction along ±E that enters the region.
///
/// # Panics
/// If the solution does not belong to the mesh.
#[track_caller]
pub fn trace_field_lines(mesh: &Mesh, solution: &Solution, region: u32, starts: &[Xy]) -> Vec<FieldLine> {
    assert_eq!(solution.potential.len(), mesh.nodes.len(), "solution and mesh do not match");
    trace_field_lines_with(mesh, solution, &PrimalRecovery::new(mesh, &solution.potential), region, starts)
}

/// [`trace_field_lines`] with the solution's recovery already made.
pub(crate) fn trace_field_lines_with(
    mesh: &Mesh,
    solution: &Solution,
    primal: &PrimalRecovery,
    region: u32,
    starts: &[Xy],
) -> Vec<FieldLine> {
    let field = RegionField { mesh, region, grid: TriangleGrid::new(mesh), primal, potential: &solution.potential };
    let max_len = 4.0 * mesh.scale();
    starts
        .iter()
        .filter_map(|&p| trace_one(&field, p, max_len))
        .map(|mut l| {
            l.v = l.at.iter().map(|&p| field.potential_at(p)).collect();
            l
        })
        .collect()
}

/// One line from `p0`; None if `p0` is not in the region or the field vanishes there.
fn trace_one(field: &RegionField<'_>, p0: Xy, max_len: f64) -> Option<FieldLine> {
    let (e0, h0) = field.at(p0)?;
    let n0 = e0[0].hypot(e0[1]);
    if n0 == 0.0 {
        return None;
    }
    // The sign that enters the region: a small step along +E or −E.
    let probe = |sign: f64| {
        let d = 1e-3 * h0;
        field.at([p0[0] + sign * d * e0[0] / n0, p0[1] + sign * d * e0[1] / n0]).is_some()
    };
    let sign = if probe(1.0) {
        1.0
    } else if probe(-1.0) {
        -1.0
    } else {
        return None;
    };
    let dir = |p: Xy| -> Option<([f64; 2], f64, f64)> {
        let (e, h) = field.at(p)?;
        let n = e[0].hypot(e[1]);
        (n > 0.0).then(|| ([sign * e[0] / n, sign * e[1] / n], n, h))
    };
    let mut line = FieldLine { s: vec![0.0], at: vec![p0], e: vec![n0], v: Vec::new(), end: LineEnd::LengthLimit };
    let (mut p, mut s) = (p0, 0.0);
    let mut step = 0.1 * h0;
    let (mut f0, _, mut h) = dir(p)?;
    let mut guard = 0usize;
    while s < max_len {
        guard += 1;
        if guard > 200_000 {
            break;
        }
        let tol = 1e-4 * h;
        step = step.min(0.5 * h);
        // The stages; a stage outside the region shortens the step.
        let mut k = [[0.0; 2]; 7];
        k[0] = f0;
        let mut inside = true;
        for i in 1..7 {
            let mut q = p;
            for (j, kj) in k.iter().enumerate().take(i) {
                q[0] += step * A[i - 1][j] * kj[0];
                q[1] += step * A[i - 1][j] * kj[1];
            }
            match dir(q) {
                Some((f, _, _)) => k[i] = f,
                None => {
                    inside = false;
                    break;
                }
            }
        }
        if !inside {
            if step < 1e-6 * h {
                line.end = LineEnd::LeftRegion;
                break;
            }
            step *= 0.25;
            continue;
        }
        // The fifth-order solution is the last stage's point (FSAL).
        let mut q = p;
        for j in 0..6 {
            q[0] += step * A[5][j] * k[j][0];
            q[1] += step * A[5][j] * k[j][1];
        }
        let err = {
            let (mut ex, mut ey) = (0.0, 0.0);
            for j in 0..7 {
                ex += step * ERR[j] * k[j][0];
                ey += step * ERR[j] * k[j][1];
            }
            ex.hypot(ey)
        };
        if err > tol {
            step *= (0.9 * (tol / err).powf(0.2)).clamp(0.1, 0.9);
            continue;
        }
        // Accepted: the chord's midpoint sample resolves the integrand between steps.
        let mid = [0.5 * (p[0] + q[0]), 0.5 * (p[1] + q[1])];
        let Some((fq, nq, hq)) = dir(q) else {
            line.end = LineEnd::LeftRegion;
            break;
        };
        if let Some((_, nm, _)) = dir(mid) {
            line.s.push(s + 0.5 * step);
            line.at.push(mid);
            line.e.push(nm);
        }
        s += step;
        p = q;
        line.s.push(s);
        line.at.push(p);
        line.e.push(nq);
        if nq < 1e-9 * n0 {
            line.end = LineEnd::Stagnation;
            break;
        }
        f0 = fq;
        h = hq;
        step *= if err > 0.0 { (0.9 * (tol / err).powf(0.2)).clamp(1.0, 4.0) } else { 4.0 };
    }
    Some(line)
}
