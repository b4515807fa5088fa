//! End-to-end tests of the `fieldgrid` command: each command's files read back by
//! independent readers (CSV, VTK, PNG, SPICE), exit codes, the bad-input catalogue, and
//! robustness (interrupted runs, refusals, non-convergence, reproducibility, fuzzing
//! findings). One module per command or concern; shared designs and helpers live in
//! `tests/support/`. Each module names its scratch directories with a prefix of its own.

mod accuracy;
mod bad_input;
mod command;
mod compare;
mod csv_roundtrip;
mod nets;
mod pictures;
mod pictures_review;
mod robustness;
mod spice;
mod svg_import;
mod sweep;
mod sweep_streams;
mod target;
mod vtk;
