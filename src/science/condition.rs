//! Crown condition: dieback percentage, the condition words imports may use, and display bands.
//!
//! METHODS.md M3: imports may give a condition word instead of dieback — good → 5 %, fair → 18 %,
//! poor → 38 %, dead → 100 % — and the display bands (our own labels) are sound 0–10 %,
//! thinning 11–25 %, declining 26–50 %, failing 51–99 %, dead 100 % [common practice, no source;
//! the band edges follow the dieback classes of the condition factor of Nowak et al. 2013, from memory].

use serde::{Deserialize, Serialize};

/// A condition word as field crews write it (DESIGN.md trees CSV `condition`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum ConditionWord {
    Good,
    Fair,
    Poor,
    Dead,
}

impl ConditionWord {
    /// Parses `good`, `fair`, `poor` or `dead`, ignoring case and surrounding blanks.
    pub fn parse(text: &str) -> Option<Self> {
        match text.trim().to_ascii_lowercase().as_str() {
            "good" => Some(Self::Good),
            "fair" => Some(Self::Fair),
            "poor" => Some(Self::Poor),
            "dead" => Some(Self::Dead),
            _ => None,
        }
    }

    /// The dieback percentage a condition word stands for (METHODS.md M3) [common practice].
    pub fn dieback_pct(self) -> f64 {
        match self {
            Self::Good => 5.0,
            Self::Fair => 18.0,
            Self::Poor => 38.0,
            Self::Dead => 100.0,
        }
    }

    /// The word itself, lower case.
    pub fn as_str(self) -> &'static str {
        match self {
            Self::Good => "good",
            Self::Fair => "fair",
            Self::Poor => "poor",
            Self::Dead => "dead",
        }
    }

    /// The condition word that best describes a dieback percentage (inverse of
    /// [`ConditionWord::dieback_pct`] by band: ≤ 10 good, ≤ 25 fair, < 100 poor, 100 dead).
    pub fn from_dieback(dieback_pct: f64) -> Self {
        match ConditionBand::from_dieback(dieback_pct) {
            ConditionBand::Sound => Self::Good,
            ConditionBand::Thinning => Self::Fair,
            ConditionBand::Declining | ConditionBand::Failing => Self::Poor,
            ConditionBand::Dead => Self::Dead,
        }
    }
}

/// Display band of crown dieback (METHODS.md M3, our own labels).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum ConditionBand {
    Sound,
    Thinning,
    Declining,
    Failing,
    Dead,
}

impl ConditionBand {
    /// All bands, best first.
    pub const ALL: [ConditionBand; 5] = [
        Self::Sound,
        Self::Thinning,
        Self::Declining,
        Self::Failing,
        Self::Dead,
    ];

    /// Band of a dieback percentage: sound ≤ 10, thinning ≤ 25, declining ≤ 50, failing < 100, dead.
    pub fn from_dieback(dieback_pct: f64) -> Self {
        if dieback_pct >= 100.0 {
            Self::Dead
        } else if dieback_pct > 50.0 {
            Self::Failing
        } else if dieback_pct > 25.0 {
            Self::Declining
        } else if dieback_pct > 10.0 {
            Self::Thinning
        } else {
            Self::Sound
        }
    }

    /// Lower-case label.
    pub fn as_str(self) -> &'static str {
        match self {
            Self::Sound => "sound",
            Self::Thinning => "thinning",
            Self::Declining => "declining",
            Self::Failing => "failing",
            Self::Dead => "dead",
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Check values: METHODS.md M3 (condition words and band edges).
    #[test]
    fn words_map_to_the_spec_dieback_and_back() {
        assert_eq!(
            ConditionWord::parse(" Good ").map(ConditionWord::dieback_pct),
            Some(5.0)
        );
        assert_eq!(
            ConditionWord::parse("FAIR").map(ConditionWord::dieback_pct),
            Some(18.0)
        );
        assert_eq!(
            ConditionWord::parse("poor").map(ConditionWord::dieback_pct),
            Some(38.0)
        );
        assert_eq!(
            ConditionWord::parse("dead").map(ConditionWord::dieback_pct),
            Some(100.0)
        );
        assert_eq!(ConditionWord::parse("excellent"), None);
        for word in [
            ConditionWord::Good,
            ConditionWord::Fair,
            ConditionWord::Poor,
            ConditionWord::Dead,
        ] {
            assert_eq!(ConditionWord::from_dieback(word.dieback_pct()), word);
        }
    }

    #[test]
    fn band_edges() {
        assert_eq!(ConditionBand::from_dieback(0.0), ConditionBand::Sound);
        assert_eq!(ConditionBand::from_dieback(10.0), ConditionBand::Sound);
        assert_eq!(ConditionBand::from_dieback(11.0), ConditionBand::Thinning);
        assert_eq!(ConditionBand::from_dieback(25.0), ConditionBand::Thinning);
        assert_eq!(ConditionBand::from_dieback(26.0), ConditionBand::Declining);
        assert_eq!(ConditionBand::from_dieback(50.0), ConditionBand::Declining);
        assert_eq!(ConditionBand::from_dieback(51.0), ConditionBand::Failing);
        assert_eq!(ConditionBand::from_dieback(99.0), ConditionBand::Failing);
        assert_eq!(ConditionBand::from_dieback(100.0), ConditionBand::Dead);
    }
}
