//! `fieldgrid target DESIGN --quantity Q --value X --vary NAME=LO:HI --out DIR`: the value of
//! a design parameter that brings a result to a wanted value (the trace width for 50 ohm,
//! the gap for 2 pF, the rounding for a margin of 2).
//!
//! One target: Brent's bracketing root finder ([`fieldgrid_solver::root`]) on solves of the
//! design; both ends of the bracket are solved first and a target outside the values there
//! is refused (exit 2) with those values in the message. Several targets (repeated
//! `--quantity`/`--value`/`--vary`, as many parameters as quantities): damped Newton on
//! forward-difference sensitivities ([`fieldgrid_solver::newton`]), from the middle of the
//! box, the steps those of `--sensitivity`.
//!
//! `--out` receives the final solve's usual files (those of `impedance` when `--signal`
//! is given) and `target.json`: for one target `parameter`, `value` (the parameter's value
//! found, design units), `quantity`, `target`, `achieved`, `error_estimate` (the achieved
//! quantity's estimated discretisation error), `unit`, `iterations` (solves after the
//! bracket ends), `solves`, `bracket`, `converged`; for several, `targets` (one such object per
//! pair) with `iterations` and `solves`.
//!
//! Invariants: the tolerance on a quantity is `--value-tol`, else its estimated
//! discretisation error at the bracket ends (the smaller), else 1e-6 of the wanted value; a
//! `worst_margin` target is met from above (the point kept has a margin at least the wanted
//! one whenever a point solved has);
//! each solve starts from the previous one's solutions when its lattice has the same node
//! lines (`warm_starts` counts them), else from zero (each point plans its own grid, whose
//! lines may move with the parameter); either way it stops at the same relative residual;
//! exit 0 when every target was met, 3 when the search stopped first or a solve did not
//! converge (the files then hold the best point and say so).

use super::evaluate::{self, Evaluation, Setup, Solved};
use super::study_params;
use crate::args::TargetArgs;
use crate::error::Failure;
use crate::outdir::OutDir;
use crate::{EXIT_NOT_CONVERGED, EXIT_OK};
use fieldgrid_solver::{newton, root};
use serde_json::{json, Value};

/// One `--vary NAME=LO:HI`.
#[derive(Clone, Debug, PartialEq)]
pub struct Bracket {
    /// Parameter name.
    pub name: String,
    /// Low end (design units).
    pub lo: f64,
    /// High end.
    pub hi: f64,
}

impl Bracket {
    /// Parses `NAME=LO:HI`.
    pub fn parse(s: &str) -> Result<Bracket, String> {
        let form = "write --vary NAME=LO:HI, for example w=0.8:2.0";
        let (name, range) = s
            .split_once('=')
            .ok_or_else(|| format!("--vary {s}: no `=`: {form}"))?;
        let name = name.trim();
        if name.is_empty() {
            return Err(format!("--vary {s}: no parameter name: {form}"));
        }
        let (a, b) = range
            .split_once(':')
            .ok_or_else(|| format!("--vary {s}: `{range}` is not LO:HI: {form}"))?;
        let num = |t: &str, what: &str| match t.trim().parse::<f64>() {
            Ok(v) if v.is_finite() => Ok(v),
            _ => Err(format!(
                "--vary {s}: {what} `{}` is not a finite number",
                t.trim()
            )),
        };
        let (lo, hi) = (num(a, "LO")?, num(b, "HI")?);
        if lo >= hi {
            return Err(format!("--vary {s}: LO must be below HI"));
        }
        Ok(Bracket {
            name: name.to_string(),
            lo,
            hi,
        })
    }
}

/// A quantity value for messages: four decimals for ohms and ratios, else four significant
/// digits in exponent form, with the unit.
pub fn show(v: f64, unit: &str) -> String {
    if unit.is_empty() {
        format!("{v:.4}")
    } else if unit == "ohm" {
        format!("{v:.4} ohm")
    } else {
        format!("{v:.4e} {unit}")
    }
}

/// The best evaluation so far and the search's bookkeeping.
struct Search<'a> {
    setup: Setup<'a>,
    brackets: Vec<Bracket>,
    quantities: Vec<String>,
    wanted: Vec<f64>,
    /// The evaluation nearest the targets so far, with its residuals.
    best: Option<(Vec<f64>, Evaluation)>,
    /// The quantities of the last evaluation.
    last: Vec<evaluate::Named>,
    /// One target that must not fall short (a margin): an evaluation at or above it beats
    /// every one below it.
    at_least: bool,
    /// The last solve's solutions, to start the next one from.
    warm: Option<std::sync::Arc<fieldgrid_solver::study::WarmStart>>,
    /// Solves that started from the previous one's solutions.
    warm_starts: usize,
    solves: usize,
    unconverged: bool,
}

impl Search<'_> {
    /// The quantity `name` of the last evaluation.
    fn quantity(&self, name: &str) -> Result<evaluate::Named, Failure> {
        evaluate::find(&self.last, name)
            .cloned()
            .ok_or_else(|| evaluate::unknown_quantity(&self.last, name))
    }

    /// Solves at `x` and returns the residuals (quantity - wanted), keeping the evaluation
    /// when its residuals scaled by `tol` are the smallest so far.
    fn residuals(&mut self, x: &[f64], tol: &[f64]) -> Result<Vec<f64>, Failure> {
        let values: Vec<(String, f64)> = self
            .brackets
            .iter()
            .zip(x)
            .map(|(b, &v)| (b.name.clone(), v))
            .collect();
        self.setup.params.warm_start = self.warm.take();
        let ev = evaluate::evaluate(&self.setup, &values)?;
        let sol = ev.solved.solution();
        if let Some(w) = &self.setup.params.warm_start {
            self.warm_starts += usize::from(w.fits(&sol.grid, sol.conductors.len()));
        }
        self.warm = sol.warm_start.clone();
        self.solves += 1;
        self.unconverged |= !ev.converged();
        let mut r = Vec::new();
        for (q, w) in self.quantities.iter().zip(&self.wanted) {
            r.push(ev.quantity(q)?.value - w);
        }
        let score = |r: &[f64]| -> f64 { r.iter().zip(tol).map(|(r, t)| (r / t).powi(2)).sum() };
        self.last = ev.quantities.clone();
        let short = |r: &[f64]| self.at_least && r[0] < 0.0;
        if self
            .best
            .as_ref()
            .is_none_or(|(b, _)| (short(&r), score(&r)) < (short(b), score(b)))
        {
            self.best = Some((r.clone(), ev));
        }
        Ok(r)
    }
}

/// Runs the command, returning the exit code.
pub fn run(args: &TargetArgs) -> Result<u8, Failure> {
    let n = args.quantity.len();
    if args.value.len() != n || args.vary.len() != n {
        return Err(Failure::input(format!(
            "target needs as many --value and --vary as --quantity (got {n} --quantity, {} \
             --value, {} --vary)",
            args.value.len(),
            args.vary.len()
        )));
    }
    if !(args.value_tol.is_empty() || args.value_tol.len() == n) {
        return Err(Failure::input(format!(
            "--value-tol: give one per --quantity ({n}), or none for the estimated errors"
        )));
    }
    if let Some(t) = args
        .value_tol
        .iter()
        .find(|t| !(t.is_finite() && **t > 0.0))
    {
        return Err(Failure::input(format!(
            "--value-tol must be a positive number, got {t}"
        )));
    }
    if let Some(v) = args.value.iter().find(|v| !v.is_finite()) {
        return Err(Failure::input(format!(
            "--value must be a finite number, got {v}"
        )));
    }
    if args.max_solves < 3 {
        return Err(Failure::input("--max-solves must be at least 3"));
    }
    let mut brackets: Vec<Bracket> = Vec::new();
    for v in &args.vary {
        let b = Bracket::parse(v).map_err(Failure::input)?;
        if brackets.iter().any(|c| c.name == b.name) {
            return Err(Failure::input(format!(
                "--vary {}: the parameter is varied twice",
                b.name
            )));
        }
        brackets.push(b);
    }
    if let Some(q) = args
        .quantity
        .iter()
        .find(|q| evaluate::is_line_name(q) && args.signal.is_empty())
    {
        return Err(Failure::input(format!(
            "--quantity {q}: a line quantity needs --signal NAME[,NAME]"
        )));
    }
    let mut params = study_params(&args.opts)?;
    params.solver.monitor = None;
    params.keep_warm_start = true;
    let setup = Setup {
        design: &args.design,
        base: super::parameter_overrides(&args.set)?,
        params,
        opts: &args.opts,
        signals: args.signal.clone(),
        vacuum_warm_start: None,
    };
    // The design as given, and every varied name a parameter of it, before any solve.
    let nominal = super::load_design(&args.design, &setup.base)?;
    for b in &brackets {
        if !nominal.parameters.iter().any(|(p, _)| *p == b.name) {
            let names: Vec<&str> = nominal.parameters.iter().map(|p| p.0.as_str()).collect();
            return Err(Failure::input(format!(
                "--vary {}: the design has no parameter of that name (its parameters: {})",
                b.name,
                if names.is_empty() {
                    "none".to_string()
                } else {
                    names.join(", ")
                }
            )));
        }
    }
    let mut out = OutDir::prepare(&args.out)?;
    let mut search = Search {
        setup,
        brackets,
        quantities: args.quantity.clone(),
        wanted: args.value.clone(),
        best: None,
        last: Vec::new(),
        at_least: n == 1 && args.quantity[0].eq_ignore_ascii_case("worst_margin"),
        warm: None,
        warm_starts: 0,
        solves: 0,
        unconverged: false,
    };
    let (report, converged) = if n == 1 {
        one_target(&mut search, args)?
    } else {
        several_targets(&mut search, args)?
    };
    let (_, best) = search.best.take().expect("at least one solve");
    match &best.solved {
        Solved::Study(sol) => {
            super::solve::write_results(&out, sol, &best.summary, &best.src.design, false)?;
            let (potential, field) = crate::pictures::field_maps(
                &best.src,
                sol,
                false,
                &args.pictures.render_options(&best.src),
            );
            out.write_png("potential.png", &potential)?;
            out.write_png("field.png", &field)?;
        }
        Solved::Line(ls) => super::impedance::write_line_results(
            &out,
            &best.src,
            ls,
            &best.summary,
            &args.pictures,
        )?,
    }
    let json = serde_json::to_vec_pretty(&report.0).map_err(|e| Failure::io("target.json", e))?;
    out.write("target.json", &json)?;
    out.commit()?;
    if !args.opts.quiet {
        print!("{}", report.1);
        println!("results in {}", out.path().display());
    }
    Ok(if converged && !search.unconverged {
        EXIT_OK
    } else {
        EXIT_NOT_CONVERGED
    })
}

/// What the search found: `target.json` and the printed lines.
type Report = (Value, String);

fn one_target(search: &mut Search, args: &TargetArgs) -> Result<(Report, bool), Failure> {
    let b = search.brackets[0].clone();
    let (name, wanted) = (args.quantity[0].clone(), args.value[0]);
    // With one target the scaling does not change which point is nearest.
    let tol = [1.0];
    let f_lo = search.residuals(&[b.lo], &tol)?[0];
    let at_lo = search.quantity(&name)?;
    let f_hi = search.residuals(&[b.hi], &tol)?[0];
    let at_hi = search.quantity(&name)?;
    let unit = at_lo.unit.clone();
    if (f_lo > 0.0) == (f_hi > 0.0) && f_lo != 0.0 && f_hi != 0.0 {
        return Err(Failure::input(format!(
            "{} = {} is outside the bracket: {} is {} at {} = {} and {} at {} = {} (widen \
             --vary {}=LO:HI)",
            at_lo.name,
            show(wanted, &unit),
            at_lo.name,
            show(at_lo.value, &unit),
            b.name,
            crate::commands::sweep::value_text(b.lo),
            show(at_hi.value, &unit),
            b.name,
            crate::commands::sweep::value_text(b.hi),
            b.name
        )));
    }
    let f_tol = match (args.value_tol.first(), at_lo.error, at_hi.error) {
        (Some(&t), _, _) => t,
        (None, Some(a), Some(b)) => a.min(b),
        (None, Some(e), None) | (None, None, Some(e)) => e,
        (None, None, None) => 1e-6 * wanted.abs().max(f64::MIN_POSITIVE),
    };
    // A margin is met from above: the search aims half a tolerance above the wanted value
    // (when that is still bracketed), so the point kept, which is never below it when any
    // point is not, lies within [wanted, wanted + tolerance].
    let tolerance = f_tol;
    let (mut f_lo, mut f_hi, mut f_tol) = (f_lo, f_hi, f_tol);
    if search.at_least && (f_lo - 0.5 * f_tol) * (f_hi - 0.5 * f_tol) < 0.0 {
        search.wanted[0] += 0.5 * f_tol;
        f_lo -= 0.5 * f_tol;
        f_hi -= 0.5 * f_tol;
        f_tol *= 0.5;
    }
    let p = root::Params::default()
        .with_f_tol(f_tol)
        .with_x_tol(1e-9 * (b.hi - b.lo))
        .with_max_evaluations(args.max_solves.saturating_sub(3));
    let found = root::brent(
        |x| search.residuals(&[x], &tol).map(|r| r[0]),
        (b.lo, f_lo),
        (b.hi, f_hi),
        &p,
    );
    let (info, converged) = match found {
        Ok(i) => (i, true),
        Err(root::RootError::MaxEvaluations(i)) => (i, false),
        Err(root::RootError::Evaluation(f)) => return Err(f),
        Err(e) => {
            return Err(Failure::input(format!(
                "--quantity {name}: {}",
                crate::wording::root(&e)
            )))
        }
    };
    let ev = &search.best.as_ref().expect("solved").1;
    let q = ev.quantity(&name)?;
    let value = ev
        .src
        .parameters
        .iter()
        .find(|p| p.0 == b.name)
        .map_or(info.x, |p| p.1);
    let json = json!({
        "parameter": b.name,
        "value": value,
        "quantity": q.name,
        "target": wanted,
        "achieved": q.value,
        "error_estimate": q.error,
        "tolerance": tolerance,
        "unit": q.unit,
        "iterations": info.evaluations,
        "solves": search.solves,
        "warm_starts": search.warm_starts,
        "bracket": [b.lo, b.hi],
        "converged": converged && !search.unconverged,
    });
    let text = format!(
        "target {} = {}: {} = {} gives {}{} ({} solves{})\n",
        q.name,
        show(wanted, &q.unit),
        b.name,
        crate::commands::sweep::value_text(round_sig(value, 6)),
        show(q.value, &q.unit),
        q.error
            .map(|e| format!(" +/- {e:.1e} (estimated discretisation error)"))
            .unwrap_or_default(),
        search.solves,
        if converged {
            String::new()
        } else {
            format!("; stopped at --max-solves before |error| <= {tolerance:.1e}")
        }
    );
    Ok(((json, text), converged))
}

/// `v` to `digits` significant digits (for the printed line; target.json keeps every digit).
fn round_sig(v: f64, digits: usize) -> f64 {
    format!("{v:.*e}", digits - 1).parse().unwrap_or(v)
}

fn several_targets(search: &mut Search, args: &TargetArgs) -> Result<(Report, bool), Failure> {
    let n = search.brackets.len();
    let start: Vec<f64> = search
        .brackets
        .iter()
        .map(|b| 0.5 * (b.lo + b.hi))
        .collect();
    search.residuals(&start, &vec![1.0; n])?;
    let tol: Vec<f64> = (0..n)
        .map(|i| match args.value_tol.get(i) {
            Some(&t) => Ok(t),
            None => {
                let q = search.quantity(&search.quantities[i])?;
                Ok(q.error.unwrap_or(1e-6 * search.wanted[i].abs()).max(
                    // Never below what the solver tolerance can resolve.
                    1e-9 * q.value.abs().max(search.wanted[i].abs()),
                ))
            }
        })
        .collect::<Result<_, Failure>>()?;
    let steps = super::sensitivities::steps(
        &search.setup,
        &search
            .brackets
            .iter()
            .map(|b| b.name.clone())
            .collect::<Vec<_>>(),
        &start,
    )?;
    let problem = newton::Problem {
        start: start.clone(),
        low: search.brackets.iter().map(|b| b.lo).collect(),
        high: search.brackets.iter().map(|b| b.hi).collect(),
        steps: steps
            .iter()
            .zip(&search.brackets)
            .map(|(h, b)| h.min(0.25 * (b.hi - b.lo)))
            .collect(),
        tol: tol.clone(),
    };
    let mut params = newton::Params::default();
    params.max_iterations = args.max_solves / (n + 2);
    let info =
        newton::solve(|x| search.residuals(x, &tol), &problem, &params).map_err(|e| match e {
            newton::NewtonError::Evaluation(f) => f,
            e => Failure::input(format!(
                "targets {}: {}",
                search.quantities.join(", "),
                crate::wording::newton(&e)
            )),
        })?;
    let ev = &search.best.as_ref().expect("solved").1;
    let mut targets = Vec::new();
    let mut text = String::new();
    for (i, b) in search.brackets.iter().enumerate() {
        let q = ev.quantity(&search.quantities[i])?;
        let value = ev
            .src
            .parameters
            .iter()
            .find(|p| p.0 == b.name)
            .map_or(info.x[i], |p| p.1);
        targets.push(json!({
            "parameter": b.name,
            "value": value,
            "quantity": q.name,
            "target": search.wanted[i],
            "achieved": q.value,
            "error_estimate": q.error,
            "tolerance": tol[i],
            "unit": q.unit,
            "bracket": [b.lo, b.hi],
        }));
        text += &format!(
            "target {} = {}: {} = {} gives {}{}\n",
            q.name,
            show(search.wanted[i], &q.unit),
            b.name,
            crate::commands::sweep::value_text(round_sig(value, 6)),
            show(q.value, &q.unit),
            q.error.map(|e| format!(" +/- {e:.1e}")).unwrap_or_default(),
        );
    }
    text += &format!(
        "{} Newton iterations, {} solves{}\n",
        info.iterations,
        search.solves,
        if info.converged {
            ""
        } else {
            "; not every target met within its tolerance"
        }
    );
    let json = json!({
        "targets": targets,
        "iterations": info.iterations,
        "solves": search.solves,
        "warm_starts": search.warm_starts,
        "converged": info.converged && !search.unconverged,
    });
    Ok(((json, text), info.converged))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn brackets_parse_and_are_checked() {
        let b = Bracket::parse("w=0.8:2.0").unwrap();
        assert_eq!((b.name.as_str(), b.lo, b.hi), ("w", 0.8, 2.0));
        assert!(Bracket::parse("w=2:1").is_err());
        assert!(Bracket::parse("w=1").is_err());
        assert!(Bracket::parse("=1:2").is_err());
        assert!(Bracket::parse("w=a:2").is_err());
        assert!(Bracket::parse("w=1:inf").is_err());
    }
}
