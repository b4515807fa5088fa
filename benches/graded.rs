//! Five-point operators on graded rectilinear lattices, built straight from coordinate lists
//! (finite volumes on the node-centred boxes, planar or axisymmetric), for the `stretched`
//! benchmark: the same construction as the multigrid unit tests' graded boxes.
//!
//! Invariants: couplings are face length (axisymmetric: the face's radial moment) over node
//! distance, so the operator is symmetric; fixed sides are identity rows whose potentials go
//! to the right-hand side; insulated sides are free nodes with half boxes.

use fieldgrid_solver::stencil::Stencil5;

/// The cases of the benchmark.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Case {
    /// Unit square graded towards the corner (0, 0) along both axes; all sides fixed (the
    /// top at 1 V).
    Corner,
    /// Axisymmetric body, radius 1 and length 2, graded towards the axis and the bottom end;
    /// the axis and the outer radius insulated, the ends fixed (the top at 1 V).
    Axisymmetric,
}

/// `n` lines from `a` to `b` whose cells grow geometrically from `a`, the last cell `ratio`
/// times wider than the first.
pub fn geometric(a: f64, b: f64, n: usize, ratio: f64) -> Vec<f64> {
    let cells = n - 1;
    let q = if cells > 1 {
        ratio.powf(1.0 / (cells - 1) as f64)
    } else {
        1.0
    };
    let widths: Vec<f64> = (0..cells).map(|k| q.powi(k as i32)).collect();
    let total: f64 = widths.iter().sum();
    let mut out = vec![a];
    let mut x = a;
    for w in &widths[..cells - 1] {
        x += (b - a) * w / total;
        out.push(x);
    }
    out.push(b);
    out
}

/// The operator and right-hand side (a seeded source density 1 +- 0.5 plus the 1 V side) of
/// `case` on `n` x `n` nodes with largest cell aspect ratio about `ratio`.
pub fn graded_problem(case: Case, n: usize, ratio: f64) -> (Stencil5, Vec<f64>) {
    let (xs, ys, axisymmetric) = match case {
        Case::Corner => (
            geometric(0.0, 1.0, n, ratio),
            geometric(0.0, 1.0, n, ratio),
            false,
        ),
        Case::Axisymmetric => (
            geometric(0.0, 1.0, n, ratio),
            geometric(0.0, 2.0, n, ratio),
            true,
        ),
    };
    // Potential of fixed node (i, j), None for a free node.
    let fixed = |i: usize, j: usize| -> Option<f64> {
        let top = j + 1 == n;
        let side = match case {
            Case::Corner => i == 0 || i + 1 == n || j == 0,
            Case::Axisymmetric => j == 0,
        };
        if top {
            Some(1.0)
        } else if side {
            Some(0.0)
        } else {
            None
        }
    };
    let half = |v: &[f64], k: usize| -> (f64, f64) {
        let lo = if k == 0 {
            v[0]
        } else {
            0.5 * (v[k - 1] + v[k])
        };
        let hi = if k + 1 == v.len() {
            v[k]
        } else {
            0.5 * (v[k] + v[k + 1])
        };
        (lo, hi)
    };
    let at_r = |r: f64| if axisymmetric { r } else { 1.0 };
    let across = |r0: f64, r1: f64| {
        if axisymmetric {
            0.5 * (r1 * r1 - r0 * r0)
        } else {
            r1 - r0
        }
    };
    let east_c = |i: usize, j: usize| {
        let (y0, y1) = half(&ys, j);
        (y1 - y0) * at_r(0.5 * (xs[i] + xs[i + 1])) / (xs[i + 1] - xs[i])
    };
    let north_c = |i: usize, j: usize| {
        let (x0, x1) = half(&xs, i);
        across(x0, x1) / (ys[j + 1] - ys[j])
    };
    let len = n * n;
    let mut a = Stencil5 {
        nx: n,
        ny: n,
        diag: vec![1.0; len],
        east: vec![0.0; len],
        north: vec![0.0; len],
        unknown: vec![false; len],
        cross: Vec::new(),
    };
    let mut b = vec![0.0; len];
    // Seeded 64-bit linear congruential generator.
    let mut seed: u64 = 17;
    for j in 0..n {
        for i in 0..n {
            seed = seed
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            let p = i + j * n;
            if fixed(i, j).is_some() {
                continue;
            }
            a.unknown[p] = true;
            let mut d = 0.0;
            let mut nbs = Vec::with_capacity(4);
            if i + 1 < n {
                nbs.push((east_c(i, j), (i + 1, j), 0));
            }
            if i > 0 {
                nbs.push((east_c(i - 1, j), (i - 1, j), 1));
            }
            if j + 1 < n {
                nbs.push((north_c(i, j), (i, j + 1), 2));
            }
            if j > 0 {
                nbs.push((north_c(i, j - 1), (i, j - 1), 3));
            }
            for (c, (qi, qj), dir) in nbs {
                d += c;
                match fixed(qi, qj) {
                    Some(v) => b[p] += c * v,
                    None if dir == 0 => a.east[p] = c,
                    None if dir == 2 => a.north[p] = c,
                    None => {}
                }
            }
            a.diag[p] = d;
            let ((x0, x1), (y0, y1)) = (half(&xs, i), half(&ys, j));
            let noise = ((seed >> 11) as f64 / (1u64 << 53) as f64) * 2.0 - 1.0;
            b[p] += across(x0, x1) * (y1 - y0) * (1.0 + 0.5 * noise);
        }
    }
    (a, b)
}

/// The sensor pad demo (`geometries/sensor_pad.toml`) on member `k` of its graded family
/// (member 2 is the design's own lattice), through the design reader, grading, rasteriser
/// and operator assembly; with `steep` graded at the copper/dielectric junctions with
/// exponent 1/4 and size 1/2 of the local feature (`grading::Params::junction_grading`,
/// `junction_fraction`) and no floor there (the default has the same exponent and size with
/// a floor of 1e-3). One right-hand side per conductor at 1 V.
pub fn sensor_pad_problem(k: usize, steep: bool) -> crate::Problem {
    use fieldgrid_solver::{accuracy, operator, raster};
    let path =
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../geometries/sensor_pad.toml");
    let text = std::fs::read_to_string(&path).expect("the sensor pad demo reads");
    let src = fieldgrid_cli::design_file::read_design(&text, "sensor_pad.toml", &[])
        .expect("the sensor pad demo is valid");
    let mut d = src.design;
    d.lattice = fieldgrid_solver::design::Lattice::Graded;
    let mut p = accuracy::Params::default();
    if steep {
        // Without the junctions' floor (the default's 1e-3 of the local feature): cells to
        // 1e-5 of it, the case the multigrid's line relaxation was tuned on.
        p.grading.junction_grading = 0.25;
        p.grading.junction_fraction = 0.5;
        p.grading.junction_floor = 0.0;
    }
    let grid = accuracy::lattice(&d, &p, k).expect("the graded lattice fits");
    let raster = raster::rasterize(&d, &grid);
    let op = operator::assemble(&d, &raster).expect("the sensor pad operator");
    let nc = d.conductors.len();
    let rhs = crate::unit_excitations(&op, nc);
    crate::Problem {
        stencil: op.stencil,
        rhs,
        names: d.conductors.iter().map(|c| c.name.clone()).collect(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn graded_lines_reach_the_asked_aspect_ratio_and_the_operator_is_balanced() {
        let xs = geometric(0.0, 1.0, 101, 1e3);
        let (first, last) = (xs[1] - xs[0], xs[100] - xs[99]);
        assert!((last / first / 1e3 - 1.0).abs() < 1e-9);
        let (a, b) = graded_problem(Case::Axisymmetric, 41, 100.0);
        // A free node's diagonal is the sum of its couplings, fixed or free (no source).
        let p = 20 + 20 * 41;
        let s = a.east[p] + a.east[p - 1] + a.north[p] + a.north[p - 41];
        assert!((a.diag[p] - s).abs() <= 1e-12 * s);
        assert!(b[p] > 0.0);
    }
}
