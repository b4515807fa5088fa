//! The `fieldgrid` command: parse arguments, dispatch, map the outcome to an exit code.

fn main() -> std::process::ExitCode {
    fieldgrid_cli::main_with_args(std::env::args_os())
}
