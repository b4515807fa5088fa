//! The materials of a design, by the index a raster stores for every node: 0 is the
//! background, d + 1 is dielectric d (the last painted wins, see [`crate::raster`]).
//!
//! Invariant: this is the only place that maps a material index to its name, permittivity
//! and breakdown strength; every lookup (operator couplings, snapping, field, hot spots,
//! margins, pictures) goes through [`of`].

use crate::design::Design;

/// The name of the background material in results.
pub const BACKGROUND: &str = "background";

/// One material as a node sees it.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Material<'a> {
    /// "background" or the dielectric's name.
    pub name: &'a str,
    /// Relative permittivity.
    pub permittivity: f64,
    /// Breakdown strength, V/m, when the design gives one.
    pub strength: Option<f64>,
}

/// The material of index `m` in `design`.
///
/// Panics when `m` names no dielectric of the design (a programmer error: indices come from
/// the raster of this design).
pub fn of(design: &Design, m: u16) -> Material<'_> {
    if m == 0 {
        Material {
            name: BACKGROUND,
            permittivity: design.background.permittivity,
            strength: design.background.strength,
        }
    } else {
        let d = &design.dielectrics[m as usize - 1];
        Material {
            name: &d.name,
            permittivity: d.permittivity,
            strength: d.strength,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::{Dielectric, Shape};

    #[test]
    fn index_zero_is_the_background_and_d_plus_one_dielectric_d() {
        let mut d = Design::default();
        d.background.permittivity = 2.0;
        d.dielectrics.push(Dielectric {
            name: "oil".into(),
            permittivity: 2.2,
            strength: Some(1e7),
            shape: Shape::Circle {
                center: [0.5, 0.5],
                radius: 0.1,
            },
        });
        assert_eq!(of(&d, 0).name, BACKGROUND);
        assert_eq!(of(&d, 0).permittivity, 2.0);
        assert_eq!(of(&d, 1).name, "oil");
        assert_eq!(of(&d, 1).strength, Some(1e7));
    }
}
