//! Keeping freed memory in the process between the cases of a local sweep.
//!
//! glibc's allocator maps each large array (above a threshold that starts at 128 KiB) with its own `mmap` and
//! unmaps it when freed, and gives the top of its heaps back to the kernel (`madvise`) once more than 128 KiB
//! are free there. A sweep runs many cases one after another in one process, each allocating and freeing the
//! same arrays, so every case faults its memory in again; and with several jobs in one process each unmap
//! interrupts the other jobs' cores to flush their address translations (one address space). Raising the
//! thresholds removes most of that cost (bench/RECORDS.md, "Memory reuse in local sweeps").
//!
//! Arrays above 32 MiB (glibc's largest `mmap` threshold) are still mapped one by one; at that size the case's
//! work dwarfs the cost. The memory kept is at most what the largest case held, which the jobs' memory
//! forecast already counts.

/// Largest `M_MMAP_THRESHOLD` glibc accepts on 64-bit systems (half its 64 MiB heap size; glibc `malloc.c`,
/// `HEAP_MAX_SIZE`, from memory).
#[cfg(all(target_os = "linux", target_env = "gnu"))]
const MMAP_THRESHOLD_BYTES: libc::c_int = 32 << 20;
/// Free memory at the top of a heap kept before any is returned to the kernel.
#[cfg(all(target_os = "linux", target_env = "gnu"))]
const TRIM_THRESHOLD_BYTES: libc::c_int = 1 << 30;

/// Raise the allocator's thresholds for the rest of the process; `false` where they cannot be set (other C
/// libraries, other systems: the sweep then runs as before, only slower).
pub fn keep_freed_memory() -> bool {
    #[cfg(all(target_os = "linux", target_env = "gnu"))]
    {
        // SAFETY: `mallopt` only changes two of glibc's thresholds, under its own locks; it returns 1 on
        // success.
        unsafe {
            libc::mallopt(libc::M_MMAP_THRESHOLD, MMAP_THRESHOLD_BYTES) == 1
                && libc::mallopt(libc::M_TRIM_THRESHOLD, TRIM_THRESHOLD_BYTES) == 1
        }
    }
    #[cfg(not(all(target_os = "linux", target_env = "gnu")))]
    {
        false
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[cfg(all(target_os = "linux", target_env = "gnu"))]
    #[test]
    fn large_arrays_come_from_the_heap_once_set() {
        // glibc's own count of bytes in separately mapped blocks (`mallinfo2().hblkhd`).
        let mapped_bytes = || unsafe { libc::mallinfo2() }.hblkhd;
        let before = mapped_bytes();
        let array = std::hint::black_box(vec![1u8; 4 << 20]);
        // At glibc's default threshold the 4 MiB array gets its own mapping.
        let after_default = mapped_bytes();
        assert!(keep_freed_memory());
        drop(std::hint::black_box(array));
        // Freeing it would have raised glibc's own (dynamic) threshold to 4 MiB; a 16 MiB array would still
        // be mapped then, not with the thresholds set.
        let before_reuse = mapped_bytes();
        let array = std::hint::black_box(vec![2u8; 16 << 20]);
        let after_reuse = mapped_bytes();
        assert!(after_default >= before + (4 << 20), "{before} → {after_default}");
        assert!(after_reuse < before_reuse + (16 << 20), "{before_reuse} → {after_reuse}");
        assert_eq!(array[0], 2);
    }
}
