//! Command-line values that need more than a number: the tolerance of `check` (the memory
//! limit's parser is with the memory budget, `budget::parse_memory`).

/// Parses a tolerance such as "0.5%" or "0.005".
///
/// # Errors
/// A message saying what is wrong.
pub fn parse_tolerance(s: &str) -> std::result::Result<f64, String> {
    let t = s.trim();
    let v = match t.strip_suffix('%') {
        Some(p) => p.trim().parse::<f64>().map(|v| v / 100.0),
        None => t.parse::<f64>(),
    }
    .map_err(|_| format!("'{s}' is not a tolerance; write a percentage such as 0.5% or a fraction such as 0.005"))?;
    if !(v.is_finite() && v > 0.0 && v < 0.5) {
        return Err(format!("tolerance {s} is out of range; give a value between 0 and 50 % (e.g. 0.5%)"));
    }
    Ok(v)
}
