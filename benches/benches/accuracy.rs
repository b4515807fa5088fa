//! Time-to-accuracy benchmark: the whole `fieldgrid` process, one thread, on the sensor-pad
//! and microstrip demos with a graded lattice, against the converged finite-element values in
//! `tests/reference/fem_values.json`, next to the finite-element script's own whole process.
//!
//! For each demo it writes a copy with `[grid] lattice = "graded"` and a coarsest cell from
//! the list (coarse first), runs the binary, reads `summary.json`, and reports the worst
//! relative error of the reference quantities (every capacitance entry; Z0 and eps_eff), each
//! quantity's estimate / true error, and the median wall time. The first cell whose worst error
//! is below the target (default 1e-3) is the time to accuracy. Then it runs the demo as
//! shipped with `--accuracy TARGET` (the refinement loop choosing the lattice itself), one
//! thread, and reports the same. When Python can import ngsolve (or `--python PATH` names an
//! interpreter that can), `tests/reference/fem_reference.py --quick` (both designs, ~5e-5) is
//! timed the same way, in the same run, and the ratios of the medians printed.
//!
//! `cargo bench -p fieldgrid-benches --bench accuracy -- [--cells 0.4,0.2,0.1] [--repeats 3]
//!  [--target 1e-3] [--binary PATH] [--python PATH]`

use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::Instant;

struct Args {
    cells: Vec<f64>,
    repeats: usize,
    target: f64,
    binary: PathBuf,
    python: String,
}

fn parse() -> Args {
    let mut cells = vec![0.4, 0.2, 0.1];
    let (mut repeats, mut target) = (3, 1e-3);
    let (mut binary, mut python) = (None, "python3".to_string());
    let mut it = std::env::args().skip(1);
    while let Some(arg) = it.next() {
        let mut value = || it.next().expect("a value after the option");
        match arg.as_str() {
            "--cells" => {
                cells = value()
                    .split(',')
                    .map(|v| v.trim().parse().expect("cell in mm"))
                    .collect()
            }
            "--repeats" => repeats = value().parse().expect("count"),
            "--target" => target = value().parse().expect("relative error"),
            "--binary" => binary = Some(PathBuf::from(value())),
            "--python" => python = value(),
            "--bench" => {}
            other => panic!("unknown argument {other}"),
        }
    }
    // target/release/deps/accuracy-HASH -> target/release/fieldgrid.
    let binary = binary
        .or_else(|| {
            let exe = std::env::current_exe().ok()?;
            Some(exe.parent()?.parent()?.join("fieldgrid"))
        })
        .filter(|b| b.is_file())
        .expect("no fieldgrid binary: `cargo build --release` first, or give --binary");
    Args {
        cells,
        repeats: repeats.max(1),
        target,
        binary,
        python,
    }
}

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}

/// The demo with a graded lattice whose coarsest cell is `cell` (design units, mm).
fn graded_copy(demo: &Path, cell: f64) -> String {
    let text = std::fs::read_to_string(demo).expect("demo design");
    let mut out = String::new();
    for line in text.lines() {
        if line.trim_start().starts_with("cell") && line.contains('=') {
            out.push_str(&format!("cell = {cell}\nlattice = \"graded\"\n"));
        } else {
            out.push_str(line);
            out.push('\n');
        }
    }
    out
}

/// Worst relative error and the estimate / true ratios of the reference quantities.
fn errors(demo: &str, summary: &Value, reference: &Value) -> (f64, Vec<f64>) {
    let values = reference[demo]["values"]
        .as_object()
        .expect("reference values");
    let mut worst = 0.0f64;
    let mut ratios = Vec::new();
    for (key, want) in values {
        let want = want.as_f64().expect("number");
        let (got, est) = if demo == "sensor_pad" {
            let c = &summary["capacitance"];
            let names: Vec<&str> = c["names"]
                .as_array()
                .expect("names")
                .iter()
                .map(|n| n.as_str().expect("name"))
                .collect();
            let inner = key.trim_start_matches("C[").trim_end_matches(']');
            let (a, b) = inner.split_once(',').expect("C[a,b]");
            let i = names.iter().position(|n| *n == a).expect("conductor");
            let j = names.iter().position(|n| *n == b).expect("conductor");
            (
                c["matrix"][i][j].as_f64().expect("entry"),
                c["error_estimate"][i][j].as_f64().unwrap_or(f64::NAN),
            )
        } else {
            let line = &summary["line"];
            match line.get(key.as_str()).and_then(Value::as_f64) {
                Some(v) => (
                    v,
                    line["error_estimate"][key.as_str()]
                        .as_f64()
                        .unwrap_or(f64::NAN),
                ),
                None => continue, // C and C0 are not among the line's printed quantities
            }
        };
        let err = ((got - want) / want).abs();
        worst = worst.max(err);
        ratios.push((est / want).abs() / err);
    }
    (worst, ratios)
}

/// Runs `cmd` `repeats` times; the median wall time and the summary it wrote to `out`.
fn run_timed(mut cmd: impl FnMut() -> Command, repeats: usize, out: &Path) -> (f64, Value) {
    let times: Vec<f64> = (0..repeats)
        .map(|_| timed(&mut cmd()).expect("fieldgrid run failed"))
        .collect();
    let summary: Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).expect("summary"))
            .expect("json");
    (median(times), summary)
}

fn nodes(summary: &Value) -> u64 {
    summary["grid"]["nx"].as_u64().unwrap_or(0) * summary["grid"]["ny"].as_u64().unwrap_or(0)
}

fn timed(cmd: &mut Command) -> Option<f64> {
    let t = Instant::now();
    // Exit code 3: an accuracy not met, with the results written.
    let code = cmd.output().ok()?.status.code();
    let ok = code == Some(0) || code == Some(3);
    ok.then(|| t.elapsed().as_secs_f64())
}

fn main() {
    let args = parse();
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("..");
    let reference: Value = serde_json::from_str(
        &std::fs::read_to_string(root.join("tests/reference/fem_values.json")).expect("values"),
    )
    .expect("json");
    let scratch = std::env::temp_dir().join(format!("fieldgrid-accuracy-{}", std::process::id()));
    std::fs::create_dir_all(&scratch).expect("scratch directory");
    println!("binary {}", args.binary.display());
    let mut to_accuracy = Vec::new();
    let mut with_loop = Vec::new();
    for (demo, extra) in [
        ("sensor_pad", vec!["solve"]),
        ("microstrip", vec!["impedance", "--signal", "trace"]),
    ] {
        let design_file = root.join(format!("geometries/{demo}.toml"));
        let command = |design: &Path, out: &Path, more: &[String]| {
            let mut cmd = Command::new(&args.binary);
            cmd.args(&extra[..1])
                .arg(design)
                .args(&extra[1..])
                .args(more)
                .args(["--threads", "1", "--quiet", "--out"])
                .arg(out);
            cmd
        };
        let mut found = None;
        for &cell in &args.cells {
            let design = scratch.join(format!("{demo}-{cell}.toml"));
            std::fs::write(&design, graded_copy(&design_file, cell)).expect("write design");
            let out = scratch.join(format!("{demo}-{cell}"));
            let (t, summary) = run_timed(|| command(&design, &out, &[]), args.repeats, &out);
            let (worst, ratios) = errors(demo, &summary, &reference);
            let ratios: Vec<String> = ratios.iter().map(|r| format!("{r:.2}")).collect();
            println!(
                "{demo:10} cell {cell:5} mm  nodes {:>8}  worst error {worst:.2e}  estimate/true [{}]  median {t:.3} s",
                nodes(&summary),
                ratios.join(", ")
            );
            if found.is_none() && worst < args.target {
                found = Some(t);
            }
        }
        to_accuracy.push((demo, found));
        // The demo as shipped, the loop choosing the lattice.
        let out = scratch.join(format!("{demo}-accuracy"));
        let more = ["--accuracy".to_string(), format!("{:e}", args.target)];
        let (t, summary) = run_timed(|| command(&design_file, &out, &more), args.repeats, &out);
        let (worst, ratios) = errors(demo, &summary, &reference);
        let ratios: Vec<String> = ratios.iter().map(|r| format!("{r:.2}")).collect();
        let met = summary["accuracy"]["met"].as_bool().unwrap_or(false);
        println!(
            "{demo:10} --accuracy {:e}  nodes {:>8}  met {met}  worst error {worst:.2e}  estimate/true [{}]  median {t:.3} s",
            args.target,
            nodes(&summary),
            ratios.join(", ")
        );
        with_loop.push((demo, (worst < args.target).then_some(t)));
    }
    let fem = root.join("tests/reference/fem_reference.py");
    let has_fem = Command::new(&args.python)
        .args(["-c", "import ngsolve"])
        .output()
        .map(|o| o.status.success())
        .unwrap_or(false);
    let fem_time = has_fem.then(|| {
        let times: Vec<f64> = (0..args.repeats)
            .filter_map(|_| timed(Command::new(&args.python).arg(&fem).arg("--quick")))
            .collect();
        median(times)
    });
    match fem_time {
        Some(t) => println!("finite-element script --quick (both designs): median {t:.3} s"),
        None => println!(
            "finite-element script not run: {} cannot import ngsolve",
            args.python
        ),
    }
    for (how, list) in [("cells", to_accuracy), ("--accuracy", with_loop)] {
        for (demo, found) in list {
            match (found, fem_time) {
                (Some(t), Some(f)) => println!(
                    "time to {:.0e} ({how}): {demo} {t:.3} s, {:.2}x the finite-element script",
                    args.target,
                    t / f
                ),
                (Some(t), None) => {
                    println!("time to {:.0e} ({how}): {demo} {t:.3} s", args.target)
                }
                (None, _) => println!("time to {:.0e} ({how}): {demo} not reached", args.target),
            }
        }
    }
    let _ = std::fs::remove_dir_all(&scratch);
}
