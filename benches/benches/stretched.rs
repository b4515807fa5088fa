//! Multigrid on stretched cells: graded lattices with largest cell aspect ratios 1 to 10 000,
//! setup, CG iterations and solve time per size and ratio, medians over repeats.
//!
//! `cargo bench -p fieldgrid-benches --bench stretched -- [--sizes 317,1001] [--ratios
//!  1,10,100,1000,10000] [--case corner|axisymmetric|sensor-pad|sensor-pad-steep]
//!  [--smoother auto|points|lines] [--repeats 3] [--threads 2] [--history]`
//! (`--sizes 3163` is the 1e7-node case, about 1.2 GB). The sensor pad cases are the demo on
//! members `--sizes` of its graded family (default or steep junction grading), one solve per
//! conductor at 1 V; `--ratios` is ignored there, and `--history` prints every solve's
//! relative residuals.

use fieldgrid_benches::graded::{graded_problem, sensor_pad_problem, Case};
use fieldgrid_solver::solvers::multigrid::{Hierarchy, Options, Smoother};
use fieldgrid_solver::solvers::Params;
use fieldgrid_solver::stencil::Stencil5;
use std::time::Instant;

/// What the bench solves.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Problem {
    /// A graded box built from coordinate lists.
    Graded(Case),
    /// The sensor pad demo; true: steep junction grading.
    SensorPad(bool),
}

struct Args {
    sizes: Vec<usize>,
    ratios: Vec<f64>,
    case: Problem,
    history: bool,
    smoother: Smoother,
    repeats: usize,
    threads: usize,
}

fn parse() -> Args {
    let mut a = Args {
        sizes: vec![317, 1001],
        ratios: vec![1.0, 10.0, 100.0, 1e3, 1e4],
        case: Problem::Graded(Case::Corner),
        history: false,
        smoother: Smoother::Auto,
        repeats: 3,
        threads: 2,
    };
    let mut it = std::env::args().skip(1);
    let list = |s: Option<String>| -> Vec<f64> {
        s.expect("value")
            .split(',')
            .map(|v| v.trim().parse().expect("number"))
            .collect()
    };
    while let Some(arg) = it.next() {
        match arg.as_str() {
            "--sizes" => a.sizes = list(it.next()).iter().map(|&v| v as usize).collect(),
            "--ratios" => a.ratios = list(it.next()),
            "--repeats" => a.repeats = (list(it.next())[0] as usize).max(1),
            "--threads" => a.threads = (list(it.next())[0] as usize).max(1),
            "--case" => {
                a.case = match it.next().as_deref() {
                    Some("corner") => Problem::Graded(Case::Corner),
                    Some("axisymmetric") => Problem::Graded(Case::Axisymmetric),
                    Some("sensor-pad") => Problem::SensorPad(false),
                    Some("sensor-pad-steep") => Problem::SensorPad(true),
                    other => panic!("unknown case {other:?}"),
                }
            }
            "--smoother" => {
                a.smoother = match it.next().as_deref() {
                    Some("auto") => Smoother::Auto,
                    Some("points") => Smoother::Points,
                    Some("lines") => Smoother::Lines,
                    other => panic!("unknown smoother {other:?}"),
                }
            }
            "--history" => a.history = true,
            "--bench" => {}
            other => panic!("unknown argument {other}"),
        }
    }
    a
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

/// Largest ratio of the couplings along one axis to those along the other over the free
/// nodes with free neighbours both ways (the cell aspect ratio in a homogeneous medium).
fn largest_aspect_ratio(a: &Stencil5) -> f64 {
    let mut worst: f64 = 1.0;
    for p in 0..a.len() {
        let (i, j) = (p % a.nx, p / a.nx);
        if !a.unknown[p] || i + 1 >= a.nx || j + 1 >= a.ny {
            continue;
        }
        let (e, n) = (a.east[p], a.north[p]);
        if e > 0.0 && n > 0.0 {
            worst = worst.max(e / n).max(n / e);
        }
    }
    worst.sqrt()
}

fn main() {
    let args = parse();
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(args.threads)
        .build()
        .expect("thread pool");
    println!(
        "case {:?}, smoother {:?}, {} threads, medians of {} runs, relative residual 1e-8",
        args.case, args.smoother, args.threads, args.repeats
    );
    println!(
        "{:>6} {:>10} {:>7} {:>8} {:>6} | {:>8} {:>10} {:>8} {:>8} | {:>6}",
        "n",
        "nodes",
        "ratio",
        "smoother",
        "levels",
        "setup s",
        "iterations",
        "solve s",
        "total s",
        "B/node"
    );
    let mut options = Options::default();
    options.smoother = args.smoother;
    for &n in &args.sizes {
        let runs: Vec<(f64, Stencil5, Vec<Vec<f64>>)> = match args.case {
            Problem::Graded(case) => args
                .ratios
                .iter()
                .map(|&ratio| {
                    let (a, b) = graded_problem(case, n, ratio);
                    (ratio, a, vec![b])
                })
                .collect(),
            Problem::SensorPad(steep) => {
                let p = sensor_pad_problem(n, steep);
                let ratio = largest_aspect_ratio(&p.stencil);
                vec![(ratio, p.stencil, p.rhs)]
            }
        };
        for (ratio, a, bs) in runs {
            let (mut setup, mut solve) = (Vec::new(), Vec::new());
            let (mut iterations, mut bytes, mut levels) = (String::new(), 0, 0);
            let mut relaxation = None;
            for _ in 0..args.repeats {
                pool.install(|| {
                    let t = Instant::now();
                    let h = Hierarchy::with_options(&a, &options);
                    setup.push(t.elapsed().as_secs_f64());
                    let mut its = Vec::new();
                    let t = Instant::now();
                    for b in &bs {
                        let mut x = vec![0.0; a.len()];
                        let mut params = Params::default();
                        if args.history {
                            params.monitor = Some(std::sync::Arc::new(|k, rel| {
                                println!("    iteration {k:>3}: relative residual {rel:.3e}")
                            }));
                        }
                        let info = h
                            .solve(&a, b, &mut x, &params)
                            .expect("benchmark solve converges");
                        its.push(info.iterations.to_string());
                    }
                    solve.push(t.elapsed().as_secs_f64());
                    iterations = its.join("+");
                    bytes = h.bytes();
                    levels = h.lattices().len();
                    relaxation = Some(h.relaxation());
                });
            }
            let (s, v) = (median(setup), median(solve));
            println!(
                "{:>6} {:>10} {:>7.3e} {:>8} {:>6} | {:>8.3} {:>10} {:>8.3} {:>8.3} | {:>6.1}",
                n,
                a.len(),
                ratio,
                format!("{:?}", relaxation.expect("one run")),
                levels,
                s,
                iterations,
                v,
                s + v,
                bytes as f64 / a.len() as f64
            );
        }
    }
}
