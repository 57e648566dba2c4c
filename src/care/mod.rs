//! Care rules: tree risk rating (METHODS.md M9). Pure, no I/O.

pub mod risk;
