//! The quantities two revisions are compared by and the judgement of each change.
//!
//! The compared quantities of a [`Summary`] are every capacitance entry `C[a,b]`, every
//! conductor's charge `Q[a]` and force `F[a]` (planar: its magnitude; axisymmetric: along
//! the axis), the potential `V[a]` of every floating conductor, the energy and the peak
//! field; quantities are matched by name, and one present on one side only counts as a
//! change.
//!
//! Invariants: capacitance entries and charges are compared by magnitude (a coupling, negative
//! in the Maxwell matrix, that grows reads as growth: change |new| - |base|), other quantities
//! as signed values; a sign change counts as the whole difference. The relative change is the
//! change over |base| (zero when both are zero, infinite when only the base is zero). A
//! quantity is beyond tolerance when |relative change| > the relative tolerance and |change|
//! exceeds the absolute tolerance of its unit (when given); the net charge of a floating
//! conductor, zero by definition, is never beyond tolerance.

use crate::error::Failure;
use crate::summary::Summary;
use serde::Serialize;

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
                "--abs-tol {g}: expected UNIT=X with UNIT one of {} and X a number >= 0 in \
                 that unit (e.g. --abs-tol F/m=1e-15)",
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

    #[test]
    fn a_refused_absolute_tolerance_reads_as_one_sentence() {
        let e = parse_abs_tol(&["ohm=1".to_string()]).unwrap_err();
        assert!(
            e.message
                .contains("a number >= 0 in that unit (e.g. --abs-tol F/m=1e-15)"),
            "{}",
            e.message
        );
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
