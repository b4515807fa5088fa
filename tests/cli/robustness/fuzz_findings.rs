//! The fuzz targets' seed corpus replayed, and every fuzzing finding as a regression test
//! named after what it guards (see `fuzz/README.md`).

use std::path::Path;
use std::process::Command;

use fieldgrid_solver::solvers::Method;
use fieldgrid_solver::warning::{NonFiniteIn, SolveFailure, Warning};
use fieldgrid_tests::cli::{expect, has_warning_code, run, scratch, summary, write};
use fieldgrid_tests::fuzzing;

use super::{failure_of, PLATES, SCRATCH};

fn corpus(target: &str) -> Vec<(String, Vec<u8>)> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../fuzz/corpus")
        .join(target);
    let mut files: Vec<(String, Vec<u8>)> = std::fs::read_dir(&dir)
        .unwrap_or_else(|e| panic!("{}: {e}", dir.display()))
        .flatten()
        .map(|e| {
            (
                e.file_name().to_string_lossy().into_owned(),
                std::fs::read(e.path()).unwrap(),
            )
        })
        .collect();
    files.sort();
    files
}

#[test]
fn fuzz_seed_corpus_runs_clean_through_both_targets() {
    let designs = corpus("design");
    assert!(designs.len() >= 10);
    for (name, bytes) in &designs {
        let sig = fuzzing::design_target(bytes);
        // Seeds are valid designs that reach the solve, so mutations start deep.
        assert!(
            sig.starts_with("ok:") && sig.ends_with(":solved"),
            "{name}: {sig}"
        );
    }
    let exprs = corpus("expr");
    assert!(exprs.len() >= 10);
    for (name, bytes) in &exprs {
        assert_eq!(fuzzing::expr_target(bytes), "ok", "{name}");
    }
}

#[test]
fn fuzz_targets_refuse_garbage_without_panicking() {
    for bytes in [
        &b""[..],
        b"\xff\xfe\x00",
        b"[[conductor]]\n[[conductor]]\n",
        b"[grid]\nx = [0, 1]\ny = [0, 1]\ncell = 5e-324\n",
        b"((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((1",
    ] {
        let _ = fuzzing::design_target(bytes);
        let _ = fuzzing::expr_target(bytes);
    }
}

/// Fuzzing finding (design target, stable driver, seed 1): a potential of 1.8e308 V solves
/// (the unit solves are fine) but the energy overflows; the study reported it as converged
/// and summary.json carried `null`. Now flagged: not converged, non-finite values, exit 3.
#[test]
fn overflowing_results_of_an_absurd_potential_are_flagged_not_converged() {
    let text = PLATES.replace("potential = 5.0", "potential = 1.7976931348623157e308");
    let _ = fuzzing::design_target(text.as_bytes());
    let d = fieldgrid_tests::design(&text);
    let s = fieldgrid_solver::study::run(&d, &fieldgrid_tests::params(Method::Multigrid)).unwrap();
    assert!(!s.solve.converged);
    let why = s.solve.failure.unwrap();
    assert!(
        matches!(why, SolveFailure::NonFinite(NonFiniteIn::Conductors)),
        "{why:?}"
    );
    assert!(matches!(
        s.warnings.as_slice(),
        [Warning::NotConverged(SolveFailure::NonFinite(_))]
    ));
    let dir = scratch(SCRATCH, "overflow-potential");
    let design = write(&dir, "huge_v.toml", &text);
    let out = dir.join("out");
    expect(
        run(&["solve", &design, "--out", out.to_str().unwrap(), "--quiet"]),
        3,
    );
    let s = summary(&out);
    assert_eq!(s["solver"]["converged"], false);
    assert!(has_warning_code(&s, "not-converged"));
    assert!(s["solver"]["failure"]
        .as_str()
        .unwrap()
        .starts_with("non-finite values appeared in the conductor"));
}

/// Fuzzing finding (design target): a string value holding a newline (`unit = "m\nm"`) was
/// quoted into the error message, which then spanned two lines. Control characters in
/// messages and keys are now escaped.
#[test]
fn an_error_quoting_a_value_with_a_newline_stays_on_one_line() {
    let text = "unit = \"are open\\nfrom m\"\n[grid]\nx = [0.0, 1.0]\ny = [0.0, 1.0]\ncell = 0.1\n";
    let _ = fuzzing::design_target(text.as_bytes());
    let e = fieldgrid_cli::design_file::read_design(text, "nl.toml", &[]).unwrap_err();
    assert!(!e.message.contains('\n'), "{:?}", e.message);
    assert!(e.message.contains("are open\\nfrom m"), "{:?}", e.message);
    assert_eq!((e.line, e.key.as_str()), (1, "unit"));
    let text = "[grid]\nx = [0.0, 1.0]\ny = [0.0, 1.0]\ncell = 0.1\n\"a\\tb\\nc\" = 1\n";
    let e = fieldgrid_cli::design_file::read_design(text, "nl.toml", &[]).unwrap_err();
    assert!(!e.key.contains('\n') && !e.to_string().lines().next().unwrap().contains('\t'));
}

/// Fuzzing finding (expression target): nesting that reaches the depth limit exactly at the
/// end of the text (32 opening parentheses) gave an error range one byte past the text.
#[test]
fn an_expression_too_deep_at_its_end_points_inside_the_text() {
    use fieldgrid_cli::design_file::expr;
    for n in [31, 32, 33, 40, 64] {
        let text = "(".repeat(n);
        let e = expr::eval(&text, &|_| None).unwrap_err();
        assert!(e.offset + e.len <= text.len(), "{n}: {e:?}");
        assert!(fuzzing::expr_target(text.as_bytes()).starts_with("err"));
    }
    let e = expr::eval(&"(".repeat(40), &|_| None).unwrap_err();
    assert_eq!(e.kind, expr::ExprErrorKind::TooComplex);
}

/// Fuzzing finding (expression target): a text over the length limit that starts with a
/// character of several bytes (an invalid byte read as U+FFFD) got an error range of one
/// byte, which ends inside that character.
#[test]
fn an_expression_too_long_that_starts_with_a_wide_character_points_at_it_whole() {
    use fieldgrid_cli::design_file::expr;
    for first in ["\u{FFFD}", "\u{e9}", "\u{1F600}", "a"] {
        let text = format!("{first}{}", "+1".repeat(expr::MAX_LEN));
        let e = expr::eval(&text, &|_| None).unwrap_err();
        assert_eq!(e.kind, expr::ExprErrorKind::TooComplex);
        assert_eq!((e.offset, e.len), (0, first.len()), "{first:?}");
    }
    let mut bytes = vec![0xB8u8];
    bytes.extend("+1".repeat(expr::MAX_LEN).bytes());
    assert!(fuzzing::expr_target(&bytes).starts_with("err"));
}

/// Fuzzing findings (design target): domains of 1e305 m (a parameter near the double
/// range) passed the reader; their node coordinates and areas of revolution overflowed, and
/// the raster and operator filled with NaN. Domains are now bounded (exit 2, at the key).
#[test]
fn an_absurdly_large_or_small_domain_is_refused_at_its_key() {
    let big = "unit = \"mm\"\nmode = \"axisymmetric\"\n[grid]\nx = [0.0, 1e308]\ny = [0.5, 10.0]\ncell = 0.25\n";
    let small = "[grid]\nx = [0.0, 1.0]\ny = [0.0, 1e-200]\ncell = 1e-201\n";
    for (text, line, key) in [(big, 4, "grid.x"), (small, 3, "grid.y")] {
        let _ = fuzzing::design_target(text.as_bytes());
        let e = fieldgrid_cli::design_file::read_design(text, "far.toml", &[]).unwrap_err();
        assert_eq!((e.line, e.key.as_str()), (line, key), "{e}");
        assert!(
            e.message
                .contains("fieldgrid computes with domains between"),
            "{e}"
        );
    }
}

/// Found while fuzzing the SVG import (`svg = { file, id }`, new on main): the drawing was
/// read whole whatever it was, so `file = "/dev/zero"` ate all memory and a named pipe waited
/// for a writer forever. Only regular files up to 64 MiB are read now.
#[test]
fn an_svg_import_of_a_device_or_a_pipe_is_refused_without_reading_it() {
    let dir = scratch(SCRATCH, "svg-device");
    let fifo = dir.join("pipe.svg");
    let made = Command::new("mkfifo")
        .arg(&fifo)
        .status()
        .expect("run mkfifo");
    assert!(made.success());
    for file in ["/dev/zero", fifo.to_str().unwrap(), dir.to_str().unwrap()] {
        let text = format!(
            "[grid]\nx = [0.0, 1.0]\ny = [0.0, 1.0]\ncell = 0.1\n[[conductor]]\nname = \"c\"\n\
             potential = 1.0\nsvg = {{ file = \"{file}\", id = \"a\" }}\n"
        );
        let path = dir.join("svg.toml");
        let e = fieldgrid_cli::design_file::read_design(&text, path.to_str().unwrap(), &[])
            .unwrap_err();
        assert_eq!(e.key, "conductor.svg.file", "{file}: {e}");
        assert!(e.message.contains("not a regular file"), "{file}: {e}");
    }
}

/// The same for the design file itself: a path that never ends is refused before reading.
#[test]
fn a_design_path_that_never_ends_is_refused() {
    match failure_of(&["check", "/dev/zero"]) {
        Err((2, m)) => assert!(m.contains("not a regular file"), "{m}"),
        other => panic!("{other:?}"),
    }
}

/// Fuzzing findings (design target, after the SVG import landed): a cell of 5e-324 made the
/// flattening tolerance underflow to zero and tripped an assertion in the SVG reader, and a
/// cell of 2.5e-310 asked for a circle of 10^300 chords (capacity overflow). The tolerance
/// is kept positive and circles get at most 10 000 chords, like path curves.
#[test]
fn an_svg_import_with_a_vanishing_cell_neither_panics_nor_explodes() {
    for cell in ["5e-324", "2.5e-310", "1e-12"] {
        let text = format!(
            "[grid]\nx = [0.0, 4.0]\ny = [0.0, 5.0]\ncell = {cell}\n\
             [[conductor]]\nname = \"dot\"\npotential = 1.0\n\
             svg = {{ file = \"svg/shapes.svg\", id = \"dot\" }}\n"
        );
        let _ = fuzzing::design_target(text.as_bytes());
        let src = fieldgrid_cli::design_file::read_design(&text, fuzzing::DESIGN_FILE, &[])
            .unwrap_or_else(|e| panic!("cell {cell}: {e}"));
        let fieldgrid_solver::design::Shape::Polygon { outer, .. } =
            &src.design.conductors[0].shape
        else {
            panic!("cell {cell}: not a polygon");
        };
        assert!(outer.len() <= 10_000, "cell {cell}: {} chords", outer.len());
    }
}

/// Fuzzing findings (design target): relative permittivities of 5e-324 (subnormal: the
/// operator's weights vanished and its rows went to zero) and 1.8e308 (weights overflowed)
/// are refused at their key; the accepted range is 1 (vacuum: no material's static relative
/// permittivity is smaller) to 1e12.
#[test]
fn a_permittivity_beyond_any_material_is_refused_at_its_key() {
    for (eps, ok) in [
        ("5e-324", false),
        ("1e-12", false),
        ("0.5", false),
        ("1", true),
        ("1e12", true),
        ("1.7976931348623157e308", false),
    ] {
        for (table, key) in [
            ("[background]\n", "background.permittivity"),
            (
                "[[dielectric]]\nname = \"d\"\nrect = { x = [0.0, 1.0], y = [0.0, 0.5] }\n",
                "dielectric.permittivity",
            ),
        ] {
            let text = format!(
                "[grid]\nx = [0.0, 1.0]\ny = [0.0, 1.0]\ncell = 0.1\n{table}permittivity = {eps}\n"
            );
            let _ = fuzzing::design_target(text.as_bytes());
            match fieldgrid_cli::design_file::read_design(&text, "eps.toml", &[]) {
                Ok(_) => assert!(ok, "{eps} accepted"),
                Err(e) => {
                    assert!(!ok, "{eps}: {e}");
                    assert_eq!(e.key, key);
                    assert!(e.message.contains("must lie between 1 (vacuum"), "{e}");
                }
            }
        }
    }
}
