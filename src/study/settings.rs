//! The settings of removal studies, with their defaults and sources, loadable from the `settings`
//! key/value table (registered in [`crate::settings::default_pairs`]).

use serde::{Deserialize, Serialize};

use super::survival::Survival;

/// A survival scenario of METHODS.md M11 (setting `survival_scenario`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SurvivalScenario {
    Central,
    Pessimistic,
    Optimistic,
}

impl SurvivalScenario {
    /// Every scenario, central first.
    pub const ALL: [SurvivalScenario; 3] = [Self::Central, Self::Pessimistic, Self::Optimistic];

    /// The stored word.
    pub fn as_str(self) -> &'static str {
        match self {
            Self::Central => "central",
            Self::Pessimistic => "pessimistic",
            Self::Optimistic => "optimistic",
        }
    }

    /// Parses `central`, `pessimistic` or `optimistic` (any case, surrounding blanks ignored).
    pub fn parse(text: &str) -> Option<Self> {
        match text.trim().to_ascii_lowercase().as_str() {
            "central" => Some(Self::Central),
            "pessimistic" => Some(Self::Pessimistic),
            "optimistic" => Some(Self::Optimistic),
            _ => None,
        }
    }

    /// Annual mortality of the scenario (METHODS.md M11): q_est for years 1–5 after planting, q_post
    /// after and for established trees — central 5 % / 2.5 %, pessimistic 8.2 % / 3.2 %, optimistic
    /// 3.3 % / 1.6 %. Chosen within the quartile ranges of Hilbert, Roman, Koeser, Vogt & van Doorn
    /// 2019, Arboriculture & Urban Forestry 45(5):167–200 (planted cohorts 2.8–3.8 / 4.4–6.5 /
    /// 7.1–9.3 %; uneven-aged populations 1.6 / 2.3–2.6 / 3.0–3.3 %) [published ranges; chosen values
    /// derived].
    pub fn survival(self) -> Survival {
        match self {
            Self::Central => Survival::new(0.05, 0.025),
            Self::Pessimistic => Survival::new(0.082, 0.032),
            Self::Optimistic => Survival::new(0.033, 0.016),
        }
    }
}

impl std::fmt::Display for SurvivalScenario {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.as_str())
    }
}

/// The study settings and their defaults.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct StudySettings {
    /// `discount_rate`: real annual rate for the discounted money total. Default 0.02, the rate at
    /// which the default CO2 prices (US EPA 2023 social cost of carbon, METHODS.md M8) were computed,
    /// so carbon and the other flows are discounted alike [derived choice]; 0.03 is the other usual
    /// choice in public cost–benefit work [common practice, no source].
    pub discount_rate: f64,
    /// `survival_scenario`: which M11 mortality pair projections use. Default central.
    pub survival_scenario: SurvivalScenario,
    /// `removal_carbon_decay_share`: the share of a removed tree's stored carbon that returns to the
    /// air as CO2 within 10 years (the rest stays in wood products). Default 0.8: most wood from
    /// street-tree removals is chipped for mulch or burned as firewood, both of which release their
    /// carbon within a few years, and only a small part becomes lasting products [assumption, no
    /// source — set it from the local fate of removal wood when known].
    pub removal_carbon_decay_share: f64,
    /// `appraisal_unit_cost_per_cm2`: the trunk formula's unit cost per cm² of trunk area, 4.388
    /// ($28.31/in², a 3 in nursery tree at $200; Council of Tree and Landscape Appraisers, Guide for
    /// Plant Appraisal 10th ed. structure, METHODS.md M12) [published via trade article].
    pub appraisal_unit_cost_per_cm2: f64,
}

impl Default for StudySettings {
    fn default() -> Self {
        StudySettings {
            discount_rate: 0.02,
            survival_scenario: SurvivalScenario::Central,
            removal_carbon_decay_share: 0.8,
            appraisal_unit_cost_per_cm2: 4.388,
        }
    }
}

/// Every key this module reads, in seeding order.
pub const KEYS: [&str; 4] = [
    "discount_rate",
    "survival_scenario",
    "removal_carbon_decay_share",
    "appraisal_unit_cost_per_cm2",
];

/// A bad study setting: the key, the value and why.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("setting `{key}` has the value '{value}', which is not valid: {reason}")]
pub struct StudySettingsError {
    pub key: String,
    pub value: String,
    pub reason: String,
}

impl StudySettings {
    /// The defaults as stored (key, text).
    pub fn default_pairs() -> Vec<(&'static str, String)> {
        let d = StudySettings::default();
        vec![
            ("discount_rate", d.discount_rate.to_string()),
            (
                "survival_scenario",
                d.survival_scenario.as_str().to_string(),
            ),
            (
                "removal_carbon_decay_share",
                d.removal_carbon_decay_share.to_string(),
            ),
            (
                "appraisal_unit_cost_per_cm2",
                d.appraisal_unit_cost_per_cm2.to_string(),
            ),
        ]
    }

    /// Applies the known keys of a key/value table over the defaults; other keys are ignored.
    pub fn from_pairs<K, V, I>(pairs: I) -> Result<Self, StudySettingsError>
    where
        K: AsRef<str>,
        V: AsRef<str>,
        I: IntoIterator<Item = (K, V)>,
    {
        let mut s = StudySettings::default();
        for (key, value) in pairs {
            s.apply(key.as_ref(), value.as_ref())?;
        }
        Ok(s)
    }

    /// Sets one key from its text; unknown keys are ignored (`Ok(false)`).
    pub fn apply(&mut self, key: &str, value: &str) -> Result<bool, StudySettingsError> {
        let key = key.trim();
        let err = |reason: &str| StudySettingsError {
            key: key.to_string(),
            value: value.to_string(),
            reason: reason.to_string(),
        };
        let num = |min: f64, max: f64| -> Result<f64, StudySettingsError> {
            let v: f64 = value.trim().parse().map_err(|_| err("expected a number"))?;
            if v.is_finite() && v >= min && v <= max {
                Ok(v)
            } else {
                Err(err(&format!("expected a number from {min} to {max}")))
            }
        };
        match key {
            "discount_rate" => self.discount_rate = num(0.0, 0.5)?,
            "survival_scenario" => {
                self.survival_scenario = SurvivalScenario::parse(value)
                    .ok_or_else(|| err("expected central, pessimistic or optimistic"))?;
            }
            "removal_carbon_decay_share" => self.removal_carbon_decay_share = num(0.0, 1.0)?,
            "appraisal_unit_cost_per_cm2" => self.appraisal_unit_cost_per_cm2 = num(0.0, 1.0e6)?,
            _ => return Ok(false),
        }
        Ok(true)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn defaults_round_trip_and_bad_values_name_the_key() {
        let pairs = StudySettings::default_pairs();
        assert_eq!(pairs.len(), KEYS.len());
        for (key, _) in &pairs {
            assert!(KEYS.contains(key));
        }
        let back = StudySettings::from_pairs(pairs.iter().map(|(k, v)| (*k, v.as_str())));
        assert_eq!(back, Ok(StudySettings::default()));
        let bad = StudySettings::from_pairs([("survival_scenario", "grim")]);
        assert!(matches!(bad, Err(e) if e.key == "survival_scenario"));
        let bad = StudySettings::from_pairs([("removal_carbon_decay_share", "1.5")]);
        assert!(matches!(bad, Err(e) if e.reason.contains("0 to 1")));
        let s = StudySettings::from_pairs([("discount_rate", "0.03"), ("cop", "3")])
            .expect("known and unknown keys");
        assert_eq!(s.discount_rate, 0.03);
    }

    // Check: METHODS.md M11 scenario values lie inside the quartile ranges of Hilbert et al. 2019
    // (AUF 45(5):167–200) they were chosen from: cohorts 2.8–3.8 / 4.4–6.5 / 7.1–9.3 %, uneven-aged
    // 1.6 / 2.3–2.6 / 3.0–3.3 % [published ranges].
    #[test]
    fn scenarios_lie_in_the_published_quartile_ranges() {
        let inside = |q: f64, lo: f64, hi: f64| q >= lo - 1e-12 && q <= hi + 1e-12;
        let o = SurvivalScenario::Optimistic.survival();
        let c = SurvivalScenario::Central.survival();
        let p = SurvivalScenario::Pessimistic.survival();
        assert!(inside(o.q_establishment, 0.028, 0.038));
        assert!(inside(c.q_establishment, 0.044, 0.065));
        assert!(inside(p.q_establishment, 0.071, 0.093));
        assert!(inside(o.q_post, 0.016, 0.016));
        assert!(inside(c.q_post, 0.023, 0.026));
        assert!(inside(p.q_post, 0.030, 0.033));
    }
}
