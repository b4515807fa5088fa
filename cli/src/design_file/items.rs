//! The items of a design file: `[background]`, `[[conductor]]`, `[[dielectric]]`,
//! `[[charge]]` and `[[probe]]`, each table read into its typed part of the design, and the
//! rule that names are unique within each kind of item.
//!
//! Invariants: every item is named (non-empty, at most [`MAX_NAME_BYTES`] bytes, no control
//! characters); a conductor is either at a potential or floating, never both; a charge is
//! either a region (density and shape) or concentrated (position and amount); an
//! axisymmetric design's concentrated charge lies on the axis.

/// Longest name of a conductor, dielectric, probe or charge, bytes (names are written into
/// every row of the result tables and onto the pictures).
pub const MAX_NAME_BYTES: usize = 200;

use std::collections::HashMap;

use fieldgrid_solver::design::{Background, Charge, Conductor, Dielectric, Drive, Mode, Probe};

use super::shapes::{item_keys, Owner, SHAPE_KEYS};
use super::spans::{get, Entry, InputError, Node};
use super::values::{join, table_span, Reader, Res};

impl Reader<'_> {
    pub(super) fn permittivity(&self, e: &Entry, key: &str) -> Res<f64> {
        let v = self.number(&e.node, key)?;
        self.positive(v, &e.node, key, "the relative permittivity")
    }

    pub(super) fn strength(&self, t: &[Entry], path: &str) -> Res<Option<f64>> {
        let Some(e) = get(t, "strength") else {
            return Ok(None);
        };
        let key = join(path, "strength");
        let v = self.number(&e.node, &key)?;
        Ok(Some(self.positive(
            v,
            &e.node,
            &key,
            "the breakdown strength (V/m)",
        )?))
    }

    pub(super) fn background(&self, node: &Node) -> Res<Background> {
        let t = self.table(node, "background", &["permittivity", "strength"])?;
        let mut b = Background::default();
        if let Some(e) = get(t, "permittivity") {
            b.permittivity = self.permittivity(e, "background.permittivity")?;
        }
        b.strength = self.strength(t, "background")?;
        Ok(b)
    }

    pub(super) fn name(&self, t: &[Entry], node: &Node, path: &str) -> Res<String> {
        let e = self.required(t, node, path, "name", "every item is named")?;
        let key = join(path, "name");
        let s = self.string(&e.node, &key)?;
        if s.trim().is_empty() {
            return Err(self.err(&e.node.span, &key, "the name is empty"));
        }
        if s.len() > MAX_NAME_BYTES {
            return Err(self.err(
                &e.node.span,
                &key,
                format!(
                    "the name is {} bytes long; names are at most {MAX_NAME_BYTES}",
                    s.len()
                ),
            ));
        }
        if s.chars().any(char::is_control) {
            return Err(self.err(&e.node.span, &key, "the name contains a control character"));
        }
        Ok(s.to_string())
    }

    pub(super) fn conductor(&self, node: &Node) -> Res<Conductor> {
        let p = "conductor";
        let t = self.table(node, p, &item_keys(&["name", "potential", "floating"]))?;
        let name = self.name(t, node, p)?;
        if name.contains(',') {
            let e = get(t, "name").expect("name was read");
            return Err(self.err(
                &e.node.span,
                "conductor.name",
                "a conductor name may not contain `,` (lists of conductors are comma-separated)",
            ));
        }
        let floating = match get(t, "floating") {
            Some(e) => self.boolean(&e.node, "conductor.floating")?,
            None => false,
        };
        let drive = match (get(t, "potential"), floating) {
            (Some(e), true) => {
                return Err(self.err(
                    &e.key_span,
                    "conductor.potential",
                    "give either `potential` or `floating = true`, not both",
                ))
            }
            (Some(e), false) => Drive::Fixed(self.number(&e.node, "conductor.potential")?),
            (None, true) => Drive::Floating,
            (None, false) => {
                return Err(self.err(
                    &table_span(node),
                    "conductor.potential",
                    "missing `potential` (volts) or `floating = true`",
                ))
            }
        };
        let shape = self.shape(t, node, p, Owner::Conductor)?;
        Ok(Conductor {
            name,
            drive,
            shape,
            joined: Vec::new(),
        })
    }

    /// A piece of a conductor whose potential differs from its first piece's.
    pub(super) fn unequal_pieces(
        &self,
        node: &Node,
        first: &Conductor,
        piece: &Conductor,
    ) -> InputError {
        let t = node.entries().unwrap_or(&[]);
        let at = get(t, "potential")
            .or_else(|| get(t, "floating"))
            .map_or_else(|| table_span(node), |e| e.key_span.clone());
        let says = |d: Drive| match d {
            Drive::Fixed(v) => format!("potential {v} V"),
            Drive::Floating => "floating".to_string(),
        };
        self.err(
            &at,
            "conductor.potential",
            format!(
                "conductor `{}` is drawn in several pieces (tables with one name form one \
                 conductor), so every piece needs the same potential: its first piece is {}, \
                 this one {}; give them one potential, or different names if they are separate \
                 conductors",
                piece.name,
                says(first.drive),
                says(piece.drive)
            ),
        )
    }

    pub(super) fn dielectric(&self, node: &Node) -> Res<Dielectric> {
        let p = "dielectric";
        let t = self.table(node, p, &item_keys(&["name", "permittivity", "strength"]))?;
        let name = self.name(t, node, p)?;
        if name == "background" {
            let e = get(t, "name").expect("name was read");
            return Err(self.err(
                &e.node.span,
                "dielectric.name",
                "`background` names the material outside every dielectric; choose another name",
            ));
        }
        let e = self.required(t, node, p, "permittivity", "relative, > 0")?;
        let permittivity = self.permittivity(e, "dielectric.permittivity")?;
        let strength = self.strength(t, p)?;
        let shape = self.shape(t, node, p, Owner::Other)?;
        Ok(Dielectric {
            name,
            permittivity,
            strength,
            shape,
        })
    }

    pub(super) fn charge(&self, node: &Node) -> Res<Charge> {
        let p = "charge";
        let t = self.table(node, p, &item_keys(&["name", "density", "at", "amount"]))?;
        let name = self.name(t, node, p)?;
        let concentrated = t.iter().find(|e| e.key == "at" || e.key == "amount");
        let region = t
            .iter()
            .find(|e| e.key == "density" || SHAPE_KEYS.contains(&e.key.as_str()));
        if let (Some(c), Some(r)) = (concentrated, region) {
            let later =
                if c.key_span.as_ref().map(|s| s.start) > r.key_span.as_ref().map(|s| s.start) {
                    c
                } else {
                    r
                };
            return Err(self.err(
                &later.key_span,
                &join(p, &later.key),
                "a charge is either a region (`density` and a shape) or concentrated (`at` and \
                 `amount`), not both",
            ));
        }
        if concentrated.is_some() {
            let what = if self.mode == Mode::Planar {
                "C/m, a line charge"
            } else {
                "C, a point charge"
            };
            let at = self.required(t, node, p, "at", "the position [x, y]")?;
            let amount = self.required(t, node, p, "amount", what)?;
            let pos = self.point(&at.node, "charge.at")?;
            if self.mode == Mode::Axisymmetric && pos[0] != 0.0 {
                return Err(self.err(
                    &at.node.span,
                    "charge.at",
                    "in axisymmetric mode a concentrated charge is a point charge on the axis: \
                     its x must be 0",
                ));
            }
            let amount = self.number(&amount.node, "charge.amount")?;
            return Ok(Charge::Concentrated {
                name,
                at: pos,
                amount,
            });
        }
        let e = self.required(
            t,
            node,
            p,
            "density",
            "C/m^3, with a shape; or `at` and `amount` for a concentrated charge",
        )?;
        let density = self.number(&e.node, "charge.density")?;
        let shape = self.shape(t, node, p, Owner::Other)?;
        Ok(Charge::Region {
            name,
            density,
            shape,
        })
    }

    pub(super) fn probe(&self, node: &Node) -> Res<Probe> {
        let t = self.table(node, "probe", &["name", "at"])?;
        let name = self.name(t, node, "probe")?;
        let at = self.required(t, node, "probe", "at", "the position [x, y]")?;
        Ok(Probe {
            name,
            at: self.point(&at.node, "probe.at")?,
        })
    }
}

/// Names seen so far of one kind of item, for the "names unique" rule.
#[derive(Default)]
pub(super) struct Names(HashMap<String, usize>);

impl Names {
    pub(super) fn check(
        &mut self,
        r: &Reader<'_>,
        name: &str,
        node: &Node,
        kind: &str,
        index: usize,
    ) -> Res<()> {
        if let Some(first) = self.0.get(name) {
            let span = node
                .entries()
                .and_then(|t| get(t, "name"))
                .map(|e| e.node.span.clone())
                .unwrap_or(None);
            return Err(r.err(
                &span,
                &format!("{kind}.name"),
                format!(
                    "duplicate name \"{name}\": {kind} number {} already has it",
                    first + 1
                ),
            ));
        }
        self.0.insert(name.to_string(), index);
        Ok(())
    }
}
