//! Circuit export: the capacitance matrix as a SPICE subcircuit (`capacitance.cir`).
//!
//! One port node per fixed-potential conductor, plus the global ground node `0`, which stands
//! for everything held at the reference: the grounded (and fixed-potential) sides of the
//! domain. The capacitor values come from [`fieldgrid_solver::circuit`] (whole-part farads);
//! this module writes them as SPICE text.
//!
//! Invariants: node and element names are unique in SPICE's case-insensitive sense; an
//! element whose value is exactly zero is left out; every number is written in a form that
//! reads back to the same `f64`.

use fieldgrid_solver::circuit::{self, Circuit, NoCircuit, WholePart};
use fieldgrid_solver::warning::Warning;
use std::fmt::Write;

/// A subcircuit ready to be written, and what the user should know about it.
#[derive(Clone, Debug, PartialEq)]
pub struct Netlist {
    /// The file text.
    pub text: String,
    /// Remarks for the user (negative element values).
    pub warnings: Vec<Warning>,
}

/// What to put into the subcircuit.
#[derive(Clone, Debug)]
pub struct Model<'a> {
    /// Subcircuit name (sanitised here).
    pub name: &'a str,
    /// The capacitors, F (whole part).
    pub circuit: &'a Circuit,
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
pub fn subcircuit(model: &Model) -> Netlist {
    let c = model.circuit;
    let n = c.names.len();
    let nodes = node_names(&c.names);
    let sub = identifier(model.name);
    let mut t = String::new();
    for c in model.comments {
        let _ = writeln!(t, "* {c}");
    }
    let _ = writeln!(
        t,
        "* nodes: 0 = reference (grounded and fixed-potential sides)"
    );
    for (k, (c, node)) in c.names.iter().zip(&nodes).enumerate() {
        let _ = writeln!(t, "*   port {} = {node}: conductor \"{c}\"", k + 1);
    }
    let _ = writeln!(t, ".SUBCKT {sub} {}", nodes.join(" "));
    let _ = writeln!(t, "* capacitance to the reference node, F");
    for (i, &v) in c.to_reference.iter().enumerate() {
        if v != 0.0 {
            let _ = writeln!(t, "CG{} {} 0 {v:e}", i + 1, nodes[i]);
        }
    }
    if n > 1 {
        let _ = writeln!(t, "* mutual capacitances between conductors, F");
    }
    for &(i, j, v) in &c.mutual {
        if v != 0.0 {
            let _ = writeln!(t, "CM{}_{} {} {} {v:e}", i + 1, j + 1, nodes[i], nodes[j]);
        }
    }
    let _ = writeln!(t, ".ENDS {sub}");
    Netlist {
        text: t,
        warnings: c.warnings.clone(),
    }
}

/// The sentence for the user when a solution has no circuit export.
pub fn no_export(why: NoCircuit) -> &'static str {
    match why {
        NoCircuit::NeedsDepth => {
            "capacitance.cir needs `depth`: a planar result is per metre of depth, so add \
             `depth = ...` (the out-of-plane length, in the design's unit) to the design"
        }
        NoCircuit::NoConductors => {
            "capacitance.cir not written: no conductor has a fixed potential"
        }
        _ => "capacitance.cir not written",
    }
}

/// The subcircuit of a solved design in whole-part farads
/// ([`fieldgrid_solver::circuit::for_solution`]): a drawn half is unfolded across its
/// symmetry sides.
pub fn for_solution(
    sol: &fieldgrid_solver::study::Solution,
    design: &fieldgrid_solver::design::Design,
    subcircuit_name: &str,
    source: &str,
) -> Result<Netlist, NoCircuit> {
    let unfolding = fieldgrid_solver::unfold::unfolding(design);
    let part = circuit::for_solution(sol, design.depth, &unfolding)?;
    let how = match part.whole_part {
        WholePart::Planar { depth: d } => {
            format!("planar cross-section, F/m times depth {d:e} m: whole-part farads")
        }
        _ => "axisymmetric body: whole-body farads".to_string(),
    };
    let mut comments = vec![
        format!(
            "capacitance model of {source}, written by fieldgrid {}",
            env!("CARGO_PKG_VERSION")
        ),
        how,
        "mutual C_ij = -C_ij (Maxwell); to the reference C_i0 = sum over j of C_ij (Maxwell)"
            .to_string(),
    ];
    if !unfolding.is_whole() {
        comments.push(format!(
            "the whole part: the drawn part unfolded across its symmetry side{} {} (values {} \
             times the drawn part's)",
            if unfolding.sides.len() > 1 { "s" } else { "" },
            unfolding.sides.join(", "),
            unfolding.factor
        ));
    }
    if !unfolding.joined.is_empty() {
        comments.push(format!(
            "joined with their mirror images (one port each, driven in phase): {}",
            unfolding.joined.join(", ")
        ));
    }
    if !part.floating.is_empty() {
        comments.push(format!(
            "floating conductors folded into the matrix (no node): {}",
            part.floating.join(", ")
        ));
    }
    Ok(subcircuit(&Model {
        name: subcircuit_name,
        circuit: &part.circuit,
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
            circuit: &circuit::from_maxwell(&names, &m),
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
