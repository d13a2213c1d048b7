//! `fieldgrade debug matrix`: the dumped system is a valid Matrix Market file whose matrix is
//! symmetric positive definite, and an independent solver (plain conjugate gradients,
//! Hestenes & Stiefel 1952, written here) solves it to a potential within the electrode
//! extremes (maximum principle).

use crate::common::{fixture, run, stderr};

fn read(path: &std::path::Path) -> Vec<String> {
    std::fs::read_to_string(path).unwrap().lines().filter(|l| !l.starts_with('%')).map(String::from).collect()
}

#[test]
fn dumped_system_solves_independently() {
    let dir = tempfile::tempdir().unwrap();
    let a = dir.path().join("a.mtx");
    let o = run(&[
        "debug",
        "matrix",
        fixture("l-electrode.toml").to_str().unwrap(),
        "--out",
        a.to_str().unwrap(),
        "--order",
        "1",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let lines = read(&a);
    let head: Vec<usize> = lines[0].split_whitespace().map(|t| t.parse().unwrap()).collect();
    let (n, nnz) = (head[0], head[2]);
    assert_eq!(lines.len() - 1, nnz);
    let mut entries = Vec::with_capacity(2 * nnz);
    for l in &lines[1..] {
        let t: Vec<&str> = l.split_whitespace().collect();
        let (i, j, v): (usize, usize, f64) = (t[0].parse().unwrap(), t[1].parse().unwrap(), t[2].parse().unwrap());
        assert!(i >= j, "lower triangle only");
        entries.push((i - 1, j - 1, v));
        if i != j {
            entries.push((j - 1, i - 1, v));
        }
    }
    let b: Vec<f64> = read(&dir.path().join("a_rhs.mtx"))[1..].iter().map(|l| l.trim().parse().unwrap()).collect();
    assert_eq!(b.len(), n);
    let mul = |x: &[f64]| {
        let mut y = vec![0.0; n];
        for &(i, j, v) in &entries {
            y[i] += v * x[j];
        }
        y
    };
    let dot = |x: &[f64], y: &[f64]| x.iter().zip(y).map(|(a, b)| a * b).sum::<f64>();
    let mut x = vec![0.0; n];
    let mut r = b.clone();
    let mut p = r.clone();
    let mut rr = dot(&r, &r);
    let b_norm = rr.sqrt();
    for _ in 0..10 * n {
        let ap = mul(&p);
        let pap = dot(&p, &ap);
        assert!(pap > 0.0, "the matrix must be positive definite");
        let alpha = rr / pap;
        for k in 0..n {
            x[k] += alpha * p[k];
            r[k] -= alpha * ap[k];
        }
        let rr_new = dot(&r, &r);
        if rr_new.sqrt() < 1e-12 * b_norm {
            break;
        }
        for k in 0..n {
            p[k] = r[k] + rr_new / rr * p[k];
        }
        rr = rr_new;
    }
    assert!(dot(&r, &r).sqrt() < 1e-10 * b_norm);
    // The electrode is at 10 kV and the box at 0 V.
    assert!(x.iter().all(|&v| (-1e-6..=1e4 + 1e-6).contains(&v)));
}
