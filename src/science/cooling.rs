//! Tree transpiration and the latent-heat cooling it carries (METHODS.md M7).

use super::et0::LAMBDA_MJ_PER_KG;
use super::kinds::WaterUse;

/// Density factor kd of a single tree, 1.0 (Costello, Matheny, Clark & Jones 2000, WUCOLS)
/// [published method].
pub const KD_SINGLE_TREE: f64 = 1.0;
/// MJ per kWh, 3.6 (exact: 1 kWh = 3.6 × 10⁶ J; NIST SP 811) \[published\].
pub const MJ_PER_KWH: f64 = 3.6;

/// Species factor ks from the water-use class: low 0.2, moderate 0.5, high 0.8 (WUCOLS IV category
/// midpoints of 10–30 / 40–60 / 70–90 % of ET0; Costello et al. 2000) [published ranges; midpoints
/// derived].
pub fn species_factor(class: WaterUse) -> f64 {
    match class {
        WaterUse::Low => 0.2,
        WaterUse::Moderate => 0.5,
        WaterUse::High => 0.8,
    }
}

/// Landscape coefficient KL = ks × kd × kmc (Costello et al. 2000, WUCOLS) [published method].
pub fn landscape_coefficient(ks: f64, kd: f64, kmc: f64) -> f64 {
    ks * kd * kmc
}

/// Tree water use (L) over a period = Σ ET0 (mm) × KL × CPA (m²) × (1 − dieback/100)
/// (METHODS.md M7, M13 step 9) [published method; dieback reduction derived]. 1 mm over 1 m² = 1 L.
pub fn transpiration_litres(et0_sum_mm: f64, kl: f64, cpa_m2: f64, dieback_pct: f64) -> f64 {
    let live = 1.0 - dieback_pct.clamp(0.0, 100.0) / 100.0;
    (et0_sum_mm * kl * cpa_m2 * live).max(0.0)
}

/// Latent heat carried away (kWh) = water (kg; 1 L = 1 kg) × λ / 3.6, λ = 2.45 MJ/kg (FAO-56)
/// \[published\].
pub fn cooling_kwh(water_litres: f64) -> f64 {
    water_litres * LAMBDA_MJ_PER_KG / MJ_PER_KWH
}

/// Air-conditioning equivalent electricity kWh_e = cooling kWh / COP (COP 3.0 setting) [common
/// practice]. An equivalence, never metered savings. A non-positive COP gives 0.
pub fn ac_equivalent_kwh_e(cooling_kwh: f64, cop: f64) -> f64 {
    if cop > 0.0 { cooling_kwh / cop } else { 0.0 }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::science::dimensions::crown_projection_area_m2;
    use crate::science::units::{L_PER_US_GALLON, M_PER_FOOT};
    use approx::assert_relative_eq;

    // Outside check: 100 L → 68 kWh [derived from FAO-56 λ = 2.45 MJ/kg], ≈ "70 kWh per 100 L"
    // (Ellison et al. 2017) [from memory].
    #[test]
    fn hundred_litres_carry_68_kwh() {
        assert_relative_eq!(cooling_kwh(100.0), 68.06, max_relative = 1e-3);
        assert_relative_eq!(cooling_kwh(100.0), 70.0, max_relative = 0.05);
        assert_relative_eq!(
            ac_equivalent_kwh_e(cooling_kwh(100.0), 3.0),
            22.685,
            max_relative = 1e-3
        );
    }

    // Outside check: Lindsey & Bassuk 1991 worked example [published]: a 20 ft crown uses 31 gal/day by
    // their pan method; ours at ET0 5 mm/d and KL 0.5 is 73 L ≈ 19 gal/d, and the two must agree within
    // 0.3×–3× (METHODS.md M7).
    #[test]
    fn lindsey_bassuk_plausibility() {
        let cpa = crown_projection_area_m2(20.0 * M_PER_FOOT);
        let kl = landscape_coefficient(species_factor(WaterUse::Moderate), KD_SINGLE_TREE, 1.0);
        let litres = transpiration_litres(5.0, kl, cpa, 0.0);
        assert_relative_eq!(litres, 73.0, max_relative = 5e-3);
        let gallons = litres / L_PER_US_GALLON;
        assert_relative_eq!(gallons, 19.3, max_relative = 5e-3);
        let ratio = gallons / 31.0;
        assert!((0.3..=3.0).contains(&ratio), "ratio {ratio}");
    }

    // Check values: WUCOLS IV category midpoints (METHODS.md M7).
    #[test]
    fn species_factors_and_dieback() {
        assert_eq!(species_factor(WaterUse::Low), 0.2);
        assert_eq!(species_factor(WaterUse::High), 0.8);
        assert_relative_eq!(landscape_coefficient(0.5, 1.0, 1.2), 0.6);
        assert_relative_eq!(transpiration_litres(100.0, 0.5, 10.0, 50.0), 250.0);
        assert_eq!(transpiration_litres(100.0, 0.5, 10.0, 100.0), 0.0);
        assert_eq!(ac_equivalent_kwh_e(10.0, 0.0), 0.0);
    }
}
