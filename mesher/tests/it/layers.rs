//! The mesher's modules form no import cycle (the stage's output types, `Mesh` and the
//! singular-point records, depend on nothing that depends on them): read from the
//! sources, every `crate::module` a module names is an edge of the graph, and the graph
//! must be acyclic.

use std::collections::BTreeMap;

fn imports() -> BTreeMap<String, Vec<String>> {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut graph = BTreeMap::new();
    for e in std::fs::read_dir(&dir).unwrap() {
        let p = e.unwrap().path();
        let name = p.file_stem().unwrap().to_string_lossy().into_owned();
        if name == "lib" {
            continue;
        }
        let text = std::fs::read_to_string(&p).unwrap();
        let mut deps: Vec<String> = text
            .match_indices("crate::")
            .map(|(i, _)| text[i + 7..].chars().take_while(|c| c.is_ascii_lowercase() || *c == '_').collect())
            .filter(|d: &String| !d.is_empty() && *d != name && dir.join(format!("{d}.rs")).exists())
            .collect();
        deps.sort();
        deps.dedup();
        graph.insert(name, deps);
    }
    graph
}

#[test]
fn mesher_modules_form_no_cycle() {
    let graph = imports();
    assert!(graph.len() >= 10, "{graph:?}");
    // Depth-first search with colours: grey on the stack, black done.
    fn visit<'a>(
        g: &'a BTreeMap<String, Vec<String>>,
        n: &'a str,
        colour: &mut BTreeMap<&'a str, u8>,
        path: &mut Vec<&'a str>,
    ) -> Result<(), String> {
        match colour.get(n) {
            Some(2) => return Ok(()),
            Some(1) => return Err(format!("import cycle: {} → {n}", path.join(" → "))),
            _ => {}
        }
        colour.insert(n, 1);
        path.push(n);
        for d in &g[n] {
            visit(g, d, colour, path)?;
        }
        path.pop();
        colour.insert(n, 2);
        Ok(())
    }
    let mut colour = BTreeMap::new();
    for n in graph.keys() {
        visit(&graph, n, &mut colour, &mut Vec::new()).unwrap();
    }
    // The records: mesh and singular points need neither the analysis nor the mesher.
    for (module, forbidden) in
        [("mesh", ["corners", "grading", "triangulate"]), ("singular_point", ["corners", "grading", "mesh"])]
    {
        for f in forbidden {
            assert!(!graph[module].contains(&f.to_string()), "{module} imports {f}");
        }
    }
}
