//! The sections of a design file: the top-level keys, `[parameters]` (with overrides),
//! `[tolerances]`, `[parameter_units]`, `[grid]` and `[sides]`, each read into its typed
//! part of the design; the design as a whole is assembled here from these and the items
//! (`items`).
//!
//! Invariants: sections are read in the order that makes later ones well defined (unit and
//! mode, then parameters, then the grid, whose cell size ties SVG flattening); names are
//! unique within each kind of item, except that `[[conductor]]` tables sharing a name are the
//! pieces of one conductor (one net) and must give it one potential; an axisymmetric
//! design's left side is the axis.

use fieldgrid_solver::design::{Charge, Design, Domain, Lattice, Mode, Side, Sides};

use super::expr;
use super::items::Names;
use super::spans::{get, Entry, InputError, Kind, Node};
use super::unit::LengthUnit;
use super::values::{join, list, Reader, Reading, Res, LENGTH};

pub(super) const TOP_KEYS: &[&str] = &[
    "unit",
    "mode",
    "depth",
    "grid",
    "sides",
    "background",
    "parameters",
    "tolerances",
    "parameter_units",
    "pictures",
    "conductor",
    "dielectric",
    "charge",
    "probe",
];
pub(super) const SIDE_NAMES: &[&str] = &["left", "right", "bottom", "top"];

impl Reader<'_> {
    pub(super) fn design(
        &mut self,
        root: &Node,
        overrides: &[(String, f64)],
    ) -> Res<(Design, LengthUnit)> {
        let top = self.table(root, "", TOP_KEYS)?;
        let mut unit = LengthUnit::M;
        if let Some(e) = get(top, "unit") {
            let s = self.string(&e.node, "unit")?;
            unit = LengthUnit::parse(s).ok_or_else(|| {
                self.err(
                    &e.node.span,
                    "unit",
                    format!("unknown unit \"{s}\": use m, cm, mm, um, mil or in"),
                )
            })?;
        }
        self.unit = unit;
        self.scale = unit.scale();
        if let Some(e) = get(top, "mode") {
            self.mode = match self.string(&e.node, "mode")? {
                "planar" => Mode::Planar,
                "axisymmetric" => Mode::Axisymmetric,
                s => {
                    return Err(self.err(
                        &e.node.span,
                        "mode",
                        format!("unknown mode \"{s}\": use planar or axisymmetric"),
                    ))
                }
            };
        }
        self.parameters(get(top, "parameters"), overrides)?;
        let mut d = Design {
            mode: self.mode,
            ..Design::default()
        };
        if let Some(e) = get(top, "depth") {
            if self.mode == Mode::Axisymmetric {
                return Err(self.err(
                    &e.key_span,
                    "depth",
                    "`depth` is for planar designs only: an axisymmetric design is a whole body",
                ));
            }
            d.depth = Some(self.size(&e.node, "depth", "the depth", false)?);
        }
        let grid = get(top, "grid").ok_or_else(|| {
            self.err(
                &None,
                "grid",
                "missing [grid] table (the domain x, y and the cell size)",
            )
        })?;
        (d.domain, d.lattice) = self.grid(&grid.node)?;
        self.cell = d.domain.cell;
        if let Some(e) = get(top, "sides") {
            d.sides = self.sides(&e.node)?;
        }
        if self.mode == Mode::Axisymmetric {
            d.sides.left = Side::Axis;
        }
        if let Some(e) = get(top, "background") {
            d.background = self.background(&e.node)?;
        }
        // Tables with one name are the pieces of one conductor (one net), at one potential.
        for node in self.items(top, "conductor")? {
            let c = self.conductor(node)?;
            match d.conductors.iter_mut().find(|o| o.name == c.name) {
                None => d.conductors.push(c),
                Some(first) if first.drive == c.drive => first.joined.push(c.shape),
                Some(first) => return Err(self.unequal_pieces(node, first, &c)),
            }
        }
        let mut names = Names::default();
        for (i, node) in self.items(top, "dielectric")?.iter().enumerate() {
            let m = self.dielectric(node)?;
            names.check(self, &m.name, node, "dielectric", i)?;
            d.dielectrics.push(m);
        }
        let mut names = Names::default();
        for (i, node) in self.items(top, "charge")?.iter().enumerate() {
            let c = self.charge(node)?;
            let name = match &c {
                Charge::Region { name, .. } | Charge::Concentrated { name, .. } => name.clone(),
            };
            names.check(self, &name, node, "charge", i)?;
            d.charges.push(c);
        }
        let mut names = Names::default();
        for (i, node) in self.items(top, "probe")?.iter().enumerate() {
            let p = self.probe(node)?;
            names.check(self, &p.name, node, "probe", i)?;
            d.probes.push(p);
        }
        Ok((d, unit))
    }

    /// The array of tables `[[key]]` (empty when absent).
    pub(super) fn items<'n>(&self, top: &'n [Entry], key: &str) -> Res<&'n [Node]> {
        let Some(e) = get(top, key) else {
            return Ok(&[]);
        };
        let expected = format!("an array of tables: write [[{key}]]");
        let a = self.array(&e.node, key, &expected)?;
        if let Some(bad) = a.iter().find(|n| n.entries().is_none()) {
            return Err(self.wrong_type(bad, key, &expected));
        }
        Ok(a)
    }

    pub(super) fn parameters(
        &mut self,
        node: Option<&Entry>,
        overrides: &[(String, f64)],
    ) -> Res<()> {
        let entries: &[Entry] = match node {
            Some(e) => match e.node.entries() {
                Some(entries) => entries,
                None => return Err(self.wrong_type(&e.node, "parameters", "a table")),
            },
            None => &[],
        };
        // Every name first, so a reference to a later parameter gets a precise message.
        for e in entries {
            let key = join("parameters", &e.key);
            if !expr::is_identifier(&e.key) {
                return Err(self.err(
                    &e.key_span,
                    &key,
                    format!(
                        "parameter name `{}` cannot be used in expressions: use letters, digits \
                         and `_`, starting with a letter",
                        e.key
                    ),
                ));
            }
            if expr::is_reserved(&e.key) {
                return Err(self.err(
                    &e.key_span,
                    &key,
                    format!(
                        "`{}` is a built-in constant or function, not a parameter name",
                        e.key
                    ),
                ));
            }
        }
        self.set_param_names(entries.iter().map(|e| e.key.as_str()));
        for (i, e) in entries.iter().enumerate() {
            let key = join("parameters", &e.key);
            let v = match overrides.iter().rev().find(|(n, _)| *n == e.key) {
                Some((_, v)) if v.is_finite() => *v,
                Some((_, v)) => {
                    return Err(InputError::unplaced(
                        self.file,
                        &key,
                        format!(
                            "the value {v} given for parameter `{}` is not finite",
                            e.key
                        ),
                    ))
                }
                None => self.reading_as(Reading::Parameter(i), || match &e.node.kind {
                    Kind::Str(s) => self.expression(s, &e.node, &key, i),
                    _ => self.number(&e.node, &key),
                })?,
            };
            self.params[i].1 = v;
        }
        if let Some((n, _)) = overrides
            .iter()
            .find(|(n, _)| self.param_position(n).is_none())
        {
            let names: Vec<&str> = self.params.iter().map(|(p, _)| p.as_str()).collect();
            let known = if names.is_empty() {
                "the design has no [parameters]".to_string()
            } else {
                format!("its parameters are {}", list(&names))
            };
            return Err(InputError::unplaced(
                self.file,
                &join("parameters", n),
                format!("cannot set `{n}`: the design has no such parameter ({known})"),
            ));
        }
        Ok(())
    }

    /// `[grid] accuracy`: the relative error every reported quantity is refined to, a
    /// number between 0 and 1 (`--accuracy` on the command line wins).
    pub(super) fn accuracy(&self, root: &Node) -> Res<Option<f64>> {
        let Some(grid) = root.entries().and_then(|top| get(top, "grid")) else {
            return Ok(None);
        };
        let Some(e) = grid.node.entries().and_then(|t| get(t, "accuracy")) else {
            return Ok(None);
        };
        let v = self.number(&e.node, "grid.accuracy")?;
        if !(v > 0.0 && v < 1.0) {
            return Err(self.err(
                &e.node.span,
                "grid.accuracy",
                format!(
                    "the accuracy is a relative error between 0 and 1 (1e-3 for 0.1 %), found {v}"
                ),
            ));
        }
        Ok(Some(v))
    }

    /// `[tolerances]`: NAME = VALUE, each a parameter's tolerance (+/- VALUE, in the
    /// file's units), a positive number.
    pub(super) fn tolerances(&self, root: &Node) -> Res<Vec<(String, f64)>> {
        let Some(e) = root.entries().and_then(|top| get(top, "tolerances")) else {
            return Ok(Vec::new());
        };
        let Some(entries) = e.node.entries() else {
            return Err(self.wrong_type(&e.node, "tolerances", "a table"));
        };
        let mut out = Vec::new();
        for t in entries {
            let key = join("tolerances", &t.key);
            if self.param_position(&t.key).is_none() {
                let names: Vec<&str> = self.params.iter().map(|(p, _)| p.as_str()).collect();
                return Err(self.err(
                    &t.key_span,
                    &key,
                    format!(
                        "`{}` is not a parameter of the design (tolerances are given for \
                         [parameters]{})",
                        t.key,
                        if names.is_empty() {
                            String::new()
                        } else {
                            format!(": {}", list(&names))
                        }
                    ),
                ));
            }
            let v = match t.node.kind {
                Kind::Int(i) => i as f64,
                Kind::Float(f) => f,
                _ => return Err(self.wrong_type(&t.node, &key, "a number")),
            };
            if !(v.is_finite() && v > 0.0) {
                return Err(self.err(
                    &t.node.span,
                    &key,
                    format!("a tolerance must be a positive number, got {v}"),
                ));
            }
            out.push((t.key.clone(), v));
        }
        Ok(out)
    }

    /// The unit of each parameter, in file order, for the columns of a sweep: the one
    /// `[parameter_units]` gives it (NAME = "text"), else the file's length unit when it is
    /// named only in lengths (directly or through other parameters), else none (empty).
    pub(super) fn parameter_units(&self, root: &Node, unit: LengthUnit) -> Res<Vec<String>> {
        let uses = self.parameter_uses();
        let mut out: Vec<String> = uses
            .iter()
            .map(|&u| {
                if u == LENGTH {
                    unit.name().to_string()
                } else {
                    String::new()
                }
            })
            .collect();
        let Some(e) = root.entries().and_then(|top| get(top, "parameter_units")) else {
            return Ok(out);
        };
        let Some(entries) = e.node.entries() else {
            return Err(self.wrong_type(&e.node, "parameter_units", "a table"));
        };
        for t in entries {
            let key = join("parameter_units", &t.key);
            let Some(i) = self.param_position(&t.key) else {
                return Err(self.err(
                    &t.key_span,
                    &key,
                    format!(
                        "`{}` is not a parameter of the design (units are given for [parameters])",
                        t.key
                    ),
                ));
            };
            let s = self.string(&t.node, &key)?;
            if s.len() > 32 || s.chars().any(char::is_control) {
                return Err(self.err(
                    &t.node.span,
                    &key,
                    "a unit is a short text (at most 32 bytes, no control characters), such as \
                     \"mm\", \"V\" or \"deg\"; \"\" for none",
                ));
            }
            out[i] = s.trim().to_string();
        }
        Ok(out)
    }

    pub(super) fn grid(&self, node: &Node) -> Res<(Domain, Lattice)> {
        let t = self.table(node, "grid", &["x", "y", "cell", "lattice", "accuracy"])?;
        let x = self.required(t, node, "grid", "x", "the domain extent [x0, x1]")?;
        let y = self.required(t, node, "grid", "y", "the domain extent [y0, y1]")?;
        let cell = self.required(t, node, "grid", "cell", "the target cell size")?;
        let xs = self.extent(&x.node, "grid.x")?;
        if self.mode == Mode::Axisymmetric && xs[0] != 0.0 {
            return Err(self.err(
                &x.node.span,
                "grid.x",
                "in axisymmetric mode x is the radius and the domain must start at 0",
            ));
        }
        let ys = self.extent(&y.node, "grid.y")?;
        let c = self.size(&cell.node, "grid.cell", "the cell size", false)?;
        let lattice = match t.iter().find(|e| e.key == "lattice") {
            None => Lattice::default(),
            Some(e) => match self.string(&e.node, "grid.lattice")? {
                "graded" => Lattice::Graded,
                "uniform" => Lattice::Uniform,
                s => {
                    return Err(self.err(
                        &e.node.span,
                        "grid.lattice",
                        format!("unknown lattice \"{s}\": use graded or uniform"),
                    ))
                }
            },
        };
        let domain = Domain {
            x: xs,
            y: ys,
            cell: c,
        };
        Ok((domain, lattice))
    }

    pub(super) fn sides(&self, node: &Node) -> Res<Sides> {
        let t = self.table(node, "sides", SIDE_NAMES)?;
        let mut s = Sides::default();
        for e in t {
            let key = join("sides", &e.key);
            if e.key == "left" && self.mode == Mode::Axisymmetric {
                return Err(self.err(
                    &e.key_span,
                    &key,
                    "in axisymmetric mode the left side is the axis (r = 0) and takes no condition",
                ));
            }
            let side = match &e.node.kind {
                Kind::Str(v) if v == "ground" => Side::Ground,
                Kind::Str(v) if v == "symmetry" => Side::Symmetry,
                Kind::Str(v) if v == "open" => Side::Open,
                Kind::Str(v)
                    if expr::is_identifier(v.trim())
                        && self.param_position(v.trim()).is_none()
                        && !expr::is_reserved(v.trim()) =>
                {
                    return Err(self.err(
                        &e.node.span,
                        &key,
                        format!(
                            "unknown side condition \"{v}\": use \"ground\", \"symmetry\", \
                             \"open\" or a potential in volts"
                        ),
                    ))
                }
                Kind::Str(_) | Kind::Int(_) | Kind::Float(_) => {
                    Side::Fixed(self.number(&e.node, &key)?)
                }
                _ => {
                    return Err(self.wrong_type(
                        &e.node,
                        &key,
                        "\"ground\", \"symmetry\", \"open\" or a potential in volts",
                    ))
                }
            };
            match e.key.as_str() {
                "left" => s.left = side,
                "right" => s.right = side,
                "bottom" => s.bottom = side,
                _ => s.top = side,
            }
        }
        Ok(s)
    }
}
