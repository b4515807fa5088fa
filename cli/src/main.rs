//! The `fieldgrid` command: parse arguments, dispatch, map the outcome to an exit code.
//!
//! Before anything else the process tells the C heap to keep the memory a stage frees for
//! the next stage: a study allocates and drops lattice-sized vectors stage after stage, and
//! returning them to the system and faulting fresh zeroed pages in again cost a sixth of a
//! small solve's time (the sensor-pad demo, one thread). Results do not depend on it.

fn main() -> std::process::ExitCode {
    keep_freed_memory();
    fieldgrid_cli::main_with_args(std::env::args_os())
}

/// glibc: blocks up to 32 MiB (the largest threshold it takes) come from the heap rather
/// than fresh mappings, and the heap's free top is not given back while under 2 GiB.
#[cfg(all(target_os = "linux", target_env = "gnu"))]
fn keep_freed_memory() {
    // SAFETY: mallopt only changes two thresholds of the allocator; no thread runs yet.
    unsafe {
        libc::mallopt(libc::M_MMAP_THRESHOLD, 32 << 20);
        libc::mallopt(libc::M_TRIM_THRESHOLD, i32::MAX);
    }
}

#[cfg(not(all(target_os = "linux", target_env = "gnu")))]
fn keep_freed_memory() {}
