//! The results of `--sensitivity`, `--tolerance`, `--vertices` and `--monte-carlo` as they
//! are written: summary.json `sensitivities`, `sensitivity_errors`, `sensitivity_steps`,
//! `tolerances` and `perturbed_solves`; `sensitivities.csv`, `tolerances.csv`,
//! `monte_carlo.csv` and `monte_carlo_statistics.csv`; and the lines printed after the
//! report.
//!
//! Invariants: a missing or non-finite number is `null` in JSON and an empty CSV cell,
//! never a made-up value; the tables hold one row per quantity (and parameter).

use super::super::monte_carlo;
use super::{Analysis, MonteCarlo, Named};
use crate::error::Failure;
use crate::outdir::{csv_bytes, num, OutDir};
use fieldgrid_solver::tolerance;
use serde_json::{json, Map, Value};

fn finite(v: f64) -> Value {
    if v.is_finite() {
        json!(v)
    } else {
        Value::Null
    }
}

impl Analysis {
    /// summary.json `sensitivities`: parameter -> quantity -> derivative.
    pub fn sensitivities_json(&self) -> Value {
        self.by_parameter(&self.derivatives)
    }

    /// summary.json `sensitivity_errors`: parameter -> quantity -> error estimate.
    pub fn errors_json(&self) -> Value {
        self.by_parameter(&self.errors)
    }

    /// parameter -> quantity -> value, from one row of values per parameter.
    fn by_parameter(&self, rows: &[Vec<f64>]) -> Value {
        let mut out = Map::new();
        for (name, row) in self.parameters.iter().zip(rows) {
            let row: Map<String, Value> = self
                .quantities
                .iter()
                .zip(row)
                .map(|(q, &d)| (q.name.clone(), finite(d)))
                .collect();
            out.insert(name.clone(), Value::Object(row));
        }
        Value::Object(out)
    }

    /// summary.json `sensitivity_steps`: parameter -> step (design units).
    pub fn steps_json(&self) -> Value {
        Value::Object(
            self.parameters
                .iter()
                .zip(&self.steps)
                .map(|(n, &h)| (n.clone(), json!(h)))
                .collect(),
        )
    }

    /// summary.json `tolerances`, when tolerances were given.
    pub fn tolerances_json(&self, tolerances: &[(String, f64)]) -> Option<Value> {
        if self.spreads.is_empty() {
            return None;
        }
        let mut quantities = Map::new();
        for (q, s) in self.quantities.iter().zip(&self.spreads) {
            let mut v = json!({
                "unit": q.unit,
                "nominal": s.nominal,
                "worst_low": finite(s.low),
                "worst_high": finite(s.high),
                "rss": finite(s.rss),
                "dominant": s.dominant.map(|i| tolerances[i].0.clone()),
            });
            let i = self.quantities.iter().position(|x| x.name == q.name);
            if let Some(Some(st)) = self.vertices.as_ref().zip(i).map(|(v, i)| &v[i]) {
                v["vertices"] = json!({ "count": st.count, "min": st.min, "max": st.max });
            }
            if let Some(mc) = &self.monte_carlo {
                if let Some((_, Some(st))) = i.map(|i| &mc.stats[i]) {
                    v["monte_carlo"] = json!({
                        "count": st.count, "mean": st.mean, "std": st.std,
                        "min": st.min, "max": st.max,
                    });
                }
            }
            quantities.insert(q.name.clone(), v);
        }
        let mut out = json!({
            "method": "linear worst case and root-sum-square from the sensitivities, each widened by its error estimate; \
                       each parameter within +/- its tolerance",
            "parameters": tolerances.iter().map(|(n, t)| (n.clone(), json!(t)))
                .collect::<Map<String, Value>>(),
            "quantities": quantities,
        });
        if let Some(MonteCarlo { count, seed, .. }) = &self.monte_carlo {
            out["monte_carlo"] = json!({ "count": count, "seed": seed,
                "distribution": "uniform within +/- the tolerance" });
        }
        Some(out)
    }

    /// sensitivities.csv: one row per quantity and parameter.
    pub fn sensitivities_csv(&self) -> Vec<u8> {
        let mut rows = Vec::new();
        for (qi, q) in self.quantities.iter().enumerate() {
            for (p, name) in self.parameters.iter().enumerate() {
                let d = self.derivatives[p][qi];
                let e = self.errors[p][qi];
                rows.push(vec![
                    q.name.clone(),
                    q.unit.clone(),
                    name.clone(),
                    num(self.values[p]),
                    num(self.steps[p]),
                    if d.is_finite() { num(d) } else { String::new() },
                    if e.is_finite() { num(e) } else { String::new() },
                ]);
            }
        }
        csv_bytes(
            &[
                "quantity",
                "unit",
                "parameter",
                "parameter value",
                "step",
                "derivative (unit per parameter unit)",
                "error estimate (unit per parameter unit)",
            ],
            rows,
        )
    }

    /// tolerances.csv: one row per quantity.
    pub fn tolerances_csv(&self, tolerances: &[(String, f64)]) -> Vec<u8> {
        let mc = self.monte_carlo.as_ref();
        let rows = self.quantities.iter().enumerate().map(|(i, q)| {
            let s = &self.spreads[i];
            let st = mc.and_then(|m| m.stats[i].1.as_ref());
            let opt = |f: fn(&tolerance::Stats) -> f64| st.map(|s| num(f(s))).unwrap_or_default();
            let corners = self.vertices.as_ref().and_then(|v| v[i].as_ref());
            let corner =
                |f: fn(&tolerance::Stats) -> f64| corners.map(|s| num(f(s))).unwrap_or_default();
            vec![
                q.name.clone(),
                q.unit.clone(),
                num(s.nominal),
                num(s.low),
                num(s.high),
                num(s.rss),
                s.dominant
                    .map(|d| tolerances[d].0.clone())
                    .unwrap_or_default(),
                opt(|s| s.mean),
                opt(|s| s.std),
                opt(|s| s.min),
                opt(|s| s.max),
                corner(|s| s.min),
                corner(|s| s.max),
            ]
        });
        csv_bytes(
            &[
                "quantity",
                "unit",
                "nominal",
                "worst case low",
                "worst case high",
                "rss",
                "dominant parameter",
                "monte carlo mean",
                "monte carlo std",
                "monte carlo min",
                "monte carlo max",
                "vertex min",
                "vertex max",
            ],
            rows,
        )
    }

    /// Writes the CSV files and puts the JSON into `summary`.
    pub fn attach(&self, summary: &mut crate::summary::Summary, tolerances: &[(String, f64)]) {
        summary.sensitivities = Some(self.sensitivities_json());
        summary.sensitivity_steps = Some(self.steps_json());
        summary.sensitivity_errors = Some(self.errors_json());
        summary.tolerances = self.tolerances_json(tolerances);
        summary.perturbed_solves = Some(json!({
            "studies": self.solves.studies,
            "warm_starts": self.solves.warm_starts,
            "iterations": self.solves.iterations,
        }));
        summary.solver.converged &= self.converged;
    }

    /// Writes sensitivities.csv (and tolerances.csv when tolerances were given; the Monte
    /// Carlo samples and their statistics when asked for).
    pub fn write(&self, out: &OutDir, tolerances: &[(String, f64)]) -> Result<(), Failure> {
        out.write("sensitivities.csv", &self.sensitivities_csv())?;
        if !self.spreads.is_empty() {
            out.write("tolerances.csv", &self.tolerances_csv(tolerances))?;
        }
        if let Some(mc) = &self.monte_carlo {
            let header: Vec<&str> = mc.columns.iter().map(String::as_str).collect();
            out.write(
                "monte_carlo.csv",
                &csv_bytes(&header, mc.rows.values().cloned()),
            )?;
            out.write(
                "monte_carlo_statistics.csv",
                &monte_carlo::statistics_csv(&mc.stats),
            )?;
        }
        Ok(())
    }

    /// The lines printed after the report.
    pub fn report(&self, tolerances: &[(String, f64)]) -> String {
        use std::fmt::Write;
        let mut s = String::new();
        let shown = |q: &Named| !q.name.starts_with("F[") || q.value != 0.0;
        let _ = writeln!(
            s,
            "sensitivities (per design unit, +/- estimated error; steps {}):",
            self.parameters
                .iter()
                .zip(&self.steps)
                .map(|(n, h)| format!("{n} {h:.3e}"))
                .collect::<Vec<_>>()
                .join(", ")
        );
        for (qi, q) in self.quantities.iter().enumerate().filter(|(_, q)| shown(q)) {
            let d: Vec<String> = self
                .parameters
                .iter()
                .enumerate()
                .map(|(p, n)| {
                    format!(
                        "d/d{n} {:11.4e} +/- {:.1e}",
                        self.derivatives[p][qi], self.errors[p][qi]
                    )
                })
                .collect();
            let _ = writeln!(s, "  {:>16}  {}", q.name, d.join("  "));
        }
        if !self.spreads.is_empty() {
            let _ = writeln!(
                s,
                "tolerances ({}): worst case (linear), RSS, dominant parameter{}:",
                tolerances
                    .iter()
                    .map(|(n, t)| format!("{n} +/- {t}"))
                    .collect::<Vec<_>>()
                    .join(", "),
                if self.monte_carlo.is_some() {
                    ", Monte Carlo mean and std"
                } else {
                    ""
                }
            );
            for (qi, q) in self.quantities.iter().enumerate().filter(|(_, q)| shown(q)) {
                let sp = &self.spreads[qi];
                let mc = self
                    .monte_carlo
                    .as_ref()
                    .and_then(|m| m.stats[qi].1.as_ref())
                    .map(|st| format!("  mc {:.4e} +/- {:.2e}", st.mean, st.std))
                    .unwrap_or_default();
                let corners = self
                    .vertices
                    .as_ref()
                    .and_then(|v| v[qi].as_ref())
                    .map(|st| format!("  corners {:.4e} .. {:.4e}", st.min, st.max))
                    .unwrap_or_default();
                let _ = writeln!(
                    s,
                    "  {:>16}  {:.4e} .. {:.4e}  rss {:.2e}  {}{mc}{corners}",
                    q.name,
                    sp.low,
                    sp.high,
                    sp.rss,
                    sp.dominant.map(|d| tolerances[d].0.as_str()).unwrap_or("-"),
                );
            }
            let _ = writeln!(
                s,
                "caution: tolerance spreads are first-order estimates from discretised \
                 solves; acceptance follows the applicable standards and licensed \
                 engineering practice."
            );
        }
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::commands::evaluate::Solves;

    fn named(name: &str, value: f64) -> Named {
        Named {
            name: name.into(),
            unit: "F/m".into(),
            value,
            error: None,
        }
    }

    #[test]
    fn the_tables_hold_one_row_per_quantity_and_parameter() {
        let a = Analysis {
            parameters: vec!["w".into(), "h".into()],
            values: vec![1.0, 2.0],
            steps: vec![0.01, 0.02],
            quantities: vec![named("C[a,a]", 1e-10), named("energy", 2e-10)],
            derivatives: vec![vec![3e-12, f64::NAN], vec![-1e-12, 2e-12]],
            errors: vec![vec![1e-14, f64::NAN], vec![1e-14, 1e-14]],
            spreads: vec![
                tolerance::spread(1e-10, &[3e-12], &[1e-14], &[0.1]),
                tolerance::spread(2e-10, &[f64::NAN], &[0.0], &[0.1]),
            ],
            monte_carlo: None,
            vertices: None,
            converged: true,
            solves: Solves::default(),
        };
        let csv = String::from_utf8(a.sensitivities_csv()).unwrap();
        assert_eq!(csv.lines().count(), 5, "{csv}");
        let j = a.sensitivities_json();
        assert_eq!(j["w"]["C[a,a]"], json!(3e-12));
        assert_eq!(j["w"]["energy"], Value::Null);
        let t = a.tolerances_json(&[("w".into(), 0.1)]).unwrap();
        assert_eq!(t["quantities"]["C[a,a]"]["dominant"], json!("w"));
        assert_eq!(t["quantities"]["energy"]["rss"], Value::Null);
    }
}
