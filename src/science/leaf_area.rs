//! Leaf area of a crown (METHODS.md M4).

/// Default leaf area index of an open-grown broadleaf crown (leaf area per unit crown projection):
/// 4.0, Lindsey & Bassuk 1991, J. Arboric. 17(6):141–149, worked example for a street tree
/// \[published\]; blue oak crowns averaged 4.4 (Karlik & McKay, USDA PSW proceedings) \[published\].
pub const DEFAULT_LAI_BROADLEAF: f64 = 4.0;
/// Default leaf area index of a conifer crown: 5.0 [assumed; no source — replace when a sourced value
/// is found] (METHODS.md M4).
pub const DEFAULT_LAI_CONIFER: f64 = 5.0;

/// Leaf area LA (m²) = CPA × LAI_species × (1 − dieback/100) (METHODS.md M4; Lindsey & Bassuk 1991
/// leaf area = crown projection × LAI \[published\]; the dieback reduction is our \[derived\] rule).
/// Dieback is clamped to 0–100 %, so a dead tree (100 %) has no leaf area.
pub fn leaf_area_m2(cpa_m2: f64, lai_species: f64, dieback_pct: f64) -> f64 {
    let live = 1.0 - dieback_pct.clamp(0.0, 100.0) / 100.0;
    (cpa_m2 * lai_species * live).max(0.0)
}

/// Effective LAI of the crown = LA / CPA (METHODS.md M13 step 6) \[definition\]; 0 without a crown.
pub fn effective_lai(leaf_area_m2: f64, cpa_m2: f64) -> f64 {
    if cpa_m2 > 0.0 {
        leaf_area_m2 / cpa_m2
    } else {
        0.0
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::science::dimensions::crown_projection_area_m2;
    use crate::science::units::M_PER_FOOT;
    use approx::assert_relative_eq;

    // Outside check: Lindsey & Bassuk 1991 worked example (from memory for the arithmetic): a 20 ft
    // crown, CPA = 0.785 × 20² = 314 ft², LAI 4 → 1256 ft² of leaves.
    #[test]
    fn lindsey_bassuk_street_tree_leaf_area() {
        let cpa = crown_projection_area_m2(20.0 * M_PER_FOOT);
        let la_ft2 = leaf_area_m2(cpa, DEFAULT_LAI_BROADLEAF, 0.0) / (M_PER_FOOT * M_PER_FOOT);
        assert_relative_eq!(la_ft2, 1256.0, max_relative = 1e-3);
    }

    #[test]
    fn dieback_reduces_and_death_removes_leaf_area() {
        assert_relative_eq!(leaf_area_m2(10.0, 4.0, 25.0), 30.0);
        assert_eq!(leaf_area_m2(10.0, 4.0, 100.0), 0.0);
        assert_eq!(leaf_area_m2(10.0, 4.0, 130.0), 0.0);
        assert_relative_eq!(effective_lai(30.0, 10.0), 3.0);
        assert_eq!(effective_lai(0.0, 0.0), 0.0);
    }
}
