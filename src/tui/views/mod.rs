//! One module per view.

pub mod field_log;
pub mod plan_view;
pub mod roster;
pub mod tree_card;
