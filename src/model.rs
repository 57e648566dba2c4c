//! Plain domain types shared by every layer (core, store, io, tui, cli). SI units in field names.

use chrono::NaiveDate;
use serde::{Deserialize, Serialize};

use crate::science::condition::ConditionWord;

/// Error for a word that is not one of an enum's allowed values.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("'{given}' is not one of: {allowed}")]
pub struct BadWord {
    pub given: String,
    pub allowed: &'static str,
}

macro_rules! word_enum {
    ($(#[$meta:meta])* $name:ident { $($variant:ident => $word:literal),+ $(,)? }) => {
        $(#[$meta])*
        #[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
        #[serde(rename_all = "snake_case")]
        pub enum $name { $($variant),+ }

        impl $name {
            /// Every value, in declaration order.
            pub const ALL: &'static [$name] = &[$($name::$variant),+];
            /// The stored and exchanged word.
            pub fn as_str(self) -> &'static str {
                match self { $($name::$variant => $word),+ }
            }
            /// Parses the word, ignoring case and surrounding blanks (`-` and space read as `_`).
            pub fn parse(text: &str) -> Result<Self, BadWord> {
                let norm = text.trim().to_ascii_lowercase().replace(['-', ' '], "_");
                match norm.as_str() {
                    $($word => Ok($name::$variant),)+
                    _ => Err(BadWord { given: text.trim().to_string(), allowed: concat!($($word, " "),+) }),
                }
            }
        }

        impl std::fmt::Display for $name {
            fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
                f.write_str(self.as_str())
            }
        }
    };
}

word_enum!(
    /// Where a tree stands (DESIGN.md data model).
    SiteKind { Verge => "verge", Pit => "pit", Median => "median", Park => "park", Yard => "yard" }
);
impl Default for SiteKind {
    /// METHODS.md M13 step 2: a missing site kind counts as verge.
    fn default() -> Self {
        SiteKind::Verge
    }
}

word_enum!(
    /// Whether a tree stands, was removed (never deleted) or is planned.
    TreeStatus { Standing => "standing", Removed => "removed", Planned => "planned" }
);
word_enum!(
    /// Leaf habit of a species.
    LeafHabit { Deciduous => "deciduous", Evergreen => "evergreen" }
);
word_enum!(
    /// Water-use class of a species (METHODS.md M7).
    WaterUse { Low => "low", Moderate => "moderate", High => "high" }
);

/// A species row of the built-in or user-extended species list.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Species {
    pub id: i64,
    pub scientific_name: String,
    pub common_name: String,
    pub genus: String,
    pub family: String,
    pub leaf_habit: LeafHabit,
    pub sg_green: f64,
    pub jenkins_group: String,
    pub chojnacky_group: String,
    pub growth_cm_per_yr: f64,
    pub growth_source: String,
    pub water_use: WaterUse,
    pub lai: f64,
    pub max_height_m: Option<f64>,
    pub builtin: bool,
    pub source: String,
}

/// One tree with one measurement, as carried by the trees exchange format (DESIGN.md), validated and in
/// SI units. `stems_cm` holds one value for a single-stem tree.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TreeRecord {
    pub uid: Option<String>,
    /// The species' scientific name as stored in the species list.
    pub species: String,
    pub lon: Option<f64>,
    pub lat: Option<f64>,
    pub street: Option<String>,
    pub house_number: Option<String>,
    pub site_kind: Option<SiteKind>,
    pub planted_on: Option<NaiveDate>,
    pub status: Option<TreeStatus>,
    pub measured_on: NaiveDate,
    pub stems_cm: Vec<f64>,
    /// True when the stems were given one by one (`stems_cm`), false for a single `dbh_cm`.
    pub multi_stem: bool,
    pub height_m: Option<f64>,
    pub crown_base_m: Option<f64>,
    pub crown_width_m: Option<f64>,
    pub crown_width2_m: Option<f64>,
    pub dieback_pct: Option<f64>,
    pub condition: Option<ConditionWord>,
    pub notes: Option<String>,
    /// Who measured (the field log's crew; not a column of the trees CSV).
    #[serde(default)]
    pub measured_by: Option<String>,
}

impl TreeRecord {
    /// Equivalent DBH of all stems, √Σd² (METHODS.md M1, common practice).
    pub fn dbh_cm(&self) -> f64 {
        crate::science::units::equivalent_dbh_cm(&self.stems_cm)
    }
}

/// A tree's latest state for lists and exports: the tree row joined with its latest measurement.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TreeSummary {
    pub id: i64,
    pub uid: String,
    pub species: String,
    pub common_name: String,
    pub street: Option<String>,
    pub house_number: Option<String>,
    pub status: TreeStatus,
    pub dbh_cm: Option<f64>,
    pub height_m: Option<f64>,
    pub dieback_pct: Option<f64>,
    pub condition: Option<ConditionWord>,
    pub measured_on: Option<NaiveDate>,
    pub zone: Option<String>,
}

impl TreeSummary {
    /// Dieback of the latest measurement, from the percentage or else the condition word (METHODS.md M3).
    pub fn effective_dieback_pct(&self) -> Option<f64> {
        self.dieback_pct
            .or(self.condition.map(ConditionWord::dieback_pct))
    }
}

/// A weather station and where it stands (FAO-56 needs latitude and elevation).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct StationInfo {
    pub name: String,
    pub lat: f64,
    pub lon: Option<f64>,
    pub elevation_m: f64,
    pub coastal: bool,
}

/// One day of weather as stored (every value may be missing; METHODS.md M6 fills gaps).
pub use crate::science::weather::WeatherDay as WeatherRecord;

/// A named zone polygon (GeoJSON geometry text, validated on the way in).
#[derive(Debug, Clone, PartialEq)]
pub struct ZoneRecord {
    pub name: String,
    pub geometry_json: String,
}
