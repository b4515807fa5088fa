//! `fieldgrid check DESIGN`: validate, report the grid and its memory, no solve.

use super::{check_memory, load_design};
use crate::args::CheckArgs;
use crate::error::Failure;
use crate::outdir::OutDir;
use crate::EXIT_OK;
use fieldgrid_solver::study::StudyParams;

/// Runs the command, returning the exit code.
pub fn run(args: &CheckArgs) -> Result<u8, Failure> {
    let src = load_design(&args.design, &super::parameter_overrides(&args.set)?)?;
    let (plan, mib) = check_memory(
        &src,
        fieldgrid_solver::study::plan(&src.design, &StudyParams::default()),
        None,
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
        },
        "unknowns_at_most": grid.len(),
        "memory_mib": mib,
        "conductors": d.conductors.iter().map(|c| c.name.clone()).collect::<Vec<_>>(),
        "dielectrics": d.dielectrics.iter().map(|c| c.name.clone()).collect::<Vec<_>>(),
    });
    if let Some(dir) = &args.out {
        let mut out = OutDir::prepare(dir)?;
        out.write_png(
            "preview.png",
            &crate::pictures::preview(&src, &args.pictures.render_options()),
        )?;
        out.write(
            "check.json",
            &serde_json::to_vec_pretty(&report)
                .map_err(|e| Failure::io("encoding check.json", e))?,
        )?;
        out.commit()?;
    }
    if !args.quiet {
        println!(
            "{}: valid; grid {} x {} nodes (cell {:.4e} m x {:.4e} m), about {:.0} MiB to solve",
            args.design.display(),
            grid.nx,
            grid.ny,
            grid.max_dx(),
            grid.max_dy(),
            mib
        );
    }
    Ok(EXIT_OK)
}
