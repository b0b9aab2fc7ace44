//! Straight-line loops compiled a second time for AVX2, picked at run time.
//!
//! The per-sample loops on the way out (running statistics, the finite check, the encoding)
//! keep eight independent lanes so that they vectorise; [`avx2`] runs such a loop from a copy
//! compiled for AVX2 when the CPU has it, which handles four f64 per instruction instead of
//! two. The results are identical: each lane does the same IEEE 754 operations in the same
//! order either way (Rust never contracts `a·b + c` into a fused multiply-add, and AVX2
//! leaves FMA disabled), so only the number of instructions changes. The FFT has its own
//! dispatch ([`crate::fft`]), since it picks intrinsics per stage.

/// Runs `body`, from a copy compiled for AVX2 when the CPU has it (same results, see the
/// module docs). `body` and what it calls should be inlined (`#[inline(always)]`), since only
/// code inlined into the AVX2 copy is compiled for AVX2.
#[inline(always)]
pub(crate) fn avx2<R>(body: impl FnOnce() -> R) -> R {
    #[cfg(target_arch = "x86_64")]
    if std::arch::is_x86_feature_detected!("avx2") {
        // SAFETY: the CPU has AVX2, the one feature the copy is compiled for.
        return unsafe { avx2_copy(body) };
    }
    body()
}

/// `body()` compiled for AVX2.
///
/// # Safety
/// The CPU must have AVX2.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn avx2_copy<R>(body: impl FnOnce() -> R) -> R {
    body()
}

/// `lanes` unchanged, as a value the optimiser cannot see through: put after a lane loop
/// whose lanes are then combined one by one. Without it LLVM merges that per-lane code into
/// the loop's vectorisation and shuffles every lane on every step (the AVX2 statistics loop
/// took three times the instructions). Costs a store and a load per lane, once per loop.
#[inline(always)]
pub(crate) fn fence<T>(lanes: T) -> T {
    std::hint::black_box(lanes)
}
