//! The few highest separate local peaks of |E| in each region, and where each one sits.

use crate::estimate::PrimalRecovery;
use crate::fields::region_vertex_values;
use crate::solve::Solution;
use mesher::{EdgeTag, Mesh, Xy};

/// What a peak's vertex lies on.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum PeakSite {
    /// Inside the region.
    Inside,
    /// On the interface with another dielectric region (shape index): the peak is the
    /// value on this region's side.
    Interface {
        /// The region on the other side.
        other: u32,
    },
    /// On the surface of a conductor (index): the value on the dielectric side.
    Conductor {
        /// The conductor.
        conductor: u32,
    },
    /// On the outer boundary of the domain.
    OuterBoundary,
    /// On the symmetry axis of an axisymmetric model.
    Axis,
}

/// One local maximum of |E| in a region.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LocalPeak {
    /// Region (shape index).
    pub region: u32,
    /// |E| there, V/m (the region's recovered field at the vertex).
    pub e_v_per_m: f64,
    /// Where, metres.
    pub at: Xy,
    /// The vertex.
    pub node: u32,
    /// What the vertex lies on.
    pub site: PeakSite,
}

/// Up to `per_region` local maxima of |E| in every region, highest first, each at least
/// `separation` metres from the higher ones of its region, vertices inside the `discs`
/// (centre, radius: see [`crate::exclusion_discs`]) left out.
///
/// A vertex is a local maximum of its region when its value is at least that of every
/// neighbouring vertex of the region's triangles. The values are those behind the region
/// peaks ([`crate::region_peaks_away_from`]): the recovered field, per region (never
/// averaged across an interface), so a vertex on an interface has one value per side and
/// the peak belongs to the side whose region it is listed under. The first peak of a region
/// is its largest vertex value; the region peak of `region_peaks_away_from` may lie a little
/// higher, between vertices or on a disc's rim, where it is polished.
///
/// # Panics
/// If the solution does not belong to the mesh.
#[track_caller]
pub fn local_peaks(
    mesh: &Mesh,
    solution: &Solution,
    discs: &[(Xy, f64)],
    per_region: usize,
    separation: f64,
) -> Vec<LocalPeak> {
    assert_eq!(solution.potential.len(), mesh.nodes.len(), "solution and mesh do not match");
    local_peaks_with(mesh, solution, &PrimalRecovery::new(mesh, &solution.potential), discs, per_region, separation)
}

/// [`local_peaks`] with the solution's recovery already made.
pub(crate) fn local_peaks_with(
    mesh: &Mesh,
    solution: &Solution,
    primal: &PrimalRecovery,
    discs: &[(Xy, f64)],
    per_region: usize,
    separation: f64,
) -> Vec<LocalPeak> {
    let values = region_vertex_values(mesh, solution, primal);
    let value_of = |node: u32, region: u32| {
        values.binary_search_by_key(&(node, region), |(g, _)| (g.node, g.region)).ok().map(|k| values[k].1)
    };
    let inside_disc = |p: Xy| crate::fields::in_exclusion_disc(discs, p);
    // A vertex is a local maximum until a neighbour in the same region beats it.
    let mut is_max = vec![true; values.len()];
    for (t, tri) in mesh.triangles.iter().enumerate() {
        let region = mesh.regions[t];
        for i in 0..3 {
            let (a, b) = (tri[i], tri[(i + 1) % 3]);
            let (Some(va), Some(vb)) = (value_of(a, region), value_of(b, region)) else { continue };
            let (lose, _) = if va < vb {
                (a, b)
            } else if vb < va {
                (b, a)
            } else {
                continue;
            };
            if let Ok(k) = values.binary_search_by_key(&(lose, region), |(g, _)| (g.node, g.region)) {
                is_max[k] = false;
            }
        }
    }
    let mut candidates: Vec<(u32, f64, u32)> = values
        .iter()
        .zip(&is_max)
        .filter(|(_, &m)| m)
        .map(|((g, v), _)| (g.region, *v, g.node))
        .filter(|&(r, v, n)| {
            v.is_finite()
                && v > 0.0
                && mesh.exterior.is_none_or(|e| e.region != r)
                && !inside_disc(mesh.nodes[n as usize])
        })
        .collect();
    candidates.sort_by(|a, b| a.0.cmp(&b.0).then(b.1.total_cmp(&a.1)));
    let mut out: Vec<LocalPeak> = Vec::new();
    for (region, value, node) in candidates {
        let at = mesh.nodes[node as usize];
        let mine = out.iter().filter(|p| p.region == region);
        if mine.clone().count() >= per_region
            || mine.clone().any(|p| (p.at[0] - at[0]).hypot(p.at[1] - at[1]) < separation)
        {
            continue;
        }
        out.push(LocalPeak { region, e_v_per_m: value, at, node, site: site_of(mesh, node, region) });
    }
    out
}

/// What vertex `node` of `region` lies on: a conductor first, then an interface, the outer
/// boundary, the axis.
fn site_of(mesh: &Mesh, node: u32, region: u32) -> PeakSite {
    let mut site = PeakSite::Inside;
    let rank = |s: &PeakSite| match s {
        PeakSite::Conductor { .. } => 4,
        PeakSite::Interface { .. } => 3,
        PeakSite::OuterBoundary => 2,
        PeakSite::Axis => 1,
        PeakSite::Inside => 0,
    };
    for e in mesh.edges.iter().filter(|e| e.nodes.contains(&node)) {
        let s = match e.tag {
            EdgeTag::Conductor(c) => PeakSite::Conductor { conductor: c },
            EdgeTag::Interface(a, b) if a == region || b == region => {
                PeakSite::Interface { other: if a == region { b } else { a } }
            }
            EdgeTag::Interface(..) => continue,
            EdgeTag::Outer => PeakSite::OuterBoundary,
            EdgeTag::Axis => PeakSite::Axis,
        };
        if rank(&s) > rank(&site) {
            site = s;
        }
    }
    site
}
