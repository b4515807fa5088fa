//! The discretisation-error estimate of a study: the same study on lattices twice (and four
//! times) as coarse, and Richardson's extrapolation from their capacitance matrices.
//!
//! Invariants: the coarse lattices cover the same domain (`Grid::coarsened`); on a uniform
//! lattice the estimate is never optimistic by construction of the order (1 wherever the
//! field is singular). On a graded lattice the coarse lattices are the base grid bisected
//! once and the base itself, so all three hold the same geometry lines and the order is the
//! one observed from the three. A quantity derived from the matrices (a line's Z0 and
//! eps_eff) reads its own order from its own three values on such a family
//! ([`ErrorModel::estimate_derived`]): a ratio such as eps_eff = C / C0 cancels most of the
//! errors of its two studies, and what is left converges at an order (and from a grid on)
//! of its own.

use super::nested::CoarseStart;
use super::params::{StudyError, StudyParams};
use super::solves::{solve_on, Core};
use crate::design::{Design, Lattice};
use crate::grid::Grid;
use crate::warning::Warning;

/// How discretisation errors are estimated: Richardson's extrapolation from the fine lattice
/// and one with about twice the spacing. With the error of a result behaving like `K h^p`,
/// the fine result's error is about `|R_h - R_coarse| / (ratio^p - 1)`.
///
/// The order `p`: 1 for designs with sharp corners or thin conductors (their singular
/// fields make the scheme first order); for smooth designs the order observed from a third,
/// twice coarser lattice when the three results converge monotonically, clamped to [1, 2]
/// (the five-point scheme is second order), and 2 when no such order can be read. On a
/// graded lattice of a rectilinear design (a family of bisections that all hold every edge
/// on a line, so that the error constant does not jump with where edges fall in their
/// cells) the order observed from the three lattices, clamped to [0.5, 2], always; 1 when
/// none can be read.
#[derive(Clone, Debug, PartialEq)]
pub struct ErrorModel {
    /// Maxwell matrix on the coarse lattice, same order and units as the fine one.
    pub coarse: Vec<Vec<f64>>,
    /// Conductor charges at the operating point on the coarse lattice.
    pub coarse_charges: Vec<f64>,
    /// Coarse over fine spacing (the smaller of the two axes'), about 2.
    pub ratio: f64,
    /// The convergence order used.
    pub order: f64,
    /// The order observed from three lattices, when a third one was solved.
    pub observed_order: Option<f64>,
    /// Maxwell matrix on the lattice four times as coarse, when it was solved.
    pub coarser: Option<Vec<Vec<f64>>>,
    /// The three lattices are bisections of one graded base of a rectilinear design, every
    /// edge on a line at every level: orders are read from them.
    pub graded_family: bool,
}

impl ErrorModel {
    /// Estimated error of a fine-lattice result from its coarse-lattice counterpart.
    pub fn estimate(&self, fine: f64, coarse: f64) -> f64 {
        (fine - coarse).abs() / (self.ratio.powf(self.order) - 1.0)
    }

    /// Estimated error of a fine-lattice result integrated along a path that passes a
    /// junction where the potential goes as `r^lambda`, `lambda` in (1/2, 1): the path's
    /// stress there goes as `r^(2 lambda - 2)`, so its sum misses about `h^(2 lambda - 1)` of
    /// the integral with `h` the cells at the junction, and the result converges no faster
    /// than that, whatever the matrix shows. `shrink`: how many times smaller the junction's
    /// cells are on the fine lattice than on the coarse one (> 1; otherwise the difference
    /// says nothing of the error, which is then unbounded). Never below
    /// [`ErrorModel::estimate`].
    pub fn estimate_at_junction(&self, fine: f64, coarse: f64, lambda: f64, shrink: f64) -> f64 {
        let q = 2.0 * lambda - 1.0;
        let fall = shrink.powf(q) - 1.0;
        let at_junction = if fall > 0.0 {
            (fine - coarse).abs() / fall
        } else {
            f64::INFINITY
        };
        at_junction.max(self.estimate(fine, coarse))
    }

    /// Estimated error of a fine-lattice quantity derived from the matrices, from its values
    /// on the coarse and (when solved) the four times coarser lattice.
    ///
    /// On a graded family the quantity's own three values decide: converging monotonically,
    /// Richardson's estimate with the order they show, clamped to [0.5, 2] as the matrix's;
    /// oscillating (the two differences of opposite sign, as when errors of two studies
    /// cancel on one lattice and not on the next), the larger of the two differences, the
    /// rule for oscillatory convergence (F. Stern, R. V. Wilson, H. W. Coleman, E. G.
    /// Paterson, "Comprehensive approach to verification and validation of CFD simulations,
    /// part 1", J. Fluids Eng. 123 (2001) 793-802, eq. 13 takes half the range; the whole
    /// range here, so that the estimate is never the optimistic half). Elsewhere, or with two
    /// lattices only, [`ErrorModel::estimate`].
    pub fn estimate_derived(&self, fine: f64, coarse: f64, coarser: Option<f64>) -> f64 {
        let Some(coarser) = coarser.filter(|_| self.graded_family) else {
            return self.estimate(fine, coarse);
        };
        let (d1, d2) = (fine - coarse, coarse - coarser);
        if d1 * d2 > 0.0 {
            let p = ((d2 / d1).ln() / self.ratio.ln()).clamp(0.5, 2.0);
            d1.abs() / (self.ratio.powf(p) - 1.0)
        } else {
            d1.abs().max(d2.abs())
        }
    }
}

/// The singular exponent `lambda` of the potential `r^lambda` at a right-angled conductor
/// corner lying on a flat dielectric interface (the junction a rectilinear design makes where
/// a conductor sits on a layer): the conductor's face along the interface borders the
/// half-plane of relative permittivity `eps_half`, its other face the quadrant of
/// `eps_quadrant`. Separation of variables in the two wedges (potential zero on both
/// conductor faces, potential and normal flux continuous across the interface) gives the
/// smallest root in (1/2, 1) of
/// `eps_half sin(lambda pi / 2) cos(lambda pi) + eps_quadrant cos(lambda pi / 2) sin(lambda pi) = 0`
/// (common practice; the method is that of J. Meixner, "The behavior of electromagnetic
/// fields at edges", IEEE Trans. Antennas Propag. 20 (1972) 442-446, from memory). 2/3 in one
/// medium; towards 1/2 as `eps_half / eps_quadrant` grows; above 2/3 when the half-plane holds
/// the lower permittivity. Both permittivities > 0.
pub fn junction_exponent(eps_half: f64, eps_quadrant: f64) -> f64 {
    use std::f64::consts::PI;
    let g = |l: f64| {
        eps_half * (l * PI / 2.0).sin() * (l * PI).cos()
            + eps_quadrant * (l * PI / 2.0).cos() * (l * PI).sin()
    };
    // g(1/2) > 0 and g(1) < 0: bisection to the first sign change (g has one root there).
    let (mut a, mut b) = (0.5, 1.0);
    for _ in 0..60 {
        let m = 0.5 * (a + b);
        if g(m) > 0.0 {
            a = m;
        } else {
            b = m;
        }
    }
    0.5 * (a + b)
}

/// The smallest cell beside the point `p` on `grid`, m: the larger of the two axes'
/// smallest cells next to the node line nearest `p` (a junction of a graded lattice lies on
/// a line of each axis, its smallest cells on both sides of it).
fn cell_beside(grid: &Grid, p: [f64; 2]) -> f64 {
    let axis = |lines: &[f64], t: f64| {
        let i = match lines.binary_search_by(|x| x.total_cmp(&t)) {
            Ok(i) => i,
            Err(0) => 0,
            Err(i) if i == lines.len() => i - 1,
            Err(i) => {
                if t - lines[i - 1] <= lines[i] - t {
                    i - 1
                } else {
                    i
                }
            }
        };
        let below = (i > 0).then(|| lines[i] - lines[i - 1]);
        let above = (i + 1 < lines.len()).then(|| lines[i + 1] - lines[i]);
        below.into_iter().chain(above).fold(f64::INFINITY, f64::min)
    };
    axis(grid.xs(), p[0]).max(axis(grid.ys(), p[1]))
}

/// How many times smaller the cells beside conductor `k`'s junctions are on `fine` than on
/// `coarse`, read from the two lattices: the smallest ratio over its junctions (the slowest
/// to converge sets the order of a path that passes them all). On a graded family this is
/// `2^(1 / mu)` while the junction's cells fall radically and 2 once they reach the
/// junction's floor (`grading::Params::junction_floor`), where they are bisected. `None`
/// when the conductor meets no interface the grading knows of.
pub(super) fn junction_shrink(
    design: &Design,
    k: usize,
    fine: &Grid,
    coarse: &Grid,
) -> Option<f64> {
    crate::grading::junctions_of(design, k)
        .into_iter()
        .map(|p| cell_beside(coarse, p) / cell_beside(fine, p))
        .reduce(f64::min)
}

/// The order observed from results on three lattices with spacings h, r h, r^2 h:
/// `log(|R_rh - R_r2h| / |R_h - R_rh|) / log(r)`, with the differences measured over the
/// whole matrix. `None` when the differences vanish or change direction (no monotone
/// convergence to read an order from).
fn observed_order(
    fine: &[Vec<f64>],
    coarse: &[Vec<f64>],
    coarser: &[Vec<f64>],
    r: f64,
) -> Option<f64> {
    let (mut d1, mut d2, mut cross) = (0.0, 0.0, 0.0);
    for ((rf, rc), rcc) in fine.iter().zip(coarse).zip(coarser) {
        for ((f, c), cc) in rf.iter().zip(rc).zip(rcc) {
            let (a, b) = (f - c, c - cc);
            d1 += a * a;
            d2 += b * b;
            cross += a * b;
        }
    }
    if !(d1 > 0.0 && d2 > 0.0 && cross > 0.0 && r > 1.0) {
        return None;
    }
    let p = (d2.sqrt() / d1.sqrt()).ln() / r.ln();
    p.is_finite().then_some(p)
}

/// The studies on the coarse lattices: twice as coarse when the error estimate is asked for
/// (and the lattice is large enough), and four times as coarse as well for smooth designs and graded lattices
/// (to read the order), with their lattices.
pub(super) struct CoarseStudies {
    coarse: Option<(Grid, Core)>,
    coarser: Option<(Grid, Core)>,
}

impl CoarseStudies {
    /// Runs the coarse studies of `design` around the fine lattice `grid`. `smooth`: the
    /// design has no sharp corner or thin conductor. The third lattice runs for smooth
    /// designs and for every graded lattice, first, so that with
    /// [`StudyParams::coarse_start`] each lattice starts from the one below it.
    pub(super) fn run(
        design: &Design,
        grid: &Grid,
        params: &StudyParams,
        smooth: bool,
    ) -> Result<CoarseStudies, StudyError> {
        // The coarse lattices start cold (or from each other) and keep their solves only as
        // the next lattice's start: on graded lattices, so that a uniform one gives the
        // results it gave before graded lattices existed, bit for bit.
        let graded = design.lattice == Lattice::Graded;
        let params = &StudyParams {
            keep_warm_start: params.coarse_start && graded,
            ..params.cold()
        };
        if !(params.error_estimate && grid.nx > 8 && grid.ny > 8) {
            return Ok(CoarseStudies {
                coarse: None,
                coarser: None,
            });
        }
        let coarse_grid = grid.coarsened();
        let third = smooth || graded;
        let coarser = if third && coarse_grid.nx > 8 && coarse_grid.ny > 8 {
            let coarser_grid = coarse_grid.coarsened();
            let core = solve_on(design, &coarser_grid, params, None, None)?;
            Some((coarser_grid, core))
        } else {
            None
        };
        let start = coarser.as_ref().and_then(|(_, c)| start_from(c));
        let core = solve_on(design, &coarse_grid, params, start.as_ref(), None)?;
        Ok(CoarseStudies {
            coarse: Some((coarse_grid, core)),
            coarser,
        })
    }

    /// The start of the solves on the fine lattice from the coarse study's, when it ran and
    /// kept them.
    pub(super) fn start(&self) -> Option<CoarseStart> {
        self.coarse.as_ref().and_then(|(_, c)| start_from(c))
    }

    /// The study on the lattice twice as coarse, when it ran.
    pub(super) fn coarse_core(&self) -> Option<&Core> {
        self.coarse.as_ref().map(|(_, c)| c)
    }

    /// The error model of the fine study `core` on `grid`, when the coarse study ran.
    /// `singular`: the design has sharp corners or thin conductors.
    pub(super) fn error_model(
        &self,
        design: &Design,
        grid: &Grid,
        core: &Core,
        singular: bool,
    ) -> Option<ErrorModel> {
        let (coarse_grid, c) = self.coarse.as_ref()?;
        let ratio = grid.ratio_from(coarse_grid);
        let observed_order = self.coarser.as_ref().and_then(|(coarser_grid, cc)| {
            let ratio2 = coarse_grid.ratio_from(coarser_grid);
            observed_order(&core.maxwell, &c.maxwell, &cc.maxwell, ratio.min(ratio2))
        });
        // Sharp corners and thin conductors make the field singular: the cut-cell scheme
        // then converges at first order, with an error constant that depends on where the
        // singular points fall within their cells, so an order read from three lattices
        // would not be trustworthy there.
        // On a graded family of a rectilinear design the edges stay on lines, so the
        // observed order is read wherever it can be; curved or slanted edges fall within
        // cells differently at each level, as on a uniform lattice.
        let graded = design.lattice == Lattice::Graded && crate::grading::is_rectilinear(design);
        let coarser = self.coarser.as_ref().map(|(_, cc)| cc.maxwell.clone());
        let order = match observed_order {
            Some(p) if graded => p.clamp(0.5, 2.0),
            None if graded => 1.0,
            _ if singular => 1.0,
            Some(p) => p.clamp(1.0, 2.0),
            None => 2.0,
        };
        Some(ErrorModel {
            coarse: c.maxwell.clone(),
            coarse_charges: c
                .op
                .reactions_total(&c.response, &c.background, &c.potentials)
                [..design.conductors.len()]
                .to_vec(),
            ratio,
            order,
            observed_order,
            graded_family: graded && coarser.is_some(),
            coarser,
        })
    }
}

/// The start of a finer lattice's solves from the study `core`, when it kept its solves.
fn start_from(core: &Core) -> Option<CoarseStart> {
    core.warm
        .as_ref()
        .map(|w| CoarseStart::of(&core.op, &core.raster, w))
}

/// The estimated error of every entry of the fine Maxwell matrix `maxwell`.
pub(super) fn matrix_errors(model: &ErrorModel, maxwell: &[Vec<f64>]) -> Vec<Vec<f64>> {
    maxwell
        .iter()
        .zip(&model.coarse)
        .map(|(rf, rc)| {
            rf.iter()
                .zip(rc)
                .map(|(f, c)| model.estimate(*f, *c))
                .collect()
        })
        .collect()
}

/// The linear solver's part of the error of every entry of a Maxwell matrix: the asymmetry
/// `|C_ij - C_ji|` (an exact solve of the symmetric operator makes the matrix symmetric; each
/// entry's error is a first-order function of the residual of its own solve, which the
/// asymmetry samples); on the diagonal, the largest asymmetry of its row (the same solves
/// make the whole row).
pub fn solver_errors(maxwell: &[Vec<f64>]) -> Vec<Vec<f64>> {
    let n = maxwell.len();
    let asym = |i: usize, j: usize| (maxwell[i][j] - maxwell[j][i]).abs();
    (0..n)
        .map(|i| {
            (0..n)
                .map(|j| {
                    if i != j {
                        asym(i, j)
                    } else {
                        (0..n).map(|k| asym(i, k)).fold(0.0, f64::max)
                    }
                })
                .collect()
        })
        .collect()
}

/// The largest asymmetry of a Maxwell matrix relative to the geometric mean of the two
/// diagonal entries it joins: the linear solver's relative error of quantities made from
/// the whole matrix (a line's parameters, forces).
pub fn worst_relative_asymmetry(maxwell: &[Vec<f64>]) -> f64 {
    let mut worst: f64 = 0.0;
    for i in 0..maxwell.len() {
        for j in 0..i {
            let scale = (maxwell[i][i] * maxwell[j][j]).abs().sqrt();
            if scale > 0.0 {
                worst = worst.max((maxwell[i][j] - maxwell[j][i]).abs() / scale);
            }
        }
    }
    worst
}

/// A warning for every capacitance entry whose estimated error is above 1 % of it; a
/// symmetric pair (i, j) and (j, i) is warned once, as (i, j) with i <= j in matrix order,
/// with the larger of the two percentages.
pub(super) fn capacitance_warnings(
    names: &[String],
    maxwell: &[Vec<f64>],
    errors: &[Vec<f64>],
) -> Vec<Warning> {
    let percent = |i: usize, j: usize| {
        let c = maxwell[i][j];
        let e = errors[i][j];
        (c != 0.0 && e > 0.01 * c.abs()).then(|| 100.0 * e / c.abs())
    };
    let mut out = Vec::new();
    for i in 0..errors.len() {
        for j in i..errors.len() {
            let worst = [percent(i, j), percent(j, i)]
                .into_iter()
                .flatten()
                .fold(None, |m: Option<f64>, p| Some(m.map_or(p, |m| m.max(p))));
            if let Some(percent) = worst {
                out.push(Warning::CapacitanceError {
                    row: names[i].clone(),
                    column: names[j].clone(),
                    percent,
                });
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_solver_error_is_the_asymmetry() {
        let m = vec![vec![10.0, -2.0], vec![-2.002, 8.0]];
        let e = solver_errors(&m);
        assert!((e[0][1] - 0.002).abs() < 1e-12);
        assert!((e[1][0] - 0.002).abs() < 1e-12);
        assert!((e[1][1] - 0.002).abs() < 1e-12);
        assert!((worst_relative_asymmetry(&m) - 0.002 / 80f64.sqrt()).abs() < 1e-12);
    }

    fn model(graded_family: bool) -> ErrorModel {
        ErrorModel {
            coarse: vec![vec![1.0]],
            coarse_charges: vec![0.0],
            ratio: 2.0,
            order: 1.5,
            observed_order: Some(1.5),
            coarser: Some(vec![vec![1.0]]),
            graded_family,
        }
    }

    #[test]
    fn a_derived_quantity_reads_its_own_order_on_a_graded_family() {
        let m = model(true);
        // Errors 4, 2, 1: first order, so the fine value's error is the last difference.
        assert!((m.estimate_derived(1.0, 2.0, Some(4.0)) - 1.0).abs() < 1e-12);
        // Errors 16, 4, 1: second order, a third of the last difference.
        assert!((m.estimate_derived(1.0, 4.0, Some(16.0)) - 1.0).abs() < 1e-12);
        // Differences growing: the order clamps at 0.5.
        let e = m.estimate_derived(0.0, 1.0, Some(1.1));
        assert!((e - 1.0 / (2f64.sqrt() - 1.0)).abs() < 1e-12, "{e}");
    }

    #[test]
    fn an_oscillating_derived_quantity_takes_the_larger_difference() {
        // Cancelling errors: up by 1.2, then down by 0.4; the fine value's error can be as
        // large as the larger step, not the last step over 2^p - 1.
        let e = model(true).estimate_derived(1.0, 1.4, Some(0.2));
        assert!((e - 1.2).abs() < 1e-12, "{e}");
    }

    #[test]
    fn off_a_graded_family_a_derived_quantity_uses_the_matrix_order() {
        let m = model(false);
        let want = m.estimate(1.0, 1.4);
        assert_eq!(m.estimate_derived(1.0, 1.4, Some(0.2)), want);
        assert_eq!(model(true).estimate_derived(1.0, 1.4, None), want);
    }

    #[test]
    fn the_junction_exponent_matches_its_limits() {
        // One medium: the right-angled corner's 2/3, where the equation reduces to
        // sin(3 lambda pi / 2) = 0.
        assert!((junction_exponent(1.0, 1.0) - 2.0 / 3.0).abs() < 1e-12);
        // Copper on FR-4 (4.4) with air beside it: 0.56 (grading.rs quotes it).
        let l = junction_exponent(4.4, 1.0);
        assert!((l - 0.5593).abs() < 1e-4, "{l}");
        // A strong contrast tends to the thin edge's 1/2; the lower permittivity on the
        // half-plane makes the corner milder than 2/3.
        let l = junction_exponent(1000.0, 1.0);
        assert!(l > 0.5 && l < 0.501, "{l}");
        assert!(junction_exponent(1.0, 7.5) > 2.0 / 3.0);
    }

    #[test]
    fn a_path_through_a_junction_converges_at_its_own_order() {
        // Nitride (7.5) under the conductor, air beside: lambda about 0.5375, so the path's
        // error falls as h^0.075; cells shrinking 2^1.5 per member give (2^1.5)^0.075 - 1,
        // about 0.081: the fine value's error is about 12 times the last difference.
        let m = model(true);
        let l = junction_exponent(7.5, 1.0);
        assert!((l - 0.5375).abs() < 1e-4, "{l}");
        let e = m.estimate_at_junction(1.0, 1.001, l, 2f64.powf(1.5));
        let want = 1e-3 / (2f64.powf(1.5).powf(2.0 * l - 1.0) - 1.0);
        assert!((e - want).abs() < 1e-12 && e > 11e-3 && e < 13e-3, "{e}");
        // Never below the matrix order's estimate: at one medium with the cells halving,
        // h^(1/3) is slower than the model's 1.5, so the junction's estimate stands.
        let e = m.estimate_at_junction(1.0, 1.001, 2.0 / 3.0, 2.0);
        assert!(e >= m.estimate(1.0, 1.001));
    }

    #[test]
    fn the_junction_shrink_is_read_from_the_cells_beside_it() {
        // A junction at (1, 1) on lines of both lattices: beside it the coarse lattice has
        // cells of 0.5 (x) and 0.25 (y), the fine one 0.1 and 0.125; the larger axis' cell
        // counts on each (0.5 against 0.125): a shrink of 4, whichever side the cells lie.
        let coarse = Grid::from_lines(vec![0.0, 0.5, 1.0, 2.0], vec![0.0, 0.75, 1.0, 2.0]);
        let fine = Grid::from_lines(
            vec![0.0, 0.25, 0.5, 0.9, 1.0, 1.5, 2.0],
            vec![0.0, 0.4, 0.75, 0.875, 1.0, 1.5, 2.0],
        );
        let (coarse, fine) = (coarse.unwrap(), fine.unwrap());
        assert_eq!(cell_beside(&coarse, [1.0, 1.0]), 0.5);
        assert_eq!(cell_beside(&fine, [1.0, 1.0]), 0.125);
        // Off a line, the nearest line's cells; outside the domain, its side's.
        assert_eq!(cell_beside(&fine, [0.97, 1.02]), 0.125);
        assert_eq!(cell_beside(&fine, [-1.0, 3.0]), 0.5);
        // A shrink of one (the cells did not fall) leaves the junction's error unbounded
        // rather than the matrix order's estimate.
        let e = model(true).estimate_at_junction(1.0, 1.001, 0.54, 1.0);
        assert_eq!(e, f64::INFINITY);
    }

    #[test]
    fn a_symmetric_pair_is_warned_once_with_the_larger_percentage() {
        let names: Vec<String> = ["a", "b", "c"].iter().map(|s| s.to_string()).collect();
        let m = vec![
            vec![10.0, -2.0, -1.0],
            vec![-2.0, 10.0, -1.0],
            vec![-1.0, -1.0, 10.0],
        ];
        let e = vec![
            vec![0.01, 0.05, 0.0],
            vec![0.06, 0.01, 0.0],
            vec![0.0, 0.0, 0.01],
        ];
        let w = capacitance_warnings(&names, &m, &e);
        assert_eq!(
            w,
            [Warning::CapacitanceError {
                row: "a".into(),
                column: "b".into(),
                percent: 3.0
            }]
        );
    }
}
