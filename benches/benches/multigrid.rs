//! Multigrid benchmark on the benchmark problem: setup, iterations and solve times per grid
//! size, medians over repeats, on one and two threads; optionally exports each matrix for
//! `benches/pyamg_compare.py`.
//!
//! `cargo bench -p fieldgrid-benches --bench multigrid -- [--sizes 256,512] [--repeats 3]
//!  [--threads 1,2] [--export DIR] [--json FILE] [--memory N] [--fine-sweeps K]
//!  [--coarse-sweeps K] [--coarsest-nodes M]`

use fieldgrid_benches::{benchmark_problem, write_csr, Problem};
use fieldgrid_solver::solvers::multigrid::{Hierarchy, Options};
use fieldgrid_solver::solvers::Params;
use std::time::Instant;

struct Args {
    options: Options,
    sizes: Vec<usize>,
    repeats: usize,
    threads: Vec<usize>,
    export: Option<std::path::PathBuf>,
    json: Option<std::path::PathBuf>,
    memory: Option<usize>,
}

fn parse() -> Args {
    let mut a = Args {
        sizes: vec![256, 512, 1024, 2048],
        repeats: 3,
        threads: vec![1, 2],
        export: None,
        json: None,
        memory: None,
        options: Options::default(),
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
            "--export" => a.export = it.next().map(Into::into),
            "--json" => a.json = it.next().map(Into::into),
            "--memory" => a.memory = Some(list(it.next())[0]),
            "--fine-sweeps" => a.options.fine_sweeps = list(it.next())[0],
            "--coarse-sweeps" => a.options.coarse_sweeps = list(it.next())[0],
            "--coarsest-nodes" => a.options.coarsest_nodes = list(it.next())[0],
            "--bench" => {}
            other => panic!("unknown argument {other}"),
        }
    }
    a
}

/// CPU seconds used by the process so far (all threads), from /proc (0 elsewhere).
fn cpu_seconds() -> f64 {
    let stat = std::fs::read_to_string("/proc/self/stat").unwrap_or_default();
    // Fields after the parenthesised command name; utime and stime are fields 14 and 15,
    // in clock ticks of 1/100 s (the Linux default).
    let rest = stat.rsplit(')').next().unwrap_or("");
    let f: Vec<f64> = rest
        .split_whitespace()
        .map(|v| v.parse().unwrap_or(0.0))
        .collect();
    if f.len() > 13 {
        (f[11] + f[12]) / 100.0
    } else {
        0.0
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

/// Median timings of one size on one thread count.
struct Run {
    setup: f64,
    setup_cpu: f64,
    solve3: f64,
    cpu3: f64,
    iterations: Vec<usize>,
    bytes: usize,
    levels: usize,
}

fn run(p: &Problem, repeats: usize, options: &Options) -> Run {
    let a = &p.stencil;
    let params = Params::default();
    let (mut setup, mut solve3, mut cpu3) = (Vec::new(), Vec::new(), Vec::new());
    let mut setup_cpu = Vec::new();
    let mut iterations = Vec::new();
    let (mut bytes, mut levels) = (0, 0);
    for _ in 0..repeats {
        let (t, c) = (Instant::now(), cpu_seconds());
        let h = Hierarchy::with_options(a, options);
        setup.push(t.elapsed().as_secs_f64());
        setup_cpu.push(cpu_seconds() - c);
        bytes = h.bytes();
        levels = h.lattices().len();
        let mut xs = vec![vec![0.0; a.len()]; p.rhs.len()];
        let (t, c) = (Instant::now(), cpu_seconds());
        let infos = h.solve_many(a, &p.rhs, &mut xs, &params);
        solve3.push(t.elapsed().as_secs_f64());
        cpu3.push(cpu_seconds() - c);
        iterations = infos
            .into_iter()
            .map(|r| r.expect("benchmark solve converges").iterations)
            .collect();
    }
    Run {
        setup: median(setup),
        setup_cpu: median(setup_cpu),
        solve3: median(solve3),
        cpu3: median(cpu3),
        iterations,
        bytes,
        levels,
    }
}

fn main() {
    let args = parse();
    if let Some(n) = args.memory {
        // One setup and three solves, keeping every solution, as a whole solve would; run
        // under `/usr/bin/time -v` to read the peak resident set.
        let p = benchmark_problem(n);
        let h = Hierarchy::with_options(&p.stencil, &args.options);
        let mut xs = vec![vec![0.0; p.stencil.len()]; p.rhs.len()];
        let infos = h.solve_many(&p.stencil, &p.rhs, &mut xs, &Params::default());
        println!(
            "N {n}: {} unknowns, iterations {:?}, hierarchy {:.1} B/unknown",
            p.stencil.unknowns(),
            infos
                .iter()
                .map(|r| r.as_ref().map(|i| i.iterations).unwrap_or(0))
                .collect::<Vec<_>>(),
            h.bytes() as f64 / p.stencil.unknowns() as f64
        );
        return;
    }
    let mut json = Vec::new();
    println!(
        "{:>5} {:>9} {:>3} {:>6} | {:>7} {:>7} | {:>10} {:>8} {:>8} {:>8} | {:>8} | {:>6} {:>7}",
        "N",
        "unknowns",
        "thr",
        "levels",
        "setup s",
        "cpu s",
        "iterations",
        "solve s",
        "3 solves",
        "cpu s",
        "total s",
        "B/unk",
        "speedup"
    );
    for &n in &args.sizes {
        let p = benchmark_problem(n);
        let unknowns = p.stencil.unknowns();
        if let Some(dir) = &args.export {
            std::fs::create_dir_all(dir).expect("export directory");
            write_csr(&dir.join(format!("problem_{n}.bin")), &p).expect("export matrix");
        }
        let mut first_solve = None;
        for &t in &args.threads {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(t)
                .build()
                .expect("thread pool");
            let r = pool.install(|| run(&p, args.repeats, &args.options));
            let speedup = match first_solve {
                None => {
                    first_solve = Some(r.solve3);
                    1.0
                }
                Some(s1) => s1 / r.solve3,
            };
            println!(
                "{:>5} {:>9} {:>3} {:>6} | {:>7.3} {:>7.2} | {:>10} {:>8.3} {:>8.3} {:>8.2} | {:>8.3} | {:>6.1} {:>7.2}",
                n,
                unknowns,
                t,
                r.levels,
                r.setup,
                r.setup_cpu,
                format!("{:?}", r.iterations),
                r.solve3 / p.rhs.len() as f64,
                r.solve3,
                r.cpu3,
                r.setup + r.solve3,
                r.bytes as f64 / unknowns as f64,
                speedup
            );
            json.push(format!(
                "{{\"n\": {n}, \"unknowns\": {unknowns}, \"threads\": {t}, \"setup\": {}, \"setup_cpu\": {}, \"solve3\": {}, \"cpu3\": {}, \"iterations\": {:?}, \"bytes_per_unknown\": {}}}",
                r.setup,
                r.setup_cpu,
                r.solve3,
                r.cpu3,
                r.iterations,
                r.bytes as f64 / unknowns as f64
            ));
        }
    }
    if let Some(path) = &args.json {
        std::fs::write(path, format!("[{}]\n", json.join(",\n "))).expect("write json");
    }
}
