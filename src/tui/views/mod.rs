//! One module per view.

pub mod roster;
