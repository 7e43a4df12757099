//! Resource meters of this process from Linux's `/proc`: CPU time (process, threads, a rayon pool), resident
//! memory (current, peak, peak reset), available memory and the load average. Each returns `None` where the
//! file does not exist or cannot be parsed, so callers decide what "unknown" means.
//!
//! Thread times come from `/proc/thread-self/schedstat` (nanoseconds on a CPU, nanoseconds runnable but
//! waiting for one, timeslices). Wall time minus both is time asleep (file syncs, locks, child processes).
//! Unlike wall times these split the cost of a computation from the load that other programs put on the
//! machine, so parallel efficiency can be diagnosed on a shared machine.

/// CPU and run-queue time of one thread or summed over a pool's threads, seconds.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct ThreadTimes {
    /// Time on a CPU.
    pub cpu_s: f64,
    /// Time runnable but waiting for a CPU (other programs, or more threads than cores).
    pub runqueue_s: f64,
}

impl ThreadTimes {
    /// `later − self`, each part at least zero.
    pub fn until(&self, later: &ThreadTimes) -> ThreadTimes {
        ThreadTimes {
            cpu_s: (later.cpu_s - self.cpu_s).max(0.0),
            runqueue_s: (later.runqueue_s - self.runqueue_s).max(0.0),
        }
    }
}

/// Parse a `schedstat` line: `<cpu ns> <run-queue ns> <timeslices>`.
fn parse_schedstat(text: &str) -> Option<ThreadTimes> {
    let mut fields = text.split_whitespace().map(|f| f.parse::<u64>().ok());
    let cpu = fields.next()??;
    let queue = fields.next()??;
    Some(ThreadTimes { cpu_s: cpu as f64 * 1e-9, runqueue_s: queue as f64 * 1e-9 })
}

/// Times of the calling thread so far.
pub fn this_thread() -> Option<ThreadTimes> {
    parse_schedstat(&std::fs::read_to_string("/proc/thread-self/schedstat").ok()?)
}

/// CPU seconds on a CPU summed over every thread of this process so far (`/proc/self/task/*/schedstat`).
pub fn process_thread_cpu_seconds() -> Option<f64> {
    let mut total = 0.0;
    for task in std::fs::read_dir("/proc/self/task").ok()?.flatten() {
        total += parse_schedstat(&std::fs::read_to_string(task.path().join("schedstat")).ok()?)?.cpu_s;
    }
    Some(total)
}

/// User + system CPU seconds of this process so far (`/proc/self/stat` fields 14 and 15, in clock ticks of
/// 1/100 s, the usual `USER_HZ`).
pub fn process_cpu_seconds() -> Option<f64> {
    let stat = std::fs::read_to_string("/proc/self/stat").ok()?;
    // The command name (field 2) may contain spaces; the fields after its closing parenthesis do not.
    let fields: Vec<&str> = stat.rsplit(')').next()?.split_whitespace().collect();
    let ticks = |i: usize| fields.get(i).and_then(|f| f.parse::<f64>().ok());
    Some((ticks(11)? + ticks(12)?) / 100.0)
}

/// A `kB` field of `/proc/self/status` (`VmRSS`, `VmHWM`, …) in bytes.
fn status_bytes(text: &str, key: &str) -> Option<u64> {
    let line = text.lines().find(|l| l.strip_prefix(key).is_some_and(|rest| rest.starts_with(':')))?;
    let kib: u64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kib * 1024)
}

/// Current resident set of this process, bytes (`VmRSS`).
pub fn resident_bytes() -> Option<u64> {
    status_bytes(&std::fs::read_to_string("/proc/self/status").ok()?, "VmRSS")
}

/// Peak resident set of this process since start or the last [`reset_peak_resident`], bytes (`VmHWM`).
pub fn peak_resident_bytes() -> Option<u64> {
    status_bytes(&std::fs::read_to_string("/proc/self/status").ok()?, "VmHWM")
}

/// Resets the peak resident set to the current one (`clear_refs` value 5); false where the kernel refuses.
pub fn reset_peak_resident() -> bool {
    std::fs::write("/proc/self/clear_refs", "5").is_ok()
}

/// Memory the kernel estimates is available for new work without swapping, bytes (`MemAvailable`).
pub fn available_memory_bytes() -> Option<u64> {
    let text = std::fs::read_to_string("/proc/meminfo").ok()?;
    let line = text.lines().find(|l| l.starts_with("MemAvailable:"))?;
    let kib: u64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kib * 1024)
}

/// The 1, 5 and 15 minute load averages as the kernel writes them (`"0.52 0.61 0.70"`).
pub fn load_average() -> Option<String> {
    let text = std::fs::read_to_string("/proc/loadavg").ok()?;
    Some(text.split_whitespace().take(3).collect::<Vec<_>>().join(" "))
}

/// Times so far summed over every thread of the current rayon pool (call inside `ThreadPool::install`).
pub fn current_pool() -> Option<ThreadTimes> {
    rayon::broadcast(|_| this_thread()).into_iter().try_fold(ThreadTimes::default(), |sum, t| {
        let t = t?;
        Some(ThreadTimes { cpu_s: sum.cpu_s + t.cpu_s, runqueue_s: sum.runqueue_s + t.runqueue_s })
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn schedstat_lines_parse_to_seconds() {
        let t = parse_schedstat("1500000000 250000000 42\n").unwrap();
        assert!((t.cpu_s - 1.5).abs() < 1e-12 && (t.runqueue_s - 0.25).abs() < 1e-12);
        assert_eq!(parse_schedstat("garbage"), None);
        assert_eq!(parse_schedstat("12"), None);
        let later = ThreadTimes { cpu_s: 2.0, runqueue_s: 0.2 };
        assert_eq!(t.until(&later), ThreadTimes { cpu_s: 0.5, runqueue_s: 0.0 });
    }

    #[test]
    fn status_fields_parse_to_bytes() {
        let text = "Name:\tx\nVmHWM:\t  2048 kB\nVmRSS:\t  1024 kB\nVmRSSx:\t 1 kB\n";
        assert_eq!(status_bytes(text, "VmRSS"), Some(1024 * 1024));
        assert_eq!(status_bytes(text, "VmHWM"), Some(2048 * 1024));
        assert_eq!(status_bytes(text, "VmSwap"), None);
    }

    #[cfg(target_os = "linux")]
    #[test]
    fn process_meters_read_this_process() {
        assert!(resident_bytes().unwrap() > 0);
        assert!(peak_resident_bytes().unwrap() >= resident_bytes().unwrap() / 2);
        assert!(process_cpu_seconds().unwrap() >= 0.0);
        assert!(process_thread_cpu_seconds().unwrap() > 0.0);
        assert!(available_memory_bytes().unwrap() > 0);
        assert_eq!(load_average().unwrap().split(' ').count(), 3);
    }

    #[cfg(target_os = "linux")]
    #[test]
    fn a_busy_pool_accumulates_cpu_time() {
        let pool = rayon::ThreadPoolBuilder::new().num_threads(2).build().unwrap();
        pool.install(|| {
            let before = current_pool().unwrap();
            let started = std::time::Instant::now();
            let mut x = 0u64;
            while started.elapsed().as_secs_f64() < 0.05 {
                x = std::hint::black_box(x.wrapping_mul(6364136223846793005).wrapping_add(1));
            }
            let spent = before.until(&current_pool().unwrap());
            // 50 ms of wall time spinning: on a CPU or waiting for one, whatever the machine's load.
            assert!(spent.cpu_s + spent.runqueue_s > 0.04, "{spent:?}");
        });
    }
}
