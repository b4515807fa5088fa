//! Fault injection for the tests of interrupted runs and full disks: compiled only with the
//! cargo feature `fault-injection` (which the test crate turns on), and then acting only when
//! one of these test-only environment variables is set:
//!
//! - `FIELDGRID_FAULT_INJECTION_TEST_ONLY_STOP_AT=K` with
//!   `FIELDGRID_FAULT_INJECTION_TEST_ONLY_SIGNAL=TERM|INT|HUP|KILL`: the process sends itself
//!   that signal at its K-th interruption point (counted from 1: the results directory
//!   prepared and the solve about to start, each file write begun and finished, and each step
//!   of putting the set in place);
//! - `FIELDGRID_FAULT_INJECTION_TEST_ONLY_FAIL_WRITE=N`: the N-th file write (counted from 1)
//!   fails as on a full disk.
//!
//! Without the feature both functions are empty and the variables mean nothing.

#[cfg(feature = "fault-injection")]
mod on {
    use std::sync::atomic::{AtomicU64, Ordering};

    static STEPS: AtomicU64 = AtomicU64::new(0);
    static WRITES: AtomicU64 = AtomicU64::new(0);

    fn var(name: &str) -> Option<u64> {
        std::env::var(format!("FIELDGRID_FAULT_INJECTION_TEST_ONLY_{name}"))
            .ok()?
            .parse()
            .ok()
    }

    pub fn step(holding_registry: bool) {
        let k = STEPS.fetch_add(1, Ordering::SeqCst) + 1;
        if var("STOP_AT") != Some(k) {
            return;
        }
        let sig = match std::env::var("FIELDGRID_FAULT_INJECTION_TEST_ONLY_SIGNAL").as_deref() {
            Ok("KILL") => libc::SIGKILL,
            Ok("INT") => libc::SIGINT,
            Ok("HUP") => libc::SIGHUP,
            _ => libc::SIGTERM,
        };
        // SAFETY: sending a signal to this process.
        unsafe {
            libc::kill(libc::getpid(), sig);
        }
        if !holding_registry {
            // Give the signal thread the moment it needs, as if the signal came right here.
            for _ in 0..400 {
                std::thread::sleep(std::time::Duration::from_millis(10));
            }
        }
    }

    pub fn write_fails() -> bool {
        let n = WRITES.fetch_add(1, Ordering::SeqCst) + 1;
        var("FAIL_WRITE") == Some(n)
    }
}

/// An interruption point. `holding_registry`: the caller holds the interruption registry (the
/// signal is then handled when it lets go).
#[inline]
pub fn step(holding_registry: bool) {
    #[cfg(feature = "fault-injection")]
    on::step(holding_registry);
    let _ = holding_registry;
}

/// True when this file write is to fail as on a full disk.
#[inline]
pub fn write_fails() -> bool {
    #[cfg(feature = "fault-injection")]
    return on::write_fails();
    #[cfg(not(feature = "fault-injection"))]
    false
}
