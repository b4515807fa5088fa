//! Extreme but finite inputs: potentials from the smallest subnormal to near the largest
//! double, and a field that is zero everywhere, solve and draw without a panic; a large
//! potential offset common to every fixed surface leaves the field at its physical value.

use fieldgrid_tests::cli::{code, expect, has_warning_code, scratch, summary, write};
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

/// Sides at `side` volts, a pad at `pad` volts and a floating plate beside it, in a closed
/// box (no open side).
fn offset_box(side: &str, pad: &str) -> String {
    format!(
        r#"
unit = "mm"
{grid}
[sides]
left = {side}
right = {side}
bottom = {side}
top = {side}
[[conductor]]
name = "pad"
potential = {pad}
rect = {{ x = [4.0, 6.0], y = [2.0, 3.0] }}
[[conductor]]
name = "plate"
floating = true
rect = {{ x = [7.0, 8.0], y = [1.0, 4.0] }}
"#,
        grid = fieldgrid_tests::designs::grid_table([0.0, 10.0], [0.0, 5.0], 0.1)
    )
}

#[test]
fn a_large_common_potential_offset_leaves_no_noise_in_the_peak_field() {
    let dir = scratch(SCRATCH, "common-offset");
    // 1e6 + 1e-10 rounds to 1e6 + 2^-33 (1.1641532182693481e-10 V above the sides); the same
    // box with the sides at 0 V and the pad at that difference is the physical answer. Solved
    // with the offset, the solver's relative residual times 1 MV once read 11.6 V/m here.
    let cases = [
        ("offset", offset_box("1.0e6", "1000000.0000000001")),
        ("relative", offset_box("0.0", "1.1641532182693481e-10")),
    ];
    let mut got = Vec::new();
    for (name, text) in cases {
        let design = write(&dir, &format!("{name}.toml"), &text);
        let out = dir.join(name);
        expect(
            fieldgrid_tests::cli::run(&[
                "solve",
                &design,
                "--out",
                out.to_str().unwrap(),
                "--quiet",
            ]),
            0,
        );
        got.push(summary(&out));
    }
    let (offset, relative) = (&got[0], &got[1]);
    let peak = |s: &serde_json::Value| s["peak_field"]["magnitude"].as_f64().unwrap();
    let charge = |s: &serde_json::Value, k: usize| s["conductors"][k]["charge"].as_f64().unwrap();
    let potential =
        |s: &serde_json::Value, k: usize| s["conductors"][k]["potential"].as_f64().unwrap();
    let close = |a: f64, b: f64| (a - b).abs() <= 1e-6 * b.abs();
    // Physical scale: about 1e-10 V across millimetres, so 1e-7 V/m.
    assert!(peak(relative) > 1e-8 && peak(relative) < 1e-6, "{relative}");
    assert!(
        close(peak(offset), peak(relative)),
        "{} vs {}",
        peak(offset),
        peak(relative)
    );
    assert!(close(charge(offset, 0), charge(relative, 0)));
    // The floating plate follows the offset: it reads the relative design's potential
    // (a fraction of the pad's 1.2e-10 V, which adding 1 MV rounds away) plus the offset.
    let plate = potential(relative, 1);
    assert!(plate > 0.0 && plate < 1.2e-10, "{plate}");
    assert_eq!(potential(offset, 1), 1.0e6 + plate);
    // The pad's potential is reported as given (read as text: parsing JSON numbers here
    // need not round correctly).
    let text = std::fs::read_to_string(dir.join("offset/summary.json")).unwrap();
    assert!(
        text.contains("\"potential\": 1000000.0000000001,"),
        "{text}"
    );
    // What rounding the potentials to doubles leaves unresolved is said, not hidden.
    assert!(has_warning_code(offset, "potential-rounding"), "{offset}");
    assert!(!has_warning_code(relative, "potential-rounding"));
}
