//! Tangential field, potential drop and its running mean along an interface path.

use crate::probe::InterfaceSample;
use mesher::Xy;

/// One sample of a creepage path.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CreepageRow {
    /// The chain the sample belongs to (an interface may be several separate chains of
    /// edges: the two flanks of an insulator, say), numbered from 0.
    pub chain: usize,
    /// Arc length from its chain's start (the chain's first vertex), metres.
    pub s: f64,
    /// Position, metres.
    pub at: Xy,
    /// Potential, V.
    pub potential: f64,
    /// ΔV(s) = V(s) − V(start), V (V(start) the nodal potential of the chain's first vertex).
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

/// One chain of an interface: its length and potential drop (last vertex minus first,
/// nodal values).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CreepageChain {
    /// Length, metres.
    pub length_m: f64,
    /// Potential drop from its first vertex to its last, V.
    pub potential_drop_v: f64,
}

/// The creepage figures of one interface path.
#[derive(Clone, Debug, PartialEq)]
pub struct CreepagePath {
    /// The samples in path order.
    pub rows: Vec<CreepageRow>,
    /// The chains of edges, in order.
    pub chains: Vec<CreepageChain>,
    /// Total length of the chains, metres.
    pub length_m: f64,
    /// The largest |potential drop| of a chain, V.
    pub potential_drop_v: f64,
    /// Largest |E_t| over the counted samples, V/m, with its chain, arc length and position.
    pub e_t_max: (f64, usize, f64, Xy),
    /// Largest running mean over the counted samples, V/m, with its chain and arc length.
    pub running_mean_max: (f64, usize, f64),
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
/// it is exact where the potential is, whatever the tangential field's sampling. An
/// interface may consist of several chains of edges (the two flanks of an insulator); each
/// runs from its first vertex to its last, so the whole drop between two electrodes it joins
/// is counted, and the running mean starts afresh on each.
pub fn creepage_path(samples: &[InterfaceSample], counted: impl Fn(Xy) -> bool) -> CreepagePath {
    let mut rows = Vec::with_capacity(samples.len());
    let mut chains: Vec<CreepageChain> = Vec::new();
    let mut e_t_max = (0.0, 0, 0.0, [0.0; 2]);
    let mut running_mean_max = (0.0, 0, 0.0);
    // Chain start: (arc length of its first vertex along the probe, its potential).
    let mut start = (0.0, 0.0);
    let mut prev_end = f64::NEG_INFINITY;
    for r in samples {
        let begin = r.s - 0.5 * r.edge_length;
        // A sample whose edge does not start where the previous one ended opens a chain
        // (the probe counts the jump between chains in its arc length).
        if chains.is_empty() || begin > prev_end + 1e-9 * r.edge_length.max(f64::MIN_POSITIVE) {
            chains.push(CreepageChain { length_m: 0.0, potential_drop_v: 0.0 });
            start = (begin, r.ends[0]);
        }
        prev_end = r.s + 0.5 * r.edge_length;
        let chain = chains.len() - 1;
        chains[chain] = CreepageChain { length_m: prev_end - start.0, potential_drop_v: r.ends[1] - start.1 };
        let e_t = match &r.second {
            Some(b) => 0.5 * (r.first.e_t + b.e_t),
            None => r.first.e_t,
        };
        let s = r.s - start.0;
        let drop = r.potential - start.1;
        let running_mean = if s > 0.0 { drop.abs() / s } else { 0.0 };
        let ok = counted(r.at);
        if ok && e_t.abs() > e_t_max.0 {
            e_t_max = (e_t.abs(), chain, s, r.at);
        }
        if ok && running_mean > running_mean_max.0 {
            running_mean_max = (running_mean, chain, s);
        }
        rows.push(CreepageRow {
            chain,
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
        length_m: chains.iter().map(|c| c.length_m).sum(),
        potential_drop_v: chains.iter().map(|c| c.potential_drop_v.abs()).fold(0.0, f64::max),
        chains,
        rows,
        e_t_max,
        running_mean_max,
    }
}
