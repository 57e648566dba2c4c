//! Widgets shared by the views: a fuzzy picker, single-line text fields and small keyboard forms.

pub mod form;
pub mod picker;
pub mod text;
