//! FAO-56 Penman–Monteith reference evapotranspiration, daily (METHODS.md M6).
//!
//! Allen, Pereira, Raes & Smith 1998, Crop evapotranspiration, FAO Irrigation and Drainage Paper 56,
//! chapter 3 eqs. 6–52 \[published\]. Equation numbers below are FAO-56's.

use std::f64::consts::PI;

use serde::{Deserialize, Serialize};

/// Solar constant Gsc = 0.0820 MJ m⁻² min⁻¹ (FAO-56 eq. 21) \[published\].
pub const SOLAR_CONSTANT_MJ_M2_MIN: f64 = 0.0820;
/// Stefan–Boltzmann constant 4.903 × 10⁻⁹ MJ K⁻⁴ m⁻² d⁻¹ (FAO-56 eq. 39) \[published\].
pub const STEFAN_BOLTZMANN_MJ_K4_M2_D: f64 = 4.903e-9;
/// Albedo of the grass reference crop, 0.23 (FAO-56 eq. 38) \[published\].
pub const REFERENCE_ALBEDO: f64 = 0.23;
/// Latent heat of vaporisation λ = 2.45 MJ/kg (FAO-56 eq. 8 and Annex 3) \[published\].
pub const LAMBDA_MJ_PER_KG: f64 = 2.45;
/// Default wind speed when none is measured, u2 = 2 m/s (FAO-56 ch. 3, "missing wind speed data")
/// \[published\].
pub const DEFAULT_WIND_2M_MS: f64 = 2.0;
/// Ångström coefficients as = 0.25, bs = 0.50 (FAO-56 eq. 35, no calibration) \[published\].
pub const ANGSTROM_A: f64 = 0.25;
/// See [`ANGSTROM_A`].
pub const ANGSTROM_B: f64 = 0.50;

/// Atmospheric pressure P (kPa) at elevation z (m): 101.3 ((293 − 0.0065 z)/293)^5.26 (FAO-56 eq. 7).
pub fn atmospheric_pressure_kpa(elevation_m: f64) -> f64 {
    101.3 * ((293.0 - 0.0065 * elevation_m) / 293.0).powf(5.26)
}

/// Psychrometric constant γ (kPa/°C) = 0.665 × 10⁻³ P (FAO-56 eq. 8).
pub fn psychrometric_constant_kpa_c(pressure_kpa: f64) -> f64 {
    0.665e-3 * pressure_kpa
}

/// Saturation vapour pressure e°(T) (kPa) = 0.6108 exp(17.27 T / (T + 237.3)) (FAO-56 eq. 11).
pub fn saturation_vapour_pressure_kpa(t_c: f64) -> f64 {
    0.6108 * (17.27 * t_c / (t_c + 237.3)).exp()
}

/// Slope of the saturation vapour pressure curve Δ (kPa/°C) = 4098 e°(T) / (T + 237.3)²
/// (FAO-56 eq. 13).
pub fn svp_slope_kpa_c(t_c: f64) -> f64 {
    4098.0 * saturation_vapour_pressure_kpa(t_c) / (t_c + 237.3).powi(2)
}

/// Mean saturation vapour pressure es = (e°(Tmax) + e°(Tmin)) / 2 (FAO-56 eq. 12).
pub fn mean_saturation_vapour_pressure_kpa(tmax_c: f64, tmin_c: f64) -> f64 {
    (saturation_vapour_pressure_kpa(tmax_c) + saturation_vapour_pressure_kpa(tmin_c)) / 2.0
}

/// Wind speed at 2 m from wind uz measured at height z (m): u2 = uz · 4.87 / ln(67.8 z − 5.42)
/// (FAO-56 eq. 47). Heights at or below 0.08 m (where the log law fails) return `None`.
pub fn wind_at_2m_ms(wind_ms: f64, height_m: f64) -> Option<f64> {
    let arg = 67.8 * height_m - 5.42;
    if arg > 1.0 {
        Some(wind_ms * 4.87 / arg.ln())
    } else {
        None
    }
}

/// Extraterrestrial radiation Ra (MJ m⁻² d⁻¹) for a latitude and day of year
/// (FAO-56 eqs. 21 (Ra), 23 (dr), 24 (δ), 25 (ωs)); with the daylight hours N (eq. 34).
pub fn extraterrestrial_radiation(lat_deg: f64, day_of_year: u32) -> (f64, f64) {
    let phi = lat_deg.to_radians();
    let j = f64::from(day_of_year);
    let dr = 1.0 + 0.033 * (2.0 * PI * j / 365.0).cos();
    let decl = 0.409 * (2.0 * PI * j / 365.0 - 1.39).sin();
    // Clamped for polar day and night, where −tan φ tan δ leaves [−1, 1].
    let ws = (-phi.tan() * decl.tan()).clamp(-1.0, 1.0).acos();
    let ra = 24.0 * 60.0 / PI
        * SOLAR_CONSTANT_MJ_M2_MIN
        * dr
        * (ws * phi.sin() * decl.sin() + phi.cos() * decl.cos() * ws.sin());
    (ra.max(0.0), 24.0 / PI * ws)
}

/// Clear-sky radiation Rso = (0.75 + 2 × 10⁻⁵ z) Ra (FAO-56 eq. 37).
pub fn clear_sky_radiation(ra: f64, elevation_m: f64) -> f64 {
    (0.75 + 2e-5 * elevation_m) * ra
}

/// Solar radiation from sunshine hours, Rs = (as + bs n/N) Ra (Ångström, FAO-56 eq. 35).
pub fn solar_from_sunshine(sunshine_h: f64, daylight_h: f64, ra: f64) -> f64 {
    let ratio = if daylight_h > 0.0 {
        (sunshine_h / daylight_h).clamp(0.0, 1.0)
    } else {
        0.0
    };
    (ANGSTROM_A + ANGSTROM_B * ratio) * ra
}

/// Solar radiation from the temperature range, Rs = kRs √(Tmax − Tmin) Ra (Hargreaves, FAO-56 eq.
/// 50; kRs 0.16 interior, 0.19 coastal).
pub fn solar_from_temperature(krs: f64, tmax_c: f64, tmin_c: f64, ra: f64) -> f64 {
    krs * (tmax_c - tmin_c).max(0.0).sqrt() * ra
}

/// Net longwave radiation Rnl (MJ m⁻² d⁻¹) = σ ((Tmax,K⁴ + Tmin,K⁴)/2)(0.34 − 0.14 √ea)
/// (1.35 Rs/Rso − 0.35) (FAO-56 eq. 39). Rs/Rso is limited to ≤ 1.0 (FAO-56) and to ≥ 0.3, the lower
/// bound of the cloudiness factor in the ASCE-EWRI 2005 standardized equation (fcd ≥ 0.05) [from
/// memory]. With Rso = 0 (polar night) the ratio is taken as 0.3: our own choice [derived], the same as
/// the `pyet` library's; `refet` takes 1.0 there (tests/reference/README.md).
pub fn net_longwave(tmax_c: f64, tmin_c: f64, ea_kpa: f64, rs: f64, rso: f64) -> f64 {
    let ratio = if rso > 0.0 { rs / rso } else { 0.3 };
    let ratio = ratio.clamp(0.3, 1.0);
    let tk4 = ((tmax_c + 273.16).powi(4) + (tmin_c + 273.16).powi(4)) / 2.0;
    STEFAN_BOLTZMANN_MJ_K4_M2_D
        * tk4
        * (0.34 - 0.14 * ea_kpa.max(0.0).sqrt())
        * (1.35 * ratio - 0.35)
}

/// The humidity data of a day, best first in FAO-56's order.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub enum Humidity {
    /// Actual vapour pressure ea (kPa), measured.
    VapourPressureKpa(f64),
    /// Dew point: ea = e°(Tdew) (FAO-56 eq. 14).
    DewPointC(f64),
    /// Daily RHmax and RHmin: ea = (e°(Tmin) RHmax + e°(Tmax) RHmin) / 200 (FAO-56 eq. 17).
    RhMaxMinPct { max: f64, min: f64 },
    /// Mean RH: ea = RHmean/100 × (e°(Tmax) + e°(Tmin))/2 (FAO-56 eq. 19).
    RhMeanPct(f64),
    /// No humidity: ea = e°(Tmin) (FAO-56 eq. 48).
    Missing,
}

/// The radiation data of a day, best first.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub enum Radiation {
    /// Measured Rs (MJ m⁻² d⁻¹).
    SolarMjM2(f64),
    /// Sunshine hours n: Ångström (FAO-56 eq. 35).
    SunshineHours(f64),
    /// Nothing: Hargreaves (FAO-56 eq. 50), capped at Rso.
    Missing,
}

/// One day's weather as FAO-56 needs it.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct DailyMet {
    pub tmax_c: f64,
    pub tmin_c: f64,
    pub humidity: Humidity,
    /// Wind at 2 m; `None` → 2 m/s (FAO-56).
    pub wind_2m_ms: Option<f64>,
    pub radiation: Radiation,
    /// Soil heat flux G (MJ m⁻² d⁻¹); 0 for daily steps (FAO-56 eq. 42).
    pub soil_heat_flux_mj_m2: f64,
}

/// Where the day is (FAO-56 needs latitude and elevation) and the Hargreaves coefficient.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Et0Site {
    pub lat_deg: f64,
    pub elevation_m: f64,
    /// kRs for eq. 50 (0.16 interior, 0.19 coastal).
    pub krs: f64,
}

/// Which gap fillings a day needed (METHODS.md M6).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
pub struct GapFills {
    /// Rs from Hargreaves (eq. 50).
    pub solar_from_temperature: bool,
    /// Rs from sunshine hours (eq. 35).
    pub solar_from_sunshine: bool,
    /// ea = e°(Tmin) (eq. 48).
    pub humidity_from_tmin: bool,
    /// u2 = 2 m/s.
    pub wind_default: bool,
}

/// Every intermediate of the FAO-56 chain for one day.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Et0Day {
    pub tmean_c: f64,
    pub pressure_kpa: f64,
    pub delta_kpa_c: f64,
    pub gamma_kpa_c: f64,
    pub es_kpa: f64,
    pub ea_kpa: f64,
    pub ra_mj_m2: f64,
    pub daylight_h: f64,
    pub rs_mj_m2: f64,
    pub rso_mj_m2: f64,
    pub rns_mj_m2: f64,
    pub rnl_mj_m2: f64,
    pub rn_mj_m2: f64,
    pub u2_ms: f64,
    /// ET0, mm/day (may be slightly negative on cold, dark, humid days).
    pub et0_mm: f64,
    pub gaps: GapFills,
}

/// FAO-56 Penman–Monteith ET0 (mm/day), eq. 6:
/// ET0 = [0.408 Δ (Rn − G) + γ 900/(T + 273) u2 (es − ea)] / [Δ + γ (1 + 0.34 u2)],
/// with T = (Tmax + Tmin)/2 (eq. 9), Rn = Rns − Rnl (eqs. 38–40), and the gap filling of METHODS.md M6.
pub fn daily_et0(met: &DailyMet, site: &Et0Site, day_of_year: u32) -> Et0Day {
    let mut gaps = GapFills::default();
    let (tmax, tmin) = (met.tmax_c, met.tmin_c);
    let tmean = (tmax + tmin) / 2.0;
    let pressure = atmospheric_pressure_kpa(site.elevation_m);
    let gamma = psychrometric_constant_kpa_c(pressure);
    let delta = svp_slope_kpa_c(tmean);
    let es = mean_saturation_vapour_pressure_kpa(tmax, tmin);
    let ea = match met.humidity {
        Humidity::VapourPressureKpa(ea) => ea,
        Humidity::DewPointC(tdew) => saturation_vapour_pressure_kpa(tdew),
        Humidity::RhMaxMinPct { max, min } => {
            (saturation_vapour_pressure_kpa(tmin) * max
                + saturation_vapour_pressure_kpa(tmax) * min)
                / 200.0
        }
        Humidity::RhMeanPct(rh) => rh / 100.0 * es,
        Humidity::Missing => {
            gaps.humidity_from_tmin = true;
            saturation_vapour_pressure_kpa(tmin)
        }
    };
    let (ra, daylight_h) = extraterrestrial_radiation(site.lat_deg, day_of_year);
    let rso = clear_sky_radiation(ra, site.elevation_m);
    let rs = match met.radiation {
        Radiation::SolarMjM2(rs) => rs.max(0.0),
        Radiation::SunshineHours(n) => {
            gaps.solar_from_sunshine = true;
            solar_from_sunshine(n, daylight_h, ra)
        }
        Radiation::Missing => {
            gaps.solar_from_temperature = true;
            solar_from_temperature(site.krs, tmax, tmin, ra).min(rso)
        }
    };
    let rns = (1.0 - REFERENCE_ALBEDO) * rs;
    let rnl = net_longwave(tmax, tmin, ea, rs, rso);
    let rn = rns - rnl;
    let u2 = match met.wind_2m_ms.filter(|u| u.is_finite() && *u >= 0.0) {
        Some(u) => u,
        None => {
            gaps.wind_default = true;
            DEFAULT_WIND_2M_MS
        }
    };
    let g = met.soil_heat_flux_mj_m2;
    let et0 = (0.408 * delta * (rn - g) + gamma * 900.0 / (tmean + 273.0) * u2 * (es - ea))
        / (delta + gamma * (1.0 + 0.34 * u2));
    Et0Day {
        tmean_c: tmean,
        pressure_kpa: pressure,
        delta_kpa_c: delta,
        gamma_kpa_c: gamma,
        es_kpa: es,
        ea_kpa: ea,
        ra_mj_m2: ra,
        daylight_h,
        rs_mj_m2: rs,
        rso_mj_m2: rso,
        rns_mj_m2: rns,
        rnl_mj_m2: rnl,
        rn_mj_m2: rn,
        u2_ms: u2,
        et0_mm: et0,
        gaps,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    // FAO-56 Example 8 [published]: 20°S, 3 September (day 246) → Ra = 32.2 MJ m⁻² d⁻¹.
    #[test]
    fn fao56_example_8_extraterrestrial_radiation() {
        let (ra, _) = extraterrestrial_radiation(-20.0, 246);
        assert_relative_eq!(ra, 32.2, max_relative = 2e-3);
    }

    fn brussels(humidity: Humidity) -> Et0Day {
        // FAO-56 Example 18 [published]: Brussels 50°48'N, 100 m, 6 July (day 187), Tmax 21.5,
        // Tmin 12.3, wind 10 km/h at 10 m, sunshine 9.25 h.
        let u10 = 10.0 / 3.6;
        let met = DailyMet {
            tmax_c: 21.5,
            tmin_c: 12.3,
            humidity,
            wind_2m_ms: wind_at_2m_ms(u10, 10.0),
            radiation: Radiation::SunshineHours(9.25),
            soil_heat_flux_mj_m2: 0.0,
        };
        let site = Et0Site {
            lat_deg: 50.0 + 48.0 / 60.0,
            elevation_m: 100.0,
            krs: 0.16,
        };
        daily_et0(&met, &site, 187)
    }

    // FAO-56 Example 18, Brussels 6 July [published]: intermediates and ET0 = 3.9 mm/d.
    #[test]
    fn fao56_example_18_brussels() {
        let d = brussels(Humidity::RhMaxMinPct {
            max: 84.0,
            min: 63.0,
        });
        assert_relative_eq!(d.u2_ms, 2.078, max_relative = 1e-3);
        assert_relative_eq!(d.delta_kpa_c, 0.122, max_relative = 5e-3);
        assert_relative_eq!(d.gamma_kpa_c, 0.0666, max_relative = 2e-3);
        assert_relative_eq!(d.es_kpa, 1.997, max_relative = 1e-3);
        assert_relative_eq!(d.ea_kpa, 1.409, max_relative = 1e-3);
        assert_relative_eq!(d.ra_mj_m2, 41.09, max_relative = 1e-3);
        assert_relative_eq!(d.rs_mj_m2, 22.07, max_relative = 1e-3);
        assert_relative_eq!(d.rso_mj_m2, 30.90, max_relative = 1e-3);
        assert_relative_eq!(d.rnl_mj_m2, 3.71, max_relative = 5e-3);
        assert_relative_eq!(d.rn_mj_m2, 13.28, max_relative = 2e-3);
        assert_relative_eq!(d.et0_mm, 3.9, max_relative = 0.01);
        // Same day from the printed ea.
        let e = brussels(Humidity::VapourPressureKpa(1.409));
        assert_relative_eq!(e.et0_mm, 3.9, max_relative = 0.01);
        assert!(e.gaps.solar_from_sunshine && !e.gaps.wind_default);
    }

    // FAO-56 Example 17, Bangkok, April (monthly) [published result ET0 = 5.72 mm/d; the inputs
    // recalled from memory: 13°44'N, 2 m, Tmax 34.8, Tmin 25.6, ea 2.85 kPa, u2 2 m/s, n 8.5 h,
    // day 105, G = 0.14 MJ m⁻² d⁻¹ from monthly mean temperatures].
    #[test]
    fn fao56_example_17_bangkok() {
        let met = DailyMet {
            tmax_c: 34.8,
            tmin_c: 25.6,
            humidity: Humidity::VapourPressureKpa(2.85),
            wind_2m_ms: Some(2.0),
            radiation: Radiation::SunshineHours(8.5),
            soil_heat_flux_mj_m2: 0.14,
        };
        let site = Et0Site {
            lat_deg: 13.0 + 44.0 / 60.0,
            elevation_m: 2.0,
            krs: 0.16,
        };
        let d = daily_et0(&met, &site, 105);
        assert_relative_eq!(d.ra_mj_m2, 38.06, max_relative = 2e-3); // from memory
        assert_relative_eq!(d.rs_mj_m2, 22.65, max_relative = 2e-3); // from memory
        assert_relative_eq!(d.et0_mm, 5.72, max_relative = 2e-3);
    }

    // FAO-56 Example 18 (wind): 10 km/h at 10 m → 2.078 m/s at 2 m; at 2 m the factor is ~1.
    #[test]
    fn wind_height_conversion_eq_47() {
        assert_relative_eq!(
            wind_at_2m_ms(10.0 / 3.6, 10.0).unwrap_or(0.0),
            2.078,
            max_relative = 1e-3
        );
        assert_relative_eq!(
            wind_at_2m_ms(3.0, 2.0).unwrap_or(0.0),
            3.0,
            max_relative = 2e-3
        );
        assert_eq!(wind_at_2m_ms(3.0, 0.05), None);
    }

    // FAO-56 Annex 2 Table 2.3 [published, from memory]: e°(20 °C) = 2.338 kPa, Δ(20 °C) = 0.145;
    // Table 2.2: γ at 0 m = 0.067 kPa/°C, P(0) = 101.3 kPa.
    #[test]
    fn fao56_tables_vapour_pressure_and_gamma() {
        assert_relative_eq!(
            saturation_vapour_pressure_kpa(20.0),
            2.338,
            max_relative = 1e-3
        );
        assert_relative_eq!(svp_slope_kpa_c(20.0), 0.145, max_relative = 5e-3);
        assert_relative_eq!(atmospheric_pressure_kpa(0.0), 101.3, max_relative = 1e-9);
        assert_relative_eq!(
            psychrometric_constant_kpa_c(101.3),
            0.067,
            max_relative = 6e-3
        );
    }

    #[test]
    fn gap_filling_order_and_caps() {
        let site = Et0Site {
            lat_deg: 45.0,
            elevation_m: 200.0,
            krs: 0.16,
        };
        let met = DailyMet {
            tmax_c: 30.0,
            tmin_c: 5.0,
            humidity: Humidity::Missing,
            wind_2m_ms: None,
            radiation: Radiation::Missing,
            soil_heat_flux_mj_m2: 0.0,
        };
        let d = daily_et0(&met, &site, 200);
        assert!(d.gaps.solar_from_temperature && d.gaps.humidity_from_tmin && d.gaps.wind_default);
        assert_eq!(d.u2_ms, 2.0);
        assert_relative_eq!(d.ea_kpa, saturation_vapour_pressure_kpa(5.0));
        // 0.16 × √25 = 0.8 of Ra exceeds Rso (≈ 0.754 Ra): capped.
        assert_relative_eq!(d.rs_mj_m2, d.rso_mj_m2);
        assert!(d.et0_mm > 0.0);
        // Coastal kRs 0.19 gives more radiation when not capped.
        let narrow = DailyMet {
            tmax_c: 20.0,
            tmin_c: 16.0,
            ..met
        };
        let inland = daily_et0(&narrow, &site, 200);
        let coast = daily_et0(&narrow, &Et0Site { krs: 0.19, ..site }, 200);
        assert_relative_eq!(
            coast.rs_mj_m2 / inland.rs_mj_m2,
            0.19 / 0.16,
            max_relative = 1e-12
        );
    }

    #[test]
    fn polar_night_is_finite() {
        let site = Et0Site {
            lat_deg: 78.0,
            elevation_m: 10.0,
            krs: 0.16,
        };
        let met = DailyMet {
            tmax_c: -10.0,
            tmin_c: -20.0,
            humidity: Humidity::Missing,
            wind_2m_ms: Some(3.0),
            radiation: Radiation::Missing,
            soil_heat_flux_mj_m2: 0.0,
        };
        let d = daily_et0(&met, &site, 355);
        assert_eq!(d.ra_mj_m2, 0.0);
        assert!(d.et0_mm.is_finite());
    }
}
