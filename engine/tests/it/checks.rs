//! Breakdown checks against closed forms: the field utilisation factor of coaxial cylinders
//! and of a sphere above a plane, the stressed volume and Weibull effective volume of coaxial
//! cylinders, the side of an interface a peak is on, the creepage figures of a uniform
//! field, and the streamer criterion along traced field lines (uniform air and SF6 gaps, the
//! coaxial field).

use crate::common::{cond, diel, permittivities, run, shape};
use engine::{
    condenser_grading, creepage_path, electrode_distance, field_utilisation, local_peaks, probe_interface,
    region_peaks_away_from, solve, stressed_volume, trace_field_lines, ConductorSpec, Electrode, Gas, GasKind,
    InterfaceSelector, LineEnd, PeakSite, Problem,
};
use mesher::{generate, Curve, Geometry, OuterBoundary, Outline, RefineParams, SizePoint, Symmetry};
use std::f64::consts::PI;

const V: ConductorSpec = ConductorSpec::Fixed { potential_v: 1.0 };

/// Coaxial cylinders a = 1 cm (at 1 V) and b = 3 cm (earthed outer boundary), one
/// dielectric, P2.
fn coax(h: f64) -> (mesher::Mesh, engine::Solution) {
    let shapes = vec![
        shape("gap", Outline::circle("gap", [0.0, 0.0], 0.03).unwrap(), diel(2.2)),
        shape("core", Outline::circle("core", [0.0, 0.0], 0.01).unwrap(), cond(0)),
    ];
    run(Symmetry::Planar, shapes, &[("core", V)], Some(0.0), h, 2)
}

#[test]
fn utilisation_factor_of_coaxial_cylinders() {
    // η = r·ln(R/r)/(R − r) (Schwaiger's factor for coaxial cylinders; Kuffel, Zaengl &
    // Kuffel 2000, recalled from memory; the coaxial field E = U/(r·ln(R/r)) of any
    // electrostatics text, e.g. Griffiths 2017 §2.3).
    let (a, b) = (0.01f64, 0.03f64);
    let exact = a * (b / a).ln() / (b - a);
    let (mesh, sol) = coax(0.002);
    let d = electrode_distance(&mesh, Electrode::Conductor(0), Electrode::Outer).unwrap();
    assert!((d.distance - (b - a)).abs() < 1e-4 * (b - a), "d = {}", d.distance);
    let e_max = region_peaks_away_from(&mesh, &sol, &[])[0].e_max_v_per_m;
    let eta = field_utilisation(1.0, d.distance, e_max);
    eprintln!("coax η {eta:.6} against {exact:.6}: rel. error {:.2e}", (eta - exact) / exact);
    assert!((eta - exact).abs() < 1e-3 * exact, "η = {eta} against {exact}");
}

#[test]
fn stressed_and_weibull_volumes_of_coaxial_cylinders() {
    // E(r) = U/(r·ln(b/a)), so |E| ≥ x·E_max for r ≤ a/x: V(x) = π((a/x)² − a²) per metre;
    // V_eff = ∫(a/r)^m 2πr dr = 2πa²(1 − (a/b)^(m−2))/(m − 2) (closed forms of the coaxial
    // field, Griffiths 2017 §2.3).
    let (a, b) = (0.01f64, 0.03f64);
    // The indicator |E| ≥ x·E_max amplifies field errors near its level curve (dV/V ≈ 10·dE/E
    // at x = 0.9): measured errors at h = 1.5 mm up to 1.5e-2, at 0.7 mm up to 7.7e-3.
    let (mesh, sol) = coax(0.0007);
    let e_ref = region_peaks_away_from(&mesh, &sol, &[])[0].e_max_v_per_m;
    let e_exact = 1.0 / (a * (b / a).ln());
    assert!((e_ref - e_exact).abs() < 1e-3 * e_exact);
    let m = 10.0;
    let sv = stressed_volume(&mesh, &sol, 0, e_ref, &[0.8, 0.9, 0.95], Some(m), &[]);
    let total = PI * (b * b - a * a);
    assert!((sv.volume_m3 - total).abs() < 1e-4 * total, "{} vs {total}", sv.volume_m3);
    for &(x, v) in &sv.above {
        let exact = PI * ((a / x).powi(2) - a * a);
        eprintln!("coax V({x}) rel. error {:.2e}", (v - exact) / exact);
        assert!((v - exact).abs() < 1e-2 * exact, "V({x}) = {v:e} against {exact:e}");
    }
    let w = sv.weibull.unwrap();
    let exact = 2.0 * PI * a * a * (1.0 - (a / b).powf(m - 2.0)) / (m - 2.0);
    let v_eff = w.effective_volume.unwrap();
    eprintln!("coax V_eff(m = 10) rel. error {:.2e}", (v_eff - exact) / exact);
    assert_eq!(w.outside_discs, v_eff, "no discs: the same integral");
    assert!((v_eff - exact).abs() < 1e-2 * exact, "V_eff = {v_eff:e} against {exact:e}");
}

#[test]
fn utilisation_factor_of_a_sphere_above_a_plane() {
    // The peak field of a sphere (radius a, centre d above an earthed plane, at U) by the
    // image series of Smythe 1968 §5.08 (as in honesty.rs), η = U/((d − a)·E_max). a = 5 mm,
    // d = 10 mm; the model reaches 1 m, where the truncation is of order (d/L)³ ≈ 1e-6.
    let (a, d, l): (f64, f64, f64) = (0.005, 0.01, 1.0);
    let p = d - a;
    let (mut q, mut z, mut e) = (a, d, 0.0); // q in units of 4πε₀U
    for _ in 0..200 {
        e += q * (1.0 / (z - p).powi(2) + 1.0 / (z + p).powi(2));
        let next = d - a * a / (d + z);
        q *= a / (d + z);
        z = next;
    }
    let exact = 1.0 / ((d - a) * e);
    let ball = {
        let arc = Curve::Arc { center: [0.0, d], radius: a, start: -PI / 2.0, sweep: PI };
        Outline::new("ball", vec![arc, Curve::Line { from: arc.to(), to: arc.from() }]).unwrap()
    };
    let shapes = vec![
        shape("air", Outline::rectangle("air", [0.0, -0.005], [l, l + 0.005], 0.0).unwrap(), diel(1.0)),
        shape("plane", Outline::rectangle("plane", [0.0, -0.005], [l, 0.005], 0.0).unwrap(), cond(1)),
        shape("ball", ball, cond(0)),
    ];
    let problem = Problem {
        permittivity: permittivities(&shapes),
        conductors: vec![V, ConductorSpec::Fixed { potential_v: 0.0 }],
        ..Default::default()
    };
    let geo = Geometry {
        symmetry: Symmetry::Axisymmetric,
        shapes,
        conductors: vec!["ball".into(), "plane".into()],
        outer: OuterBoundary::ZeroFlux,
        size_points: vec![SizePoint { at: [0.0, 0.5 * p], size_m: 1.5e-4 }],
        thin: vec![],
        boundary_pieces: vec![],
    };
    let mesh = generate(&geo, &RefineParams::new().with_order(2).with_max_size_m(0.05)).unwrap().mesh;
    let sol = solve(&mesh, &problem).unwrap();
    let gap = electrode_distance(&mesh, Electrode::Conductor(0), Electrode::Conductor(1)).unwrap();
    assert!((gap.distance - p).abs() < 1e-6, "gap {}", gap.distance);
    assert!(gap.from[0].abs() < 1e-6 && gap.to[0].abs() < 1e-6, "on the axis: {:?}", gap);
    let e_max = region_peaks_away_from(&mesh, &sol, &[])[0].e_max_v_per_m;
    let eta = field_utilisation(1.0, gap.distance, e_max);
    eprintln!("sphere over plane η {eta:.6} against {exact:.6}: rel. error {:.2e}", (eta - exact) / exact);
    assert!((eta - exact).abs() < 2e-3 * exact, "η = {eta} against {exact}");
}

#[test]
fn peaks_of_a_two_layer_coax_are_on_the_right_sides() {
    // Core a = 1 cm at 1 V, layer boundary c = 2 cm, earthed b = 3 cm; ε₁ = 4 inside,
    // ε₂ = 2.2 outside. D = q/(2πr) is continuous, so each layer's largest field is at its
    // inner radius: E₁(a) = q/(2πε₀ε₁a) on the core, E₂(c) = q/(2πε₀ε₂c) on the outer
    // layer's side of the interface, with q/(2πε₀) = 1/(ln(c/a)/ε₁ + ln(b/c)/ε₂) (capacitors
    // in series, Griffiths 2017 §4.4).
    let (a, c, b, e1, e2) = (0.01f64, 0.02f64, 0.03f64, 4.0, 2.2);
    let shapes = vec![
        shape("outer-layer", Outline::circle("outer-layer", [0.0, 0.0], b).unwrap(), diel(e2)),
        shape("inner-layer", Outline::circle("inner-layer", [0.0, 0.0], c).unwrap(), diel(e1)),
        shape("core", Outline::circle("core", [0.0, 0.0], a).unwrap(), cond(0)),
    ];
    let (mesh, sol) = run(Symmetry::Planar, shapes, &[("core", V)], Some(0.0), 0.0015, 2);
    let k = 1.0 / ((c / a).ln() / e1 + (b / c).ln() / e2);
    let separation = 0.01;
    let peaks = local_peaks(&mesh, &sol, &[], 3, separation);
    let inner: Vec<_> = peaks.iter().filter(|p| p.region == 1).collect();
    let outer: Vec<_> = peaks.iter().filter(|p| p.region == 0).collect();
    assert!(!inner.is_empty() && inner.len() <= 3 && !outer.is_empty() && outer.len() <= 3);
    let top_inner = inner[0];
    assert_eq!(top_inner.site, PeakSite::Conductor { conductor: 0 });
    let exact = k / (e1 * a);
    assert!((top_inner.e_v_per_m - exact).abs() < 2e-3 * exact, "{} vs {exact}", top_inner.e_v_per_m);
    let top_outer = outer[0];
    assert_eq!(top_outer.site, PeakSite::Interface { other: 1 });
    let exact = k / (e2 * c);
    assert!((top_outer.e_v_per_m - exact).abs() < 2e-3 * exact, "{} vs {exact}", top_outer.e_v_per_m);
    // Separate peaks: highest first and at least the separation apart within a region.
    for list in [&inner, &outer] {
        for (i, p) in list.iter().enumerate() {
            for q in &list[..i] {
                assert!(q.e_v_per_m >= p.e_v_per_m);
                assert!((p.at[0] - q.at[0]).hypot(p.at[1] - q.at[1]) >= separation);
            }
        }
    }
}

#[test]
fn creepage_along_an_interface_across_a_uniform_gap() {
    // Two dielectrics side by side between parallel plates 10 mm apart (plates at 1000 V and
    // 0 V, zero flux at the sides): the field is uniform, E = U/d in both (the interface is
    // along the field lines), so along the interface E_t = U/d = 10⁵ V/m, the drop is the full
    // 1000 V and the running mean is U/d everywhere (parallel-plate closed form).
    let (w, d, u) = (0.04f64, 0.01f64, 1000.0);
    // The domain holds the plates, which paint over its top and bottom strips.
    let shapes = vec![
        shape("left", Outline::rectangle("left", [0.0, -0.002], [w, d + 0.004], 0.0).unwrap(), diel(2.2)),
        shape("right", Outline::rectangle("right", [0.5 * w, 0.0], [0.5 * w, d], 0.0).unwrap(), diel(5.0)),
        shape("hv", Outline::rectangle("hv", [0.0, d], [w, 0.002], 0.0).unwrap(), cond(0)),
        shape("earth", Outline::rectangle("earth", [0.0, -0.002], [w, 0.002], 0.0).unwrap(), cond(1)),
    ];
    let conductors =
        [("hv", ConductorSpec::Fixed { potential_v: u }), ("earth", ConductorSpec::Fixed { potential_v: 0.0 })];
    let (mesh, sol) = run(Symmetry::Planar, shapes, &conductors, None, 0.001, 2);
    let rows = probe_interface(&mesh, &sol, InterfaceSelector::Regions(0, 1));
    let path = creepage_path(&rows, |_| true);
    let e = u / d;
    assert!((path.e_t_max.0 - e).abs() < 1e-6 * e, "E_t max {} vs {e}", path.e_t_max.0);
    assert!((path.potential_drop_v.abs() - u).abs() < 1e-9 * u, "drop {}", path.potential_drop_v);
    assert!((path.length_m - d).abs() < 1e-9 * d, "length {}", path.length_m);
    assert_eq!(path.chains.len(), 1);
    for r in &path.rows {
        assert!((r.e_t.abs() - e).abs() < 1e-6 * e);
        assert!((r.running_mean - e).abs() < 1e-6 * e, "running mean {} at s = {}", r.running_mean, r.s);
    }
}

/// Parallel plates `d` metres apart (plate at `u` volts above an earthed one), zero flux at
/// the sides: the field is exactly uniform. Returns the mesh, solution and the gas region.
fn plates(d: f64, u: f64, order: u8) -> (mesher::Mesh, engine::Solution) {
    let w = 2.0 * d;
    let t = 0.1 * d;
    let shapes = vec![
        shape("gas", Outline::rectangle("gas", [0.0, -t], [w, d + 2.0 * t], 0.0).unwrap(), diel(1.0)),
        shape("hv", Outline::rectangle("hv", [0.0, d], [w, t], 0.0).unwrap(), cond(0)),
        shape("earth", Outline::rectangle("earth", [0.0, -t], [w, t], 0.0).unwrap(), cond(1)),
    ];
    let conductors =
        [("hv", ConductorSpec::Fixed { potential_v: u }), ("earth", ConductorSpec::Fixed { potential_v: 0.0 })];
    run(Symmetry::Planar, shapes, &conductors, None, 0.25 * d, order)
}

/// The inception voltage of the uniform gap by tracing a line from the middle of the
/// high-voltage plate and finding the scale at which the streamer criterion is met.
fn traced_inception(gas: &Gas, d: f64) -> f64 {
    let u = 1000.0;
    let (mesh, sol) = plates(d, u, 2);
    let lines = trace_field_lines(&mesh, &sol, 0, &[[d, d]]);
    assert_eq!(lines.len(), 1);
    let line = &lines[0];
    assert_eq!(line.end, LineEnd::LeftRegion);
    let end = *line.at.last().unwrap();
    assert!((end[0] - d).abs() < 1e-9 && end[1].abs() < 1e-5 * d, "straight across: ends at {end:?}");
    u * line.inception_scale(gas).unwrap()
}

#[test]
fn streamer_criterion_in_uniform_air_gaps() {
    // The empirical uniform-field breakdown law of dry air at 20 °C, 1 bar,
    // U_b = 6.72·√(pd) + 24.36·(pd) kV with pd in bar·cm (Kuffel, Zaengl & Kuffel 2000 §2;
    // Dakin et al., Electra 32 (1974); recalled from memory, `../shared/TRADE.md` §1.6),
    // against the streamer criterion with the Zaengl–Petcharaks α_eff and K = 9.15, traced
    // through the finite-element field of a plate gap, over 0.5–5 cm.
    let air = Gas { kind: GasKind::DryAir, pressure_bar: 1.0, temperature_c: 20.0 };
    for d_cm in [0.5f64, 1.0, 2.0, 5.0] {
        let d = d_cm / 100.0;
        let empirical = 1e3 * (6.72 * d_cm.sqrt() + 24.36 * d_cm);
        let traced = traced_inception(&air, d);
        let uniform = air.uniform_inception_voltage(d);
        eprintln!(
            "air {d_cm} cm: traced {traced:.1} V, law {empirical:.1} V: {:+.2} %",
            100.0 * (traced - empirical) / empirical
        );
        assert!((traced - uniform).abs() < 1e-6 * uniform, "{d_cm} cm: traced {traced} V, uniform {uniform} V");
        assert!((traced - empirical).abs() < 0.04 * empirical, "{d_cm} cm: {traced} V against the law's {empirical} V");
    }
}

#[test]
fn streamer_criterion_in_uniform_sf6_gaps() {
    // α_eff/p = 27.7·(E/p − 88.8) per bar·cm and K = 10.5 (Pedersen 1970, recalled from
    // memory) give in a uniform gap α_eff·d = K, U = 88.8·(pd) + K/27.7 kV (pd in bar·cm):
    // the criterion's own closed form, at 1, 3 and 5 bar, d = 1 cm, 20 °C.
    for p in [1.0f64, 3.0, 5.0] {
        let sf6 = Gas { kind: GasKind::Sf6, pressure_bar: p, temperature_c: 20.0 };
        let exact = 1e3 * (88.8 * p * 1.0 + 10.5 / 27.7);
        let traced = traced_inception(&sf6, 0.01);
        eprintln!("SF6 {p} bar: traced {traced:.3} V, closed form {exact:.3} V: rel. {:.1e}", (traced - exact) / exact);
        assert!((traced - exact).abs() < 1e-6 * exact, "{p} bar: {traced} V against {exact} V");
    }
    // The same density at 60 °C and 1.1365 bar (1.1365·293.15/333.15 = 1.0000 bar at 20 °C).
    let hot = Gas { kind: GasKind::Sf6, pressure_bar: 1.0 * 333.15 / 293.15, temperature_c: 60.0 };
    let cold = Gas { kind: GasKind::Sf6, pressure_bar: 1.0, temperature_c: 20.0 };
    assert!((hot.uniform_inception_voltage(0.01) - cold.uniform_inception_voltage(0.01)).abs() < 1e-6);
}

#[test]
fn field_lines_of_the_coax_are_radial_and_carry_the_analytic_integral() {
    // The coaxial field E = U/(r·ln(b/a)) is radial (Griffiths 2017 §2.3): lines from the core
    // run along rays to the outer conductor, and the ionisation integral along them equals the
    // quadrature of α_eff(k·U/(r ln(b/a))) over r from a to where α_eff vanishes.
    let (a, b) = (0.01f64, 0.03f64);
    // α_eff amplifies field errors (dα/α ≈ 3.4·dE/E at twice the critical field): measured
    // integral errors up to 2.0e-3 at h = 2 mm.
    let (mesh, sol) = coax(0.001);
    let angles = [0.1f64, 1.0, 2.5, 4.0];
    let starts: Vec<[f64; 2]> = angles.iter().map(|t| [a * t.cos(), a * t.sin()]).collect();
    let lines = trace_field_lines(&mesh, &sol, 0, &starts);
    assert_eq!(lines.len(), angles.len());
    let air = Gas { kind: GasKind::DryAir, pressure_bar: 1.0, temperature_c: 20.0 };
    // A scale at which the field at the core is twice the critical field.
    let k = 2.0 * air.critical_field() * a * (b / a).ln();
    let field = |r: f64| k / (r * (b / a).ln());
    let r_star = k / ((b / a).ln() * air.critical_field());
    let n = 20_000;
    let exact: f64 = (0..n)
        .map(|i| {
            // Simpson on [a, r*].
            let h = (r_star - a) / n as f64;
            let (r0, r1) = (a + i as f64 * h, a + (i + 1) as f64 * h);
            let f = |r: f64| air.effective_ionisation(field(r)).max(0.0);
            h / 6.0 * (f(r0) + 4.0 * f(0.5 * (r0 + r1)) + f(r1))
        })
        .sum();
    for (line, &t) in lines.iter().zip(&angles) {
        assert_eq!(line.end, LineEnd::LeftRegion);
        let off = line
            .at
            .iter()
            .map(|p| {
                let d = (p[1].atan2(p[0]) - t).rem_euclid(std::f64::consts::TAU);
                d.min(std::f64::consts::TAU - d)
            })
            .fold(0.0, f64::max);
        eprintln!("angle {t}: off the ray by {off:.2e} rad");
        assert!(off < 1e-3, "off the ray by {off} rad");
        let end = line.at.last().unwrap();
        assert!((end[0].hypot(end[1]) - b).abs() < 1e-4 * b, "ends at r = {}", end[0].hypot(end[1]));
        let (integral, x_c) = line.ionisation_integral(&air, k);
        eprintln!(
            "∫α ds rel. error {:.2e}, x_c {:.2e}",
            (integral - exact) / exact,
            (x_c - (r_star - a)) / (r_star - a)
        );
        assert!((integral - exact).abs() < 2e-3 * exact, "∫α ds = {integral} against {exact}");
        assert!((x_c - (r_star - a)).abs() < 2e-3 * (r_star - a), "x_c = {x_c} against {}", r_star - a);
    }
}

#[test]
fn equal_capacitance_foils_divide_the_voltage_equally() {
    // A coaxial stack (planar, per metre): core a = 10 mm at 1 V, n = 4 layers, floating
    // foils of thickness t between them, the earthed outer boundary the last foil. Each
    // layer's outer and inner radii are in the same ratio q, so every layer has the same
    // capacitance C = 2πε₀εᵣ/ln q and the series chain divides the voltage into equal steps
    // U/n (closed form of capacitors in series, Griffiths 2017 §2.5 and §4.4; the grading
    // rule of condenser bushings, `../shared/TRADE.md` §3.2). The series capacitance core to
    // boundary is C/n; the mean radial stress of layer k is (U/n)/(ρ_out − ρ_in).
    let (a, q, t, n, er) = (0.01f64, 1.3f64, 0.0005f64, 4usize, 3.5);
    // Layer k spans [inner[k], inner[k]·q]; foil k spans [inner[k]·q, inner[k]·q + t].
    let mut inner = vec![a];
    for k in 1..n {
        inner.push(inner[k - 1] * q + t);
    }
    let b = inner[n - 1] * q;
    let mut shapes = vec![shape("layer-4", Outline::circle("layer-4", [0.0, 0.0], b).unwrap(), diel(er))];
    for k in (0..n - 1).rev() {
        let r_out = inner[k] * q + t;
        let name = format!("foil-{}", k + 1);
        shapes.push(shape(&name, Outline::circle(&name, [0.0, 0.0], r_out).unwrap(), cond(1 + k as u32)));
        let layer = format!("layer-{}", k + 1);
        shapes.push(shape(&layer, Outline::circle(&layer, [0.0, 0.0], inner[k] * q).unwrap(), diel(er)));
    }
    shapes.push(shape("core", Outline::circle("core", [0.0, 0.0], a).unwrap(), cond(0)));
    let floating = ConductorSpec::Floating { charge_c: 0.0 };
    let conductors = [("core", V), ("foil1", floating), ("foil2", floating), ("foil3", floating)];
    let (mesh, _) = run(Symmetry::Planar, shapes.clone(), &conductors, Some(0.0), 0.0015, 2);
    let problem = Problem {
        permittivity: permittivities(&shapes),
        conductors: conductors.iter().map(|c| c.1).collect(),
        outer_potential_v: Some(0.0),
        ..Default::default()
    };
    let solved = engine::solve_factored(&mesh, &problem).unwrap();
    // The stack: core, three floating foils; the outer boundary closes it (its layer is the
    // last: checked through the potentials).
    let stack = condenser_grading(&mesh, &problem, &solved, &[0, 1, 2, 3]);
    for (k, v) in stack.potentials.iter().enumerate() {
        let exact = 1.0 - k as f64 / n as f64;
        assert!((v - exact).abs() < 1e-4, "foil {k} at {v} V, the chain gives {exact}");
    }
    let c = 2.0 * PI * engine::EPSILON_0 * er / q.ln();
    for (k, layer) in stack.layers.iter().enumerate() {
        assert!((layer.step_v - 0.25).abs() < 1e-4, "layer {}: step {}", k + 1, layer.step_v);
        assert!(
            (layer.partial_capacitance_f - c).abs() < 1e-3 * c,
            "layer {}: C {:e} against {c:e}",
            k + 1,
            layer.partial_capacitance_f
        );
        let d = inner[k] * (q - 1.0);
        assert!((layer.distance_m - d).abs() < 1e-5 * d);
        assert!((layer.mean_stress_v_per_m - 0.25 / d).abs() < 1e-3 * 0.25 / d);
        // The largest field of the layer is at its inner foil: ΔU/(ρ_in·ln q) (sampled with
        // the elements' own fields: 2.2e-3 low at h = 1.5 mm on a 3 mm layer).
        let e_max = 0.25 / (inner[k] * q.ln());
        assert!((layer.max_stress_v_per_m - e_max).abs() < 5e-3 * e_max, "{} vs {e_max}", layer.max_stress_v_per_m);
    }
    // Core to the last listed foil (foil 3) through three layers: C/3.
    assert!((stack.series_capacitance_f - c / 3.0).abs() < 1e-3 * c / 3.0, "{:e}", stack.series_capacitance_f);
}
