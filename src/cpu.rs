//! Upper vector-register state after wide-vector library kernels.
//!
//! The matrix kernels of the linear-algebra library can return with the upper halves of the
//! vector registers in use ("dirty" upper state). Later code on the same thread that uses the
//! legacy SSE encoding, such as the system maths library's `exp` and `log`, then pays an
//! AVX–SSE transition penalty on every instruction (Intel 64 and IA-32 Architectures
//! Optimization Reference Manual, 2023, section "Mixing AVX code with SSE code"; the remedy it
//! gives is VZEROUPPER). Measured here: the kernel-sum bandwidth rule's 5.8 million `exp` calls
//! took about 0.7 s on worker threads that had run a matrix product before, and 0.02 s after
//! VZEROUPPER (docs/performance.md). The calls below clear that state; they change no value.

/// Clear the upper vector state of the current thread (no effect on a CPU without AVX).
#[inline]
pub fn clear_upper_state_here() {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx") {
            // SAFETY: the CPU supports AVX (checked above); VZEROUPPER only zeroes the upper
            // halves of vector registers, which no Rust code keeps live across this call.
            unsafe { zero_upper() }
        }
    }
}

/// Clear the upper vector state of every thread of the global rayon pool and of the calling
/// thread, when called from outside any pool (between phases of a command). From inside a pool
/// (a record of a cohort run on a worker) only the calling thread is cleared: waiting for every
/// worker there would hold the record up until the others reach a free moment; the clears after
/// each library call cover the workers then.
pub fn clear_upper_state_everywhere() {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx") {
            if rayon::current_thread_index().is_none() {
                rayon::broadcast(|_| clear_upper_state_here());
            }
            clear_upper_state_here();
        }
    }
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx")]
unsafe fn zero_upper() {
    core::arch::x86_64::_mm256_zeroupper();
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn clearing_changes_no_value() {
        let x: Vec<f64> = (0..1000).map(|i| (i as f64 * 0.37).sin()).collect();
        let before: f64 = x.iter().map(|v| v.exp()).sum();
        clear_upper_state_here();
        clear_upper_state_everywhere();
        let after: f64 = x.iter().map(|v| v.exp()).sum();
        assert_eq!(before.to_bits(), after.to_bits());
    }
}
