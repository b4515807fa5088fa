//! `fieldgrid compare BASE NEW`: the change between two revisions, quantity by quantity.
//!
//! BASE and NEW are each a design file (solved now, with the common solve options), a
//! `summary.json` written by `solve`, or a results directory holding one. Both become a
//! [`Summary`]; the compared quantities are every capacitance entry `C[a,b]`, every
//! conductor's charge `Q[a]` and force `F[a]` (planar: its magnitude; axisymmetric: along
//! the axis), the potential `V[a]` of every floating conductor, the energy and the peak field. A quantity present on one side only is reported and counts as a
//! change.
//!
//! Invariants: capacitance entries and charges are compared by magnitude (a coupling, negative
//! in the Maxwell matrix, that grows reads as growth: change |new| - |base|), other quantities
//! as signed values; a sign change counts as the whole difference. The relative change is the
//! change over |base| (zero when both are zero, infinite when only the base is zero). A
//! quantity is beyond tolerance when |relative change| > `--rel-tol` and |change| exceeds the
//! `--abs-tol` of its unit (when given); the net charge of a floating conductor, zero by
//! definition, is never beyond tolerance. With `--out`, and both sides design files over the same domain, the picture
//! `field_change.png` maps |E|(NEW) - |E|(BASE) on NEW's grid (BASE's field carried onto it
//! bilinearly when the grid lines differ). Exit 0: nothing beyond tolerance; 1: something is; 2: bad input; 3: a solve
//! (now, or recorded in a summary) did not converge.

use super::{check_memory, load_design, study_params, with_threads};
use crate::args::CompareArgs;
use crate::design_file::DesignSource;
use crate::error::Failure;
use crate::outdir::{csv_bytes, num, OutDir};
use crate::summary::{Summary, VERSION};
use crate::{EXIT_CHANGED, EXIT_NOT_CONVERGED, EXIT_OK};
use fieldgrid_solver::study::{self, Solution};
use serde::Serialize;
use std::path::{Path, PathBuf};
use std::time::Instant;

/// One side of the comparison.
pub struct Revision {
    /// The path as given.
    pub path: PathBuf,
    /// Its results.
    pub summary: Summary,
    /// The solution and its design, when the input was a design file (for the change
    /// picture).
    pub solution: Option<(Solution, DesignSource)>,
}

/// What kind of file an input is.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum InputKind {
    /// A design file (TOML).
    Design,
    /// A summary.json.
    Summary,
}

/// How a quantity is compared.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Kind {
    /// As a signed value: change new - base.
    Signed,
    /// By magnitude: change |new| - |base| (the whole difference when the sign changes).
    Magnitude,
    /// Zero by definition (a floating conductor's net charge): listed, never flagged.
    ZeroByDefinition,
}

/// One named quantity of a summary.
#[derive(Clone, Debug, PartialEq)]
pub struct Quantity {
    /// `C[a,b]`, `Q[a]`, `F[a]`, `V[a]`, `energy` or `peak_field`.
    pub name: String,
    /// SI unit.
    pub unit: String,
    /// Its value.
    pub value: f64,
    /// Remark on how it is taken ("magnitude", "along the axis", ...).
    pub note: String,
    /// How it is compared.
    pub kind: Kind,
}

/// Absolute tolerances by unit, SI.
pub type AbsTol = Vec<(String, f64)>;

/// Parses `--abs-tol UNIT=X` values: a unit of the table and a number >= 0, once per unit.
pub fn parse_abs_tol(given: &[String]) -> Result<AbsTol, Failure> {
    const UNITS: [&str; 10] = ["F/m", "F", "C/m", "C", "N/m", "N", "V", "J/m", "J", "V/m"];
    let mut out: AbsTol = Vec::new();
    for g in given {
        let bad = || {
            Failure::input(format!(
                "--abs-tol {g}: expected UNIT=X with UNIT one of {} and X a number >= 0 in                  that unit (e.g. --abs-tol F/m=1e-15)",
                UNITS.join(", ")
            ))
        };
        let (unit, value) = g.split_once('=').ok_or_else(bad)?;
        let unit = unit.trim();
        let value: f64 = value.trim().parse().map_err(|_| bad())?;
        if !(UNITS.contains(&unit) && value.is_finite() && value >= 0.0) {
            return Err(bad());
        }
        if out.iter().any(|(u, _)| u == unit) {
            return Err(Failure::input(format!(
                "--abs-tol gives the unit {unit} twice"
            )));
        }
        out.push((unit.to_string(), value));
    }
    Ok(out)
}

/// The tolerances a change is judged by.
#[derive(Clone, Debug, Default)]
pub struct Tolerance {
    /// Relative change beyond which a quantity counts as changed.
    pub rel: f64,
    /// Absolute change, by unit, that a change must also exceed.
    pub abs: AbsTol,
}

/// One compared quantity.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Change {
    /// `C[a,b]`, `Q[a]`, `F[a]`, `V[a]`, `energy` or `peak_field`.
    pub quantity: String,
    /// SI unit.
    pub unit: String,
    /// Value in BASE, if present there.
    pub base: Option<f64>,
    /// Value in NEW, if present there.
    pub new: Option<f64>,
    /// new - base, or |new| - |base| for a quantity compared by magnitude.
    pub change: Option<f64>,
    /// change / |base|; `None` (JSON null) when it is infinite or a side is missing.
    pub relative_change: Option<f64>,
    /// Beyond tolerance (or present on one side only).
    pub beyond_tolerance: bool,
    /// Remarks: "only in BASE", "singular peak", ...
    pub note: String,
}

/// Decides whether a path is a summary (a `.json` file, a directory with `summary.json`, or
/// a file whose text opens with `{`) or a design.
pub fn classify(path: &Path) -> Result<(InputKind, PathBuf), Failure> {
    if path.is_dir() {
        let s = path.join("summary.json");
        if s.is_file() {
            return Ok((InputKind::Summary, s));
        }
        return Err(Failure::input(format!(
            "{}: a directory without summary.json (give a design file, a summary.json, or a \
             results directory of `fieldgrid solve`)",
            path.display()
        )));
    }
    let ext = path
        .extension()
        .map(|e| e.to_string_lossy().to_ascii_lowercase());
    match ext.as_deref() {
        Some("json") => Ok((InputKind::Summary, path.to_path_buf())),
        Some("toml") => Ok((InputKind::Design, path.to_path_buf())),
        _ => {
            let text =
                super::read_limited(path, super::MAX_DESIGN_BYTES.max(super::MAX_RESULT_BYTES))
                    .map_err(|e| Failure::input(format!("{}: cannot read: {e}", path.display())))?;
            if text.trim_start().starts_with('{') {
                Ok((InputKind::Summary, path.to_path_buf()))
            } else {
                Ok((InputKind::Design, path.to_path_buf()))
            }
        }
    }
}

/// Reads a summary.json.
pub fn read_summary(path: &Path) -> Result<Summary, Failure> {
    let text = super::read_limited(path, super::MAX_RESULT_BYTES)
        .map_err(|e| Failure::input(format!("{}: cannot read: {e}", path.display())))?;
    let s: Summary = serde_json::from_str(&text).map_err(|e| {
        Failure::input(format!(
            "{}: not a fieldgrid summary.json: {e}",
            path.display()
        ))
    })?;
    if s.version != VERSION {
        return Err(Failure::input(format!(
            "{}: summary version {} is not supported (this fieldgrid reads version {VERSION})",
            path.display(),
            s.version
        )));
    }
    let n = s.capacitance.names.len();
    if s.capacitance.matrix.len() != n || s.capacitance.matrix.iter().any(|r| r.len() != n) {
        return Err(Failure::input(format!(
            "{}: capacitance.matrix is not {n} x {n} (one row and column per name)",
            path.display()
        )));
    }
    // Changes are matched by name: a name given twice would pair the wrong entries.
    let names = [
        ("capacitance.names", s.capacitance.names.clone()),
        (
            "conductors",
            s.conductors.iter().map(|c| c.name.clone()).collect(),
        ),
    ];
    for (key, list) in names {
        let mut seen = std::collections::HashSet::new();
        if let Some(d) = list.iter().find(|n| !seen.insert(n.as_str())) {
            return Err(Failure::input(format!(
                "{}: {key} names `{d}` twice; changes are matched by name, so names must be \
                 unique",
                path.display()
            )));
        }
    }
    Ok(s)
}

/// Loads one side: reads a summary, or reads and solves a design.
fn load(path: &Path, args: &CompareArgs, role: &str) -> Result<Revision, Failure> {
    let (kind, file) = classify(path)?;
    match kind {
        InputKind::Summary => Ok(Revision {
            path: path.to_path_buf(),
            summary: read_summary(&file)?,
            solution: None,
        }),
        InputKind::Design => {
            let mut src = load_design(&file, &[])?;
            let accuracy = crate::accuracy::target(&mut src, &args.opts)?;
            let mut params = study_params(&args.opts)?;
            let progress = crate::progress::Progress::new(args.opts.quiet)
                .labelled(&format!("{role} {}", file.display()));
            params.stages = progress.stages(params.stages.take());
            params.solver.monitor = progress.iterations();
            let (plan, _) = check_memory(
                &src,
                study::plan(&src.design, &params),
                args.opts.max_memory,
                0.0,
            )?;
            let start = Instant::now();
            let (sol, summary) = match accuracy {
                Some(rel) => {
                    let (sol, summary, _) =
                        super::solve::solve_accurate(&src, &params, &args.opts, rel)?;
                    (sol, summary)
                }
                None => {
                    let sol = with_threads(args.opts.threads, || {
                        study::run_planned(&src.design, &plan, &params)
                    })?
                    .map_err(|e| super::solve::study_failure(&src, e))?;
                    let summary = Summary::from_solution(
                        &sol,
                        src.design.depth,
                        start.elapsed().as_secs_f64(),
                        &src.text_hash,
                    );
                    (sol, summary)
                }
            };
            progress.finish();
            Ok(Revision {
                path: path.to_path_buf(),
                summary,
                solution: Some((sol, src)),
            })
        }
    }
}

/// True when the summary's solve was refined to an accuracy and did not reach it.
fn accuracy_short(summary: &Summary) -> bool {
    summary
        .accuracy
        .as_ref()
        .is_some_and(|a| a["met"] == serde_json::Value::Bool(false))
}

/// The named quantities of a summary, in report order.
pub fn quantities(s: &Summary) -> Vec<Quantity> {
    let per = s.per_length;
    let unit = |planar: &str, axi: &str| if per { planar } else { axi }.to_string();
    let q = |name: String, unit: String, value: f64, note: &str, kind: Kind| Quantity {
        name,
        unit,
        value,
        note: note.to_string(),
        kind,
    };
    let mut out = Vec::new();
    let cap = &s.capacitance;
    for (i, a) in cap.names.iter().enumerate() {
        for (j, b) in cap.names.iter().enumerate() {
            let v = cap.matrix[i][j];
            out.push(q(
                format!("C[{a},{b}]"),
                cap.unit.clone(),
                v,
                "",
                Kind::Magnitude,
            ));
        }
    }
    for c in &s.conductors {
        let (note, kind) = if c.floating {
            ("zero by definition: floating", Kind::ZeroByDefinition)
        } else {
            ("", Kind::Magnitude)
        };
        out.push(q(
            format!("Q[{}]", c.name),
            unit("C/m", "C"),
            c.charge,
            note,
            kind,
        ));
    }
    for c in &s.conductors {
        // Planar: the magnitude of (Fx, Fy), so that a component near zero by symmetry does
        // not report round-off as a change; axisymmetric: the force along the axis.
        let (f, note) = if per {
            (c.force[0].hypot(c.force[1]), "magnitude")
        } else {
            (c.force[1], "along the axis")
        };
        out.push(q(
            format!("F[{}]", c.name),
            unit("N/m", "N"),
            f,
            note,
            Kind::Signed,
        ));
    }
    for c in s.conductors.iter().filter(|c| c.floating) {
        out.push(q(
            format!("V[{}]", c.name),
            "V".into(),
            c.potential,
            "",
            Kind::Signed,
        ));
    }
    out.push(q(
        "energy".into(),
        unit("J/m", "J"),
        s.energy,
        "",
        Kind::Signed,
    ));
    if let Some(p) = &s.peak_field {
        out.push(q(
            "peak_field".into(),
            "V/m".into(),
            p.magnitude,
            if p.singular {
                "singular peak: grows with refinement"
            } else {
                ""
            },
            Kind::Signed,
        ));
    }
    out
}

/// Every quantity of either side, base order first, then those only in NEW.
pub fn changes(base: &Summary, new: &Summary, tol: &Tolerance) -> Vec<Change> {
    let qb = quantities(base);
    let qn = quantities(new);
    let mut out = Vec::new();
    for b in &qb {
        let found = qn.iter().find(|q| q.name == b.name);
        let (new_v, note, kind) = match found {
            Some(n) => {
                let note = if n.note.is_empty() { &b.note } else { &n.note };
                (Some(n.value), note.clone(), n.kind)
            }
            None => (None, "only in BASE".to_string(), b.kind),
        };
        out.push(change(
            &b.name,
            &b.unit,
            Some(b.value),
            new_v,
            kind,
            tol,
            note,
        ));
    }
    for n in &qn {
        if !qb.iter().any(|q| q.name == n.name) {
            let note = if n.note.is_empty() {
                "only in NEW".to_string()
            } else {
                format!("only in NEW; {}", n.note)
            };
            out.push(change(
                &n.name,
                &n.unit,
                None,
                Some(n.value),
                n.kind,
                tol,
                note,
            ));
        }
    }
    out
}

fn change(
    name: &str,
    unit: &str,
    base: Option<f64>,
    new: Option<f64>,
    kind: Kind,
    tol: &Tolerance,
    mut note: String,
) -> Change {
    let abs_tol = tol.abs.iter().find(|(u, _)| u == unit).map_or(0.0, |t| t.1);
    let (change, rel, beyond) = match (base, new) {
        (Some(b), Some(n)) => {
            let d = match kind {
                Kind::Magnitude if b * n < 0.0 => {
                    note = join_note("sign changed", &note);
                    (n - b).abs()
                }
                Kind::Magnitude => {
                    if b < 0.0 || n < 0.0 {
                        note = join_note("magnitude", &note);
                    }
                    n.abs() - b.abs()
                }
                _ => n - b,
            };
            let r = relative(b, d);
            let beyond = kind != Kind::ZeroByDefinition && r.abs() > tol.rel && d.abs() > abs_tol;
            (Some(d), r, beyond)
        }
        _ => (None, f64::NAN, kind != Kind::ZeroByDefinition),
    };
    Change {
        quantity: name.to_string(),
        unit: unit.to_string(),
        base,
        new,
        change,
        relative_change: rel.is_finite().then_some(rel),
        beyond_tolerance: beyond,
        note,
    }
}

fn join_note(first: &str, rest: &str) -> String {
    if rest.is_empty() {
        first.to_string()
    } else {
        format!("{first}; {rest}")
    }
}

/// A change `d` relative to |base|: 0 when there is none, infinite when only base is zero.
fn relative(base: f64, d: f64) -> f64 {
    if d == 0.0 {
        0.0
    } else if base == 0.0 {
        f64::INFINITY.copysign(d)
    } else {
        d / base.abs()
    }
}

/// Runs the command, returning the exit code.
pub fn run(args: &CompareArgs) -> Result<u8, Failure> {
    if !(args.rel_tol.is_finite() && args.rel_tol >= 0.0) {
        return Err(Failure::input(format!(
            "--rel-tol must be a number >= 0, got {}",
            args.rel_tol
        )));
    }
    parse_abs_tol(&args.abs_tol)?;
    // Classify both before solving either, so a bad NEW costs no solve of BASE.
    classify(&args.base)?;
    classify(&args.new)?;
    let mut out = args.out.as_deref().map(OutDir::prepare).transpose()?;
    let base = load(&args.base, args, "BASE")?;
    let new = load(&args.new, args, "NEW")?;
    if base.summary.mode != new.summary.mode || base.summary.per_length != new.summary.per_length {
        return Err(Failure::input(format!(
            "{} is {} and {} is {}: their results have different units and cannot be compared",
            args.base.display(),
            base.summary.mode,
            args.new.display(),
            new.summary.mode
        )));
    }
    let tol = Tolerance {
        rel: args.rel_tol,
        abs: parse_abs_tol(&args.abs_tol)?,
    };
    let table = changes(&base.summary, &new.summary, &tol);
    let beyond = table.iter().filter(|c| c.beyond_tolerance).count();
    let mut remarks = Vec::new();
    let (gb, gn) = (&base.summary.grid, &new.summary.grid);
    if (gb.nx, gb.ny) != (gn.nx, gn.ny) || gb.cell != gn.cell {
        remarks.push(format!(
            "the grids differ (BASE {} x {} nodes, cell {:.4e} m; NEW {} x {}, cell {:.4e} m): \
             part of each change is discretisation",
            gb.nx, gb.ny, gb.cell, gn.nx, gn.ny, gn.cell
        ));
    }
    let unconverged: Vec<String> = [(&base, "BASE"), (&new, "NEW")]
        .iter()
        .filter(|(r, _)| !r.summary.solver.converged)
        .map(|(r, role)| format!("{role} ({})", r.path.display()))
        .collect();
    if !unconverged.is_empty() {
        remarks.push(format!(
            "the solve of {} did not converge: its numbers are not reliable",
            unconverged.join(" and ")
        ));
    }
    // A revision whose accuracy target was not met is flagged as an unconverged one is.
    let short: Vec<String> = [(&base, "BASE"), (&new, "NEW")]
        .iter()
        .filter(|(r, _)| accuracy_short(&r.summary))
        .map(|(r, role)| format!("{role} ({})", r.path.display()))
        .collect();
    if !short.is_empty() {
        remarks.push(format!(
            "the accuracy asked of {} was not met (see its summary's `accuracy`)",
            short.join(" and ")
        ));
    }
    let unconverged: Vec<String> = unconverged.into_iter().chain(short).collect();
    let picture = match (&base.solution, &new.solution, &out) {
        (Some((sb, base_src)), Some((sn, src)), Some(_)) => {
            let (gb, gn) = (&sb.grid, &sn.grid);
            let same_domain =
                [gb.x0(), gb.x1(), gb.y0(), gb.y1()] == [gn.x0(), gn.x1(), gn.y0(), gn.y1()];
            if same_domain {
                Some(change_picture(
                    (sb, base_src),
                    (sn, src),
                    &args.pictures.render_options(),
                ))
            } else {
                remarks.push(
                    "no field_change.png: the two designs have different domains".to_string(),
                );
                None
            }
        }
        _ => None,
    };
    if let Some(out) = &mut out {
        write_outputs(out, args, &table, beyond, &remarks)?;
        if let Some(img) = &picture {
            out.write_png("field_change.png", img)?;
        }
        out.commit()?;
    }
    if !args.opts.quiet {
        print!("{}", render_table(args, &table, beyond, &remarks));
    }
    Ok(if !unconverged.is_empty() {
        EXIT_NOT_CONVERGED
    } else if beyond > 0 {
        EXIT_CHANGED
    } else {
        EXIT_OK
    })
}

/// The map of |E|(NEW) - |E|(BASE) on their common grid, NEW's conductors filled and
/// named, and every BASE conductor that NEW lacks or has in another shape outlined dotted and
/// named "(BASE)".
fn change_picture(
    (base, base_src): (&Solution, &DesignSource),
    (new, src): (&Solution, &DesignSource),
    opts: &crate::render::RenderOptions,
) -> image::RgbImage {
    use crate::render::{self, ContourStyle, MapInput, Outline, Palette};
    // On NEW's lattice; BASE's field carried onto it when the lines differ.
    let carried;
    let eb = if base.grid == new.grid {
        base.field_magnitude()
    } else {
        carried = crate::render::sample::onto(&base.grid, base.field_magnitude(), &new.grid);
        &carried
    };
    let en = new.field_magnitude();
    let diff: Vec<f64> = eb.iter().zip(en).map(|(b, n)| n - b).collect();
    // Colour range: the 99th percentile of |change|, so that the few nodes at sharp edges
    // (whose values are singular) saturate instead of washing out the rest of the map.
    let mut mags: Vec<f64> = diff
        .iter()
        .filter(|v| v.is_finite())
        .map(|v| v.abs())
        .collect();
    let k = ((mags.len() as f64 * 0.99) as usize).min(mags.len().saturating_sub(1));
    let top = crate::render::sample::rank(&mut mags, k).unwrap_or(0.0);
    let (_, dielectrics) = crate::pictures::outlines(&src.design);
    let settled: Vec<f64> = new.conductors.iter().map(|c| c.potential).collect();
    let conductors = crate::pictures::named_conductors(&src.design, Some(&settled));
    let tol = Outline::picture_tolerance(src.design.domain.x, src.design.domain.y);
    let former: Vec<Outline> = base_src
        .design
        .conductors
        .iter()
        .filter_map(|b| {
            let same = src.design.conductors.iter().find(|n| n.name == b.name);
            let label = match same {
                Some(n) if n.shape == b.shape && n.joined == b.joined => return None,
                Some(_) => format!("{} (BASE)", b.name),
                None => format!("{} (BASE only)", b.name),
            };
            // Every piece, under one name (the outline is dotted, never filled).
            let mut o = Outline::from_shape(label, &b.shape, tol);
            for piece in &b.joined {
                let p = Outline::from_shape("", piece, tol);
                o.rings.extend(p.rings);
                o.lines.extend(p.lines);
            }
            Some(o)
        })
        .collect();
    let input = MapInput {
        title: "Change in field magnitude, NEW minus BASE (colours saturate at the largest 1 %)",
        quantity: "change of |E|",
        unit: "V/m",
        length_unit: render::LengthUnit {
            label: src.unit.name(),
            metres: src.unit.scale(),
        },
        axis_names: crate::pictures::axis_names(&src.design),
        conductors: &conductors,
        dielectrics: &dielectrics,
        former: &former,
        palette: Palette::Diverging,
        contours: ContourStyle::None,
        range: (top > 0.0).then_some([-top, top]),
        ..MapInput::new(&new.grid, &diff)
    };
    render::render_map(&input, opts)
}

fn opt_num(v: Option<f64>) -> String {
    v.map(num).unwrap_or_default()
}

fn relative_text(c: &Change) -> String {
    match (c.relative_change, c.change) {
        (Some(r), _) => num(r),
        (None, Some(d)) => {
            if d > 0.0 {
                "inf".into()
            } else {
                "-inf".into()
            }
        }
        _ => String::new(),
    }
}

fn write_outputs(
    out: &OutDir,
    args: &CompareArgs,
    table: &[Change],
    beyond: usize,
    remarks: &[String],
) -> Result<(), Failure> {
    let csv = csv_bytes(
        &[
            "quantity",
            "unit",
            "base",
            "new",
            "change",
            "relative change",
            "beyond tolerance",
            "note",
        ],
        table.iter().map(|c| {
            vec![
                c.quantity.clone(),
                c.unit.clone(),
                opt_num(c.base),
                opt_num(c.new),
                opt_num(c.change),
                relative_text(c),
                c.beyond_tolerance.to_string(),
                c.note.clone(),
            ]
        }),
    );
    let json = serde_json::json!({
        "version": 1,
        "base": args.base.display().to_string(),
        "new": args.new.display().to_string(),
        "rel_tol": args.rel_tol,
        "abs_tol": parse_abs_tol(&args.abs_tol)?.into_iter().collect::<std::collections::BTreeMap<_, _>>(),
        "changed": beyond,
        "quantities": table,
        "remarks": remarks,
    });
    let json =
        serde_json::to_vec_pretty(&json).map_err(|e| Failure::io("encoding compare.json", e))?;
    out.write("compare.csv", &csv)?;
    out.write("compare.json", &json)?;
    Ok(())
}

/// The table printed on standard output.
pub fn render_table(
    args: &CompareArgs,
    table: &[Change],
    beyond: usize,
    remarks: &[String],
) -> String {
    use std::fmt::Write;
    let mut s = String::new();
    let _ = writeln!(s, "BASE {}", args.base.display());
    let _ = writeln!(s, "NEW  {}", args.new.display());
    let w = table
        .iter()
        .map(|c| c.quantity.len())
        .max()
        .unwrap_or(8)
        .max(8);
    let _ = writeln!(
        s,
        "{:w$}  {:>4}  {:>12}  {:>12}  {:>11}  {:>9}",
        "quantity", "unit", "base", "new", "change", "relative"
    );
    let cell = |v: Option<f64>| v.map(|v| format!("{v:.5e}")).unwrap_or_else(|| "-".into());
    for c in table {
        let rel = match (c.relative_change, c.change) {
            (Some(r), _) => format!("{:+.3} %", 100.0 * r),
            (None, Some(_)) => "from 0".into(),
            _ => "-".into(),
        };
        let mut flag = String::new();
        if c.beyond_tolerance {
            flag.push_str("  CHANGED");
        }
        if !c.note.is_empty() {
            let _ = write!(flag, "  ({})", c.note);
        }
        let _ = writeln!(
            s,
            "{:w$}  {:>4}  {:>12}  {:>12}  {:>11}  {:>9}{flag}",
            c.quantity,
            c.unit,
            cell(c.base),
            cell(c.new),
            c.change
                .map(|v| format!("{v:+.3e}"))
                .unwrap_or_else(|| "-".into()),
            rel
        );
    }
    for r in remarks {
        let _ = writeln!(s, "note: {r}");
    }
    if beyond == 0 {
        let _ = writeln!(
            s,
            "no change beyond {} % in {} quantities",
            100.0 * args.rel_tol,
            table.len()
        );
    } else {
        let _ = writeln!(
            s,
            "{beyond} of {} quantities changed beyond {} %",
            table.len(),
            100.0 * args.rel_tol
        );
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    fn tol(rel: f64) -> Tolerance {
        Tolerance {
            rel,
            abs: Vec::new(),
        }
    }

    #[test]
    fn relative_change_cases() {
        assert_eq!(relative(2.0, 0.0), 0.0);
        assert_eq!(relative(0.0, 0.0), 0.0);
        assert_eq!(relative(-2.0, -1.0), -0.5);
        assert_eq!(relative(0.0, -1.0), f64::NEG_INFINITY);
    }

    #[test]
    fn a_growing_coupling_reads_as_growth() {
        let c = change(
            "C[a,b]",
            "F/m",
            Some(-2.38e-10),
            Some(-3.57e-10),
            Kind::Magnitude,
            &tol(0.01),
            String::new(),
        );
        assert!(c.change.unwrap() > 0.0 && c.relative_change.unwrap() > 0.49);
        assert!(c.beyond_tolerance && c.note == "magnitude");
        let c = change(
            "Q[a]",
            "C/m",
            Some(-1.0),
            Some(1.0),
            Kind::Magnitude,
            &tol(0.01),
            String::new(),
        );
        assert!(c.beyond_tolerance && c.note.starts_with("sign changed"));
        assert_eq!(c.relative_change, Some(2.0));
    }

    #[test]
    fn a_floating_charge_is_never_flagged() {
        let c = change(
            "Q[f]",
            "C/m",
            Some(1e-22),
            Some(-3e-22),
            Kind::ZeroByDefinition,
            &tol(0.01),
            String::new(),
        );
        assert!(!c.beyond_tolerance);
    }

    #[test]
    fn an_absolute_tolerance_holds_back_small_changes_of_its_unit() {
        let t = Tolerance {
            rel: 0.01,
            abs: parse_abs_tol(&["F/m=1e-14".to_string()]).unwrap(),
        };
        let small = change(
            "C[a,b]",
            "F/m",
            Some(1e-14),
            Some(1.5e-14),
            Kind::Magnitude,
            &t,
            String::new(),
        );
        assert!(!small.beyond_tolerance);
        let other = change(
            "Q[a]",
            "C/m",
            Some(1e-14),
            Some(1.5e-14),
            Kind::Magnitude,
            &t,
            String::new(),
        );
        assert!(other.beyond_tolerance);
        for bad in ["F/m", "ohm=1", "F/m=-1", "F/m=x"] {
            assert!(parse_abs_tol(&[bad.to_string()]).is_err(), "{bad}");
        }
    }

    fn summary_of(text: &str) -> Summary {
        let src = crate::design_file::read_design(text, "t.toml", &[]).unwrap();
        let sol = fieldgrid_solver::study::run(&src.design, &Default::default()).unwrap();
        Summary::from_solution(&sol, None, 0.0, &src.text_hash)
    }

    #[test]
    fn forces_are_compared_by_magnitude_in_the_plane_and_along_the_axis_in_r_z() {
        let plates = |mode: &str| {
            format!(
                "mode = \"{mode}\"\n[grid]\nx = [0.0, 1.0]\ny = [0.0, 1.0]\ncell = 0.05\n\
                 [[conductor]]\nname = \"p\"\npotential = 1.0\n\
                 rect = {{ x = [0.0, 0.5], y = [0.4, 0.5] }}\n"
            )
        };
        for (mode, note) in [("planar", "magnitude"), ("axisymmetric", "along the axis")] {
            let s = summary_of(&plates(mode));
            let f = s.conductors[0].force;
            let want = if mode == "planar" {
                f[0].hypot(f[1])
            } else {
                f[1]
            };
            let q = quantities(&s);
            let got = q.iter().find(|q| q.name == "F[p]").expect("F[p] compared");
            assert_eq!((got.value, got.note.as_str()), (want, note), "{mode}");
            assert!(want != 0.0, "{mode}: the plate is pulled");
        }
    }

    #[test]
    fn one_sided_quantities_count_as_changes() {
        let k = Kind::Magnitude;
        let c = change(
            "Q[a]",
            "C/m",
            None,
            Some(1.0),
            k,
            &tol(0.01),
            "only in NEW".into(),
        );
        assert!(c.beyond_tolerance && c.relative_change.is_none());
        let c = change(
            "Q[a]",
            "C/m",
            Some(1.0),
            Some(1.005),
            k,
            &tol(0.01),
            String::new(),
        );
        assert!(!c.beyond_tolerance);
        let c = change(
            "Q[a]",
            "C/m",
            Some(1.0),
            Some(1.02),
            k,
            &tol(0.01),
            String::new(),
        );
        assert!(c.beyond_tolerance);
    }
}
