//! Exact reproduction of linear potentials and conservation identities.

use crate::common::{cond, diel, run, shape};
use engine::{ConductorSpec, EPSILON_0};
use mesher::{Outline, Symmetry};

fn plates(symmetry: Symmetry, order: u8, eps: [f64; 2]) {
    // Two dielectric layers between plates at y = 0.01 (1 kV) and y = 0.05 (0 V), zero
    // flux on the sides: V is piecewise linear in y, exact in any conforming FE space.
    let x0 = if symmetry == Symmetry::Axisymmetric { 0.0 } else { -0.03 };
    let rect = |n: &str, y0: f64, y1: f64| Outline::rectangle(n, [x0, y0], [0.06, y1 - y0], 0.0).unwrap();
    let shapes = vec![
        shape("box", rect("box", 0.0, 0.06), diel(eps[0])),
        shape("upper", rect("upper", 0.03, 0.05), diel(eps[1])),
        shape("bottom", rect("bottom", 0.0, 0.01), cond(0)),
        shape("top", rect("top", 0.05, 0.06), cond(1)),
    ];
    let specs =
        [("hv", ConductorSpec::Fixed { potential_v: 1000.0 }), ("earth", ConductorSpec::Fixed { potential_v: 0.0 })];
    let (mesh, sol) = run(symmetry, shapes, &specs, None, 0.006, order);
    // Series layers: D = V / (d₁/ε₁ + d₂/ε₂) · ε₀, interface potential V − D·d₁/(ε₀ε₁).
    let (d1, d2) = (0.02, 0.02);
    let d = 1000.0 * EPSILON_0 / (d1 / eps[0] + d2 / eps[1]);
    let v_if = 1000.0 - d * d1 / (EPSILON_0 * eps[0]);
    for (i, p) in mesh.nodes.iter().enumerate() {
        let y = p[1];
        let want = if y <= 0.03 { 1000.0 - (1000.0 - v_if) * (y - 0.01) / d1 } else { v_if * (0.05 - y) / d2 };
        // Round-off of a sparse Cholesky solve: a few hundred ulps of the 1 kV scale.
        assert!((sol.potential[i] - want).abs() < 1e-9 * 1000.0, "node {i} at {p:?}: {} vs {want}", sol.potential[i]);
    }
    // Charges: ±D·area (area per metre 0.06 in planar, π·0.06² in axisymmetry).
    let area = if symmetry == Symmetry::Axisymmetric { std::f64::consts::PI * 0.06 * 0.06 } else { 0.06 };
    let q = sol.conductor_charges[0];
    assert!((q - d * area).abs() < 1e-9 * q, "{q:e} vs {:e}", d * area);
    // Closed system: the charges sum to zero; energy = ½·QᵀV.
    assert!((sol.conductor_charges[0] + sol.conductor_charges[1]).abs() < 1e-9 * q);
    let half_qv: f64 =
        0.5 * sol.conductor_charges.iter().zip(&sol.conductor_potentials).map(|(q, v)| q * v).sum::<f64>();
    assert!((sol.energy - half_qv).abs() < 1e-9 * sol.energy);
}

#[test]
fn layered_plates_reproduced_exactly() {
    for sym in [Symmetry::Planar, Symmetry::Axisymmetric] {
        for order in [1, 2] {
            plates(sym, order, [1.0, 1.0]);
            plates(sym, order, [4.5, 1.0]);
        }
    }
}

#[test]
fn floating_cylinder_takes_the_series_potential() {
    // Core a = 1 cm at 1 V, floating tube from 1.8 to 2 cm, earthed boundary at 3 cm. Zero
    // net charge makes the two gaps capacitors in series:
    // V_f = ln(b/r₂) / (ln(r₁/a) + ln(b/r₂)).
    let shapes = vec![
        shape("air", Outline::circle("air", [0.0, 0.0], 0.03).unwrap(), diel(1.0)),
        shape("tube", Outline::circle("tube", [0.0, 0.0], 0.02).unwrap(), cond(1)),
        shape("inner-air", Outline::circle("inner-air", [0.0, 0.0], 0.018).unwrap(), diel(1.0)),
        shape("core", Outline::circle("core", [0.0, 0.0], 0.01).unwrap(), cond(0)),
    ];
    let specs =
        [("core", ConductorSpec::Fixed { potential_v: 1.0 }), ("tube", ConductorSpec::Floating { charge_c: 0.0 })];
    let (_, sol) = run(Symmetry::Planar, shapes, &specs, Some(0.0), 0.002, 2);
    let want = (1.5f64).ln() / ((1.8f64).ln() + (1.5f64).ln());
    assert!((sol.conductor_potentials[1] - want).abs() < 1e-4, "{} vs {want}", sol.conductor_potentials[1]);
    assert!(sol.conductor_charges[1].abs() < 1e-9 * sol.conductor_charges[0].abs());
    // Maximum principle: every potential between the extremes 0 and 1 V.
    assert!(sol.potential.iter().all(|&v| (-1e-12..=1.0 + 1e-12).contains(&v)));
}

#[test]
fn capacitance_matrix_of_plates_and_field_in_layers() {
    // Plates at y = 0.01 and 0.05 with layers ε 4.5 (0.01–0.03) and 1 (0.03–0.05), planar,
    // width 0.06 m: c = ε₀·w / (d₁/ε₁ + d₂/ε₂), matrix [[c, −c], [−c, c]].
    use mesher::{generate, Geometry, OuterBoundary, RefineParams};
    let rect = |n: &str, y0: f64, y1: f64| Outline::rectangle(n, [-0.03, y0], [0.06, y1 - y0], 0.0).unwrap();
    let geo = Geometry {
        symmetry: Symmetry::Planar,
        shapes: vec![
            shape("box", rect("box", 0.0, 0.06), diel(4.5)),
            shape("upper", rect("upper", 0.03, 0.05), diel(1.0)),
            shape("bottom", rect("bottom", 0.0, 0.01), cond(0)),
            shape("top", rect("top", 0.05, 0.06), cond(1)),
        ],
        conductors: vec!["a".into(), "b".into()],
        outer: OuterBoundary::ZeroFlux,
        size_points: vec![],
        thin: vec![],
        boundary_pieces: vec![],
    };
    let mesh = generate(&geo, &RefineParams::new().with_order(2).with_max_size_m(0.008)).unwrap().mesh;
    let problem = engine::Problem {
        permittivity: vec![4.5, 1.0, f64::NAN, f64::NAN],
        conductors: vec![ConductorSpec::Fixed { potential_v: 1000.0 }, ConductorSpec::Fixed { potential_v: 0.0 }],
        outer_potential_v: None,
        ..Default::default()
    };
    let (idx, c) = engine::capacitance_matrix(&mesh, &problem).unwrap();
    assert_eq!(idx, vec![0, 1]);
    let want = EPSILON_0 * 0.06 / (0.02 / 4.5 + 0.02 / 1.0);
    for (i, row) in c.iter().enumerate() {
        for (j, v) in row.iter().enumerate() {
            let w = if i == j { want } else { -want };
            assert!((v - w).abs() < 1e-9 * want, "C[{i}][{j}] = {v:e}, want {w:e}");
        }
    }
    // Symmetric, positive diagonal, non-positive off-diagonal (Maxwell matrix properties).
    assert!((c[0][1] - c[1][0]).abs() < 1e-12 * want && c[0][0] > 0.0 && c[0][1] <= 0.0);
    // Field: D continuous across the layers, E = D/(ε₀εᵣ) in each; peaks per region.
    let sol = engine::solve(&mesh, &problem).unwrap();
    let f = engine::element_fields(&mesh, &problem, &sol);
    let d = 1000.0 * EPSILON_0 / (0.02 / 4.5 + 0.02 / 1.0);
    for p in &f.region_peaks {
        let er = problem.permittivity[p.region as usize];
        let e = d / (EPSILON_0 * er);
        assert!((p.e_max_v_per_m - e).abs() < 1e-8 * e, "region {}: {} vs {e}", p.region, p.e_max_v_per_m);
    }
}

#[test]
fn a_part_cut_off_from_every_fixed_potential_is_reported() {
    // Two separate triangles (as an imported mesh could have): one touches the electrode,
    // the other only zero-flux boundaries, so its potential level is undetermined.
    use mesher::{EdgeTag, Mesh, TaggedEdge};
    let e = |a: u32, b: u32, tag| TaggedEdge { nodes: [a, b], tag, arc: None };
    let mesh = Mesh {
        symmetry: Symmetry::Planar,
        nodes: vec![[0.0, 0.0], [1.0, 0.0], [0.0, 1.0], [5.0, 5.0], [6.0, 5.0], [5.0, 6.0]],
        num_vertices: 6,
        triangles: vec![[0, 1, 2], [3, 4, 5]],
        regions: vec![0, 1],
        mid_nodes: vec![],
        edges: vec![
            e(0, 1, EdgeTag::Conductor(0)),
            e(1, 2, EdgeTag::Outer),
            e(2, 0, EdgeTag::Outer),
            e(3, 4, EdgeTag::Outer),
            e(4, 5, EdgeTag::Outer),
            e(5, 3, EdgeTag::Outer),
        ],
        arcs: vec![],
        shape_names: vec!["near".into(), "island".into()],
        conductor_names: vec!["hv".into()],
        singular_points: vec![],
        exterior: None,
    };
    mesh.validate().unwrap();
    let problem = engine::Problem {
        permittivity: vec![1.0, 1.0],
        conductors: vec![ConductorSpec::Fixed { potential_v: 1.0 }],
        outer_potential_v: None,
        ..Default::default()
    };
    match engine::solve(&mesh, &problem) {
        Err(engine::SolveError::FloatingPart { region, .. }) => assert_eq!(region, "island"),
        other => panic!("expected a cut-off part, got {other:?}"),
    }
}

#[test]
fn interface_probe_gives_both_normal_fields() {
    // Layered plates: across the interface y = 0.03, D is continuous, so
    // Eₙ = D/(ε₀εᵣ) on each side and Eₜ = 0 (series layers; Griffiths 2017, §4.4).
    let rect = |n: &str, y0: f64, y1: f64| Outline::rectangle(n, [-0.03, y0], [0.06, y1 - y0], 0.0).unwrap();
    let shapes = vec![
        shape("box", rect("box", 0.0, 0.06), diel(4.5)),
        shape("upper", rect("upper", 0.03, 0.05), diel(1.0)),
        shape("bottom", rect("bottom", 0.0, 0.01), cond(0)),
        shape("top", rect("top", 0.05, 0.06), cond(1)),
    ];
    let specs =
        [("hv", ConductorSpec::Fixed { potential_v: 1000.0 }), ("earth", ConductorSpec::Fixed { potential_v: 0.0 })];
    for order in [1, 2] {
        let (mesh, sol) = run(Symmetry::Planar, shapes.clone(), &specs, None, 0.006, order);
        let d = 1000.0 * EPSILON_0 / (0.02 / 4.5 + 0.02 / 1.0);
        let samples = engine::probe_interface(&mesh, &sol, engine::InterfaceSelector::Regions(0, 1));
        assert!(!samples.is_empty());
        let total: f64 = samples.windows(2).map(|w| w[1].s - w[0].s).sum();
        assert!(total > 0.04, "chain spans the interface: {total}");
        for smp in &samples {
            let second = smp.second.as_ref().expect("two sides");
            for side in [&smp.first, second] {
                let er = if side.region == 0 { 4.5 } else { 1.0 };
                assert!((side.e_n.abs() - d / (EPSILON_0 * er)).abs() < 1e-8 * d / EPSILON_0, "{side:?}");
                assert!(side.e_t.abs() < 1e-8 * d / EPSILON_0);
            }
            assert!((smp.at[1] - 0.03).abs() < 1e-12);
        }
    }
}

/// Plates at y = 0.01 (bottom, V₀) and y = 0.05 (top, V₁) with one dielectric between,
/// rotated by `angle` about the origin; side walls are zero-flux.
fn rotated_plates(angle: f64, eps: f64, order: u8) -> mesher::Mesh {
    use mesher::{generate, Geometry, OuterBoundary};
    let (c, s) = (angle.cos(), angle.sin());
    let rot = |p: [f64; 2]| [c * p[0] - s * p[1], s * p[0] + c * p[1]];
    let rect = |n: &str, y0: f64, y1: f64| {
        Outline::polygon(n, &[[-0.03, y0], [0.03, y0], [0.03, y1], [-0.03, y1]].map(rot)).unwrap()
    };
    let geo = Geometry {
        symmetry: Symmetry::Planar,
        shapes: vec![
            shape("gap", rect("gap", 0.0, 0.06), diel(eps)),
            shape("bottom", rect("bottom", 0.0, 0.01), cond(0)),
            shape("top", rect("top", 0.05, 0.06), cond(1)),
        ],
        conductors: vec!["a".into(), "b".into()],
        outer: OuterBoundary::ZeroFlux,
        size_points: vec![],
        thin: vec![],
        boundary_pieces: vec![],
    };
    generate(&geo, &mesher::RefineParams::new().with_order(order).with_max_size_m(0.007)).unwrap().mesh
}

#[test]
fn anisotropic_permittivity_is_rotation_invariant() {
    // A diagonal tensor diag(7, 2) with plates normal to y gives the 1-D result
    // C' = ε₀·εyy·w/d (w = 0.06 m, d = 0.04 m); rotating the geometry by 30° and the tensor
    // with it (ε' = R·ε·Rᵀ) must give the same capacitance (frame invariance).
    let want = EPSILON_0 * 2.0 * 0.06 / 0.04;
    for order in [1u8, 2] {
        for angle in [0.0f64, 30f64.to_radians()] {
            let (c, s) = (angle.cos(), angle.sin());
            let (exx, eyy) = (7.0, 2.0);
            let t =
                [[c * c * exx + s * s * eyy, c * s * (exx - eyy)], [c * s * (exx - eyy), s * s * exx + c * c * eyy]];
            let mesh = rotated_plates(angle, 3.0, order);
            let problem = engine::Problem {
                permittivity: vec![3.0, f64::NAN, f64::NAN],
                tensor: vec![Some(t), None, None],
                conductors: vec![ConductorSpec::Fixed { potential_v: 1.0 }, ConductorSpec::Fixed { potential_v: 0.0 }],
                outer_potential_v: None,
                ..Default::default()
            };
            let sol = engine::solve(&mesh, &problem).unwrap();
            // The potential is linear in the rotated coordinate y' and reproduced exactly.
            for (i, p) in mesh.nodes.iter().enumerate() {
                let yr = -s * p[0] + c * p[1];
                let want = ((0.05 - yr) / 0.04).clamp(0.0, 1.0);
                assert!((sol.potential[i] - want).abs() < 1e-12, "node {i} at {p:?}");
            }
            let q = sol.conductor_charges[0];
            assert!((q - want).abs() < 1e-9 * want, "P{order} at {angle}: {q:e} vs {want:e}");
        }
    }
}

/// Uniform space charge ρ = 1e-4 C/m³ (εᵣ = 2) between plates at y₀ = 0.01 (100 V) and
/// y₁ = 0.05 (0 V) on the given mesh; `space` is the charged volume (per metre in planar
/// models). Checks V(y) = V₀(y₁ − y)/d + ρ/(2ε)·(y − y₀)(y₁ − y) at every node and Gauss's
/// law (induced charges + space charge = 0).
fn check_space_charge_parabola(mesh: &mesher::Mesh, space_volume: f64) {
    let (rho, er) = (1e-4, 2.0);
    let eps = EPSILON_0 * er;
    let problem = engine::Problem {
        permittivity: vec![er, f64::NAN, f64::NAN],
        charge_density: vec![rho, 0.0, 0.0],
        conductors: vec![ConductorSpec::Fixed { potential_v: 100.0 }, ConductorSpec::Fixed { potential_v: 0.0 }],
        outer_potential_v: None,
        ..Default::default()
    };
    let sol = engine::solve(mesh, &problem).unwrap();
    let (y0, y1) = (0.01, 0.05);
    for (i, p) in mesh.nodes.iter().enumerate() {
        let y = p[1];
        let want = 100.0 * (y1 - y) / (y1 - y0) + rho / (2.0 * eps) * (y - y0) * (y1 - y);
        // Round-off of the solve relative to the largest potential (~1.1 kV).
        assert!((sol.potential[i] - want).abs() < 1e-8 * 1e3, "node {i} at {p:?}: {} vs {want}", sol.potential[i]);
    }
    let space = rho * space_volume;
    let total = sol.conductor_charges[0] + sol.conductor_charges[1] + space;
    assert!(total.abs() < 1e-9 * space, "charges {:?} + space {space:e}", sol.conductor_charges);
}

#[test]
fn axisymmetric_space_charge_parabola_with_p2() {
    // The same 1-D Poisson solution along z between two discs (zero-flux cylinder wall and
    // axis): V(z) is quadratic, so P2 reproduces it exactly in the axisymmetric weak form
    // too, and Gauss's law balances the charges (any electrostatics text).
    use mesher::{generate, Geometry, OuterBoundary, RefineParams};
    let rect = |n: &str, z0: f64, z1: f64| Outline::rectangle(n, [0.0, z0], [0.03, z1 - z0], 0.0).unwrap();
    let geo = Geometry {
        symmetry: Symmetry::Axisymmetric,
        shapes: vec![
            shape("gap", rect("gap", 0.0, 0.06), diel(2.0)),
            shape("bottom", rect("bottom", 0.0, 0.01), cond(0)),
            shape("top", rect("top", 0.05, 0.06), cond(1)),
        ],
        conductors: vec!["a".into(), "b".into()],
        outer: OuterBoundary::ZeroFlux,
        size_points: vec![],
        thin: vec![],
        boundary_pieces: vec![],
    };
    let mesh = generate(&geo, &RefineParams::new().with_order(2).with_max_size_m(0.006)).unwrap().mesh;
    check_space_charge_parabola(&mesh, std::f64::consts::PI * 0.03 * 0.03 * 0.04);
}

#[test]
fn uniform_space_charge_gives_the_exact_parabola_with_p2() {
    // −ε V″ = ρ between plates: the potential is a quadratic, reproduced exactly by P2
    // (Poisson's equation in one dimension; any electrostatics text).
    let mesh = rotated_plates(0.0, 2.0, 2);
    check_space_charge_parabola(&mesh, 0.06 * 0.04);
}

#[test]
fn a_non_positive_pivot_names_the_failing_node() {
    // A checked model cannot produce a singular matrix, but the factorisation's own guard
    // must still say where it fails. A permittivity so small that ε₀·εᵣ underflows to zero
    // passes the check (it is > 0) and leaves the one unknown with a zero pivot.
    use mesher::{EdgeTag, Mesh, TaggedEdge};
    let e = |a: u32, b: u32, tag| TaggedEdge { nodes: [a, b], tag, arc: None };
    let mesh = Mesh {
        symmetry: Symmetry::Planar,
        nodes: vec![[0.0, 0.0], [1.0, 0.0], [0.0, 1.0], [1.0, 1.0]],
        num_vertices: 4,
        triangles: vec![[0, 1, 3], [0, 3, 2]],
        regions: vec![0, 0],
        mid_nodes: vec![],
        edges: vec![
            e(0, 1, EdgeTag::Conductor(0)),
            e(1, 3, EdgeTag::Outer),
            e(3, 2, EdgeTag::Outer),
            e(2, 0, EdgeTag::Conductor(0)),
        ],
        arcs: vec![],
        shape_names: vec!["box".into()],
        conductor_names: vec!["hv".into()],
        singular_points: vec![],
        exterior: None,
    };
    mesh.validate().unwrap();
    let problem = engine::Problem {
        permittivity: vec![f64::MIN_POSITIVE * 1e-10],
        conductors: vec![ConductorSpec::Fixed { potential_v: 1.0 }],
        outer_potential_v: None,
        ..Default::default()
    };
    match engine::solve(&mesh, &problem) {
        Err(engine::SolveError::NotPositiveDefinite { node, .. }) => assert_eq!(node, Some(3)),
        other => panic!("expected a non-positive pivot, got {:?}", other.map(|s| s.num_unknowns)),
    }
}

/// Coaxial cylinders 1 cm / 3 cm in a dielectric of relative permittivity `eps`, the outer
/// boundary held, meshed at the default size.
fn coax_mesh(eps: f64, order: u8) -> mesher::Mesh {
    let geo = mesher::Geometry {
        symmetry: Symmetry::Planar,
        shapes: vec![
            shape("gap", Outline::circle("gap", [0.0, 0.0], 0.03).unwrap(), diel(eps)),
            shape("core", Outline::circle("core", [0.0, 0.0], 0.01).unwrap(), cond(0)),
        ],
        conductors: vec!["core".into()],
        outer: mesher::OuterBoundary::FixedPotential,
        size_points: vec![],
        thin: vec![],
        boundary_pieces: vec![],
    };
    mesher::generate(&geo, &mesher::RefineParams::new().with_order(order)).unwrap().mesh
}

#[test]
fn a_factor_over_the_memory_budget_stops_before_the_factorisation() {
    // Coaxial cylinders 1 cm / 3 cm: the factor of a few thousand unknowns needs far more
    // than 1 kB and far less than 1 GB: refused at the first budget, solved at the second.
    let mesh = coax_mesh(1.0, 2);
    let problem = |budget: f64| engine::Problem {
        permittivity: vec![1.0, f64::NAN],
        conductors: vec![ConductorSpec::Fixed { potential_v: 1.0 }],
        outer_potential_v: Some(0.0),
        memory_budget_bytes: Some(budget),
        ..Default::default()
    };
    match engine::solve(&mesh, &problem(1e3)) {
        Err(e @ engine::SolveError::FactorOverBudget { .. }) => {
            assert!(e.to_string().contains("over the memory budget"), "{e}")
        }
        other => panic!("expected a refusal, got {other:?}"),
    }
    assert!(engine::solve(&mesh, &problem(1e9)).is_ok());
}

#[test]
fn a_result_that_overflows_is_an_error_naming_it() {
    // 10³⁰⁰ V across permittivity 10³⁰⁰: the energy ½ε₀εᵣ|E|² overflows double precision
    // (10⁸⁸⁸ J/m); the solve says which quantity, instead of returning infinity.
    let mesh = coax_mesh(1e300, 1);
    let problem = engine::Problem {
        permittivity: vec![1e300, f64::NAN],
        conductors: vec![ConductorSpec::Fixed { potential_v: 1e300 }],
        outer_potential_v: Some(0.0),
        ..Default::default()
    };
    match engine::solve(&mesh, &problem) {
        Err(e @ engine::SolveError::NonFinite { .. }) => assert!(e.to_string().contains("not a finite number"), "{e}"),
        other => panic!("expected a non-finite result to be refused, got {other:?}"),
    }
}
