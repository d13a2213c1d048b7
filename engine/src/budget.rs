//! How much memory a solve needs, per unknown, from measured runs: lets the front end turn
//! a memory budget into a node budget before anything is meshed.
//!
//! The figures are the peak resident memory of whole `fieldgrade` runs divided by the
//! unknowns of their (final) mesh, measured on the bushing demo meshed uniformly
//! (2026-12-03, `bench-results/solve.md`): `solve` with quadratic elements 1.00 kB at
//! 4.3·10⁵ unknowns and 1.18 kB at 1.6·10⁶; with linear elements 1.35 kB at 1.1·10⁵ and
//! 1.23 kB at 4.1·10⁵ (the mesh is a larger share: four times the triangles per unknown);
//! the adaptive `check` with quadratic elements 1.7 kB at 5.6·10⁵ and 7.5·10⁵ (it keeps the
//! previous mesh, the size plan and the dual fields of the watched quantities). The
//! factor's fill per unknown grows like log N under nested dissection: about 9 % per
//! doubling of the unknowns in the quadratic runs above, so the per-unknown figure is
//! raised by a tenth per doubling beyond 10⁶.

/// Peak bytes per unknown at 10⁶ unknowns and below, by element order and whether the run
/// is the adaptive loop (measured; module docs). The linear adaptive figure is the
/// quadratic ratio between `check` and `solve` (1.5) applied to the linear `solve`: not
/// measured on its own.
fn base_bytes_per_unknown(order: u8, adaptive: bool) -> f64 {
    match (order >= 2, adaptive) {
        (true, false) => 1.2e3,
        (true, true) => 1.8e3,
        (false, false) => 1.4e3,
        (false, true) => 2.1e3,
    }
}

/// Unknowns per mesh vertex: one for linear elements; about four for quadratic ones (a
/// vertex and 1.5 edges per triangle, two triangles per vertex).
pub fn unknowns_per_vertex(order: u8) -> f64 {
    if order >= 2 {
        4.0
    } else {
        1.0
    }
}

/// Predicted peak memory, bytes, of a run with `unknowns` unknowns (module docs).
pub fn predicted_memory_bytes(unknowns: f64, order: u8, adaptive: bool) -> f64 {
    let doublings = (unknowns / 1e6).max(1.0).log2();
    unknowns * base_bytes_per_unknown(order, adaptive) * (1.0 + 0.1 * doublings)
}

/// The most unknowns a run may have within `bytes` (the inverse of
/// [`predicted_memory_bytes`], by bisection).
pub fn unknowns_within(bytes: f64, order: u8, adaptive: bool) -> f64 {
    let (mut lo, mut hi) = (0.0f64, bytes / base_bytes_per_unknown(order, adaptive));
    for _ in 0..60 {
        let mid = 0.5 * (lo + hi);
        if predicted_memory_bytes(mid, order, adaptive) <= bytes {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    lo
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn inverse_of_the_prediction() {
        for n in [1e4, 1e6, 3e7] {
            for (order, adaptive) in [(1, false), (2, true)] {
                let b = predicted_memory_bytes(n, order, adaptive);
                assert!((unknowns_within(b, order, adaptive) / n - 1.0).abs() < 1e-9);
            }
        }
        // The measured point it was fitted to (module docs): 1.64·10⁶ quadratic unknowns
        // took 1.93 GB.
        let b = predicted_memory_bytes(1.64e6, 2, false);
        assert!((1.9e9..2.3e9).contains(&b), "{b}");
    }
}
