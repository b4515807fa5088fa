//! Reference tests: the solver's numbers against published closed forms, tables and
//! literature, manufactured solutions, and agreement between the solvers. One module per
//! family of cases; shared designs and helpers live in `tests/support/`.

mod accuracy;
mod axisymmetric;
mod design_targets;
mod fem_demos;
mod floating;
mod forces;
mod hotspots;
mod line;
mod manufactured;
mod nested;
mod off_row;
mod open;
mod planar;
mod uniform_field;
