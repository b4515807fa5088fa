//! (Work in progress.)
