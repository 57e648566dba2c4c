//! Removal studies (DESIGN.md `study/`): what removing a set of trees costs over the coming decades,
//! against replanting plans, with uncertainty. Pure: no SQL, no files, no clock — the caller loads the
//! trees, species, weather and settings and passes them in.
//!
//! - [`select`]: choosing the trees (ids, street, zone, polygon, distance from a works line).
//! - [`projection`]: growing each tree year by year (METHODS.md M3), its benefits from the engine
//!   ([`crate::science::tree_year`], M13), survival (M11, [`survival`]); expected values or seeded
//!   Monte Carlo runs with P10/P50/P90.
//! - [`outcome`]: the kept trees against each plan — deficits, payback years, discounted totals, the
//!   carbon the removal releases, the appraised replacement value ([`appraisal`], M12).
//! - [`settings`]: the study settings (discount rate, survival scenario, carbon decay share, unit cost).

pub mod appraisal;
pub mod outcome;
pub mod projection;
pub mod select;
pub mod settings;
pub mod survival;

pub use outcome::{Mode, StudyEnv, StudyError, StudyInput, StudyOutcome, run_study};
