//! Unit tests of the multigrid hierarchy and of multigrid-preconditioned CG.

use super::transfer::{prolong_coarse, prolong_fine, restrict_coarse, restrict_fine};
use super::*;
use crate::parallel;
use crate::seeded::noise;
use crate::solvers::testing::jump_problem;

fn rel_residual(a: &Stencil5, b: &[f64], x: &[f64]) -> f64 {
    let mut r = vec![0.0; a.len()];
    a.residual(b, x, &mut r) / parallel::norm2(b)
}

/// What a hard test operator contains.
#[derive(Clone, Copy)]
struct Hard {
    nx: usize,
    ny: usize,
    /// Permittivity of the lower-left inclusion relative to the rest.
    contrast: f64,
    /// Smallest cut fraction next to the thin conductor (its couplings are weighted 1/theta).
    theta: f64,
    /// hx / hy.
    aspect: f64,
}

impl Hard {
    fn new(nx: usize, ny: usize) -> Hard {
        Hard {
            nx,
            ny,
            contrast: 1000.0,
            theta: 0.01,
            aspect: 1.07,
        }
    }
}

/// A cut-cell-like operator: an inclusion of high permittivity whose edges lie off the coarse
/// lines, a thin conductor one node thick (at 1 V) ending inside the domain with boosted
/// couplings next to it, a grounded block conductor, a symmetry (Neumann) left side, an open
/// (Robin) right side, grounded bottom and top. Returns the operator and the right-hand side
/// of the thin conductor at 1 V plus a small distributed source.
fn hard_problem(h: Hard) -> (Stencil5, Vec<f64>) {
    let (nx, ny) = (h.nx, h.ny);
    let len = nx * ny;
    let fx = |f: f64| ((f * (nx - 1) as f64).round() as usize) | 1;
    let fy = |f: f64| ((f * (ny - 1) as f64).round() as usize) | 1;
    // Cells (nx-1) x (ny-1); the inclusion covers x < 0.41, y < 0.37 (snapped to odd lines).
    let (ix, iy) = (fx(0.41), fy(0.37));
    let eps = |ci: usize, cj: usize| if ci < ix && cj < iy { h.contrast } else { 1.0 };
    // 0 free, 1 thin conductor (1 V), 2 grounded.
    let line_j = fy(0.63);
    let (l0, l1) = (fx(0.22), fx(0.71));
    let (b0, b1, c0, c1) = (fx(0.55), fx(0.80), fy(0.13), fy(0.30));
    let owner = |i: usize, j: usize| -> u8 {
        if j == 0 || j == ny - 1 {
            2
        } else if j == line_j && (l0..=l1).contains(&i) {
            1
        } else if (b0..=b1).contains(&i) && (c0..=c1).contains(&j) {
            2
        } else {
            0
        }
    };
    let cell = |ci: isize, cj: isize| -> Option<f64> {
        (ci >= 0 && cj >= 0 && (ci as usize) < nx - 1 && (cj as usize) < ny - 1)
            .then(|| eps(ci as usize, cj as usize))
    };
    // Coupling between (i, j) and its east / north neighbour: half-cell sums times aspect.
    let east_c = |i: usize, j: usize| -> f64 {
        let (i, j) = (i as isize, j as isize);
        0.5 * (cell(i, j - 1).unwrap_or(0.0) + cell(i, j).unwrap_or(0.0)) / h.aspect
    };
    let north_c = |i: usize, j: usize| -> f64 {
        let (i, j) = (i as isize, j as isize);
        0.5 * (cell(i - 1, j).unwrap_or(0.0) + cell(i, j).unwrap_or(0.0)) * h.aspect
    };
    // Cut fraction of the edge from a free node to a conductor node: varies along the line.
    let theta = |i: usize| h.theta + (1.0 - h.theta) * ((i * 7 % 5) as f64 / 4.0);
    let mut s = Stencil5 {
        nx,
        ny,
        diag: vec![1.0; len],
        east: vec![0.0; len],
        north: vec![0.0; len],
        unknown: vec![false; len],
        cross: Vec::new(),
    };
    let mut b = vec![0.0; len];
    let src = noise(len, 7);
    for j in 0..ny {
        for i in 0..nx {
            let p = i + j * nx;
            if owner(i, j) != 0 {
                continue;
            }
            s.unknown[p] = true;
            let mut nbs = Vec::new();
            if i + 1 < nx {
                nbs.push((i + 1, j, east_c(i, j), 0));
            }
            if i > 0 {
                nbs.push((i - 1, j, east_c(i - 1, j), 1));
            }
            if j + 1 < ny {
                nbs.push((i, j + 1, north_c(i, j), 2));
            }
            if j > 0 {
                nbs.push((i, j - 1, north_c(i, j - 1), 3));
            }
            let mut d = 0.0;
            for (qi, qj, c, dir) in nbs {
                match owner(qi, qj) {
                    0 => {
                        d += c;
                        if dir == 0 {
                            s.east[p] = c;
                        } else if dir == 2 {
                            s.north[p] = c;
                        }
                    }
                    o => {
                        let w = c / theta(i + j);
                        d += w;
                        if o == 1 {
                            b[p] += w;
                        }
                    }
                }
            }
            if i == nx - 1 {
                // Open side: a Robin term.
                d += 0.3 * north_c(i, j.min(ny - 2));
            }
            s.diag[p] = d;
            b[p] += 1e-3 * src[p].abs();
        }
    }
    (s, b)
}

fn solve_mg(a: &Stencil5, b: &[f64], options: &Options, tol: f64) -> (Vec<f64>, Info) {
    let h = Hierarchy::with_options(a, options);
    let mut x = vec![0.0; a.len()];
    let info = h
        .solve(
            a,
            b,
            &mut x,
            &Params {
                tol,
                ..Params::default()
            },
        )
        .unwrap();
    assert!(rel_residual(a, b, &x) <= tol, "{info:?}");
    (x, info)
}

/// Options that coarsen down to a few nodes, so small test lattices use several levels.
fn deep() -> Options {
    Options {
        coarsest_nodes: 16,
        ..Options::default()
    }
}

#[test]
fn v_cycle_alone_reduces_poisson_error_by_a_large_factor() {
    let a = Stencil5::dirichlet_box(129, 129, |_, _| 1.0);
    let h = Hierarchy::with_options(&a, &deep());
    assert!(h.lattices().len() >= 5);
    let mut ws = Workspace::new(&h);
    // Stationary iteration x <- x + M^-1 (0 - A x): the iterate is the error.
    let mut x: Vec<f64> = noise(a.len(), 3)
        .iter()
        .zip(&a.unknown)
        .map(|(v, &u)| if u { *v } else { 0.0 })
        .collect();
    let energy = |x: &[f64]| {
        let mut ax = vec![0.0; x.len()];
        a.apply(x, &mut ax);
        parallel::dot(x, &ax).sqrt()
    };
    let e0 = energy(&x);
    let (mut r, mut z) = (vec![0.0; a.len()], vec![0.0; a.len()]);
    let cycles = 6;
    for _ in 0..cycles {
        a.apply(&x, &mut r);
        r.iter_mut().for_each(|v| *v = -*v);
        cycle::vcycle(&h, &a, &mut ws, &r, &mut z, &mut vec![0.0; a.ny]);
        x.iter_mut().zip(&z).for_each(|(x, z)| *x += z);
    }
    let factor = (energy(&x) / e0).powf(1.0 / cycles as f64);
    assert!(factor < 0.2, "energy-norm reduction per V-cycle {factor}");
}

/// The V-cycle with every fine-level step as a separate whole-lattice pass.
fn separate_pass_vcycle(h: &Hierarchy, a: &Stencil5, ws: &mut Workspace, r: &[f64], z: &mut [f64]) {
    use super::smoother::{four_colour_sweep, red_black_sweep};
    let nu = h.options.fine_sweeps;
    for sweep in 0..nu {
        red_black_sweep(a, r, z, 0, sweep == 0);
    }
    let mut sbuf = vec![0.0; ws.sbuf.len()];
    restrict_fine(
        a,
        &h.weights[0],
        r,
        z,
        &mut sbuf,
        &h.levels[0],
        &mut ws.b[0],
    );
    let last = h.levels.len() - 1;
    for k in 0..last {
        let l = &h.levels[k];
        for sweep in 0..h.options.coarse_sweeps {
            four_colour_sweep(l, &ws.b[k], &mut ws.x[k], false, sweep == 0);
        }
        let (lo, hi) = ws.b.split_at_mut(k + 1);
        restrict_coarse(
            l,
            &h.weights[k + 1],
            &lo[k],
            &ws.x[k],
            &mut ws.r[k],
            &h.levels[k + 1],
            &mut hi[0],
        );
    }
    let s = h.levels[last].s;
    h.coarsest
        .solve(&ws.b[last], &mut ws.x[last], |i, j| (i + 1) + (j + 1) * s);
    for k in (0..last).rev() {
        let (lo, hi) = ws.x.split_at_mut(k + 1);
        prolong_coarse(
            &h.levels[k],
            &h.weights[k + 1],
            &mut lo[k],
            &h.levels[k + 1],
            &hi[0],
        );
        for _ in 0..h.options.coarse_sweeps {
            four_colour_sweep(&h.levels[k], &ws.b[k], &mut lo[k], true, false);
        }
    }
    prolong_fine(a, &h.weights[0], z, &h.levels[0], &ws.x[0]);
    for _ in 0..nu {
        red_black_sweep(a, r, z, 1, false);
    }
}

#[test]
fn row_interleaved_cycle_equals_separate_passes_for_any_thread_count() {
    let (a, _) = hard_problem(Hard::new(203, 171));
    let r: Vec<f64> = noise(a.len(), 9)
        .iter()
        .zip(&a.unknown)
        .map(|(v, &u)| if u { *v } else { 0.0 })
        .collect();
    for sweeps in [1, 2] {
        let h = Hierarchy::with_options(
            &a,
            &Options {
                fine_sweeps: sweeps,
                coarse_sweeps: sweeps,
                ..deep()
            },
        );
        let mut ws = Workspace::new(&h);
        let mut want = vec![0.0; a.len()];
        rayon::ThreadPoolBuilder::new()
            .num_threads(1)
            .build()
            .unwrap()
            .install(|| separate_pass_vcycle(&h, &a, &mut ws, &r, &mut want));
        for threads in [1, 2, 3] {
            let mut z = vec![1.0; a.len()];
            rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap()
                .install(|| cycle::vcycle(&h, &a, &mut ws, &r, &mut z, &mut vec![0.0; a.ny]));
            assert!(
                z.iter().zip(&want).all(|(u, v)| u.to_bits() == v.to_bits()),
                "{sweeps} sweeps, {threads} threads"
            );
        }
    }
}

#[test]
fn preconditioner_is_symmetric_and_keeps_fixed_nodes_at_zero() {
    let (a, _) = hard_problem(Hard::new(61, 46));
    let h = Hierarchy::with_options(&a, &deep());
    let mut ws = Workspace::new(&h);
    let free = |v: Vec<f64>| -> Vec<f64> {
        v.iter()
            .zip(&a.unknown)
            .map(|(v, &u)| if u { *v } else { 0.0 })
            .collect()
    };
    let (r1, r2) = (free(noise(a.len(), 11)), free(noise(a.len(), 12)));
    let (mut z1, mut z2) = (vec![0.0; a.len()], vec![0.0; a.len()]);
    cycle::vcycle(&h, &a, &mut ws, &r1, &mut z1, &mut vec![0.0; a.ny]);
    cycle::vcycle(&h, &a, &mut ws, &r2, &mut z2, &mut vec![0.0; a.ny]);
    let (d12, d21) = (parallel::dot(&z1, &r2), parallel::dot(&z2, &r1));
    assert!(
        (d12 - d21).abs() <= 1e-10 * d12.abs().max(d21.abs()),
        "{d12} vs {d21}"
    );
    assert!(parallel::dot(&z1, &r1) > 0.0);
    for p in 0..a.len() {
        if !a.unknown[p] {
            assert_eq!(z1[p], 0.0, "fixed node {p} moved");
        }
    }
}

#[test]
fn restriction_is_the_transpose_of_prolongation_on_every_level() {
    let (a, _) = hard_problem(Hard::new(38, 29));
    let h = Hierarchy::with_options(&a, &deep());
    assert!(h.levels.len() >= 3);
    let c = &h.levels[0];
    // Fine level: with z = 0 and zero residual on black nodes, restriction sees r exactly.
    let r: Vec<f64> = noise(a.len(), 5)
        .iter()
        .enumerate()
        .map(|(p, v)| {
            if (p % a.nx + p / a.nx) % 2 == 0 && a.unknown[p] {
                *v
            } else {
                0.0
            }
        })
        .collect();
    let ec: Vec<f64> = noise(c.padded_len(), 6)
        .iter()
        .zip(&c.unknown)
        .map(|(v, &u)| if u { *v } else { 0.0 })
        .collect();
    let mut sbuf =
        vec![0.0; interpolation::interior_count(a.nx) * interpolation::interior_count(a.ny)];
    let mut bc = vec![0.0; c.padded_len()];
    restrict_fine(
        &a,
        &h.weights[0],
        &r,
        &vec![0.0; a.len()],
        &mut sbuf,
        c,
        &mut bc,
    );
    let mut pe = vec![0.0; a.len()];
    prolong_fine(&a, &h.weights[0], &mut pe, c, &ec);
    let (lhs, rhs) = (parallel::dot(&pe, &r), parallel::dot(&ec, &bc));
    assert!(
        (lhs - rhs).abs() <= 1e-12 * lhs.abs().max(1.0),
        "{lhs} vs {rhs}"
    );
    for k in 0..h.levels.len() - 1 {
        let (l, c) = (&h.levels[k], &h.levels[k + 1]);
        let masked = |v: Vec<f64>, lv: &Level| -> Vec<f64> {
            v.iter()
                .zip(&lv.unknown)
                .map(|(v, &u)| if u { *v } else { 0.0 })
                .collect()
        };
        let r = masked(noise(l.padded_len(), 20 + k as u64), l);
        let ec = masked(noise(c.padded_len(), 40 + k as u64), c);
        // Residual of a zero iterate: the right-hand side itself.
        let mut scratch = vec![0.0; l.padded_len()];
        let mut bc = vec![0.0; c.padded_len()];
        restrict_coarse(
            l,
            &h.weights[k + 1],
            &r,
            &vec![0.0; l.padded_len()],
            &mut scratch,
            c,
            &mut bc,
        );
        let mut pe = vec![0.0; l.padded_len()];
        prolong_coarse(l, &h.weights[k + 1], &mut pe, c, &ec);
        let (lhs, rhs) = (parallel::dot(&pe, &r), parallel::dot(&ec, &bc));
        assert!(
            (lhs - rhs).abs() <= 1e-12 * lhs.abs().max(1.0),
            "level {k}: {lhs} vs {rhs}"
        );
    }
}

#[test]
fn coarse_operator_is_the_galerkin_product() {
    let (a, _) = hard_problem(Hard::new(21, 18));
    let h = Hierarchy::with_options(&a, &deep());
    let c = &h.levels[0];
    // Basis functions of coarse nodes: P e_K.
    let basis = |ic: usize, jc: usize| -> Vec<f64> {
        let mut e = vec![0.0; c.padded_len()];
        e[c.idx(ic, jc)] = 1.0;
        let mut v = vec![0.0; a.len()];
        prolong_fine(&a, &h.weights[0], &mut v, c, &e);
        v
    };
    let mut checked = 0;
    for jc in 0..c.ny {
        for ic in 0..c.nx {
            let p = c.idx(ic, jc);
            if !c.unknown[p] {
                assert_eq!(c.coef[p], [1.0, 0.0, 0.0, 0.0, 0.0]);
                continue;
            }
            let phi = basis(ic, jc);
            let mut aphi = vec![0.0; a.len()];
            a.apply(&phi, &mut aphi);
            let k = c.coef[p].map(|v| v as f64);
            // Entries are computed in f64 and stored as `Real`: at most half an ulp apart.
            let tol = 1e-12 + f32::EPSILON as f64;
            let mut check = |di: isize, dj: isize, stored: f64| {
                let (qi, qj) = (ic as isize + di, jc as isize + dj);
                if qi < 0 || qj < 0 || qi as usize >= c.nx || qj as usize >= c.ny {
                    assert_eq!(stored, 0.0);
                    return;
                }
                let exact = parallel::dot(&basis(qi as usize, qj as usize), &aphi);
                let want = if di == 0 && dj == 0 { exact } else { -exact };
                assert!(
                    (stored - want).abs() <= tol * k[0].abs(),
                    "({ic},{jc}) + ({di},{dj}): {stored} vs {want}"
                );
                checked += 1;
            };
            check(0, 0, k[0]);
            check(1, 0, k[1]);
            check(0, 1, k[2]);
            check(1, 1, k[3]);
            check(-1, 1, k[4]);
        }
    }
    assert!(checked > 100);
}

#[test]
fn converges_on_jump_problem_with_contrast_1000() {
    let (a, b) = jump_problem(97, 1000.0);
    let (_, info) = solve_mg(&a, &b, &Options::default(), 1e-8);
    assert!(info.iterations <= 15, "{info:?}");
}

#[test]
fn converges_with_a_thin_conductor_and_contrast_1000() {
    let (a, b) = hard_problem(Hard::new(129, 101));
    let (_, info) = solve_mg(&a, &b, &deep(), 1e-8);
    assert!(info.iterations <= 20, "{info:?}");
}

#[test]
fn iteration_count_stays_bounded_as_the_grid_is_refined() {
    let counts: Vec<usize> = [33, 65, 129, 257]
        .iter()
        .map(|&n| {
            let (a, b) = hard_problem(Hard::new(n, n));
            solve_mg(&a, &b, &deep(), 1e-8).1.iterations
        })
        .collect();
    let (lo, hi) = (counts.iter().min().unwrap(), counts.iter().max().unwrap());
    assert!(hi - lo <= 2, "iterations {counts:?}");
}

#[test]
fn odd_even_and_thin_lattices_converge() {
    for (nx, ny) in [
        (64, 47),
        (50, 50),
        (31, 80),
        (120, 9),
        (7, 90),
        (3, 40),
        (40, 3),
    ] {
        let (a, b) = hard_problem(Hard {
            nx,
            ny,
            contrast: 50.0,
            theta: 0.05,
            aspect: 0.93,
        });
        let (_, info) = solve_mg(&a, &b, &deep(), 1e-8);
        assert!(info.iterations <= 25, "{nx}x{ny}: {info:?}");
    }
}

#[test]
fn fixed_nodes_stay_exactly_zero() {
    let (a, b) = hard_problem(Hard::new(70, 55));
    let (x, _) = solve_mg(&a, &b, &deep(), 1e-10);
    assert!(a.unknown.iter().any(|u| !u));
    for p in 0..a.len() {
        if !a.unknown[p] {
            assert_eq!(x[p], 0.0, "fixed node {p}");
        }
    }
}

#[test]
fn agrees_with_jacobi_cg() {
    let (a, b) = hard_problem(Hard {
        contrast: 100.0,
        ..Hard::new(65, 57)
    });
    let tol = 1e-11;
    let (x, _) = solve_mg(&a, &b, &deep(), tol);
    let mut xc = vec![0.0; a.len()];
    crate::solvers::cg::solve(
        &a,
        &b,
        &mut xc,
        &Params {
            tol,
            max_iter: Some(100_000),
            ..Params::default()
        },
    )
    .unwrap();
    let scale = xc.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let diff = x
        .iter()
        .zip(&xc)
        .fold(0.0f64, |m, (a, b)| m.max((a - b).abs()));
    assert!(
        diff <= 1e-7 * scale,
        "max difference {diff} (scale {scale})"
    );
}

#[test]
fn results_are_bit_identical_for_any_thread_count() {
    // Large enough that every fine pass and the first coarse level run in parallel.
    let (a, b) = hard_problem(Hard::new(181, 170));
    let run = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| {
                let h = Hierarchy::new(&a);
                let mut xs = vec![vec![0.0; a.len()]; 2];
                let bs = vec![b.clone(), second_rhs(&a, &b)];
                let infos: Vec<Info> = h
                    .solve_many(&a, &bs, &mut xs, &Params::default())
                    .into_iter()
                    .map(Result::unwrap)
                    .collect();
                (xs, infos)
            })
    };
    let (x1, i1) = run(1);
    for t in [2, 3] {
        let (xt, it) = run(t);
        assert_eq!(i1, it);
        for (u, v) in x1.iter().zip(&xt) {
            assert!(
                u.iter().zip(v).all(|(a, b)| a.to_bits() == b.to_bits()),
                "{t} threads differ"
            );
        }
    }
}

/// `b` doubled plus a constant at the unknowns: a second right-hand side of the same operator.
fn second_rhs(a: &Stencil5, b: &[f64]) -> Vec<f64> {
    b.iter()
        .map(|v| 2.0 * v + 1e-4)
        .zip(&a.unknown)
        .map(|(v, &u)| if u { v } else { 0.0 })
        .collect()
}

/// Solves `b2` in a scratch that solved `b1` before (its CG vectors then set to NaN) and in a
/// fresh one, and asserts the same bits and the same infos.
pub(super) fn assert_reused_scratch_gives_fresh_bits(
    h: &Hierarchy,
    a: &Stencil5,
    b1: &[f64],
    b2: &[f64],
) {
    let params = Params::default();
    let mut used = h.scratch();
    let mut x = vec![0.0; a.len()];
    h.solve_in(a, b1, &mut x, &params, &mut used).unwrap();
    let cg = &mut used.cg;
    for v in [&mut cg.r, &mut cg.zw, &mut cg.p, &mut cg.partial] {
        v.fill(f64::NAN);
    }
    let (mut again, mut fresh) = (vec![0.0; a.len()], vec![0.0; a.len()]);
    let i_again = h.solve_in(a, b2, &mut again, &params, &mut used).unwrap();
    let i_fresh = h.solve(a, b2, &mut fresh, &params).unwrap();
    assert_eq!(i_again, i_fresh);
    assert!(
        again
            .iter()
            .zip(&fresh)
            .all(|(u, v)| u.to_bits() == v.to_bits()),
        "a reused scratch moved the solution"
    );
}

#[test]
fn a_reused_scratch_gives_the_bits_of_a_fresh_one() {
    // Parallel passes and several levels; then a lattice solved directly (no coarse level).
    for (hard, options) in [
        (Hard::new(181, 170), Options::default()),
        (Hard::new(65, 50), deep()),
        (Hard::new(20, 17), Options::default()),
    ] {
        let (a, b) = hard_problem(hard);
        let h = Hierarchy::with_options(&a, &options);
        assert_reused_scratch_gives_fresh_bits(&h, &a, &b, &second_rhs(&a, &b));
    }
}

#[test]
fn a_lattice_at_most_the_coarsest_size_is_solved_directly() {
    let (a, b) = hard_problem(Hard::new(20, 17));
    let (_, info) = solve_mg(&a, &b, &Options::default(), 1e-10);
    assert!(info.iterations <= 2, "{info:?}");
}

#[test]
fn iteration_limit_is_reported_as_error_with_last_iterate() {
    let (a, b) = hard_problem(Hard::new(65, 65));
    let h = Hierarchy::with_options(&a, &deep());
    let mut x = vec![0.0; a.len()];
    let err = h
        .solve(
            &a,
            &b,
            &mut x,
            &Params {
                max_iter: Some(2),
                ..Params::default()
            },
        )
        .unwrap_err();
    assert_eq!(err.info().reason, crate::solvers::StopReason::MaxIterations);
    assert_eq!(err.info().iterations, 2);
    assert!(err.info().relative_residual < 1.0 && x.iter().any(|&v| v != 0.0));
}

#[test]
fn zero_right_hand_side_gives_zero_solution() {
    let (a, _) = hard_problem(Hard::new(40, 33));
    let h = Hierarchy::new(&a);
    let mut x = vec![1.0; a.len()];
    let info = h
        .solve(&a, &vec![0.0; a.len()], &mut x, &Params::default())
        .unwrap();
    assert_eq!(info.reason, crate::solvers::StopReason::ZeroRhs);
    assert!(x.iter().all(|&v| v == 0.0));
}

#[test]
fn starting_guess_is_used_and_monitor_sees_every_iteration() {
    let (a, b) = hard_problem(Hard::new(65, 50));
    let h = Hierarchy::with_options(&a, &deep());
    let mut x = vec![0.0; a.len()];
    let cold = h
        .solve(
            &a,
            &b,
            &mut x,
            &Params {
                tol: 1e-6,
                ..Params::default()
            },
        )
        .unwrap();
    let seen = std::sync::Arc::new(std::sync::Mutex::new(Vec::new()));
    let log = seen.clone();
    let params = Params {
        monitor: Some(std::sync::Arc::new(move |k, rel| {
            log.lock().unwrap().push((k, rel))
        })),
        ..Params::default()
    };
    let warm = h.solve(&a, &b, &mut x, &params).unwrap();
    assert!(warm.iterations < cold.iterations + 6 && warm.iterations >= 1);
    let seen = seen.lock().unwrap();
    assert_eq!(seen.len(), warm.iterations);
    assert!(seen.iter().enumerate().all(|(k, &(it, _))| it == k + 1));
}
