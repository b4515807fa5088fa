//! `field.vti` / `field.vtr`: the solved grid as VTK XML image data (a uniform grid) or
//! rectilinear grid (a graded one), for general-purpose 3-D viewers.
//!
//! The file is one piece of `nx × ny × 1` points (extent `0..nx-1, 0..ny-1, 0..0`). Image
//! data (`.vti`) gives origin `(x0, y0, 0)` m and spacing `(hx, hy, hx)` m; a rectilinear grid
//! (`.vtr`) gives the node coordinates along x and y, m (64-bit), and z = 0. In axisymmetric
//! mode x is r and y is z. Point data, all in node order (x fastest, as the solver stores
//! them): `potential (V)`, `field (V/m)` (3 components, z = 0), `field magnitude (V/m)`,
//! `relative permittivity` and `conductor index` (0-based design order, -1 for a free node).
//! Arrays are 64-bit floats (the index is a 32-bit integer), written base64-encoded inline by
//! the `vtkio` crate. The VTK image-data model stores origin and spacing as 32-bit floats, so
//! they carry about 7 significant digits; the node values keep full precision.

use fieldgrid_solver::design::Design;
use fieldgrid_solver::grid::Grid;
use fieldgrid_solver::raster::NO_CONDUCTOR;
use fieldgrid_solver::study::Solution;
use vtkio::model::{
    Attribute, Attributes, ByteOrder, Coordinates, DataArray, DataSet, ElementType, Extent,
    ImageDataPiece, Piece, RectilinearGridPiece, Version, Vtk,
};

/// Names of the point-data arrays, in file order.
pub const ARRAYS: [&str; 5] = [
    "potential (V)",
    "field (V/m)",
    "field magnitude (V/m)",
    "relative permittivity",
    "conductor index",
];

/// The file the solution is written to: `field.vti` on a uniform grid, `field.vtr` on a
/// graded one.
pub fn file_name(grid: &Grid) -> &'static str {
    if grid.is_uniform() {
        "field.vti"
    } else {
        "field.vtr"
    }
}

/// The VTK model of the solution: image data on a uniform grid, a rectilinear grid on a
/// graded one.
pub fn model(sol: &Solution, design: &Design) -> Vtk {
    let g = &sol.grid;
    let field = sol.field();
    let n = g.len();
    let mut vector = Vec::with_capacity(3 * n);
    let mut magnitude = Vec::with_capacity(n);
    for p in 0..n {
        let e = field.at(p);
        vector.extend_from_slice(&[e[0], e[1], 0.0]);
        magnitude.push(e[0].hypot(e[1]));
    }
    let permittivity: Vec<f64> = sol
        .raster
        .material
        .iter()
        .map(|&m| fieldgrid_solver::material::of(design, m).permittivity)
        .collect();
    let conductor: Vec<i32> = sol
        .raster
        .conductor
        .iter()
        .map(|&c| if c == NO_CONDUCTOR { -1 } else { i32::from(c) })
        .collect();
    let scalar = |name: &str, data: vtkio::IOBuffer| {
        Attribute::DataArray(DataArray {
            name: name.to_string(),
            elem: ElementType::Scalars {
                num_comp: 1,
                lookup_table: None,
            },
            data,
        })
    };
    let point = vec![
        scalar(ARRAYS[0], sol.potential.clone().into()),
        Attribute::DataArray(DataArray {
            name: ARRAYS[1].to_string(),
            elem: ElementType::Vectors,
            data: vector.into(),
        }),
        scalar(ARRAYS[2], magnitude.into()),
        scalar(ARRAYS[3], permittivity.into()),
        scalar(ARRAYS[4], conductor.into()),
    ];
    let extent = Extent::Ranges([0..=(g.nx as i32 - 1), 0..=(g.ny as i32 - 1), 0..=0]);
    let data = Attributes {
        point,
        cell: Vec::new(),
    };
    let data = if g.is_uniform() {
        DataSet::ImageData {
            extent: extent.clone(),
            origin: [g.x0() as f32, g.y0() as f32, 0.0],
            spacing: [g.dx(0) as f32, g.dy(0) as f32, g.dx(0) as f32],
            meta: None,
            pieces: vec![Piece::Inline(Box::new(ImageDataPiece { extent, data }))],
        }
    } else {
        DataSet::RectilinearGrid {
            extent: extent.clone(),
            meta: None,
            pieces: vec![Piece::Inline(Box::new(RectilinearGridPiece {
                extent,
                coords: Coordinates {
                    x: g.xs().to_vec().into(),
                    y: g.ys().to_vec().into(),
                    z: vec![0.0f64].into(),
                },
                data,
            }))],
        }
    };
    Vtk {
        version: Version::XML { major: 1, minor: 0 },
        title: String::new(),
        byte_order: ByteOrder::LittleEndian,
        file_path: None,
        data,
    }
}

/// The document bytes (of the file [`file_name`] names).
pub fn bytes(sol: &Solution, design: &Design) -> Result<Vec<u8>, vtkio::Error> {
    let mut bytes = Vec::new();
    model(sol, design).write_xml(&mut bytes)?;
    Ok(bytes)
}

#[cfg(test)]
mod tests {
    use super::*;
    use fieldgrid_solver::design::{Conductor, Dielectric, Domain, Drive, Shape, Side, Sides};
    use fieldgrid_solver::study::{self, StudyParams};

    #[test]
    fn graded_grid_is_written_as_a_rectilinear_grid_with_its_lines() {
        // Series layers between plates (elementary electrostatics: the normal D is continuous
        // across the interface): permittivity 4 on y = [0, 1] mm, air up to the 50 V lid at
        // 1.8 mm, so E1 = 50 / 4.2 V/mm below and 4 E1 above.
        let rect = |x: [f64; 2], y: [f64; 2]| Shape::Rect { x, y, round: 0.0 };
        let design = Design {
            domain: Domain {
                x: [0.0, 4e-3],
                y: [0.0, 2e-3],
                cell: 2e-4,
            },
            sides: Sides {
                left: Side::Symmetry,
                right: Side::Symmetry,
                bottom: Side::Ground,
                top: Side::Fixed(50.0),
            },
            dielectrics: vec![Dielectric {
                name: "layer".into(),
                permittivity: 4.0,
                strength: None,
                shape: rect([0.0, 4e-3], [0.0, 1e-3]),
            }],
            conductors: vec![Conductor {
                name: "lid".into(),
                drive: Drive::Fixed(50.0),
                joined: Vec::new(),
                shape: rect([0.0, 4e-3], [1.8e-3, 2e-3]),
            }],
            ..Design::default()
        };
        let xs = vec![0.0, 0.3e-3, 0.5e-3, 1.2e-3, 2.0e-3, 3.1e-3, 4e-3];
        let ys = vec![
            0.0, 0.1e-3, 0.25e-3, 0.6e-3, 0.9e-3, 1e-3, 1.05e-3, 1.3e-3, 1.7e-3, 1.8e-3, 2e-3,
        ];
        let grid = Grid::from_lines(xs.clone(), ys.clone()).unwrap();
        let params = StudyParams::default().with_error_estimate(false);
        let plan = study::plan(&design, &params).unwrap().with_grid(grid);
        let sol = study::run_planned(&design, &plan, &params).unwrap();
        assert_eq!(file_name(&sol.grid), "field.vtr");
        let bytes = bytes(&sol, &design).unwrap();
        let back = Vtk::parse_xml(&bytes[..]).expect("vtkio reads its rectilinear grid");
        let DataSet::RectilinearGrid { extent, pieces, .. } = back.data else {
            panic!("not a rectilinear grid");
        };
        assert_eq!(extent.into_dims(), [7, 11, 1]);
        let Piece::Inline(piece) = &pieces[0] else {
            panic!("piece not inline");
        };
        assert_eq!(piece.coords.x.cast_into::<f64>().unwrap(), xs);
        assert_eq!(piece.coords.y.cast_into::<f64>().unwrap(), ys);
        let Attribute::DataArray(phi) = &piece.data.point[0] else {
            panic!("no potential");
        };
        let phi = phi.data.cast_into::<f64>().unwrap();
        let e1 = 50.0 / 4.2e-3;
        for (j, &y) in ys.iter().enumerate().take(9) {
            let want = if y <= 1e-3 {
                e1 * y
            } else {
                e1 * 1e-3 + 4.0 * e1 * (y - 1e-3)
            };
            for i in 0..xs.len() {
                let got = phi[i + j * xs.len()];
                assert!(
                    (got - want).abs() < 1e-6,
                    "({i}, {j}): {got} V, want {want} V"
                );
            }
        }
    }
}
