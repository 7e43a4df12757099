//! Where the wall time of a case went: CPU time and run-queue wait of the threads that ran it, from Linux's
//! `/proc/thread-self/schedstat` (nanoseconds on a CPU, nanoseconds runnable but waiting for one, timeslices).
//! Wall time minus both is time asleep (file syncs, locks, child processes). Unlike wall times these split
//! the cost of a case from the load that other programs put on the machine, so a sweep's parallel efficiency
//! can be diagnosed on a shared machine (see `scripts/bench_sweep`). `None` where the file does not exist.

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
