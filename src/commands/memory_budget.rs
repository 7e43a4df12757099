//! The memory a command may use, compared with a case's forecast before anything grid-sized is allocated.
//!
//! `run` (and each case of a local sweep) may have: `--max-memory` when given; else the Slurm job's allocation
//! (`SLURM_MEM_PER_NODE`, or `SLURM_MEM_PER_CPU` times the job's CPUs on the node, both in MB) or this machine's
//! `MemAvailable`, whichever is smaller. `estimate`, `sweep --plan` and `sweep --slurm` often run on a login
//! node: they compare with the node memory the user gives (`--node-memory`), else this machine's `MemTotal`,
//! and only warn.

use crate::case::Case;
use crate::forecast::{format_bytes, Forecast};

/// A memory limit and where it comes from (for the message).
#[derive(Clone, Debug, PartialEq)]
pub struct MemoryBudget {
    pub bytes: f64,
    /// E.g. "--max-memory", "the Slurm job's allocation (SLURM_MEM_PER_NODE)".
    pub source: String,
}

/// A size such as `64G`, `64 GB`, `500M`, `1.5 TiB` or `2e9` (bytes). Decimal prefixes for `kB/MB/GB/TB`,
/// binary for `KiB/MiB/GiB/TiB`; a bare letter `K/M/G/T` is binary, as in Slurm.
pub fn parse_memory_size(text: &str) -> Result<f64, String> {
    let t = text.trim();
    // The unit is the trailing run of letters (so that "2e9" stays a number).
    let split = t.len() - t.chars().rev().take_while(char::is_ascii_alphabetic).count();
    let (number, unit) = t.split_at(split);
    let number: f64 = number
        .trim()
        .parse()
        .map_err(|_| format!("{text:?} is not a memory size such as \"64G\" or \"500 MB\""))?;
    let factor = match unit.trim() {
        "" | "B" => 1.0,
        "kB" | "KB" => 1e3,
        "MB" => 1e6,
        "GB" => 1e9,
        "TB" => 1e12,
        "K" | "KiB" => 1024.0,
        "M" | "MiB" => 1024.0 * 1024.0,
        "G" | "GiB" => 1024.0 * 1024.0 * 1024.0,
        "T" | "TiB" => 1024.0_f64.powi(4),
        other => {
            return Err(format!("{text:?}: {other:?} is not a memory unit (use B, MB, GB, TB, M, G or T)"))
        }
    };
    let bytes = number * factor;
    if !(bytes.is_finite() && bytes > 0.0) {
        return Err(format!("{text:?} is not a positive memory size"));
    }
    Ok(bytes)
}

/// This machine's available memory (`MemAvailable`), bytes.
pub fn available_bytes() -> Option<f64> {
    numkit::meter::available_memory_bytes().map(|bytes| bytes as f64)
}

/// This machine's total memory, bytes (`sysinfo(2)`, the figure `MemTotal` shows).
fn total_bytes() -> Option<f64> {
    // SAFETY: `sysinfo` only writes into the zeroed struct it is given.
    let mut info: libc::sysinfo = unsafe { std::mem::zeroed() };
    (unsafe { libc::sysinfo(&mut info) } == 0).then(|| info.totalram as f64 * f64::from(info.mem_unit.max(1)))
}

/// The Slurm job's memory on this node from its environment, bytes, with the variable it came from.
fn slurm_allocation(env: &dyn Fn(&str) -> Option<String>) -> Option<MemoryBudget> {
    let mb = |name: &str| env(name).and_then(|v| v.trim().parse::<f64>().ok()).filter(|&v| v > 0.0);
    if let Some(per_node) = mb("SLURM_MEM_PER_NODE") {
        return Some(MemoryBudget {
            bytes: per_node * 1024.0 * 1024.0,
            source: "the Slurm job's allocation (SLURM_MEM_PER_NODE)".into(),
        });
    }
    let per_cpu = mb("SLURM_MEM_PER_CPU")?;
    let cpus = ["SLURM_CPUS_ON_NODE", "SLURM_CPUS_PER_TASK"].iter().find_map(|name| mb(name)).unwrap_or(1.0);
    Some(MemoryBudget {
        bytes: per_cpu * cpus * 1024.0 * 1024.0,
        source: format!("the Slurm job's allocation (SLURM_MEM_PER_CPU x {cpus} CPUs)"),
    })
}

/// What `run` may use: `--max-memory`, else the smaller of the Slurm allocation and `MemAvailable`; `None`
/// when nothing is known (then nothing is refused).
pub fn run_budget(max_memory: Option<f64>) -> Option<MemoryBudget> {
    if let Some(bytes) = max_memory {
        return Some(MemoryBudget { bytes, source: "--max-memory".into() });
    }
    let machine = available_bytes()
        .map(|bytes| MemoryBudget { bytes, source: "this machine's available memory (MemAvailable)".into() });
    let slurm = slurm_allocation(&|name| std::env::var(name).ok());
    match (slurm, machine) {
        (Some(s), Some(m)) => Some(if s.bytes <= m.bytes { s } else { m }),
        (s, m) => s.or(m),
    }
}

/// What a compute node has, for the warnings of `estimate` and `sweep --plan/--slurm`: `--node-memory`, else
/// this machine's `MemTotal`.
pub fn node_budget(node_memory: Option<f64>) -> Option<MemoryBudget> {
    match node_memory {
        Some(bytes) => Some(MemoryBudget { bytes, source: "--node-memory".into() }),
        None => total_bytes().map(|bytes| MemoryBudget {
            bytes,
            source: "this machine's memory (MemTotal; give the compute nodes' with --node-memory)".into(),
        }),
    }
}

/// The sentence saying that `case` on `threads` threads needs more than `budget`, or `None` when it fits.
pub fn over_budget(case: &Case, threads: usize, budget: &MemoryBudget) -> Option<String> {
    let forecast = Forecast::of(case);
    let needed = forecast.memory_bytes_on(threads);
    (needed > budget.bytes).then(|| {
        let [nx, ny, nz] = case.grid.shape;
        format!(
            "the case needs about {} ({nx} x {ny} x {nz} = {:.3e} grid cells on {threads} thread{}), more than the \
             {} of {}; use a coarser {} or a smaller chamber.size",
            format_bytes(needed),
            nx as f64 * ny as f64 * nz as f64,
            if threads == 1 { "" } else { "s" },
            format_bytes(budget.bytes),
            budget.source,
            case.grid_key
        )
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sizes_parse_with_decimal_and_binary_units() {
        assert_eq!(parse_memory_size("500 MB"), Ok(500e6));
        assert_eq!(parse_memory_size("64G"), Ok(64.0 * 1024.0 * 1024.0 * 1024.0));
        assert_eq!(parse_memory_size("2e9"), Ok(2e9));
        assert!(parse_memory_size("lots").is_err());
        assert!(parse_memory_size("-1 GB").is_err());
        assert!(parse_memory_size("3 furlongs").is_err());
    }

    #[test]
    fn slurm_allocation_per_node_then_per_cpu() {
        let env = |pairs: &'static [(&'static str, &'static str)]| {
            move |name: &str| pairs.iter().find(|(k, _)| *k == name).map(|(_, v)| v.to_string())
        };
        let node = slurm_allocation(&env(&[("SLURM_MEM_PER_NODE", "2048")])).unwrap();
        assert_eq!(node.bytes, 2048.0 * 1048576.0);
        let cpu =
            slurm_allocation(&env(&[("SLURM_MEM_PER_CPU", "1000"), ("SLURM_CPUS_ON_NODE", "4")])).unwrap();
        assert_eq!(cpu.bytes, 4000.0 * 1048576.0);
        assert!(slurm_allocation(&env(&[])).is_none());
    }
}
