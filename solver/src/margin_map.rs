//! The local margin to breakdown at every node: the breakdown strength of the node's
//! material over the field magnitude there, for a picture of where a design stands closest
//! to breakdown.
//!
//! Invariants: one value per node; NaN where no margin exists (conductor and fixed nodes,
//! whose field is NaN, and materials without a strength); +infinity where the field is zero.
//! These are node values: next to a sharp corner they read higher than the surface search's
//! worst margin ([`crate::study::Solution::worst_margin`]), which is the number to report.

use rayon::prelude::*;

use crate::design::Design;
use crate::material;

/// Whether a material of `design` (the background or a dielectric) has a breakdown strength,
/// so that [`node_margins`] finds margins.
pub fn any_strength(design: &Design) -> bool {
    design.background.strength.is_some() || design.dielectrics.iter().any(|d| d.strength.is_some())
}

/// Strength over |E| per node (dimensionless), or `None` when no material of `design` has
/// a strength. `materials` is the raster's material index per node
/// ([`crate::raster::Raster::material`]), `magnitude` |E| per node, V/m, NaN where undefined.
///
/// Panics when the two differ in length (a programmer error).
pub fn node_margins(design: &Design, materials: &[u16], magnitude: &[f64]) -> Option<Vec<f64>> {
    assert_eq!(materials.len(), magnitude.len(), "one field value per node");
    if !any_strength(design) {
        return None;
    }
    // Each node on its own: the same values on any number of threads.
    Some(
        materials
            .par_iter()
            .zip(magnitude)
            .map(|(&m, &e)| match material::of(design, m).strength {
                Some(s) if e.is_finite() => s / e,
                _ => f64::NAN,
            })
            .collect(),
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::{Dielectric, Shape};

    #[test]
    fn margin_is_strength_over_field_where_a_strength_is_known() {
        let mut d = Design::default();
        d.background.strength = Some(3e6);
        d.dielectrics.push(Dielectric {
            name: "film".into(),
            permittivity: 3.0,
            strength: None,
            shape: Shape::Circle {
                center: [0.0, 0.0],
                radius: 1.0,
            },
        });
        let r = [0, 0, 0, 1];
        let m = node_margins(&d, &r, &[1e6, 0.0, f64::NAN, 1e6]).expect("a strength is given");
        assert_eq!(m[0], 3.0);
        assert_eq!(m[1], f64::INFINITY);
        assert!(m[2].is_nan() && m[3].is_nan());
        d.background.strength = None;
        assert_eq!(node_margins(&d, &r, &[1.0; 4]), None);
        assert!(!any_strength(&d));
    }
}
