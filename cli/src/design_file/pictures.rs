//! `[pictures]`: how the design's pictures are drawn by default. `zoom = [x0, x1, y0, y1]`
//! is the window of the domain they show, in the file's length unit (r and z in an
//! axisymmetric design), the same as the option `--zoom X0,X1,Y0,Y1`, which overrides it.
//!
//! Invariants: the window is four finite numbers with x0 < x1 and y0 < y1, kept in the
//! file's unit, and it overlaps the domain (the pictures cut it to the domain).

use fieldgrid_solver::design::Domain;

use super::spans::{get, Node};
use super::values::{show, Reader, Res};

impl Reader<'_> {
    /// `[pictures] zoom`, in the file's unit, checked against the domain (m).
    pub(super) fn picture_zoom(&self, root: &Node, domain: &Domain) -> Res<Option<[f64; 4]>> {
        let Some(e) = root.entries().and_then(|top| get(top, "pictures")) else {
            return Ok(None);
        };
        let t = self.table(&e.node, "pictures", &["zoom"])?;
        let Some(z) = get(t, "zoom") else {
            return Ok(None);
        };
        let key = "pictures.zoom";
        let expected = "the window [x0, x1, y0, y1] in the design's length unit";
        let list = self.array(&z.node, key, expected)?;
        if list.len() != 4 {
            return Err(self.err(
                &z.node.span,
                key,
                format!("{} numbers: expected four, {expected}", list.len()),
            ));
        }
        let mut w = [0.0; 4];
        for (v, n) in w.iter_mut().zip(list) {
            *v = self.number(n, key)?;
        }
        if w[0] >= w[1] || w[2] >= w[3] {
            return Err(self.err(&z.node.span, key, "the window needs x0 < x1 and y0 < y1"));
        }
        let m = self.scale;
        let (x, y) = (domain.x, domain.y);
        if w[1] * m <= x[0] || w[0] * m >= x[1] || w[3] * m <= y[0] || w[2] * m >= y[1] {
            return Err(self.err(
                &z.node.span,
                key,
                format!(
                    "the window lies outside the domain (x {} to {}, y {} to {} in the \
                     design's unit)",
                    show(x[0] / m),
                    show(x[1] / m),
                    show(y[0] / m),
                    show(y[1] / m)
                ),
            ));
        }
        Ok(Some(w))
    }
}
