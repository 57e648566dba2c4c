//! One module per view, and the dialogs the care view and the tree card open.

pub mod assess_form;
pub mod care;
pub mod field_log;
pub mod merge_conflicts;
pub mod plan_view;
pub mod roster;
pub mod studies;
pub mod tree_card;
pub mod tree_edit;
pub mod work_form;
pub mod year_summary;
