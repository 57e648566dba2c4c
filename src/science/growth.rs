//! Diameter growth and annual carbon sequestration (METHODS.md M3).

use chrono::NaiveDate;
use serde::{Deserialize, Serialize};

use super::biomass::Allometry;

/// Base DBH growth of every species without its own rate: 0.78 cm/yr, the mean of Boston street trees
/// (Smith, Dearborn & Hutyra 2019, PLOS ONE 14(5):e0215846) \[published\].
pub const DEFAULT_GROWTH_CM_PER_YR: f64 = 0.78;
/// Frost-free season length that the base rates stand for: growth × frost-free days / 153 when the
/// setting `growth_frost_free_scaling` is on (Nowak et al. 2013) [from memory].
pub const FROST_FREE_REFERENCE_DAYS: f64 = 153.0;
/// Observed growth needs measurements at least this many years apart (METHODS.md M3) [common practice].
pub const MIN_OBSERVED_SPAN_YEARS: f64 = 2.0;
/// Largest plausible observed increment, cm/yr (METHODS.md M3) [common practice].
pub const MAX_OBSERVED_CM_PER_YR: f64 = 3.0;
/// Days per year for measurement spans (Julian year) (METHODS.md M13 step 5).
pub const DAYS_PER_YEAR: f64 = 365.25;

/// Growth factor by crown dieback (Nowak et al. 2013) [from memory]: ≤ 25 % → 1.0, 26–50 % → 0.76,
/// 51–75 % → 0.42, 76–99 % → 0.15, dead (100 %) → 0. Values between classes (e.g. 25.5) go to the
/// worse class.
pub fn condition_factor(dieback_pct: f64) -> f64 {
    if dieback_pct >= 100.0 {
        0.0
    } else if dieback_pct > 75.0 {
        0.15
    } else if dieback_pct > 50.0 {
        0.42
    } else if dieback_pct > 25.0 {
        0.76
    } else {
        1.0
    }
}

/// Modelled DBH growth (cm/yr) = species base rate × condition factor, × frost-free days / 153 when
/// `frost_free_days` is given (setting `growth_frost_free_scaling`; Nowak et al. 2013) [from memory].
pub fn model_growth_cm_per_yr(
    base_rate_cm_per_yr: f64,
    dieback_pct: f64,
    frost_free_days: Option<f64>,
) -> f64 {
    let rate = base_rate_cm_per_yr.max(0.0) * condition_factor(dieback_pct);
    match frost_free_days {
        Some(days) => rate * days.max(0.0) / FROST_FREE_REFERENCE_DAYS,
        None => rate,
    }
}

/// A dated equivalent DBH.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DbhAt {
    pub date: NaiveDate,
    pub dbh_cm: f64,
}

/// Outcome of the observed-growth test between the earliest and latest measurement (METHODS.md M3).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case", tag = "kind")]
pub enum ObservedGrowth {
    /// Fewer than two measurements, or less than 2 years apart: no observation.
    TooShort,
    /// Mean annual increment within 0–3 cm/yr: used.
    Accepted { cm_per_yr: f64, years: f64 },
    /// Shrinking or jumping DBH: not used, tree flagged for re-measurement.
    Rejected { cm_per_yr: f64, years: f64 },
}

/// Mean annual DBH increment between two measurements, years = days / 365.25; accepted when they are
/// ≥ 2 years apart and the increment lies in 0–3 cm/yr [common practice] (METHODS.md M3, M13 step 5).
pub fn observed_growth(earliest: DbhAt, latest: DbhAt) -> ObservedGrowth {
    let days = (latest.date - earliest.date).num_days();
    // Day counts are far below 2^52, so the conversion is exact.
    let years = days as f64 / DAYS_PER_YEAR;
    if years < MIN_OBSERVED_SPAN_YEARS {
        return ObservedGrowth::TooShort;
    }
    let cm_per_yr = (latest.dbh_cm - earliest.dbh_cm) / years;
    if (0.0..=MAX_OBSERVED_CM_PER_YR).contains(&cm_per_yr) {
        ObservedGrowth::Accepted { cm_per_yr, years }
    } else {
        ObservedGrowth::Rejected { cm_per_yr, years }
    }
}

/// Where a growth rate came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum GrowthSource {
    /// The tree's own mean annual increment.
    Observed,
    /// Species base rate × condition factor (× frost-free scaling).
    Model,
    /// Dead trees do not grow.
    Dead,
}

/// The growth used for a tree-year.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Growth {
    pub dbh_cm_per_yr: f64,
    pub source: GrowthSource,
    /// The observed increment was out of range: re-measure the tree.
    pub remeasure: bool,
}

/// DBH growth for a year (METHODS.md M13 step 5): dead → 0; the observed increment when
/// `use_observed` is on and it was accepted; otherwise the model rate. `remeasure` is raised whenever an
/// observation was rejected (a data-quality flag, whether or not observed growth is used).
pub fn annual_growth(
    dead: bool,
    observation: ObservedGrowth,
    use_observed: bool,
    model_cm_per_yr: f64,
) -> Growth {
    let remeasure = matches!(observation, ObservedGrowth::Rejected { .. });
    if dead {
        return Growth {
            dbh_cm_per_yr: 0.0,
            source: GrowthSource::Dead,
            remeasure,
        };
    }
    match observation {
        ObservedGrowth::Accepted { cm_per_yr, .. } if use_observed => Growth {
            dbh_cm_per_yr: cm_per_yr,
            source: GrowthSource::Observed,
            remeasure,
        },
        _ => Growth {
            dbh_cm_per_yr: model_cm_per_yr,
            source: GrowthSource::Model,
            remeasure,
        },
    }
}

/// Annual sequestration (kg C/yr) = C(d + Δd) − C(d), C from M2 (method of Nowak et al. 2013)
/// [from memory].
pub fn sequestration_kg_c_per_yr(allometry: Allometry, dbh_cm: f64, growth_cm_per_yr: f64) -> f64 {
    allometry.carbon_kg(dbh_cm + growth_cm_per_yr) - allometry.carbon_kg(dbh_cm)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::science::biomass::JenkinsGroup;
    use approx::assert_relative_eq;

    fn date(y: i32, m: u32, d: u32) -> NaiveDate {
        NaiveDate::from_ymd_opt(y, m, d).unwrap_or_default()
    }

    // Outside check: METHODS.md M3 worked value [derived]: Jenkins mixed hardwood, 30 cm, Δd 0.87 →
    // 14.47 kg C/yr.
    #[test]
    fn sequestration_worked_check() {
        let seq = sequestration_kg_c_per_yr(JenkinsGroup::MixedHardwood.allometry(), 30.0, 0.87);
        assert_relative_eq!(seq, 14.47, max_relative = 5e-4);
        assert_eq!(
            sequestration_kg_c_per_yr(JenkinsGroup::MixedHardwood.allometry(), 30.0, 0.0),
            0.0
        );
    }

    // Check values: Nowak et al. 2013 dieback classes [from memory], as METHODS.md M3 lists them.
    #[test]
    fn condition_factor_classes() {
        for (dieback, want) in [
            (0.0, 1.0),
            (25.0, 1.0),
            (26.0, 0.76),
            (50.0, 0.76),
            (51.0, 0.42),
            (75.0, 0.42),
            (76.0, 0.15),
            (99.0, 0.15),
            (100.0, 0.0),
        ] {
            assert_eq!(condition_factor(dieback), want, "dieback {dieback}");
        }
    }

    // Check values: Mailloux et al. 2024 London plane 0.414 cm/yr; frost-free scaling /153.
    #[test]
    fn model_rate_with_condition_and_frost_free_scaling() {
        assert_relative_eq!(model_growth_cm_per_yr(0.414, 10.0, None), 0.414);
        assert_relative_eq!(model_growth_cm_per_yr(0.78, 40.0, None), 0.78 * 0.76);
        assert_relative_eq!(model_growth_cm_per_yr(0.78, 0.0, Some(153.0)), 0.78);
        assert_relative_eq!(
            model_growth_cm_per_yr(0.78, 0.0, Some(214.0)),
            0.78 * 214.0 / 153.0
        );
    }

    #[test]
    fn observed_growth_rules() {
        let a = DbhAt {
            date: date(2015, 6, 1),
            dbh_cm: 20.0,
        };
        // 4 years (1461 days = 4 × 365.25) and +4 cm → 1 cm/yr, accepted.
        let b = DbhAt {
            date: date(2019, 6, 1),
            dbh_cm: 24.0,
        };
        match observed_growth(a, b) {
            ObservedGrowth::Accepted { cm_per_yr, years } => {
                assert_relative_eq!(years, 4.0);
                assert_relative_eq!(cm_per_yr, 1.0);
            }
            other => panic!("expected accepted, got {other:?}"),
        }
        // Less than two years apart.
        let c = DbhAt {
            date: date(2017, 5, 31),
            dbh_cm: 40.0,
        };
        assert_eq!(observed_growth(a, c), ObservedGrowth::TooShort);
        // Shrinking and jumping.
        let shrink = DbhAt {
            date: date(2019, 6, 1),
            dbh_cm: 19.0,
        };
        assert!(matches!(
            observed_growth(a, shrink),
            ObservedGrowth::Rejected { .. }
        ));
        let jump = DbhAt {
            date: date(2019, 6, 1),
            dbh_cm: 33.0,
        };
        assert!(matches!(
            observed_growth(a, jump),
            ObservedGrowth::Rejected { .. }
        ));
        // Exactly 3 cm/yr is within the range.
        let edge = DbhAt {
            date: date(2019, 6, 1),
            dbh_cm: 32.0,
        };
        assert!(matches!(
            observed_growth(a, edge),
            ObservedGrowth::Accepted { .. }
        ));
    }

    #[test]
    fn annual_growth_picks_observed_model_or_dead() {
        let accepted = ObservedGrowth::Accepted {
            cm_per_yr: 1.2,
            years: 3.0,
        };
        let rejected = ObservedGrowth::Rejected {
            cm_per_yr: -1.0,
            years: 3.0,
        };
        let g = annual_growth(false, accepted, true, 0.78);
        assert_eq!(
            (g.dbh_cm_per_yr, g.source, g.remeasure),
            (1.2, GrowthSource::Observed, false)
        );
        let g = annual_growth(false, accepted, false, 0.78);
        assert_eq!((g.dbh_cm_per_yr, g.source), (0.78, GrowthSource::Model));
        let g = annual_growth(false, rejected, true, 0.78);
        assert_eq!(
            (g.dbh_cm_per_yr, g.source, g.remeasure),
            (0.78, GrowthSource::Model, true)
        );
        let g = annual_growth(true, accepted, true, 0.78);
        assert_eq!((g.dbh_cm_per_yr, g.source), (0.0, GrowthSource::Dead));
    }
}
