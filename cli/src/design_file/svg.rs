//! Outlines imported from SVG drawings: `svg = { file = "pads.svg", id = "pad1" }`.
//!
//! The element with the given `id` (a `path`, `rect`, `circle`, `ellipse`, `polygon` or
//! `polyline`, under any `transform`s of its own and of its ancestors) becomes one outline:
//! closed (a polygon) or open (a polyline; conductors only).
//!
//! Units and axes: one SVG user unit is one unit of the design file (`unit = "mm"` makes a
//! user unit a millimetre; `width`/`height` and the viewBox-to-viewport scale are ignored).
//! SVG's y axis grows downward, the design's upward, so y is mirrored about the bottom of the
//! drawing: `x_design = x_svg`, `y_design = B - y_svg`, where B is the viewBox's bottom edge
//! (min-y + height) of the root `<svg>`, else its plain-number `height`, else 0. A drawing
//! with its origin at the page's top-left corner thus keeps its bottom-left corner at the
//! design's origin.
//!
//! Curves (Béziers, circles and ellipses) are flattened to chords that stay within
//! `tolerance` (design units) of the true curve; the caller ties it to the cell size. Path
//! arcs (`A`) are accepted only when the tolerance is at least 0.1 user units, the fixed
//! accuracy at which the SVG library turns them into Béziers.
//! Invariant: every returned point is finite, a closed outline has at least 3 distinct
//! points and does not repeat its first point at the end.

use std::str::FromStr;
use svgtypes::{SimplePathSegment, SimplifyingPathParser, Transform};

/// One imported outline, in design units (not yet scaled to metres).
#[derive(Clone, Debug, PartialEq)]
pub struct Outline {
    /// Vertices in order.
    pub points: Vec<[f64; 2]>,
    /// Closed (a polygon) or open (a polyline).
    pub closed: bool,
}

/// Why an outline could not be imported.
#[derive(Clone, Debug, PartialEq)]
pub enum SvgError {
    /// The file is not well-formed XML/SVG.
    Syntax(String),
    /// No element carries the id.
    NoSuchId,
    /// The element exists but cannot be made an outline.
    Unsupported(String),
}

impl std::fmt::Display for SvgError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            SvgError::Syntax(m) | SvgError::Unsupported(m) => f.write_str(m),
            SvgError::NoSuchId => f.write_str("no element with this id"),
        }
    }
}

/// An affine map (SVG matrix order a b c d e f).
#[derive(Clone, Copy, Debug)]
struct Affine([f64; 6]);

impl Affine {
    const IDENTITY: Affine = Affine([1.0, 0.0, 0.0, 1.0, 0.0, 0.0]);

    fn apply(&self, x: f64, y: f64) -> [f64; 2] {
        let [a, b, c, d, e, f] = self.0;
        [a * x + c * y + e, b * x + d * y + f]
    }

    /// `self ∘ inner`: apply `inner` first.
    fn then_inner(&self, inner: &Affine) -> Affine {
        let [a, b, c, d, e, f] = self.0;
        let [a2, b2, c2, d2, e2, f2] = inner.0;
        Affine([
            a * a2 + c * b2,
            b * a2 + d * b2,
            a * c2 + c * d2,
            b * c2 + d * d2,
            a * e2 + c * f2 + e,
            b * e2 + d * f2 + f,
        ])
    }

    /// An upper bound of how much the map stretches a length (Frobenius norm).
    fn stretch(&self) -> f64 {
        let [a, b, c, d, ..] = self.0;
        (a * a + b * b + c * c + d * d).sqrt()
    }
}

/// Finds the element `id` in `text` and returns its outline, curves flattened to `tolerance`.
pub fn outline(text: &str, id: &str, tolerance: f64) -> Result<Outline, SvgError> {
    assert!(tolerance > 0.0, "flattening tolerance must be positive");
    let doc = roxmltree::Document::parse(text).map_err(|e| SvgError::Syntax(e.to_string()))?;
    let root = doc.root_element();
    if root.tag_name().name() != "svg" {
        return Err(SvgError::Syntax(format!(
            "the root element is <{}>, not <svg>",
            root.tag_name().name()
        )));
    }
    let node = doc
        .descendants()
        .find(|n| n.is_element() && n.attribute("id") == Some(id))
        .ok_or(SvgError::NoSuchId)?;
    // Accumulate transforms from the root down to the element itself.
    let mut chain: Vec<roxmltree::Node> = node.ancestors().filter(|n| n.is_element()).collect();
    chain.reverse();
    let mut m = Affine::IDENTITY;
    for n in &chain {
        if let Some(t) = n.attribute("transform") {
            let t = Transform::from_str(t).map_err(|e| {
                SvgError::Unsupported(format!("<{}> transform=\"{t}\": {e}", n.tag_name().name()))
            })?;
            m = m.then_inner(&Affine([t.a, t.b, t.c, t.d, t.e, t.f]));
        }
    }
    let bottom = bottom_edge(&root);
    let tag = node.tag_name().name();
    let num = |name: &str, default: Option<f64>| -> Result<f64, SvgError> {
        match node.attribute(name) {
            Some(s) => length(s).ok_or_else(|| {
                SvgError::Unsupported(format!(
                    "<{tag} id=\"{id}\"> {name}=\"{s}\": expected a number in user units"
                ))
            }),
            None => default.ok_or_else(|| {
                SvgError::Unsupported(format!("<{tag} id=\"{id}\"> has no `{name}`"))
            }),
        }
    };
    let (raw, closed) = match tag {
        "path" => {
            let d = node.attribute("d").ok_or_else(|| {
                SvgError::Unsupported(format!("<path id=\"{id}\"> has no `d` data"))
            })?;
            path(d, &m, tolerance)
                .map_err(|e| SvgError::Unsupported(format!("<path id=\"{id}\">: {e}")))?
        }
        "rect" => {
            if node.attribute("rx").is_some() || node.attribute("ry").is_some() {
                return Err(SvgError::Unsupported(format!(
                    "<rect id=\"{id}\"> has rounded corners (rx/ry): convert it to a path"
                )));
            }
            let (x, y) = (num("x", Some(0.0))?, num("y", Some(0.0))?);
            let (w, h) = (num("width", None)?, num("height", None)?);
            if !(w > 0.0 && h > 0.0) {
                return Err(SvgError::Unsupported(format!(
                    "<rect id=\"{id}\"> needs a positive width and height"
                )));
            }
            let corners = [[x, y], [x + w, y], [x + w, y + h], [x, y + h]];
            (corners.iter().map(|p| m.apply(p[0], p[1])).collect(), true)
        }
        "circle" | "ellipse" => {
            let (cx, cy) = (num("cx", Some(0.0))?, num("cy", Some(0.0))?);
            let (rx, ry) = if tag == "circle" {
                let r = num("r", None)?;
                (r, r)
            } else {
                (num("rx", None)?, num("ry", None)?)
            };
            if !(rx > 0.0 && ry > 0.0) {
                return Err(SvgError::Unsupported(format!(
                    "<{tag} id=\"{id}\"> needs a positive radius"
                )));
            }
            // Sagitta of a chord spanning angle 2π/n on radius r: r (1 - cos(π/n)) <= tol.
            let r = rx.max(ry) * m.stretch();
            let n = if tolerance >= r {
                8
            } else {
                // At most as many chords as a path curve gets (see `steps`): a tolerance far
                // below r (a cell near the double range's end) would ask for billions.
                ((std::f64::consts::PI / (1.0 - tolerance / r).acos()).ceil() as usize)
                    .clamp(8, 10_000)
            };
            let pts = (0..n)
                .map(|k| {
                    let t = std::f64::consts::TAU * k as f64 / n as f64;
                    m.apply(cx + rx * t.cos(), cy + ry * t.sin())
                })
                .collect();
            (pts, true)
        }
        "polygon" | "polyline" => {
            let s = node.attribute("points").ok_or_else(|| {
                SvgError::Unsupported(format!("<{tag} id=\"{id}\"> has no `points`"))
            })?;
            let pts = svgtypes::PointsParser::from(s)
                .map(|(x, y)| m.apply(x, y))
                .collect();
            (pts, tag == "polygon")
        }
        other => {
            return Err(SvgError::Unsupported(format!(
                "<{other} id=\"{id}\"> cannot be an outline: use a path, rect, circle, \
                 ellipse, polygon or polyline"
            )))
        }
    };
    let mut points: Vec<[f64; 2]> = Vec::with_capacity(raw.len());
    for p in raw {
        let q = [p[0], bottom - p[1]];
        if !(q[0].is_finite() && q[1].is_finite()) {
            return Err(SvgError::Unsupported(format!(
                "<{tag} id=\"{id}\"> has a coordinate that is not a finite number"
            )));
        }
        if points.last() != Some(&q) {
            points.push(q);
        }
    }
    if closed {
        while points.len() > 1 && points.last() == points.first() {
            points.pop();
        }
    }
    let min = if closed { 3 } else { 2 };
    if points.len() < min {
        return Err(SvgError::Unsupported(format!(
            "<{tag} id=\"{id}\"> has {} distinct points; a {} needs at least {min}",
            points.len(),
            if closed { "closed outline" } else { "polyline" }
        )));
    }
    Ok(Outline { points, closed })
}

/// A plain number or a `px` length (user units).
fn length(s: &str) -> Option<f64> {
    let l = svgtypes::Length::from_str(s).ok()?;
    matches!(
        l.unit,
        svgtypes::LengthUnit::None | svgtypes::LengthUnit::Px
    )
    .then_some(l.number)
    .filter(|v| v.is_finite())
}

/// The y about which the drawing is mirrored (see the module doc).
fn bottom_edge(root: &roxmltree::Node) -> f64 {
    if let Some(vb) = root
        .attribute("viewBox")
        .and_then(|s| svgtypes::ViewBox::from_str(s).ok())
    {
        return vb.y + vb.h;
    }
    root.attribute("height").and_then(length).unwrap_or(0.0)
}

/// Flattens path data `d` (one subpath) under the map `m`; returns the points and whether the
/// subpath is closed.
fn path(d: &str, m: &Affine, tol: f64) -> Result<(Vec<[f64; 2]>, bool), String> {
    // The SVG library turns elliptical arcs into Béziers to a fixed 0.1 user units, which
    // is coarser than the cell in most designs: refuse them rather than lose accuracy.
    let has_arc = svgtypes::PathParser::from(d)
        .any(|s| matches!(s, Ok(svgtypes::PathSegment::EllipticalArc { .. })));
    if has_arc && tol < 0.1 {
        return Err(
            "uses elliptical arc commands (A), which are not imported at this cell \
                    size: convert the arcs to Bézier curves in the drawing program, or draw \
                    the shape as a circle or ellipse"
                .into(),
        );
    }
    let mut pts: Vec<[f64; 2]> = Vec::new();
    let mut closed = false;
    let mut cur = [0.0, 0.0];
    for seg in SimplifyingPathParser::from(d) {
        let seg = seg.map_err(|e| format!("path data: {e}"))?;
        match seg {
            SimplePathSegment::MoveTo { x, y } => {
                if !pts.is_empty() {
                    if pts.len() == 1 && !closed {
                        pts.clear();
                    } else {
                        return Err("has several subpaths (pieces or holes): give each \
                                    piece its own element and id"
                            .into());
                    }
                }
                cur = m.apply(x, y);
                pts.push(cur);
            }
            SimplePathSegment::LineTo { x, y } => {
                check_open(closed)?;
                cur = m.apply(x, y);
                pts.push(cur);
            }
            SimplePathSegment::Quadratic { x1, y1, x, y } => {
                check_open(closed)?;
                let (p1, p2) = (m.apply(x1, y1), m.apply(x, y));
                // Uniform steps: deviation <= |p0 - 2 p1 + p2| / (4 n²).
                let dd = norm(sub(add(cur, p2), scale(p1, 2.0)));
                let n = steps(dd / 4.0, tol);
                for k in 1..=n {
                    let t = k as f64 / n as f64;
                    let u = 1.0 - t;
                    pts.push(add(
                        add(scale(cur, u * u), scale(p1, 2.0 * u * t)),
                        scale(p2, t * t),
                    ));
                }
                cur = p2;
            }
            SimplePathSegment::CurveTo {
                x1,
                y1,
                x2,
                y2,
                x,
                y,
            } => {
                check_open(closed)?;
                let (p1, p2, p3) = (m.apply(x1, y1), m.apply(x2, y2), m.apply(x, y));
                // Uniform steps: deviation <= max|B''| / (8 n²), with
                // max|B''| <= 6 max(|p0 - 2 p1 + p2|, |p1 - 2 p2 + p3|).
                let d1 = norm(sub(add(cur, p2), scale(p1, 2.0)));
                let d2 = norm(sub(add(p1, p3), scale(p2, 2.0)));
                let n = steps(0.75 * d1.max(d2), tol);
                for k in 1..=n {
                    let t = k as f64 / n as f64;
                    let u = 1.0 - t;
                    pts.push(add(
                        add(scale(cur, u * u * u), scale(p1, 3.0 * u * u * t)),
                        add(scale(p2, 3.0 * u * t * t), scale(p3, t * t * t)),
                    ));
                }
                cur = p3;
            }
            SimplePathSegment::ClosePath => {
                if pts.is_empty() {
                    return Err("closes before it starts".into());
                }
                closed = true;
            }
        }
    }
    if pts.is_empty() {
        return Err("has no path data".into());
    }
    Ok((pts, closed))
}

fn check_open(closed: bool) -> Result<(), String> {
    if closed {
        Err(
            "draws on after closing (several subpaths): give each piece its own element \
             and id"
                .into(),
        )
    } else {
        Ok(())
    }
}

/// Uniform steps so that `c / n² <= tol`.
fn steps(c: f64, tol: f64) -> usize {
    ((c / tol).sqrt().ceil() as usize).clamp(1, 10_000)
}

fn add(a: [f64; 2], b: [f64; 2]) -> [f64; 2] {
    [a[0] + b[0], a[1] + b[1]]
}
fn sub(a: [f64; 2], b: [f64; 2]) -> [f64; 2] {
    [a[0] - b[0], a[1] - b[1]]
}
fn scale(a: [f64; 2], s: f64) -> [f64; 2] {
    [a[0] * s, a[1] * s]
}
fn norm(a: [f64; 2]) -> f64 {
    a[0].hypot(a[1])
}

#[cfg(test)]
mod tests {
    use super::*;

    fn svg(body: &str) -> String {
        format!(r#"<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 100 50">{body}</svg>"#)
    }

    #[test]
    fn transforms_apply_innermost_first_and_y_mirrors_about_the_viewbox_bottom() {
        let t = svg(
            r#"<g transform="translate(10 0)"><rect id="r" transform="scale(2)" x="1" y="1" width="1" height="1"/></g>"#,
        );
        let o = outline(&t, "r", 0.01).unwrap();
        assert!(o.closed);
        // scale first: (2..4, 2..4), then translate: x 12..14; y_design = 50 - y_svg.
        assert_eq!(
            o.points,
            vec![[12.0, 48.0], [14.0, 48.0], [14.0, 46.0], [12.0, 46.0]]
        );
    }

    #[test]
    fn flattened_cubic_stays_within_tolerance_of_the_curve() {
        let t = svg(r#"<path id="c" d="M 0 0 C 30 40 70 -40 100 0"/>"#);
        let tol = 0.05;
        let o = outline(&t, "c", tol).unwrap();
        assert!(!o.closed);
        let b = |s: f64| {
            let u = 1.0 - s;
            let x = 3.0 * u * u * s * 30.0 + 3.0 * u * s * s * 70.0 + s * s * s * 100.0;
            let y = 3.0 * u * u * s * 40.0 - 3.0 * u * s * s * 40.0;
            [x, 50.0 - y]
        };
        // Every densely sampled curve point is within tol of the chord polyline.
        let dist = |p: [f64; 2]| {
            o.points
                .windows(2)
                .map(|w| {
                    let (a, c) = (w[0], w[1]);
                    let d = sub(c, a);
                    let s =
                        ((p[0] - a[0]) * d[0] + (p[1] - a[1]) * d[1]) / (d[0] * d[0] + d[1] * d[1]);
                    norm(sub(p, add(a, scale(d, s.clamp(0.0, 1.0)))))
                })
                .fold(f64::INFINITY, f64::min)
        };
        for k in 0..=2000 {
            let p = b(k as f64 / 2000.0);
            assert!(
                dist(p) <= tol,
                "curve point {p:?} is {} from the outline",
                dist(p)
            );
        }
        // And the flattening is not wildly finer than needed.
        assert!(o.points.len() < 200, "{} points", o.points.len());
    }

    #[test]
    fn second_subpath_is_refused() {
        let t = svg(r#"<path id="p" d="M 0 0 L 1 0 L 1 1 Z M 5 5 L 6 5 L 6 6 Z"/>"#);
        assert!(
            matches!(outline(&t, "p", 0.1), Err(SvgError::Unsupported(m)) if m.contains("subpaths"))
        );
    }
}
