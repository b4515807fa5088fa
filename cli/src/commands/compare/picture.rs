//! The picture `field_change.png`: |E|(NEW) - |E|(BASE) on NEW's grid.
//!
//! Invariants: both solutions cover the same domain (the caller checks); BASE's field is
//! carried onto NEW's lattice bilinearly when the grid lines differ; the diverging colour
//! range is symmetric about zero and saturates at the 99th percentile of |change| over the
//! picture's area (an even raster, whatever the lattice's grading).

use crate::design_file::DesignSource;
use fieldgrid_solver::study::Solution;

/// The map of |E|(NEW) - |E|(BASE) on their common grid, NEW's conductors filled and
/// named (those BASE lacks marked "(NEW only)"), and every BASE conductor that NEW lacks or has in another shape outlined dotted and
/// named "(BASE)".
pub(super) fn change_picture(
    (base, base_src): (&Solution, &DesignSource),
    (new, src): (&Solution, &DesignSource),
    opts: &crate::render::RenderOptions,
) -> image::RgbImage {
    use crate::render::{self, ContourStyle, MapInput, Outline, Palette};
    // On NEW's lattice; BASE's field carried onto it when the lines differ.
    // Sides of fixed potential take the field just inside (see `pictures::shown_field`).
    let eb = crate::pictures::shown_field(base);
    let eb = if base.grid == new.grid {
        eb
    } else {
        crate::render::sample::onto(&base.grid, &eb, &new.grid)
    };
    let en = crate::pictures::shown_field(new);
    let diff: Vec<f64> = eb.iter().zip(&en).map(|(b, n)| n - b).collect();
    // Colour range: the 99th percentile of |change| over the picture's area, so that the few
    // places at sharp edges (whose values are singular, and where a graded lattice crowds its
    // nodes) saturate instead of washing out the rest of the map.
    let unit = render::LengthUnit {
        label: src.unit.name(),
        metres: src.unit.scale(),
    };
    let (x, y) = opts.shown(src.design.domain.x, src.design.domain.y, unit);
    let mut mags: Vec<f64> = crate::pictures::area_samples(&new.grid, &diff, x, y)
        .into_iter()
        .filter(|v| v.is_finite())
        .map(f64::abs)
        .collect();
    let k = ((mags.len() as f64 * 0.99) as usize).min(mags.len().saturating_sub(1));
    let top = crate::render::sample::rank(&mut mags, k).unwrap_or(0.0);
    let (_, dielectrics) = crate::pictures::outlines(&src.design);
    let settled: Vec<f64> = new.conductors.iter().map(|c| c.potential).collect();
    let mut conductors = crate::pictures::named_conductors(&src.design, Some(&settled));
    mark_new_only(&mut conductors, &src.design, &base_src.design);
    let tol = Outline::picture_tolerance(src.design.domain.x, src.design.domain.y);
    let former: Vec<Outline> = base_src
        .design
        .conductors
        .iter()
        .filter_map(|b| {
            let same = src.design.conductors.iter().find(|n| n.name == b.name);
            let label = match same {
                Some(n) if n.shape == b.shape && n.joined == b.joined => return None,
                Some(_) => format!("{} (BASE)", b.name),
                None => format!("{} (BASE only)", b.name),
            };
            // Every piece, under one name (the outline is dotted, never filled).
            let mut o = Outline::from_shape(label, &b.shape, tol);
            for piece in &b.joined {
                let p = Outline::from_shape("", piece, tol);
                o.rings.extend(p.rings);
                o.lines.extend(p.lines);
            }
            Some(o)
        })
        .collect();
    let input = MapInput {
        title: "Change in field magnitude, NEW minus BASE (colours saturate on 1 % of the area)",
        quantity: "change of |E|",
        unit: "V/m",
        length_unit: unit,
        axis_names: crate::pictures::axis_names(&src.design),
        conductors: &conductors,
        dielectrics: &dielectrics,
        former: &former,
        palette: Palette::Diverging,
        contours: ContourStyle::None,
        range: (top > 0.0).then_some([-top, top]),
        ..MapInput::new(&new.grid, &diff)
    };
    render::render_map(&input, opts)
}

/// Marks the names of NEW's conductors that BASE has no conductor of that name for, so a
/// filled conductor is not read as present in both. `named` is
/// [`crate::pictures::named_conductors`] of `new`: its first outlines are NEW's conductors in
/// order, the pieces joined to them (unnamed) follow.
fn mark_new_only(
    named: &mut [crate::render::Outline],
    new: &fieldgrid_solver::design::Design,
    base: &fieldgrid_solver::design::Design,
) {
    for (o, c) in named.iter_mut().zip(&new.conductors) {
        if !base.conductors.iter().any(|b| b.name == c.name) {
            o.name.push_str(" (NEW only)");
        }
    }
}

#[cfg(test)]
mod tests {
    use fieldgrid_solver::design::{Conductor, Design, Drive, Shape};

    fn design(names: &[&str]) -> Design {
        Design {
            conductors: names
                .iter()
                .enumerate()
                .map(|(k, n)| Conductor {
                    name: (*n).into(),
                    drive: Drive::Fixed(0.0),
                    joined: Vec::new(),
                    shape: Shape::Rect {
                        x: [k as f64, k as f64 + 0.5],
                        y: [0.0, 0.5],
                        round: 0.0,
                    },
                })
                .collect(),
            ..Design::default()
        }
    }

    #[test]
    fn a_conductor_only_the_new_design_has_is_named_new_only_in_the_change_picture() {
        let (base, new) = (design(&["pad", "guard"]), design(&["pad", "finger"]));
        let mut named = crate::pictures::named_conductors(&new, None);
        super::mark_new_only(&mut named, &new, &base);
        let names: Vec<&str> = named.iter().map(|o| o.name.as_str()).collect();
        assert_eq!(names, ["pad, 0 V", "finger, 0 V (NEW only)"]);
    }
}
