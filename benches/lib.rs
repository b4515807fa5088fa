//! Benchmark problems for the solvers, and a plain binary format to hand the same matrices to
//! outside solvers (see `benches/README.md`).
//!
//! The benchmark problem is the design file `problem.toml`, taken through the real
//! pipeline (design reader -> grid -> rasteriser -> operator) by [`benchmark_problem`]. [`staircase_problem`]
//! builds a comparable operator by hand (nodes inside a conductor rectangle or on the grounded
//! sides fixed, each cell with the permittivity of its centre, the coupling across a dual face
//! the face-length-weighted mean of the two cells it crosses, times EPS0), which needs no
//! rasteriser and serves as a cross-check.

pub mod graded;

use fieldgrid_solver::grid::Grid;
use fieldgrid_solver::stencil::Stencil5;
use fieldgrid_solver::{operator, raster, EPS0};
use std::io::Write;

/// An operator with the right-hand sides of its unit-potential solves.
pub struct Problem {
    /// The operator.
    pub stencil: Stencil5,
    /// One right-hand side per conductor: that conductor at 1 V, everything else at 0 V.
    pub rhs: Vec<Vec<f64>>,
    /// Conductor names, in `rhs` order.
    pub names: Vec<String>,
}

/// A conductor rectangle `[x0, x1] x [y0, y1]` in units of the domain side.
struct Rect {
    name: &'static str,
    x: [f64; 2],
    y: [f64; 2],
}

/// The design file of the benchmark problem.
pub const PROBLEM_TOML: &str = include_str!("problem.toml");

/// The benchmark problem (`problem.toml`) with cell 1/n, through the design
/// reader, rasteriser and operator assembly; one right-hand side per conductor at 1 V.
pub fn benchmark_problem(n: usize) -> Problem {
    let src = fieldgrid_cli::design_file::read_design(
        PROBLEM_TOML,
        "problem.toml",
        &[("n".to_string(), n as f64)],
    )
    .expect("benchmark design is valid");
    let d = &src.design;
    let grid = Grid::fit(d.domain.x, d.domain.y, d.domain.cell).expect("benchmark grid");
    let raster = raster::rasterize(d, &grid);
    let op = operator::assemble(d, &raster).expect("benchmark operator");
    let nc = d.conductors.len();
    let rhs = unit_excitations(&op, nc);
    let names = d.conductors.iter().map(|c| c.name.clone()).collect();
    Problem {
        stencil: op.stencil,
        rhs,
        names,
    }
}

/// The benchmark problem on the unit square with cell 1/n: grounded sides,
/// relative permittivity 4.4 below y = 0.5 and 1 above, conductors `a`, `b` and `pad`, built
/// by the staircase builder.
pub fn staircase_problem(n: usize) -> Problem {
    let conductors = [
        Rect {
            name: "a",
            x: [0.30, 0.45],
            y: [0.55, 0.60],
        },
        Rect {
            name: "b",
            x: [0.55, 0.70],
            y: [0.55, 0.60],
        },
        Rect {
            name: "pad",
            x: [0.20, 0.80],
            y: [0.25, 0.28],
        },
    ];
    staircase(n, &conductors, |_, y| if y < 0.5 { 4.4 } else { 1.0 })
}

fn staircase(n: usize, conductors: &[Rect], eps: impl Fn(f64, f64) -> f64) -> Problem {
    assert!(n >= 2);
    let nx = n + 1;
    let h = 1.0 / n as f64;
    let len = nx * nx;
    // Owner of each node: None free, Some(None) grounded side, Some(Some(k)) conductor k.
    let tol = 1e-9;
    let owner: Vec<Option<Option<usize>>> = (0..len)
        .map(|p| {
            let (i, j) = (p % nx, p / nx);
            if i == 0 || j == 0 || i == n || j == n {
                return Some(None);
            }
            let (x, y) = (i as f64 * h, j as f64 * h);
            conductors
                .iter()
                .position(|r| {
                    x >= r.x[0] - tol && x <= r.x[1] + tol && y >= r.y[0] - tol && y <= r.y[1] + tol
                })
                .map(Some)
        })
        .collect();
    let cell_eps: Vec<f64> = (0..n * n)
        .map(|c| eps(((c % n) as f64 + 0.5) * h, ((c / n) as f64 + 0.5) * h))
        .collect();
    let ce = |ci: usize, cj: usize| cell_eps[ci + cj * n];
    // Face couplings (F/m per unit depth; hx = hy so the aspect factor is 1).
    let east_c = |i: usize, j: usize| {
        EPS0 * 0.5 * (ce(i, j.saturating_sub(1).min(n - 1)) + ce(i, j.min(n - 1)))
    };
    let north_c = |i: usize, j: usize| {
        EPS0 * 0.5 * (ce(i.saturating_sub(1).min(n - 1), j) + ce(i.min(n - 1), j))
    };
    let mut s = Stencil5 {
        nx,
        ny: nx,
        diag: vec![1.0; len],
        east: vec![0.0; len],
        north: vec![0.0; len],
        unknown: vec![false; len],
        cross: Vec::new(),
    };
    let mut rhs = vec![vec![0.0; len]; conductors.len()];
    for j in 0..nx {
        for i in 0..nx {
            let p = i + j * nx;
            if owner[p].is_some() {
                continue;
            }
            s.unknown[p] = true;
            let nbs = [
                (p + 1, east_c(i, j)),
                (p - 1, east_c(i - 1, j)),
                (p + nx, north_c(i, j)),
                (p - nx, north_c(i, j - 1)),
            ];
            s.diag[p] = nbs.iter().map(|&(_, c)| c).sum();
            for (k, &(q, c)) in nbs.iter().enumerate() {
                match owner[q] {
                    None => {
                        if k == 0 {
                            s.east[p] = c;
                        } else if k == 2 {
                            s.north[p] = c;
                        }
                    }
                    Some(Some(m)) => rhs[m][p] += c,
                    Some(None) => {}
                }
            }
        }
    }
    Problem {
        stencil: s,
        rhs,
        names: conductors.iter().map(|r| r.name.to_string()).collect(),
    }
}

/// The right-hand sides of the `nc` unit-potential excitations (conductor k at 1 V, the others
/// and the fixed sides at 0 V), in conductor order.
pub fn unit_excitations(op: &operator::Operator, nc: usize) -> Vec<Vec<f64>> {
    (0..nc)
        .map(|k| {
            let mut unit = vec![0.0; nc];
            unit[k] = 1.0;
            op.rhs(&op.target_values(&unit, false), false)
        })
        .collect()
}

/// Writes the operator over its unknowns (CSR) and the right-hand sides restricted to the
/// unknowns in a plain little-endian binary file:
/// `b"FGCSR001"`, n, nnz, nrhs (u64), indptr (u64 x n+1), indices (u32 x nnz),
/// data (f64 x nnz), rhs (f64 x n, nrhs times).
pub fn write_csr(path: &std::path::Path, p: &Problem) -> std::io::Result<()> {
    let (a, nodes) = p.stencil.to_csr();
    let mut f = std::io::BufWriter::new(std::fs::File::create(path)?);
    f.write_all(b"FGCSR001")?;
    for v in [a.rows() as u64, a.nnz() as u64, p.rhs.len() as u64] {
        f.write_all(&v.to_le_bytes())?;
    }
    for &v in a.indptr().raw_storage() {
        f.write_all(&(v as u64).to_le_bytes())?;
    }
    for &v in a.indices() {
        f.write_all(&(v as u32).to_le_bytes())?;
    }
    for &v in a.data() {
        f.write_all(&v.to_le_bytes())?;
    }
    for b in &p.rhs {
        for &q in &nodes {
            f.write_all(&b[q].to_le_bytes())?;
        }
    }
    f.flush()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pipeline_problem_has_three_conductors_and_the_lattice_of_cell_one_over_n() {
        let p = benchmark_problem(40);
        assert_eq!(p.names, ["a", "b", "pad"]);
        assert_eq!((p.stencil.nx, p.stencil.ny), (41, 41));
        // Conductor a covers x 0.30..0.45, y 0.55..0.60: node (15, 23) is inside it.
        assert!(!p.stencil.unknown[15 + 23 * 41] && p.stencil.unknown[15 + 30 * 41]);
        for b in &p.rhs {
            assert!(b.iter().any(|&v| v != 0.0));
        }
    }

    #[test]
    fn staircase_problem_has_three_conductors_and_a_symmetric_operator() {
        let p = staircase_problem(40);
        assert_eq!(p.names, ["a", "b", "pad"]);
        let s = &p.stencil;
        // Conductor a covers x 0.30..0.45 (nodes 12..18), y 0.55..0.60 (22..24).
        assert!(!s.unknown[12 + 22 * 41] && !s.unknown[18 + 24 * 41] && s.unknown[19 + 24 * 41]);
        for b in &p.rhs {
            assert!(b.iter().any(|&v| v > 0.0));
        }
        let (a, _) = s.to_csr();
        let at = a.transpose_view().to_csr();
        for (v, (r, c)) in a.iter() {
            assert_eq!(at.get(r, c).copied(), Some(*v));
        }
    }
}
