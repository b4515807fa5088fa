//! `fieldgrid solve DESIGN --out DIR`: solve and write every result.

use super::{load_design, study_params, with_threads};
use crate::args::{SolveArgs, SolveOptions};
use crate::design_file::DesignSource;
use crate::error::Failure;
use crate::outdir::{csv_bytes, num, png_bytes, OutDir};
use crate::summary::Summary;
use crate::timings::Timings;
use crate::{EXIT_CHANGED, EXIT_NOT_CONVERGED, EXIT_OK};
use fieldgrid_solver::circuit::NoCircuit;
use fieldgrid_solver::plan::Plan;
use fieldgrid_solver::study::{self, Solution, StudyError, StudyParams};
use std::sync::Arc;
use std::time::Instant;

/// More results computed around the nominal solve (sensitivities, tolerances): given the
/// design as read and its solution (which keeps its solves, to start nearby solves from),
/// it adds to the summary and writes its own files into the results directory before the
/// summary is written, and returns the lines to print after the report.
pub type Extra<'a> =
    &'a dyn Fn(&DesignSource, &Solution, &mut Summary, &OutDir) -> Result<String, Failure>;

/// Runs the command, returning the exit code; with `--timings`, prints the stage times.
pub fn run(args: &SolveArgs) -> Result<u8, Failure> {
    run_with(args, None)
}

/// Runs the command with `extra` results, returning the exit code; with `--timings`,
/// prints the stage times.
pub fn run_with(args: &SolveArgs, extra: Option<Extra>) -> Result<u8, Failure> {
    let timings = Timings::new();
    let code = run_timed_with(args, &timings, extra)?;
    if args.timings {
        eprint!("{}", timings.table());
    }
    Ok(code)
}

/// Runs the command, recording the time of each stage in `timings`.
pub fn run_timed(args: &SolveArgs, timings: &Arc<Timings>) -> Result<u8, Failure> {
    run_timed_with(args, timings, None)
}

/// [`run_timed`] with `more` results.
pub fn run_timed_with(
    args: &SolveArgs,
    timings: &Arc<Timings>,
    more: Option<Extra>,
) -> Result<u8, Failure> {
    let mut src = timings.time("read", || {
        load_design(&args.design, &super::parameter_overrides(&args.set)?)
    })?;
    let accuracy = crate::accuracy::target(&mut src, &args.opts)?;
    let extra = if args.field_table {
        super::FIELD_TABLE_BYTES_PER_NODE
    } else {
        0.0
    };
    let (mut params, plan) = prepare(&src, &args.opts, extra)?;
    let progress = crate::progress::Progress::new(args.opts.quiet);
    params.stages = progress.stages(Some(timings.monitor()));
    params.solver.monitor = progress.iterations();
    params.keep_warm_start = more.is_some();
    if args.circuit {
        if let Err(why) = fieldgrid_solver::circuit::exportable(src.design.mode, src.design.depth) {
            return Err(Failure::input(format!(
                "{}: --circuit: {}",
                args.design.display(),
                crate::spice::no_export(why)
            )));
        }
    }
    if let Some(min) = args.min_margin {
        check_min_margin(&src.design, min, &args.design)?;
    }
    let mut out = OutDir::prepare(&args.out)?;
    let solved = match accuracy {
        Some(rel) => {
            solve_accurate(&src, &params, &args.opts, rel).map(|(s, m, i)| (s, m, Some(i)))
        }
        None => solve_planned(&src, &plan, &params, args.opts.threads).map(|(s, m)| (s, m, None)),
    };
    progress.finish();
    let (sol, mut summary, accuracy) = solved?;
    let extra_text = match more {
        Some(f) => Some(f(&src, &sol, &mut summary, &out)?),
        None => None,
    };
    let files = Files {
        field_table: args.field_table,
        vtk: args.vtk,
        log_field: args.log_field,
        pictures: args.pictures.render_options(&src),
        threads: args.opts.threads,
        subcircuit: subcircuit_name(&args.design),
        source: args.design.display().to_string(),
    };
    let circuit = write_files(&out, &src, &sol, &summary, &files, timings)?;
    timings.time("commit", || out.commit())?;
    if !args.opts.quiet {
        print!("{}", report(&sol, &summary, &out));
        if let Some(info) = &accuracy {
            print!("{}", crate::accuracy::report(info));
        }
        if let Some(text) = &extra_text {
            print!("{text}");
        }
        match &circuit {
            // Diagnoses of the netlist's values (whole-part farads) only from converged numbers.
            Ok(net) if sol.solve.converged => net.warnings.iter().for_each(|w| {
                println!(
                    "warning [{}]: capacitance.cir: {}",
                    w.code(),
                    crate::wording::warning(w)
                )
            }),
            Ok(_) => {}
            Err(why) => println!("note: {}", crate::spice::no_export(*why)),
        }
    }
    if !summary.solver.converged || accuracy.as_ref().is_some_and(|i| !i.met()) {
        return Ok(EXIT_NOT_CONVERGED);
    }
    if let Some(min) = args.min_margin {
        if let Some(w) = &sol.worst_margin {
            let (margin, strength) = (w.margin.unwrap_or(f64::INFINITY), w.strength.unwrap_or(0.0));
            if margin < min {
                eprintln!(
                    "fieldgrid: the margin at ({:.4e} m, {:.4e} m) in {} is {:.3} \
                     ({:.3e} V/m{} against a strength of {:.3e} V/m), below --min-margin {min}{}",
                    w.x,
                    w.y,
                    w.material,
                    margin,
                    w.magnitude,
                    w.error_estimate
                        .map(|e| format!(" + {e:.2e} V/m estimated error"))
                        .unwrap_or_default(),
                    strength,
                    if w.singular {
                        "; it sits at a sharp corner, where the value grows with refinement: \
                         evaluate with the corner rounded (`round = r`)"
                    } else {
                        ""
                    }
                );
                return Ok(EXIT_CHANGED);
            }
        }
    }
    Ok(EXIT_OK)
}

/// The subcircuit name: the design file's stem.
pub fn subcircuit_name(design: &std::path::Path) -> String {
    design
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "fieldgrid".into())
}

/// A study's settings from the solve options, checked, and its plan with the memory it
/// needs (`extra` bytes per node held beside the study) checked against `--max-memory`.
pub fn prepare(
    src: &DesignSource,
    opts: &SolveOptions,
    extra: f64,
) -> Result<(StudyParams, Plan), Failure> {
    let params = study_params(opts)?;
    let (plan, _) = super::check_memory(
        src,
        study::plan(&src.design, &params),
        opts.max_memory,
        extra,
    )?;
    Ok((params, plan))
}

/// Solves a prepared study on `threads` worker threads: the solution and its summary (with
/// the design's parameters and the wall time of the study).
pub fn solve_planned(
    src: &DesignSource,
    plan: &Plan,
    params: &StudyParams,
    threads: Option<usize>,
) -> Result<(Solution, Summary), Failure> {
    let start = Instant::now();
    let sol = with_threads(threads, || study::run_planned(&src.design, plan, params))?
        .map_err(|e| study_failure(src, e))?;
    let seconds = start.elapsed().as_secs_f64();
    let mut summary = Summary::from_solution(&sol, src.design.depth, seconds, &src.text_hash);
    summary.parameters = crate::summary::parameters(src);
    summary.part = Some(crate::summary::PartSummary::of(&src.design));
    Ok((sol, summary))
}

/// Solves a design refined to the relative accuracy `rel` (the loop's lattices checked
/// against the options' memory limit): the solution of the last round, its summary with the
/// `accuracy` object (and the warning when the target was not met), and the loop's record.
pub fn solve_accurate(
    src: &DesignSource,
    params: &StudyParams,
    opts: &crate::args::SolveOptions,
    rel: f64,
) -> Result<(Solution, Summary, fieldgrid_solver::accuracy::Info), Failure> {
    let start = Instant::now();
    let acc = crate::accuracy::params(src, opts, rel);
    let (mut sol, info) = with_threads(opts.threads, || {
        fieldgrid_solver::accuracy::solve(&src.design, params, &acc)
    })?
    .map_err(|e| accuracy_failure(src, e))?;
    sol.warnings.extend(info.warnings());
    let seconds = start.elapsed().as_secs_f64();
    let mut summary = Summary::from_solution(&sol, src.design.depth, seconds, &src.text_hash);
    summary.parameters = crate::summary::parameters(src);
    summary.part = Some(crate::summary::PartSummary::of(&src.design));
    summary.accuracy = Some(crate::accuracy::summary(&info));
    Ok((sol, summary, info))
}

/// Maps a failure of the accuracy loop to the user's message.
pub fn accuracy_failure(
    src: &DesignSource,
    e: fieldgrid_solver::accuracy::AccuracyError,
) -> Failure {
    use fieldgrid_solver::accuracy::AccuracyError;
    match e {
        AccuracyError::Study(e) => study_failure(src, e),
        e => Failure::input(format!("{}: {}", src.file, crate::wording::accuracy(&e))),
    }
}

/// What `solve` writes besides summary.json, the tables and the pictures.
#[derive(Clone, Debug)]
pub struct Files {
    /// Also `field.csv`, one row per node.
    pub field_table: bool,
    /// Also the VTK file (`field.vti`, or `field.vtr` on a graded grid).
    pub vtk: bool,
    /// field.png on a logarithmic scale.
    pub log_field: bool,
    /// Picture options.
    pub pictures: crate::render::RenderOptions,
    /// Worker threads for drawing (default: every core).
    pub threads: Option<usize>,
    /// Subcircuit name in capacitance.cir.
    pub subcircuit: String,
    /// The design as named in capacitance.cir's comments.
    pub source: String,
}

/// Writes every file of a solve into `out` (not yet committed), timing each stage; returns
/// the circuit export (written as capacitance.cir when there is one) or why there is none.
pub fn write_files(
    out: &OutDir,
    src: &DesignSource,
    sol: &Solution,
    summary: &Summary,
    files: &Files,
    timings: &Timings,
) -> Result<Result<crate::spice::Netlist, NoCircuit>, Failure> {
    // The summary and the tables encoded while the pictures are drawn, each picture encoded
    // as soon as it is drawn, on the threads the solve had; the files are then written in
    // the same sequence as ever (the interruption points count them).
    let (results, (potential_png, field_png, margin_png)) = timings.time("pictures", || {
        with_threads(files.threads, || {
            rayon::join(
                || result_files(sol, summary, &src.design),
                || {
                    crate::pictures::solution_maps_with(
                        src,
                        sol,
                        files.log_field,
                        &files.pictures,
                        |name, img| png_bytes(name, &img),
                    )
                },
            )
        })
    })?;
    timings.time("results", || {
        write_result_files(out, sol, results?, files.field_table)
    })?;
    if files.vtk {
        timings.time("vtk", || {
            let name = crate::vtk::file_name(&sol.grid);
            let bytes = crate::vtk::bytes(sol, &src.design)
                .map_err(|e| Failure::io(format!("encoding {name}"), e))?;
            out.write(name, &bytes)
        })?;
    }
    timings.time("png", || {
        out.write("potential.png", &potential_png?)?;
        out.write("field.png", &field_png?)?;
        match margin_png {
            Some(bytes) => out.write("margin.png", &bytes?).map(|_| ()),
            None => Ok(()),
        }
    })?;
    let circuit = crate::spice::for_solution(sol, &src.design, &files.subcircuit, &files.source);
    if let Ok(net) = &circuit {
        out.write("capacitance.cir", net.text.as_bytes())?;
    }
    Ok(circuit)
}

/// Refuses `--min-margin` values that are not positive numbers, and designs that give no
/// breakdown strength at all (the check would pass without looking at anything).
fn check_min_margin(
    design: &fieldgrid_solver::design::Design,
    min: f64,
    file: &std::path::Path,
) -> Result<(), Failure> {
    if !(min.is_finite() && min > 0.0) {
        return Err(Failure::input(format!(
            "--min-margin must be a positive number, got {min}"
        )));
    }
    if design.background.strength.is_none()
        && design.dielectrics.iter().all(|d| d.strength.is_none())
    {
        return Err(Failure::input(format!(
            "{}: --min-margin needs a breakdown strength: give `strength` (V/m) in \
             [background] or in a [[dielectric]]",
            file.display()
        )));
    }
    Ok(())
}

/// What the report and hotspots.csv say about a singular hot spot.
pub const SINGULAR_NOTE: &str = "sharp corner or thin edge: the value grows as the cell \
     shrinks; round the corner (round = r) and solve again to evaluate it";

/// What the report says about a hot spot on a rounding too narrow for the cell.
pub const UNDER_RESOLVED_NOTE: &str = "the rounding spans fewer than four cells: the value \
     reads low and its estimated error is widened to cover that; halve the cell to evaluate it";

/// How margins are taken, printed with them.
pub const MARGIN_RULE: &str = "margin = strength / (field + its estimated discretisation \
     error); the first row is the lowest margin anywhere in a material with a strength";

/// The caution printed with margins.
pub const MARGIN_CAUTION: &str = "caution: margins are estimates from a discretised field. \
     Clearances and creepage distances follow the applicable standards and licensed \
     engineering practice.";

/// Maps a library failure to the user's message.
pub fn study_failure(src: &crate::design_file::DesignSource, e: StudyError) -> Failure {
    use fieldgrid_solver::design::Item;
    let err = match &e {
        StudyError::Operator(_) => src.error_at(Item::Sides, "", crate::wording::study(&e)),
        StudyError::Grid(_) => src.error_at(Item::Grid, "cell", crate::wording::study(&e)),
        StudyError::Design(d) => src.design_error(d),
        _ => src.error_at(Item::Top, "", crate::wording::study(&e)),
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
    write_result_files(out, sol, result_files(sol, summary, design)?, field_table)
}

/// The bytes of summary.json, capacitance.csv, hotspots.csv and surface_charge.csv.
pub struct ResultFiles {
    json: Vec<u8>,
    capacitance: Vec<u8>,
    hotspots: Vec<u8>,
    surface: Vec<u8>,
}

/// Writes the result files (and field.csv with `field_table`), in that order.
fn write_result_files(
    out: &OutDir,
    sol: &Solution,
    files: ResultFiles,
    field_table: bool,
) -> Result<(), Failure> {
    out.write("summary.json", &files.json)?;
    out.write("capacitance.csv", &files.capacitance)?;
    out.write("hotspots.csv", &files.hotspots)?;
    out.write("surface_charge.csv", &files.surface)?;
    if field_table {
        out.write("field.csv", &field_table_bytes(sol))?;
    }
    Ok(())
}

/// Encodes the result files.
fn result_files(
    sol: &Solution,
    summary: &Summary,
    design: &fieldgrid_solver::design::Design,
) -> Result<ResultFiles, Failure> {
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
            "note",
            "error estimate (V/m)",
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
                if h.singular {
                    SINGULAR_NOTE.to_string()
                } else if h.under_resolved {
                    UNDER_RESOLVED_NOTE.to_string()
                } else {
                    String::new()
                },
                h.error_estimate.map(num).unwrap_or_default(),
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
            "area (m^2/m planar, m^2 axisymmetric)",
            "error estimate (C/m^2)",
        ],
        sol.surface_charge.iter().map(|s| {
            vec![
                design.conductors[s.conductor].name.clone(),
                num(s.x),
                num(s.y),
                num(s.density),
                num(s.field),
                num(s.area),
                s.error_estimate.map(num).unwrap_or_default(),
            ]
        }),
    );
    Ok(ResultFiles {
        json,
        capacitance,
        hotspots,
        surface,
    })
}

/// The full-grid table: one row per node.
pub fn field_table_bytes(sol: &Solution) -> Vec<u8> {
    let g = &sol.grid;
    let field = sol.field();
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
    let warnings = crate::warning::report_lines(&sol.warnings);
    // A failure to converge is said first: every number below it is unreliable.
    let (first, rest) = match sol.solve.converged {
        true => (&[][..], &warnings[..]),
        false => warnings.split_at(warnings.len().min(1)),
    };
    for w in first {
        let _ = writeln!(s, "{w}: the numbers below are not reliable");
    }
    let _ = writeln!(
        s,
        "solved {} x {} nodes with {} in {:.2} s ({} solve{}, at most {} iterations, residual {:.1e})",
        sol.grid.nx, sol.grid.ny, summary.solver.method, summary.solver.seconds, summary.solver.solves,
        if summary.solver.solves == 1 { "" } else { "s" },
        summary.solver.iterations, summary.solver.relative_residual
    );
    let _ = writeln!(s, "capacitance matrix ({unit}):");
    for (i, name) in sol.capacitance.names.iter().enumerate() {
        let row: Vec<String> = sol.capacitance.matrix[i]
            .iter()
            .map(|v| format!("{v:12.4e}"))
            .collect();
        let _ = writeln!(s, "  {name:>12} {}", row.join(" "));
    }
    let (qu, fu) = if summary.per_length {
        ("C/m", "N/m")
    } else {
        ("C", "N")
    };
    let _ = writeln!(s, "conductors (potential, charge, force):");
    for c in &summary.conductors {
        let force = if summary.per_length {
            format!("({:.4e}, {:.4e}) {fu}", c.force[0], c.force[1])
        } else {
            format!("{:.4e} {fu} along the axis", c.force[1])
        };
        let _ = writeln!(
            s,
            "  {:>12} {:>11} V{} {:12.4e} {qu}   {force}",
            c.name,
            trimmed(c.potential),
            if c.floating { " (floating)" } else { "" },
            c.charge
        );
    }
    if sol.peak_field.as_ref().is_some_and(|p| p.magnitude == 0.0) {
        let _ = writeln!(
            s,
            "no field: every conductor and side is at 0 V and the design holds no charge"
        );
    } else if let Some(p) = &sol.peak_field {
        let _ = writeln!(
            s,
            "peak field {:.3e}{} V/m at ({:.4e} m, {:.4e} m) in {}{}",
            p.magnitude,
            p.error_estimate
                .map(|e| format!(" +/- {e:.1e}"))
                .unwrap_or_default(),
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
    s += &hotspot_report(&sol.hotspots, 5);
    if !summary.probes.is_empty() {
        let _ = writeln!(s, "probes:");
    }
    for p in &summary.probes {
        let field = match p.field {
            [Some(ex), Some(ey)] => format!("field ({ex:.4e}, {ey:.4e}) V/m"),
            _ => "inside a conductor".to_string(),
        };
        let _ = writeln!(
            s,
            "  {:>12} at ({:.4e} m, {:.4e} m): {:.5e} V, {field}",
            p.name, p.x, p.y, p.potential
        );
    }
    for w in rest {
        let _ = writeln!(s, "{w}");
    }
    let _ = writeln!(s, "results in {}", out.path().display());
    s
}

/// `v` to six significant digits, trailing zeros dropped: "12", "4.33462", "34112.8".
/// Magnitudes outside [1e-4, 1e9) in exponent form ("1e300", not 301 digits).
fn trimmed(v: f64) -> String {
    let six: f64 = format!("{v:.5e}").parse().unwrap_or(v);
    if six != 0.0 && !(1e-4..1e9).contains(&six.abs()) {
        return format!("{six:e}");
    }
    if six == 0.0 {
        "0".to_string()
    } else {
        format!("{six}")
    }
}

/// The ranked hot spots (at most `shown` of them), the singular note and the caution.
pub fn hotspot_report(hotspots: &[fieldgrid_solver::post::Hotspot], shown: usize) -> String {
    use std::fmt::Write;
    let mut s = String::new();
    if hotspots.is_empty() {
        return s;
    }
    let by_margin = hotspots.iter().any(|h| h.margin.is_some());
    let _ = writeln!(
        s,
        "hot spots ({}):",
        if by_margin {
            "lowest margin first"
        } else {
            "largest field first"
        }
    );
    for (k, h) in hotspots.iter().take(shown).enumerate() {
        let margin = match (h.strength, h.margin) {
            (Some(st), Some(m)) => format!(", strength {st:.3e} V/m, margin {m:.2}"),
            _ => String::new(),
        };
        let err = h
            .error_estimate
            .map(|e| format!(" +/- {e:.1e}"))
            .unwrap_or_default();
        let _ = writeln!(
            s,
            "  {:2}. {:.3e}{err} V/m at ({:.4e} m, {:.4e} m) in {}{margin}{}",
            k + 1,
            h.magnitude,
            h.x,
            h.y,
            h.material,
            if h.singular {
                "  [singular]"
            } else if h.under_resolved {
                "  [under-resolved]"
            } else {
                ""
            }
        );
    }
    if hotspots.len() > shown {
        let _ = writeln!(s, "  ({} more in hotspots.csv)", hotspots.len() - shown);
    }
    if hotspots.iter().take(shown).any(|h| h.singular) {
        let _ = writeln!(s, "  [singular]: {SINGULAR_NOTE}");
    }
    if hotspots.iter().take(shown).any(|h| h.under_resolved) {
        let _ = writeln!(s, "  [under-resolved]: {UNDER_RESOLVED_NOTE}");
    }
    if by_margin {
        if hotspots.iter().any(|h| h.error_estimate.is_some()) {
            let _ = writeln!(s, "  {MARGIN_RULE}");
        }
        let _ = writeln!(s, "{MARGIN_CAUTION}");
    }
    s
}

#[cfg(test)]
mod tests {
    use super::trimmed;

    #[test]
    fn potentials_are_printed_to_six_significant_digits() {
        assert_eq!(trimmed(34112.766006), "34112.8");
        assert_eq!(trimmed(12.0), "12");
        assert_eq!(trimmed(0.43660218), "0.436602");
        assert_eq!(trimmed(-0.0), "0");
        assert_eq!(trimmed(1e300), "1e300");
    }
}
