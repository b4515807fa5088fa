//! cargo-fuzz target: the design-file expression evaluator. The body is
//! `fieldgrid_tests::fuzzing::expr_target`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let _ = fieldgrid_tests::fuzzing::expr_target(data);
});
