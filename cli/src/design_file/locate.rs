//! Placing the library's validation errors in the file: an error about `{item, key}` from
//! [`fieldgrid_solver::design::validate`] becomes an [`InputError`] at that key's span.
//!
//! Invariants: an error points at the key when the file writes it (in the item's table or one
//! level down in its shape table), else at the item's header, else at the start of the file;
//! extents in messages are restated in the file's length unit.

use fieldgrid_solver::design::{DesignError, Item, OutsideDomain};

use super::spans::InputError;
use super::spans::{get, Kind, Node};
use super::unit::LengthUnit;
use super::values::{join, table_span};

/// The table node of `item` in `tree`, and its key path.
pub(super) fn item_node(tree: &Node, item: Item) -> Option<(&Node, String)> {
    let top = tree.entries()?;
    let (key, index) = match item {
        Item::Top => return Some((tree, String::new())),
        Item::Grid => ("grid", None),
        Item::Sides => ("sides", None),
        Item::Background => ("background", None),
        Item::Conductor(i) => ("conductor", conductor_table(top, i, 0)),
        Item::ConductorPiece(i, p) => ("conductor", conductor_table(top, i, p)),
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

/// The index among the `[[conductor]]` tables of piece `p` of conductor `i`: tables with one
/// name are the pieces of one conductor, conductors numbered by their first table.
fn conductor_table(top: &[super::spans::Entry], i: usize, p: usize) -> Option<usize> {
    let Kind::Array(tables) = &get(top, "conductor")?.node.kind else {
        return None;
    };
    let name = |t: &Node| match t
        .entries()
        .and_then(|e| get(e, "name"))
        .map(|e| &e.node.kind)
    {
        Some(Kind::Str(s)) => Some(s.clone()),
        _ => None,
    };
    let names: Vec<Option<String>> = tables.iter().map(name).collect();
    let firsts: Vec<usize> = (0..names.len())
        .filter(|&k| !names[..k].contains(&names[k]))
        .collect();
    let first = *firsts.get(i)?;
    (first..names.len())
        .filter(|&k| names[k] == names[first])
        .nth(p)
}

/// An error about `key` of `item`, placed at that key (searched in the item's table, then one
/// level down in its shape table), else at the item's header, else at the file start.
pub(super) fn locate(
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

/// The sentence for a shape outside the domain, every length written by `len` followed by
/// `unit`.
fn outside_domain(o: &OutsideDomain, len: impl Fn(f64) -> String, unit: &str) -> String {
    let [[sx0, sx1], [sy0, sy1]] = o.shape.map(|r| r.map(&len));
    let [[dx0, dx1], [dy0, dy1]] = o.domain.map(|r| r.map(&len));
    let what = if o.axisymmetric {
        "the domain (only r >= 0 counts; r is x)"
    } else {
        "the domain"
    };
    let place = if o.is_point() {
        format!("the point ({sx0} {unit}, {sy0} {unit})")
    } else {
        format!("the shape ({sx0}..{sx1} {unit} by {sy0}..{sy1} {unit})")
    };
    format!("{place} does not lie inside {what} ({dx0}..{dx1} {unit} by {dy0}..{dy1} {unit})")
}

pub(super) fn design_error(
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
            outside_domain(o, len, unit.name())
        }
        None => e.message.clone(),
    };
    locate(text, file, tree, e.item, e.key, message)
}
