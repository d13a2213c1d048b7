//! Factor and solve: the nested-dissection ordering and faer's sparse Cholesky.
//!
//! The ordering is ours ([`nested_dissection`], from the unknowns' positions), the symbolic
//! and numeric factorisations and the triangular solves are faer's supernodal Cholesky, on
//! one thread (a parallel numeric factorisation, `Par::rayon`, was measured 1.5× slower at
//! 5.6·10⁵ unknowns on the 2-core machine, `bench-results/check.md`). The factor's size is known exactly after the
//! symbolic step, so the memory budget is enforced before the numeric one allocates.
//!
//! PERF: the hand-written ordering factors in 0.45–0.88 of the time faer's AMD ordering
//! takes on the same matrices (see the note in `ordering.rs`).
//!
//! # References
//! - Y. Chen, T. A. Davis, W. W. Hager, S. Rajamanickam, "Algorithm 887: CHOLMOD,
//!   supernodal sparse Cholesky factorization and update/downdate", ACM Trans. Math. Softw.
//!   35 (2008) 22, doi:10.1145/1391989.1391995 (the supernodal method faer follows).

use super::*;

/// A Cholesky factorisation of a [`System`], with a nested-dissection ordering.
pub(super) struct Factor {
    pub(super) symbolic: SymbolicCholesky<usize>,
    pub(super) values: Vec<f64>,
    /// Seconds: ordering, symbolic, numeric.
    pub(super) laps: [f64; 3],
}

impl Factor {
    /// Orders (geometric nested dissection, [`nested_dissection`]), then factorises.
    pub(super) fn new(system: &System, memory_budget_bytes: Option<f64>) -> Result<Factor, SolveError> {
        let m = system.num_unknowns();
        let a = system.matrix.as_ref();
        let t0 = Instant::now();
        let (fwd, inv) = nested_dissection(a.symbolic().col_ptr(), a.symbolic().row_idx(), &system.positions);
        let t1 = Instant::now();
        let ordering = SymmetricOrdering::Custom(PermRef::new_checked(&fwd, &inv, m));
        let symbolic = factorize_symbolic_cholesky(a.symbolic(), Side::Lower, ordering, Default::default())
            .map_err(|e| SolveError::Factorisation { detail: format!("{e:?}") })?;
        let t2 = Instant::now();
        let bytes = 8.0 * symbolic.len_val() as f64;
        if let Some(budget) = memory_budget_bytes.filter(|&b| bytes > b) {
            return Err(SolveError::FactorOverBudget { unknowns: m, bytes, budget });
        }
        let mut values = vec![0.0; symbolic.len_val()];
        let mut mem = MemBuffer::new(symbolic.factorize_numeric_llt_scratch::<f64>(Par::Seq, Default::default()));
        let numeric = symbolic.factorize_numeric_llt(
            &mut values,
            a,
            Side::Lower,
            Default::default(),
            Par::Seq,
            MemStack::new(&mut mem),
            Default::default(),
        );
        if let Err(e) = numeric {
            return Err(match e {
                NumericLltError::NonPositivePivot { index } => {
                    // The pivot counts factor columns (permuted order); map it back to an
                    // unknown and to a node of the mesh.
                    let pos = index.saturating_sub(1).min(m.saturating_sub(1));
                    let unknown = symbolic.perm().map(|p| p.arrays().0[pos]).unwrap_or(pos);
                    let at = system.dof.iter().position(|d| *d == Dof::Free(unknown as u32));
                    SolveError::NotPositiveDefinite { pivot: index, node: at.map(|v| v as u32) }
                }
            });
        }
        let laps = [(t1 - t0).as_secs_f64(), (t2 - t1).as_secs_f64(), t2.elapsed().as_secs_f64()];
        Ok(Factor { symbolic, values, laps })
    }

    /// Solves in place for every column of `rhs`.
    pub(super) fn solve_in_place(&self, rhs: &mut Mat<f64>) {
        let llt = LltRef::new(&self.symbolic, &self.values);
        let mut mem = MemBuffer::new(self.symbolic.solve_in_place_scratch::<f64>(rhs.ncols(), Par::Seq));
        llt.solve_in_place_with_conj(Conj::No, rhs.as_mut(), Par::Seq, MemStack::new(&mut mem));
    }
}
