//! The corpus of bad inputs in `fixtures/bad/` (our own, one file per case): each file says
//! in its first comment lines what it must give — `# expect-exit: N` and one or more
//! `# expect: fragment` lines, the fragments the message must contain — and `solve` on it
//! must give exactly that, never panic, and, when it fails, leave its output folder
//! unwritten. A case with `# expect-exit: 0` is accepted with a warning (the fragments
//! are then looked for in the printed summary). Each failing case's whole message is pinned
//! by an insta snapshot (`snapshots/it__corpus__bad_<case>.snap`).

use crate::common::{run, stderr, stdout};
use std::path::Path;

#[test]
fn every_bad_input_gives_its_message_and_exit_code() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../fixtures/bad");
    let mut cases: Vec<_> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|x| x == "toml"))
        .collect();
    cases.sort();
    assert!(cases.len() >= 6, "the corpus is missing: {}", dir.display());
    let tmp = tempfile::tempdir().unwrap();
    let mut failures = Vec::new();
    for case in &cases {
        let bytes = std::fs::read(case).unwrap();
        let head = String::from_utf8_lossy(&bytes);
        let exit: i32 = head
            .lines()
            .find_map(|l| l.strip_prefix("# expect-exit: "))
            .unwrap_or_else(|| panic!("{}: no '# expect-exit: N' line", case.display()))
            .trim()
            .parse()
            .unwrap();
        let fragments: Vec<&str> = head.lines().filter_map(|l| l.strip_prefix("# expect: ")).collect();
        let out = tmp.path().join(case.file_stem().unwrap());
        // A fixed memory budget, so the messages that quote it are the same on every machine.
        let o = run(&["solve", case.to_str().unwrap(), "--out", out.to_str().unwrap(), "--memory-limit", "4GB"]);
        let text = if exit == 0 { format!("{}{}", stdout(&o), stderr(&o)) } else { stderr(&o) };
        let name = case.file_name().unwrap().to_string_lossy();
        if o.status.code() != Some(exit) {
            failures.push(format!("{name}: exit {:?}, expected {exit}:\n{text}", o.status.code()));
            continue;
        }
        if text.contains("panicked") {
            failures.push(format!("{name}: panicked:\n{text}"));
        }
        for f in &fragments {
            if !text.contains(f) {
                failures.push(format!("{name}: {f:?} not in:\n{text}"));
            }
        }
        if exit != 0 && out.exists() {
            failures.push(format!("{name}: wrote {}", out.display()));
        }
        if exit != 0 {
            let shown = text
                .replace(&dir.display().to_string(), "fixtures/bad")
                .replace(&tmp.path().display().to_string(), "[dir]");
            let stem = case.file_stem().unwrap().to_string_lossy().replace('-', "_");
            insta::assert_snapshot!(format!("bad_{stem}"), shown);
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n\n"));
}
