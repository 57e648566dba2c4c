//! Survival of projected trees (METHODS.md M11): two-phase constant annual mortality.

use serde::{Deserialize, Serialize};

/// Years after planting that count as establishment (METHODS.md M11: q_est for years 1–5).
pub const ESTABLISHMENT_YEARS: u32 = 5;

/// Two-phase constant annual mortality (METHODS.md M11) [published ranges, chosen values derived]:
/// a planted tree dies with probability `q_establishment` in each of years 1–5 after its planting
/// year and `q_post` in every later year; a tree standing when the study starts (an established
/// tree) dies with `q_post` every year.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Survival {
    pub q_establishment: f64,
    pub q_post: f64,
}

impl Survival {
    /// A pair of annual mortalities (each clamped to 0–1).
    pub fn new(q_establishment: f64, q_post: f64) -> Self {
        let clamp = |q: f64| {
            if q.is_finite() {
                q.clamp(0.0, 1.0)
            } else {
                0.0
            }
        };
        Survival {
            q_establishment: clamp(q_establishment),
            q_post: clamp(q_post),
        }
    }

    /// No mortality at all (for analytic checks).
    pub fn none() -> Self {
        Survival::new(0.0, 0.0)
    }

    /// The probability of dying during year `age` (1 = the first year after entering the study:
    /// the year after planting, or the year after the study's start for a standing tree), given the
    /// tree was alive at the end of year `age − 1`. Age 0 (the entry year itself) has no mortality.
    pub fn annual_mortality(&self, planted: bool, age: u32) -> f64 {
        if age == 0 {
            0.0
        } else if planted && age <= ESTABLISHMENT_YEARS {
            self.q_establishment
        } else {
            self.q_post
        }
    }

    /// The probability of being alive `age` years after entry:
    /// Π_{j=1..age} (1 − q_j) = (1 − q_est)^min(age, 5) × (1 − q_post)^(age − 5) for planted trees,
    /// (1 − q_post)^age for standing ones \[derived\].
    pub fn alive_probability(&self, planted: bool, age: u32) -> f64 {
        if planted {
            let est = age.min(ESTABLISHMENT_YEARS);
            let post = age - est;
            (1.0 - self.q_establishment).powi(est as i32) * (1.0 - self.q_post).powi(post as i32)
        } else {
            (1.0 - self.q_post).powi(age as i32)
        }
    }
}

/// Half-life of a cohort with constant annual survival s: the t with sᵗ = ½, t = ln 0.5 / ln s
/// (years) [derived; the form Roman & Scatena 2011 use, METHODS.md M11].
pub fn half_life_years(annual_survival: f64) -> f64 {
    0.5f64.ln() / annual_survival.ln()
}

/// Life expectancy of a tree with constant annual survival s, as the mean of the exponential
/// lifetime with hazard −ln s: 1 / (−ln s) (years) \[derived\]. (The discrete mean Σ_{t≥1} sᵗ =
/// s / (1 − s) differs from it by less than a year for s ≥ 0.9.)
pub fn life_expectancy_years(annual_survival: f64) -> f64 {
    -1.0 / annual_survival.ln()
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn two_phase_probabilities_multiply_year_by_year() {
        let s = Survival::new(0.05, 0.025);
        let mut alive = 1.0;
        for age in 0..=30 {
            alive *= 1.0 - s.annual_mortality(true, age);
            assert_relative_eq!(s.alive_probability(true, age), alive, max_relative = 1e-12);
        }
        assert_relative_eq!(
            s.alive_probability(true, 7),
            0.95f64.powi(5) * 0.975f64.powi(2),
            max_relative = 1e-12
        );
        assert_relative_eq!(
            s.alive_probability(false, 7),
            0.975f64.powi(7),
            max_relative = 1e-12
        );
        assert_eq!(s.alive_probability(true, 0), 1.0);
    }
}
