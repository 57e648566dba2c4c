//! Widgets shared by the views: a fuzzy picker and single-line text fields.

pub mod picker;
pub mod text;
