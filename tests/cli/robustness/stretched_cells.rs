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
