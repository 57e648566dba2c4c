//! Money value of a tree-year's flows (METHODS.md M8, M13 step 10).

use serde::{Deserialize, Serialize};

use super::settings::ScienceSettings;

/// CO2e price (currency per tonne) in a year, linear between the points and clamped outside them.
/// Default points: US EPA 2023 social cost of carbon at 2 % discount, 2020 dollars — 2020 190,
/// 2025 210, 2030 230, 2040 270, 2050 310 [published, via secondary copy]. No points → 0.
pub fn co2_price_per_t(points: &[(i32, f64)], year: i32) -> f64 {
    let (Some(first), Some(last)) = (points.first(), points.last()) else {
        return 0.0;
    };
    if year <= first.0 {
        return first.1;
    }
    if year >= last.0 {
        return last.1;
    }
    for pair in points.windows(2) {
        let ((y0, p0), (y1, p1)) = (pair[0], pair[1]);
        if year >= y0 && year <= y1 && y1 > y0 {
            let t = f64::from(year - y0) / f64::from(y1 - y0);
            return p0 + t * (p1 - p0);
        }
    }
    last.1
}

/// The prices used for one year, stated beside every value (METHODS.md M8).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Prices {
    pub year: i32,
    pub currency: String,
    /// Per tonne CO2e (EPA 2023 social cost of carbon, 2 %, by default).
    pub co2_per_t: f64,
    /// Avoided stormwater per m³: $2.36 (USDA FS community tree guides, $0.008936/gal) [published via
    /// secondary copy].
    pub water_per_m3: f64,
    /// Electricity per kWh: $0.16 (US EIA residential average 2023–24) \[published\].
    pub electricity_per_kwh: f64,
    /// Share of the AC-equivalent electricity counted as money (default 0: not metered savings).
    pub cooling_value_share: f64,
    /// Air-conditioner COP used to turn cooling kWh into AC-equivalent kWh_e.
    pub cop: f64,
}

impl Prices {
    /// The settings' prices for `year`.
    pub fn for_year(settings: &ScienceSettings, year: i32) -> Prices {
        Prices {
            year,
            currency: settings.currency.clone(),
            co2_per_t: co2_price_per_t(&settings.co2_price_points, year),
            water_per_m3: settings.water_price_per_m3,
            electricity_per_kwh: settings.electricity_price_per_kwh,
            cooling_value_share: settings.cooling_value_share,
            cop: settings.cop,
        }
    }
}

/// The value of a year's flows split by benefit.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct FlowValue {
    pub carbon: f64,
    pub stormwater: f64,
    pub energy: f64,
    pub total: f64,
}

/// Value of the year's flows only (METHODS.md M13 step 10) \[derived\]: CO2e sequestered (t) × CO2
/// price, plus interception m³ × water price, plus (cooling kWh / COP) × electricity price ×
/// cooling_value_share.
/// Stored carbon is reported, never added. Negative sequestration is not valued below zero.
pub fn flow_value(
    co2e_seq_kg_yr: f64,
    interception_m3_yr: f64,
    cooling_kwh_yr: f64,
    prices: &Prices,
) -> FlowValue {
    let carbon = co2e_seq_kg_yr.max(0.0) / 1000.0 * prices.co2_per_t;
    let stormwater = interception_m3_yr * prices.water_per_m3;
    let ac_kwh_e = if prices.cop > 0.0 {
        cooling_kwh_yr / prices.cop
    } else {
        0.0
    };
    let energy = ac_kwh_e * prices.electricity_per_kwh * prices.cooling_value_share;
    FlowValue {
        carbon,
        stormwater,
        energy,
        total: carbon + stormwater + energy,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::science::units::L_PER_US_GALLON;
    use approx::assert_relative_eq;

    // Outside check: US EPA 2023 social cost of CO2 at 2 % (2020 $/t): 190, 210, 230, 270, 310
    // [published via secondary copy]; linear between, clamped outside.
    #[test]
    fn epa_2023_price_points_and_interpolation() {
        let points = ScienceSettings::default().co2_price_points;
        assert_eq!(co2_price_per_t(&points, 2020), 190.0);
        assert_eq!(co2_price_per_t(&points, 2030), 230.0);
        assert_eq!(co2_price_per_t(&points, 2050), 310.0);
        assert_relative_eq!(co2_price_per_t(&points, 2023), 202.0);
        assert_relative_eq!(co2_price_per_t(&points, 2035), 250.0);
        assert_eq!(co2_price_per_t(&points, 2010), 190.0);
        assert_eq!(co2_price_per_t(&points, 2070), 310.0);
        assert_eq!(co2_price_per_t(&[], 2030), 0.0);
    }

    // Outside check: USDA FS community tree guides' $0.008936/gal ≈ $2.36/m³ (1 gal = 3.785411784 L,
    // NIST SP 811).
    #[test]
    fn water_price_matches_per_gallon_source() {
        let per_m3 = 0.008936 / (L_PER_US_GALLON / 1000.0);
        assert_relative_eq!(
            per_m3,
            ScienceSettings::default().water_price_per_m3,
            max_relative = 2e-3
        );
    }

    #[test]
    fn value_counts_only_the_years_flows() {
        let mut settings = ScienceSettings::default();
        let prices = Prices::for_year(&settings, 2025);
        // 100 kg CO2e at $210/t = $21; 2 m³ × 2.36 = $4.72; cooling not counted by default.
        let v = flow_value(100.0, 2.0, 900.0, &prices);
        assert_relative_eq!(v.carbon, 21.0);
        assert_relative_eq!(v.stormwater, 4.72);
        assert_eq!(v.energy, 0.0);
        assert_relative_eq!(v.total, 25.72);
        settings.cooling_value_share = 0.5;
        let prices = Prices::for_year(&settings, 2025);
        // 900 kWh / 3 = 300 kWh_e × 0.16 × 0.5 = $24.
        assert_relative_eq!(flow_value(0.0, 0.0, 900.0, &prices).energy, 24.0);
    }
}
