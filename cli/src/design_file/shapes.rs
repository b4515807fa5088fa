//! The shape of an item: exactly one of `rect`, `circle`, `ring`, `polygon`, `polyline`
//! (conductors only) or `svg`, with an optional fillet radius (`round`), read into a
//! [`Shape`] in metres; SVG outlines are read from a bounded regular file.
//!
//! Invariants: an item has exactly one shape key; sizes are positive; an SVG file is a
//! regular file of at most [`MAX_SVG_BYTES`], its path relative to the design file, its
//! curves flattened to a tolerance tied to the grid's cell.

use fieldgrid_solver::design::{Point, Shape};

use super::spans::{get, Entry, Node};
use super::svg;
use super::values::{join, show, table_span, Reader, Res};

/// Largest SVG file a design may import, bytes.
pub const MAX_SVG_BYTES: u64 = 64 << 20;

/// Reads an SVG drawing: a regular file (a device such as /dev/zero would never end, a pipe
/// would wait for a writer) of at most [`MAX_SVG_BYTES`].
pub(super) fn read_svg_file(path: &std::path::Path) -> std::io::Result<String> {
    use std::io::{Error, ErrorKind, Read};
    let meta = std::fs::metadata(path)?;
    if !meta.is_file() {
        return Err(Error::new(ErrorKind::InvalidInput, "not a regular file"));
    }
    let too_large = || {
        Error::new(
            ErrorKind::InvalidData,
            format!("larger than {} MiB", MAX_SVG_BYTES >> 20),
        )
    };
    if meta.len() > MAX_SVG_BYTES {
        return Err(too_large());
    }
    let mut text = String::new();
    std::fs::File::open(path)?
        .take(MAX_SVG_BYTES + 1)
        .read_to_string(&mut text)?;
    if text.len() as u64 > MAX_SVG_BYTES {
        return Err(too_large());
    }
    Ok(text)
}

/// The keys naming an item's shape, exactly one of which an item gives.
pub(super) const SHAPE_KEYS: &[&str] = &["rect", "circle", "ring", "polygon", "polyline", "svg"];

/// The keys beside a shape key in an item's table.
pub(super) const BESIDE_SHAPE: [&str; 3] = ["holes", "round", "round_corners"];

/// The keys of an item's table: `own` (name, potential, ...), then the shape's keys.
pub(super) fn item_keys<'k>(own: &[&'k str]) -> Vec<&'k str> {
    [own, SHAPE_KEYS, &BESIDE_SHAPE].concat()
}

/// Which kind of item a shape belongs to (polylines are for conductors only).
#[derive(Clone, Copy, PartialEq)]
pub(super) enum Owner {
    Conductor,
    Other,
}

impl Reader<'_> {
    /// The single shape of an item whose entries are `t`.
    pub(super) fn shape(&self, t: &[Entry], node: &Node, path: &str, owner: Owner) -> Res<Shape> {
        let shapes: Vec<&Entry> = t
            .iter()
            .filter(|e| SHAPE_KEYS.contains(&e.key.as_str()))
            .collect();
        let allowed = if owner == Owner::Conductor {
            "rect, circle, ring, polygon, polyline or svg"
        } else {
            "rect, circle, ring, polygon or svg"
        };
        let e = match shapes.as_slice() {
            [] => {
                return Err(self.err(
                    &table_span(node),
                    path,
                    format!("missing shape: give exactly one of {allowed}"),
                ))
            }
            [one] => *one,
            [first, second, ..] => {
                return Err(self.err(
                    &second.key_span,
                    &join(path, &second.key),
                    format!(
                        "two shapes (`{}` and `{}`): an item has exactly one",
                        first.key, second.key
                    ),
                ))
            }
        };
        let key = join(path, &e.key);
        for extra in BESIDE_SHAPE {
            if let Some(x) = get(t, extra) {
                if e.key != "polygon" {
                    let hint = if extra != "holes" && e.key == "rect" {
                        format!(
                            ": for a rect write it inside, rect = {{ x = ..., y = ..., {extra} \
                             = ... }}"
                        )
                    } else {
                        String::new()
                    };
                    return Err(self.err(
                        &x.key_span,
                        &join(path, extra),
                        format!(
                            "`{extra}` goes beside `polygon` only, not `{}`{hint}",
                            e.key
                        ),
                    ));
                }
            }
        }
        let n = &e.node;
        match e.key.as_str() {
            "rect" => {
                let s = self.table(n, &key, &["x", "y", "round", "round_corners"])?;
                let x = self.required(s, n, &key, "x", "the extent [x0, x1]")?;
                let y = self.required(s, n, &key, "y", "the extent [y0, y1]")?;
                let x = self.extent(&x.node, &join(&key, "x"))?;
                let y = self.extent(&y.node, &join(&key, "y"))?;
                let round = self.round(s, &key)?;
                match self.round_corners(s, &key, 4)? {
                    // Chosen corners make the rectangle a polygon: its vertices counted
                    // counter-clockwise from (x0, y0).
                    Some(corners) => Ok(Shape::Polygon {
                        outer: vec![[x[0], y[0]], [x[1], y[0]], [x[1], y[1]], [x[0], y[1]]],
                        holes: Vec::new(),
                        round,
                        corners: Some(corners),
                    }),
                    None => Ok(Shape::Rect { x, y, round }),
                }
            }
            "circle" => {
                let s = self.table(n, &key, &["center", "radius"])?;
                let c = self.required(s, n, &key, "center", "the centre [x, y]")?;
                let r = self.required(s, n, &key, "radius", "the radius")?;
                let center = self.point(&c.node, &join(&key, "center"))?;
                let rk = join(&key, "radius");
                let radius = self.size(&r.node, &rk, "the radius", false)?;
                Ok(Shape::Circle { center, radius })
            }
            "ring" => {
                let s = self.table(n, &key, &["center", "inner", "outer"])?;
                let c = self.required(s, n, &key, "center", "the centre [x, y]")?;
                let i = self.required(s, n, &key, "inner", "the inner radius")?;
                let o = self.required(s, n, &key, "outer", "the outer radius")?;
                let center = self.point(&c.node, &join(&key, "center"))?;
                let ik = join(&key, "inner");
                let inner = self.size(&i.node, &ik, "the inner radius", true)?;
                let ok = join(&key, "outer");
                let outer = self.length(&o.node, &ok)?;
                if outer <= inner {
                    return Err(self.err(
                        &o.node.span,
                        &ok,
                        "the outer radius must be larger than the inner radius",
                    ));
                }
                Ok(Shape::Ring {
                    center,
                    inner,
                    outer,
                })
            }
            "polygon" => {
                let outer = self.points(n, &key, 3, "a polygon")?;
                let mut holes = Vec::new();
                if let Some(h) = get(t, "holes") {
                    let hk = join(path, "holes");
                    let list =
                        self.array(&h.node, &hk, "an array of polygons [[[x, y], ...], ...]")?;
                    for hole in list {
                        holes.push(self.points(hole, &hk, 3, "a hole")?);
                    }
                }
                let round = self.round(t, path)?;
                let total = outer.len() + holes.iter().map(Vec::len).sum::<usize>();
                let corners = self.round_corners(t, path, total)?;
                Ok(Shape::Polygon {
                    outer,
                    holes,
                    round,
                    corners,
                })
            }
            "polyline" => {
                if owner != Owner::Conductor {
                    return Err(self.err(
                        &e.key_span,
                        &key,
                        "a polyline (a conductor of zero thickness) is for conductors only",
                    ));
                }
                Ok(Shape::Polyline(self.points(n, &key, 2, "a polyline")?))
            }
            "svg" => self.svg_shape(n, &key, owner),
            _ => unreachable!("filtered on SHAPE_KEYS"),
        }
    }

    /// `svg = { file, id }`: the outline of one element of an SVG drawing (see [`svg`]).
    /// The file path is relative to the design file's directory.
    pub(super) fn svg_shape(&self, n: &Node, key: &str, owner: Owner) -> Res<Shape> {
        let s = self.table(n, key, &["file", "id"])?;
        let f = self.required(s, n, key, "file", "the SVG file, relative to the design")?;
        let i = self.required(s, n, key, "id", "the id of the element to import")?;
        let fk = join(key, "file");
        let ik = join(key, "id");
        let file = self.string(&f.node, &fk)?;
        let id = self.string(&i.node, &ik)?;
        let base = std::path::Path::new(self.file)
            .parent()
            .unwrap_or(std::path::Path::new(""));
        let path = base.join(file);
        let text = read_svg_file(&path).map_err(|e| {
            self.err(
                &f.node.span,
                &fk,
                format!("cannot read the SVG file {}: {e}", path.display()),
            )
        })?;
        // A tenth of the cell, in the file's unit (SVG user units are file units).
        // Never zero: a subnormal cell would underflow it (the grid itself is refused later).
        let tolerance = (self.cell / self.scale / 10.0).max(f64::MIN_POSITIVE);
        let o = svg::outline(&text, id, tolerance).map_err(|e| match e {
            svg::SvgError::NoSuchId => self.err(
                &i.node.span,
                &ik,
                format!("{}: no element with id \"{id}\"", path.display()),
            ),
            other => self.err(&f.node.span, &fk, format!("{}: {other}", path.display())),
        })?;
        let pts: Vec<Point> = o
            .points
            .iter()
            .map(|p| [p[0] * self.scale, p[1] * self.scale])
            .collect();
        if o.closed {
            Ok(Shape::Polygon {
                outer: pts,
                holes: Vec::new(),
                round: 0.0,
                corners: None,
            })
        } else if owner == Owner::Conductor {
            Ok(Shape::Polyline(pts))
        } else {
            Err(self.err(
                &i.node.span,
                &ik,
                format!(
                    "{}: element \"{id}\" is an open outline (a polyline), which is for \
                     conductors only; close the path (Z) to make it a polygon",
                    path.display()
                ),
            ))
        }
    }

    pub(super) fn round(&self, t: &[Entry], path: &str) -> Res<f64> {
        let Some(e) = get(t, "round") else {
            return Ok(0.0);
        };
        let key = join(path, "round");
        self.size(&e.node, &key, "the fillet radius", true)
    }

    /// `round_corners = [i, ...]`: the 0-based vertices `round` applies to, counted through
    /// the outer boundary and then each hole (a rectangle's four counter-clockwise from
    /// (x0, y0)); `total` vertices in all.
    pub(super) fn round_corners(
        &self,
        t: &[Entry],
        path: &str,
        total: usize,
    ) -> Res<Option<Vec<usize>>> {
        let Some(e) = get(t, "round_corners") else {
            return Ok(None);
        };
        let key = join(path, "round_corners");
        if get(t, "round").is_none() {
            return Err(self.err(
                &e.key_span,
                &key,
                "`round_corners` chooses the corners `round = r` rounds: give `round` too",
            ));
        }
        let list = self.array(&e.node, &key, "an array of vertex indices [i, j, ...]")?;
        let mut out = Vec::with_capacity(list.len());
        for n in list {
            let v = self.number(n, &key)?;
            if v.fract() != 0.0 || v < 0.0 || v >= total as f64 {
                return Err(self.err(
                    &n.span,
                    &key,
                    format!(
                        "{} is not a vertex: give 0-based indices from 0 to {} ({})",
                        show(v),
                        total - 1,
                        if path.ends_with("rect") {
                            "a rectangle's corners counter-clockwise from (x0, y0)"
                        } else {
                            "the outer boundary's vertices, then each hole's"
                        }
                    ),
                ));
            }
            out.push(v as usize);
        }
        Ok(Some(out))
    }
}
