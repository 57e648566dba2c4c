//! Small closed vocabularies the science needs: leaf habit, site kind, water-use class, tree status.
//! They are the shared domain types of [`crate::model`], re-exported so the science reads on its own.

pub use crate::model::{LeafHabit, SiteKind, TreeStatus, WaterUse};

#[cfg(test)]
mod tests {
    use super::*;

    // Check values: the stored words of DESIGN.md's data model.
    #[test]
    fn words_round_trip_and_reject_others() {
        for habit in LeafHabit::ALL {
            assert_eq!(LeafHabit::parse(habit.as_str()).ok(), Some(*habit));
        }
        for site in SiteKind::ALL {
            assert_eq!(
                SiteKind::parse(&site.as_str().to_uppercase()).ok(),
                Some(*site)
            );
        }
        for class in WaterUse::ALL {
            assert_eq!(WaterUse::parse(&format!(" {class} ")).ok(), Some(*class));
        }
        assert_eq!(
            TreeStatus::parse("Standing").ok(),
            Some(TreeStatus::Standing)
        );
        assert!(TreeStatus::parse("felled").is_err());
        assert_eq!(SiteKind::default(), SiteKind::Verge);
        assert!(SiteKind::parse("sidewalk").is_err());
    }
}
