//! Tree risk rating by the two matrices of the ISA Tree Risk Assessment Best Management Practices
//! (Smiley, Matheny & Lilly 2017; ANSI A300 Part 9), as METHODS.md M9 gives them.
//!
//! Ratings support, and never replace, a qualified arborist's judgment; local rules govern.

/// The caution carried by every risk screen and export.
pub const CAUTION: &str = "Risk ratings and estimates support, and never replace, the judgment of a qualified arborist; local codes and licensed practice govern.";

macro_rules! ordered_words {
    ($(#[$meta:meta])* $name:ident { $($variant:ident => $word:literal),+ $(,)? }) => {
        $(#[$meta])*
        #[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, ::serde::Serialize, ::serde::Deserialize)]
        #[serde(rename_all = "snake_case")]
        pub enum $name { $($variant),+ }
        impl $name {
            /// Every value, lowest first.
            pub const ALL: &'static [$name] = &[$($name::$variant),+];
            /// The stored word.
            pub fn as_str(self) -> &'static str { match self { $($name::$variant => $word),+ } }
            /// Parses the word (any case; `-` or space read as `_`).
            pub fn parse(text: &str) -> Result<Self, crate::model::BadWord> {
                let norm = text.trim().to_ascii_lowercase().replace(['-', ' '], "_");
                match norm.as_str() {
                    $($word => Ok($name::$variant),)+
                    _ => Err(crate::model::BadWord { given: text.trim().to_string(), allowed: concat!($($word, " "),+) }),
                }
            }
        }
        impl std::fmt::Display for $name {
            fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result { f.write_str(self.as_str()) }
        }
    };
}
pub(crate) use ordered_words;

ordered_words!(
    /// Likelihood of failure.
    LikelihoodOfFailure { Improbable => "improbable", Possible => "possible", Probable => "probable", Imminent => "imminent" }
);
ordered_words!(
    /// Likelihood of impacting a target.
    LikelihoodOfImpact { VeryLow => "very_low", Low => "low", Medium => "medium", High => "high" }
);
ordered_words!(
    /// Combined likelihood of failure and impact (Matrix 1's result).
    Likelihood { Unlikely => "unlikely", SomewhatLikely => "somewhat_likely", Likely => "likely", VeryLikely => "very_likely" }
);
ordered_words!(
    /// Consequences of failure.
    Consequences { Negligible => "negligible", Minor => "minor", Significant => "significant", Severe => "severe" }
);
ordered_words!(
    /// Risk rating (Matrix 2's result).
    RiskRating { Low => "low", Moderate => "moderate", High => "high", Extreme => "extreme" }
);
ordered_words!(
    /// How often the target zone is occupied.
    Occupancy { Rare => "rare", Occasional => "occasional", Frequent => "frequent", Constant => "constant" }
);
ordered_words!(
    /// The tree part whose failure is assessed.
    TreePart { Trunk => "trunk", Branch => "branch", Roots => "roots", Crown => "crown", WholeTree => "whole_tree" }
);

/// Matrix 1: likelihood of failure × likelihood of impact (ISA BMP 2017) [published].
pub fn likelihood(failure: LikelihoodOfFailure, impact: LikelihoodOfImpact) -> Likelihood {
    use Likelihood::*;
    use LikelihoodOfFailure as F;
    use LikelihoodOfImpact as I;
    match (failure, impact) {
        (F::Imminent, I::VeryLow) => Unlikely,
        (F::Imminent, I::Low) => SomewhatLikely,
        (F::Imminent, I::Medium) => Likely,
        (F::Imminent, I::High) => VeryLikely,
        (F::Probable, I::Medium) => SomewhatLikely,
        (F::Probable, I::High) => Likely,
        (F::Possible, I::High) => SomewhatLikely,
        _ => Unlikely,
    }
}

/// Matrix 2: likelihood × consequences (ISA BMP 2017; cell counts published, layout from memory).
pub fn rating(likelihood: Likelihood, consequences: Consequences) -> RiskRating {
    use Consequences as C;
    use Likelihood as L;
    use RiskRating::*;
    match (likelihood, consequences) {
        (L::VeryLikely, C::Minor) | (L::Likely, C::Minor) => Moderate,
        (L::VeryLikely, C::Significant) | (L::Likely, C::Significant) | (L::Likely, C::Severe) => {
            High
        }
        (L::VeryLikely, C::Severe) => Extreme,
        (L::SomewhatLikely, C::Significant) | (L::SomewhatLikely, C::Severe) => Moderate,
        _ => Low,
    }
}

/// Rating of one failure mode through both matrices.
pub fn failure_mode_rating(
    failure: LikelihoodOfFailure,
    impact: LikelihoodOfImpact,
    consequences: Consequences,
) -> RiskRating {
    rating(likelihood(failure, impact), consequences)
}

/// A tree's overall rating: the highest over its failure modes (ISA BMP 2017) [published].
pub fn overall_rating(modes: impl IntoIterator<Item = RiskRating>) -> Option<RiskRating> {
    modes.into_iter().max()
}

/// Months until the next inspection for a rating: extreme → 0 (mitigate now), high 6, moderate 24,
/// low 60 (ISA BMP: typically 1–5 years, high risk several months to a year — published ranges; the
/// chosen values are common practice, METHODS.md M9). These are the defaults of the settings
/// `reinspect_months_{low,moderate,high,extreme}`.
pub fn default_reinspection_months(rating: RiskRating) -> u32 {
    match rating {
        RiskRating::Extreme => 0,
        RiskRating::High => 6,
        RiskRating::Moderate => 24,
        RiskRating::Low => 60,
    }
}

/// The next inspection date after an assessment on `assessed_on` with `rating`.
pub fn next_inspection(assessed_on: chrono::NaiveDate, months: u32) -> chrono::NaiveDate {
    assessed_on
        .checked_add_months(chrono::Months::new(months))
        .unwrap_or(assessed_on)
}

#[cfg(test)]
mod tests {
    use super::*;

    // ISA Tree Risk Assessment BMP (Smiley, Matheny & Lilly 2017), Matrix 1 as METHODS.md M9 prints it.
    #[test]
    fn matrix_one_cells() {
        use LikelihoodOfFailure as F;
        use LikelihoodOfImpact as I;
        let expected = [
            (
                F::Imminent,
                [
                    Likelihood::Unlikely,
                    Likelihood::SomewhatLikely,
                    Likelihood::Likely,
                    Likelihood::VeryLikely,
                ],
            ),
            (
                F::Probable,
                [
                    Likelihood::Unlikely,
                    Likelihood::Unlikely,
                    Likelihood::SomewhatLikely,
                    Likelihood::Likely,
                ],
            ),
            (
                F::Possible,
                [
                    Likelihood::Unlikely,
                    Likelihood::Unlikely,
                    Likelihood::Unlikely,
                    Likelihood::SomewhatLikely,
                ],
            ),
            (F::Improbable, [Likelihood::Unlikely; 4]),
        ];
        for (failure, row) in expected {
            for (impact, cell) in I::ALL.iter().zip(row) {
                assert_eq!(likelihood(failure, *impact), cell, "{failure} × {impact}");
            }
        }
    }

    // ISA BMP 2017 Matrix 2 as METHODS.md M9 prints it; the published cell counts are checked too:
    // 1 extreme, 3 high, 4 moderate, 8 low.
    #[test]
    fn matrix_two_cells_and_counts() {
        use Consequences as C;
        use RiskRating as R;
        let expected = [
            (
                Likelihood::VeryLikely,
                [R::Low, R::Moderate, R::High, R::Extreme],
            ),
            (Likelihood::Likely, [R::Low, R::Moderate, R::High, R::High]),
            (
                Likelihood::SomewhatLikely,
                [R::Low, R::Low, R::Moderate, R::Moderate],
            ),
            (Likelihood::Unlikely, [R::Low; 4]),
        ];
        let mut counts = std::collections::HashMap::new();
        for (likely, row) in expected {
            for (consequence, cell) in C::ALL.iter().zip(row) {
                assert_eq!(
                    rating(likely, *consequence),
                    cell,
                    "{likely} × {consequence}"
                );
                *counts.entry(cell).or_insert(0) += 1;
            }
        }
        assert_eq!(counts[&R::Extreme], 1);
        assert_eq!(counts[&R::High], 3);
        assert_eq!(counts[&R::Moderate], 4);
        assert_eq!(counts[&R::Low], 8);
    }

    #[test]
    fn overall_is_the_highest_mode() {
        assert_eq!(
            overall_rating([RiskRating::Low, RiskRating::High, RiskRating::Moderate]),
            Some(RiskRating::High)
        );
        assert_eq!(overall_rating([]), None);
    }
}
