//! A year of station weather, prepared once for all trees: daily ET0 (M6), the deciduous leaf-on
//! season (M5) and the rain days (M5).

use chrono::{Datelike, NaiveDate};
use serde::{Deserialize, Serialize};

use super::et0::{DailyMet, Et0Site, GapFills, Humidity, Radiation, daily_et0};
use super::interception::YearRain;
use super::settings::ScienceSettings;

/// One day of station weather as stored (every value may be missing; DESIGN.md weather CSV).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct WeatherDay {
    pub date: NaiveDate,
    pub precip_mm: Option<f64>,
    pub tmin_c: Option<f64>,
    pub tmax_c: Option<f64>,
    pub rh_mean_pct: Option<f64>,
    pub wind_2m_ms: Option<f64>,
    pub solar_mj_m2: Option<f64>,
    pub tdew_c: Option<f64>,
    pub sunshine_h: Option<f64>,
}

impl WeatherDay {
    /// A day with only a date: every value missing.
    pub fn empty(date: NaiveDate) -> Self {
        WeatherDay {
            date,
            precip_mm: None,
            tmin_c: None,
            tmax_c: None,
            rh_mean_pct: None,
            wind_2m_ms: None,
            solar_mj_m2: None,
            tdew_c: None,
            sunshine_h: None,
        }
    }

    /// The FAO-56 inputs of the day, or `None` when Tmin or Tmax is missing (METHODS.md M6: the day
    /// has no ET0). Humidity: dew point (eq. 14), else RHmean (eq. 19), else missing (eq. 48).
    /// Radiation: measured Rs, else sunshine hours (eq. 35), else missing (eq. 50). G = 0.
    pub fn fao56_inputs(&self) -> Option<DailyMet> {
        let finite = |v: Option<f64>| v.filter(|v| v.is_finite());
        let (tmax, tmin) = (finite(self.tmax_c)?, finite(self.tmin_c)?);
        let humidity = if let Some(tdew) = finite(self.tdew_c) {
            Humidity::DewPointC(tdew)
        } else if let Some(rh) = finite(self.rh_mean_pct).filter(|rh| (0.0..=100.0).contains(rh)) {
            Humidity::RhMeanPct(rh)
        } else {
            Humidity::Missing
        };
        let radiation = if let Some(rs) = finite(self.solar_mj_m2).filter(|rs| *rs >= 0.0) {
            Radiation::SolarMjM2(rs)
        } else if let Some(n) = finite(self.sunshine_h).filter(|n| *n >= 0.0) {
            Radiation::SunshineHours(n)
        } else {
            Radiation::Missing
        };
        Some(DailyMet {
            tmax_c: tmax,
            tmin_c: tmin,
            humidity,
            wind_2m_ms: finite(self.wind_2m_ms),
            radiation,
            soil_heat_flux_mj_m2: 0.0,
        })
    }
}

/// The weather station the inventory uses.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Station {
    pub lat_deg: f64,
    pub elevation_m: f64,
    /// Coastal stations use kRs 0.19 in the Hargreaves radiation of FAO-56 eq. 50.
    pub coastal: bool,
}

/// How the leaf-on season was found.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum LeafOnRule {
    /// From the year's frosts (Tmin < 0 °C).
    FrostFree,
    /// No temperature data at all: 1 Apr–31 Oct (north) or outside 1 May–30 Sep (south).
    CalendarFallback,
}

/// The deciduous leaf-on flag of every day of `year` (index 0 = 1 January), METHODS.md M5, the
/// frost-free period [common practice]:
/// - latitude ≥ 0: leaf-on strictly after the last day of Jan–Jul with Tmin < 0 °C and strictly before
///   the first day of Aug–Dec with Tmin < 0 °C (no such day → from 1 Jan / to 31 Dec);
/// - latitude < 0: leaf-off from the first day of Jan–Jul with Tmin < 0 °C (none → 1 Aug) through the
///   last day of Aug–Dec with Tmin < 0 °C (none → 31 Jul); no frost at all → leaf-on all year;
/// - days without Tmin count as frost-free; no Tmin on any day → the calendar fallback.
///
/// `tmin_of` gives the day's Tmin from its date.
pub fn leaf_on_season<F>(year: i32, lat_deg: f64, tmin_of: F) -> (Vec<bool>, LeafOnRule)
where
    F: Fn(NaiveDate) -> Option<f64>,
{
    let dates: Vec<NaiveDate> = year_dates(year).collect();
    let tmins: Vec<Option<f64>> = dates
        .iter()
        .map(|d| tmin_of(*d).filter(|t| t.is_finite()))
        .collect();
    let north = lat_deg >= 0.0;
    if tmins.iter().all(Option::is_none) {
        let on = dates
            .iter()
            .map(|d| {
                let m = d.month();
                if north {
                    (4..=10).contains(&m)
                } else {
                    !(5..=9).contains(&m)
                }
            })
            .collect();
        return (on, LeafOnRule::CalendarFallback);
    }
    let frost = |i: usize| tmins[i].is_some_and(|t| t < 0.0);
    let first_half = |i: usize| dates[i].month() <= 7;
    let n = dates.len();
    let idx = |pred: &dyn Fn(usize) -> bool, last: bool| -> Option<usize> {
        if last {
            (0..n).rev().find(|&i| pred(i))
        } else {
            (0..n).find(|&i| pred(i))
        }
    };
    let aug1 = dates.iter().position(|d| d.month() == 8).unwrap_or(n);
    let on = if north {
        let last_spring = idx(&|i| first_half(i) && frost(i), true);
        let first_autumn = idx(&|i| !first_half(i) && frost(i), false);
        (0..n)
            .map(|i| last_spring.is_none_or(|s| i > s) && first_autumn.is_none_or(|f| i < f))
            .collect()
    } else {
        let off_start = idx(&|i| first_half(i) && frost(i), false).unwrap_or(aug1);
        // None → 31 Jul, the day before 1 Aug (an empty span when the start is 1 Aug).
        let off_end = idx(&|i| !first_half(i) && frost(i), true);
        (0..n)
            .map(|i| match off_end {
                Some(end) => !(i >= off_start && i <= end),
                None => !(i >= off_start && i < aug1),
            })
            .collect()
    };
    (on, LeafOnRule::FrostFree)
}

fn year_dates(year: i32) -> impl Iterator<Item = NaiveDate> {
    NaiveDate::from_ymd_opt(year, 1, 1)
        .into_iter()
        .flat_map(|first| first.iter_days())
        .take_while(move |d| d.year() == year)
}

/// One rain day for the interception model: gross rain and whether deciduous crowns are in leaf.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct RainDay {
    pub precip_mm: f64,
    pub leaf_on: bool,
}

/// One prepared day.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ClimateDay {
    pub date: NaiveDate,
    /// Gross rain, mm (0 when missing; see `precip_missing`).
    pub precip_mm: f64,
    pub precip_missing: bool,
    /// FAO-56 ET0 (mm/day, floored at 0); `None` = a gap (missing temperature).
    pub et0_mm: Option<f64>,
    pub et0_gaps: GapFills,
    /// Deciduous crowns in leaf (M5).
    pub leaf_on: bool,
}

/// A year of weather prepared once and shared by every tree (METHODS.md M13 step 7).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct YearWeather {
    pub year: i32,
    pub days: Vec<ClimateDay>,
    /// Days with rain > 0, in date order.
    pub rain_days: Vec<RainDay>,
    /// The same rain days sorted into the interception tables (leaf-on, leaf-off, all days), so a
    /// tree's year of interception is one binary search (METHODS.md M5, M13 step 8). Built from
    /// `rain_days` by [`YearWeather::compute`]; rebuild it with [`YearRain::new`] if `rain_days` is
    /// changed.
    pub rain: YearRain,
    pub leaf_on_rule: LeafOnRule,
    /// Number of leaf-on days: the frost-free season length used for growth scaling (M3).
    pub frost_free_days: u32,
    /// Σ ET0 over all days with an ET0 (evergreens), mm.
    pub et0_all_mm: f64,
    /// Σ ET0 over leaf-on days with an ET0 (deciduous), mm.
    pub et0_leaf_on_mm: f64,
    /// Σ gross rain, mm.
    pub precip_mm: f64,
    /// Days without an ET0 (missing temperature).
    pub et0_gap_days: u32,
    /// Days without a precipitation value (counted as dry).
    pub precip_gap_days: u32,
    /// Days whose radiation came from Hargreaves (eq. 50).
    pub solar_filled_days: u32,
    /// Days whose humidity came from Tmin (eq. 48).
    pub humidity_filled_days: u32,
    /// Days whose wind was set to 2 m/s.
    pub wind_filled_days: u32,
}

impl YearWeather {
    /// Prepares `year` from a station's days (any order; other years ignored; a repeated date keeps the
    /// last). Days absent from `days` count as missing everything. ET0 is floored at 0: a negative
    /// FAO-56 value (condensation on cold humid nights) is no tree water use [derived choice].
    pub fn compute(
        year: i32,
        station: &Station,
        days: &[WeatherDay],
        settings: &ScienceSettings,
    ) -> Self {
        let dates: Vec<NaiveDate> = year_dates(year).collect();
        let mut by_day: Vec<Option<&WeatherDay>> = vec![None; dates.len()];
        for day in days.iter().filter(|d| d.date.year() == year) {
            let i = day.date.ordinal0() as usize;
            if let Some(slot) = by_day.get_mut(i) {
                *slot = Some(day);
            }
        }
        let (leaf_on, leaf_on_rule) = leaf_on_season(year, station.lat_deg, |d| {
            by_day
                .get(d.ordinal0() as usize)
                .copied()
                .flatten()
                .and_then(|w| w.tmin_c)
        });
        let site = Et0Site {
            lat_deg: station.lat_deg,
            elevation_m: station.elevation_m,
            krs: settings.krs_for(station.coastal),
        };
        let mut out = YearWeather {
            year,
            days: Vec::with_capacity(dates.len()),
            rain_days: Vec::new(),
            rain: YearRain::default(),
            leaf_on_rule,
            frost_free_days: 0,
            et0_all_mm: 0.0,
            et0_leaf_on_mm: 0.0,
            precip_mm: 0.0,
            et0_gap_days: 0,
            precip_gap_days: 0,
            solar_filled_days: 0,
            humidity_filled_days: 0,
            wind_filled_days: 0,
        };
        for (i, date) in dates.iter().enumerate() {
            let day = by_day[i];
            let on = leaf_on.get(i).copied().unwrap_or(false);
            let precip = day
                .and_then(|d| d.precip_mm)
                .filter(|p| p.is_finite() && *p >= 0.0);
            let fao = day
                .and_then(WeatherDay::fao56_inputs)
                .map(|met| daily_et0(&met, &site, date.ordinal()));
            let et0 = fao.map(|f| f.et0_mm.max(0.0));
            let gaps = fao.map(|f| f.gaps).unwrap_or_default();
            if let Some(e) = et0 {
                out.et0_all_mm += e;
                if on {
                    out.et0_leaf_on_mm += e;
                }
            } else {
                out.et0_gap_days += 1;
            }
            out.solar_filled_days += u32::from(gaps.solar_from_temperature);
            out.humidity_filled_days += u32::from(gaps.humidity_from_tmin);
            out.wind_filled_days += u32::from(gaps.wind_default);
            out.frost_free_days += u32::from(on);
            let p = precip.unwrap_or(0.0);
            out.precip_gap_days += u32::from(precip.is_none());
            out.precip_mm += p;
            if p > 0.0 {
                out.rain_days.push(RainDay {
                    precip_mm: p,
                    leaf_on: on,
                });
            }
            out.days.push(ClimateDay {
                date: *date,
                precip_mm: p,
                precip_missing: precip.is_none(),
                et0_mm: et0,
                et0_gaps: gaps,
                leaf_on: on,
            });
        }
        out.rain = YearRain::new(&out.rain_days);
        out
    }

    /// Σ ET0 (mm) over the days a crown transpires: all days for evergreens, leaf-on days for
    /// deciduous trees (METHODS.md M7, M13 step 9).
    pub fn et0_sum_mm(&self, habit: super::kinds::LeafHabit) -> f64 {
        match habit {
            super::kinds::LeafHabit::Evergreen => self.et0_all_mm,
            super::kinds::LeafHabit::Deciduous => self.et0_leaf_on_mm,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::science::kinds::LeafHabit;

    fn ymd(y: i32, m: u32, d: u32) -> NaiveDate {
        NaiveDate::from_ymd_opt(y, m, d).unwrap_or_default()
    }

    fn season(year: i32, lat: f64, frosts: &[NaiveDate], with_temps: bool) -> Vec<bool> {
        leaf_on_season(year, lat, |d| {
            if frosts.contains(&d) {
                Some(-2.0)
            } else if with_temps {
                Some(5.0)
            } else {
                None
            }
        })
        .0
    }

    fn on(v: &[bool], d: NaiveDate) -> bool {
        v[d.ordinal0() as usize]
    }

    // Check values: METHODS.md M5 leaf-on rule, northern hemisphere, as written.
    #[test]
    fn north_leaf_on_is_strictly_between_frosts() {
        let frosts = [
            ymd(2024, 1, 10),
            ymd(2024, 4, 20),
            ymd(2024, 10, 25),
            ymd(2024, 12, 1),
        ];
        let v = season(2024, 45.0, &frosts, true);
        assert_eq!(v.len(), 366);
        assert!(!on(&v, ymd(2024, 4, 20)));
        assert!(on(&v, ymd(2024, 4, 21)));
        assert!(on(&v, ymd(2024, 10, 24)));
        assert!(!on(&v, ymd(2024, 10, 25)));
        assert!(!on(&v, ymd(2024, 12, 31)));
        assert_eq!(v.iter().filter(|b| **b).count(), 187); // 21 Apr..24 Oct: 10+31+30+31+31+30+24
        // No autumn frost → leaf-on to 31 Dec; no spring frost → from 1 Jan.
        let v = season(2023, 45.0, &[ymd(2023, 3, 31)], true);
        assert!(on(&v, ymd(2023, 12, 31)) && !on(&v, ymd(2023, 3, 31)) && on(&v, ymd(2023, 4, 1)));
        let v = season(2023, 45.0, &[], true);
        assert!(v.iter().all(|b| *b));
        // Days without Tmin are frost-free: a station with only one cold day in March.
        let v = season(2023, 45.0, &[ymd(2023, 3, 5)], false);
        assert!(on(&v, ymd(2023, 3, 6)) && !on(&v, ymd(2023, 1, 6)));
    }

    // Check values: METHODS.md M5 leaf-on rule, southern hemisphere, as written.
    #[test]
    fn south_leaf_off_spans_winter_frosts() {
        let frosts = [ymd(2023, 5, 20), ymd(2023, 6, 30), ymd(2023, 9, 15)];
        let v = season(2023, -35.0, &frosts, true);
        assert!(on(&v, ymd(2023, 5, 19)));
        assert!(!on(&v, ymd(2023, 5, 20)));
        assert!(!on(&v, ymd(2023, 8, 1)));
        assert!(!on(&v, ymd(2023, 9, 15)));
        assert!(on(&v, ymd(2023, 9, 16)));
        // Only a June frost → leaf-off through 31 Jul.
        let v = season(2023, -35.0, &[ymd(2023, 6, 10)], true);
        assert!(!on(&v, ymd(2023, 7, 31)) && on(&v, ymd(2023, 8, 1)) && on(&v, ymd(2023, 6, 9)));
        // Only a September frost → leaf-off from 1 Aug.
        let v = season(2023, -35.0, &[ymd(2023, 9, 5)], true);
        assert!(on(&v, ymd(2023, 7, 31)) && !on(&v, ymd(2023, 8, 1)) && on(&v, ymd(2023, 9, 6)));
        // No frost → all year.
        assert!(season(2023, -35.0, &[], true).iter().all(|b| *b));
    }

    // Check values: METHODS.md M5 calendar fallback without temperature data.
    #[test]
    fn calendar_fallback_without_temperatures() {
        let (v, rule) = leaf_on_season(2023, 52.0, |_| None);
        assert_eq!(rule, LeafOnRule::CalendarFallback);
        assert!(!on(&v, ymd(2023, 3, 31)) && on(&v, ymd(2023, 4, 1)));
        assert!(on(&v, ymd(2023, 10, 31)) && !on(&v, ymd(2023, 11, 1)));
        assert_eq!(v.iter().filter(|b| **b).count(), 214);
        let (v, _) = leaf_on_season(2023, -33.0, |_| None);
        assert!(on(&v, ymd(2023, 4, 30)) && !on(&v, ymd(2023, 5, 1)));
        assert!(!on(&v, ymd(2023, 9, 30)) && on(&v, ymd(2023, 10, 1)));
    }

    // Check: FAO-56 ch. 3 order of preference — dew point before RH, measured Rs before sunshine
    // hours before Hargreaves; a day without Tmin or Tmax has no ET0 (METHODS.md M6).
    #[test]
    fn fao56_inputs_prefer_the_better_data() {
        let mut w = WeatherDay::empty(ymd(2023, 7, 1));
        assert_eq!(w.fao56_inputs(), None);
        w.tmin_c = Some(12.0);
        assert_eq!(w.fao56_inputs(), None);
        w.tmax_c = Some(24.0);
        let met = w.fao56_inputs();
        assert_eq!(
            met.map(|m| (m.humidity, m.radiation, m.wind_2m_ms)),
            Some((Humidity::Missing, Radiation::Missing, None))
        );
        w.rh_mean_pct = Some(60.0);
        w.sunshine_h = Some(9.0);
        let met = w.fao56_inputs();
        assert_eq!(
            met.map(|m| (m.humidity, m.radiation)),
            Some((Humidity::RhMeanPct(60.0), Radiation::SunshineHours(9.0)))
        );
        w.tdew_c = Some(10.0);
        w.solar_mj_m2 = Some(20.0);
        let met = w.fao56_inputs();
        assert_eq!(
            met.map(|m| (m.humidity, m.radiation)),
            Some((Humidity::DewPointC(10.0), Radiation::SolarMjM2(20.0)))
        );
    }

    #[test]
    fn year_weather_sums_once_per_year() {
        let station = Station {
            lat_deg: 50.8,
            elevation_m: 100.0,
            coastal: false,
        };
        let mut days = Vec::new();
        for d in year_dates(2023) {
            let mut w = WeatherDay::empty(d);
            let month = d.month();
            w.tmin_c = Some(if month <= 2 || month == 12 { -1.0 } else { 8.0 });
            w.tmax_c = Some(w.tmin_c.unwrap_or(0.0) + 10.0);
            w.precip_mm = Some(if d.day().is_multiple_of(3) { 4.0 } else { 0.0 });
            days.push(w);
        }
        // A stray day from another year and a day with no temperature.
        days.push(WeatherDay {
            precip_mm: Some(50.0),
            ..WeatherDay::empty(ymd(2022, 6, 1))
        });
        days[200].tmax_c = None;
        let yw = YearWeather::compute(2023, &station, &days, &ScienceSettings::default());
        assert_eq!(yw.days.len(), 365);
        assert_eq!(yw.et0_gap_days, 1);
        assert_eq!(yw.leaf_on_rule, LeafOnRule::FrostFree);
        // Leaf-on 1 Mar..30 Nov.
        assert_eq!(yw.frost_free_days, 275);
        assert_eq!(
            yw.rain_days.len(),
            days.iter()
                .filter(|d| d.date.year() == 2023 && d.date.day() % 3 == 0)
                .count()
        );
        assert!((yw.precip_mm - 4.0 * yw.rain_days.len() as f64).abs() < 1e-9);
        assert!(yw.et0_leaf_on_mm > 0.0 && yw.et0_all_mm > yw.et0_leaf_on_mm);
        assert_eq!(yw.et0_sum_mm(LeafHabit::Evergreen), yw.et0_all_mm);
        assert_eq!(yw.solar_filled_days, 364);
        assert_eq!(yw.wind_filled_days, 364);
    }
}
