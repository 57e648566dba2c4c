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

/// A default seed from a study's name (FNV-1a, 63 bits), so a study made without a seed still has a
/// fixed, stored one.
pub fn seed_from_name(name: &str) -> u64 {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for byte in name.as_bytes() {
        h ^= u64::from(*byte);
        h = h.wrapping_mul(0x0000_0100_0000_01b3);
    }
    h >> 1
}
