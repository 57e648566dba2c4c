//! Every *setting* of METHODS.md M2–M8 with its default, loadable from the `settings` key/value table.

use serde::{Deserialize, Serialize};

use super::biomass::BiomassMethod;
use super::kinds::SiteKind;

/// A bad value in the settings table.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("setting `{key}` has the value '{value}', which is not valid: {reason}")]
pub struct SettingsError {
    pub key: String,
    pub value: String,
    pub reason: String,
}

/// The settings of the benefit engine (METHODS.md M2–M8). Defaults are the spec's.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct ScienceSettings {
    /// `biomass_method` (M2): chojnacky2014 (default) or jenkins2003.
    pub biomass_method: BiomassMethod,
    /// `growth_frost_free_scaling` (M3): growth × frost-free days / 153; default off.
    pub growth_frost_free_scaling: bool,
    /// `observed_growth` (M3): use a tree's own increment when plausible; default on.
    pub observed_growth: bool,
    /// `s_leaf_mm` (M5): canopy storage per unit leaf area, 0.2 mm (Dickinson 1984).
    pub s_leaf_mm: f64,
    /// `leaf_off_storage_share` (M5): leafless storage as a share of leaf-on, 0.12 (Xiao & McPherson 2016).
    pub leaf_off_storage_share: f64,
    /// `leaf_off_cover_share` (M5): leafless canopy cover as a share of leaf-on, 0.3.
    pub leaf_off_cover_share: f64,
    /// `ec_over_r` (M5): wet-canopy evaporation over rainfall rate, 0.15.
    pub ec_over_r: f64,
    /// `krs` (M6): Hargreaves radiation coefficient for interior stations, 0.16 (FAO-56 eq. 50).
    pub krs: f64,
    /// `krs_coastal` (M6): Hargreaves radiation coefficient for coastal stations, 0.19 (FAO-56 eq. 50).
    pub krs_coastal: f64,
    /// `kmc_pit` (M7): microclimate factor of a paved pit, 1.2.
    pub kmc_pit: f64,
    /// `kmc_median` (M7): 1.2.
    pub kmc_median: f64,
    /// `kmc_verge` (M7): 1.0.
    pub kmc_verge: f64,
    /// `kmc_park` (M7): 1.0.
    pub kmc_park: f64,
    /// `kmc_yard` (M7): 0.9.
    pub kmc_yard: f64,
    /// `cop` (M7): air-conditioner coefficient of performance, 3.0.
    pub cop: f64,
    /// `co2_price_points` (M8): (year, price per tonne CO2e), ascending by year; EPA 2023 at 2 %.
    pub co2_price_points: Vec<(i32, f64)>,
    /// `water_price_per_m3` (M8): 2.36.
    pub water_price_per_m3: f64,
    /// `electricity_price_per_kwh` (M8): 0.16.
    pub electricity_price_per_kwh: f64,
    /// `cooling_value_share` (M8): share of the AC-equivalent electricity counted as money; 0.
    pub cooling_value_share: f64,
    /// `currency` (M8): USD.
    pub currency: String,
}

impl Default for ScienceSettings {
    fn default() -> Self {
        ScienceSettings {
            biomass_method: BiomassMethod::Chojnacky2014,
            growth_frost_free_scaling: false,
            observed_growth: true,
            s_leaf_mm: 0.2,
            leaf_off_storage_share: 0.12,
            leaf_off_cover_share: 0.3,
            ec_over_r: 0.15,
            krs: 0.16,
            krs_coastal: 0.19,
            kmc_pit: 1.2,
            kmc_median: 1.2,
            kmc_verge: 1.0,
            kmc_park: 1.0,
            kmc_yard: 0.9,
            cop: 3.0,
            co2_price_points: vec![
                (2020, 190.0),
                (2025, 210.0),
                (2030, 230.0),
                (2040, 270.0),
                (2050, 310.0),
            ],
            water_price_per_m3: 2.36,
            electricity_price_per_kwh: 0.16,
            cooling_value_share: 0.0,
            currency: "USD".to_string(),
        }
    }
}

/// Every key this module reads, in seeding order.
pub const KEYS: [&str; 20] = [
    "biomass_method",
    "growth_frost_free_scaling",
    "observed_growth",
    "s_leaf_mm",
    "leaf_off_storage_share",
    "leaf_off_cover_share",
    "ec_over_r",
    "krs",
    "krs_coastal",
    "kmc_pit",
    "kmc_median",
    "kmc_verge",
    "kmc_park",
    "kmc_yard",
    "cop",
    "co2_price_points",
    "water_price_per_m3",
    "electricity_price_per_kwh",
    "cooling_value_share",
    "currency",
];

impl ScienceSettings {
    /// The microclimate factor kmc of a site kind (METHODS.md M7).
    pub fn kmc(&self, site: SiteKind) -> f64 {
        match site {
            SiteKind::Pit => self.kmc_pit,
            SiteKind::Median => self.kmc_median,
            SiteKind::Verge => self.kmc_verge,
            SiteKind::Park => self.kmc_park,
            SiteKind::Yard => self.kmc_yard,
        }
    }

    /// The Hargreaves kRs for a station (FAO-56 eq. 50: 0.16 interior, 0.19 coastal).
    pub fn krs_for(&self, coastal: bool) -> f64 {
        if coastal { self.krs_coastal } else { self.krs }
    }

    /// Applies the known keys of a key/value table over the defaults. Unknown keys (other layers'
    /// settings) are ignored; a known key with a bad value is an error naming the key and value.
    pub fn from_pairs<K, V, I>(pairs: I) -> Result<Self, SettingsError>
    where
        K: AsRef<str>,
        V: AsRef<str>,
        I: IntoIterator<Item = (K, V)>,
    {
        let mut s = ScienceSettings::default();
        for (key, value) in pairs {
            s.apply(key.as_ref(), value.as_ref())?;
        }
        Ok(s)
    }

    /// Sets one key from its text; unknown keys are ignored (returns `Ok(false)`).
    pub fn apply(&mut self, key: &str, value: &str) -> Result<bool, SettingsError> {
        let key = key.trim();
        let err = |reason: &str| SettingsError {
            key: key.to_string(),
            value: value.to_string(),
            reason: reason.to_string(),
        };
        let num = |min: f64, max: f64| -> Result<f64, SettingsError> {
            let v: f64 = value.trim().parse().map_err(|_| err("expected a number"))?;
            if v.is_finite() && v >= min && v <= max {
                Ok(v)
            } else {
                Err(err(&format!("expected a number from {min} to {max}")))
            }
        };
        let positive = || -> Result<f64, SettingsError> {
            let v = num(0.0, f64::MAX)?;
            if v > 0.0 {
                Ok(v)
            } else {
                Err(err("expected a number above 0"))
            }
        };
        let flag = || -> Result<bool, SettingsError> {
            match value.trim().to_ascii_lowercase().as_str() {
                "on" | "true" | "yes" | "1" => Ok(true),
                "off" | "false" | "no" | "0" => Ok(false),
                _ => Err(err("expected on or off")),
            }
        };
        match key {
            "biomass_method" => {
                self.biomass_method = BiomassMethod::parse(value)
                    .ok_or_else(|| err("expected chojnacky2014 or jenkins2003"))?;
            }
            "growth_frost_free_scaling" => self.growth_frost_free_scaling = flag()?,
            "observed_growth" => self.observed_growth = flag()?,
            "s_leaf_mm" => self.s_leaf_mm = num(0.0, 5.0)?,
            "leaf_off_storage_share" => self.leaf_off_storage_share = num(0.0, 1.0)?,
            "leaf_off_cover_share" => self.leaf_off_cover_share = num(0.0, 1.0)?,
            "ec_over_r" => {
                let v = num(0.0, 1.0)?;
                if v >= 1.0 {
                    return Err(err("must be below 1 (the canopy could never saturate)"));
                }
                self.ec_over_r = v;
            }
            "krs" => self.krs = num(0.1, 0.3)?,
            "krs_coastal" => self.krs_coastal = num(0.1, 0.3)?,
            "kmc_pit" => self.kmc_pit = num(0.0, 3.0)?,
            "kmc_median" => self.kmc_median = num(0.0, 3.0)?,
            "kmc_verge" => self.kmc_verge = num(0.0, 3.0)?,
            "kmc_park" => self.kmc_park = num(0.0, 3.0)?,
            "kmc_yard" => self.kmc_yard = num(0.0, 3.0)?,
            "cop" => self.cop = positive()?,
            "co2_price_points" => {
                self.co2_price_points = parse_price_points(value).map_err(|reason| err(&reason))?;
            }
            "water_price_per_m3" => self.water_price_per_m3 = num(0.0, f64::MAX)?,
            "electricity_price_per_kwh" => self.electricity_price_per_kwh = num(0.0, f64::MAX)?,
            "cooling_value_share" => self.cooling_value_share = num(0.0, 1.0)?,
            "currency" => {
                let c = value.trim();
                if c.is_empty() {
                    return Err(err("expected a currency code such as USD"));
                }
                self.currency = c.to_string();
            }
            _ => return Ok(false),
        }
        Ok(true)
    }

    /// Every key with this value's text, ready to seed the settings table (`ScienceSettings::default()
    /// .to_pairs()` gives the defaults).
    pub fn to_pairs(&self) -> Vec<(&'static str, String)> {
        let onoff = |b: bool| if b { "on" } else { "off" }.to_string();
        KEYS.iter()
            .map(|&key| {
                let text = match key {
                    "biomass_method" => self.biomass_method.as_str().to_string(),
                    "growth_frost_free_scaling" => onoff(self.growth_frost_free_scaling),
                    "observed_growth" => onoff(self.observed_growth),
                    "s_leaf_mm" => self.s_leaf_mm.to_string(),
                    "leaf_off_storage_share" => self.leaf_off_storage_share.to_string(),
                    "leaf_off_cover_share" => self.leaf_off_cover_share.to_string(),
                    "ec_over_r" => self.ec_over_r.to_string(),
                    "krs" => self.krs.to_string(),
                    "krs_coastal" => self.krs_coastal.to_string(),
                    "kmc_pit" => self.kmc_pit.to_string(),
                    "kmc_median" => self.kmc_median.to_string(),
                    "kmc_verge" => self.kmc_verge.to_string(),
                    "kmc_park" => self.kmc_park.to_string(),
                    "kmc_yard" => self.kmc_yard.to_string(),
                    "cop" => self.cop.to_string(),
                    "co2_price_points" => format_price_points(&self.co2_price_points),
                    "water_price_per_m3" => self.water_price_per_m3.to_string(),
                    "electricity_price_per_kwh" => self.electricity_price_per_kwh.to_string(),
                    "cooling_value_share" => self.cooling_value_share.to_string(),
                    _ => self.currency.clone(),
                };
                (key, text)
            })
            .collect()
    }

    /// The default of every key, for seeding the settings table.
    pub fn default_pairs() -> Vec<(&'static str, String)> {
        ScienceSettings::default().to_pairs()
    }
}

/// Parses `2020:190,2025:210,...` into ascending (year, price) points.
pub fn parse_price_points(text: &str) -> Result<Vec<(i32, f64)>, String> {
    let mut points = Vec::new();
    for part in text.split(',').map(str::trim).filter(|p| !p.is_empty()) {
        let (year, price) = part
            .split_once(':')
            .ok_or_else(|| format!("'{part}' is not year:price"))?;
        let year: i32 = year
            .trim()
            .parse()
            .map_err(|_| format!("'{year}' is not a year"))?;
        let price: f64 = price
            .trim()
            .parse()
            .map_err(|_| format!("'{price}' is not a price"))?;
        if !(price.is_finite() && price >= 0.0) {
            return Err(format!("price {price} must be 0 or more"));
        }
        if points.last().is_some_and(|&(last, _)| year <= last) {
            return Err(format!("year {year} is not after the previous year"));
        }
        points.push((year, price));
    }
    if points.is_empty() {
        return Err("expected at least one year:price point".to_string());
    }
    Ok(points)
}

/// Formats price points as `2020:190,2025:210`.
pub fn format_price_points(points: &[(i32, f64)]) -> String {
    points
        .iter()
        .map(|(y, p)| format!("{y}:{p}"))
        .collect::<Vec<_>>()
        .join(",")
}

#[cfg(test)]
mod tests {
    use super::*;

    // Check values: the defaults of METHODS.md M2–M8.
    #[test]
    fn defaults_are_the_spec_values() {
        let s = ScienceSettings::default();
        assert_eq!(s.biomass_method, BiomassMethod::Chojnacky2014);
        assert!(!s.growth_frost_free_scaling && s.observed_growth);
        assert_eq!(
            (
                s.s_leaf_mm,
                s.leaf_off_storage_share,
                s.leaf_off_cover_share
            ),
            (0.2, 0.12, 0.3)
        );
        assert_eq!(
            (s.ec_over_r, s.krs, s.krs_coastal, s.cop),
            (0.15, 0.16, 0.19, 3.0)
        );
        assert_eq!(s.kmc(SiteKind::Pit), 1.2);
        assert_eq!(s.kmc(SiteKind::Median), 1.2);
        assert_eq!(s.kmc(SiteKind::Verge), 1.0);
        assert_eq!(s.kmc(SiteKind::Park), 1.0);
        assert_eq!(s.kmc(SiteKind::Yard), 0.9);
        assert_eq!(
            format_price_points(&s.co2_price_points),
            "2020:190,2025:210,2030:230,2040:270,2050:310"
        );
        assert_eq!(
            (s.water_price_per_m3, s.electricity_price_per_kwh),
            (2.36, 0.16)
        );
        assert_eq!((s.cooling_value_share, s.currency.as_str()), (0.0, "USD"));
    }

    #[test]
    fn default_pairs_round_trip() {
        let pairs = ScienceSettings::default_pairs();
        assert_eq!(pairs.len(), KEYS.len());
        assert!(
            pairs
                .iter()
                .any(|(k, v)| *k == "biomass_method" && v == "chojnacky2014")
        );
        let back = ScienceSettings::from_pairs(pairs.iter().map(|(k, v)| (*k, v.as_str())));
        assert_eq!(back, Ok(ScienceSettings::default()));
    }

    #[test]
    fn from_pairs_applies_known_keys_and_ignores_others() {
        let s = ScienceSettings::from_pairs([
            ("biomass_method", "jenkins2003"),
            ("observed_growth", "off"),
            ("cop", "3.5"),
            ("co2_price_points", "2020:100, 2030:200"),
            ("currency", "EUR"),
            ("default_station", "Airport"),
        ]);
        let s = match s {
            Ok(s) => s,
            Err(e) => panic!("{e}"),
        };
        assert_eq!(s.biomass_method, BiomassMethod::Jenkins2003);
        assert!(!s.observed_growth);
        assert_eq!(s.cop, 3.5);
        assert_eq!(s.co2_price_points, vec![(2020, 100.0), (2030, 200.0)]);
        assert_eq!(s.currency, "EUR");
    }

    #[test]
    fn bad_values_name_key_and_value() {
        for (key, value) in [
            ("cop", "0"),
            ("cop", "three"),
            ("ec_over_r", "1"),
            ("biomass_method", "allometry"),
            ("observed_growth", "maybe"),
            ("co2_price_points", "2030:230,2020:190"),
            ("co2_price_points", ""),
            ("cooling_value_share", "1.5"),
        ] {
            match ScienceSettings::from_pairs([(key, value)]) {
                Err(e) => {
                    assert_eq!((e.key.as_str(), e.value.as_str()), (key, value));
                    let msg = e.to_string();
                    assert!(msg.contains(key) && msg.contains(value), "{msg}");
                }
                Ok(_) => panic!("{key}={value} should be rejected"),
            }
        }
    }
}
