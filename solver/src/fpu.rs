//! Flushing subnormal floats to zero while a run steps.
//!
//! A ring-down tail, or the quiet part of a grid far from the source, decays
//! through the subnormal range (|x| < 2.2e-308), where x86 arithmetic is
//! handled in microcode and runs tens of times slower. A value that small is
//! zero for every purpose of the solver, so runs set the processor's
//! flush-to-zero and denormals-are-zero modes (x86-64 MXCSR bits FTZ and DAZ;
//! AArch64 FPCR bit FZ) for their own thread and restore them afterwards.
//! The mode is set by the run itself, whichever thread executes it, so the
//! results do not depend on the thread count.

/// Sets flush-to-zero on creation and restores the previous mode on drop.
pub struct FlushSubnormals {
    #[allow(dead_code)]
    saved: u64,
}

impl FlushSubnormals {
    /// Turns on flush-to-zero for the current thread.
    #[allow(clippy::new_without_default)]
    pub fn new() -> Self {
        FlushSubnormals { saved: imp::set() }
    }
}

/// Runs `f` with subnormals handled normally (IEEE gradual underflow),
/// restoring the current mode afterwards. Dense linear algebra (faer's
/// eigen-solvers and SVD scale by the smallest normal numbers) gives wrong
/// answers under flush-to-zero, so harmonic inversion runs inside this.
pub fn with_gradual_underflow<R>(f: impl FnOnce() -> R) -> R {
    let saved = imp::clear();
    let r = f();
    imp::restore(saved);
    r
}

/// The current thread's floating-point mode, to be handed to the threads
/// that do part of this thread's work ([`with_mode`]).
pub(crate) fn current_mode() -> u64 {
    imp::get()
}

/// Runs `f` in the floating-point mode `mode` (read by [`current_mode`],
/// typically on another thread), restoring this thread's mode afterwards:
/// rows of one run stepped by a helper thread then flush subnormals exactly
/// as the run's own thread does, so the bits do not depend on which thread
/// took them.
pub(crate) fn with_mode<R>(mode: u64, f: impl FnOnce() -> R) -> R {
    let saved = imp::get();
    if saved == mode {
        return f();
    }
    imp::restore(mode);
    let r = f();
    imp::restore(saved);
    r
}

impl Drop for FlushSubnormals {
    fn drop(&mut self) {
        imp::restore(self.saved);
    }
}

#[cfg(target_arch = "x86_64")]
mod imp {
    const FTZ: u32 = 1 << 15;
    const DAZ: u32 = 1 << 6;

    pub fn set() -> u64 {
        let mut csr: u32 = 0;
        // SAFETY: stmxcsr/ldmxcsr only read/write the SSE control register
        // through a valid pointer to a local.
        unsafe {
            std::arch::asm!("stmxcsr [{}]", in(reg) &mut csr, options(nostack));
            let new = csr | FTZ | DAZ;
            std::arch::asm!("ldmxcsr [{}]", in(reg) &new, options(nostack));
        }
        csr as u64
    }

    pub fn get() -> u64 {
        let mut csr: u32 = 0;
        // SAFETY: stmxcsr only writes the SSE control register to a local.
        unsafe { std::arch::asm!("stmxcsr [{}]", in(reg) &mut csr, options(nostack)) };
        csr as u64
    }

    pub fn clear() -> u64 {
        let mut csr: u32 = 0;
        // SAFETY: as above.
        unsafe {
            std::arch::asm!("stmxcsr [{}]", in(reg) &mut csr, options(nostack));
            let new = csr & !(FTZ | DAZ);
            std::arch::asm!("ldmxcsr [{}]", in(reg) &new, options(nostack));
        }
        csr as u64
    }

    pub fn restore(saved: u64) {
        let csr = saved as u32;
        // SAFETY: as above.
        unsafe { std::arch::asm!("ldmxcsr [{}]", in(reg) &csr, options(nostack)) };
    }
}

#[cfg(target_arch = "aarch64")]
mod imp {
    const FZ: u64 = 1 << 24;

    pub fn set() -> u64 {
        let fpcr: u64;
        // SAFETY: reading and writing FPCR affects only floating-point modes.
        unsafe {
            std::arch::asm!("mrs {}, fpcr", out(reg) fpcr);
            std::arch::asm!("msr fpcr, {}", in(reg) fpcr | FZ);
        }
        fpcr
    }

    pub fn get() -> u64 {
        let fpcr: u64;
        // SAFETY: reading FPCR has no effect.
        unsafe { std::arch::asm!("mrs {}, fpcr", out(reg) fpcr) };
        fpcr
    }

    pub fn clear() -> u64 {
        let fpcr: u64;
        // SAFETY: as above.
        unsafe {
            std::arch::asm!("mrs {}, fpcr", out(reg) fpcr);
            std::arch::asm!("msr fpcr, {}", in(reg) fpcr & !FZ);
        }
        fpcr
    }

    pub fn restore(saved: u64) {
        // SAFETY: as above.
        unsafe { std::arch::asm!("msr fpcr, {}", in(reg) saved) };
    }
}

#[cfg(not(any(target_arch = "x86_64", target_arch = "aarch64")))]
mod imp {
    pub fn set() -> u64 {
        0
    }
    pub fn get() -> u64 {
        0
    }
    pub fn clear() -> u64 {
        0
    }
    pub fn restore(_: u64) {}
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::hint::black_box;

    #[test]
    fn subnormal_products_become_zero_and_mode_is_restored() {
        let tiny: f64 = black_box(1e-300);
        let before = black_box(tiny) * black_box(1e-15);
        assert!(before > 0.0, "subnormal expected without the guard");
        {
            let _g = FlushSubnormals::new();
            let during = black_box(black_box(tiny) * black_box(1e-15));
            if cfg!(any(target_arch = "x86_64", target_arch = "aarch64")) {
                assert_eq!(during, 0.0);
            }
        }
        let after = black_box(black_box(tiny) * black_box(1e-15));
        assert!(after > 0.0, "mode not restored");
        let _g = FlushSubnormals::new();
        // black_box on the product pins it between the two mode switches.
        let inside = with_gradual_underflow(|| black_box(black_box(tiny) * black_box(1e-15)));
        // Compare bits: under DAZ the comparison itself would read it as 0.
        assert!(
            inside.to_bits() != 0,
            "gradual underflow not restored inside"
        );
    }
}
