//! Exact outlines of the design's shapes and the predicates on them.
//!
//! (Work in progress: the full set of shapes, fillets and predicates lands with the
//! rasteriser.)

use crate::design::{Design, DesignError};

/// Checks the geometric rules of the contract.
pub fn validate_design(design: &Design) -> Result<(), DesignError> {
    let _ = design;
    Ok(())
}
