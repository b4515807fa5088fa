//! The reader's typed values: the `Reader` state (file, unit, mode, parameters so far) and
//! how one TOML value becomes a checked number, length, point, extent, string or table, with
//! an [`InputError`] at the value's span when it does not.
//!
//! Invariants: every check names the key path it reports; a table's unknown keys are errors
//! (with a "did you mean" hint for near misses); numbers are finite; lengths are scaled by
//! the file's unit into metres here and nowhere else; expressions see only the parameters
//! defined above them.

use fieldgrid_solver::design::{Mode, Point};
use std::cell::{Cell, RefCell};
use std::collections::HashMap;

use super::expr;
use super::spans::InputError;
use super::spans::{get, Entry, Kind, Node, Span};
use super::unit::LengthUnit;

pub(super) struct Reader<'a> {
    pub(super) text: &'a str,
    pub(super) file: &'a str,
    /// Metres per file unit.
    pub(super) scale: f64,
    /// The file's unit, for messages.
    pub(super) unit: LengthUnit,
    pub(super) mode: Mode,
    /// The grid's target cell size, m (0 until [grid] is read); ties SVG flattening.
    pub(super) cell: f64,
    /// Parameters defined so far, in file order.
    pub(super) params: Vec<(String, f64)>,
    /// The position of every parameter name in `params` (names are unique): lookups in
    /// constant time, so a file of chained parameters reads in time linear in its length.
    pub(super) param_index: HashMap<String, usize>,
    /// What the value being read is, so that the parameters its expression names are known
    /// as lengths or not (the unit of a varied parameter's sweep column).
    pub(super) reading: Cell<Reading>,
    /// Per parameter: named in a length ([`LENGTH`]) and in another value ([`OTHER`]).
    pub(super) uses: RefCell<Vec<u8>>,
    /// (i, j): parameter i's expression names parameter j.
    pub(super) refs: RefCell<Vec<(usize, usize)>>,
}

/// The kind of value being read.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(super) enum Reading {
    /// A length (scaled by the file's unit).
    Length,
    /// Any other number (a potential, a permittivity, a strength, a charge).
    Other,
    /// The value of parameter i.
    Parameter(usize),
}

/// A parameter named in a length.
pub(super) const LENGTH: u8 = 1;
/// A parameter named in a value that is not a length.
pub(super) const OTHER: u8 = 2;

impl Reader<'_> {
    /// The position of parameter `name` in file order, if the design has it.
    pub(super) fn param_position(&self, name: &str) -> Option<usize> {
        self.param_index.get(name).copied()
    }

    /// Sets the parameter names, in file order, each value not yet known (NaN).
    pub(super) fn set_param_names<'n>(&mut self, names: impl Iterator<Item = &'n str>) {
        self.params = names.map(|n| (n.to_string(), f64::NAN)).collect();
        self.param_index = self
            .params
            .iter()
            .enumerate()
            .map(|(i, (n, _))| (n.clone(), i))
            .collect();
        *self.uses.borrow_mut() = vec![0; self.params.len()];
    }

    /// Reads with `kind` as the kind of value being read.
    pub(super) fn reading_as<T>(&self, kind: Reading, read: impl FnOnce() -> T) -> T {
        let before = self.reading.replace(kind);
        let out = read();
        self.reading.set(before);
        out
    }

    /// Per parameter, its uses ([`LENGTH`], [`OTHER`]) directly and through the parameters
    /// whose expressions name it.
    pub(super) fn parameter_uses(&self) -> Vec<u8> {
        let mut uses = self.uses.borrow().clone();
        let mut refs = self.refs.borrow().clone();
        // A parameter names only those above it: from the last down, each passes its uses on.
        refs.sort_unstable_by(|a, b| b.cmp(a));
        for (i, j) in refs {
            uses[j] |= uses[i];
        }
        uses
    }
}

pub(super) type Res<T> = Result<T, InputError>;

pub(super) fn join(path: &str, key: &str) -> String {
    if path.is_empty() {
        key.to_string()
    } else {
        format!("{path}.{key}")
    }
}

/// The span to point at for a whole table: its header, or its first key.
pub(super) fn table_span(node: &Node) -> Span {
    node.span
        .clone()
        .or_else(|| node.entries().and_then(|e| e.first()?.key_span.clone()))
}

/// Levenshtein distance, for "did you mean" hints on short keys.
pub(super) fn distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut row: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut prev = row[0];
        row[0] = i + 1;
        for (j, cb) in b.iter().enumerate() {
            let cur = row[j + 1];
            row[j + 1] = (prev + usize::from(ca != *cb)).min(row[j] + 1).min(cur + 1);
            prev = cur;
        }
    }
    row[b.len()]
}

/// A number for a message: plain when moderate, else in exponent form.
pub(super) fn show(v: f64) -> String {
    if v == 0.0 || (1e-4..1e6).contains(&v.abs()) {
        format!("{v}")
    } else {
        format!("{v:e}")
    }
}

pub(super) fn list(keys: &[&str]) -> String {
    keys.iter()
        .map(|k| format!("`{k}`"))
        .collect::<Vec<_>>()
        .join(", ")
}

impl Reader<'_> {
    pub(super) fn err(&self, span: &Span, key: &str, message: impl Into<String>) -> InputError {
        InputError::at(self.text, self.file, span, key, message)
    }

    pub(super) fn wrong_type(&self, node: &Node, key: &str, expected: &str) -> InputError {
        self.err(
            &node.span,
            key,
            format!("expected {expected}, found {}", node.type_name()),
        )
    }

    /// The entries of `node`, which must be a table whose keys are all in `allowed`.
    pub(super) fn table<'n>(
        &self,
        node: &'n Node,
        path: &str,
        allowed: &[&str],
    ) -> Res<&'n [Entry]> {
        let Some(entries) = node.entries() else {
            return Err(self.wrong_type(node, path, "a table"));
        };
        for e in entries {
            if !allowed.contains(&e.key.as_str()) {
                let mut m = format!("unknown key `{}`", e.key);
                // The nearest allowed key (`[side]` is `sides`, not `mode`).
                let near = allowed
                    .iter()
                    .filter(|k| distance(k, &e.key) <= 2.min(k.len() / 2))
                    .min_by_key(|k| distance(k, &e.key));
                match near {
                    Some(k) => m += &format!(" (did you mean `{k}`?)"),
                    None => m += &format!("; allowed here: {}", list(allowed)),
                }
                return Err(self.err(&e.key_span, &join(path, &e.key), m));
            }
        }
        Ok(entries)
    }

    pub(super) fn required<'n>(
        &self,
        entries: &'n [Entry],
        table: &Node,
        path: &str,
        key: &str,
        what: &str,
    ) -> Res<&'n Entry> {
        get(entries, key).ok_or_else(|| {
            self.err(
                &table_span(table),
                &join(path, key),
                format!("missing `{key}` ({what})"),
            )
        })
    }

    pub(super) fn string<'n>(&self, node: &'n Node, key: &str) -> Res<&'n str> {
        match &node.kind {
            Kind::Str(s) => Ok(s),
            _ => Err(self.wrong_type(node, key, "a string")),
        }
    }

    pub(super) fn boolean(&self, node: &Node, key: &str) -> Res<bool> {
        match node.kind {
            Kind::Bool(b) => Ok(b),
            _ => Err(self.wrong_type(node, key, "true or false")),
        }
    }

    /// A plain number: an integer, a finite float, or a string expression of parameters.
    pub(super) fn number(&self, node: &Node, key: &str) -> Res<f64> {
        match &node.kind {
            Kind::Int(i) => Ok(*i as f64),
            Kind::Float(f) if f.is_finite() => Ok(*f),
            Kind::Float(f) => Err(self.err(
                &node.span,
                key,
                format!("`{f}` is not allowed: numbers must be finite"),
            )),
            Kind::Str(s) => self.expression(s, node, key, self.params.len()),
            _ => Err(self.wrong_type(node, key, "a number or an expression in quotes")),
        }
    }

    /// Evaluates expression `s` (the string value `node`) with the first `visible` parameters.
    pub(super) fn expression(&self, s: &str, node: &Node, key: &str, visible: usize) -> Res<f64> {
        let known = &self.params[..visible];
        let lookup = |name: &str| {
            let i = self.param_position(name).filter(|&i| i < visible)?;
            match self.reading.get() {
                Reading::Length => self.uses.borrow_mut()[i] |= LENGTH,
                Reading::Other => self.uses.borrow_mut()[i] |= OTHER,
                Reading::Parameter(k) => self.refs.borrow_mut().push((k, i)),
            }
            Some(known[i].1)
        };
        expr::eval(s, &lookup).map_err(|e| {
            let span = self.inner_span(node, s, e.offset, e.len);
            let message = match &e.kind {
                expr::ExprErrorKind::UnknownName(n) if self.param_position(n).is_some_and(|i| i >= visible) => {
                    format!(
                        "parameter `{n}` is defined later: a parameter may use only the ones above it"
                    )
                }
                expr::ExprErrorKind::UnknownName(n) => {
                    let mut m = format!("unknown parameter `{n}` in expression");
                    if let Some((p, _)) = known.iter().find(|(p, _)| distance(p, n) <= 2.min(p.len() / 2)) {
                        m += &format!(" (did you mean `{p}`?)");
                    } else if known.is_empty() {
                        m += "; the design has no [parameters]";
                    }
                    m
                }
                _ => e.to_string(),
            };
            self.err(&span, key, message)
        })
    }

    /// The file span of bytes `offset..offset + len` of the string value `s` written at
    /// `node`, when the string is written without escapes; else the whole value.
    pub(super) fn inner_span(&self, node: &Node, s: &str, offset: usize, len: usize) -> Span {
        let span = node.span.clone()?;
        let raw = self.text.get(span.clone())?;
        let body = raw.get(1..raw.len().checked_sub(1)?)?;
        let quoted = (raw.starts_with('"') || raw.starts_with('\'')) && !raw.starts_with("\"\"\"");
        if quoted && body == s && !raw.starts_with("'''") {
            let start = span.start + 1 + offset;
            Some(start..start + len.max(1))
        } else {
            Some(span)
        }
    }

    pub(super) fn length(&self, node: &Node, key: &str) -> Res<f64> {
        // Scales are at most 1: a finite number stays finite.
        Ok(self.reading_as(Reading::Length, || self.number(node, key))? * self.scale)
    }

    pub(super) fn positive(&self, v: f64, node: &Node, key: &str, what: &str) -> Res<f64> {
        if v > 0.0 {
            Ok(v)
        } else {
            Err(self.err(
                &node.span,
                key,
                format!("{what} must be positive, found {}", show(v)),
            ))
        }
    }

    /// A length that must be positive (or, with `zero_ok`, not negative), in metres. The
    /// check is made on the value as written so the message speaks the file's unit.
    pub(super) fn size(&self, node: &Node, key: &str, what: &str, zero_ok: bool) -> Res<f64> {
        let v = self.reading_as(Reading::Length, || self.number(node, key))?;
        let unit = self.unit.name();
        if zero_ok && v < 0.0 {
            let m = format!("{what} must not be negative, found {} {unit}", show(v));
            return Err(self.err(&node.span, key, m));
        }
        if !zero_ok && v <= 0.0 {
            let m = format!("{what} must be positive, found {} {unit}", show(v));
            return Err(self.err(&node.span, key, m));
        }
        Ok(v * self.scale)
    }

    pub(super) fn array<'n>(&self, node: &'n Node, key: &str, expected: &str) -> Res<&'n [Node]> {
        match &node.kind {
            Kind::Array(a) => Ok(a),
            _ => Err(self.wrong_type(node, key, expected)),
        }
    }

    pub(super) fn point(&self, node: &Node, key: &str) -> Res<Point> {
        let a = self.array(node, key, "a point [x, y]")?;
        if a.len() != 2 {
            return Err(self.err(
                &node.span,
                key,
                format!("a point is [x, y]: expected 2 numbers, found {}", a.len()),
            ));
        }
        Ok([self.length(&a[0], key)?, self.length(&a[1], key)?])
    }

    pub(super) fn points(&self, node: &Node, key: &str, min: usize, what: &str) -> Res<Vec<Point>> {
        let a = self.array(node, key, "an array of points [[x, y], ...]")?;
        let pts = a
            .iter()
            .map(|p| self.point(p, key))
            .collect::<Res<Vec<_>>>()?;
        if pts.len() < min {
            return Err(self.err(
                &node.span,
                key,
                format!("{what} needs at least {min} points, found {}", pts.len()),
            ));
        }
        Ok(pts)
    }

    /// An extent `[a, b]` with `a < b`, in metres.
    pub(super) fn extent(&self, node: &Node, key: &str) -> Res<[f64; 2]> {
        let a = self.array(node, key, "an extent [start, end]")?;
        if a.len() != 2 {
            return Err(self.err(
                &node.span,
                key,
                format!(
                    "an extent is [start, end]: expected 2 numbers, found {}",
                    a.len()
                ),
            ));
        }
        let (lo, hi) = (self.length(&a[0], key)?, self.length(&a[1], key)?);
        if lo < hi {
            Ok([lo, hi])
        } else {
            Err(self.err(&node.span, key, "an extent [start, end] needs start < end"))
        }
    }
}
