//! Snapshots of `fieldgrade mesh` on the shipped demo models. The numbers are what the
//! mesher produces; the snapshots guard them against unnoticed change. The exponents in the
//! singular-point tables are checked against closed forms in the mesher's own tests.

use crate::common::{fixture, run, stdout};

fn report(name: &str) -> String {
    let o = run(&["mesh", fixture(name).to_str().unwrap()]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    stdout(&o)
}

#[test]
fn l_electrode() {
    insta::assert_snapshot!(report("l-electrode.toml"));
}

#[test]
fn busbar_support() {
    insta::assert_snapshot!(report("busbar-support.toml"));
}

#[test]
fn gis_spacer() {
    insta::assert_snapshot!(report("gis-spacer.toml"));
}

#[test]
fn bushing() {
    insta::assert_snapshot!(report("bushing.toml"));
}

#[test]
fn bushing_sharp() {
    insta::assert_snapshot!(report("bushing-sharp.toml"));
}

#[test]
fn grading_ring_open_boundary() {
    insta::assert_snapshot!(report("grading-ring.toml"));
}
