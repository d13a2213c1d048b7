//! Solve throughput: fieldgrade's assembly and nested-dissection Cholesky against faer
//! called directly (default AMD ordering) on the very same reduced matrix, at about 10⁵ and
//! 10⁶ unknowns, P1 and P2.
//!
//! Run: `cargo bench -p engine --bench solve` (add `-- quick` for 10⁵ only). The table is
//! printed and written to `bench-results/solve.md`. Wall-clock figures of one run; quote
//! the ratios, measured in the same run.

use engine::{reduced_system, solve, solver_ordering, ConductorSpec, Problem, ReducedSystem};
use faer::dyn_stack::{MemBuffer, MemStack};
use faer::perm::PermRef;
use faer::sparse::linalg::cholesky::{factorize_symbolic_cholesky, LltRef, SymbolicCholeskyRaw, SymmetricOrdering};
use faer::sparse::{SparseColMat, SymbolicSparseColMat};
use faer::{Conj, Mat, Par, Side};
use mesher::{generate, Fill, Geometry, Mesh, OuterBoundary, Outline, RefineParams, Shape, Symmetry};
use std::fmt::Write as _;
use std::time::Instant;

/// A 10 cm box of oil with a round 2 cm conductor at 1 V in it, earthed outer boundary.
fn geometry() -> Geometry {
    Geometry {
        symmetry: Symmetry::Planar,
        shapes: vec![
            Shape {
                name: "oil".into(),
                outline: Outline::rectangle("oil", [-0.05, -0.05], [0.1, 0.1], 0.0).unwrap(),
                fill: Fill::Dielectric { permittivity: 2.2 },
                max_size_m: None,
            },
            Shape {
                name: "rod".into(),
                outline: Outline::circle("rod", [0.0, 0.0], 0.01).unwrap(),
                fill: Fill::Conductor { conductor: 0 },
                max_size_m: None,
            },
        ],
        conductors: vec!["rod".into()],
        outer: OuterBoundary::FixedPotential,
        size_points: vec![],
        thin: vec![],
        boundary_pieces: vec![],
    }
}

fn problem() -> Problem {
    Problem {
        permittivity: vec![2.2, f64::NAN],
        conductors: vec![ConductorSpec::Fixed { potential_v: 1.0 }],
        outer_potential_v: Some(0.0),
        ..Default::default()
    }
}

fn peak_rss_mb() -> f64 {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| {
            s.lines().find(|l| l.starts_with("VmHWM")).and_then(|l| l.split_whitespace().nth(1)?.parse::<f64>().ok())
        })
        .map(|kb| kb / 1024.0)
        .unwrap_or(f64::NAN)
}

fn mesh_with(order: u8, target_unknowns: f64) -> Mesh {
    // Unknowns ≈ nodes; nodes ≈ area/(0.5·h²) for P1 and 4× that for P2.
    let area = 0.01 - std::f64::consts::PI * 1e-4;
    let per = if order == 2 { 4.0 } else { 1.0 };
    let mut h = (area * per / (0.5 * target_unknowns)).sqrt();
    let mut mesh = None;
    for _ in 0..4 {
        let m =
            generate(&geometry(), &RefineParams::new().with_order(order).with_max_size_m(h).with_max_nodes(50_000_000))
                .unwrap()
                .mesh;
        let ratio = m.num_nodes() as f64 / target_unknowns;
        mesh = Some(m);
        if (ratio - 1.0).abs() < 0.15 {
            break;
        }
        h *= ratio.sqrt();
    }
    mesh.unwrap()
}

/// Floating-point work of a supernodal Cholesky factorisation, counted from its structure:
/// Σ over factor columns of (entries below the diagonal)², the multiply–adds of the
/// updates (George & Liu, *Computer Solution of Large Sparse Positive Definite Systems*,
/// Prentice-Hall 1981, §2.2). Deterministic, unlike a time.
fn factor_flops(raw: &SymbolicCholeskyRaw<usize>) -> f64 {
    let SymbolicCholeskyRaw::Supernodal(sn) = raw else { return f64::NAN };
    let (begin, end, rows) = (sn.supernode_begin(), sn.supernode_end(), sn.col_ptr_for_row_idx());
    let mut flops = 0.0;
    for s in 0..sn.n_supernodes() {
        let (width, below) = (end[s] - begin[s], rows[s + 1] - rows[s]);
        for j in 0..width {
            let c = (width - j - 1 + below) as f64;
            flops += c * c;
        }
    }
    flops
}

/// faer alone on the same lower-triangle matrix with the given ordering: (symbolic s,
/// numeric s, solve s, stored factor values, factorisation flops).
fn faer_direct(sys: &ReducedSystem, custom: Option<(&[usize], &[usize])>) -> (f64, f64, f64, usize, f64) {
    let m = sys.num_unknowns;
    let sym = SymbolicSparseColMat::<usize>::new_checked(m, m, sys.col_ptr.clone(), None, sys.row_idx.clone());
    let a = SparseColMat::<usize, f64>::new(sym, sys.values.clone());
    let t0 = Instant::now();
    let ord = match custom {
        Some((f, i)) => SymmetricOrdering::Custom(PermRef::new_checked(f, i, m)),
        None => SymmetricOrdering::Amd,
    };
    let symbolic = factorize_symbolic_cholesky(a.symbolic(), Side::Lower, ord, Default::default()).unwrap();
    let t_sym = t0.elapsed().as_secs_f64();
    let mut values = vec![0.0; symbolic.len_val()];
    let t1 = Instant::now();
    let mut mem = MemBuffer::new(symbolic.factorize_numeric_llt_scratch::<f64>(Par::Seq, Default::default()));
    let llt = symbolic
        .factorize_numeric_llt(
            &mut values,
            a.as_ref(),
            Side::Lower,
            Default::default(),
            Par::Seq,
            MemStack::new(&mut mem),
            Default::default(),
        )
        .unwrap();
    let t_num = t1.elapsed().as_secs_f64();
    let _ = llt;
    let llt = LltRef::new(&symbolic, &values);
    let mut b = Mat::<f64>::zeros(m, 1);
    for (i, r) in sys.rhs.iter().enumerate() {
        b[(i, 0)] = *r;
    }
    let t2 = Instant::now();
    let mut mem = MemBuffer::new(symbolic.solve_in_place_scratch::<f64>(1, Par::Seq));
    llt.solve_in_place_with_conj(Conj::No, b.as_mut(), Par::Seq, MemStack::new(&mut mem));
    let t_solve = t2.elapsed().as_secs_f64();
    (t_sym, t_num, t_solve, values.len(), factor_flops(symbolic.raw()))
}

fn main() {
    let quick = std::env::args().any(|a| a == "quick");
    let mut out = String::new();
    let _ = writeln!(out, "# Solve benchmark (`cargo bench -p engine --bench solve`)\n");
    let _ = writeln!(out, "Problem: a round conductor in an earthed oil-filled box (planar). One run per row; all figures of a row come from the same process, one after the other.\n");
    let _ = writeln!(out, "| order | unknowns | assembly s | factor s | solve s | faer AMD sym s | faer AMD num s | faer ND num s | fieldgrade factor+solve / faer AMD factor+solve | ND num / AMD num | assembly / (factor+solve) | AMD / ND factor values | ND / AMD factor flops | peak RSS MB |");
    let _ = writeln!(out, "|---|---|---|---|---|---|---|---|---|---|---|---|---|---|");
    let targets: &[f64] = if quick { &[1e5] } else { &[1e5, 1e6] };
    let p = problem();
    for &order in &[1u8, 2] {
        for &target in targets {
            let mesh = mesh_with(order, target);
            let sol = solve(&mesh, &p).unwrap();
            let t = sol.timings;
            let sys = reduced_system(&mesh, &p).unwrap();
            // Alternate the two orderings three times and keep the medians: the machine is
            // shared, and interleaving cancels slow drifts.
            let (fwd, inv) = solver_ordering(&sys);
            let mut amd = Vec::new();
            let mut nd = Vec::new();
            for _ in 0..3 {
                amd.push(faer_direct(&sys, None));
                nd.push(faer_direct(&sys, Some((&fwd, &inv))));
            }
            let median = |v: &mut Vec<f64>| {
                v.sort_by(f64::total_cmp);
                v[v.len() / 2]
            };
            let s_amd = median(&mut amd.iter().map(|r| r.0).collect());
            let n_amd = median(&mut amd.iter().map(|r| r.1).collect());
            let v_amd = median(&mut amd.iter().map(|r| r.2).collect());
            let n_nd = median(&mut nd.iter().map(|r| r.1).collect());
            let ratio_nd = median(&mut amd.iter().zip(&nd).map(|(a, b)| b.1 / a.1).collect());
            let (nnz_amd, nnz_nd) = (amd[0].3, nd[0].3);
            let ours = t.factor_s + t.solve_s;
            let theirs = s_amd + n_amd + v_amd;
            let _ = writeln!(
                out,
                "| P{order} | {} | {:.3} | {:.3} | {:.3} | {:.3} | {:.3} | {:.3} | {:.2} | {:.2} | {:.2} | {:.2} | {:.2} | {:.0} |",
                sol.num_unknowns,
                t.assembly_s,
                t.factor_s,
                t.solve_s,
                s_amd,
                n_amd,
                n_nd,
                ours / theirs,
                ratio_nd,
                t.assembly_s / ours,
                nnz_amd as f64 / nnz_nd as f64,
                nd[0].4 / amd[0].4,
                peak_rss_mb()
            );
            eprintln!("P{order} {}: {t:?}", sol.num_unknowns);
        }
    }
    let _ = writeln!(out, "\nfaer columns and the ND/AMD ratio are medians of three interleaved repetitions (AMD, ND, AMD, ND, ...); the ratio is the median of the per-pair ratios.");
    let _ = writeln!(out, "factor s is fieldgrade's ordering + symbolic + numeric factorisation (geometric nested dissection with minimum-cover separators, P1 and P2); faer AMD is faer's default ordering on the same matrix, faer ND is faer with fieldgrade's nested-dissection permutation. Threads: the factorisations run on one thread (Par::Seq); assembly uses rayon on all cores. Factor flops are counted from the symbolic structure (Σ over columns of the squared count below the diagonal). The first numeric factorisation of a process (fieldgrade's own, column factor s) also pays the page faults of the fresh factor storage. Peak RSS is the process's high-water mark so far.");
    print!("{out}");
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../bench-results/solve.md");
    std::fs::write(&path, &out).unwrap();
    eprintln!("written to {}", path.display());
}
