//! `fieldgrid check DESIGN`: validate, report the grid and its memory, no solve.

use super::{check_memory, load_design};
use crate::args::CheckArgs;
use crate::design_file::DesignSource;
use crate::error::Failure;
use crate::outdir::OutDir;
use crate::EXIT_OK;
use fieldgrid_solver::plan::Plan;
use fieldgrid_solver::study::StudyParams;

/// The checks of `check` on a design read: its plan (grid fitted once), the memory a solve
/// needs, MiB, and what check.json holds; a design needing more than `max_memory` MiB (by
/// default half of the available memory) is refused, as a solve would refuse it.
pub fn check(
    src: &DesignSource,
    max_memory: Option<f64>,
) -> Result<(Plan, f64, serde_json::Value), Failure> {
    let (plan, mib) = check_memory(
        src,
        fieldgrid_solver::study::plan(&src.design, &StudyParams::default()),
        max_memory,
        0.0,
    )?;
    let grid = plan.grid();
    let d = &src.design;
    let report = serde_json::json!({
        "version": 1,
        "valid": true,
        "grid": {
            "nx": grid.nx,
            "ny": grid.ny,
            "cell": grid.max_cell(),
            "hx": grid.max_dx(),
            "hy": grid.max_dy(),
            "min_cell": grid.min_cell(),
            "max_cell": grid.max_cell(),
            "uniform": grid.is_uniform(),
            "x_lines": grid.xs(),
            "y_lines": grid.ys(),
        },
        "unknowns_at_most": grid.len(),
        "memory_mib": mib,
        "conductors": d.conductors.iter().map(|c| c.name.clone()).collect::<Vec<_>>(),
        "dielectrics": d.dielectrics.iter().map(|c| c.name.clone()).collect::<Vec<_>>(),
    });
    Ok((plan, mib, report))
}

/// Writes preview.png (with the node lines of `grid_lines` drawn, when given) and
/// check.json into `out` (not yet committed).
pub fn write_files(
    out: &OutDir,
    src: &DesignSource,
    report: &serde_json::Value,
    grid_lines: Option<&fieldgrid_solver::grid::Grid>,
    pictures: &crate::render::RenderOptions,
) -> Result<(), Failure> {
    out.write_png(
        "preview.png",
        &crate::pictures::preview(src, grid_lines, pictures),
    )?;
    out.write(
        "check.json",
        &serde_json::to_vec_pretty(report).map_err(|e| Failure::io("encoding check.json", e))?,
    )?;
    Ok(())
}

/// Runs the command, returning the exit code.
pub fn run(args: &CheckArgs) -> Result<u8, Failure> {
    let src = load_design(&args.design, &super::parameter_overrides(&args.set)?)?;
    let (plan, mib, report) = check(&src, args.max_memory)?;
    let d = &src.design;
    let grid = plan.grid();
    if let Some(dir) = &args.out {
        let mut out = OutDir::prepare(dir)?;
        write_files(
            &out,
            &src,
            &report,
            args.grid_lines.then_some(grid),
            // The whole design (its own zoom window outlined), unless --zoom asks otherwise.
            &crate::render::RenderOptions {
                zoom: args.pictures.zoom,
                ..args.pictures.render_options(&src)
            },
        )?;
        out.commit()?;
    }
    if !args.quiet {
        // Lengths in the file's unit, to six significant digits.
        let u = src.unit;
        let len = |v: f64| {
            let six: f64 = format!("{:.5e}", v / u.scale()).parse().unwrap_or(f64::NAN);
            format!("{six} {}", u.name())
        };
        let cells = if grid.is_uniform() {
            format!("cell {} x {}", len(grid.max_dx()), len(grid.max_dy()))
        } else {
            format!(
                "graded: cells {} to {}",
                len(grid.min_cell()),
                len(grid.max_cell())
            )
        };
        println!(
            "{}: valid; domain x {} to {}, y {} to {}; grid {} x {} nodes ({cells}), about \
             {:.0} MiB to solve",
            args.design.display(),
            len(d.domain.x[0]),
            len(d.domain.x[1]),
            len(d.domain.y[0]),
            len(d.domain.y[1]),
            grid.nx,
            grid.ny,
            mib
        );
    }
    Ok(EXIT_OK)
}
