//! A stress against its allowable value, with the stress's error bar.

/// What a stress check concludes.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Verdict {
    /// The stress, error bar included, is at most the allowable.
    Pass,
    /// The stress, error bar subtracted, exceeds the allowable.
    Fail,
    /// The error bar straddles the allowable: a finer solution must decide.
    Undecided,
    /// No allowable value is given: nothing to decide.
    NoAllowable,
}

impl Verdict {
    /// The word used in tables and `results.json`.
    pub fn word(self) -> &'static str {
        match self {
            Verdict::Pass => "pass",
            Verdict::Fail => "fail",
            Verdict::Undecided => "undecided",
            Verdict::NoAllowable => "no allowable",
        }
    }
}

/// A stress, its allowable value and what follows.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct StressCheck {
    /// The stress, V/m.
    pub stress: f64,
    /// Its absolute error bar, V/m (None: a single solve, not certified).
    pub error_bar: Option<f64>,
    /// The allowable stress, V/m.
    pub allowable: Option<f64>,
    /// E / E_allow.
    pub utilisation: Option<f64>,
    /// E_allow / E (the safety factor; ≥ 1 passes).
    pub margin: Option<f64>,
    /// The verdict.
    pub verdict: Verdict,
}

/// Checks `stress` (V/m) with its absolute `error_bar` against `allowable` (V/m).
///
/// Utilisation u = E/E_allow and margin E_allow/E (the design rule E_max ≤ E_allow: Kuffel,
/// Zaengl & Kuffel 2000, recalled from memory; `../shared/TRADE.md` §1.1). With a bar b the
/// verdict is `pass` when E + b ≤ E_allow, `fail` when E − b > E_allow, and `undecided`
/// otherwise — the true stress may lie on either side. Without a bar (one mesh, no study) the
/// verdict is taken on the value alone, and the caller must say that it is not certified.
pub fn stress_check(stress: f64, error_bar: Option<f64>, allowable: Option<f64>) -> StressCheck {
    let Some(a) = allowable else {
        return StressCheck {
            stress,
            error_bar,
            allowable,
            utilisation: None,
            margin: None,
            verdict: Verdict::NoAllowable,
        };
    };
    let b = error_bar.unwrap_or(0.0).abs();
    let verdict = if stress + b <= a {
        Verdict::Pass
    } else if stress - b > a {
        Verdict::Fail
    } else {
        Verdict::Undecided
    };
    StressCheck {
        stress,
        error_bar,
        allowable,
        utilisation: Some(stress / a),
        margin: (stress > 0.0).then(|| a / stress),
        verdict,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_bar_decides_near_the_allowable() {
        // 10 ± 1 against 12: pass; against 10.5: undecided; against 8.5: fail.
        assert_eq!(stress_check(10.0, Some(1.0), Some(12.0)).verdict, Verdict::Pass);
        assert_eq!(stress_check(10.0, Some(1.0), Some(10.5)).verdict, Verdict::Undecided);
        assert_eq!(stress_check(10.0, Some(1.0), Some(8.5)).verdict, Verdict::Fail);
        assert_eq!(stress_check(10.0, None, Some(10.0)).verdict, Verdict::Pass);
        assert_eq!(stress_check(10.0, None, None).verdict, Verdict::NoAllowable);
        let c = stress_check(8.0, None, Some(10.0));
        assert_eq!((c.utilisation, c.margin), (Some(0.8), Some(1.25)));
    }
}
