//! Multigrid on stretched cells: graded lattices with largest cell aspect ratios 1 to 10 000,
//! setup, CG iterations and solve time per size and ratio, medians over repeats.
//!
//! `cargo bench -p fieldgrid-benches --bench stretched -- [--sizes 317,1001] [--ratios
//!  1,10,100,1000,10000] [--case corner|axisymmetric] [--smoother auto|points|lines]
//!  [--repeats 3] [--threads 2]` (`--sizes 3163` is the 1e7-node case, about 1.2 GB).

use fieldgrid_benches::graded::{graded_problem, Case};
use fieldgrid_solver::solvers::multigrid::{Hierarchy, Options, Smoother};
use fieldgrid_solver::solvers::Params;
use std::time::Instant;

struct Args {
    sizes: Vec<usize>,
    ratios: Vec<f64>,
    case: Case,
    smoother: Smoother,
    repeats: usize,
    threads: usize,
}

fn parse() -> Args {
    let mut a = Args {
        sizes: vec![317, 1001],
        ratios: vec![1.0, 10.0, 100.0, 1e3, 1e4],
        case: Case::Corner,
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
                    Some("corner") => Case::Corner,
                    Some("axisymmetric") => Case::Axisymmetric,
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
        for &ratio in &args.ratios {
            let (a, b) = graded_problem(args.case, n, ratio);
            let (mut setup, mut solve) = (Vec::new(), Vec::new());
            let (mut iterations, mut bytes, mut levels) = (0, 0, 0);
            let mut relaxation = None;
            for _ in 0..args.repeats {
                pool.install(|| {
                    let t = Instant::now();
                    let h = Hierarchy::with_options(&a, &options);
                    setup.push(t.elapsed().as_secs_f64());
                    let mut x = vec![0.0; a.len()];
                    let t = Instant::now();
                    let info = h
                        .solve(&a, &b, &mut x, &Params::default())
                        .expect("benchmark solve converges");
                    solve.push(t.elapsed().as_secs_f64());
                    iterations = info.iterations;
                    bytes = h.bytes();
                    levels = h.lattices().len();
                    relaxation = Some(h.relaxation());
                });
            }
            let (s, v) = (median(setup), median(solve));
            println!(
                "{:>6} {:>10} {:>7} {:>8} {:>6} | {:>8.3} {:>10} {:>8.3} {:>8.3} | {:>6.1}",
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
