//! Rasteriser benchmark: wall and CPU time of `raster::rasterize` for a design of ten shapes
//! (conductors of every kind, overlapping dielectrics, a large charge region) on square grids
//! up to 4097 x 4097 nodes, medians over repeats, on one and two threads.
//!
//! `cargo bench -p fieldgrid-benches --bench raster -- [--sizes 1025,4097] [--repeats 3]
//!  [--threads 1,2]`

use fieldgrid_solver::design::{Charge, Conductor, Design, Dielectric, Domain, Drive, Shape};
use fieldgrid_solver::grid::Grid;
use fieldgrid_solver::raster::rasterize;
use std::time::Instant;

/// CPU seconds used by the process so far (all threads), from /proc (0 elsewhere).
fn cpu_seconds() -> f64 {
    let stat = std::fs::read_to_string("/proc/self/stat").unwrap_or_default();
    let rest = stat.rsplit(')').next().unwrap_or("");
    // utime and stime are fields 14 and 15 of the line, 11 and 12 (from 0) after the name,
    // in clock ticks of 1/100 s (the Linux default).
    let f: Vec<&str> = rest.split_whitespace().collect();
    let tick = |k: usize| f.get(k).and_then(|s| s.parse::<f64>().ok()).unwrap_or(0.0);
    (tick(11) + tick(12)) / 100.0
}

/// Ten shapes on a 30 x 30 mm domain (our own arrangement).
fn design(cell: f64) -> Design {
    let mm = 1e-3;
    let c = |name: &str, shape: Shape| Conductor {
        name: name.into(),
        drive: Drive::Fixed(1.0),
        joined: Vec::new(),
        shape,
    };
    let conductors = vec![
        c(
            "strip",
            Shape::Rect {
                x: [2.0 * mm, 12.0 * mm],
                y: [5.0 * mm, 6.0 * mm],
                round: 0.2 * mm,
            },
        ),
        c(
            "wire",
            Shape::Circle {
                center: [20.0 * mm, 6.0 * mm],
                radius: 2.5 * mm,
            },
        ),
        c(
            "sleeve",
            Shape::Ring {
                center: [7.0 * mm, 20.0 * mm],
                inner: 2.0 * mm,
                outer: 3.0 * mm,
            },
        ),
        c(
            "comb",
            Shape::Polygon {
                outer: vec![
                    [15.0 * mm, 15.0 * mm],
                    [27.0 * mm, 15.0 * mm],
                    [27.0 * mm, 25.0 * mm],
                    [24.0 * mm, 25.0 * mm],
                    [24.0 * mm, 18.0 * mm],
                    [21.0 * mm, 18.0 * mm],
                    [21.0 * mm, 25.0 * mm],
                    [15.0 * mm, 25.0 * mm],
                ],
                holes: vec![vec![
                    [16.0 * mm, 16.0 * mm],
                    [19.0 * mm, 16.0 * mm],
                    [17.5 * mm, 23.0 * mm],
                ]],
                round: 0.3 * mm,
                corners: None,
            },
        ),
        c(
            "trace",
            Shape::Polyline(vec![
                [3.0 * mm, 27.0 * mm],
                [13.0 * mm, 28.0 * mm],
                [27.0 * mm, 28.0 * mm],
            ]),
        ),
        c(
            "core",
            Shape::Circle {
                center: [7.0 * mm, 20.0 * mm],
                radius: 1.0 * mm,
            },
        ),
    ];
    let d = |eps: f64, shape: Shape| Dielectric {
        name: "d".into(),
        permittivity: eps,
        strength: None,
        shape,
    };
    let dielectrics = vec![
        d(
            4.4,
            Shape::Rect {
                x: [0.0, 30.0 * mm],
                y: [0.0, 5.0 * mm],
                round: 0.0,
            },
        ),
        d(
            2.1,
            Shape::Circle {
                center: [20.0 * mm, 6.0 * mm],
                radius: 4.0 * mm,
            },
        ),
        d(
            3.0,
            Shape::Ring {
                center: [7.0 * mm, 20.0 * mm],
                inner: 1.2 * mm,
                outer: 1.8 * mm,
            },
        ),
    ];
    let charges = vec![Charge::Region {
        name: "cloud".into(),
        density: 1e-4,
        shape: Shape::Circle {
            center: [15.0 * mm, 12.0 * mm],
            radius: 11.0 * mm,
        },
    }];
    Design {
        domain: Domain {
            x: [0.0, 30.0 * mm],
            y: [0.0, 30.0 * mm],
            cell,
        },
        conductors,
        dielectrics,
        charges,
        ..Design::default()
    }
}

fn main() {
    let (mut sizes, mut repeats, mut threads) = (vec![1025, 2049, 4097], 3, vec![1, 2]);
    let mut it = std::env::args().skip(1);
    let list = |s: Option<String>| -> Vec<usize> {
        s.expect("value")
            .split(',')
            .map(|v| v.trim().parse().expect("number"))
            .collect()
    };
    while let Some(a) = it.next() {
        match a.as_str() {
            "--sizes" => sizes = list(it.next()),
            "--repeats" => repeats = list(it.next())[0].max(1),
            "--threads" => threads = list(it.next()),
            "--bench" => {}
            other => panic!("unknown argument {other}"),
        }
    }
    println!("nodes        threads  wall_s   cpu_s    cut_edges  charged_nodes");
    for &n in &sizes {
        let d = design(30e-3 / (n - 1) as f64);
        fieldgrid_solver::design::validate(&d).expect("the benchmark design is valid");
        let g = Grid::fit(d.domain.x, d.domain.y, d.domain.cell).unwrap();
        for &t in &threads {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(t)
                .build()
                .unwrap();
            let mut runs = Vec::new();
            let mut last = None;
            for _ in 0..repeats {
                let (w0, c0) = (Instant::now(), cpu_seconds());
                let r = pool.install(|| rasterize(&d, &g));
                runs.push((w0.elapsed().as_secs_f64(), cpu_seconds() - c0));
                last = Some(r);
            }
            runs.sort_by(|a, b| a.0.total_cmp(&b.0));
            let (w, c) = runs[runs.len() / 2];
            let r = last.unwrap();
            println!(
                "{:>5} x {:<5} {t:>3}  {w:>8.3} {c:>8.3} {:>10} {:>14}",
                g.nx,
                g.ny,
                r.cut_edges.len(),
                r.node_charge.len()
            );
        }
    }
}
