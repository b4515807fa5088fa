//! The `fieldgrid` command as the end-to-end tests run it from a shell (`tests/readme.rs`
//! puts it on PATH under its real name): the same entry point as `cli/src/main.rs`, built
//! inside this package so that its tests can find it (`CARGO_BIN_EXE_fieldgrid-under-test`).

fn main() -> std::process::ExitCode {
    fieldgrid_cli::main_with_args(std::env::args_os())
}
