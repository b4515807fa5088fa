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
//!
//! This file holds the entry point and its result; `values` reads one checked value
//! (numbers, lengths, points, tables), `sections` the top-level sections, `items` the items
//! (conductors, dielectrics, charges, probes, the background), `shapes` an item's shape (SVG
//! outlines included), `side_corners` which corners `round` rounds when none are chosen, `pictures` the
//! `[pictures]` table,
//! `locate` places the library's validation errors at their keys, `wording` words them,
//! `spans` keeps the parsed tree with positions, `unit` the file's length unit.

pub mod expr;
mod items;
mod locate;
mod pictures;
mod sections;
mod shapes;
mod side_corners;
mod spans;
pub mod svg;
mod unit;
mod values;
mod wording;

use fieldgrid_solver::design::{self, Design, DesignError, Item, Mode};

use locate::{design_error, locate};
pub use shapes::MAX_SVG_BYTES;
pub use spans::InputError;
use spans::Node;
pub use unit::LengthUnit;
use values::Reader;

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
    /// The unit of each parameter (as `parameters`; empty for none): the one
    /// `[parameter_units]` declares, else the file's length unit for a parameter named only in
    /// lengths. Sweep columns of varied parameters carry it.
    pub parameter_units: Vec<String>,
    /// `[tolerances]`: (parameter, +/- tolerance in the file's units), in file order.
    pub tolerances: Vec<(String, f64)>,
    /// `[grid] accuracy`: the relative error every reported quantity is refined to.
    pub accuracy: Option<f64>,
    /// `[pictures] zoom`: the window the pictures show, [x0, x1, y0, y1] in the file's unit
    /// (`--zoom` overrides it).
    pub zoom: Option<[f64; 4]>,
    /// The file name as given.
    pub file: String,
    text: String,
    tree: Node,
}

impl DesignSource {
    /// The unit of parameter `name` (empty when it has none or the design has no such
    /// parameter); see [`DesignSource::parameter_units`].
    pub fn parameter_unit(&self, name: &str) -> &str {
        self.parameters
            .iter()
            .position(|(n, _)| n == name)
            .map_or("", |i| self.parameter_units[i].as_str())
    }

    /// The length of the file text, bytes (the memory guard counts what the text holds:
    /// vertices, parameters, names).
    pub fn text_bytes(&self) -> usize {
        self.text.len()
    }

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

    /// A design-rule error of the library about this design (from a study, say), worded and
    /// placed at its key as the reader places its own.
    pub fn design_error(&self, e: &DesignError) -> InputError {
        design_error(
            &self.text,
            &self.file,
            &self.tree,
            e,
            &self.design,
            self.unit,
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
        param_index: Default::default(),
        reading: std::cell::Cell::new(values::Reading::Other),
        uses: Default::default(),
        refs: Default::default(),
    };
    let (mut design, unit) = r.design(&tree, overrides)?;
    side_corners::sharp_on_sides(&mut design);
    let tolerances = r.tolerances(&tree)?;
    let parameter_units = r.parameter_units(&tree, unit)?;
    let accuracy = r.accuracy(&tree)?;
    let zoom = r.picture_zoom(&tree, &design.domain)?;
    let parameters = std::mem::take(&mut r.params);
    if let Err(e) = design::validate(&design) {
        return Err(design_error(text, file, &tree, &e, &design, unit));
    }
    Ok(DesignSource {
        design,
        unit,
        text_hash: text_hash(text),
        parameters,
        parameter_units,
        tolerances,
        accuracy,
        zoom,
        file: file.to_string(),
        text: text.to_string(),
        tree,
    })
}

#[cfg(test)]
mod tests;
