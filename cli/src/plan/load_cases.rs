//! `[[load_case]]` and `[breakdown]`: the named voltage cases that scale the one solution,
//! the allowable stresses given per case (in `[[material]]` and `[[probe]]`), and the
//! settings of the breakdown checks.
//!
//! With linear materials the field is proportional to the applied voltage, so one solution
//! serves every case: a case sets the voltage of a reference conductor (or of the model's
//! largest potential) and every potential and stress of the model is multiplied by
//! voltage / reference (`../shared/TRADE.md` §0.1, common practice). That holds only when
//! every source scales with the voltage: a model with space charge or with a charged
//! floating conductor cannot have load cases.

use super::diag::ModelError;
use super::raw::{ByCase, RawModel};
use super::{Conductor, ConductorKind, Ctx, Material, Probe, MAX_POTENTIAL_V};
use toml::Spanned as S;

/// What a load case is.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum LoadKind {
    /// Service voltage (U₀ or Um/√3).
    Service,
    /// The short-duration power-frequency withstand test.
    AcWithstand,
    /// The lightning impulse withstand level.
    LightningImpulse,
    /// The switching impulse withstand level.
    SwitchingImpulse,
    /// The partial-discharge measurement level.
    PdTest,
}

impl LoadKind {
    const ALL: [(&'static str, LoadKind); 5] = [
        ("service", LoadKind::Service),
        ("ac_withstand", LoadKind::AcWithstand),
        ("lightning_impulse", LoadKind::LightningImpulse),
        ("switching_impulse", LoadKind::SwitchingImpulse),
        ("pd_test", LoadKind::PdTest),
    ];

    /// The key's value in the model file.
    pub fn word(self) -> &'static str {
        LoadKind::ALL.iter().find(|k| k.1 == self).map_or("", |k| k.0)
    }

    /// Impulses are given by their peak, alternating voltages by their rms value.
    fn is_impulse(self) -> bool {
        matches!(self, LoadKind::LightningImpulse | LoadKind::SwitchingImpulse)
    }
}

/// What the figures of a load case are: rms or peak values, or the model's potentials as
/// given (no load case).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Basis {
    /// Root-mean-square values of a sinusoidal voltage.
    Rms,
    /// Peak (crest) values.
    Peak,
    /// The model's potentials as given, no basis stated.
    AsGiven,
}

impl Basis {
    /// The word used in tables and `results.json`.
    pub fn word(self) -> &'static str {
        match self {
            Basis::Rms => "rms",
            Basis::Peak => "peak",
            Basis::AsGiven => "as given",
        }
    }

    /// Peak value / value in this basis: √2 for rms (a sinusoid), 1 otherwise.
    pub fn peak_factor(self) -> f64 {
        match self {
            Basis::Rms => std::f64::consts::SQRT_2,
            Basis::Peak | Basis::AsGiven => 1.0,
        }
    }
}

/// One load case.
#[derive(Clone, Debug, PartialEq)]
pub struct LoadCase {
    /// Name.
    pub name: String,
    /// What the case is (None: the model's potentials as given).
    pub kind: Option<LoadKind>,
    /// rms or peak.
    pub basis: Basis,
    /// The reference conductor's voltage in this case, V.
    pub voltage_v: f64,
    /// What the voltage is of: the conductor's name, or the model's largest potential.
    pub reference: String,
    /// Factor on every potential, field and stress of the solution.
    pub scale: f64,
}

impl LoadCase {
    /// The single case of a model without `[[load_case]]`: its potentials as given.
    pub fn as_modelled(reference_v: f64) -> LoadCase {
        LoadCase {
            name: "as modelled".into(),
            kind: None,
            basis: Basis::AsGiven,
            voltage_v: reference_v,
            reference: "the model's potentials".into(),
            scale: 1.0,
        }
    }
}

/// An electrode named in `[breakdown]`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ElectrodeRef {
    /// A conductor (index into the plan's conductors).
    Conductor(usize),
    /// The outer boundary, held at a potential.
    Boundary,
}

/// `[[breakdown.field_factor]]`: the utilisation factor between two electrodes.
#[derive(Clone, Debug, PartialEq)]
pub struct FieldFactorSpec {
    /// Name.
    pub name: String,
    /// The two electrodes.
    pub between: [ElectrodeRef; 2],
}

/// `[[breakdown.grading]]`: a stack of grading foils, from the high-voltage side.
#[derive(Clone, Debug, PartialEq)]
pub struct GradingSpec {
    /// Name.
    pub name: String,
    /// Conductor indices in stack order.
    pub foils: Vec<usize>,
}

/// `[breakdown]`.
#[derive(Clone, Debug, PartialEq)]
pub struct BreakdownSettings {
    /// Fractions x of E_max for the stressed volume V(|E| ≥ x·E_max), ascending.
    pub stressed_fractions: Vec<f64>,
    /// Local peaks listed per region.
    pub local_peaks: usize,
    /// Least distance between two listed peaks of a region, metres (None: 2 % of the
    /// domain's diagonal).
    pub peak_separation_m: Option<f64>,
    /// Utilisation factors asked for.
    pub field_factors: Vec<FieldFactorSpec>,
    /// Field lines traced per gas region for the discharge-inception check.
    pub field_lines: usize,
    /// Condenser-grading stacks.
    pub grading: Vec<GradingSpec>,
}

impl Default for BreakdownSettings {
    fn default() -> Self {
        BreakdownSettings {
            stressed_fractions: vec![0.8, 0.9, 0.95],
            local_peaks: 3,
            peak_separation_m: None,
            field_factors: Vec::new(),
            field_lines: 16,
            grading: Vec::new(),
        }
    }
}

/// The largest |potential| of the model's fixed conductors and outer boundary, V.
pub fn largest_potential(conductors: &[Conductor], outer_potential_v: Option<f64>) -> f64 {
    conductors
        .iter()
        .filter_map(|c| match c.kind {
            ConductorKind::Fixed { potential_v } => Some(potential_v.abs()),
            ConductorKind::Floating { .. } => None,
        })
        .chain(outer_potential_v.map(f64::abs))
        .fold(0.0, f64::max)
}

/// `[[load_case]]`: names unique, a known kind, a voltage in range, a basis that fits the
/// kind, a reference conductor that is fixed at a non-zero potential, and a linear model;
/// then the allowables by case of every material and probe, whose names must be cases.
pub(super) fn load_cases(
    cx: &Ctx<'_>,
    raw: &RawModel,
    conductors: &[Conductor],
    outer_potential_v: Option<f64>,
    regions: &[super::RegionName],
    shape_charge_density: &[f64],
    materials: &mut [Material],
    probes: &mut [Probe],
) -> Result<Vec<LoadCase>, ModelError> {
    let mut cases: Vec<LoadCase> = Vec::new();
    for (i, c) in raw.load_case.iter().enumerate() {
        let c = c.get_ref();
        let key = |k: &str| format!("load_case[{i}].{k}");
        let name = c.name.get_ref().trim().to_string();
        if name.is_empty() {
            return Err(cx.err(c.name.span(), "a load case name is empty".into()).key(key("name")));
        }
        if cases.iter().any(|o| o.name == name) {
            return Err(cx
                .err(c.name.span(), format!("load case '{name}' is defined twice"))
                .key(key("name"))
                .help("give each load case its own name"));
        }
        if i == 0 {
            if let Some(k) = shape_charge_density.iter().position(|&q| q != 0.0) {
                return Err(cx
                    .err(
                        c.name.span(),
                        format!(
                            "load cases scale one solution, which needs every source to scale with the voltage; shape '{}' has a space charge density, which does not",
                            regions[k].name
                        ),
                    )
                    .key(key("name"))
                    .help("remove the load cases (solve each voltage as its own model), or the space charge"));
            }
            if let Some(f) =
                conductors.iter().find(|f| matches!(f.kind, ConductorKind::Floating { charge_c } if charge_c != 0.0))
            {
                return Err(cx
                    .err(
                        c.name.span(),
                        format!(
                            "load cases scale one solution, which needs every source to scale with the voltage; floating conductor '{}' carries a fixed charge, which does not",
                            f.name
                        ),
                    )
                    .key(key("name"))
                    .help("give the floating conductor charge_c = 0, or solve each voltage as its own model"));
            }
        }
        let kind = LoadKind::ALL.iter().find(|k| k.0 == c.kind.get_ref()).map(|k| k.1).ok_or_else(|| {
            cx.err(c.kind.span(), format!("unknown load case kind '{}'", c.kind.get_ref()))
                .key(key("kind"))
                .help("use \"service\", \"ac_withstand\", \"lightning_impulse\", \"switching_impulse\" or \"pd_test\"")
        })?;
        let basis = match &c.basis {
            None if kind.is_impulse() => Basis::Peak,
            None => Basis::Rms,
            Some(b) => match b.get_ref().as_str() {
                "peak" => Basis::Peak,
                "rms" if kind.is_impulse() => {
                    return Err(cx
                        .err(b.span(), format!("a {} is given by its peak value, not an rms value", kind.word()))
                        .key(key("basis"))
                        .help("use basis = \"peak\" (the default for impulses)"))
                }
                "rms" => Basis::Rms,
                other => {
                    return Err(cx
                        .err(b.span(), format!("unknown basis '{other}'"))
                        .key(key("basis"))
                        .help("use \"rms\" or \"peak\""))
                }
            },
        };
        let kv = cx.positive(&c.voltage_kv, key("voltage_kv"), "the load case's voltage")?;
        if kv * 1e3 > MAX_POTENTIAL_V {
            return Err(cx
                .err(c.voltage_kv.span(), format!("the voltage {kv:e} kV is above {:e} kV", MAX_POTENTIAL_V / 1e3))
                .key(key("voltage_kv"))
                .help(super::LIMIT_HELP));
        }
        let (reference, reference_v) = match &c.conductor {
            Some(n) => {
                let k = conductors.iter().position(|x| &x.name == n.get_ref()).ok_or_else(|| {
                    cx.err(
                        n.span(),
                        format!("load case '{name}' refers to conductor '{}', which does not exist", n.get_ref()),
                    )
                    .key(key("conductor"))
                })?;
                match conductors[k].kind {
                    ConductorKind::Fixed { potential_v } if potential_v != 0.0 => {
                        (n.get_ref().clone(), potential_v.abs())
                    }
                    _ => {
                        return Err(cx
                            .err(
                                n.span(),
                                format!(
                                    "conductor '{}' is not held at a non-zero potential, so no voltage can scale it",
                                    n.get_ref()
                                ),
                            )
                            .key(key("conductor"))
                            .help("name a conductor with potential_v ≠ 0 (the high-voltage electrode)"))
                    }
                }
            }
            None => {
                let u = largest_potential(conductors, outer_potential_v);
                if u == 0.0 {
                    return Err(cx
                        .err(
                            c.voltage_kv.span(),
                            "every potential of the model is 0 V, so no voltage can scale it".into(),
                        )
                        .key(key("voltage_kv"))
                        .help("give the high-voltage electrode a potential (1 V or the service voltage)"));
                }
                ("the model's largest potential".to_string(), u)
            }
        };
        cases.push(LoadCase {
            name,
            kind: Some(kind),
            basis,
            voltage_v: kv * 1e3,
            reference,
            scale: kv * 1e3 / reference_v,
        });
    }
    let names: Vec<&str> = cases.iter().map(|c| c.name.as_str()).collect();
    for (i, m) in raw.material.iter().enumerate() {
        if let Some(by) = &m.get_ref().allowable_by_case {
            materials[i].allowable_by_case =
                by_case(cx, by, &names, &format!("material[{i}].allowable_by_case"), "the allowable stress")?;
        }
    }
    for (i, p) in raw.probe.iter().enumerate() {
        if let Some(by) = &p.get_ref().allowable_tangential_by_case {
            if let super::ProbeKind::Line { .. } = probes[i].kind {
                return Err(cx
                    .err(by.span(), "allowable_tangential_by_case applies to interface and surface probes only".into())
                    .key(format!("probe[{i}].allowable_tangential_by_case")));
            }
            probes[i].allowable_tangential_by_case = by_case(
                cx,
                by,
                &names,
                &format!("probe[{i}].allowable_tangential_by_case"),
                "the allowable tangential stress",
            )?;
        }
    }
    Ok(cases)
}

/// A table of values by load-case name: every name a defined case, every value positive.
fn by_case(cx: &Ctx<'_>, by: &ByCase, names: &[&str], key: &str, what: &str) -> Result<Vec<(String, f64)>, ModelError> {
    let mut out = Vec::new();
    for (case, v) in by.get_ref() {
        if !names.contains(&case.as_str()) {
            let known = if names.is_empty() {
                "the model defines no [[load_case]]".to_string()
            } else {
                format!("the load cases are: {}", names.join(", "))
            };
            return Err(cx
                .err(v.span(), format!("'{case}' is not a load case"))
                .key(format!("{key}.{case}"))
                .help(format!("{known}; quote names with spaces: {{ \"AC test\" = 12.0 }}")));
        }
        out.push((case.clone(), cx.positive(v, format!("{key}.{case}"), what)?));
    }
    Ok(out)
}

/// `[breakdown]`: stressed-volume fractions in (0, 1], the number of peaks and their
/// separation, and the utilisation factors between electrodes that exist.
pub(super) fn breakdown(
    cx: &Ctx<'_>,
    raw: &RawModel,
    conductors: &[Conductor],
    outer_potential_v: Option<f64>,
) -> Result<BreakdownSettings, ModelError> {
    let mut out = BreakdownSettings::default();
    let Some(b) = &raw.breakdown else { return Ok(out) };
    let b = b.get_ref();
    if let Some(fr) = &b.stressed_fractions {
        let mut xs = Vec::new();
        for (k, x) in fr.get_ref().iter().enumerate() {
            let v = *x.get_ref();
            if !(v > 0.0 && v <= 1.0) {
                return Err(cx
                    .err(x.span(), format!("the fraction {v} of E_max is not in (0, 1]"))
                    .key(format!("breakdown.stressed_fractions[{k}]"))
                    .help("give fractions such as 0.8, 0.9, 0.95"));
            }
            xs.push(v);
        }
        if xs.is_empty() {
            return Err(cx
                .err(fr.span(), "stressed_fractions is empty".into())
                .key("breakdown.stressed_fractions")
                .help("give at least one fraction, or leave the key out for 0.8, 0.9, 0.95"));
        }
        xs.sort_by(f64::total_cmp);
        xs.dedup();
        out.stressed_fractions = xs;
    }
    if let Some(n) = &b.local_peaks {
        let v = *n.get_ref();
        if !(1..=20).contains(&v) {
            return Err(cx
                .err(n.span(), format!("local_peaks = {v} is out of range"))
                .key("breakdown.local_peaks")
                .help("use 1 to 20"));
        }
        out.local_peaks = v as usize;
    }
    if let Some(n) = &b.field_lines {
        let v = *n.get_ref();
        if !(1..=1000).contains(&v) {
            return Err(cx
                .err(n.span(), format!("field_lines = {v} is out of range"))
                .key("breakdown.field_lines")
                .help("use 1 to 1000"));
        }
        out.field_lines = v as usize;
    }
    if let Some(d) = &b.peak_separation {
        out.peak_separation_m =
            Some(cx.positive(d, "breakdown.peak_separation".into(), "the separation of peaks")? * cx.unit_m);
    }
    for (i, f) in b.field_factor.iter().enumerate() {
        let f = f.get_ref();
        let key = |k: &str| format!("breakdown.field_factor[{i}].{k}");
        let name = f.name.get_ref().trim().to_string();
        if name.is_empty() || out.field_factors.iter().any(|o| o.name == name) {
            return Err(cx
                .err(f.name.span(), format!("field factor name '{name}' is empty or used twice"))
                .key(key("name")));
        }
        let list = f.between.get_ref();
        if list.len() != 2 {
            return Err(cx
                .err(f.between.span(), format!("between names {} electrodes; it needs two", list.len()))
                .key(key("between"))
                .help("between = [\"hv\", \"earth\"] (conductor names, or \"boundary\" for the outer boundary)"));
        }
        let mut ends = [ElectrodeRef::Boundary; 2];
        for (k, n) in list.iter().enumerate() {
            ends[k] = electrode(cx, n, conductors, outer_potential_v, &key("between"))?;
        }
        if ends[0] == ends[1] {
            return Err(cx.err(f.between.span(), "between names the same electrode twice".into()).key(key("between")));
        }
        out.field_factors.push(FieldFactorSpec { name, between: ends });
    }
    for (i, g) in b.grading.iter().enumerate() {
        let g = g.get_ref();
        let key = |k: &str| format!("breakdown.grading[{i}].{k}");
        let name = g.name.get_ref().trim().to_string();
        if name.is_empty() || out.grading.iter().any(|o| o.name == name) {
            return Err(cx
                .err(g.name.span(), format!("grading stack name '{name}' is empty or used twice"))
                .key(key("name")));
        }
        let list = g.foils.get_ref();
        if list.len() < 2 {
            return Err(cx
                .err(g.foils.span(), format!("foils names {} conductor(s); a stack needs at least two", list.len()))
                .key(key("foils"))
                .help("list the conductors from the high-voltage one to the earthed (tap) foil: [\"rod\", \"foil1\", …, \"earth\"]"));
        }
        let mut foils = Vec::new();
        for n in list {
            let k = conductors.iter().position(|c| &c.name == n.get_ref()).ok_or_else(|| {
                let known: Vec<&str> = conductors.iter().map(|c| c.name.as_str()).collect();
                cx.err(n.span(), format!("'{}' is not a conductor", n.get_ref()))
                    .key(key("foils"))
                    .help(format!("the conductors are: {}", known.join(", ")))
            })?;
            if foils.contains(&k) {
                return Err(cx.err(n.span(), format!("'{}' is listed twice", n.get_ref())).key(key("foils")));
            }
            foils.push(k);
        }
        out.grading.push(GradingSpec { name, foils });
    }
    Ok(out)
}

/// A conductor name, or "boundary" for an outer boundary held at a potential (a conductor
/// of that name wins).
fn electrode(
    cx: &Ctx<'_>,
    n: &S<String>,
    conductors: &[Conductor],
    outer_potential_v: Option<f64>,
    key: &str,
) -> Result<ElectrodeRef, ModelError> {
    if let Some(k) = conductors.iter().position(|c| &c.name == n.get_ref()) {
        return Ok(ElectrodeRef::Conductor(k));
    }
    if n.get_ref() == "boundary" {
        return match outer_potential_v {
            Some(_) => Ok(ElectrodeRef::Boundary),
            None => Err(cx
                .err(n.span(), "the outer boundary is not held at a potential, so it is no electrode".into())
                .key(key.to_string())
                .help("set [boundary] outer = \"potential\", or name a conductor")),
        };
    }
    let known: Vec<&str> = conductors.iter().map(|c| c.name.as_str()).collect();
    Err(cx
        .err(n.span(), format!("'{}' is not a conductor", n.get_ref()))
        .key(key.to_string())
        .help(format!("the conductors are: {}; \"boundary\" is the outer boundary", known.join(", "))))
}
