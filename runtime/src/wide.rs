//! Whether `step` may run its copy compiled for AVX (x86-64 only).
//!
//! The copy computes the same operations in the same order as the baseline one (AVX only gives
//! the compiler three-operand instructions and loads folded into arithmetic, no fused
//! multiply-add), so its estimates are bit-identical: a choice of speed, never of results.
#![allow(unsafe_code)] // CPUID and XGETBV, and calling the copy compiled for AVX

use core::sync::atomic::{AtomicU8, Ordering};

/// 0 not yet asked, 1 no, 2 yes. CPUID traps to the hypervisor in a virtual machine, and the
/// C interface sets up an estimator on every call: asked once per process.
static AVX: AtomicU8 = AtomicU8::new(0);

/// Whether the processor has AVX and the operating system saves its registers.
pub(crate) fn avx() -> bool {
    match AVX.load(Ordering::Relaxed) {
        0 => {
            let yes = detect();
            AVX.store(if yes { 2 } else { 1 }, Ordering::Relaxed);
            yes
        }
        known => known == 2,
    }
}

fn detect() -> bool {
    use core::arch::x86_64::__cpuid;
    // CPUID leaf 1, ECX: bit 27 OSXSAVE (XGETBV usable), bit 28 AVX (Intel SDM vol. 2A, CPUID).
    // SAFETY: CPUID exists on every x86-64 processor (an unsafe call before Rust 1.89).
    #[allow(unused_unsafe)]
    let ecx = unsafe { __cpuid(1) }.ecx;
    if ecx & (1 << 27) == 0 || ecx & (1 << 28) == 0 {
        return false;
    }
    // XCR0 bits 1 and 2: the operating system saves the SSE and AVX registers.
    // SAFETY: OSXSAVE is set, so XGETBV is available.
    let xcr0 = unsafe { xcr0() };
    xcr0 & 0b110 == 0b110
}

#[target_feature(enable = "xsave")]
unsafe fn xcr0() -> u64 {
    core::arch::x86_64::_xgetbv(0)
}

#[cfg(test)]
mod tests {
    #[test]
    fn detection_agrees_with_std() {
        assert_eq!(super::avx(), std::is_x86_feature_detected!("avx"));
        // Cached: the second answer is the first.
        assert_eq!(super::avx(), std::is_x86_feature_detected!("avx"));
    }
}
