//! Reading design files (TOML) into a typed, SI [`fieldgrid_solver::design::Design`].
//! (Work in progress.)
