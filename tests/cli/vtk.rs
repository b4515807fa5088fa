//! `solve --vtk`: `field.vti` read back by the `vtkio` crate has the grid's dimensions,
//! origin and spacing, and the right values at sample nodes.

use fieldgrid_tests::cli::{expect, run, s, scratch, write};
use vtkio::model::{Attribute, DataSet, Piece};

/// The prefix of this file's scratch directories.
const SCRATCH: &str = "fieldgrid-vtk";

// Two layers between plates: a permittivity-4 layer on y = [0, 1] mm, air above it up to a
// full-width electrode at 50 V covering y = [1.8, 2] mm (the top side is at 50 V too).
const LAYERS: &str = fieldgrid_tests::mirror_box_4x2_mm!(
    r#"bottom = "ground"
top = 50.0
[[dielectric]]
name = "layer"
permittivity = 4.0
rect = { x = [0.0, 4.0], y = [0.0, 1.0] }
[[conductor]]
name = "lid"
potential = 50.0
rect = { x = [0.0, 4.0], y = [1.8, 2.0] }
"#
);

fn arrays(vtk: vtkio::Vtk) -> (DataSet, Vec<(String, vtkio::IOBuffer)>) {
    let data = vtk.data;
    let DataSet::ImageData { pieces, .. } = &data else {
        panic!("not image data: {data:?}");
    };
    assert_eq!(pieces.len(), 1);
    let Piece::Inline(piece) = &pieces[0] else {
        panic!("piece not inline");
    };
    let named = piece
        .data
        .point
        .iter()
        .map(|a| match a {
            Attribute::DataArray(d) => (d.name.clone(), d.data.clone()),
            other => panic!("unexpected attribute {other:?}"),
        })
        .collect();
    (data, named)
}

#[test]
fn vti_read_back_has_grid_geometry_and_layered_capacitor_values() {
    let dir = scratch(SCRATCH, "layers");
    // Image data (`field.vti`) is what a uniform lattice writes; a graded one writes a
    // rectilinear grid.
    let design = write(&dir, "layers.toml", &fieldgrid_tests::uniform(LAYERS));
    let out = dir.join("out");
    expect(
        run(&["solve", &design, "--out", s(&out), "--quiet", "--vtk"]),
        0,
    );
    let vtk = vtkio::Vtk::import(out.join("field.vti")).expect("vtkio reads field.vti");
    let (data, named) = arrays(vtk);
    let DataSet::ImageData {
        extent,
        origin,
        spacing,
        ..
    } = data
    else {
        unreachable!()
    };
    // 4 mm / 0.1 mm = 40 cells, 2 mm / 0.1 mm = 20 cells.
    let (nx, ny) = (41usize, 21usize);
    assert_eq!(extent.into_dims(), [nx as u32, ny as u32, 1]);
    assert_eq!(origin, [0.0, 0.0, 0.0]);
    assert!((spacing[0] as f64 - 1e-4).abs() < 1e-11, "{spacing:?}");
    assert!((spacing[1] as f64 - 1e-4).abs() < 1e-11, "{spacing:?}");
    let names: Vec<&str> = named.iter().map(|(n, _)| n.as_str()).collect();
    assert_eq!(names, fieldgrid_cli::vtk::ARRAYS);
    let f64s = |k: usize| named[k].1.cast_into::<f64>().unwrap();
    let (phi, e, mag, eps) = (f64s(0), f64s(1), f64s(2), f64s(3));
    let cond = named[4].1.cast_into::<i32>().unwrap();
    assert_eq!(phi.len(), nx * ny);
    assert_eq!(e.len(), 3 * nx * ny);
    assert_eq!(mag.len(), nx * ny);
    // Series layers (elementary electrostatics: the normal D is continuous across the
    // interface): 4 E1 = E2 and E1 * 1 mm + E2 * 0.8 mm = 50 V, so E1 = 50 / 4.2 V/mm.
    let e1 = 50.0 / 4.2e-3;
    let e2 = 4.0 * e1;
    let node = |i: usize, j: usize| j * nx + i;
    for (i, j, want_phi, want_e, want_eps, want_cond) in [
        (5, 5, e1 * 0.5e-3, e1, 4.0, -1),
        (20, 5, e1 * 0.5e-3, e1, 4.0, -1),
        (30, 14, e1 * 1e-3 + e2 * 0.4e-3, e2, 1.0, -1),
        (10, 19, 50.0, f64::NAN, 1.0, 0),
    ] {
        let p = node(i, j);
        assert!(
            (phi[p] - want_phi).abs() < 1e-6 * 50.0,
            "potential at ({i}, {j}) = {} V, want {want_phi}",
            phi[p]
        );
        if want_e.is_finite() {
            // The field points from the electrode down to ground: -y.
            assert!((e[3 * p] - 0.0).abs() < 1e-6 * want_e, "Ex = {}", e[3 * p]);
            assert!(
                (e[3 * p + 1] + want_e).abs() < 1e-6 * want_e,
                "Ey at ({i}, {j}) = {}, want {}",
                e[3 * p + 1],
                -want_e
            );
            assert!((mag[p] - want_e).abs() < 1e-6 * want_e);
        }
        assert_eq!(e[3 * p + 2], 0.0);
        assert_eq!(eps[p], want_eps, "permittivity at ({i}, {j})");
        assert_eq!(cond[p], want_cond, "conductor index at ({i}, {j})");
    }
    // Without --vtk no .vti is written.
    let out2 = dir.join("out2");
    run(&["solve", &design, "--out", s(&out2), "--quiet"]);
    assert!(out2.join("summary.json").is_file());
    assert!(!out2.join("field.vti").exists());
}
