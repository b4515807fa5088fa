//! Reading design files (TOML) into a typed, SI [`fieldgrid_solver::design::Design`].
//!
//! The reader owns everything the library must not know: the file's length unit, its
//! parameters and expressions, and positions in the text. It parses with `toml_edit` (which
//! keeps spans), checks every key of the contract key by key (unknown keys, types, required
//! keys, exactly one shape, finite numbers, positive sizes), evaluates expressions, converts
//! lengths to metres and then runs [`fieldgrid_solver::design::validate`], mapping its
//! `{item, key}` errors back to the span of that key.
//!
//! Invariants: only lengths are scaled by the unit (potentials, permittivities, densities,
//! charge amounts and strengths are SI as written); every error is one [`InputError`] that
//! names the file, line, column and key path; no input makes the reader panic.

pub mod expr;
mod spans;
pub mod svg;

use std::collections::HashMap;

use fieldgrid_solver::design::{
    self, Background, Charge, Conductor, Design, DesignError, Dielectric, Domain, Drive, Item,
    Mode, Point, Probe, Shape, Side, Sides,
};

pub use spans::InputError;
use spans::{get, Entry, Kind, Node, Span};

/// The length unit of a design file.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum LengthUnit {
    /// Metres (the default).
    #[default]
    M,
    /// Centimetres.
    Cm,
    /// Millimetres.
    Mm,
    /// Micrometres.
    Um,
}

impl LengthUnit {
    /// Metres per unit.
    pub fn scale(self) -> f64 {
        match self {
            LengthUnit::M => 1.0,
            LengthUnit::Cm => 1e-2,
            LengthUnit::Mm => 1e-3,
            LengthUnit::Um => 1e-6,
        }
    }

    /// The name used in design files and axis labels: `m`, `cm`, `mm`, `um`.
    pub fn name(self) -> &'static str {
        match self {
            LengthUnit::M => "m",
            LengthUnit::Cm => "cm",
            LengthUnit::Mm => "mm",
            LengthUnit::Um => "um",
        }
    }

    /// The unit of a design file's `unit` value (`µm` is accepted for `um`).
    pub fn parse(s: &str) -> Option<LengthUnit> {
        match s {
            "m" => Some(LengthUnit::M),
            "cm" => Some(LengthUnit::Cm),
            "mm" => Some(LengthUnit::Mm),
            "um" | "µm" => Some(LengthUnit::Um),
            _ => None,
        }
    }
}

/// A design read from a file: the typed SI design plus what the file said around it.
#[derive(Clone, Debug)]
pub struct DesignSource {
    /// The validated design, SI units, parameters evaluated.
    pub design: Design,
    /// The file's length unit (for axis labels in pictures).
    pub unit: LengthUnit,
    /// Hex of the 64-bit FNV-1a hash of the file text: a stable identity of the input.
    pub text_hash: String,
    /// The parameter values used (overrides applied), in file order, in the file's units.
    pub parameters: Vec<(String, f64)>,
    /// The file name as given.
    pub file: String,
    text: String,
    tree: Node,
}

impl DesignSource {
    /// An error about `key` of `item` placed at that key in the file (or at the item's header
    /// when the key is not written there), for checks made after reading (for example a grid
    /// too large for memory: `error_at(Item::Grid, "cell", ...)`).
    pub fn error_at(&self, item: Item, key: &str, message: impl Into<String>) -> InputError {
        locate(
            &self.text,
            &self.file,
            &self.tree,
            item,
            key,
            message.into(),
        )
    }
}

/// Hex of the 64-bit FNV-1a hash of `text`.
pub fn text_hash(text: &str) -> String {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for b in text.as_bytes() {
        h ^= u64::from(*b);
        h = h.wrapping_mul(0x0000_0100_0000_01b3);
    }
    format!("{h:016x}")
}

/// Parses `text` (the contents of `file`), evaluates parameters (with `overrides` replacing
/// `[parameters]` values by name; an override naming an unknown parameter is an error),
/// converts to SI, validates with [`design::validate`] and returns the typed design.
pub fn read_design(
    text: &str,
    file: &str,
    overrides: &[(String, f64)],
) -> Result<DesignSource, InputError> {
    let doc = toml_edit::ImDocument::parse(text).map_err(|e| {
        let message: Vec<&str> = e
            .message()
            .lines()
            .map(str::trim)
            .filter(|l| !l.is_empty())
            .collect();
        let message = format!("TOML syntax: {}", message.join("; "));
        InputError::at(text, file, &e.span(), "", message)
    })?;
    let tree = Node::from_document(&doc);
    let mut r = Reader {
        text,
        file,
        scale: 1.0,
        unit: LengthUnit::M,
        mode: Mode::Planar,
        cell: 0.0,
        params: Vec::new(),
    };
    let (design, unit) = r.design(&tree, overrides)?;
    let parameters = std::mem::take(&mut r.params);
    if let Err(e) = design::validate(&design) {
        return Err(design_error(text, file, &tree, &e, unit));
    }
    Ok(DesignSource {
        design,
        unit,
        text_hash: text_hash(text),
        parameters,
        file: file.to_string(),
        text: text.to_string(),
        tree,
    })
}

/// Largest SVG file a design may import, bytes.
pub const MAX_SVG_BYTES: u64 = 64 << 20;

/// Reads an SVG drawing: a regular file (a device such as /dev/zero would never end, a pipe
/// would wait for a writer) of at most [`MAX_SVG_BYTES`].
fn read_svg_file(path: &std::path::Path) -> std::io::Result<String> {
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

const TOP_KEYS: &[&str] = &[
    "unit",
    "mode",
    "depth",
    "grid",
    "sides",
    "background",
    "parameters",
    "conductor",
    "dielectric",
    "charge",
    "probe",
];
const SHAPE_KEYS: &[&str] = &["rect", "circle", "ring", "polygon", "polyline", "svg"];
const SIDE_NAMES: &[&str] = &["left", "right", "bottom", "top"];

/// Which kind of item a shape belongs to (polylines are for conductors only).
#[derive(Clone, Copy, PartialEq)]
enum Owner {
    Conductor,
    Other,
}

struct Reader<'a> {
    text: &'a str,
    file: &'a str,
    /// Metres per file unit.
    scale: f64,
    /// The file's unit, for messages.
    unit: LengthUnit,
    mode: Mode,
    /// The grid's target cell size, m (0 until [grid] is read); ties SVG flattening.
    cell: f64,
    /// Parameters defined so far, in file order.
    params: Vec<(String, f64)>,
}

type Res<T> = Result<T, InputError>;

fn join(path: &str, key: &str) -> String {
    if path.is_empty() {
        key.to_string()
    } else {
        format!("{path}.{key}")
    }
}

/// The span to point at for a whole table: its header, or its first key.
fn table_span(node: &Node) -> Span {
    node.span
        .clone()
        .or_else(|| node.entries().and_then(|e| e.first()?.key_span.clone()))
}

/// Levenshtein distance, for "did you mean" hints on short keys.
fn distance(a: &str, b: &str) -> usize {
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
fn show(v: f64) -> String {
    if v == 0.0 || (1e-4..1e6).contains(&v.abs()) {
        format!("{v}")
    } else {
        format!("{v:e}")
    }
}

fn list(keys: &[&str]) -> String {
    keys.iter()
        .map(|k| format!("`{k}`"))
        .collect::<Vec<_>>()
        .join(", ")
}

impl Reader<'_> {
    fn err(&self, span: &Span, key: &str, message: impl Into<String>) -> InputError {
        InputError::at(self.text, self.file, span, key, message)
    }

    fn wrong_type(&self, node: &Node, key: &str, expected: &str) -> InputError {
        self.err(
            &node.span,
            key,
            format!("expected {expected}, found {}", node.type_name()),
        )
    }

    /// The entries of `node`, which must be a table whose keys are all in `allowed`.
    fn table<'n>(&self, node: &'n Node, path: &str, allowed: &[&str]) -> Res<&'n [Entry]> {
        let Some(entries) = node.entries() else {
            return Err(self.wrong_type(node, path, "a table"));
        };
        for e in entries {
            if !allowed.contains(&e.key.as_str()) {
                let mut m = format!("unknown key `{}`", e.key);
                let near = allowed
                    .iter()
                    .find(|k| distance(k, &e.key) <= 2.min(k.len() / 2));
                match near {
                    Some(k) => m += &format!(" (did you mean `{k}`?)"),
                    None => m += &format!("; allowed here: {}", list(allowed)),
                }
                return Err(self.err(&e.key_span, &join(path, &e.key), m));
            }
        }
        Ok(entries)
    }

    fn required<'n>(
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

    fn string<'n>(&self, node: &'n Node, key: &str) -> Res<&'n str> {
        match &node.kind {
            Kind::Str(s) => Ok(s),
            _ => Err(self.wrong_type(node, key, "a string")),
        }
    }

    fn boolean(&self, node: &Node, key: &str) -> Res<bool> {
        match node.kind {
            Kind::Bool(b) => Ok(b),
            _ => Err(self.wrong_type(node, key, "true or false")),
        }
    }

    /// A plain number: an integer, a finite float, or a string expression of parameters.
    fn number(&self, node: &Node, key: &str) -> Res<f64> {
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
    fn expression(&self, s: &str, node: &Node, key: &str, visible: usize) -> Res<f64> {
        let known = &self.params[..visible];
        let lookup = |name: &str| known.iter().find(|(n, _)| n == name).map(|(_, v)| *v);
        expr::eval(s, &lookup).map_err(|e| {
            let span = self.inner_span(node, s, e.offset, e.len);
            let message = match &e.kind {
                expr::ExprErrorKind::UnknownName(n) if self.params[visible..].iter().any(|(p, _)| p == n) => {
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
    fn inner_span(&self, node: &Node, s: &str, offset: usize, len: usize) -> Span {
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

    fn length(&self, node: &Node, key: &str) -> Res<f64> {
        // Scales are at most 1: a finite number stays finite.
        Ok(self.number(node, key)? * self.scale)
    }

    fn positive(&self, v: f64, node: &Node, key: &str, what: &str) -> Res<f64> {
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
    fn size(&self, node: &Node, key: &str, what: &str, zero_ok: bool) -> Res<f64> {
        let v = self.number(node, key)?;
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

    fn array<'n>(&self, node: &'n Node, key: &str, expected: &str) -> Res<&'n [Node]> {
        match &node.kind {
            Kind::Array(a) => Ok(a),
            _ => Err(self.wrong_type(node, key, expected)),
        }
    }

    fn point(&self, node: &Node, key: &str) -> Res<Point> {
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

    fn points(&self, node: &Node, key: &str, min: usize, what: &str) -> Res<Vec<Point>> {
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
    fn extent(&self, node: &Node, key: &str) -> Res<[f64; 2]> {
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

    fn design(&mut self, root: &Node, overrides: &[(String, f64)]) -> Res<(Design, LengthUnit)> {
        let top = self.table(root, "", TOP_KEYS)?;
        let mut unit = LengthUnit::M;
        if let Some(e) = get(top, "unit") {
            let s = self.string(&e.node, "unit")?;
            unit = LengthUnit::parse(s).ok_or_else(|| {
                self.err(
                    &e.node.span,
                    "unit",
                    format!("unknown unit \"{s}\": use m, cm, mm or um"),
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
        d.domain = self.grid(&grid.node)?;
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
        let mut names = Names::default();
        for (i, node) in self.items(top, "conductor")?.iter().enumerate() {
            let c = self.conductor(node)?;
            names.check(self, &c.name, node, "conductor", i)?;
            d.conductors.push(c);
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
    fn items<'n>(&self, top: &'n [Entry], key: &str) -> Res<&'n [Node]> {
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

    fn parameters(&mut self, node: Option<&Entry>, overrides: &[(String, f64)]) -> Res<()> {
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
        self.params = entries.iter().map(|e| (e.key.clone(), f64::NAN)).collect();
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
                None => match &e.node.kind {
                    Kind::Str(s) => self.expression(s, &e.node, &key, i)?,
                    _ => self.number(&e.node, &key)?,
                },
            };
            self.params[i].1 = v;
        }
        if let Some((n, _)) = overrides
            .iter()
            .find(|(n, _)| !self.params.iter().any(|(p, _)| p == n))
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

    fn grid(&self, node: &Node) -> Res<Domain> {
        let t = self.table(node, "grid", &["x", "y", "cell"])?;
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
        Ok(Domain {
            x: xs,
            y: ys,
            cell: c,
        })
    }

    fn sides(&self, node: &Node) -> Res<Sides> {
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
                        && !self.params.iter().any(|(p, _)| p == v.trim())
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

    fn permittivity(&self, e: &Entry, key: &str) -> Res<f64> {
        let v = self.number(&e.node, key)?;
        self.positive(v, &e.node, key, "the relative permittivity")
    }

    fn strength(&self, t: &[Entry], path: &str) -> Res<Option<f64>> {
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

    fn background(&self, node: &Node) -> Res<Background> {
        let t = self.table(node, "background", &["permittivity", "strength"])?;
        let mut b = Background::default();
        if let Some(e) = get(t, "permittivity") {
            b.permittivity = self.permittivity(e, "background.permittivity")?;
        }
        b.strength = self.strength(t, "background")?;
        Ok(b)
    }

    fn name(&self, t: &[Entry], node: &Node, path: &str) -> Res<String> {
        let e = self.required(t, node, path, "name", "every item is named")?;
        let key = join(path, "name");
        let s = self.string(&e.node, &key)?;
        if s.trim().is_empty() {
            return Err(self.err(&e.node.span, &key, "the name is empty"));
        }
        if s.chars().any(char::is_control) {
            return Err(self.err(&e.node.span, &key, "the name contains a control character"));
        }
        Ok(s.to_string())
    }

    fn conductor(&self, node: &Node) -> Res<Conductor> {
        let p = "conductor";
        let t = self.table(
            node,
            p,
            &[
                "name",
                "potential",
                "floating",
                "rect",
                "circle",
                "ring",
                "polygon",
                "polyline",
                "svg",
                "holes",
                "round",
            ],
        )?;
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
        Ok(Conductor { name, drive, shape })
    }

    fn dielectric(&self, node: &Node) -> Res<Dielectric> {
        let p = "dielectric";
        let t = self.table(
            node,
            p,
            &[
                "name",
                "permittivity",
                "strength",
                "rect",
                "circle",
                "ring",
                "polygon",
                "polyline",
                "svg",
                "holes",
                "round",
            ],
        )?;
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

    fn charge(&self, node: &Node) -> Res<Charge> {
        let p = "charge";
        let t = self.table(
            node,
            p,
            &[
                "name", "density", "at", "amount", "rect", "circle", "ring", "polygon", "polyline",
                "svg", "holes", "round",
            ],
        )?;
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

    fn probe(&self, node: &Node) -> Res<Probe> {
        let t = self.table(node, "probe", &["name", "at"])?;
        let name = self.name(t, node, "probe")?;
        let at = self.required(t, node, "probe", "at", "the position [x, y]")?;
        Ok(Probe {
            name,
            at: self.point(&at.node, "probe.at")?,
        })
    }

    /// The single shape of an item whose entries are `t`.
    fn shape(&self, t: &[Entry], node: &Node, path: &str, owner: Owner) -> Res<Shape> {
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
        for extra in ["holes", "round"] {
            if let Some(x) = get(t, extra) {
                if e.key != "polygon" {
                    let hint = if extra == "round" && e.key == "rect" {
                        ": for a rect write it inside, rect = { x = ..., y = ..., round = r }"
                    } else {
                        ""
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
                let s = self.table(n, &key, &["x", "y", "round"])?;
                let x = self.required(s, n, &key, "x", "the extent [x0, x1]")?;
                let y = self.required(s, n, &key, "y", "the extent [y0, y1]")?;
                let x = self.extent(&x.node, &join(&key, "x"))?;
                let y = self.extent(&y.node, &join(&key, "y"))?;
                let round = self.round(s, &key)?;
                Ok(Shape::Rect { x, y, round })
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
                Ok(Shape::Polygon {
                    outer,
                    holes,
                    round,
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
    fn svg_shape(&self, n: &Node, key: &str, owner: Owner) -> Res<Shape> {
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

    fn round(&self, t: &[Entry], path: &str) -> Res<f64> {
        let Some(e) = get(t, "round") else {
            return Ok(0.0);
        };
        let key = join(path, "round");
        self.size(&e.node, &key, "the fillet radius", true)
    }
}

/// Names seen so far of one kind of item, for the "names unique" rule.
#[derive(Default)]
struct Names(HashMap<String, usize>);

impl Names {
    fn check(
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

/// The table node of `item` in `tree`, and its key path.
fn item_node(tree: &Node, item: Item) -> Option<(&Node, String)> {
    let top = tree.entries()?;
    let (key, index) = match item {
        Item::Top => return Some((tree, String::new())),
        Item::Grid => ("grid", None),
        Item::Sides => ("sides", None),
        Item::Background => ("background", None),
        Item::Conductor(i) => ("conductor", Some(i)),
        Item::Dielectric(i) => ("dielectric", Some(i)),
        Item::Charge(i) => ("charge", Some(i)),
        Item::Probe(i) => ("probe", Some(i)),
        _ => return None,
    };
    let node = &get(top, key)?.node;
    match index {
        None => Some((node, key.to_string())),
        Some(i) => match &node.kind {
            Kind::Array(a) => Some((a.get(i)?, key.to_string())),
            _ => None,
        },
    }
}

/// An error about `key` of `item`, placed at that key (searched in the item's table, then one
/// level down in its shape table), else at the item's header, else at the file start.
fn locate(
    text: &str,
    file: &str,
    tree: &Node,
    item: Item,
    key: &str,
    message: String,
) -> InputError {
    let Some((node, path)) = item_node(tree, item) else {
        return InputError::at(text, file, &None, key, message);
    };
    let entries = node.entries().unwrap_or(&[]);
    if let Some(e) = get(entries, key) {
        return InputError::at(text, file, &e.key_span, &join(&path, key), message);
    }
    for e in entries {
        if let Some(inner) = e.node.entries().and_then(|t| get(t, key)) {
            let p = join(&join(&path, &e.key), key);
            return InputError::at(text, file, &inner.key_span, &p, message);
        }
    }
    InputError::at(text, file, &table_span(node), &join(&path, key), message)
}

fn design_error(
    text: &str,
    file: &str,
    tree: &Node,
    e: &DesignError,
    unit: LengthUnit,
) -> InputError {
    let message = match &e.outside {
        // Extents restated in the file's unit, as the user wrote them.
        Some(o) => {
            let len = |v: f64| {
                // Twelve digits: 0.012 / 0.001 reads 12, not 12.000000000000002.
                let r: f64 = format!("{:.11e}", v / unit.scale()).parse().unwrap_or(v);
                format!("{r}")
            };
            o.describe(len, unit.name())
        }
        None => e.message.clone(),
    };
    locate(text, file, tree, e.item, e.key, message)
}

#[cfg(test)]
mod tests;
