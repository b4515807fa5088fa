//! Circuit export: the capacitance matrix as a SPICE subcircuit (`capacitance.cir`).
//!
//! One port node per fixed-potential conductor, plus the global ground node `0`, which stands
//! for everything held at the reference: the grounded (and fixed-potential) sides of the
//! domain. From the Maxwell matrix M (entry (i, j): charge on i with j at 1 V, every other
//! conductor at 0 V) the circuit holds
//! - a mutual capacitor between i and j (i < j) of value -(M_ij + M_ji) / 2,
//! - a ground capacitor between i and 0 of value M_ii + sum over j != i of (M_ij + M_ji) / 2,
//!
//! so that the circuit's own Maxwell matrix is the symmetric part of M, with the diagonal
//! exact. Floating conductors are folded into M already and get no node.
//!
//! Invariants: values are farads (a planar matrix in F/m is multiplied by the depth before it
//! comes here); node and element names are unique in SPICE's case-insensitive sense; an
//! element whose value is exactly zero is left out; every number is written in a form that
//! reads back to the same `f64`.

use std::fmt::Write;

/// A subcircuit ready to be written, and what the user should know about it.
#[derive(Clone, Debug, PartialEq)]
pub struct Netlist {
    /// The file text.
    pub text: String,
    /// Remarks for the user (negative element values).
    pub warnings: Vec<String>,
}

/// What to put into the subcircuit.
#[derive(Clone, Debug)]
pub struct Model<'a> {
    /// Subcircuit name (sanitised here).
    pub name: &'a str,
    /// Conductor names in matrix order.
    pub conductors: &'a [String],
    /// Maxwell capacitance matrix, F (whole part).
    pub maxwell: &'a [Vec<f64>],
    /// Comment lines placed at the top (without the leading `*`).
    pub comments: &'a [String],
}

/// A SPICE identifier from any name: ASCII letters, digits and `_`, never empty, never a
/// plain number (a number would be a node of its own, and `0` is ground).
pub fn identifier(name: &str) -> String {
    let mut s: String = name
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '_' {
                c
            } else {
                '_'
            }
        })
        .collect();
    if s.is_empty() || s.chars().all(|c| c.is_ascii_digit()) {
        s.insert(0, 'n');
    }
    s
}

/// Node names for the conductors: sanitised and made unique ignoring case (SPICE folds case).
pub fn node_names(conductors: &[String]) -> Vec<String> {
    let mut used: Vec<String> = Vec::new();
    conductors
        .iter()
        .map(|c| {
            let base = identifier(c);
            let mut name = base.clone();
            let mut k = 2;
            while used.iter().any(|u| u.eq_ignore_ascii_case(&name)) {
                name = format!("{base}_{k}");
                k += 1;
            }
            used.push(name.clone());
            name
        })
        .collect()
}

/// Builds the subcircuit text.
///
/// Panics when `maxwell` is not square of the size of `conductors` (a programmer error).
pub fn subcircuit(model: &Model) -> Netlist {
    let n = model.conductors.len();
    assert!(
        model.maxwell.len() == n && model.maxwell.iter().all(|r| r.len() == n),
        "Maxwell matrix must be {n} x {n}"
    );
    let m = model.maxwell;
    let nodes = node_names(model.conductors);
    let sub = identifier(model.name);
    let mutual = |i: usize, j: usize| -0.5 * (m[i][j] + m[j][i]);
    let mut warnings = Vec::new();
    let mut t = String::new();
    for c in model.comments {
        let _ = writeln!(t, "* {c}");
    }
    let _ = writeln!(
        t,
        "* nodes: 0 = reference (grounded and fixed-potential sides)"
    );
    for (k, (c, node)) in model.conductors.iter().zip(&nodes).enumerate() {
        let _ = writeln!(t, "*   port {} = {node}: conductor \"{c}\"", k + 1);
    }
    let _ = writeln!(t, ".SUBCKT {sub} {}", nodes.join(" "));
    let _ = writeln!(t, "* capacitance to the reference node, F");
    for i in 0..n {
        let v = m[i][i]
            + (0..n)
                .filter(|&j| j != i)
                .map(|j| -mutual(i, j))
                .sum::<f64>();
        if v < 0.0 {
            warnings.push(format!(
                "the capacitance of {} to the reference is negative ({v:e} F): the matrix is not \
                 diagonally dominant there (refine the cell or check the sides)",
                model.conductors[i]
            ));
        }
        if v != 0.0 {
            let _ = writeln!(t, "CG{} {} 0 {v:e}", i + 1, nodes[i]);
        }
    }
    if n > 1 {
        let _ = writeln!(t, "* mutual capacitances between conductors, F");
    }
    for i in 0..n {
        for j in i + 1..n {
            let v = mutual(i, j);
            if v < 0.0 {
                warnings.push(format!(
                    "the mutual capacitance of {} and {} is negative ({v:e} F): they are \
                     shielded from each other and the value is at the level of the \
                     discretisation error",
                    model.conductors[i], model.conductors[j]
                ));
            }
            if v != 0.0 {
                let _ = writeln!(t, "CM{}_{} {} {} {v:e}", i + 1, j + 1, nodes[i], nodes[j]);
            }
        }
    }
    let _ = writeln!(t, ".ENDS {sub}");
    Netlist { text: t, warnings }
}

/// Why a solution has no circuit export.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum NoExport {
    /// A planar result is per metre of depth; the design gives no `depth`.
    NeedsDepth,
    /// No conductor has a fixed potential, so there is no matrix.
    NoConductors,
}

impl NoExport {
    /// The sentence for the user.
    pub fn describe(&self) -> &'static str {
        match self {
            NoExport::NeedsDepth => {
                "capacitance.cir needs `depth`: a planar result is per metre of depth, so add \
                 `depth = ...` (the out-of-plane length, in the design's unit) to the design"
            }
            NoExport::NoConductors => {
                "capacitance.cir not written: no conductor has a fixed potential"
            }
        }
    }
}

/// Whether a design of this mode and depth can be exported, before anything is solved.
pub fn exportable(
    mode: fieldgrid_solver::design::Mode,
    depth: Option<f64>,
) -> Result<(), NoExport> {
    match (mode, depth) {
        (fieldgrid_solver::design::Mode::Planar, None) => Err(NoExport::NeedsDepth),
        _ => Ok(()),
    }
}

/// The subcircuit of a solved design: planar matrices scaled by `depth` (m) to whole-part
/// farads, axisymmetric ones (whole-body already) as they are.
pub fn for_solution(
    sol: &fieldgrid_solver::study::Solution,
    depth: Option<f64>,
    subcircuit_name: &str,
    source: &str,
) -> Result<Netlist, NoExport> {
    use fieldgrid_solver::design::Mode;
    exportable(sol.mode, depth)?;
    let cap = &sol.capacitance;
    if cap.names.is_empty() {
        return Err(NoExport::NoConductors);
    }
    let (scale, how) = match (sol.mode, depth) {
        (Mode::Planar, Some(d)) => (
            d,
            format!("planar cross-section, F/m times depth {d:e} m: whole-part farads"),
        ),
        _ => (1.0, "axisymmetric body: whole-body farads".to_string()),
    };
    let maxwell: Vec<Vec<f64>> = cap
        .matrix
        .iter()
        .map(|r| r.iter().map(|v| v * scale).collect())
        .collect();
    let floating: Vec<&str> = sol
        .conductors
        .iter()
        .filter(|c| c.floating)
        .map(|c| c.name.as_str())
        .collect();
    let mut comments = vec![
        format!(
            "capacitance model of {source}, written by fieldgrid {}",
            env!("CARGO_PKG_VERSION")
        ),
        how,
        "mutual C_ij = -C_ij (Maxwell); to the reference C_i0 = sum over j of C_ij (Maxwell)"
            .to_string(),
    ];
    if !floating.is_empty() {
        comments.push(format!(
            "floating conductors folded into the matrix (no node): {}",
            floating.join(", ")
        ));
    }
    Ok(subcircuit(&Model {
        name: subcircuit_name,
        conductors: &cap.names,
        maxwell: &maxwell,
        comments: &comments,
    }))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn identifiers_are_spice_safe() {
        assert_eq!(identifier("pad 1"), "pad_1");
        assert_eq!(identifier("0"), "n0");
        assert_eq!(identifier(""), "n");
        assert_eq!(identifier("Ü"), "_");
    }

    #[test]
    fn node_names_unique_ignoring_case() {
        let names: Vec<String> = ["Pad", "pad", "pad_2", "a b", "a-b"]
            .iter()
            .map(|s| s.to_string())
            .collect();
        let n = node_names(&names);
        for (i, a) in n.iter().enumerate() {
            for b in &n[i + 1..] {
                assert!(!a.eq_ignore_ascii_case(b), "{a} and {b} clash in {n:?}");
            }
        }
    }

    #[test]
    fn two_conductor_elements() {
        let names = vec!["a".to_string(), "b".to_string()];
        let m = vec![vec![3.0e-12, -1.0e-12], vec![-1.0e-12, 5.0e-12]];
        let net = subcircuit(&Model {
            name: "x",
            conductors: &names,
            maxwell: &m,
            comments: &[],
        });
        let value = |element: &str| -> f64 {
            let line = net.text.lines().find(|l| l.starts_with(element)).unwrap();
            line.split_whitespace().nth(3).unwrap().parse().unwrap()
        };
        assert!(
            net.text.contains("CG1 a 0 ") && net.text.contains("CM1_2 a b "),
            "{}",
            net.text
        );
        assert!((value("CG1") - 2e-12).abs() < 1e-27);
        assert!((value("CG2") - 4e-12).abs() < 1e-27);
        assert_eq!(value("CM1_2"), 1e-12);
        assert!(net.text.contains(".SUBCKT x a b") && net.text.contains(".ENDS x"));
        assert!(net.warnings.is_empty());
    }
}
