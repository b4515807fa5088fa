//! Placing the library's validation errors in the file: an error about `{item, key}` from
//! [`fieldgrid_solver::design::validate`] becomes an [`InputError`] at that key's span.
//!
//! Invariants: an error points at the key when the file writes it (in the item's table or one
//! level down in its shape table), else at the item's header, else at the start of the file;
//! the words are [`wording`]'s, lengths in the file's unit.

use fieldgrid_solver::design::{Design, DesignError, Item};

use super::spans::InputError;
use super::spans::{get, Kind, Node};
use super::unit::LengthUnit;
use super::values::{join, table_span};
use super::wording;

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

/// The error `e` of the library's validation of `design`, worded (lengths in `unit`) and
/// placed at its key.
pub(super) fn design_error(
    text: &str,
    file: &str,
    tree: &Node,
    e: &DesignError,
    design: &Design,
    unit: LengthUnit,
) -> InputError {
    let message = wording::describe(e, design, unit);
    locate(text, file, tree, e.item, e.key, message)
}
