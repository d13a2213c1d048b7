//! Tangential field, potential drop and its running mean along an interface path.

use crate::probe::InterfaceSample;
use mesher::Xy;

/// One sample of a creepage path.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CreepageRow {
    /// Arc length from the path's start (the first edge's start vertex), metres.
    pub s: f64,
    /// Position, metres.
    pub at: Xy,
    /// Potential, V.
    pub potential: f64,
    /// ΔV(s) = V(s) − V(start), V (V(start) the nodal potential of the path's first vertex).
    pub drop: f64,
    /// Tangential field E_t (the mean of the two sides', which agree across a charge-free
    /// interface up to the discretisation), V/m.
    pub e_t: f64,
    /// Normal field on the first and the second side, V/m (NaN where there is no second
    /// side).
    pub e_n: [f64; 2],
    /// Running mean |ΔV(s)|/s, V/m (0 at the start).
    pub running_mean: f64,
    /// The sample lies outside every exclusion disc (counts for the maxima).
    pub counted: bool,
}

/// The creepage figures of one interface path.
#[derive(Clone, Debug, PartialEq)]
pub struct CreepagePath {
    /// The samples in path order.
    pub rows: Vec<CreepageRow>,
    /// Path length (first to last vertex), metres.
    pub length_m: f64,
    /// Potential drop along the whole path (last vertex minus first, nodal values), V.
    pub potential_drop_v: f64,
    /// Largest |E_t| over the counted samples, V/m, with its arc length and position.
    pub e_t_max: (f64, f64, Xy),
    /// Largest running mean over the counted samples, V/m, with its arc length.
    pub running_mean_max: (f64, f64),
}

/// The creepage figures of an interface or surface path from its samples
/// ([`crate::probe_interface`]); samples whose position `counted` rejects (inside the discs
/// around singular points, where E_t is mesh-dependent) stay in the rows but do not count for
/// the maxima.
///
/// E_t along the path, the accumulated potential drop ΔV(s) = ∫E_t ds = V(s) − V(start),
/// and the cumulative mean E_cum(s) = |ΔV(s)|/s, which creep-withstand curves of the form
/// E_w = A·ℓ^(−n) are compared with (`../shared/TRADE.md` §1.2 and §1.8: Moser & Dahinden
/// 1987 and Hekmati 2017, recalled from memory). ΔV is read from the potential itself, so
/// it is exact where the potential is, whatever the tangential field's sampling; the path
/// runs from the first edge's start vertex to the last edge's end vertex, so the whole drop
/// between two electrodes it joins is counted.
pub fn creepage_path(samples: &[InterfaceSample], counted: impl Fn(Xy) -> bool) -> CreepagePath {
    let v0 = samples.first().map_or(0.0, |r| r.ends[0]);
    let mut rows = Vec::with_capacity(samples.len());
    let mut e_t_max = (0.0, 0.0, [0.0; 2]);
    let mut running_mean_max = (0.0, 0.0);
    for r in samples {
        let e_t = match &r.second {
            Some(b) => 0.5 * (r.first.e_t + b.e_t),
            None => r.first.e_t,
        };
        let s = r.s;
        let drop = r.potential - v0;
        let running_mean = if s > 0.0 { drop.abs() / s } else { 0.0 };
        let ok = counted(r.at);
        if ok && e_t.abs() > e_t_max.0 {
            e_t_max = (e_t.abs(), s, r.at);
        }
        if ok && running_mean > running_mean_max.0 {
            running_mean_max = (running_mean, s);
        }
        rows.push(CreepageRow {
            s,
            at: r.at,
            potential: r.potential,
            drop,
            e_t,
            e_n: [r.first.e_n, r.second.as_ref().map_or(f64::NAN, |b| b.e_n)],
            running_mean,
            counted: ok,
        });
    }
    CreepagePath {
        length_m: samples.last().map_or(0.0, |r| r.s + 0.5 * r.edge_length),
        potential_drop_v: samples.last().map_or(0.0, |r| r.ends[1] - v0),
        rows,
        e_t_max,
        running_mean_max,
    }
}
