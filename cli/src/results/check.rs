//! The `check` stage's results: the adaptive sequence, the convergence study and error bar
//! of every watched quantity, the singular points with their coefficients, on top of the
//! final mesh's `solve` record; with their terminal text and `convergence.csv`.

use crate::results::solve::Results;
use serde::Serialize;

/// `results.json` of `check`: the `solve` record of the final mesh plus the check sections.
#[derive(Serialize, Debug)]
pub struct CheckResults {
    /// Everything `solve` reports, on the final mesh.
    #[serde(flatten)]
    pub solve: Results,
    /// The adaptive loop.
    pub adaptivity: Adaptivity,
    /// One grid-convergence study per watched quantity.
    pub convergence: Vec<QuantityStudy>,
    /// The singular points with their coefficients and stress radii.
    pub singular_points: Vec<SingularResult>,
}

/// The adaptive loop's outcome.
#[derive(Serialize, Debug)]
pub struct Adaptivity {
    /// Relative tolerance asked for.
    pub tolerance: f64,
    /// The estimate and every watched quantity reached the tolerance.
    pub converged: bool,
    /// Why the loop stopped.
    pub reason: String,
    /// Estimated relative energy-norm error on the final mesh.
    pub estimated_energy_norm_error: f64,
    /// Its square: the estimated relative error of the energy (and of the capacitance of a
    /// single electrode at a fixed potential).
    pub estimated_energy_error: f64,
    /// The meshes, first to last.
    pub meshes: Vec<MeshStep>,
    /// Radius of the disc left out around each singular point, metres.
    pub singular_exclusion_radius_m: Vec<f64>,
}

/// One mesh of the loop.
#[derive(Serialize, Debug)]
pub struct MeshStep {
    /// Unknowns.
    pub unknowns: usize,
    /// Triangles.
    pub triangles: usize,
    /// Estimated relative energy-norm error.
    pub estimated_error: f64,
    /// Largest relative change of a watched quantity since the previous mesh.
    pub max_change: Option<f64>,
    /// Wall seconds of the step's stages: `mesh`, `solve`, `estimate`, `watch`.
    pub timings_s: MeshStepTimings,
}

/// Wall seconds of one adaptive step, stage by stage (see [`engine::StepTimings`]).
#[derive(Serialize, Debug)]
pub struct MeshStepTimings {
    /// Size plan and meshing.
    pub mesh: f64,
    /// Assembly, factorisation, solves.
    pub solve: f64,
    /// Energy-norm estimate.
    pub estimate: f64,
    /// Watched quantities and their own estimates.
    pub watch: f64,
}

/// The convergence study of one quantity.
#[derive(Serialize, Debug)]
pub struct QuantityStudy {
    /// What it is.
    pub quantity: String,
    /// SI unit.
    pub unit: &'static str,
    /// Value per mesh.
    pub sequence: Vec<SequencePoint>,
    /// "monotone", "oscillatory", "divergent", "settled" (changes grow but stay below a
    /// tenth of the tolerance: remeshing noise), "converged" or "too few meshes".
    pub behaviour: &'static str,
    /// Observed order in h over the three finest meshes.
    pub observed_order: Option<f64>,
    /// Richardson-extrapolated value.
    pub extrapolated: Option<f64>,
    /// Grid convergence index of the finest value (relative, safety factor 1.25).
    pub gci: Option<f64>,
    /// A negative observed order or divergent changes: the sign of a singularity.
    pub flagged: Option<String>,
    /// The final value with its error bar and verdict.
    pub error_bar: BarReport,
}

/// A value with its error bar (see `engine::certify`).
#[derive(Serialize, Debug, Clone)]
pub struct BarReport {
    /// The value on the finest mesh so far.
    pub value: f64,
    /// Estimated |exact − value|, in the quantity's unit (null when nothing is known yet).
    pub absolute: Option<f64>,
    /// `absolute` / max(|value|, floor).
    pub relative: Option<f64>,
    /// "converged" or "not converged".
    pub status: &'static str,
    /// How the bar was formed and, if not converged, why.
    pub reason: String,
}

/// The word for a verdict in the reports.
pub fn status_word(s: engine::BarStatus) -> &'static str {
    if s == engine::BarStatus::Converged {
        "converged"
    } else {
        "not converged"
    }
}

impl BarReport {
    /// The report of an engine error bar.
    pub fn of(b: &engine::ErrorBar) -> BarReport {
        BarReport {
            value: b.value,
            absolute: b.absolute.is_finite().then_some(b.absolute),
            relative: b.relative.is_finite().then_some(b.relative),
            status: status_word(b.status),
            reason: b.reason.clone(),
        }
    }
}

/// One value in a sequence.
#[derive(Serialize, Debug)]
pub struct SequencePoint {
    /// Unknowns.
    pub unknowns: usize,
    /// Value.
    pub value: f64,
    /// Relative change from the previous mesh.
    pub relative_change: Option<f64>,
    /// Observed order over this and the two previous meshes.
    pub observed_order: Option<f64>,
    /// The quantity's own a-posteriori estimate of |exact − value| on this mesh.
    pub own_estimate: Option<f64>,
    /// The error bar on the sequence up to this mesh.
    pub error_bar: Option<f64>,
    /// Its verdict then.
    pub status: &'static str,
}

/// One singular point on the final mesh.
#[derive(Serialize, Debug)]
pub struct SingularResult {
    /// S1, S2 … as in the mesh report.
    pub id: String,
    /// Location, model unit.
    pub at: [f64; 2],
    /// Kind of point.
    pub kind: &'static str,
    /// Exponent λ (V ~ r^λ, |E| ~ r^(λ−1)).
    pub lambda: f64,
    /// The field is unbounded there (λ < 1).
    pub field_singular: bool,
    /// Coefficient A of V ≈ V₀ + A·r^λ·Φ(φ), V/m^λ, by the dual singular function (Φ = sin λφ
    /// in the first dielectric sector from the conductor wall).
    pub coefficient: Option<f64>,
    /// Field factor k: the largest |E| at distance r is ≈ k·|A|·r^(λ−1) (k = λ for one
    /// dielectric).
    pub field_factor: Option<f64>,
    /// The same by the ring fit (cross-check).
    pub coefficient_ring_fit: Option<f64>,
    /// Cut-off radius of the extraction, metres.
    pub extraction_radius_m: Option<f64>,
    /// The material's allowable stress there, kV/mm.
    pub allowable_kv_per_mm: Option<f64>,
    /// Distance inside which |E| ≈ k|A|r^(λ−1) exceeds the allowable stress, model unit.
    pub radius_above_allowable: Option<f64>,
    /// The report line.
    pub note: String,
    /// The coefficient's error bar (V/m^λ) and verdict from the adaptive sequence, when it
    /// is watched.
    pub coefficient_error_bar: Option<BarReport>,
}

/// A length for a sentence: in the model unit with four significant digits, or in µm when
/// it is below 0.01 mm (a stress radius at a sharp edge can be a few µm; "0.0000 mm" would
/// hide it).
pub fn length_text(m: f64, unit_m: f64, unit: &str) -> String {
    if m < 1e-5 {
        format!("{} µm", crate::results::mesh::sig(m * 1e6))
    } else {
        format!("{} {unit}", crate::results::mesh::sig(m / unit_m))
    }
}

/// convergence.csv: one row per quantity and mesh.
pub fn convergence_csv(studies: &[QuantityStudy]) -> String {
    use std::fmt::Write;
    let mut s = String::from(
        "quantity,unit,mesh,unknowns,value,relative_change,observed_order,own_estimate,error_bar,status\n",
    );
    let opt = |v: Option<f64>| v.map(|x| format!("{x:e}")).unwrap_or_default();
    for q in studies {
        for (k, p) in q.sequence.iter().enumerate() {
            let _ = writeln!(
                s,
                "\"{}\",{},{},{},{:e},{},{},{},{},{}",
                q.quantity.replace('"', "\"\""),
                q.unit,
                k + 1,
                p.unknowns,
                p.value,
                opt(p.relative_change),
                opt(p.observed_order),
                opt(p.own_estimate),
                opt(p.error_bar),
                p.status
            );
        }
    }
    s
}

/// The check sections as text.
pub fn render_check(r: &CheckResults, unit: &str) -> String {
    let (ad, conv, sing) = (&r.adaptivity, &r.convergence, &r.singular_points);
    use std::fmt::Write;
    let mut s = String::new();
    let _ = writeln!(
        s,
        "\nadaptivity   {} after {} meshes: {}",
        if ad.converged { "converged" } else { "NOT CONVERGED" },
        ad.meshes.len(),
        ad.reason
    );
    let _ = writeln!(
        s,
        "             estimated error: energy norm {:.3e}, energy (capacitance) {:.3e}",
        ad.estimated_energy_norm_error, ad.estimated_energy_error
    );
    let _ = writeln!(
        s,
        "\nconvergence and error bars (bar: the larger of the quantity's own estimate and the GCI of the three finest meshes)"
    );
    let _ = writeln!(
        s,
        "  {:<64} {:>14} {:>12} {:>9} {:>7} {:>14}  verdict",
        "quantity", "value", "± bar", "rel. bar", "order", "extrapolated"
    );
    for q in conv {
        let b = &q.error_bar;
        let _ = writeln!(
            s,
            "  {:<64} {:>14.6e} {:>12} {:>9} {:>7} {:>14}  {}{}",
            format!("{} ({})", q.quantity, q.unit),
            b.value,
            b.absolute.map(|x| format!("± {x:.2e}")).unwrap_or_else(|| "-".into()),
            b.relative.map(|x| format!("{x:.2e}")).unwrap_or_else(|| "-".into()),
            q.observed_order.map(|x| format!("{x:.2}")).unwrap_or_else(|| "-".into()),
            q.extrapolated.map(|x| format!("{x:.6e}")).unwrap_or_else(|| "-".into()),
            b.status,
            if q.flagged.is_some() { " (!) diverging: singular" } else { "" }
        );
    }
    let open: Vec<&QuantityStudy> = conv.iter().filter(|q| q.error_bar.status != "converged").collect();
    if !open.is_empty() {
        let _ = writeln!(s, "\n  not converged:");
        for q in open {
            let _ = writeln!(s, "  - {}: {}", q.quantity, q.error_bar.reason);
        }
    }
    if !sing.is_empty() {
        let _ = writeln!(s, "\nsingular points (coefficient A of V ≈ V₀ + A·r^λ·f(θ), by the dual singular function)");
        for p in sing {
            let _ = writeln!(
                s,
                "  {:<4} {:<18} ({:.4}, {:.4}) {unit}  A = {}  {}",
                p.id,
                p.kind,
                p.at[0],
                p.at[1],
                match (p.coefficient, &p.coefficient_error_bar) {
                    (Some(a), Some(b)) => format!(
                        "{a:.4e} ± {} ({})",
                        b.absolute.map(|x| format!("{x:.2e}")).unwrap_or_else(|| "?".into()),
                        b.status
                    ),
                    (Some(a), None) => format!("{a:.4e}"),
                    _ => "-".into(),
                },
                p.note
            );
        }
    }
    s
}

/// A field value with its bar in kV/mm ("3.1000 kV/mm ± 1.20e-3"; "?" where the bar is open).
pub fn field_with_bar(bar: &BarReport) -> String {
    let width = bar.absolute.map(|b| format!("{:.2e}", b / 1e6)).unwrap_or_else(|| "?".into());
    format!("{:.4} kV/mm ± {width}", bar.value / 1e6)
}

#[cfg(test)]
mod tests {
    use super::length_text;

    #[test]
    fn small_lengths_are_printed_in_micrometres() {
        assert_eq!(length_text(2.5e-6, 1e-3, "mm"), "2.500 µm");
        assert_eq!(length_text(1.2345e-3, 1e-3, "mm"), "1.234 mm");
        assert_eq!(length_text(0.5, 1.0, "m"), "0.5000 m");
    }
}
