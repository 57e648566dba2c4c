//! Appraised replacement value of a tree by the trunk formula technique (METHODS.md M12).

use std::f64::consts::PI;

use serde::Serialize;

use crate::science::condition::ConditionBand;

/// The condition factor of the trunk formula from the dieback band (METHODS.md M12): sound 0.825,
/// thinning 0.625, declining 0.40, failing 0.15, dead 0 (trade bands good 0.9–0.75, fair 0.75–0.5,
/// poor 0.5–0.3) [published bands; midpoints and the failing value derived].
pub fn condition_factor(band: ConditionBand) -> f64 {
    match band {
        ConditionBand::Sound => 0.825,
        ConditionBand::Thinning => 0.625,
        ConditionBand::Declining => 0.40,
        ConditionBand::Failing => 0.15,
        ConditionBand::Dead => 0.0,
    }
}

/// Trunk area π d² / 4, cm² for d in cm (METHODS.md M12) [published structure].
pub fn trunk_area_cm2(dbh_cm: f64) -> f64 {
    PI * dbh_cm * dbh_cm / 4.0
}

/// One tree's appraisal, with its factors.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Appraisal {
    pub dbh_cm: f64,
    pub trunk_area_cm2: f64,
    /// Unit cost × trunk area, before any factor.
    pub basic_value: f64,
    pub condition: ConditionBand,
    pub condition_factor: f64,
    pub functional_limitation: f64,
    pub external_limitation: f64,
    pub value: f64,
}

/// Trunk formula technique (Council of Tree and Landscape Appraisers, Guide for Plant Appraisal,
/// 10th ed.): value = unit cost × trunk area × condition × functional limitation × external
/// limitation (METHODS.md M12) [published structure]. The limitation factors are per study (0–1).
pub fn appraise(
    dbh_cm: f64,
    dieback_pct: f64,
    unit_cost_per_cm2: f64,
    functional_limitation: f64,
    external_limitation: f64,
) -> Appraisal {
    let area = trunk_area_cm2(dbh_cm.max(0.0));
    let basic = unit_cost_per_cm2 * area;
    let band = ConditionBand::from_dieback(dieback_pct);
    let factor = condition_factor(band);
    Appraisal {
        dbh_cm,
        trunk_area_cm2: area,
        basic_value: basic,
        condition: band,
        condition_factor: factor,
        functional_limitation,
        external_limitation,
        value: basic * factor * functional_limitation * external_limitation,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    // Outside check: METHODS.md M12 worked values — a 30 in tree at $28.31/in² has a basic value of
    // about $20,000, and × 0.8 × 0.75 about $12,000 [published via trade article]; 1 in = 2.54 cm
    // (NIST SP 811) and $4.388/cm² = $28.31/in² / 6.4516.
    #[test]
    fn thirty_inch_tree_matches_the_worked_example() {
        assert_relative_eq!(28.31 / 6.4516, 4.388, max_relative = 1e-3);
        let a = appraise(30.0 * 2.54, 0.0, 4.388, 1.0, 1.0);
        assert!(
            (a.basic_value - 20_000.0).abs() < 100.0,
            "{}",
            a.basic_value
        );
        assert!((a.basic_value * 0.8 * 0.75 - 12_000.0).abs() < 60.0);
        // The 3 in nursery tree at $200 that fixes the unit cost.
        let nursery = appraise(3.0 * 2.54, 0.0, 4.388, 1.0, 1.0);
        assert!(
            (nursery.basic_value - 200.0).abs() < 1.0,
            "{}",
            nursery.basic_value
        );
        // Sound crown and the study's limitations multiply in.
        assert_relative_eq!(a.value, a.basic_value * 0.825, max_relative = 1e-12);
        let limited = appraise(30.0 * 2.54, 60.0, 4.388, 0.8, 0.75);
        assert_eq!(limited.condition, ConditionBand::Failing);
        assert_relative_eq!(
            limited.value,
            a.basic_value * 0.15 * 0.8 * 0.75,
            max_relative = 1e-12
        );
        assert_eq!(appraise(40.0, 100.0, 4.388, 1.0, 1.0).value, 0.0);
    }
}
