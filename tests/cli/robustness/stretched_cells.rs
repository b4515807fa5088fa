//! Stretched cells of a graded lattice, through the whole pipeline (design, graded node
//! lines, raster, operator): the multigrid hierarchy chooses line relaxation and needs about as
//! many CG iterations as on the uniform lattice of the same design, where point relaxation
//! needs several times more.

use fieldgrid_cli::design_file::read_design;
use fieldgrid_solver::grading;
use fieldgrid_solver::grid::Grid;
use fieldgrid_solver::solvers::multigrid::{Hierarchy, Options, Relaxation, Smoother};
use fieldgrid_solver::solvers::Params;
use fieldgrid_solver::{operator, raster};

/// A thin trace (35 um copper) on a 1.6 mm substrate over a ground plane of the same
/// thickness, in a grounded 20 x 10 mm box: the grading puts several lines across each metal
/// layer, which stretches the cells of those rows across the whole width.
const TRACE: &str = r#"
unit = "m"

[grid]
x = [0.0, 0.02]
y = [0.0, 0.01]
cell = 0.0002

[background]
permittivity = 1.0

[[dielectric]]
name = "substrate"
permittivity = 3.6
rect = { x = [0.0, 0.02], y = [0.000035, 0.001635] }

[[conductor]]
name = "plane"
potential = 0.0
rect = { x = [0.0, 0.02], y = [0.0, 0.000035] }

[[conductor]]
name = "trace"
potential = 1.0
rect = { x = [0.0092, 0.0108], y = [0.001635, 0.00167] }
"#;

/// (relaxation chosen, CG iterations of the trace at 1 V) on `grid`.
fn solve(
    design: &fieldgrid_solver::design::Design,
    grid: &Grid,
    smoother: Smoother,
) -> (Relaxation, usize) {
    let raster = raster::rasterize(design, grid);
    let op = operator::assemble(design, &raster).expect("operator");
    let k = design
        .conductors
        .iter()
        .position(|c| c.name == "trace")
        .expect("trace");
    let mut unit = vec![0.0; design.conductors.len()];
    unit[k] = 1.0;
    let b = op.rhs(&op.target_values(&unit, false), false);
    let mut options = Options::default();
    options.smoother = smoother;
    let h = Hierarchy::with_options(&op.stencil, &options);
    let mut x = vec![0.0; b.len()];
    let info = h
        .solve(&op.stencil, &b, &mut x, &Params::default())
        .expect("converges");
    (h.relaxation(), info.iterations)
}

#[test]
fn graded_lattice_gets_line_relaxation_and_uniform_iteration_counts() {
    let src = read_design(TRACE, "trace.toml", &[]).expect("design");
    let d = &src.design;
    let uniform = Grid::fit(d.domain.x, d.domain.y, d.domain.cell).expect("grid");
    let lines = grading::lines(d, d.domain.cell, &grading::Params::default()).expect("lines");
    let graded = Grid::from_lines(lines.x, lines.y).expect("graded grid");
    let stretch = graded.max_cell() / graded.min_cell();
    assert!(stretch > 20.0, "largest over smallest cell {stretch}");

    let (on_uniform, uniform_its) = solve(d, &uniform, Smoother::Auto);
    assert_eq!(on_uniform, Relaxation::Points);
    let (chosen, graded_its) = solve(d, &graded, Smoother::Auto);
    assert_eq!(chosen, Relaxation::Lines);
    assert!(
        graded_its <= uniform_its + 2,
        "graded {graded_its} iterations, uniform {uniform_its}"
    );
    let (_, points_its) = solve(d, &graded, Smoother::Points);
    assert!(
        points_its > 2 * graded_its,
        "points {points_its} iterations, lines {graded_its}"
    );
}

#[test]
fn touch_pad_maxwell_matrix_is_symmetric_at_the_default_tolerance() {
    // The touch-pad demo on its default graded lattice (cells down to 4 nm at the pads' ends,
    // 0.15 mm in the open) at the default solver settings. Reciprocity makes the exact
    // Maxwell matrix symmetric (common practice), so its asymmetry is the linear solver's
    // error. With the relative residual alone the pad-neighbour coupling was 0.15 % and the
    // neighbour-ground entry 26 % asymmetric (2.3e-4 of the largest entry); the charge test
    // leaves 7e-8. Held: 1e-6 of the largest entry on every entry above 1e-4 of it (the
    // 4.5e-14 F/m neighbour-ground entry is 2e-4 of the largest), an order below the demo's
    // estimated discretisation errors of the larger entries (3e-5 to 8e-5 of the largest).
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("..");
    let text = std::fs::read_to_string(root.join("geometries/touch_pad_rev_a.toml")).unwrap();
    let d = read_design(&text, "touch_pad_rev_a.toml", &[])
        .expect("design")
        .design;
    let params = fieldgrid_solver::study::StudyParams::default().with_error_estimate(false);
    let sol = fieldgrid_solver::study::run(&d, &params).expect("study runs");
    assert!(sol.solve.converged);
    assert!(
        sol.grid.min_cell() < 1e-8,
        "the graded lattice's smallest cell grew to {:e} m: not the case this guards",
        sol.grid.min_cell()
    );
    let m = &sol.capacitance.matrix;
    let largest = m.iter().flatten().fold(0.0f64, |a, v| a.max(v.abs()));
    for (i, row) in m.iter().enumerate() {
        for (j, &c) in row.iter().enumerate() {
            if c.abs() > 1e-4 * largest {
                let asym = (c - m[j][i]).abs();
                assert!(
                    asym <= 1e-6 * largest,
                    "C[{i},{j}] = {c:e} against C[{j},{i}] = {:e}: asymmetry {:.1e} of the largest entry",
                    m[j][i],
                    asym / largest
                );
            }
        }
    }
}
