//! Time-to-accuracy benchmark: the whole `fieldgrid` process, one thread, on the sensor-pad
//! and microstrip demos, against the converged finite-element values in
//! `tests/reference/fem_values.json`, next to the finite-element script's own whole process
//! measured in the same run.
//!
//! Cases, per demo: the demo as shipped (its graded lattice, default settings); the demo with
//! `--accuracy TARGET` (the refinement loop choosing the lattice itself); and, for each cell
//! of `--cells`, a copy with `[grid] lattice = "graded"` and that coarsest cell. Each case
//! reports the lattice, the worst relative error of the reference quantities (every
//! capacitance entry; Z0 and eps_eff), each quantity's estimate / true error, and the median
//! wall time and CPU seconds (user + system of the child process) over the repeats. When
//! Python can import ngsolve (or `--python PATH` names an interpreter that can),
//! `tests/reference/fem_reference.py --quick` (both designs, ~5e-5) is timed the same way,
//! on one thread too (NGSolve's own count set by the script, BLAS and OpenMP pools by
//! environment variables); the repeats interleave every fieldgrid case with a run of the
//! script, so that both see the same load, and the ratios of the medians are printed for
//! every case under the target (the script computes both designs in one process: a demo's
//! ratio is against the whole script). The load average is printed before and after.
//!
//! `cargo bench -p fieldgrid-benches --bench accuracy -- [--cells 0.4,0.2] [--repeats 3]
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
    let mut cells = Vec::new();
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
    if n == 0 {
        return f64::NAN;
    }
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

fn nodes(summary: &Value) -> u64 {
    summary["grid"]["nx"].as_u64().unwrap_or(0) * summary["grid"]["ny"].as_u64().unwrap_or(0)
}

/// User + system CPU seconds of the children waited for so far.
fn children_cpu() -> f64 {
    // SAFETY: getrusage writes the struct it is given and nothing else.
    let mut u: libc::rusage = unsafe { std::mem::zeroed() };
    unsafe { libc::getrusage(libc::RUSAGE_CHILDREN, &mut u) };
    let s = |t: libc::timeval| t.tv_sec as f64 + t.tv_usec as f64 * 1e-6;
    s(u.ru_utime) + s(u.ru_stime)
}

/// Wall and CPU seconds of one run of `cmd`; `None` when it failed.
fn timed(cmd: &mut Command) -> Option<(f64, f64)> {
    let (t, c) = (Instant::now(), children_cpu());
    // Exit code 3: an accuracy not met, with the results written.
    let code = cmd.output().ok()?.status.code();
    let ok = code == Some(0) || code == Some(3);
    ok.then(|| (t.elapsed().as_secs_f64(), children_cpu() - c))
}

fn load() -> String {
    std::fs::read_to_string("/proc/loadavg")
        .map(|s| s.split_whitespace().take(3).collect::<Vec<_>>().join(" "))
        .unwrap_or_else(|_| "unknown".into())
}

/// The variables that hold the numerical libraries a Python process loads to one thread.
const ONE_THREAD: [&str; 3] = ["OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"];

/// One fieldgrid case: what it runs and its timings.
struct Case {
    demo: &'static str,
    label: String,
    cmd: Command,
    out: PathBuf,
    wall: Vec<f64>,
    cpu: Vec<f64>,
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
    println!("load average before: {}", load());
    let mut cases = Vec::new();
    for (demo, extra) in [
        ("sensor_pad", vec!["solve"]),
        ("microstrip", vec!["impedance", "--signal", "trace"]),
    ] {
        let design_file = root.join(format!("geometries/{demo}.toml"));
        let mut add = |label: String, design: &Path, more: &[String]| {
            let out = scratch.join(format!("{demo}-{}", cases.len()));
            let mut cmd = Command::new(&args.binary);
            cmd.args(&extra[..1])
                .arg(design)
                .args(&extra[1..])
                .args(more)
                .args(["--threads", "1", "--quiet", "--out"])
                .arg(&out);
            cases.push(Case {
                demo,
                label,
                cmd,
                out,
                wall: Vec::new(),
                cpu: Vec::new(),
            });
        };
        add("as shipped".into(), &design_file, &[]);
        let more = ["--accuracy".to_string(), format!("{:e}", args.target)];
        add(format!("--accuracy {:e}", args.target), &design_file, &more);
        for &cell in &args.cells {
            let design = scratch.join(format!("{demo}-{cell}.toml"));
            std::fs::write(&design, graded_copy(&design_file, cell)).expect("write design");
            add(format!("graded, cell {cell} mm"), &design, &[]);
        }
    }
    let fem = root.join("tests/reference/fem_reference.py");
    let has_fem = Command::new(&args.python)
        .args(["-c", "import ngsolve"])
        .output()
        .map(|o| o.status.success())
        .unwrap_or(false);
    let (mut fem_wall, mut fem_cpu) = (Vec::new(), Vec::new());
    for _ in 0..args.repeats {
        for case in cases.iter_mut() {
            let (w, c) = timed(&mut case.cmd).expect("fieldgrid run failed");
            case.wall.push(w);
            case.cpu.push(c);
            if has_fem {
                // One thread, as fieldgrid: the script sets NGSolve's own count, and these
                // keep the BLAS and OpenMP libraries it loads from starting pools of their own
                // (OpenBLAS alone adds a thread per core at import).
                let mut cmd = Command::new(&args.python);
                cmd.envs(ONE_THREAD.map(|v| (v, "1")));
                if let Some((w, c)) = timed(cmd.arg(&fem).arg("--quick")) {
                    fem_wall.push(w);
                    fem_cpu.push(c);
                }
            }
        }
    }
    println!("load average after: {}", load());
    let fem_time = (!fem_wall.is_empty()).then(|| (median(fem_wall), median(fem_cpu)));
    match fem_time {
        Some((w, c)) => println!(
            "finite-element script --quick (both designs): median {w:.3} s wall, {c:.3} s cpu"
        ),
        None => println!(
            "finite-element script not run: {} cannot import ngsolve",
            args.python
        ),
    }
    for case in cases {
        let summary: Value = serde_json::from_str(
            &std::fs::read_to_string(case.out.join("summary.json")).expect("summary"),
        )
        .expect("json");
        let (worst, ratios) = errors(case.demo, &summary, &reference);
        let ratios: Vec<String> = ratios.iter().map(|r| format!("{r:.2}")).collect();
        let (w, c) = (median(case.wall), median(case.cpu));
        let rounds = summary["accuracy"]["rounds"]
            .as_u64()
            .map_or(String::new(), |r| format!("  rounds {r}"));
        println!(
            "{:10} {:22} nodes {:>8}{rounds}  worst error {worst:.2e}  estimate/true [{}]  median {w:.3} s wall, {c:.3} s cpu",
            case.demo,
            case.label,
            nodes(&summary),
            ratios.join(", ")
        );
        let reached = worst < args.target;
        match (reached, fem_time) {
            (true, Some((fw, fc))) => println!(
                "  time to {:.0e}: {:.2}x the finite-element script's wall, {:.2}x its cpu",
                args.target,
                w / fw,
                c / fc
            ),
            (true, None) => {}
            (false, _) => println!("  {:.0e} not reached", args.target),
        }
    }
    let _ = std::fs::remove_dir_all(&scratch);
}
