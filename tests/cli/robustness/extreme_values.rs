//! Extreme but finite inputs: potentials from the smallest subnormal to near the largest
//! double, and a field that is zero everywhere, solve and draw without a panic.

use fieldgrid_tests::cli::{code, scratch, write};
use std::process::ExitCode;

use super::SCRATCH;

#[test]
fn subnormal_huge_and_constant_potentials_draw_without_a_panic() {
    let dir = scratch(SCRATCH, "extreme-potentials");
    for v in ["5e-324", "2e-323", "1e-300", "0.0", "1e300"] {
        let text = fieldgrid_tests::mirror_box_4x2_mm!(
            "[[conductor]]\nname = \"pad\"\npotential = POTENTIAL\n",
            "rect = { x = [1.0, 3.0], y = [0.8, 1.0] }\n"
        )
        .replace("POTENTIAL", v);
        let design = write(&dir, &format!("pad-{v}.toml"), &text);
        let out = dir.join(format!("out-{v}"));
        let c = fieldgrid_tests::cli::run(&[
            "solve",
            &design,
            "--out",
            out.to_str().unwrap(),
            "--quiet",
        ]);
        // Done, or flagged as not converged (exit 3, results still written): never a panic.
        assert!(
            [code(ExitCode::from(0)), code(ExitCode::from(3))].contains(&code(c)),
            "potential {v}"
        );
        for f in ["potential.png", "field.png", "summary.json"] {
            assert!(out.join(f).is_file(), "potential {v}: {f} missing");
        }
    }
}
