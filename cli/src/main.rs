//! The `fieldgrid` command: parse arguments, dispatch, map the outcome to an exit code.
//!
//! Before anything else the process tells the C heap to keep the memory a stage frees for
//! the next stage ([`fieldgrid_cli::keep_freed_memory`]). Results do not depend on it.

fn main() -> std::process::ExitCode {
    fieldgrid_cli::keep_freed_memory();
    fieldgrid_cli::main_with_args(std::env::args_os())
}
