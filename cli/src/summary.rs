//! `summary.json`: the contract's keys (version 1) and the extras we add. Serialisable and
//! readable back, so `compare` can take earlier results.

use serde::{Deserialize, Serialize};

/// Summary file format version.
pub const VERSION: u32 = 1;

/// The whole summary.
#[derive(Serialize, Deserialize, Debug, Clone, PartialEq)]
pub struct Summary {
    /// Format version.
    pub version: u32,
    /// fieldgrid version that wrote it.
    #[serde(default)]
    pub tool_version: String,
    /// Hash of the design text.
    #[serde(default)]
    pub design_hash: String,
    /// The design's parameters as used (after `--set`), in file order, in the file's units.
    #[serde(default)]
    pub parameters: Vec<ParameterSummary>,
    /// "planar" or "axisymmetric".
    pub mode: String,
    /// True in planar mode: charges C/m, capacitance F/m, energy J/m, force N/m.
    pub per_length: bool,
    /// Planar depth, m, when the design gives one.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub depth: Option<f64>,
    /// Which values are for the drawn part and which for the whole part.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub part: Option<PartSummary>,
    /// The lattice.
    pub grid: GridSummary,
    /// The linear solves.
    pub solver: SolverSummary,
    /// Per-conductor results.
    pub conductors: Vec<ConductorSummary>,
    /// Maxwell capacitance matrix.
    pub capacitance: CapacitanceSummary,
    /// Stored energy.
    pub energy: f64,
    /// Largest field outside conductors.
    pub peak_field: Option<PeakSummary>,
    /// Ranked hot spots.
    pub hotspots: Vec<HotspotSummary>,
    /// The point of lowest margin, whenever a material has a strength.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub worst_margin: Option<WorstMarginSummary>,
    /// Probe readings.
    pub probes: Vec<ProbeSummary>,
    /// Warnings: the sentences, in order (the contract's v1 shape).
    pub warnings: Vec<String>,
    /// The same warnings with their stable codes, in the same order.
    #[serde(default)]
    pub warning_details: Vec<WarningSummary>,
    /// Transmission-line parameters (the `impedance` command).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub line: Option<serde_json::Value>,
    /// `--sensitivity`: parameter -> quantity -> derivative (SI per design unit).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sensitivities: Option<serde_json::Value>,
    /// `--sensitivity`: parameter -> quantity -> the derivative's error estimate.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sensitivity_errors: Option<serde_json::Value>,
    /// `--sensitivity`: parameter -> difference step (design units).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sensitivity_steps: Option<serde_json::Value>,
    /// `--tolerance`: each quantity's worst case, RSS spread, dominant parameter.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub tolerances: Option<serde_json::Value>,
    /// `--sensitivity`, `--tolerance`: the solves around the nominal design (`studies`,
    /// `warm_starts`: those started from the nominal solves, `iterations` on the fine
    /// lattices).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub perturbed_solves: Option<serde_json::Value>,
    /// `--accuracy`: the target, whether it was met, the rounds, the grid settled on and
    /// each quantity's estimated error.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub accuracy: Option<serde_json::Value>,
}

/// The drawn part and the whole part: symmetry sides mirror the drawn design.
#[derive(Serialize, Deserialize, Debug, Clone, PartialEq)]
pub struct PartSummary {
    /// The mirror sides the drawn part unfolds across (empty: the drawn part is whole).
    pub mirrored_across: Vec<String>,
    /// Whole-part charges, capacitances, energy and forces are this multiple of the drawn
    /// part's.
    pub whole_part_factor: f64,
    /// Conductors apart from a mirror plane: joined with their images in whole-part values.
    pub joined_with_images: Vec<String>,
    /// Values of this summary and the CSV files that are for the drawn part.
    pub drawn_part_values: Vec<String>,
    /// Files whose values are for the whole part.
    pub whole_part_values: Vec<String>,
}

impl PartSummary {
    /// The part of a design.
    pub fn of(design: &fieldgrid_solver::design::Design) -> PartSummary {
        let u = fieldgrid_solver::unfold::unfolding(design);
        let drawn: &[&str] = if u.is_whole() {
            &[]
        } else {
            &[
                "conductors",
                "capacitance",
                "energy",
                "capacitance.csv",
                "surface_charge.csv",
            ]
        };
        PartSummary {
            mirrored_across: u.sides.iter().map(|s| s.to_string()).collect(),
            whole_part_factor: u.factor,
            joined_with_images: u.joined,
            drawn_part_values: drawn.iter().map(|s| s.to_string()).collect(),
            whole_part_values: vec!["capacitance.cir".to_string()],
        }
    }
}

/// One warning: its stable code beside its text.
#[derive(Serialize, Deserialize, Debug, Clone, PartialEq)]
pub struct WarningSummary {
    /// Stable code of the kind of warning (for example `capacitance-error`).
    pub code: String,
    /// The sentence, as in `warnings`.
    pub message: String,
}

/// One design parameter.
#[derive(Serialize, Deserialize, Debug, Clone, PartialEq)]
pub struct ParameterSummary {
    /// Its name in `[parameters]`.
    pub name: String,
    /// Its value, in the design file's units.
    pub value: f64,
}

/// Grid size.
#[derive(Serialize, Deserialize, Debug, Clone, PartialEq)]
pub struct GridSummary {
    /// Nodes along x.
    pub nx: usize,
    /// Nodes along y.
    pub ny: usize,
    /// Cell size, m: the largest cell width or height (the coarsest spacing).
    pub cell: f64,
    /// Largest spacing along x, m (the spacing of a uniform grid).
    #[serde(default)]
    pub hx: f64,
    /// Largest spacing along y, m.
    #[serde(default)]
    pub hy: f64,
    /// Smallest cell width or height, m.
    #[serde(default)]
    pub min_cell: f64,
    /// Largest cell width or height, m (equal to `cell`).
    #[serde(default)]
    pub max_cell: f64,
}

/// Solver report.
#[derive(Serialize, Deserialize, Debug, Clone, PartialEq)]
pub struct SolverSummary {
    /// Method name.
    pub method: String,
    /// Largest iteration count of one solve.
    pub iterations: usize,
    /// Largest final relative residual.
    pub relative_residual: f64,
    /// Wall-clock seconds of the whole study.
    pub seconds: f64,
    /// True when every solve met the tolerance.
    pub converged: bool,
    /// Number of linear solves on the fine grid.
    #[serde(default)]
    pub solves: usize,
    /// Why a solve failed, if one did.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub failure: Option<String>,
}

/// One conductor.
#[derive(Serialize, Deserialize, Debug, Clone, PartialEq)]
pub struct ConductorSummary {
    /// Name.
    pub name: String,
    /// Potential, V.
    pub potential: f64,
    /// Net charge.
    pub charge: f64,
    /// Estimated discretisation error of the charge (absent with --no-error-estimate).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub charge_error: Option<f64>,
    /// Force (x, y).
    pub force: [f64; 2],
    /// Estimated discretisation error of each force component (absent with
    /// --no-error-estimate).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub force_error_estimate: Option<[f64; 2]>,
    /// True for a floating conductor.
    #[serde(default)]
    pub floating: bool,
}

/// The Maxwell matrix.
#[derive(Serialize, Deserialize, Debug, Clone, PartialEq)]
pub struct CapacitanceSummary {
    /// "F/m" or "F".
    pub unit: String,
    /// Conductor names in matrix order.
    pub names: Vec<String>,
    /// Entries.
    pub matrix: Vec<Vec<f64>>,
    /// Estimated discretisation error per entry (absent with --no-error-estimate).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub error_estimate: Option<Vec<Vec<f64>>>,
    /// Convergence order used for the error estimate.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub error_order: Option<f64>,
}

/// The peak field.
#[derive(Serialize, Deserialize, Debug, Clone, PartialEq)]
pub struct PeakSummary {
    /// |E|, V/m.
    pub magnitude: f64,
    /// Position, m.
    pub x: f64,
    /// Position, m.
    pub y: f64,
    /// Material name.
    pub material: String,
    /// At a sharp corner or edge (grows with refinement).
    pub singular: bool,
    /// Estimated discretisation error of the magnitude, V/m.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub error_estimate: Option<f64>,
    /// On a rounding too narrow for the cell: the value reads low (the estimate covers it).
    #[serde(default)]
    pub under_resolved: bool,
}

/// One hot spot.
#[derive(Serialize, Deserialize, Debug, Clone, PartialEq)]
pub struct HotspotSummary {
    /// |E|, V/m.
    pub magnitude: f64,
    /// Position, m.
    pub x: f64,
    /// Position, m.
    pub y: f64,
    /// Material name.
    pub material: String,
    /// Breakdown strength, V/m, when known.
    pub strength: Option<f64>,
    /// strength / (magnitude + error_estimate), when the strength is known.
    pub margin: Option<f64>,
    /// At a sharp corner or edge.
    #[serde(default)]
    pub singular: bool,
    /// Estimated discretisation error of the magnitude, V/m.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub error_estimate: Option<f64>,
    /// On a rounding too narrow for the cell: the value reads low (the estimate covers it).
    #[serde(default)]
    pub under_resolved: bool,
}

/// The point of lowest margin.
#[derive(Serialize, Deserialize, Debug, Clone, PartialEq)]
pub struct WorstMarginSummary {
    /// Position, m.
    pub x: f64,
    /// Position, m.
    pub y: f64,
    /// Material name.
    pub material: String,
    /// |E| there, V/m.
    pub field: f64,
    /// Breakdown strength of the material, V/m.
    pub strength: f64,
    /// strength / (field + error_estimate).
    pub margin: f64,
    /// At a sharp corner or edge (the field grows with refinement).
    pub singular: bool,
    /// Estimated discretisation error of the field, V/m (null without an estimate).
    pub error_estimate: Option<f64>,
}

/// One probe.
#[derive(Serialize, Deserialize, Debug, Clone, PartialEq)]
pub struct ProbeSummary {
    /// Name.
    pub name: String,
    /// Position, m.
    pub x: f64,
    /// Position, m.
    pub y: f64,
    /// Potential, V.
    pub potential: f64,
    /// Field (Ex, Ey), V/m (null inside a conductor).
    pub field: [Option<f64>; 2],
}

fn finite(v: f64) -> Option<f64> {
    v.is_finite().then_some(v)
}

impl Summary {
    /// Builds the summary of a solution.
    pub fn from_solution(
        sol: &fieldgrid_solver::study::Solution,
        depth: Option<f64>,
        seconds: f64,
        design_hash: &str,
    ) -> Summary {
        use fieldgrid_solver::design::Mode;
        let planar = sol.mode == Mode::Planar;
        let g = &sol.grid;
        let mut summary = Summary {
            version: VERSION,
            tool_version: env!("CARGO_PKG_VERSION").to_string(),
            design_hash: design_hash.to_string(),
            parameters: Vec::new(),
            mode: if planar { "planar" } else { "axisymmetric" }.to_string(),
            per_length: planar,
            depth,
            part: None,
            grid: GridSummary {
                nx: g.nx,
                ny: g.ny,
                cell: g.max_cell(),
                hx: g.max_dx(),
                hy: g.max_dy(),
                min_cell: g.min_cell(),
                max_cell: g.max_cell(),
            },
            solver: SolverSummary {
                method: sol.solve.method.map_or("none", |m| m.name()).to_string(),
                iterations: sol.solve.iterations,
                relative_residual: sol.solve.relative_residual,
                seconds,
                converged: sol.solve.converged,
                solves: sol.solve.solves,
                failure: sol
                    .solve
                    .failure
                    .as_ref()
                    .map(crate::wording::warnings::solve_failure),
            },
            conductors: sol
                .conductors
                .iter()
                .map(|c| ConductorSummary {
                    name: c.name.clone(),
                    potential: c.potential,
                    charge: c.charge,
                    charge_error: c.charge_error,
                    force: c.force,
                    force_error_estimate: c.force_error,
                    floating: c.floating,
                })
                .collect(),
            capacitance: CapacitanceSummary {
                unit: if planar { "F/m" } else { "F" }.to_string(),
                names: sol.capacitance.names.clone(),
                matrix: sol.capacitance.matrix.clone(),
                error_estimate: sol.capacitance.error_estimate.clone(),
                error_order: sol.capacitance.error_model.as_ref().map(|m| m.order),
            },
            energy: sol.energy,
            peak_field: sol.peak_field.as_ref().map(|h| PeakSummary {
                magnitude: h.magnitude,
                x: h.x,
                y: h.y,
                material: h.material.clone(),
                singular: h.singular,
                error_estimate: h.error_estimate,
                under_resolved: h.under_resolved,
            }),
            hotspots: sol
                .hotspots
                .iter()
                .map(|h| HotspotSummary {
                    magnitude: h.magnitude,
                    x: h.x,
                    y: h.y,
                    material: h.material.clone(),
                    strength: h.strength,
                    margin: h.margin,
                    singular: h.singular,
                    error_estimate: h.error_estimate,
                    under_resolved: h.under_resolved,
                })
                .collect(),
            worst_margin: sol.worst_margin.as_ref().and_then(|h| {
                Some(WorstMarginSummary {
                    x: h.x,
                    y: h.y,
                    material: h.material.clone(),
                    field: h.magnitude,
                    strength: h.strength?,
                    margin: h.margin?,
                    singular: h.singular,
                    error_estimate: h.error_estimate,
                })
            }),
            probes: sol
                .probes
                .iter()
                .map(|p| ProbeSummary {
                    name: p.name.clone(),
                    x: p.x,
                    y: p.y,
                    potential: p.potential,
                    field: [finite(p.field[0]), finite(p.field[1])],
                })
                .collect(),
            warnings: Vec::new(),
            warning_details: Vec::new(),
            line: None,
            sensitivities: None,
            sensitivity_steps: None,
            sensitivity_errors: None,
            tolerances: None,
            perturbed_solves: None,
            accuracy: None,
        };
        sol.warnings.iter().for_each(|w| summary.warn(w));
        summary
    }

    /// Adds a warning: its text to `warnings`, and its code beside the text to
    /// `warning_details`.
    pub fn warn(&mut self, w: &impl crate::warning::Coded) {
        let message = w.text();
        self.warning_details.push(WarningSummary {
            code: w.code().to_string(),
            message: message.clone(),
        });
        self.warnings.push(message);
    }
}

/// The parameters a design was read with, for [`Summary::parameters`].
pub fn parameters(src: &crate::design_file::DesignSource) -> Vec<ParameterSummary> {
    src.parameters
        .iter()
        .map(|(name, value)| ParameterSummary {
            name: name.clone(),
            value: *value,
        })
        .collect()
}
