//! Circuit values of a capacitance matrix: capacitors between conductors and to the reference.
//!
//! From the Maxwell matrix M (entry (i, j): charge on i with j at 1 V, every other conductor
//! at 0 V) a lumped circuit with one node per fixed-potential conductor and a reference node
//! (everything held at the reference: grounded and fixed-potential sides) holds
//! - a mutual capacitor between i and j (i < j) of value -(M_ij + M_ji) / 2,
//! - a capacitor from i to the reference of value M_ii + sum over j != i of (M_ij + M_ji) / 2,
//!
//! so that the circuit's own Maxwell matrix is the symmetric part of M, with the diagonal
//! exact (common practice of circuit extraction). Floating conductors are folded into M
//! already and get no node.
//!
//! Invariants: values of a solution are whole-part farads: a planar matrix (F/m) is
//! multiplied by the depth, an axisymmetric one (whole body) taken as it is, and a drawn part
//! that symmetry sides halve is unfolded into the whole ([`crate::unfold`]); negative values
//! are kept and reported as warnings.

use crate::design::Mode;
use crate::study::Solution;
use crate::unfold::Unfolding;
use crate::warning::Warning;

/// Capacitors equivalent to a Maxwell matrix.
#[derive(Clone, Debug, PartialEq)]
pub struct Circuit {
    /// Conductor names in matrix order (one node each).
    pub names: Vec<String>,
    /// Capacitance of each conductor to the reference node.
    pub to_reference: Vec<f64>,
    /// Mutual capacitance `(i, j, value)` of every pair i < j, in row order.
    pub mutual: Vec<(usize, usize, f64)>,
    /// Negative values (a matrix not diagonally dominant, or shielded conductors).
    pub warnings: Vec<Warning>,
}

/// What the values of a solution's circuit stand for.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub enum WholePart {
    /// A planar cross-section's F/m times the depth, m.
    Planar {
        /// Out-of-plane length, m.
        depth: f64,
    },
    /// An axisymmetric body: whole-body farads as solved.
    Axisymmetric,
}

/// The circuit of a solved design, in whole-part farads.
#[derive(Clone, Debug, PartialEq)]
pub struct SolutionCircuit {
    /// The capacitors, F.
    pub circuit: Circuit,
    /// How the values were made whole-part.
    pub whole_part: WholePart,
    /// Floating conductors, folded into the matrix (no node).
    pub floating: Vec<String>,
    /// The mirror sides the drawn part was unfolded across (the values include the images).
    pub unfolding: Unfolding,
}

/// Why a solution has no circuit. `Display` renders the code, for logs; the command line
/// words it for users.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub enum NoCircuit {
    /// A planar result is per metre of depth; the design gives no depth.
    NeedsDepth,
    /// No conductor has a fixed potential, so there is no matrix.
    NoConductors,
}

impl NoCircuit {
    /// The stable code of this reason (lower case words joined by `-`, never renamed or
    /// reused).
    pub fn code(&self) -> &'static str {
        match self {
            NoCircuit::NeedsDepth => "needs-depth",
            NoCircuit::NoConductors => "no-fixed-conductor",
        }
    }
}

impl std::fmt::Display for NoCircuit {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}: {self:?}", self.code())
    }
}

impl std::error::Error for NoCircuit {}

/// Whether a design of this mode and depth can have a circuit, before anything is solved.
pub fn exportable(mode: Mode, depth: Option<f64>) -> Result<(), NoCircuit> {
    match (mode, depth) {
        (Mode::Planar, None) => Err(NoCircuit::NeedsDepth),
        _ => Ok(()),
    }
}

/// The capacitors of a Maxwell matrix (any unit; the circuit's values have the same).
///
/// Panics when `maxwell` is not square of the size of `names` (a programmer error).
pub fn from_maxwell(names: &[String], maxwell: &[Vec<f64>]) -> Circuit {
    let n = names.len();
    assert!(
        maxwell.len() == n && maxwell.iter().all(|r| r.len() == n),
        "Maxwell matrix must be {n} x {n}"
    );
    let m = maxwell;
    let mutual = |i: usize, j: usize| -0.5 * (m[i][j] + m[j][i]);
    let mut warnings = Vec::new();
    let to_reference: Vec<f64> = (0..n)
        .map(|i| {
            let v = m[i][i]
                + (0..n)
                    .filter(|&j| j != i)
                    .map(|j| -mutual(i, j))
                    .sum::<f64>();
            if v < 0.0 {
                warnings.push(Warning::NegativeGroundCapacitance {
                    conductor: names[i].clone(),
                    value: v,
                });
            }
            v
        })
        .collect();
    let mut pairs = Vec::new();
    for i in 0..n {
        for j in i + 1..n {
            let v = mutual(i, j);
            if v < 0.0 {
                warnings.push(Warning::NegativeMutualCapacitance {
                    a: names[i].clone(),
                    b: names[j].clone(),
                    value: v,
                });
            }
            pairs.push((i, j, v));
        }
    }
    Circuit {
        names: names.to_vec(),
        to_reference,
        mutual: pairs,
        warnings,
    }
}

/// The circuit of a solved design: planar matrices scaled by `depth` (m) to whole-part
/// farads, axisymmetric ones (whole-body already) as they are; both scaled by the
/// `unfolding` of the design's mirror sides (each conductor joined with its images).
pub fn for_solution(
    sol: &Solution,
    depth: Option<f64>,
    unfolding: &Unfolding,
) -> Result<SolutionCircuit, NoCircuit> {
    exportable(sol.mode, depth)?;
    let cap = &sol.capacitance;
    if cap.names.is_empty() {
        return Err(NoCircuit::NoConductors);
    }
    let (scale, whole_part) = match (sol.mode, depth) {
        (Mode::Planar, Some(d)) => (d, WholePart::Planar { depth: d }),
        _ => (1.0, WholePart::Axisymmetric),
    };
    let scale = scale * unfolding.factor;
    let maxwell: Vec<Vec<f64>> = cap
        .matrix
        .iter()
        .map(|r| r.iter().map(|v| v * scale).collect())
        .collect();
    Ok(SolutionCircuit {
        circuit: from_maxwell(&cap.names, &maxwell),
        whole_part,
        floating: sol
            .conductors
            .iter()
            .filter(|c| c.floating)
            .map(|c| c.name.clone())
            .collect(),
        unfolding: unfolding.clone(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn two_conductors_give_their_ground_and_mutual_capacitors() {
        let names = vec!["a".to_string(), "b".to_string()];
        let m = vec![vec![3.0e-12, -1.0e-12], vec![-1.0e-12, 5.0e-12]];
        let c = from_maxwell(&names, &m);
        assert!((c.to_reference[0] - 2e-12).abs() < 1e-27);
        assert!((c.to_reference[1] - 4e-12).abs() < 1e-27);
        assert_eq!(c.mutual, [(0, 1, 1e-12)]);
        assert!(c.warnings.is_empty());
    }

    #[test]
    fn the_circuit_reproduces_the_symmetric_part_of_the_matrix() {
        let names: Vec<String> = ["a", "b", "c"].iter().map(|s| s.to_string()).collect();
        let m = vec![
            vec![4.0, -1.0, -0.5],
            vec![-1.2, 5.0, -2.0],
            vec![-0.5, -2.0, 3.0],
        ];
        let c = from_maxwell(&names, &m);
        // Nodal matrix of the circuit: diagonal = to_reference + attached mutuals.
        for i in 0..3 {
            let attached: f64 = c
                .mutual
                .iter()
                .filter(|p| p.0 == i || p.1 == i)
                .map(|p| p.2)
                .sum();
            assert!((c.to_reference[i] + attached - m[i][i]).abs() < 1e-12);
        }
        for &(i, j, v) in &c.mutual {
            assert!((v + 0.5 * (m[i][j] + m[j][i])).abs() < 1e-12);
        }
    }

    #[test]
    fn negative_values_are_kept_and_warned() {
        let names = vec!["a".to_string(), "b".to_string()];
        let m = vec![vec![1.0, 2.0], vec![2.0, 4.0]];
        let c = from_maxwell(&names, &m);
        assert_eq!(c.to_reference, [3.0, 6.0]);
        assert_eq!(c.mutual, [(0, 1, -2.0)]);
        assert_eq!(
            c.warnings,
            [Warning::NegativeMutualCapacitance {
                a: "a".into(),
                b: "b".into(),
                value: -2.0
            }]
        );
        let g = from_maxwell(&names, &[vec![1.0, -2.0], vec![-2.0, 4.0]]);
        assert!(matches!(
            g.warnings.as_slice(),
            [Warning::NegativeGroundCapacitance { conductor, .. }] if conductor == "a"
        ));
    }

    #[test]
    fn a_planar_design_needs_its_depth() {
        assert_eq!(exportable(Mode::Planar, None), Err(NoCircuit::NeedsDepth));
        assert_eq!(exportable(Mode::Planar, Some(0.01)), Ok(()));
        assert_eq!(exportable(Mode::Axisymmetric, None), Ok(()));
    }
}
