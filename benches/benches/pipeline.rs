//! Pipeline benchmark: where the time of a whole `fieldgrid solve` goes, stage by stage, next
//! to the linear algebra alone.
//!
//! Each repeat runs the real command in this process (`solve benches/problem.toml --set n=N
//! --no-error-estimate --threads T`, results to a scratch directory) with the stage times of
//! `--timings`, then the `multigrid` benchmark's measurement on the same matrix (hierarchy
//! setup and three solves, [`fieldgrid_benches::benchmark_problem`]), and, when a `fieldgrid` binary is
//! given or found beside this one, the whole process from start to exit. It prints per stage
//! the median wall and CPU seconds, and the ratios of the totals to setup + three solves and
//! to the three solves alone, with the whole process's page faults and peak resident set. The
//! process keeps freed memory for reuse as the command does
//! ([`fieldgrid_cli::keep_freed_memory`]).
//!
//! `cargo bench -p fieldgrid-benches --bench pipeline -- [--sizes 1024,2048] [--repeats 3]
//!  [--threads 2] [--binary PATH] [--error-estimate]`

use clap::Parser;
use fieldgrid_benches::benchmark_problem;
use fieldgrid_cli::args::{Cli, Command};
use fieldgrid_cli::commands::solve;
use fieldgrid_cli::timings::{cpu_seconds, StageTime, Timings, SOLVER_STAGES};
use fieldgrid_solver::solvers::multigrid::Hierarchy;
use fieldgrid_solver::solvers::Params;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::time::Instant;

struct Args {
    sizes: Vec<usize>,
    repeats: usize,
    threads: Vec<usize>,
    binary: Option<PathBuf>,
    error_estimate: bool,
}

fn parse() -> Args {
    let mut a = Args {
        sizes: vec![1024, 2048],
        repeats: 3,
        threads: vec![2],
        binary: None,
        error_estimate: false,
    };
    let mut it = std::env::args().skip(1);
    let list = |s: Option<String>| -> Vec<usize> {
        s.expect("value")
            .split(',')
            .map(|v| v.trim().parse().expect("number"))
            .collect()
    };
    while let Some(arg) = it.next() {
        match arg.as_str() {
            "--sizes" => a.sizes = list(it.next()),
            "--repeats" => a.repeats = list(it.next())[0].max(1),
            "--threads" => a.threads = list(it.next()),
            "--binary" => a.binary = it.next().map(Into::into),
            "--error-estimate" => a.error_estimate = true,
            "--bench" => {}
            other => panic!("unknown argument {other}"),
        }
    }
    if a.binary.is_none() {
        // target/release/deps/pipeline-HASH -> target/release/fieldgrid, when built.
        a.binary = std::env::current_exe()
            .ok()
            .and_then(|e| Some(e.parent()?.parent()?.join("fieldgrid")))
            .filter(|b| b.is_file());
    }
    a
}

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n == 0 {
        f64::NAN
    } else if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}

/// CPU seconds used by waited-for children so far (/proc/self/stat fields 16 and 17).
fn children_cpu_seconds() -> f64 {
    let stat = std::fs::read_to_string("/proc/self/stat").unwrap_or_default();
    let rest = stat.rsplit(')').next().unwrap_or("");
    let f: Vec<&str> = rest.split_whitespace().collect();
    let tick = |k: usize| f.get(k).and_then(|s| s.parse::<f64>().ok()).unwrap_or(0.0);
    (tick(13) + tick(14)) / 100.0
}

fn solve_args(problem: &Path, n: usize, threads: usize, out: &Path, estimate: bool) -> Vec<String> {
    let mut v: Vec<String> = [
        "solve",
        &problem.display().to_string(),
        "--set",
        &format!("n={n}"),
        "--threads",
        &threads.to_string(),
        "--out",
        &out.display().to_string(),
        "--quiet",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    if !estimate {
        v.push("--no-error-estimate".into());
    }
    v
}

/// One in-process run of the command: its stages and total.
fn in_process(args: &[String]) -> (Vec<StageTime>, StageTime) {
    let cli = Cli::try_parse_from(std::iter::once("fieldgrid".to_string()).chain(args.to_vec()))
        .expect("benchmark arguments parse");
    let Command::Solve(a) = &cli.command else {
        unreachable!("a solve command")
    };
    let t = Timings::new();
    let code = solve::run_timed(a, &t).expect("benchmark solve runs");
    assert_eq!(code, 0, "benchmark solve converges");
    (t.stages(), t.total())
}

/// Hierarchy setup and three solves on the same matrix, as the `multigrid` bench measures
/// them: (wall, cpu).
fn multigrid(n: usize, threads: usize) -> (f64, f64) {
    let p = benchmark_problem(n);
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .expect("thread pool");
    pool.install(|| {
        let (t, c) = (Instant::now(), cpu_seconds().unwrap_or(0.0));
        let h = Hierarchy::new(&p.stencil);
        let mut xs = vec![vec![0.0; p.stencil.len()]; p.rhs.len()];
        let infos = h.solve_many(&p.stencil, &p.rhs, &mut xs, &Params::default());
        assert!(infos.iter().all(|r| r.is_ok()), "benchmark solves converge");
        (t.elapsed().as_secs_f64(), cpu_seconds().unwrap_or(0.0) - c)
    })
}

fn main() {
    // As the command does, before any thread starts.
    fieldgrid_cli::keep_freed_memory();
    let args = parse();
    let problem = Path::new(env!("CARGO_MANIFEST_DIR")).join("problem.toml");
    let scratch = std::env::temp_dir().join(format!("fieldgrid-pipeline-{}", std::process::id()));
    for &n in &args.sizes {
        for &threads in &args.threads {
            let out = scratch.join(format!("n{n}-t{threads}"));
            let cmd = solve_args(&problem, n, threads, &out, args.error_estimate);
            // Per stage: (wall, cpu) of every repeat, in the order of first appearance.
            let mut order: Vec<String> = Vec::new();
            let mut stage: BTreeMap<String, (Vec<f64>, Vec<f64>)> = BTreeMap::new();
            let (mut total, mut total_cpu, mut ratio, mut ratio_cpu) =
                (Vec::new(), Vec::new(), Vec::new(), Vec::new());
            // Total over the three solves alone (without the hierarchy's setup).
            let (mut over_solves, mut over_solves_cpu) = (Vec::new(), Vec::new());
            let (mut mg, mut mg_cpu, mut whole, mut whole_cpu) =
                (Vec::new(), Vec::new(), Vec::new(), Vec::new());
            let (mut whole_ratio, mut whole_over_solves) = (Vec::new(), Vec::new());
            let (mut faults, mut peak_mib) = (Vec::new(), 0.0f64);
            for _ in 0..args.repeats {
                let (stages, tot) = in_process(&cmd);
                let mut solver = (0.0, 0.0);
                let mut solves = (0.0, 0.0);
                for s in &stages {
                    if !order.contains(&s.name) {
                        order.push(s.name.clone());
                    }
                    let e = stage.entry(s.name.clone()).or_default();
                    e.0.push(s.seconds);
                    e.1.push(s.cpu.unwrap_or(f64::NAN));
                    if SOLVER_STAGES.contains(&s.name.as_str()) {
                        solver.0 += s.seconds;
                        solver.1 += s.cpu.unwrap_or(f64::NAN);
                    }
                    if s.name == "solves" {
                        solves = (s.seconds, s.cpu.unwrap_or(f64::NAN));
                    }
                }
                let listed: f64 = stages.iter().map(|s| s.seconds).sum();
                let listed_cpu: f64 = stages.iter().map(|s| s.cpu.unwrap_or(f64::NAN)).sum();
                let e = stage.entry("other".into()).or_default();
                e.0.push(tot.seconds - listed);
                e.1.push(tot.cpu.unwrap_or(f64::NAN) - listed_cpu);
                total.push(tot.seconds);
                total_cpu.push(tot.cpu.unwrap_or(f64::NAN));
                ratio.push(tot.seconds / solver.0);
                ratio_cpu.push(tot.cpu.unwrap_or(f64::NAN) / solver.1);
                over_solves.push(tot.seconds / solves.0);
                over_solves_cpu.push(tot.cpu.unwrap_or(f64::NAN) / solves.1);
                let (w, c) = multigrid(n, threads);
                mg.push(w);
                mg_cpu.push(c);
                if let Some(bin) = &args.binary {
                    let (t, c) = (Instant::now(), children_cpu_seconds());
                    let run = std::process::Command::new(bin)
                        .args(&cmd)
                        .arg("--timings")
                        .output()
                        .expect("fieldgrid binary runs");
                    assert!(run.status.success(), "{} failed", bin.display());
                    let w = t.elapsed().as_secs_f64();
                    whole.push(w);
                    whole_cpu.push(children_cpu_seconds() - c);
                    // Its own setup and solves, from the table --timings printed.
                    let stderr = String::from_utf8_lossy(&run.stderr);
                    let stage = |names: &[&str]| -> f64 {
                        stderr
                            .lines()
                            .filter_map(|l| {
                                let f: Vec<&str> = l.split_whitespace().collect();
                                (f.len() >= 2 && names.contains(&f[0]))
                                    .then(|| f[1].parse::<f64>().ok())?
                            })
                            .sum()
                    };
                    let solver = stage(&SOLVER_STAGES);
                    // Its peak resident set and page faults, from the table's last line (the
                    // parent's `getrusage` would count the memory this process held when it
                    // started the child).
                    if let Some((mib, f)) = stderr.lines().find_map(|l| {
                        let f: Vec<&str> = l.split_whitespace().collect();
                        (f.len() >= 5 && f[0] == "peak" && f[1] == "resident")
                            .then(|| Some((f[2].parse::<f64>().ok()?, f[4].parse::<f64>().ok()?)))?
                    }) {
                        peak_mib = peak_mib.max(mib);
                        faults.push(f);
                    }
                    whole_over_solves.push(w / stage(&["solves"]));
                    whole_ratio.push(w / solver);
                }
            }
            order.push("other".into());
            let tot = median(total.clone());
            println!(
                "N = {n} ({} x {} nodes), {threads} thread(s), {} repeat(s), medians:",
                n + 1,
                n + 1,
                args.repeats
            );
            println!(
                "  {:<22} {:>9} {:>9} {:>7}",
                "stage", "wall s", "cpu s", "share"
            );
            for name in &order {
                let (w, c) = &stage[name];
                let w = median(w.clone());
                println!(
                    "  {:<22} {:>9.3} {:>9.2} {:>6.1}%",
                    name,
                    w,
                    median(c.clone()),
                    100.0 * w / tot
                );
            }
            println!(
                "  {:<22} {:>9.3} {:>9.2}",
                "total (in process)",
                tot,
                median(total_cpu)
            );
            println!(
                "  total / (solver_setup + solves), same run: wall {:.2}, cpu {:.2}",
                median(ratio),
                median(ratio_cpu)
            );
            println!(
                "  total / solves alone, same run:            wall {:.2}, cpu {:.2}",
                median(over_solves),
                median(over_solves_cpu)
            );
            let (mg, mg_cpu) = (median(mg), median(mg_cpu));
            println!(
                "  multigrid bench, setup + 3 solves:   {:>9.3} {:>9.2}   total / that: {:.2}",
                mg,
                mg_cpu,
                tot / mg
            );
            if !whole.is_empty() {
                let (w, c) = (median(whole), median(whole_cpu));
                println!(
                    "  whole process ({}):  {:>9.3} {:>9.2}   / its own setup + solves: {:.2}, \
                     / its own solves: {:.2}, / multigrid bench: {:.2}",
                    args.binary
                        .as_ref()
                        .map_or(String::new(), |b| b.display().to_string()),
                    w,
                    c,
                    median(whole_ratio),
                    median(whole_over_solves),
                    w / mg
                );
                if !faults.is_empty() {
                    println!(
                        "  whole process memory: peak resident {:.0} MiB, {:.0} minor page \
                         faults (median)",
                        peak_mib,
                        median(faults)
                    );
                }
            }
        }
    }
    let _ = std::fs::remove_dir_all(&scratch);
}
