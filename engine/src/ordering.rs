//! Fill-reducing ordering for the sparse Cholesky factorisation: geometric nested
//! dissection from the mesh coordinates.
//!
//! # Algorithm
//! The unknowns are split recursively by coordinate bisection: the set is cut at the median
//! of its longer bounding-box side, and the vertex separator is a minimum vertex cover of
//! the couplings that cross the cut (maximum bipartite matching, then König's
//! construction). A greedy cover came out up to twice as thick on P2 meshes, whose element
//! cliques make a straight cut cross a band of couplings; the exact cover made P2 nested
//! dissection beat AMD as well (`bench-results/solve.md`). Each half is ordered
//! recursively, then the separator is numbered last. Sets below 16 unknowns are numbered as
//! they come (leaf sizes 8–64 change the factor's flops by under 1 %). On a planar mesh of N
//! unknowns the separators have O(√N) members, which bounds the factor's fill at
//! O(N log N) and its work at O(N^(3/2)) (George 1973; Lipton, Rose & Tarjan 1979). Unknowns
//! without a single position (a floating conductor's shared potential) couple to many
//! others and are numbered very last. Trying the two diagonals as well as the axes at every
//! large set changed the flops by under 1 % for four times the ordering time, so it is not
//! done.
//!
//! PERF: kept over faer's own ordering (approximate minimum degree) because it factors
//! faster on every size measured, by more as the mesh grows (`cargo bench -p engine --bench
//! solve`, `bench-results/solve.md`, one process per row): numeric factorisation with this
//! ordering / with AMD 0.88 (P1) and 0.87 (P2) at 10⁵ unknowns, 0.45 (P1) and 0.48 (P2) at
//! 10⁶; factor flops 0.44–0.76 of AMD's; ordering plus symbolic plus numeric plus solve
//! 0.65–0.84 of faer's with AMD. Re-measure before replacing it.
//!
//! # References
//! - P. R. Amestoy, T. A. Davis, I. S. Duff, "An approximate minimum degree ordering
//!   algorithm", SIAM J. Matrix Anal. Appl. 17 (1996) 886–905, doi:10.1137/S0895479894278952
//!   (faer's default ordering, the one compared against).
//! - D. Kőnig, "Gráfok és mátrixok", Matematikai és Fizikai Lapok 38 (1931) 116–119
//!   (minimum vertex cover = maximum matching in a bipartite graph).
//! - A. George, "Nested dissection of a regular finite element mesh", SIAM J. Numer. Anal.
//!   10 (1973) 345–363, doi:10.1137/0710032.
//! - R. J. Lipton, D. J. Rose, R. E. Tarjan, "Generalized nested dissection", SIAM J.
//!   Numer. Anal. 16 (1979) 346–358, doi:10.1137/0716027.
//!
//! # Complexity
//! O(N log N) time (a median selection and a neighbour scan per level), O(N) memory.

/// Computes a permutation `fwd` (new position → old index) and its inverse for a symmetric
/// matrix given by its lower-triangle pattern (`col_ptr`, `row_idx`, CSC), with a position
/// per unknown (`None` for unknowns to be numbered last).
///
/// # Panics
/// If the pattern and the positions disagree in size.
#[track_caller]
pub fn nested_dissection(col_ptr: &[usize], row_idx: &[usize], pos: &[Option<[f64; 2]>]) -> (Vec<usize>, Vec<usize>) {
    let n = pos.len();
    assert_eq!(col_ptr.len(), n + 1, "pattern and positions disagree");
    // Symmetric adjacency (both triangles) as CSR.
    let mut deg = vec![0usize; n + 1];
    for j in 0..n {
        for &i in &row_idx[col_ptr[j]..col_ptr[j + 1]] {
            if i != j {
                deg[i + 1] += 1;
                deg[j + 1] += 1;
            }
        }
    }
    for k in 0..n {
        deg[k + 1] += deg[k];
    }
    let mut fill = deg.clone();
    let mut adj = vec![0usize; deg[n]];
    for j in 0..n {
        for &i in &row_idx[col_ptr[j]..col_ptr[j + 1]] {
            if i != j {
                adj[fill[i]] = j;
                fill[i] += 1;
                adj[fill[j]] = i;
                fill[j] += 1;
            }
        }
    }
    // Sets carry their coordinates, so that the median selections read contiguous memory.
    let mut placed = Vec::with_capacity(n);
    let mut last = Vec::new();
    for (k, p) in pos.iter().enumerate() {
        match p {
            Some(p) => placed.push(Item { p: *p, k }),
            None => last.push(k),
        }
    }
    let mut order = Vec::with_capacity(n);
    // side[k]: 0 outside the current set, 1 lower half, 2 upper half, 3 separator.
    let mut side = vec![0u8; n];
    let mut work = CoverWork::new(n);
    let mut stack = vec![(placed, false)];
    // Iterative post-order: a set is split into (lower, upper, separator); the separator
    // must be emitted after both halves, so it is pushed first with a "done" flag.
    while let Some((mut set, emit)) = stack.pop() {
        if emit || set.len() < 16 {
            order.extend(set.iter().map(|it| it.k));
            continue;
        }
        split(&mut set, &adj, &deg, &mut side, &mut work);
        let mid = set.len() / 2;
        let mut lower = Vec::with_capacity(mid);
        let mut upper = Vec::with_capacity(set.len() - mid);
        let mut sep = Vec::new();
        for it in set {
            match side[it.k] {
                1 => lower.push(it),
                2 => upper.push(it),
                _ => sep.push(it),
            }
            side[it.k] = 0;
        }
        stack.push((sep, true));
        stack.push((upper, false));
        stack.push((lower, false));
    }
    order.extend_from_slice(&last);
    let mut inv = vec![0usize; n];
    for (new, &old) in order.iter().enumerate() {
        inv[old] = new;
    }
    (order, inv)
}

/// An unknown with its position.
#[derive(Clone, Copy)]
struct Item {
    p: [f64; 2],
    k: usize,
}

/// Splits `set` at the median coordinate along the longer side of its bounding box (side 1
/// below, 2 above) and marks a minimum vertex cover of the cut (side 3).
fn split(set: &mut [Item], adj: &[usize], deg: &[usize], side: &mut [u8], work: &mut CoverWork) {
    let mut bb = [f64::INFINITY, f64::INFINITY, f64::NEG_INFINITY, f64::NEG_INFINITY];
    for it in set.iter() {
        let p = it.p;
        bb = [bb[0].min(p[0]), bb[1].min(p[1]), bb[2].max(p[0]), bb[3].max(p[1])];
    }
    let axis = usize::from(bb[2] - bb[0] < bb[3] - bb[1]);
    let mid = set.len() / 2;
    set.select_nth_unstable_by(mid, |a, b| a.p[axis].total_cmp(&b.p[axis]));
    for (i, it) in set.iter().enumerate() {
        side[it.k] = if i < mid { 1 } else { 2 };
    }
    min_cut_cover(set, adj, deg, side, work);
}

/// Scratch arrays of [`min_cut_cover`], sized once for the whole ordering.
struct CoverWork {
    /// Matched partner of a cut vertex, or `NONE`.
    mate: Vec<u32>,
    /// Visit stamp per vertex (equal to `stamp` when visited in the current search).
    seen: Vec<u32>,
    /// Predecessor (a lower-side vertex) of an upper-side vertex in the current search.
    from: Vec<u32>,
    stamp: u32,
    /// Lower-side vertices with a coupling across the cut.
    left: Vec<usize>,
    /// Breadth-first queue.
    queue: Vec<usize>,
    /// Upper-side vertices reached in König's construction.
    cover_upper: Vec<usize>,
}

const NONE: u32 = u32::MAX;

impl CoverWork {
    fn new(n: usize) -> CoverWork {
        CoverWork {
            mate: vec![NONE; n],
            seen: vec![0; n],
            from: vec![NONE; n],
            stamp: 0,
            left: Vec::new(),
            queue: Vec::new(),
            cover_upper: Vec::new(),
        }
    }

    fn next_stamp(&mut self) -> u32 {
        self.stamp = self.stamp.wrapping_add(1);
        if self.stamp == 0 {
            self.seen.fill(0);
            self.stamp = 1;
        }
        self.stamp
    }
}

/// Marks (side 3) a minimum vertex cover of the edges between side 1 and side 2 of `set`:
/// a maximum matching of that bipartite graph by shortest augmenting paths, then König's
/// construction (D. Kőnig 1931; e.g. Schrijver, *Combinatorial Optimization*, Springer 2003,
/// thm 16.2): with Z the vertices reachable from unmatched lower-side vertices by
/// alternating paths, the cover is (lower \ Z) ∪ (upper ∩ Z). The cover is never larger
/// than either side's vertices along the cut, and on a P2 mesh, whose element cliques make
/// a straight cut cross a band of couplings, it is much thinner than a greedy cover.
fn min_cut_cover(set: &[Item], adj: &[usize], deg: &[usize], side: &mut [u8], w: &mut CoverWork) {
    let nbrs = |k: usize| &adj[deg[k]..deg[k + 1]];
    let mut left = std::mem::take(&mut w.left);
    let mut queue = std::mem::take(&mut w.queue);
    let mut cover_upper = std::mem::take(&mut w.cover_upper);
    left.clear();
    cover_upper.clear();
    left.extend(set.iter().map(|it| it.k).filter(|&k| side[k] == 1 && nbrs(k).iter().any(|&u| side[u] == 2)));
    for it in set {
        w.mate[it.k] = NONE;
    }
    // Greedy start, then one breadth-first augmenting search per unmatched lower vertex.
    for &l in &left {
        if let Some(&u) = nbrs(l).iter().find(|&&u| side[u] == 2 && w.mate[u] == NONE) {
            w.mate[l] = u as u32;
            w.mate[u] = l as u32;
        }
    }
    for &l in &left {
        if w.mate[l] != NONE {
            continue;
        }
        let stamp = w.next_stamp();
        queue.clear();
        queue.push(l);
        w.seen[l] = stamp;
        let mut head = 0;
        let mut end = NONE;
        'search: while head < queue.len() {
            let x = queue[head];
            head += 1;
            for &y in nbrs(x) {
                if side[y] != 2 || w.seen[y] == stamp {
                    continue;
                }
                w.seen[y] = stamp;
                w.from[y] = x as u32;
                let m = w.mate[y];
                if m == NONE {
                    end = y as u32;
                    break 'search;
                }
                w.seen[m as usize] = stamp;
                queue.push(m as usize);
            }
        }
        // Flip the path: y ← x, x's old partner becomes free and takes its predecessor.
        let mut y = end;
        while y != NONE {
            let x = w.from[y as usize];
            let next = w.mate[x as usize];
            w.mate[x as usize] = y;
            w.mate[y as usize] = x;
            y = next;
        }
    }
    // König: alternating reachability from the unmatched lower vertices.
    let stamp = w.next_stamp();
    queue.clear();
    for &l in &left {
        if w.mate[l] == NONE {
            w.seen[l] = stamp;
            queue.push(l);
        }
    }
    let mut head = 0;
    while head < queue.len() {
        let x = queue[head];
        head += 1;
        for &y in nbrs(x) {
            if side[y] != 2 || w.seen[y] == stamp {
                continue;
            }
            w.seen[y] = stamp;
            cover_upper.push(y);
            let m = w.mate[y];
            if m != NONE && w.seen[m as usize] != stamp {
                w.seen[m as usize] = stamp;
                queue.push(m as usize);
            }
        }
    }
    for &l in &left {
        if w.seen[l] != stamp {
            side[l] = 3;
        }
    }
    for &y in &cover_upper {
        side[y] = 3;
    }
    (w.left, w.queue, w.cover_upper) = (left, queue, cover_upper);
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Lower-triangle pattern of an m×m grid: 5-point, or 9-point with the diagonals (as
    /// in a P2 element clique), and the grid coordinates as positions.
    fn grid(m: usize, diagonals: bool) -> (Vec<usize>, Vec<usize>, Vec<Option<[f64; 2]>>) {
        let n = m * m;
        let mut col_ptr = vec![0];
        let mut row_idx = Vec::new();
        for j in 0..n {
            let (x, y) = (j % m, j / m);
            row_idx.push(j);
            if x + 1 < m {
                row_idx.push(j + 1);
            }
            if y + 1 < m {
                if diagonals && x > 0 {
                    row_idx.push(j + m - 1);
                }
                row_idx.push(j + m);
                if diagonals && x + 1 < m {
                    row_idx.push(j + m + 1);
                }
            }
            col_ptr.push(row_idx.len());
        }
        let pos = (0..n).map(|k| Some([(k % m) as f64, (k / m) as f64])).collect();
        (col_ptr, row_idx, pos)
    }

    #[test]
    fn permutation_of_a_grid_is_valid_and_separators_come_last() {
        // 5-point Laplacian pattern of a 20×20 grid (lower triangle).
        let m = 20;
        let n = m * m;
        let (col_ptr, row_idx, pos) = grid(m, false);
        let (fwd, inv) = nested_dissection(&col_ptr, &row_idx, &pos);
        let mut seen = vec![false; n];
        for (new, &old) in fwd.iter().enumerate() {
            assert!(!seen[old]);
            seen[old] = true;
            assert_eq!(inv[old], new);
        }
        // The top-level separator is one grid column next to the median (x = 9 or x = 10):
        // its 20 unknowns are the last 20 in the order.
        let col = fwd[n - 1] % m;
        assert!(col == 9 || col == 10);
        assert!(fwd[n - m..].iter().all(|&k| k % m == col));
    }

    #[test]
    fn the_separator_of_a_nine_point_grid_is_one_column() {
        // 9-point pattern (diagonal couplings too, as in a P2 element clique): the couplings
        // across the middle form a band two columns wide, and the minimum vertex cover of
        // that band is one column of 20 (a greedy cover takes parts of both columns).
        let m = 20;
        let n = m * m;
        let (col_ptr, row_idx, pos) = grid(m, true);
        let (fwd, _) = nested_dissection(&col_ptr, &row_idx, &pos);
        let col = fwd[n - 1] % m;
        assert!(col == 9 || col == 10);
        assert!(fwd[n - m..].iter().all(|&k| k % m == col), "top separator {:?}", &fwd[n - m..]);
        assert_ne!(fwd[n - m - 1] % m, col, "the separator holds more than one column");
    }
}
