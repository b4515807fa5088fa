//! `field.vti`: the solved grid as VTK XML image data, for general-purpose 3-D viewers.
//!
//! The file is one `ImageData` piece of `nx × ny × 1` points (extent `0..nx-1, 0..ny-1, 0..0`),
//! origin `(x0, y0, 0)` m and spacing `(hx, hy, hx)` m; in axisymmetric mode x is r and y is z.
//! Point data, all in node order (x fastest, as the solver stores them):
//! `potential (V)`, `field (V/m)` (3 components, z = 0), `field magnitude (V/m)`,
//! `relative permittivity` and `conductor index` (0-based design order, -1 for a free node).
//! Arrays are 64-bit floats (the index is a 32-bit integer), written base64-encoded inline by
//! the `vtkio` crate. The VTK model stores origin and spacing as 32-bit floats, so they carry
//! about 7 significant digits; the node values keep full precision.

use fieldgrid_solver::design::Design;
use fieldgrid_solver::raster::NO_CONDUCTOR;
use fieldgrid_solver::study::Solution;
use vtkio::model::{
    Attribute, Attributes, ByteOrder, DataArray, DataSet, ElementType, Extent, ImageDataPiece,
    Piece, Version, Vtk,
};

/// Names of the point-data arrays, in file order.
pub const ARRAYS: [&str; 5] = [
    "potential (V)",
    "field (V/m)",
    "field magnitude (V/m)",
    "relative permittivity",
    "conductor index",
];

/// The VTK model of the solution.
pub fn image_data(sol: &Solution, design: &Design) -> Vtk {
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
    Vtk {
        version: Version::XML { major: 1, minor: 0 },
        title: String::new(),
        byte_order: ByteOrder::LittleEndian,
        file_path: None,
        data: DataSet::ImageData {
            extent: extent.clone(),
            origin: [g.x0() as f32, g.y0() as f32, 0.0],
            spacing: [g.dx(0) as f32, g.dy(0) as f32, g.dx(0) as f32],
            meta: None,
            pieces: vec![Piece::Inline(Box::new(ImageDataPiece {
                extent,
                data: Attributes {
                    point,
                    cell: Vec::new(),
                },
            }))],
        },
    }
}

/// The `.vti` document bytes.
pub fn vti_bytes(sol: &Solution, design: &Design) -> Result<Vec<u8>, vtkio::Error> {
    let mut bytes = Vec::new();
    image_data(sol, design).write_xml(&mut bytes)?;
    Ok(bytes)
}
