//! Sizes the machine cannot hold are refused before meshing: in seconds, with exit code 2,
//! a message that gives the predicted count and the setting to change, and nothing
//! written — under an address-space limit of 3 GB, where a run that tried would be killed
//! or abort. (The issue this answers: a 200 mm box with `max_size = 1e-15`, `1e-3` or
//! `1e-2` mm grew `mesh`, `solve` and `check` to the whole machine.)

use crate::common::{fixture, run, stderr};
use std::path::Path;
use std::process::Command;

/// The L-shaped electrode demo (a 200 mm box) with another global size.
fn box_with_max_size(h: &str, dir: &Path) -> std::path::PathBuf {
    let text = std::fs::read_to_string(fixture("l-electrode.toml")).unwrap();
    assert!(text.contains("max_size = 10.0"));
    let p = dir.join("box.toml");
    std::fs::write(&p, text.replace("max_size = 10.0", &format!("max_size = {h}"))).unwrap();
    p
}

/// Runs the binary under `ulimit -v` (KiB).
fn run_limited(kib: u64, args: &[&str]) -> (std::process::Output, f64) {
    let mut line = format!("ulimit -v {kib} && exec '{}'", env!("CARGO_BIN_EXE_fieldgrade"));
    for a in args {
        line.push_str(&format!(" '{a}'"));
    }
    let t0 = std::time::Instant::now();
    let o = Command::new("sh").arg("-c").arg(&line).output().expect("sh runs");
    (o, t0.elapsed().as_secs_f64())
}

#[test]
fn absurd_sizes_are_refused_in_seconds_under_an_address_space_limit() {
    let dir = tempfile::tempdir().unwrap();
    for h in ["1e-15", "1e-3", "1e-2"] {
        let model = box_with_max_size(h, dir.path());
        let out = dir.path().join(format!("out-{h}"));
        for cmd in ["mesh", "solve", "check"] {
            let mut args = vec![cmd, model.to_str().unwrap()];
            if cmd != "mesh" {
                args.extend(["--out", out.to_str().unwrap()]);
            }
            let (o, secs) = run_limited(3_000_000, &args);
            let e = stderr(&o);
            assert_eq!(o.status.code(), Some(2), "{cmd} max_size = {h}: {e}");
            assert!(secs < 10.0, "{cmd} max_size = {h}: {secs} s");
            assert!(e.contains("vertices") && e.contains("over the node budget"), "{e}");
            assert!(e.contains("raise max_size in [mesh]"), "{e}");
            // Under the 3 GB limit the budget comes from it, and the message says so.
            assert!(e.contains("ulimit -v") && e.contains("--memory-limit"), "{e}");
            assert!(!out.exists(), "{cmd} wrote {}", out.display());
        }
    }
}

#[test]
fn a_size_that_fits_runs_under_the_same_limit() {
    // The demo itself (about 6 000 nodes) under the 3 GB limit: the budget does not get in
    // the way of work that fits.
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let (o, _) = run_limited(
        3_000_000,
        &["solve", fixture("l-electrode.toml").to_str().unwrap(), "--out", out.to_str().unwrap()],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(out.join("results.json").exists());
}

#[test]
fn memory_limit_option_sets_the_budget() {
    let dir = tempfile::tempdir().unwrap();
    let model = box_with_max_size("1.0", dir.path());
    // About 8·10⁴ quadratic nodes: refused at 20 MB, meshed at the default.
    let o = run(&["mesh", model.to_str().unwrap(), "--memory-limit", "20MB"]);
    let e = stderr(&o);
    assert_eq!(o.status.code(), Some(2), "{e}");
    assert!(e.contains("memory budget of 19 MiB (--memory-limit)"), "{e}");
    let o = run(&["mesh", model.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    // A bad size is an argument error.
    let o = run(&["mesh", model.to_str().unwrap(), "--memory-limit", "lots"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("not a memory size"), "{}", stderr(&o));
}

#[test]
fn check_refuses_a_budget_of_unknowns_below_its_first_mesh() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let model = fixture("l-electrode.toml");
    // Below the smallest budget accepted at all.
    let o = run(&["check", model.to_str().unwrap(), "--out", out.to_str().unwrap(), "--max-unknowns", "0"]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("--max-unknowns"), "{}", stderr(&o));
    // Above it, but below the first mesh (about 5 900 nodes): refused before solving.
    let o = run(&["check", model.to_str().unwrap(), "--out", out.to_str().unwrap(), "--max-unknowns", "1000"]);
    let e = stderr(&o);
    assert_eq!(o.status.code(), Some(2), "{e}");
    assert!(e.contains("the first mesh already has") && e.contains("1000 unknowns"), "{e}");
    assert!(!out.exists());
}
