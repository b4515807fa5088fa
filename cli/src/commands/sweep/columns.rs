//! A sweep's columns: every quantity `solve` reports, named with its unit, and one point's
//! row of them.
//!
//! The first columns are those of the contract, in their order (`point`, the varied
//! parameters, every `C[a,b]`, `peak_field (V/m)`, `converged`); the quantities added later
//! follow them, so that no column moves or is renamed: the energy, every conductor's charge,
//! its estimated error and its force, the potential of each floating conductor, each probe's
//! potential and field, the peak field's place, material, singular flag and estimated error,
//! the worst margin and its place, and the estimated error of every capacitance entry.
//!
//! Invariants: the columns are a function of the design read without overrides (conductor,
//! probe and fixed-conductor names); a point whose design lacks a named item leaves its cells
//! empty; a cell without a value (no estimate, no strength) is empty; every column but
//! `point`, `converged`, the parameters, materials and flags carries its SI unit in
//! parentheses; a varied parameter's column is its name with its unit in parentheses when it
//! has one (declared in `[parameter_units]`, or the file's length unit for a parameter named
//! only in lengths), its values in the design's own units.

use crate::outdir::num;
use fieldgrid_solver::design::{Design, Drive, Mode};
use fieldgrid_solver::study::Solution;

/// The column of a varied parameter: its name, then its unit in parentheses when it has one.
pub fn varied_column(name: &str, unit: &str) -> String {
    if unit.is_empty() {
        name.to_string()
    } else {
        format!("{name} ({unit})")
    }
}

/// The names a sweep's columns are made of, from the design read without overrides.
#[derive(Clone, Debug, PartialEq)]
pub struct Layout {
    /// Planar (per metre) or axisymmetric (whole body).
    pub mode: Mode,
    /// Fixed-potential conductors, in matrix order.
    pub fixed: Vec<String>,
    /// Every conductor, in file order.
    pub conductors: Vec<String>,
    /// Floating conductors.
    pub floating: Vec<String>,
    /// Probes.
    pub probes: Vec<String>,
}

impl Layout {
    /// The layout of a design.
    pub fn of(design: &Design) -> Layout {
        let names = |floating: Option<bool>| {
            design
                .conductors
                .iter()
                .filter(|c| floating.is_none_or(|f| f == matches!(c.drive, Drive::Floating)))
                .map(|c| c.name.clone())
                .collect()
        };
        Layout {
            mode: design.mode,
            fixed: names(Some(false)),
            conductors: names(None),
            floating: names(Some(true)),
            probes: design.probes.iter().map(|p| p.name.clone()).collect(),
        }
    }

    fn units(&self) -> (&'static str, &'static str, &'static str, &'static str) {
        match self.mode {
            Mode::Axisymmetric => ("F", "C", "N", "J"),
            _ => ("F/m", "C/m", "N/m", "J/m"),
        }
    }

    /// Every column, the varied parameters' names given.
    pub fn columns(&self, varied: &[String]) -> Vec<String> {
        let (cu, qu, fu, eu) = self.units();
        let mut c = vec!["point".to_string()];
        c.extend(varied.iter().cloned());
        for a in &self.fixed {
            for b in &self.fixed {
                c.push(format!("C[{a},{b}] ({cu})"));
            }
        }
        c.push("peak_field (V/m)".into());
        c.push("converged".into());
        c.push(format!("energy ({eu})"));
        for n in &self.conductors {
            c.push(format!("Q[{n}] ({qu})"));
            c.push(format!("Q[{n}] error ({qu})"));
            if self.mode == Mode::Axisymmetric {
                c.push(format!("F[{n}] along the axis ({fu})"));
            } else {
                c.push(format!("F[{n}] x ({fu})"));
                c.push(format!("F[{n}] y ({fu})"));
            }
        }
        for n in &self.floating {
            c.push(format!("V[{n}] (V)"));
        }
        for n in &self.probes {
            c.push(format!("probe[{n}] potential (V)"));
            c.push(format!("probe[{n}] Ex (V/m)"));
            c.push(format!("probe[{n}] Ey (V/m)"));
        }
        for k in ["x (m)", "y (m)", "material", "singular", "error (V/m)"] {
            c.push(format!("peak_field {k}"));
        }
        for k in [
            "margin",
            "x (m)",
            "y (m)",
            "material",
            "field (V/m)",
            "error (V/m)",
            "strength (V/m)",
            "singular",
        ] {
            c.push(format!("worst_margin {k}"));
        }
        for a in &self.fixed {
            for b in &self.fixed {
                c.push(format!("C[{a},{b}] error ({cu})"));
            }
        }
        c
    }

    /// One point's row: its index, the varied values as written, then the quantities of
    /// `sol` in the order of [`Layout::columns`].
    pub fn row(&self, point: usize, values: &[String], sol: &Solution) -> Vec<String> {
        let opt = |v: Option<f64>| v.map(num).unwrap_or_default();
        let mut r = vec![point.to_string()];
        r.extend(values.iter().cloned());
        let cap = &sol.capacitance;
        let entry = |m: Option<&Vec<Vec<f64>>>, a: &str, b: &str| {
            let i = cap.names.iter().position(|n| n == a);
            let j = cap.names.iter().position(|n| n == b);
            opt(m.zip(i.zip(j)).map(|(m, (i, j))| m[i][j]))
        };
        for a in &self.fixed {
            for b in &self.fixed {
                r.push(entry(Some(&cap.matrix), a, b));
            }
        }
        let peak = sol.peak_field.as_ref();
        r.push(opt(peak.map(|h| h.magnitude)));
        r.push(sol.solve.converged.to_string());
        r.push(num(sol.energy));
        for n in &self.conductors {
            let c = sol.conductors.iter().find(|c| &c.name == n);
            r.push(opt(c.map(|c| c.charge)));
            r.push(opt(c.and_then(|c| c.charge_error)));
            if self.mode == Mode::Axisymmetric {
                r.push(opt(c.map(|c| c.force[1])));
            } else {
                r.push(opt(c.map(|c| c.force[0])));
                r.push(opt(c.map(|c| c.force[1])));
            }
        }
        for n in &self.floating {
            let c = sol.conductors.iter().find(|c| &c.name == n);
            r.push(opt(c.map(|c| c.potential)));
        }
        for n in &self.probes {
            let p = sol.probes.iter().find(|p| &p.name == n);
            let finite = |v: f64| v.is_finite().then_some(v);
            r.push(opt(p.map(|p| p.potential)));
            r.push(opt(p.and_then(|p| finite(p.field[0]))));
            r.push(opt(p.and_then(|p| finite(p.field[1]))));
        }
        r.push(opt(peak.map(|h| h.x)));
        r.push(opt(peak.map(|h| h.y)));
        r.push(peak.map(|h| h.material.clone()).unwrap_or_default());
        r.push(peak.map(|h| h.singular.to_string()).unwrap_or_default());
        r.push(opt(peak.and_then(|h| h.error_estimate)));
        let w = sol.worst_margin.as_ref();
        r.push(opt(w.and_then(|h| h.margin)));
        r.push(opt(w.map(|h| h.x)));
        r.push(opt(w.map(|h| h.y)));
        r.push(w.map(|h| h.material.clone()).unwrap_or_default());
        r.push(opt(w.map(|h| h.magnitude)));
        r.push(opt(w.and_then(|h| h.error_estimate)));
        r.push(opt(w.and_then(|h| h.strength)));
        r.push(w.map(|h| h.singular.to_string()).unwrap_or_default());
        for a in &self.fixed {
            for b in &self.fixed {
                r.push(entry(cap.error_estimate.as_ref(), a, b));
            }
        }
        r
    }
}

/// The index of the `converged` column (its place is fixed by the contract's first columns).
pub fn converged_column(columns: &[String]) -> Option<usize> {
    columns.iter().position(|c| c == "converged")
}
