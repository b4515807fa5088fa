//! `fieldgrid solve DESIGN --out DIR`: solve and write every result.

use super::{check_memory, load_design, study_params, with_threads};
use crate::args::SolveArgs;
use crate::error::Failure;
use crate::outdir::{csv_bytes, num, OutDir};
use crate::summary::Summary;
use crate::{EXIT_CHANGED, EXIT_NOT_CONVERGED, EXIT_OK};
use fieldgrid_solver::study::{self, Solution, StudyError};
use std::time::Instant;

/// Runs the command, returning the exit code.
pub fn run(args: &SolveArgs) -> Result<u8, Failure> {
    let src = load_design(&args.design, &[])?;
    let (_grid, _mib) = check_memory(&src, &args.design, args.opts.max_memory)?;
    let params = study_params(&args.opts)?;
    let out = OutDir::prepare(&args.out)?;
    let start = Instant::now();
    let sol = with_threads(args.opts.threads, || study::run(&src.design, &params))?
        .map_err(|e| study_failure(&src, e))?;
    let seconds = start.elapsed().as_secs_f64();
    if !args.opts.quiet && std::io::IsTerminal::is_terminal(&std::io::stderr()) {
        eprint!("\r{:60}\r", "");
    }
    let summary = Summary::from_solution(&sol, src.design.depth, seconds, &src.text_hash);
    write_results(&out, &sol, &summary, &src.design, args.field_table)?;
    let (potential_png, field_png) = crate::pictures::field_maps(&src, &sol, args.log_field);
    out.write_png("potential.png", &potential_png)?;
    out.write_png("field.png", &field_png)?;
    if !args.opts.quiet {
        print!("{}", report(&sol, &summary, &out));
    }
    if !sol.solve.converged {
        return Ok(EXIT_NOT_CONVERGED);
    }
    if let Some(min) = args.min_margin {
        if let Some(h) = sol
            .hotspots
            .iter()
            .find(|h| h.margin.is_some_and(|m| m < min))
        {
            eprintln!(
                "fieldgrid: hot spot at ({:.4e} m, {:.4e} m) has margin {:.3}, below --min-margin {min}",
                h.x,
                h.y,
                h.margin.unwrap_or(f64::NAN)
            );
            return Ok(EXIT_CHANGED);
        }
    }
    Ok(EXIT_OK)
}

/// Maps a library failure to the user's message.
pub fn study_failure(src: &crate::design_file::DesignSource, e: StudyError) -> Failure {
    use fieldgrid_solver::design::Item;
    use fieldgrid_solver::operator::OperatorError;
    let err = match &e {
        StudyError::Operator(OperatorError::UnsupportedSide { side, .. }) => {
            src.error_at(Item::Sides, side, e.to_string())
        }
        StudyError::Operator(_) => src.error_at(Item::Sides, "", e.to_string()),
        StudyError::Grid(_) => src.error_at(Item::Grid, "cell", e.to_string()),
        StudyError::Design(d) => src.error_at(d.item, d.key, d.message.clone()),
        _ => src.error_at(Item::Top, "", e.to_string()),
    };
    Failure::from(err)
}

/// Writes every result file.
pub fn write_results(
    out: &OutDir,
    sol: &Solution,
    summary: &Summary,
    design: &fieldgrid_solver::design::Design,
    field_table: bool,
) -> Result<(), Failure> {
    let json =
        serde_json::to_vec_pretty(summary).map_err(|e| Failure::io("encoding summary.json", e))?;
    // Capacitance matrix: one row per conductor, one column per conductor, plus errors.
    let cap = &sol.capacitance;
    let unit = &summary.capacitance.unit;
    let mut header: Vec<String> = vec!["conductor".into()];
    header.extend(cap.names.iter().map(|n| format!("{n} ({unit})")));
    if cap.error_estimate.is_some() {
        header.extend(cap.names.iter().map(|n| format!("{n} error ({unit})")));
    }
    let rows = cap.names.iter().enumerate().map(|(i, name)| {
        let mut r = vec![name.clone()];
        r.extend(cap.matrix[i].iter().map(|&v| num(v)));
        if let Some(e) = &cap.error_estimate {
            r.extend(e[i].iter().map(|&v| num(v)));
        }
        r
    });
    let header_ref: Vec<&str> = header.iter().map(|s| s.as_str()).collect();
    let capacitance = csv_bytes(&header_ref, rows);
    let hotspots = csv_bytes(
        &[
            "rank",
            "x (m)",
            "y (m)",
            "field (V/m)",
            "material",
            "strength (V/m)",
            "margin",
            "singular",
        ],
        sol.hotspots.iter().enumerate().map(|(k, h)| {
            vec![
                (k + 1).to_string(),
                num(h.x),
                num(h.y),
                num(h.magnitude),
                h.material.clone(),
                h.strength.map(num).unwrap_or_default(),
                h.margin.map(num).unwrap_or_default(),
                h.singular.to_string(),
            ]
        }),
    );
    let surface = csv_bytes(
        &[
            "conductor",
            "x (m)",
            "y (m)",
            "surface charge (C/m^2)",
            "field (V/m)",
        ],
        sol.surface_charge.iter().map(|s| {
            vec![
                design.conductors[s.conductor].name.clone(),
                num(s.x),
                num(s.y),
                num(s.density),
                num(s.field),
            ]
        }),
    );
    out.write("summary.json", &json)?;
    out.write("capacitance.csv", &capacitance)?;
    out.write("hotspots.csv", &hotspots)?;
    out.write("surface_charge.csv", &surface)?;
    if field_table {
        out.write("field.csv", &field_table_bytes(sol))?;
    }
    Ok(())
}

/// The full-grid table: one row per node.
pub fn field_table_bytes(sol: &Solution) -> Vec<u8> {
    let g = &sol.grid;
    let potentials: Vec<f64> = sol.conductors.iter().map(|c| c.potential).collect();
    let field = fieldgrid_solver::post::FieldEval::new(
        &sol.operator,
        &sol.raster,
        &sol.potential,
        &potentials,
    );
    csv_bytes(
        &[
            "x (m)",
            "y (m)",
            "potential (V)",
            "Ex (V/m)",
            "Ey (V/m)",
            "|E| (V/m)",
        ],
        (0..g.len()).map(|p| {
            let e = field.at(p);
            vec![
                num(g.x(p % g.nx)),
                num(g.y(p / g.nx)),
                num(sol.potential[p]),
                num(e[0]),
                num(e[1]),
                num(e[0].hypot(e[1])),
            ]
        }),
    )
}

/// The short report printed after a solve.
fn report(sol: &Solution, summary: &Summary, out: &OutDir) -> String {
    use std::fmt::Write;
    let mut s = String::new();
    let unit = &summary.capacitance.unit;
    let _ = writeln!(
        s,
        "solved {} x {} nodes with {} in {:.2} s ({} solves, at most {} iterations, residual {:.1e})",
        sol.grid.nx, sol.grid.ny, summary.solver.method, summary.solver.seconds, summary.solver.solves, summary.solver.iterations, summary.solver.relative_residual
    );
    let _ = writeln!(s, "capacitance matrix ({unit}):");
    for (i, name) in sol.capacitance.names.iter().enumerate() {
        let row: Vec<String> = sol.capacitance.matrix[i]
            .iter()
            .map(|v| format!("{v:12.4e}"))
            .collect();
        let _ = writeln!(s, "  {name:>12} {}", row.join(" "));
    }
    if let Some(p) = &sol.peak_field {
        let _ = writeln!(
            s,
            "peak field {:.3e} V/m at ({:.4e} m, {:.4e} m) in {}{}",
            p.magnitude,
            p.x,
            p.y,
            p.material,
            if p.singular {
                " (at a sharp corner: grows with refinement)"
            } else {
                ""
            }
        );
    }
    for w in &sol.warnings {
        let _ = writeln!(s, "warning: {w}");
    }
    let _ = writeln!(s, "results in {}", out.path().display());
    s
}
