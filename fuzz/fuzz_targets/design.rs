//! cargo-fuzz target: design reading, validation, rasterisation (node-capped), operator
//! assembly and a small solve. The body is `fieldgrid_tests::fuzzing::design_target`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(
    init: {
        // One worker: the fuzzer's own process is the unit of parallelism.
        let _ = rayon::ThreadPoolBuilder::new().num_threads(1).build_global();
    },
    |data: &[u8]| {
        let _ = fieldgrid_tests::fuzzing::design_target(data);
    }
);
