//! What a reported number is: a capacitance entry, a conductor's force, the field at a
//! point, a line parameter. Plain data naming a quantity, shared by the accuracy loop (its
//! estimates) and the warnings (the quantity a target missed); it refers to no other module,
//! so both can hold it. Positions in metres.

/// One quantity of a result.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub enum Quantity {
    /// Entry (row, column) of the Maxwell capacitance matrix.
    Capacitance {
        /// Row conductor.
        row: String,
        /// Column conductor.
        column: String,
    },
    /// The force on a conductor (its magnitude; the axial component in axisymmetric mode).
    Force {
        /// The conductor.
        conductor: String,
    },
    /// The field magnitude at a hot spot.
    Field {
        /// Position, m.
        at: [f64; 2],
        /// The material the field is in.
        material: String,
    },
    /// A scalar line parameter, by its key in [`crate::line::scalars`] ("z0", "eps_eff", ...).
    Line(&'static str),
}
