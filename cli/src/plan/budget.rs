//! The memory budget of a run: from `--memory-limit`, or by default half of the machine's
//! physical memory (and at most 80 % of the process's address-space limit, when one is
//! set), turned into the node budget the mesher enforces before it places a point.

use crate::plan::Plan;

/// Share of the physical memory a run may plan to use when no limit is given.
pub const DEFAULT_MEMORY_SHARE: f64 = 0.5;

/// Share of an address-space limit (`ulimit -v`) a run may plan to use: the rest is for
/// the program, its libraries and the allocator's slack.
const ADDRESS_SPACE_SHARE: f64 = 0.8;

/// A memory budget and where it came from.
#[derive(Clone, Debug, PartialEq)]
pub struct MemoryBudget {
    /// Bytes.
    pub bytes: f64,
    /// Where the figure comes from, for messages.
    pub origin: String,
}

impl MemoryBudget {
    /// The budget given on the command line, or the machine's default.
    pub fn new(given: Option<f64>) -> MemoryBudget {
        if let Some(bytes) = given {
            return MemoryBudget { bytes, origin: "--memory-limit".into() };
        }
        let total = physical_memory_bytes();
        let mut budget = match total {
            Some(t) => MemoryBudget {
                bytes: DEFAULT_MEMORY_SHARE * t,
                origin: format!("half of this machine's {} of memory", gib(t)),
            },
            None => MemoryBudget { bytes: 4.0 * GIB, origin: "4 GiB (this machine's memory could not be read)".into() },
        };
        if let Some(limit) = address_space_limit_bytes() {
            if ADDRESS_SPACE_SHARE * limit < budget.bytes {
                budget = MemoryBudget {
                    bytes: ADDRESS_SPACE_SHARE * limit,
                    origin: format!("80 % of the address-space limit of {} (ulimit -v)", gib(limit)),
                };
            }
        }
        budget
    }

    /// Lowers the model's node budget (`max_nodes`, vertices) to what fits in this budget for
    /// its element order; returns true when the memory, not the model's `max_nodes`, is
    /// what binds.
    pub fn apply(&self, model: &mut Plan, adaptive: bool) -> bool {
        let order = model.params.order;
        let unknowns = engine::unknowns_within(self.bytes, order, adaptive);
        let vertices = (unknowns / engine::unknowns_per_vertex(order)).floor().max(16.0) as usize;
        if vertices < model.params.max_nodes {
            model.params.max_nodes = vertices;
            true
        } else {
            false
        }
    }

    /// The sentence a refusal adds when the memory set the node budget.
    pub fn explain(&self, max_nodes: usize) -> String {
        format!(
            "the node budget {max_nodes} is what fits in the memory budget of {} ({}); \
             raise it with --memory-limit if the machine has the memory, or coarsen the sizes",
            gib(self.bytes),
            self.origin
        )
    }
}

/// Sets the element order the command line asks for and lowers the node budget to the
/// memory budget (`memory_limit` bytes, or the machine's default), keeping the sentence a
/// refusal over that budget adds (see [`Plan::mesh_error`]).
pub fn prepare(model: &mut Plan, order: Option<u8>, memory_limit: Option<f64>, adaptive: bool) {
    if let Some(o) = order {
        model.params.order = o;
    }
    let budget = MemoryBudget::new(memory_limit);
    model.memory_budget_bytes = budget.bytes;
    if budget.apply(model, adaptive) {
        model.budget_note = Some(budget.explain(model.params.max_nodes));
    }
}

const GIB: f64 = 1024.0 * 1024.0 * 1024.0;

/// A memory size for messages: GiB with one decimal (powers of ten when absurd), MiB below
/// one GiB.
pub fn gib(bytes: f64) -> String {
    if bytes >= 1e4 * GIB {
        format!("{:.2e} GiB", bytes / GIB)
    } else if bytes >= GIB {
        format!("{:.1} GiB", bytes / GIB)
    } else {
        format!("{:.0} MiB", bytes / (1024.0 * 1024.0))
    }
}

/// `MemTotal` of `/proc/meminfo`, bytes (Linux); `None` elsewhere.
fn physical_memory_bytes() -> Option<f64> {
    let text = std::fs::read_to_string("/proc/meminfo").ok()?;
    let line = text.lines().find(|l| l.starts_with("MemTotal:"))?;
    let kb: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb * 1024.0)
}

/// The soft address-space limit of this process (`/proc/self/limits`, Linux), bytes, if
/// one is set.
fn address_space_limit_bytes() -> Option<f64> {
    let text = std::fs::read_to_string("/proc/self/limits").ok()?;
    let line = text.lines().find(|l| l.starts_with("Max address space"))?;
    line.split_whitespace().nth(3)?.parse().ok()
}

/// Parses a memory size: a number with an optional unit `B`, `kB`, `MB`, `GB` (powers of
/// 1000) or `KiB`, `MiB`, `GiB` (powers of 1024); no unit means bytes.
///
/// # Errors
/// A message saying what was expected.
pub fn parse_memory(s: &str) -> Result<f64, String> {
    let t = s.trim();
    let split = t.find(|c: char| c.is_ascii_alphabetic()).unwrap_or(t.len());
    let (num, unit) = t.split_at(split);
    let v: f64 =
        num.trim().parse().map_err(|_| format!("'{s}' is not a memory size; write for example 8GiB or 500MB"))?;
    let k = match unit.trim() {
        "" | "B" => 1.0,
        "kB" | "KB" => 1e3,
        "MB" => 1e6,
        "GB" => 1e9,
        "KiB" => 1024.0,
        "MiB" => 1024.0 * 1024.0,
        "GiB" => GIB,
        u => return Err(format!("unknown memory unit '{u}'; use B, kB, MB, GB, KiB, MiB or GiB")),
    };
    let bytes = v * k;
    if !(bytes.is_finite() && bytes >= 1e6) {
        return Err(format!("memory limit '{s}' must be at least 1 MB"));
    }
    Ok(bytes)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn memory_sizes_parse() {
        assert_eq!(parse_memory("8GiB").unwrap(), 8.0 * GIB);
        assert_eq!(parse_memory("500 MB").unwrap(), 5e8);
        assert_eq!(parse_memory("2000000").unwrap(), 2e6);
        assert!(parse_memory("8 GX").unwrap_err().contains("unknown memory unit"));
        assert!(parse_memory("-1GB").is_err());
        assert!(parse_memory("lots").is_err());
    }
}
