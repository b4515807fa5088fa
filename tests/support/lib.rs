//! Shared helpers for the integration tests: reading designs from text, solving them with
//! every solver, and comparing numbers; running the command and handling its files in [`cli`];
//! designs used by several test modules in [`designs`].

pub mod cli;
pub mod designs;
pub mod fuzzing;

use fieldgrid_solver::design::Design;
use fieldgrid_solver::solvers::{Method, Params};
use fieldgrid_solver::study::{self, Solution, StudyParams};

/// Reads a design from TOML text (panics with the reader's message on error).
pub fn design(text: &str) -> Design {
    match fieldgrid_cli::design_file::read_design(text, "test.toml", &[]) {
        Ok(src) => src.design,
        Err(e) => panic!("test design does not read: {e}"),
    }
}

/// Study settings for tests: given method, tolerance 1e-10, no error estimate.
pub fn params(method: Method) -> StudyParams {
    StudyParams::default()
        .with_method(method)
        .with_solver(Params::default().with_tol(1e-10))
        .with_error_estimate(false)
}

/// Solves with the default solver and tight tolerance.
pub fn solve(d: &Design) -> Solution {
    solve_with(d, Method::default())
}

/// Solves on member `k` of the design's graded family with the default solver and tight
/// tolerance, with or without the error estimate. Member
/// [`fieldgrid_solver::grading::BISECTIONS`] is the design's own (default) lattice; each
/// member is the one below bisected, so a convergence study on the default lattice steps `k`
/// (halving every cell, those on curved surfaces included) where one on a uniform lattice
/// halves `cell`. Corners and thin-conductor ends are graded further as `k` grows.
pub fn solve_member(d: &Design, k: usize, error_estimate: bool) -> Solution {
    let grid = fieldgrid_solver::accuracy::lattice(d, &Default::default(), k)
        .expect("graded lattice fits");
    let p = params(Method::default()).with_error_estimate(error_estimate);
    let plan = fieldgrid_solver::plan::on_grid(grid, p.method, error_estimate);
    let s = study::run_planned(d, &plan, &p).expect("study runs");
    assert!(s.solve.converged, "did not converge: {:?}", s.solve);
    s
}

/// The design text with its lattice set to uniform by name (for tests whose subject is the
/// uniform lattice itself; the default lattice is graded).
pub fn uniform(text: &str) -> String {
    assert!(text.contains("[grid]\n"), "no [grid] table");
    text.replacen("[grid]\n", "[grid]\nlattice = \"uniform\"\n", 1)
}

/// Solves with the given method and tight tolerance.
pub fn solve_with(d: &Design, method: Method) -> Solution {
    let s = study::run(d, &params(method)).expect("study runs");
    assert!(
        s.solve.converged,
        "{method:?} did not converge: {:?}",
        s.solve
    );
    s
}

/// Runs the design through every solver and checks that capacitance matrices, conductor
/// charges and node potentials agree to `rel` (relative to the largest entry). Returns the
/// solutions in `Method::ALL` order.
pub fn solve_every_method(d: &Design, rel: f64) -> Vec<Solution> {
    let sols: Vec<Solution> = Method::ALL.iter().map(|&m| solve_with(d, m)).collect();
    let base = &sols[0];
    let scale = base
        .capacitance
        .matrix
        .iter()
        .flatten()
        .fold(0.0f64, |m, v| m.max(v.abs()));
    let vscale = base
        .potential
        .iter()
        .fold(0.0f64, |m, v| m.max(v.abs()))
        .max(1e-300);
    for (m, s) in Method::ALL.iter().zip(&sols).skip(1) {
        for (ra, rb) in base.capacitance.matrix.iter().zip(&s.capacitance.matrix) {
            for (a, b) in ra.iter().zip(rb) {
                assert!(
                    (a - b).abs() <= rel * scale,
                    "{m:?}: capacitance {b} vs {a}"
                );
            }
        }
        let dv = base
            .potential
            .iter()
            .zip(&s.potential)
            .fold(0.0f64, |m, (a, b)| m.max((a - b).abs()));
        assert!(
            dv <= rel * vscale * 10.0,
            "{m:?}: potentials differ by {dv}"
        );
    }
    sols
}

/// Relative error of `got` against `want`.
pub fn rel_err(got: f64, want: f64) -> f64 {
    ((got - want) / want).abs()
}

/// Area enclosed by a simple polygon (shoelace formula), whatever its orientation.
pub fn polygon_area(poly: &[[f64; 2]]) -> f64 {
    let n = poly.len();
    0.5 * (0..n)
        .map(|k| {
            let (p, q) = (poly[k], poly[(k + 1) % n]);
            p[0] * q[1] - q[0] * p[1]
        })
        .sum::<f64>()
        .abs()
}
