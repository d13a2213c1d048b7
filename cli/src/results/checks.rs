//! The breakdown checks of one solution, per load case: the `checks` section of
//! `results.json`, the creepage CSV files and the terminal table. The arithmetic of each
//! check is the engine's (`engine::checks`, formulas and sources there); this module picks
//! what to check from the plan, scales it per load case and says what each figure is.

use crate::plan::{ElectrodeRef, LoadCase, Plan};
use crate::results::solve::interface_selector;
use engine::{
    condenser_grading, creepage_path, electrode_distance, field_utilisation, probe_interface,
    singular_coefficient_dual, singular_field_factor, singular_radius_above, stress_check, stressed_volume, Electrode,
    FactoredSolution, GasKind, LineEnd, PeakSite, Problem, StressCheck,
};
use mesher::{Mesh, Xy};
use rayon::prelude::*;
use serde::Serialize;

/// The cautions of the breakdown checks (with the general ones of every result).
pub const CHECK_CAUTIONS: [&str; 4] = [
    "Verdicts compare computed stresses with the allowable values of the model file (your or your company's data, in each load case's basis); they are indicative: type tests under the applicable apparatus standards, local codes and licensed engineering practice decide.",
    "Load cases scale one electrostatic solution (linear materials): valid for alternating and impulse voltages, not for the DC steady state, where conductivities govern the stress.",
    "rms figures are the peak figures divided by √2 (a sinusoidal voltage); gas and impulse criteria are stated on peak values.",
    "A verdict on a single solve has no error bar (marked 'uncertified'): run `fieldgrade check` for stresses whose error bars are certified.",
];

/// The `checks` section of `results.json`.
#[derive(Serialize, Debug)]
pub struct Checks {
    /// The peak away from singular points of every region at the model's potentials (each
    /// case's peaks are these × its `scale`): the report's colour scale and peak marks.
    pub peaks_away: Vec<PeakAway>,
    /// One entry per load case (the model's potentials as given when it defines none).
    pub load_cases: Vec<CaseChecks>,
    /// Field utilisation factors between named electrodes (independent of the load case).
    pub field_factors: Vec<FieldFactorResult>,
    /// Stressed volume and Weibull effective volume per region (independent of the case).
    pub stressed_volumes: Vec<StressedVolumeResult>,
    /// Creepage figures along every interface and surface probe, at the model's potentials
    /// (multiply by a case's `scale` for that case); the samples are in `file`.
    pub creepage: Vec<CreepageResult>,
    /// Discharge inception in every gas region (the voltage scale is the case's below).
    pub gas: Vec<GasResult>,
    /// Condenser-grading stacks at the model's potentials (their stresses per case below).
    pub grading: Vec<GradingResult>,
    /// The cautions of these checks.
    pub cautions: Vec<&'static str>,
}

/// One region's peak away from singular points, at the model's potentials.
#[derive(Serialize, Debug)]
pub struct PeakAway {
    /// Region name.
    pub region: String,
    /// |E|, V/m (the certified value where `check` has one).
    pub e_v_per_m: f64,
    /// Its error bar, V/m (`check` only).
    pub error_bar_v_per_m: Option<f64>,
    /// Where, m.
    pub at_m: Xy,
}

/// The discharge-inception check of one gas region.
#[derive(Serialize, Debug)]
pub struct GasResult {
    /// Region name.
    pub region: String,
    /// "dry air" or "SF6".
    pub gas: &'static str,
    /// Absolute pressure, bar, and temperature, °C.
    pub pressure_bar: f64,
    /// See `pressure_bar`.
    pub temperature_c: f64,
    /// The pressure at 20 °C of the same density, bar.
    pub reduced_pressure_bar: f64,
    /// The field above which α_eff > 0, V/m.
    pub critical_field_v_per_m: f64,
    /// The streamer constant K of the coefficient pair.
    pub streamer_constant: f64,
    /// Where the coefficient pair comes from.
    pub coefficients: &'static str,
    /// The field lines' CSV in the output folder.
    pub file: String,
    /// Every traced line.
    pub lines: Vec<FieldLineResult>,
    /// The inception voltage of the weakest line as a peak value of the model's largest
    /// potential, V (null if no line reaches the criterion).
    pub inception_voltage_v: Option<f64>,
    /// The factor on the model's potentials at inception.
    pub inception_scale: Option<f64>,
    /// Index of the weakest line.
    pub weakest_line: Option<usize>,
    /// What the figure rests on.
    pub note: &'static str,
}

/// One traced field line.
#[derive(Serialize, Debug)]
pub struct FieldLineResult {
    /// Start, metres.
    pub start_m: Xy,
    /// End, metres.
    pub end_m: Xy,
    /// "left the region", "stagnation point", "length limit".
    pub end: &'static str,
    /// Length, metres.
    pub length_m: f64,
    /// |E| at the start, V/m (model potentials).
    pub e_start_v_per_m: f64,
    /// The factor on the model's potentials at which the criterion is met on this line.
    pub inception_scale: Option<f64>,
    /// The avalanche length x_c at inception, metres.
    pub avalanche_length_m: Option<f64>,
}

/// A condenser-grading stack at the model's potentials.
#[derive(Serialize, Debug)]
pub struct GradingResult {
    /// Name.
    pub name: String,
    /// The foils, from the high-voltage side.
    pub foils: Vec<String>,
    /// Each foil's potential, V, and as a percentage of the stack's voltage (first − last).
    pub potentials_v: Vec<f64>,
    /// See `potentials_v`.
    pub potentials_percent: Vec<f64>,
    /// The layers between neighbouring foils.
    pub layers: Vec<GradingLayerResult>,
    /// The capacitance from the first to the last foil with the foils between floating
    /// (C1 of a bushing), F (F/m planar).
    pub series_capacitance_f: f64,
}

/// One layer of a grading stack at the model's potentials.
#[derive(Serialize, Debug)]
pub struct GradingLayerResult {
    /// The two foils.
    pub between: [String; 2],
    /// Voltage step, V, as a percentage of the stack's voltage, and the ideal 100/n %.
    pub step_v: f64,
    /// See `step_v`.
    pub step_percent: f64,
    /// See `step_v`.
    pub ideal_step_percent: f64,
    /// Partial capacitance between the foils, F (F/m planar).
    pub partial_capacitance_f: f64,
    /// Shortest distance between the foils, metres, and its ends.
    pub distance_m: f64,
    /// See `distance_m`.
    pub from_m: Xy,
    /// See `distance_m`.
    pub to_m: Xy,
    /// Mean radial stress |ΔU|/d and the largest |E| along that shortest path, V/m.
    pub mean_radial_stress_v_per_m: f64,
    /// See `mean_radial_stress_v_per_m`.
    pub max_radial_stress_v_per_m: f64,
    /// Axial step between the foils' upper ends and its mean axial stress |ΔU|/a (null where
    /// the inner foil does not reach beyond the outer one).
    pub axial_step_top_m: Option<f64>,
    /// See `axial_step_top_m`.
    pub axial_stress_top_v_per_m: Option<f64>,
    /// The same at the lower ends.
    pub axial_step_bottom_m: Option<f64>,
    /// See `axial_step_bottom_m`.
    pub axial_stress_bottom_v_per_m: Option<f64>,
}

/// A grading stack's stresses in one load case (case basis).
#[derive(Serialize, Debug)]
pub struct GradingCaseCheck {
    /// Stack name.
    pub name: String,
    /// Per layer: (mean radial, largest radial, axial at the top, axial at the bottom), V/m.
    pub layers: Vec<GradingCaseLayer>,
}

/// One layer's stresses in one load case.
#[derive(Serialize, Debug)]
pub struct GradingCaseLayer {
    /// The two foils.
    pub between: [String; 2],
    /// Mean radial stress, V/m.
    pub mean_radial_v_per_m: f64,
    /// Largest radial stress along the layer's shortest path, V/m.
    pub max_radial_v_per_m: f64,
    /// Mean axial stress at the upper foil-end step, V/m.
    pub axial_top_v_per_m: Option<f64>,
    /// Mean axial stress at the lower foil-end step, V/m.
    pub axial_bottom_v_per_m: Option<f64>,
}

/// The gas check of a region in one load case.
#[derive(Serialize, Debug)]
pub struct GasCaseCheck {
    /// Region name.
    pub region: String,
    /// The case's peak voltage on its reference, V.
    pub peak_voltage_v: f64,
    /// The inception voltage on the same reference (peak), V.
    pub inception_voltage_v: Option<f64>,
    /// inception / case peak voltage.
    pub margin: Option<f64>,
    /// "pass" (no inception: margin ≥ 1), "fail", or "no inception found".
    pub verdict: &'static str,
}

/// The checks of one load case.
#[derive(Serialize, Debug)]
pub struct CaseChecks {
    /// Case name.
    pub name: String,
    /// Kind ("service", "ac_withstand", …; "as modelled" without load cases).
    pub kind: &'static str,
    /// "rms", "peak" or "as given": the basis of every stress of this case.
    pub basis: &'static str,
    /// The reference voltage of the case, V (in its basis).
    pub voltage_v: f64,
    /// What the voltage is of.
    pub reference: String,
    /// Factor on the model's potentials and stresses.
    pub scale: f64,
    /// Peak value / value in this basis (√2 for rms).
    pub peak_factor: f64,
    /// Every dielectric region's stress check.
    pub regions: Vec<RegionCheck>,
    /// The tangential stress along every interface and surface probe.
    pub interfaces: Vec<TangentialCheck>,
    /// Discharge inception in every gas region, against this case's peak voltage.
    pub gas: Vec<GasCaseCheck>,
    /// Every grading stack's layer stresses in this case.
    pub grading: Vec<GradingCaseCheck>,
}

/// A stress, its bar, its allowable and the verdict, as written.
#[derive(Serialize, Debug, Clone)]
pub struct StressFigures {
    /// Stress in the case's basis, V/m.
    pub e_v_per_m: f64,
    /// The same as a peak value, V/m.
    pub e_peak_v_per_m: f64,
    /// Absolute error bar, V/m (null for a single solve).
    pub error_bar_v_per_m: Option<f64>,
    /// Allowable stress in the case's basis, kV/mm.
    pub allowable_kv_per_mm: Option<f64>,
    /// E / E_allow.
    pub utilisation: Option<f64>,
    /// E_allow / E.
    pub margin: Option<f64>,
    /// "pass", "fail", "undecided" (the bar straddles the allowable) or "no allowable".
    pub verdict: &'static str,
    /// True when the error bar is certified (`check`); false for a single solve.
    pub certified: bool,
}

impl StressFigures {
    fn of(c: StressCheck, peak_factor: f64) -> StressFigures {
        StressFigures {
            e_v_per_m: c.stress,
            e_peak_v_per_m: c.stress * peak_factor,
            error_bar_v_per_m: c.error_bar,
            allowable_kv_per_mm: c.allowable.map(|a| a / 1e6),
            utilisation: c.utilisation,
            margin: c.margin,
            verdict: c.verdict.word(),
            certified: c.error_bar.is_some(),
        }
    }
}

impl Checks {
    /// The first figure of the checks that is not a finite number, named.
    pub fn first_non_finite(&self) -> Option<String> {
        let bad = |x: f64| !x.is_finite();
        let bad_fig =
            |f: &StressFigures| bad(f.e_v_per_m) || f.utilisation.is_some_and(bad) || f.margin.is_some_and(bad);
        for c in &self.load_cases {
            if let Some(r) =
                c.regions.iter().find(|r| bad_fig(&r.peak) || r.local_peaks.iter().any(|p| bad(p.e_v_per_m)))
            {
                return Some(format!("the stress check of region '{}' in load case '{}'", r.region, c.name));
            }
            if let Some(t) = c.interfaces.iter().find(|t| bad_fig(&t.e_t) || bad(t.potential_drop_v)) {
                return Some(format!("the tangential check of probe '{}' in load case '{}'", t.probe, c.name));
            }
        }
        if let Some(f) = self.field_factors.iter().find(|f| bad(f.utilisation_factor) || bad(f.distance_m)) {
            return Some(format!("field factor '{}'", f.name));
        }
        if let Some(v) = self.stressed_volumes.iter().find(|v| {
            bad(v.volume_m3) || v.above.iter().any(|a| bad(a.1)) || v.weibull_effective_volume_m3.is_some_and(bad)
        }) {
            return Some(format!("the stressed volume of region '{}'", v.region));
        }
        if let Some(g) = self.gas.iter().find(|g| g.inception_voltage_v.is_some_and(bad)) {
            return Some(format!("the inception voltage of gas region '{}'", g.region));
        }
        None
    }
}

/// One region's stress check in one load case.
#[derive(Serialize, Debug)]
pub struct RegionCheck {
    /// Region (shape) name.
    pub region: String,
    /// Material.
    pub material: String,
    /// The peak away from singular points (the one that converges), checked.
    pub peak: StressFigures,
    /// Where, metres.
    pub at_m: Xy,
    /// The few highest separate local peaks (highest first), each checked on its value.
    pub local_peaks: Vec<PeakResult>,
    /// The field-singular points of the region: no peak value, their singular analysis.
    pub singular_points: Vec<SingularCheck>,
}

/// One local peak.
#[derive(Serialize, Debug)]
pub struct PeakResult {
    /// |E| in the case's basis, V/m.
    pub e_v_per_m: f64,
    /// E / E_allow.
    pub utilisation: Option<f64>,
    /// Where, metres.
    pub at_m: Xy,
    /// "inside", "on the interface with REGION (this region's side)", "on conductor NAME",
    /// "on the outer boundary", "on the axis".
    pub site: String,
}

/// A field-singular point of a region, checked by its singular analysis.
#[derive(Serialize, Debug)]
pub struct SingularCheck {
    /// S1, S2 … as in the mesh report.
    pub id: String,
    /// Exponent λ (< 1).
    pub lambda: f64,
    /// Distance from the point within which |E| ≈ k·|A|·r^(λ−1) exceeds the allowable in
    /// this case, metres (null without an allowable or a coefficient).
    pub radius_above_allowable_m: Option<f64>,
    /// What it means.
    pub note: String,
}

/// The tangential stress along an interface or surface probe in one case.
#[derive(Serialize, Debug)]
pub struct TangentialCheck {
    /// Probe name.
    pub probe: String,
    /// The largest |E_t| away from singular points, checked.
    pub e_t: StressFigures,
    /// Where, metres.
    pub at_m: Xy,
    /// The potential drop along the path in this case, V.
    pub potential_drop_v: f64,
    /// The largest running mean |ΔV(s)|/s in this case, V/m.
    pub running_mean_max_v_per_m: f64,
}

/// A field utilisation factor.
#[derive(Serialize, Debug)]
pub struct FieldFactorResult {
    /// Name.
    pub name: String,
    /// The two electrodes.
    pub between: [String; 2],
    /// The voltage between them, V (the model's potentials).
    pub voltage_v: f64,
    /// Their shortest distance d, metres, and its ends.
    pub distance_m: f64,
    /// Where d starts and ends, metres.
    pub from_m: Xy,
    /// See `from_m`.
    pub to_m: Xy,
    /// The mean field U/d, V/m.
    pub e_mean_v_per_m: f64,
    /// The largest field away from singular points over the dielectric regions, V/m.
    pub e_max_v_per_m: f64,
    /// The region where it is.
    pub e_max_region: String,
    /// η = U/(d·E_max).
    pub utilisation_factor: f64,
    /// 1/η.
    pub enhancement_factor: f64,
}

/// Stressed volumes of one region.
#[derive(Serialize, Debug)]
pub struct StressedVolumeResult {
    /// Region name.
    pub region: String,
    /// E_ref: the region's peak away from singular points, V/m (model potentials).
    pub e_ref_v_per_m: f64,
    /// The region's volume, m³ (m³ per metre of depth planar).
    pub volume_m3: f64,
    /// (x, volume where |E| ≥ x·E_ref, m³).
    pub above: Vec<(f64, f64)>,
    /// The Weibull shape m of the material, if given.
    pub weibull_shape: Option<f64>,
    /// V_eff = ∫(E/E_ref)^m dV, m³; null when it diverges or m is not given.
    pub weibull_effective_volume_m3: Option<f64>,
    /// The same integral outside the exclusion discs around singular points, m³ (finite
    /// where the whole one diverges).
    pub weibull_effective_volume_outside_discs_m3: Option<f64>,
    /// Why V_eff is null when m is given.
    pub note: Option<String>,
}

/// The creepage figures of one interface or surface probe at the model's potentials.
#[derive(Serialize, Debug)]
pub struct CreepageResult {
    /// Probe name.
    pub probe: String,
    /// CSV of the samples in the output folder.
    pub file: String,
    /// Every chain of edges of the interface: (length m, potential drop V from its first
    /// vertex to its last).
    pub chains: Vec<(f64, f64)>,
    /// Largest |E_t| away from singular points, V/m, its chain, arc length along that chain
    /// and position.
    pub e_t_max_v_per_m: f64,
    /// See `e_t_max_v_per_m`.
    pub e_t_max_chain: usize,
    /// See `e_t_max_v_per_m`.
    pub e_t_max_s_m: f64,
    /// See `e_t_max_v_per_m`.
    pub e_t_max_at_m: Xy,
    /// Largest running mean |ΔV(s)|/s away from singular points, V/m, its chain and arc
    /// length.
    pub running_mean_max_v_per_m: f64,
    /// See `running_mean_max_v_per_m`.
    pub running_mean_max_chain: usize,
    /// See `running_mean_max_v_per_m`.
    pub running_mean_max_s_m: f64,
}

/// A certified value and its absolute error bar for a watched quantity, by the quantity's
/// name (`check`), or nothing (`solve`).
pub type BarLookup<'a> = &'a dyn Fn(&str) -> Option<(f64, f64)>;

/// Why the Weibull effective volume diverges at singular point `s` (index) of exponent λ.
fn divergence_note(s: usize, lambda: f64) -> String {
    format!(
        "V_eff diverges at singular point S{} (m·(1 − λ) ≥ 2, λ = {lambda:.4}): model the real edge radius; outside the discs around singular points it is finite",
        s + 1
    )
}

/// The breakdown checks of `sol` on `mesh`, for every load case of the plan, and the
/// creepage CSV files (name, contents). `discs` are the exclusion discs around singular
/// points; `bar_of` gives the certified peak values and bars where `check` has them.
/// `solved` is the factorised solution (the grading stacks' partial capacitances take a
/// substitution per floating conductor from it).
pub fn breakdown_checks(
    plan: &Plan,
    mesh: &Mesh,
    problem: &Problem,
    solved: &FactoredSolution,
    discs: &[(Xy, f64)],
    bar_of: BarLookup<'_>,
) -> (Checks, Vec<(String, String)>) {
    let sol = &solved.solution;
    let outside = |p: Xy| !engine::in_exclusion_disc(discs, p);
    let region_name = |r: u32| mesh.shape_names[r as usize].clone();
    let material = |r: u32| plan.shape_material.get(r as usize).copied().flatten().map(|m| &plan.materials[m]);
    // The peak away from singular points of every region: certified value and bar where
    // `check` has them, else this solution's value.
    let lap = Lap::new();
    let peaks: Vec<(u32, f64, Option<f64>, Xy)> = solved
        .region_peaks_away_from(mesh, discs)
        .into_iter()
        .map(|p| {
            let name = format!("peak field in {} away from singular points", region_name(p.region));
            match bar_of(&name) {
                Some((v, b)) => (p.region, v, Some(b), p.at),
                None => (p.region, p.e_max_v_per_m, None, p.at),
            }
        })
        .collect();
    let separation = plan.breakdown.peak_separation_m.unwrap_or(0.02 * mesh.scale());
    lap.mark("peaks away");
    let stressed_volumes = || -> Vec<StressedVolumeResult> {
        peaks
            .par_iter()
            .filter(|p| p.1 > 0.0)
            .map(|&(r, e, _, _)| {
                let m = material(r).and_then(|m| m.weibull_shape);
                let sv = stressed_volume(mesh, sol, r, e, &plan.breakdown.stressed_fractions, m, discs);
                let w = sv.weibull;
                StressedVolumeResult {
                    region: region_name(r),
                    e_ref_v_per_m: e,
                    volume_m3: sv.volume_m3,
                    above: sv.above,
                    weibull_shape: m,
                    weibull_effective_volume_m3: w.and_then(|w| w.effective_volume),
                    weibull_effective_volume_outside_discs_m3: w.map(|w| w.outside_discs),
                    note: w.and_then(|w| w.diverges_at).map(|s| divergence_note(s, mesh.singular_points[s].lambda)),
                }
            })
            .collect()
    };
    // The local peaks, the grading checks and the stressed volumes are independent passes
    // over the mesh, mostly sequential each: side by side.
    let ((locals, grading), stressed_volumes) = rayon::join(
        || {
            rayon::join(
                || solved.local_peaks(mesh, discs, plan.breakdown.local_peaks, separation),
                || grading_checks(plan, mesh, problem, solved),
            )
        },
        stressed_volumes,
    );
    lap.mark("local peaks, grading and stressed volumes");
    // Singular coefficients (A, k) of the field-singular points, where a conductor bounds them.
    let singular: Vec<(usize, Option<(f64, f64)>)> = mesh
        .singular_points
        .iter()
        .enumerate()
        .filter(|(_, s)| s.is_field_singular())
        .map(|(k, s)| {
            let radius = discs.iter().find(|d| d.0 == s.at).map(|d| d.1);
            let coef = match (radius, s.conductor) {
                (Some(r), Some(c)) => singular_coefficient_dual(mesh, sol, s, sol.conductor_potentials[c as usize], r),
                _ => None,
            };
            (k, coef.zip(singular_field_factor(s)))
        })
        .collect();
    let cases = if plan.load_cases.is_empty() {
        vec![LoadCase::as_modelled(crate::plan::largest_potential(&plan.conductors, plan.outer_potential_v))]
    } else {
        plan.load_cases.clone()
    };
    // The interface and surface probes' paths (model potentials).
    lap.mark("singular coefficients");
    let paths: Vec<(usize, engine::CreepagePath)> = plan
        .probes
        .iter()
        .enumerate()
        .filter_map(|(i, p)| {
            // Interfaces between dielectrics only: a conductor's surface is an equipotential.
            match interface_selector(&p.kind) {
                Some((which @ engine::InterfaceSelector::Regions(..), _)) => {
                    Some((i, creepage_path(&probe_interface(mesh, sol, which), outside)))
                }
                _ => None,
            }
        })
        .collect();
    let mut files = Vec::new();
    lap.mark("creepage paths");
    let gas = gas_checks(plan, mesh, solved, &mut files);
    lap.mark("gas");
    let load_cases = cases
        .iter()
        .map(|case| {
            let (k, pf) = (case.scale, case.basis.peak_factor());
            let regions = peaks
                .iter()
                .map(|&(r, e, bar, at)| {
                    let mat = material(r);
                    let allow = mat.and_then(|m| m.allowable_in(&case.name)).map(|a| a * 1e6);
                    let local_peaks = locals
                        .iter()
                        .filter(|p| p.region == r)
                        .map(|p| PeakResult {
                            e_v_per_m: k * p.e_v_per_m,
                            utilisation: allow.map(|a| k * p.e_v_per_m / a),
                            at_m: p.at,
                            site: site_text(mesh, plan, p.site),
                        })
                        .collect();
                    let singular_points = singular
                        .iter()
                        .filter(|(s, _)| mesh.singular_points[*s].regions.contains(&r))
                        .map(|&(s, coef)| {
                            let sp = &mesh.singular_points[s];
                            let radius = match (coef, allow) {
                                (Some((a, f)), Some(e)) if a != 0.0 => Some(singular_radius_above(sp.lambda, f, k * a, e)),
                                _ => None,
                            };
                            let note = match radius {
                                Some(r) if r < 1e-9 => format!(
                                    "singular (λ = {:.4}): |E| exceeds the allowable only within 1 nm of the point, below any real edge radius; the peak there is mesh-dependent",
                                    sp.lambda
                                ),
                                Some(r) => format!(
                                    "singular (λ = {:.4}): |E| exceeds the allowable within {} of the point{}; the peak there is mesh-dependent: model the real edge radius",
                                    sp.lambda,
                                    crate::results::check::length_text(r, plan.unit_m, plan.unit),
                                    if r < 1e-6 { " (below most real edge radii)" } else { "" }
                                ),
                                None => format!(
                                    "singular (λ = {:.4}): the peak there is mesh-dependent and not checked as a number; model the real edge radius",
                                    sp.lambda
                                ),
                            };
                            SingularCheck { id: format!("S{}", s + 1), lambda: sp.lambda, radius_above_allowable_m: radius, note }
                        })
                        .collect();
                    RegionCheck {
                        region: region_name(r),
                        material: mat.map(|m| m.name.clone()).unwrap_or_default(),
                        peak: StressFigures::of(stress_check(k * e, bar.map(|b| k * b), allow), pf),
                        at_m: at,
                        local_peaks,
                        singular_points,
                    }
                })
                .collect();
            let interfaces = paths
                .iter()
                .map(|(i, path)| {
                    let probe = &plan.probes[*i];
                    let name = format!("largest tangential field on probe {} away from singular points", probe.name);
                    let (e_t, bar) = match bar_of(&name) {
                        Some((v, b)) => (v, Some(b)),
                        None => (path.e_t_max.0, None),
                    };
                    let allow = probe.allowable_tangential_in(&case.name).map(|a| a * 1e6);
                    TangentialCheck {
                        probe: probe.name.clone(),
                        e_t: StressFigures::of(stress_check(k * e_t, bar.map(|b| k * b), allow), pf),
                        at_m: path.e_t_max.3,
                        potential_drop_v: k * path.potential_drop_v,
                        running_mean_max_v_per_m: k * path.running_mean_max.0,
                    }
                })
                .collect();
            let reference_v = case.voltage_v / case.scale;
            let gas = gas
                .iter()
                .map(|g| {
                    let peak_voltage_v = case.voltage_v * pf;
                    let inception_voltage_v = g.inception_scale.map(|ki| ki * reference_v);
                    let margin = g.inception_scale.map(|ki| ki / (k * pf));
                    GasCaseCheck {
                        region: g.region.clone(),
                        peak_voltage_v,
                        inception_voltage_v,
                        margin,
                        verdict: match margin {
                            Some(m) if m >= 1.0 => "pass",
                            Some(_) => "fail",
                            None => "no inception found",
                        },
                    }
                })
                .collect();
            let grading_case = grading
                .iter()
                .map(|g| GradingCaseCheck {
                    name: g.name.clone(),
                    layers: g
                        .layers
                        .iter()
                        .map(|l| GradingCaseLayer {
                            between: l.between.clone(),
                            mean_radial_v_per_m: k * l.mean_radial_stress_v_per_m,
                            max_radial_v_per_m: k * l.max_radial_stress_v_per_m,
                            axial_top_v_per_m: l.axial_stress_top_v_per_m.map(|a| k * a),
                            axial_bottom_v_per_m: l.axial_stress_bottom_v_per_m.map(|a| k * a),
                        })
                        .collect(),
                })
                .collect();
            CaseChecks {
                name: case.name.clone(),
                kind: case.kind.map_or("as modelled", |k| k.word()),
                basis: case.basis.word(),
                voltage_v: case.voltage_v,
                reference: case.reference.clone(),
                scale: k,
                peak_factor: pf,
                regions,
                interfaces,
                gas,
                grading: grading_case,
            }
        })
        .collect();
    // The largest peak away from singular points over the dielectric (model potentials).
    let top = peaks.iter().max_by(|a, b| a.1.total_cmp(&b.1)).copied();
    let field_factors = plan
        .breakdown
        .field_factors
        .iter()
        .filter_map(|f| {
            let (top_r, e_max, _, _) = top?;
            let ends = f.between.map(|e| match e {
                ElectrodeRef::Conductor(c) => {
                    (Electrode::Conductor(c as u32), sol.conductor_potentials[c], plan.conductors[c].name.clone())
                }
                ElectrodeRef::Boundary => {
                    (Electrode::Outer, plan.outer_potential_v.unwrap_or(0.0), "boundary".to_string())
                }
            });
            let gap = electrode_distance(mesh, ends[0].0, ends[1].0)?;
            let u = (ends[0].1 - ends[1].1).abs();
            let eta = field_utilisation(u, gap.distance, e_max);
            Some(FieldFactorResult {
                name: f.name.clone(),
                between: [ends[0].2.clone(), ends[1].2.clone()],
                voltage_v: u,
                distance_m: gap.distance,
                from_m: gap.from,
                to_m: gap.to,
                e_mean_v_per_m: u / gap.distance,
                e_max_v_per_m: e_max,
                e_max_region: region_name(top_r),
                utilisation_factor: eta,
                enhancement_factor: 1.0 / eta,
            })
        })
        .collect();
    lap.mark("cases and field factors");
    let creepage = paths
        .iter()
        .map(|(i, path)| {
            let probe = &plan.probes[*i];
            let file = format!("creepage-{}.csv", probe.name);
            let mut csv = String::from(
                "chain,s_m,x_m,y_m,potential_v,drop_v,et_v_per_m,en_1_v_per_m,en_2_v_per_m,e_1_v_per_m,e_2_v_per_m,running_mean_v_per_m,counted\n",
            );
            for r in &path.rows {
                csv.push_str(&format!(
                    "{},{:e},{:e},{:e},{:e},{:e},{:e},{:e},{:e},{:e},{:e},{:e},{}\n",
                    r.chain,
                    r.s,
                    r.at[0],
                    r.at[1],
                    r.potential,
                    r.drop,
                    r.e_t,
                    r.e_n[0],
                    r.e_n[1],
                    r.e_n[0].hypot(r.e_t),
                    r.e_n[1].hypot(r.e_t),
                    r.running_mean,
                    r.counted
                ));
            }
            files.push((file.clone(), csv));
            CreepageResult {
                probe: probe.name.clone(),
                file,
                chains: path.chains.iter().map(|c| (c.length_m, c.potential_drop_v)).collect(),
                e_t_max_v_per_m: path.e_t_max.0,
                e_t_max_chain: path.e_t_max.1,
                e_t_max_s_m: path.e_t_max.2,
                e_t_max_at_m: path.e_t_max.3,
                running_mean_max_v_per_m: path.running_mean_max.0,
                running_mean_max_chain: path.running_mean_max.1,
                running_mean_max_s_m: path.running_mean_max.2,
            }
        })
        .collect();
    let peaks_away = peaks
        .iter()
        .map(|&(r, e, bar, at)| PeakAway { region: region_name(r), e_v_per_m: e, error_bar_v_per_m: bar, at_m: at })
        .collect();
    let checks = Checks {
        peaks_away,
        load_cases,
        field_factors,
        stressed_volumes,
        creepage,
        gas,
        grading,
        cautions: CHECK_CAUTIONS.to_vec(),
    };
    (checks, files)
}

/// The discharge-inception check of every gas region: field lines from the most stressed
/// conductor points, the streamer criterion along each, the weakest line; its CSV into `files`.
fn gas_checks(
    plan: &Plan,
    mesh: &Mesh,
    solved: &FactoredSolution,
    files: &mut Vec<(String, String)>,
) -> Vec<GasResult> {
    let u_ref = crate::plan::largest_potential(&plan.conductors, plan.outer_potential_v);
    let mut regions: Vec<u32> = mesh.regions.clone();
    regions.sort_unstable();
    regions.dedup();
    let separation = 0.5 * plan.breakdown.peak_separation_m.unwrap_or(0.02 * mesh.scale());
    regions
        .into_iter()
        .filter(|&r| mesh.exterior.is_none_or(|e| e.region != r))
        .filter_map(|r| {
            let m = plan.shape_material.get(r as usize).copied().flatten().map(|m| &plan.materials[m])?;
            let gas = m.gas?;
            let starts = solved.field_line_starts(mesh, r, plan.breakdown.field_lines, separation);
            let traced = solved.trace_field_lines(mesh, r, &starts);
            let lines: Vec<FieldLineResult> = traced
                .iter()
                .map(|l| {
                    let ki = l.inception_scale(&gas);
                    FieldLineResult {
                        start_m: l.at[0],
                        end_m: *l.at.last().unwrap_or(&l.at[0]),
                        end: match l.end {
                            LineEnd::LeftRegion => "left the region",
                            LineEnd::Stagnation => "stagnation point",
                            LineEnd::LengthLimit => "length limit",
                        },
                        length_m: *l.s.last().unwrap_or(&0.0),
                        e_start_v_per_m: l.e[0],
                        inception_scale: ki,
                        avalanche_length_m: ki.map(|k| l.ionisation_integral(&gas, k).1),
                    }
                })
                .collect();
            let weakest = lines
                .iter()
                .enumerate()
                .filter_map(|(i, l)| l.inception_scale.map(|k| (i, k)))
                .min_by(|a, b| a.1.total_cmp(&b.1));
            let region = mesh.shape_names[r as usize].clone();
            let file = format!("fieldlines-{}.csv", region.replace(|c: char| !c.is_ascii_alphanumeric() && c != '-', "_"));
            let mut csv = String::from("line,s_m,x_m,y_m,potential_v,e_v_per_m,alpha_eff_at_inception_per_m\n");
            let k_min = weakest.map(|w| w.1);
            for (i, l) in traced.iter().enumerate() {
                for j in 0..l.s.len() {
                    let alpha = k_min.map_or(f64::NAN, |k| gas.effective_ionisation(k * l.e[j]));
                    csv.push_str(&format!(
                        "{i},{:e},{:e},{:e},{:e},{:e},{:e}\n",
                        l.s[j], l.at[j][0], l.at[j][1], l.v[j], l.e[j], alpha
                    ));
                }
            }
            files.push((file.clone(), csv));
            Some(GasResult {
                region,
                gas: match gas.kind {
                    GasKind::DryAir => "dry air",
                    GasKind::Sf6 => "SF6",
                },
                pressure_bar: gas.pressure_bar,
                temperature_c: gas.temperature_c,
                reduced_pressure_bar: gas.reduced_pressure_bar(),
                critical_field_v_per_m: gas.critical_field(),
                streamer_constant: gas.streamer_constant(),
                coefficients: match gas.kind {
                    GasKind::DryAir => "α_eff/p = 1.6053·(E/p − 2.165)² − 0.2873 /(mm·bar), K = 9.15 (Zaengl & Petcharaks 1994; recalled from memory)",
                    GasKind::Sf6 => "α_eff/p = 27.7·(E/p − 8.88) /(mm·bar), K = 10.5 (Pedersen 1970; recalled from memory)",
                },
                file,
                inception_voltage_v: k_min.map(|k| k * u_ref),
                inception_scale: k_min,
                weakest_line: weakest.map(|w| w.0),
                lines,
                note: "streamer criterion along field lines from the most stressed conductor points, at peak values; ideal smooth electrodes (no roughness, particles or time lag); not error-barred: compare the figure on two meshes",
            })
        })
        .collect()
}

/// Wall-clock laps of the checks, printed to stderr when `FIELDGRADE_TIMINGS` is set.
struct Lap {
    on: bool,
    t: std::cell::Cell<std::time::Instant>,
}

impl Lap {
    fn new() -> Lap {
        Lap { on: std::env::var_os("FIELDGRADE_TIMINGS").is_some(), t: std::cell::Cell::new(std::time::Instant::now()) }
    }

    fn mark(&self, what: &str) {
        if self.on {
            let now = std::time::Instant::now();
            eprintln!("checks: {what} {:.3} s", (now - self.t.get()).as_secs_f64());
            self.t.set(now);
        }
    }
}

/// Every `[[breakdown.grading]]` stack at the model's potentials.
fn grading_checks(plan: &Plan, mesh: &Mesh, problem: &Problem, solved: &FactoredSolution) -> Vec<GradingResult> {
    plan.breakdown
        .grading
        .iter()
        .map(|g| {
            let st = condenser_grading(mesh, problem, solved, &g.foils);
            let names: Vec<String> = g.foils.iter().map(|&f| plan.conductors[f].name.clone()).collect();
            let u = st.potentials[0] - st.potentials[st.potentials.len() - 1];
            let pct = |v: f64| if u != 0.0 { 100.0 * v / u } else { f64::NAN };
            let n = st.layers.len() as f64;
            GradingResult {
                name: g.name.clone(),
                potentials_percent: st
                    .potentials
                    .iter()
                    .map(|&v| pct(v - st.potentials[st.potentials.len() - 1]))
                    .collect(),
                potentials_v: st.potentials.clone(),
                layers: st
                    .layers
                    .iter()
                    .enumerate()
                    .map(|(k, l)| GradingLayerResult {
                        between: [names[k].clone(), names[k + 1].clone()],
                        step_v: l.step_v,
                        step_percent: pct(l.step_v),
                        ideal_step_percent: 100.0 / n,
                        partial_capacitance_f: l.partial_capacitance_f,
                        distance_m: l.distance_m,
                        from_m: l.from,
                        to_m: l.to,
                        mean_radial_stress_v_per_m: l.mean_stress_v_per_m,
                        max_radial_stress_v_per_m: l.max_stress_v_per_m,
                        axial_step_top_m: l.end_steps[0].map(|s| s.0),
                        axial_stress_top_v_per_m: l.end_steps[0].map(|s| s.1),
                        axial_step_bottom_m: l.end_steps[1].map(|s| s.0),
                        axial_stress_bottom_v_per_m: l.end_steps[1].map(|s| s.1),
                    })
                    .collect(),
                foils: names,
                series_capacitance_f: st.series_capacitance_f,
            }
        })
        .collect()
}

/// What a peak's vertex lies on, in words.
fn site_text(mesh: &Mesh, plan: &Plan, site: PeakSite) -> String {
    match site {
        PeakSite::Inside => "inside".into(),
        PeakSite::Interface { other } => {
            format!("on the interface with {} (this region's side)", mesh.shape_names[other as usize])
        }
        PeakSite::Conductor { conductor } => format!("on conductor {}", plan.conductors[conductor as usize].name),
        PeakSite::OuterBoundary => "on the outer boundary".into(),
        PeakSite::Axis => "on the axis".into(),
    }
}

/// The checks table printed by `solve` and `check`.
pub fn render_checks(c: &Checks, per_metre_depth: bool, unit_m: f64, unit: &str) -> String {
    use std::fmt::Write;
    let mut s = String::new();
    let depth = if per_metre_depth { "m³/m" } else { "m³" };
    let at = |p: Xy| format!("({:.4}, {:.4})", p[0] / unit_m, p[1] / unit_m);
    let kv = |v: f64| format!("{:.4}", v / 1e6);
    let opt = |v: Option<f64>, f: &dyn Fn(f64) -> String| v.map(f).unwrap_or_else(|| "-".into());
    let verdict = |f: &StressFigures| {
        if f.certified || f.verdict == "no allowable" {
            f.verdict.to_string()
        } else {
            format!("{} (uncertified)", f.verdict)
        }
    };
    for case in &c.load_cases {
        if case.kind == "as modelled" {
            let _ = writeln!(s, "\nbreakdown checks — the model's potentials as given (no [[load_case]])");
        } else {
            let _ = writeln!(
                s,
                "\nbreakdown checks — load case '{}' ({}, {}): {:.4} kV on {}, stresses × {:.6e}",
                case.name,
                case.kind,
                case.basis,
                case.voltage_v / 1e3,
                case.reference,
                case.scale
            );
        }
        let _ = writeln!(
            s,
            "  {:<20} {:>12} {:>10} {:>10} {:>7} {:>7}  verdict",
            "region",
            format!("E kV/mm {}", if case.basis == "as given" { "" } else { case.basis }),
            "± kV/mm",
            "allowable",
            "util.",
            "margin"
        );
        for r in &case.regions {
            let f = &r.peak;
            let _ = writeln!(
                s,
                "  {:<20} {:>12} {:>10} {:>10} {:>7} {:>7}  {}",
                r.region,
                kv(f.e_v_per_m),
                opt(f.error_bar_v_per_m, &|b| format!("{:.2e}", b / 1e6)),
                opt(f.allowable_kv_per_mm, &|a| format!("{a}")),
                opt(f.utilisation, &|u| format!("{u:.3}")),
                opt(f.margin, &|m| format!("{m:.3}")),
                verdict(f)
            );
            for p in &r.local_peaks {
                let _ = writeln!(
                    s,
                    "    peak {:>8} kV/mm at {} {}{}",
                    kv(p.e_v_per_m),
                    at(p.at_m),
                    p.site,
                    p.utilisation.map(|u| format!(", util. {u:.3}")).unwrap_or_default()
                );
            }
            for sp in &r.singular_points {
                let _ = writeln!(s, "    {}: {}", sp.id, sp.note);
            }
        }
        for g in &case.gas {
            let _ = writeln!(
                s,
                "  discharge inception in {:<12} at {:.4} kV peak: inception {} kV peak, margin {}: {}",
                g.region,
                g.peak_voltage_v / 1e3,
                opt(g.inception_voltage_v, &|v| format!("{:.4}", v / 1e3)),
                opt(g.margin, &|m| format!("{m:.3}")),
                g.verdict
            );
        }
        for g in &case.grading {
            for l in &g.layers {
                let _ = writeln!(
                    s,
                    "  grading {} {}–{}: radial mean {} max {} kV/mm, axial top {} bottom {} kV/mm",
                    g.name,
                    l.between[0],
                    l.between[1],
                    kv(l.mean_radial_v_per_m),
                    kv(l.max_radial_v_per_m),
                    opt(l.axial_top_v_per_m, &|a| kv(a)),
                    opt(l.axial_bottom_v_per_m, &|a| kv(a))
                );
            }
        }
        for t in &case.interfaces {
            let f = &t.e_t;
            let _ = writeln!(
                s,
                "  tangential on {:<12} max |Et| {} kV/mm at {} ± {}, allowable {}, util. {}: {}; drop {:.4e} V, running mean max {} kV/mm",
                t.probe,
                kv(f.e_v_per_m),
                at(t.at_m),
                opt(f.error_bar_v_per_m, &|b| format!("{:.2e}", b / 1e6)),
                opt(f.allowable_kv_per_mm, &|a| format!("{a}")),
                opt(f.utilisation, &|u| format!("{u:.3}")),
                verdict(f),
                t.potential_drop_v,
                kv(t.running_mean_max_v_per_m)
            );
        }
    }
    if !c.field_factors.is_empty() {
        let _ = writeln!(s, "\nfield utilisation factors (η = U/(d·E_max), any load case)");
        for f in &c.field_factors {
            let _ = writeln!(
                s,
                "  {:<20} {} – {}: d = {:.4} {unit}, U/d = {} kV/mm, E_max = {} kV/mm in {}, η = {:.4} (f = {:.3})",
                f.name,
                f.between[0],
                f.between[1],
                f.distance_m / unit_m,
                kv(f.e_mean_v_per_m),
                kv(f.e_max_v_per_m),
                f.e_max_region,
                f.utilisation_factor,
                f.enhancement_factor
            );
        }
    }
    if !c.stressed_volumes.is_empty() {
        let _ = writeln!(s, "\nstressed volume (|E| ≥ x·E_max of the region; any load case)");
        for v in &c.stressed_volumes {
            let above: Vec<String> = v.above.iter().map(|(x, vol)| format!("{x}: {vol:.4e}")).collect();
            let weibull =
                match (v.weibull_shape, v.weibull_effective_volume_m3, v.weibull_effective_volume_outside_discs_m3) {
                    (Some(m), Some(ve), _) => format!("; V_eff(m = {m}) {ve:.4e}"),
                    (Some(m), None, Some(out)) => {
                        format!("; V_eff(m = {m}) diverges at a singular point, outside the discs {out:.4e}")
                    }
                    _ => String::new(),
                };
            let _ = writeln!(s, "  {:<20} V(x) {depth}: {}{weibull}", v.region, above.join(", "));
        }
    }
    for g in &c.grading {
        let _ = writeln!(
            s,
            "\ncondenser grading '{}' (model potentials): C series {:.4e} F{}",
            g.name,
            g.series_capacitance_f,
            if per_metre_depth { "/m" } else { "" }
        );
        for l in &g.layers {
            let _ = writeln!(
                s,
                "  {:<10} – {:<10} step {:>7.3} % (ideal {:.3} %), C {:.4e} F, d = {:.4} {unit}, radial mean {} max {} kV/mm, axial steps {} / {} {unit}",
                l.between[0],
                l.between[1],
                l.step_percent,
                l.ideal_step_percent,
                l.partial_capacitance_f,
                l.distance_m / unit_m,
                kv(l.mean_radial_stress_v_per_m),
                kv(l.max_radial_stress_v_per_m),
                opt(l.axial_step_top_m, &|a| format!("{:.4}", a / unit_m)),
                opt(l.axial_step_bottom_m, &|a| format!("{:.4}", a / unit_m))
            );
        }
    }
    for g in &c.gas {
        let _ = writeln!(
            s,
            "\ndischarge inception in {} ({}, {} bar, {} °C; E_crit {} kV/mm; {}) -> {}",
            g.region,
            g.gas,
            g.pressure_bar,
            g.temperature_c,
            kv(g.critical_field_v_per_m),
            g.coefficients,
            g.file
        );
        match (g.weakest_line, g.inception_voltage_v) {
            (Some(w), Some(u)) => {
                let l = &g.lines[w];
                let _ = writeln!(
                    s,
                    "  {} lines; weakest from {}: inception at {:.4} kV peak on the model's largest potential, avalanche length {}",
                    g.lines.len(),
                    at(l.start_m),
                    u / 1e3,
                    opt(l.avalanche_length_m, &|x| format!("{:.4} {unit}", x / unit_m))
                );
            }
            _ => {
                let _ = writeln!(s, "  {} lines; none reaches the criterion", g.lines.len());
            }
        }
        let _ = writeln!(s, "  ({})", g.note);
    }
    if !c.creepage.is_empty() {
        let _ = writeln!(s, "\ncreepage paths (model potentials; s from each chain's start) -> creepage-<probe>.csv");
        for p in &c.creepage {
            let chains: Vec<String> =
                p.chains.iter().map(|(l, dv)| format!("{:.4} {unit} with drop {dv:.4e} V", l / unit_m)).collect();
            let _ = writeln!(
                s,
                "  {:<20} {}; max |Et| {} kV/mm (chain {}, s = {:.4} {unit}), running mean max {} kV/mm (chain {}, s = {:.4} {unit})",
                p.probe,
                chains.join("; "),
                kv(p.e_t_max_v_per_m),
                p.e_t_max_chain + 1,
                p.e_t_max_s_m / unit_m,
                kv(p.running_mean_max_v_per_m),
                p.running_mean_max_chain + 1,
                p.running_mean_max_s_m / unit_m
            );
        }
    }
    let _ = writeln!(s, "\ncautions of the checks");
    for w in &c.cautions {
        let _ = writeln!(s, "  - {w}");
    }
    s
}
