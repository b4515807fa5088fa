//! Unit tests of the design reader: a design using every key converts to the expected SI
//! design; parameters, overrides, units and positions behave as documented.

use super::*;
use fieldgrid_solver::design::{
    Background, Charge, Dielectric, Domain, Drive, Lattice, Shape, Side, Sides,
};

const EVERY_KEY: &str = r#"
unit = "mm"
mode = "planar"
depth = 25.0

[grid]
x = [0.0, 10]
y = [0.0, "h"]
cell = "h / 100"

[sides]
left = "symmetry"
right = "open"
bottom = "ground"
top = -2.5

[background]
permittivity = 1.0006
strength = 3.0e6

[parameters]
h = 5
gap = 0.5
pad_x = "1 + gap"
v = "2 * 3"

[[conductor]]
name = "pad"
potential = "v / 6"
rect = { x = ["pad_x", "pad_x + 2*gap"], y = [0.5, 0.6], round = 0.01 }

[[conductor]]
name = "shield"
floating = true
ring = { center = [5, "h/2"], inner = 1.0, outer = 1.5 }

[[conductor]]
name = "trace"
potential = 0
polyline = [[6, 1], [7, 1], [7.5, 1.5]]

[[conductor]]
name = "wire"
floating = false
potential = 3
circle = { center = [9, 4], radius = 0.25 }

[[dielectric]]
name = "substrate"
permittivity = 4.4
strength = 2.0e7
polygon = [[0, 0], [10, 0], [10, 0.5], [0, 0.5]]
holes = [[[4, 0.1], [5, 0.1], [5, 0.3]]]
round = 0.05

[[dielectric]]
name = "coat"
permittivity = "2 + 0.5"
polygon = [[1, 2], [2, 2], [2, 3]]

[[charge]]
name = "cloud"
density = 1.0e-4
circle = { center = [5.0, 3.0], radius = 0.2 }

[[charge]]
name = "filament"
at = [5.0, 4.0]
amount = -1.0e-10

[[probe]]
name = "sensor"
at = [4.0, "h - 3"]
"#;

fn read(text: &str) -> Result<DesignSource, InputError> {
    read_design(text, "t.toml", &[])
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-12 * b.abs().max(1e-300)
}

fn close2(a: [f64; 2], b: [f64; 2]) -> bool {
    close(a[0], b[0]) && close(a[1], b[1])
}

#[test]
fn every_key_converts_to_si() {
    let src = read(EVERY_KEY).unwrap_or_else(|e| panic!("{e}"));
    let d = &src.design;
    assert_eq!(src.unit, LengthUnit::Mm);
    assert_eq!(src.file, "t.toml");
    assert_eq!(
        src.parameters,
        vec![
            ("h".into(), 5.0),
            ("gap".into(), 0.5),
            ("pad_x".into(), 1.5),
            ("v".into(), 6.0)
        ]
    );
    assert_eq!(d.mode, Mode::Planar);
    assert!(close(d.depth.unwrap(), 0.025));
    assert!(close2(d.domain.x, [0.0, 0.010]));
    assert!(close2(d.domain.y, [0.0, 0.005]));
    assert!(close(d.domain.cell, 5e-5));
    assert_eq!(
        d.sides,
        Sides {
            left: Side::Symmetry,
            right: Side::Open,
            bottom: Side::Ground,
            top: Side::Fixed(-2.5)
        }
    );
    // Permittivity and strength are not lengths: not scaled.
    assert_eq!(
        d.background,
        Background {
            permittivity: 1.0006,
            strength: Some(3.0e6)
        }
    );

    assert_eq!(d.conductors.len(), 4);
    let pad = &d.conductors[0];
    assert_eq!(pad.name, "pad");
    assert_eq!(pad.drive, Drive::Fixed(1.0)); // volts: not scaled
    let Shape::Rect { x, y, round } = pad.shape else {
        panic!("{:?}", pad.shape)
    };
    assert!(close2(x, [1.5e-3, 2.5e-3]) && close2(y, [0.5e-3, 0.6e-3]) && close(round, 1e-5));
    assert_eq!(d.conductors[1].drive, Drive::Floating);
    let Shape::Ring {
        center,
        inner,
        outer,
    } = d.conductors[1].shape
    else {
        panic!()
    };
    assert!(close2(center, [5e-3, 2.5e-3]) && close(inner, 1e-3) && close(outer, 1.5e-3));
    let Shape::Polyline(ref pts) = d.conductors[2].shape else {
        panic!()
    };
    assert_eq!(pts.len(), 3);
    assert!(close2(pts[2], [7.5e-3, 1.5e-3]));
    assert_eq!(d.conductors[3].drive, Drive::Fixed(3.0));
    let Shape::Circle { center, radius } = d.conductors[3].shape else {
        panic!()
    };
    assert!(close2(center, [9e-3, 4e-3]) && close(radius, 2.5e-4));

    let sub = &d.dielectrics[0];
    assert_eq!(
        (sub.name.as_str(), sub.permittivity, sub.strength),
        ("substrate", 4.4, Some(2.0e7))
    );
    let Shape::Polygon {
        ref outer,
        ref holes,
        round,
        ref corners,
    } = sub.shape
    else {
        panic!()
    };
    assert_eq!(outer.len(), 4);
    assert!(close2(outer[2], [10e-3, 0.5e-3]));
    assert_eq!(holes.len(), 1);
    assert!(close2(holes[0][1], [5e-3, 0.1e-3]));
    assert!(close(round, 5e-5));
    // Every outer vertex lies on a side of the domain (the left one on the mirror plane):
    // only the hole's corners are rounded.
    assert_eq!(corners.as_deref(), Some(&[4, 5, 6][..]));
    assert_eq!(d.dielectrics[1].permittivity, 2.5);
    assert_eq!(d.dielectrics[1].strength, None);

    let Charge::Region {
        ref name,
        density,
        ref shape,
    } = d.charges[0]
    else {
        panic!()
    };
    assert_eq!((name.as_str(), density), ("cloud", 1.0e-4)); // C/m^3: not scaled
    assert!(matches!(shape, Shape::Circle { radius, .. } if close(*radius, 2e-4)));
    let Charge::Concentrated {
        ref name,
        at,
        amount,
    } = d.charges[1]
    else {
        panic!()
    };
    assert_eq!((name.as_str(), amount), ("filament", -1.0e-10)); // C/m: not scaled
    assert!(close2(at, [5e-3, 4e-3]));
    assert_eq!(d.probes[0].name, "sensor");
    assert!(close2(d.probes[0].at, [4e-3, 2e-3]));
}

#[test]
fn defaults_are_metres_planar_grounded_vacuum() {
    let src = read("[grid]\nx = [0, 1]\ny = [0, 2]\ncell = 0.1\n").unwrap();
    assert_eq!(src.unit, LengthUnit::M);
    assert_eq!(src.design.mode, Mode::Planar);
    assert_eq!(src.design.depth, None);
    assert_eq!(src.design.sides, Sides::default());
    assert_eq!(src.design.background, Background::default());
    assert_eq!(
        src.design.domain,
        Domain {
            x: [0.0, 1.0],
            y: [0.0, 2.0],
            cell: 0.1
        }
    );
    assert!(src.parameters.is_empty());
    assert_eq!(src.design.lattice, Lattice::Graded);
}

#[test]
fn the_grid_lattice_is_uniform_or_graded() {
    let grid = |extra: &str| {
        read(&format!(
            "[grid]\nx = [0, 1]\ny = [0, 2]\ncell = 0.1\n{extra}"
        ))
    };
    let at = |extra: &str| grid(extra).unwrap().design.lattice;
    assert_eq!(at("lattice = \"graded\"\n"), Lattice::Graded);
    assert_eq!(at("lattice = \"uniform\"\n"), Lattice::Uniform);
    let e = grid("lattice = \"stretched\"\n").unwrap_err();
    assert_eq!(e.key, "grid.lattice");
}

#[test]
fn every_unit_scales_lengths_only() {
    for (unit, scale) in [
        ("m", 1.0),
        ("cm", 1e-2),
        ("mm", 1e-3),
        ("um", 1e-6),
        ("µm", 1e-6),
        ("mil", 25.4e-6),
        ("in", 25.4e-3),
    ] {
        let text = format!(
            "unit = \"{unit}\"\n[grid]\nx = [0, 4]\ny = [0, 4]\ncell = 1\n[[conductor]]\n\
             name = \"a\"\npotential = 7\ncircle = {{ center = [2, 2], radius = 1 }}\n"
        );
        let src = read(&text).unwrap();
        assert_eq!(src.unit.scale(), scale);
        assert!(close(src.design.domain.x[1], 4.0 * scale));
        assert!(close(src.design.domain.cell, scale));
        assert_eq!(src.design.conductors[0].drive, Drive::Fixed(7.0));
    }
    assert_eq!(LengthUnit::Um.name(), "um");
    assert_eq!(LengthUnit::parse("inch"), None);
}

#[test]
fn axisymmetric_left_side_is_the_axis() {
    let text = "mode = \"axisymmetric\"\n[grid]\nx = [0, 1]\ny = [-1, 1]\ncell = 0.1\n\
                [sides]\nright = \"open\"\n[[charge]]\nname = \"q\"\nat = [0, 0.5]\namount = 1e-12\n";
    let src = read(text).unwrap();
    assert_eq!(src.design.mode, Mode::Axisymmetric);
    assert_eq!(src.design.sides.left, Side::Axis);
    assert_eq!(src.design.sides.right, Side::Open);
    assert_eq!(src.design.sides.top, Side::Ground);
}

const SWEEPABLE: &str = "[parameters]\nw = 1\nhalf = \"w / 2\"\n[grid]\nx = [0, 4]\ny = [0, 4]\n\
                         cell = 0.1\n[[conductor]]\nname = \"c\"\npotential = 1\n\
                         circle = { center = [2, 2], radius = \"half\" }\n";

#[test]
fn overrides_replace_parameters_and_flow_into_later_ones() {
    let src = read_design(SWEEPABLE, "s.toml", &[("w".into(), 3.0)]).unwrap();
    assert_eq!(
        src.parameters,
        vec![("w".into(), 3.0), ("half".into(), 1.5)]
    );
    let Shape::Circle { radius, .. } = src.design.conductors[0].shape else {
        panic!()
    };
    assert_eq!(radius, 1.5);
    let e = read_design(SWEEPABLE, "s.toml", &[("width".into(), 3.0)]).unwrap_err();
    assert_eq!(e.line, 0);
    assert!(
        e.message.contains("no such parameter") && e.message.contains("`w`"),
        "{e}"
    );
    let e = read_design(SWEEPABLE, "s.toml", &[("w".into(), f64::NAN)]).unwrap_err();
    assert!(e.message.contains("not finite"), "{e}");
}

#[test]
fn a_hundred_thousand_chained_parameters_evaluate_in_order() {
    // Each parameter refers to the one above it; lookups by name once scanned every earlier
    // parameter, so reading this file grew with the square of its length (47 s).
    const N: usize = 100_000;
    let mut text = String::from("[parameters]\np0 = 0\n");
    for i in 1..N {
        text += &format!("p{i} = \"p{} + 1\"\n", i - 1);
    }
    text += &format!(
        "[grid]\nx = [0, 4]\ny = [0, 4]\ncell = 0.1\n[[conductor]]\nname = \"c\"\n\
         potential = \"p{last} / {last}\"\ncircle = {{ center = [2, 2], radius = \"p{last} / {N}\" }}\n",
        last = N - 1
    );
    let src = read(&text).unwrap();
    assert_eq!(src.parameters.len(), N);
    for (i, (name, v)) in src.parameters.iter().enumerate() {
        assert_eq!((name.as_str(), *v), (format!("p{i}").as_str(), i as f64));
    }
    assert_eq!(src.design.conductors[0].drive, Drive::Fixed(1.0));
    let Shape::Circle { radius, .. } = src.design.conductors[0].shape else {
        panic!()
    };
    assert_eq!(radius, (N - 1) as f64 / N as f64);
    // A reference to a parameter further down is still named as such.
    let e = read("[parameters]\na = \"b + 1\"\nb = 1\n").unwrap_err();
    assert!(e.message.contains("`b` is defined later"), "{e}");
}

#[test]
fn text_hash_is_stable_fnv1a() {
    // FNV-1a 64-bit of the empty string is the offset basis and of "a" is 0xaf63dc4c8601ec8c
    // (Fowler, Noll, Vo: the FNV hash test vectors; recalled from memory and recomputed by hand
    // with the published offset basis and prime).
    assert_eq!(text_hash(""), "cbf29ce484222325");
    assert_eq!(text_hash("a"), "af63dc4c8601ec8c");
    let src = read(SWEEPABLE).unwrap();
    assert_eq!(src.text_hash, text_hash(SWEEPABLE));
}

#[test]
fn expression_errors_point_inside_the_string() {
    let text = "[parameters]\ngap = 1\n[grid]\nx = [0, \"gap + gapp\"]\ny = [0, 1]\ncell = 0.1\n";
    let e = read(text).unwrap_err();
    assert_eq!((e.line, e.key.as_str()), (4, "grid.x"));
    assert_eq!(e.column, "x = [0, \"gap + ".len() + 1);
    assert_eq!(e.caret_len, 4);
    assert!(
        e.message.contains("unknown parameter `gapp`") && e.message.contains("did you mean `gap`")
    );
}

#[test]
fn error_at_places_later_checks_at_their_key() {
    let src = read(EVERY_KEY).unwrap();
    let e = src.error_at(Item::Grid, "cell", "too fine");
    assert_eq!((e.line, e.key.as_str()), (9, "grid.cell"));
    let e = src.error_at(Item::Conductor(1), "inner", "m");
    assert_eq!((e.line, e.key.as_str()), (35, "conductor.ring.inner"));
    let e = src.error_at(Item::Probe(0), "nothing", "m");
    assert_eq!(e.line, 71); // the [[probe]] header
}

#[test]
fn hostile_input_is_refused_without_panic() {
    let deep_array = format!("x = {}1{}", "[".repeat(5000), "]".repeat(5000));
    assert!(read(&deep_array).is_err());
    let deep_expr = format!(
        "[grid]\nx = [0, \"{}1{}\"]\ny = [0, 1]\ncell = 0.1\n",
        "(".repeat(2000),
        ")".repeat(2000)
    );
    let e = read(&deep_expr).unwrap_err();
    assert!(e.message.contains("too complex"), "{e}");
    for text in [
        "",
        "\u{0}",
        "[[",
        "grid = 3",
        "[grid]\nx = [0, 1e400]",
        "a.b.c = 1",
    ] {
        assert!(read(text).is_err(), "{text:?}");
    }
}

#[test]
fn a_shape_outside_the_domain_is_described_in_the_files_unit() {
    let text = "unit = \"mm\"\n[grid]\nx = [0.0, 10.0]\ny = [0.0, 5.0]\ncell = 0.1\n\
                [[dielectric]]\nname = \"board\"\npermittivity = 4.4\n\
                rect = { x = [2.0, 12.0], y = [0.0, 1.2] }\n";
    let e = read_design(text, "t.toml", &[]).unwrap_err();
    assert_eq!(e.key, "dielectric.rect");
    assert!(
        e.to_string()
            .contains("the shape (2..12 mm by 0..1.2 mm) does not lie inside the domain (0..10 mm by 0..5 mm)"),
        "{e}"
    );
    // The library names the fault and keeps the extents as data (metres).
    let d = Design {
        domain: Domain {
            x: [0.0, 1.0],
            y: [0.0, 1.0],
            cell: 0.1,
        },
        dielectrics: vec![Dielectric {
            name: "d".into(),
            permittivity: 2.0,
            strength: None,
            shape: Shape::Rect {
                x: [0.5, 1.5],
                y: [0.0, 0.5],
                round: 0.0,
            },
        }],
        ..Design::default()
    };
    let e = design::validate(&d).unwrap_err();
    assert_eq!(e.code(), "outside-domain");
    let design::Fault::Outside(out) = e.fault else {
        panic!("{e}");
    };
    assert_eq!(out.shape, [[0.5, 1.5], [0.0, 0.5]]);
    assert_eq!(out.domain, [[0.0, 1.0], [0.0, 1.0]]);
}

#[test]
fn an_unknown_key_suggests_the_nearest_allowed_key() {
    let e = read("[side]\nleft = \"ground\"\n[grid]\nx = [0, 1]\ny = [0, 1]\ncell = 0.1\n")
        .unwrap_err();
    assert!(e.message.contains("did you mean `sides`"), "{}", e.message);
}

#[test]
fn a_probe_outside_the_domain_is_told_the_domains_extent() {
    let text = "unit = \"mm\"\n[grid]\nx = [0, 4]\ny = [0, 2]\ncell = 0.1\n\
                [[probe]]\nname = \"p\"\nat = [5, 1]\n";
    let e = read(text).unwrap_err();
    assert_eq!(e.key, "probe.at");
    assert!(
        e.message.contains("the point (5 mm, 1 mm)") && e.message.contains("(0..4 mm by 0..2 mm)"),
        "{}",
        e.message
    );
}

#[test]
fn a_permittivity_below_vacuums_is_refused_at_its_key() {
    let text = "[grid]\nx = [0, 1]\ny = [0, 1]\ncell = 0.1\n[[dielectric]]\nname = \"d\"\n\
                permittivity = 0.8\nrect = { x = [0, 1], y = [0, 0.5] }\n";
    let e = read(text).unwrap_err();
    assert_eq!((e.line, e.key.as_str()), (7, "dielectric.permittivity"));
}

/// A rounded polygon touching the mirror plane on the left, with `extra` keys beside it.
fn mirror_design(extra: &str) -> String {
    format!(
        r#"unit = "mm"
[grid]
x = [0.0, 10.0]
y = [0.0, 10.0]
cell = 0.1
[sides]
left = "symmetry"
[[conductor]]
name = "bar"
potential = 1
polygon = [[0, 4], [3, 4], [3, 6], [0, 6]]
round = 0.5
{extra}"#
    )
}

#[test]
fn round_corners_chooses_the_rounded_vertices() {
    let d = read(&mirror_design("round_corners = [0, 2]"))
        .unwrap()
        .design;
    let Shape::Polygon { ref corners, .. } = d.conductors[0].shape else {
        panic!()
    };
    assert_eq!(corners.as_deref(), Some(&[0, 2][..]));
    // The unchosen vertices on the mirror plane stay sharp corners.
    let sharp = fieldgrid_solver::geometry::sharp_corners(&d.conductors[0].shape);
    assert_eq!(sharp, vec![[3e-3, 4e-3], [0.0, 6e-3]]);
}

#[test]
fn round_corners_out_of_range_names_file_line_and_key() {
    let e = read(&mirror_design("round_corners = [1, 4]")).unwrap_err();
    let m = e.to_string();
    assert!(m.contains("t.toml:13"), "{m}");
    assert!(m.contains("round_corners`"), "{m}");
    assert!(m.contains("4 is not a vertex"), "{m}");
}

#[test]
fn a_corner_on_a_mirror_plane_is_not_rounded_by_default() {
    let d = read(&mirror_design("")).unwrap().design;
    let Shape::Polygon { ref corners, .. } = d.conductors[0].shape else {
        panic!()
    };
    assert_eq!(corners.as_deref(), Some(&[1, 2][..]));
    // Drawn where they were; unfolded across the plane the bar has no corner there.
    let sharp = fieldgrid_solver::geometry::sharp_corners(&d.conductors[0].shape);
    assert_eq!(sharp, vec![[0.0, 4e-3], [0.0, 6e-3]]);
    assert!(fieldgrid_solver::post::sharp_corners(&d).is_empty());
}

/// The mirror design with a rectangle in place of the polygon.
fn mirror_rect(rect: &str) -> String {
    mirror_design("").replace(
        "polygon = [[0, 4], [3, 4], [3, 6], [0, 6]]\nround = 0.5\n",
        &format!("rect = {{ x = [0, 3], y = [4, 6], {rect} }}\n"),
    )
}

#[test]
fn a_rounded_rect_chooses_its_corners_and_keeps_those_on_a_mirror_plane_sharp() {
    let corners = |text: &str| match read(text).unwrap().design.conductors[0].shape {
        Shape::Polygon {
            ref outer,
            ref corners,
            round,
            ..
        } => {
            assert_eq!(outer[0], [0.0, 4e-3]);
            assert!(close(round, 5e-4));
            corners.clone()
        }
        ref s => panic!("{s:?}"),
    };
    // Counter-clockwise from (x0, y0): the two off the plane by default, or those chosen.
    assert_eq!(corners(&mirror_rect("round = 0.5")), Some(vec![1, 2]));
    assert_eq!(
        corners(&mirror_rect("round = 0.5, round_corners = [2]")),
        Some(vec![2])
    );
    // Off the sides a rounded rectangle stays one.
    let inside = mirror_rect("round = 0.5").replace("x = [0, 3]", "x = [1, 3]");
    assert!(matches!(
        read(&inside).unwrap().design.conductors[0].shape,
        Shape::Rect { .. }
    ));
}

#[test]
fn a_rect_round_corners_out_of_range_or_without_round_names_file_line_and_key() {
    let e = read(&mirror_rect("round = 0.5, round_corners = [4]")).unwrap_err();
    let m = e.to_string();
    assert!(m.contains("t.toml:11"), "{m}");
    assert!(m.contains("conductor.rect.round_corners"), "{m}");
    assert!(m.contains("4 is not a vertex"), "{m}");
    assert!(m.contains("counter-clockwise from (x0, y0)"), "{m}");
    let e = read(&mirror_rect("round_corners = [1]")).unwrap_err();
    assert!(e.to_string().contains("give `round` too"), "{e}");
}

#[test]
fn the_pictures_zoom_key_is_read_in_the_files_unit_and_validated_at_its_key() {
    let with = |zoom: &str| {
        let text =
            mirror_design("").replace("[sides]", &format!("[pictures]\nzoom = {zoom}\n[sides]"));
        read(&text)
    };
    let src = with("[1, 4, \"2 + 1\", 7]").unwrap();
    assert_eq!(src.zoom, Some([1.0, 4.0, 3.0, 7.0]));
    assert_eq!(read(&mirror_design("")).unwrap().zoom, None);
    for (bad, says) in [
        ("[4, 1, 3, 7]", "x0 < x1"),
        ("[1, 4, 3]", "expected four"),
        ("[20, 30, 3, 7]", "outside the domain (x 0 to 10"),
        ("5", "window"),
    ] {
        let e = with(bad).unwrap_err();
        assert_eq!((e.line, e.key.as_str()), (7, "pictures.zoom"), "{bad}: {e}");
        assert!(e.to_string().contains(says), "{bad}: {e}");
    }
}
