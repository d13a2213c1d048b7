//! The model file as TOML gives it: one struct per table, every value with its byte span
//! (for diagnostics). Nothing here is checked; the table modules beside it check.

use serde::Deserialize;
use std::collections::BTreeMap;
use toml::Spanned;

type S<T> = Spanned<T>;

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawModel {
    pub(super) model: Option<S<RawHeader>>,
    #[serde(default)]
    pub(super) material: Vec<S<RawMaterial>>,
    #[serde(default)]
    pub(super) conductor: Vec<S<RawConductor>>,
    #[serde(default)]
    pub(super) shape: Vec<S<RawShape>>,
    pub(super) boundary: Option<S<RawBoundary>>,
    pub(super) mesh: Option<S<RawMesh>>,
    pub(super) check: Option<S<RawCheck>>,
    #[serde(default)]
    pub(super) probe: Vec<S<RawProbe>>,
    #[serde(default)]
    pub(super) point: Vec<S<RawNamedPoint>>,
    #[serde(default)]
    pub(super) thin_electrode: Vec<S<RawThin>>,
    #[serde(default)]
    pub(super) load_case: Vec<S<RawLoadCase>>,
    pub(super) breakdown: Option<S<RawBreakdown>>,
    pub(super) import: Option<S<RawImport>>,
}

/// `[import]`: a mesh made elsewhere, its region ids and boundary tags.
#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawImport {
    pub(super) file: S<String>,
    pub(super) id_array: Option<S<String>>,
    pub(super) boundary_array: Option<S<String>>,
    #[serde(default)]
    pub(super) region: Vec<S<RawImportRegion>>,
    #[serde(default)]
    pub(super) boundary: Vec<S<RawImportBoundary>>,
}

/// `[[import.region]]`.
#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawImportRegion {
    pub(super) id: S<i64>,
    pub(super) name: Option<S<String>>,
    pub(super) material: Option<S<String>>,
    pub(super) conductor: Option<S<String>>,
}

/// `[[import.boundary]]`.
#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawImportBoundary {
    pub(super) tag: S<i64>,
    pub(super) conductor: Option<S<String>>,
    pub(super) outer: Option<S<bool>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawLoadCase {
    pub(super) name: S<String>,
    pub(super) kind: S<String>,
    pub(super) voltage_kv: S<f64>,
    pub(super) basis: Option<S<String>>,
    pub(super) conductor: Option<S<String>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawBreakdown {
    pub(super) stressed_fractions: Option<S<Vec<S<f64>>>>,
    pub(super) local_peaks: Option<S<i64>>,
    pub(super) peak_separation: Option<S<f64>>,
    pub(super) field_lines: Option<S<i64>>,
    #[serde(default)]
    pub(super) field_factor: Vec<S<RawFieldFactor>>,
    #[serde(default)]
    pub(super) grading: Vec<S<RawGrading>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawGrading {
    pub(super) name: S<String>,
    pub(super) foils: S<Vec<S<String>>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawFieldFactor {
    pub(super) name: S<String>,
    pub(super) between: S<Vec<S<String>>>,
}

/// Values by load-case name (`allowable_by_case = { service = 3.0 }`).
pub(super) type ByCase = S<BTreeMap<String, S<f64>>>;

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawCheck {
    pub(super) singular_exclusion_radius: Option<S<f64>>,
}

/// `[[point]]`: a named point where V and E are reported.
#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawNamedPoint {
    pub(super) name: S<String>,
    pub(super) at: S<[f64; 2]>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawProbe {
    pub(super) name: S<String>,
    pub(super) path: Option<S<Vec<S<[f64; 2]>>>>,
    pub(super) samples: Option<S<i64>>,
    pub(super) interface: Option<S<[String; 2]>>,
    pub(super) conductor_surface: Option<S<String>>,
    pub(super) allowable_tangential_kv_per_mm: Option<S<f64>>,
    pub(super) allowable_tangential_by_case: Option<ByCase>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawHeader {
    pub(super) name: Option<String>,
    pub(super) symmetry: Option<S<String>>,
    pub(super) length_unit: Option<S<String>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawMaterial {
    pub(super) name: S<String>,
    pub(super) permittivity: S<f64>,
    pub(super) permittivity_tensor: Option<S<[[f64; 2]; 2]>>,
    pub(super) allowable_stress_kv_per_mm: Option<S<f64>>,
    pub(super) allowable_by_case: Option<ByCase>,
    pub(super) weibull_shape: Option<S<f64>>,
    pub(super) gas: Option<S<RawGas>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawGas {
    pub(super) kind: S<String>,
    pub(super) pressure_bar: Option<S<f64>>,
    pub(super) temperature_c: Option<S<f64>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawConductor {
    pub(super) name: S<String>,
    pub(super) potential_v: Option<S<f64>>,
    pub(super) floating: Option<S<bool>>,
    pub(super) charge_c: Option<S<f64>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawShape {
    pub(super) name: S<String>,
    pub(super) material: Option<S<String>>,
    pub(super) conductor: Option<S<String>>,
    pub(super) max_size: Option<S<f64>>,
    pub(super) charge_density_c_per_m3: Option<S<f64>>,
    pub(super) rectangle: Option<S<RawRect>>,
    pub(super) circle: Option<S<RawCircle>>,
    pub(super) polygon: Option<S<Vec<S<[f64; 2]>>>>,
    pub(super) path: Option<S<RawPath>>,
    pub(super) sector: Option<S<RawSector>>,
    pub(super) half_disc: Option<S<RawHalfDisc>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawSector {
    pub(super) center: S<[f64; 2]>,
    pub(super) radius: S<f64>,
    pub(super) inner_radius: Option<S<f64>>,
    pub(super) from_deg: S<f64>,
    pub(super) to_deg: S<f64>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawHalfDisc {
    pub(super) center: S<[f64; 2]>,
    pub(super) radius: S<f64>,
    pub(super) side: Option<S<String>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawRect {
    pub(super) corner: S<[f64; 2]>,
    pub(super) size: S<[f64; 2]>,
    pub(super) fillet: Option<S<f64>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawCircle {
    pub(super) center: S<[f64; 2]>,
    pub(super) radius: S<f64>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawPath {
    pub(super) start: S<[f64; 2]>,
    pub(super) steps: Vec<S<RawStep>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawStep {
    pub(super) line_to: Option<S<[f64; 2]>>,
    pub(super) arc_to: Option<S<[f64; 2]>>,
    pub(super) radius: Option<S<f64>>,
    pub(super) turn: Option<S<String>>,
    pub(super) large: Option<bool>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawBoundary {
    pub(super) outer: Option<S<String>>,
    pub(super) potential_v: Option<S<f64>>,
    #[serde(default)]
    pub(super) piece: Vec<S<RawPiece>>,
}

/// `[[boundary.piece]]`: a stretch of the outer boundary with its own condition.
#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawPiece {
    pub(super) name: S<String>,
    pub(super) along: Option<S<[S<[f64; 2]>; 2]>>,
    pub(super) arc: Option<S<RawArcPiece>>,
    pub(super) potential_v: Option<S<f64>>,
    pub(super) zero_flux: Option<S<bool>>,
    pub(super) potential_from_v: Option<S<f64>>,
    pub(super) potential_to_v: Option<S<f64>>,
    pub(super) potential_table: Option<S<Vec<S<[f64; 2]>>>>,
    pub(super) conductor: Option<S<String>>,
}

/// `[[thin_electrode]]`: a conductor of zero thickness.
#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawThin {
    pub(super) name: S<String>,
    pub(super) conductor: S<String>,
    pub(super) along: Option<S<Vec<S<[f64; 2]>>>>,
    pub(super) arc: Option<S<RawArcPiece>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawArcPiece {
    pub(super) center: S<[f64; 2]>,
    pub(super) radius: S<f64>,
    pub(super) from_deg: S<f64>,
    pub(super) to_deg: S<f64>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawMesh {
    pub(super) max_size: Option<S<f64>>,
    pub(super) min_size: Option<S<f64>>,
    pub(super) order: Option<S<i64>>,
    pub(super) min_angle_deg: Option<S<f64>>,
    pub(super) gradation: Option<S<f64>>,
    pub(super) chord_tolerance: Option<S<f64>>,
    pub(super) grading_fraction: Option<S<f64>>,
    pub(super) grade_corners: Option<bool>,
    pub(super) max_nodes: Option<S<i64>>,
    #[serde(default)]
    pub(super) point: Vec<S<RawPoint>>,
}

#[derive(Deserialize, Debug)]
#[serde(deny_unknown_fields)]
pub(super) struct RawPoint {
    pub(super) at: S<[f64; 2]>,
    pub(super) size: S<f64>,
}
