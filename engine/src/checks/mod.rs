//! Breakdown checks on a solved field: what an insulation engineer does with the stresses.
//! Every check is a post-processing of one electrostatic solution; each function's doc
//! comment gives its formula and its source.
//!
//! - [`stress_check`]: a stress against its allowable value — utilisation E/E_allow, margin
//!   E_allow/E, and the verdict `pass`, `fail` or `undecided` when the stress's error bar
//!   straddles the allowable (Kuffel, Zaengl & Kuffel 2000, ch. 1 and 5: design by comparing
//!   the maximum field with the material's allowable stress).
//! - [`local_peaks`]: the few highest separate local maxima of |E| in each region (not one),
//!   with the boundary each lies on — inside, on an interface (which side is the region's),
//!   on a conductor, on the outer boundary.
//! - [`electrode_distance`] and [`field_utilisation`]: the field utilisation factor
//!   η = U/(d·E_max) between two electrodes, d their shortest distance (Schwaiger 1922, as
//!   used in Kuffel et al. 2000, ch. 4).
//! - [`stressed_volume`]: the volume where |E| ≥ x·E_max, and the Weibull effective volume
//!   V_eff = ∫(E/E_max)^m dV (weight 2πr in axisymmetry, per metre of depth planar), by
//!   quadrature of the elements' own fields (weakest-link volume effect: Weber & Endicott
//!   1956; IEC 62539:2007 for the Weibull form).
//! - [`trace_field_lines`] and [`Gas`]: in a gas region, field lines from the electrodes and
//!   the streamer criterion ∫α_eff ds ≥ K along each, and the inception voltage (Raether;
//!   Pedersen 1970 for SF6, Zaengl & Petcharaks 1994 for dry air; module `gas`).
//! - [`condenser_grading`]: a stack of grading foils — potentials, voltage steps, partial
//!   capacitances, series (C1) capacitance, radial stress per layer and axial stress per
//!   foil-end step (module `grading`).
//! - [`creepage_path`]: along an interface, the tangential field E_t, the potential drop
//!   ΔV(s) and its running mean ΔV(s)/s, the maximum |E_t| and where (TRADE §1.2: creepage
//!   and surface-flashover checks are made on E_t and on the accumulated drop).
//!
//! The checks scale with the voltage: a load case multiplies every stress by its factor
//! (linear materials), while η, the stressed-volume fractions and V_eff are ratios and do
//! not change. Computed stresses are indicative: type tests under the applicable standards,
//! local codes and licensed practice decide.
//!
//! # References
//! - E. Kuffel, W. S. Zaengl, J. Kuffel, *High Voltage Engineering: Fundamentals*, 2nd ed.,
//!   Newnes 2000 (recalled from memory, not re-read: utilisation and the Schwaiger factor).
//! - A. Schwaiger, *Elektrische Festigkeitslehre*, Springer 1922 (the utilisation factor;
//!   recalled from memory).
//! - W. Weber, H. S. Endicott, "Area effect and its extremal basis for the electric breakdown
//!   of transformer oil", AIEE Trans. 75 (1956) 371–381 (recalled from memory).
//! - IEC 62539:2007 / IEEE Std 930-2004, *Guide for the statistical analysis of electrical
//!   insulation breakdown data* (the Weibull effective volume; recalled from memory).

mod creepage;
mod gap;
pub(crate) mod gas;
mod grading;
pub(crate) mod peaks;
mod verdict;
mod volume;

pub use creepage::{creepage_path, CreepageChain, CreepagePath, CreepageRow};
pub use gap::{electrode_distance, field_utilisation, Electrode, GapDistance};
pub use gas::{field_line_starts, trace_field_lines, FieldLine, Gas, GasKind, LineEnd};
pub use grading::{condenser_grading, GradingLayer, GradingStack};
pub use peaks::{local_peaks, LocalPeak, PeakSite};
pub use verdict::{stress_check, StressCheck, Verdict};
pub use volume::{stressed_volume, StressedVolume, WeibullVolume};
