//! Projection of trees year by year: growth (METHODS.md M3), benefits of each living tree from the
//! benefit engine ([`crate::science::tree_year`], M13), and survival (M11), aggregated either as
//! expected values (each tree weighted by its probability of being alive) or over seeded Monte Carlo
//! runs (each tree lives or dies at random) with P10/P50/P90 per year.
//!
//! A tree's size in a given year does not depend on chance — it grows at its model rate while it
//! lives — so the per-tree benefits of every year are computed once ([`tree_path`]) and mortality only
//! decides which of them count.

use chrono::NaiveDate;
use rand::{RngExt, SeedableRng};
use serde::Serialize;

use crate::science::dimensions::{Imputer, mean_crown_width_m};
use crate::science::growth::model_growth_cm_per_yr;
use crate::science::kinds::SiteKind;
use crate::science::money::Prices;
use crate::science::settings::ScienceSettings;
use crate::science::tree_year::{
    Measurement, SpeciesParams, TreeBenefits, TreeInput, YearContext, tree_year,
};
use crate::science::weather::YearWeather;

use super::survival::Survival;

/// Where a projected tree starts.
#[derive(Debug, Clone, PartialEq)]
pub enum Start {
    /// A standing tree, from its latest measurement; it is present from the study's first year.
    Measured(Measurement),
    /// Nursery stock planted in `year` at `dbh_cm`; present from its planting year.
    Planted { year: i32, dbh_cm: f64 },
}

/// A group of identical trees (one standing tree, or one row of a replanting plan).
#[derive(Debug, Clone, PartialEq)]
pub struct Cohort<'a> {
    pub species: &'a SpeciesParams,
    pub site_kind: Option<SiteKind>,
    pub count: u32,
    pub start: Start,
}

/// What every projection of a study shares.
#[derive(Debug, Clone, Copy)]
pub struct Setup<'a> {
    /// The first year of the projection (the year of the removal).
    pub start_year: i32,
    pub horizon_years: u32,
    pub imputer: &'a Imputer,
    /// The one weather year used for every projected year (the study's weather year).
    pub weather: &'a YearWeather,
    pub science: &'a ScienceSettings,
    pub survival: Survival,
    /// Real annual discount rate for `value_discounted`.
    pub discount_rate: f64,
}

impl Setup<'_> {
    /// The calendar year of a year index (0 = the start year).
    pub fn year(&self, index: usize) -> i32 {
        self.start_year + index as i32
    }

    /// The projected years, start year first.
    pub fn years(&self) -> Vec<i32> {
        (0..self.horizon_years as usize)
            .map(|i| self.year(i))
            .collect()
    }

    /// The discount factor of a year index: 1 / (1 + r)^index (the start year is undiscounted)
    /// [common practice: end-of-period discounting of a constant real rate].
    pub fn discount_factor(&self, index: usize) -> f64 {
        (1.0 + self.discount_rate).powi(-(index as i32))
    }
}

/// A metric's name and how to read it from [`Flows`].
pub type FlowMetric = (&'static str, fn(&Flows) -> f64);

/// One year of flows and stocks: of one living tree, or summed over a population.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct Flows {
    /// Living trees (expected number, or the count of one run).
    pub trees: f64,
    /// Carbon stored in the living trees, kg C (whole-tree, M2).
    pub carbon_kg: f64,
    pub co2e_seq_kg_yr: f64,
    pub interception_m3_yr: f64,
    pub cooling_kwh_yr: f64,
    /// Money value of the year's flows at that year's prices (M8, M13 step 10).
    pub value: f64,
    /// `value` discounted to the start year.
    pub value_discounted: f64,
}

impl Flows {
    /// The metrics by name, in column order.
    pub const METRICS: [FlowMetric; 7] = [
        ("trees", |f| f.trees),
        ("carbon_kg", |f| f.carbon_kg),
        ("co2e_seq_kg_yr", |f| f.co2e_seq_kg_yr),
        ("interception_m3_yr", |f| f.interception_m3_yr),
        ("cooling_kwh_yr", |f| f.cooling_kwh_yr),
        ("value", |f| f.value),
        ("value_discounted", |f| f.value_discounted),
    ];

    /// Adds `other × weight` to every field.
    pub fn add_scaled(&mut self, other: &Flows, weight: f64) {
        self.trees += other.trees * weight;
        self.carbon_kg += other.carbon_kg * weight;
        self.co2e_seq_kg_yr += other.co2e_seq_kg_yr * weight;
        self.interception_m3_yr += other.interception_m3_yr * weight;
        self.cooling_kwh_yr += other.cooling_kwh_yr * weight;
        self.value += other.value * weight;
        self.value_discounted += other.value_discounted * weight;
    }

    /// Builds flows from a value per metric, in [`Flows::METRICS`] order.
    pub fn from_metrics(values: [f64; 7]) -> Flows {
        Flows {
            trees: values[0],
            carbon_kg: values[1],
            co2e_seq_kg_yr: values[2],
            interception_m3_yr: values[3],
            cooling_kwh_yr: values[4],
            value: values[5],
            value_discounted: values[6],
        }
    }
}

/// One projected year of one tree that is alive.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TreeYear {
    pub year: i32,
    pub dbh_cm: f64,
    /// The DBH growth the engine used for this year's sequestration (cm/yr).
    pub growth_cm_per_yr: f64,
    pub flows: Flows,
}

/// The whole projected life of one tree of a cohort (alive every year from its entry).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TreePath {
    /// Planted trees use the establishment mortality for their first five years.
    pub planted: bool,
    pub count: u32,
    /// Index of the first projected year the tree is present (`None`: planted after the horizon).
    pub entry: Option<usize>,
    /// One entry per projected year; `None` before the tree's entry.
    pub years: Vec<Option<TreeYear>>,
}

/// Why a projection could not be made.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ProjectionError {
    #[error("{0}")]
    Invalid(String),
    #[error("the benefit engine skipped a tree in {year}: {reason}")]
    Engine { year: i32, reason: String },
}

/// The dieback a measurement stands for (M13 step 3): the percentage, else the condition word, else
/// 0 % [derived choice, as the engine].
pub fn dieback_of(m: &Measurement) -> f64 {
    match (m.dieback_pct.filter(|p| p.is_finite()), m.condition) {
        (Some(p), _) => p.clamp(0.0, 100.0),
        (None, Some(word)) => word.dieback_pct(),
        (None, None) => 0.0,
    }
}

fn mid_year(year: i32) -> Result<NaiveDate, ProjectionError> {
    NaiveDate::from_ymd_opt(year, 7, 1)
        .ok_or_else(|| ProjectionError::Invalid(format!("year {year} is out of range")))
}

/// The path of one tree of a cohort over the projected years.
///
/// Growth [published rates, method from memory; derived stepping]: DBH grows each year by the M3 model
/// rate, species base rate × condition factor of the tree's dieback (× frost-free days / 153 when the
/// setting `growth_frost_free_scaling` is on), the rate the engine uses for sequestration, so that
/// DBH(y + 1) = DBH(y) + Δd exactly. A standing tree starts from its latest measurement (years before
/// that measurement keep the measured DBH); a planted tree starts at its planting DBH in its planting
/// year. Dieback stays as last measured (planted stock: 0 %, a sound crown) [derived choice].
///
/// Crown and height \[derived\]: a measured crown width or height is carried forward in proportion to
/// DBH (the tree's own ratio to DBH, the same ratio method METHODS.md M3 uses to impute); missing ones,
/// and every planted tree's, are imputed by the inventory's [`Imputer`] at the projected DBH.
///
/// Each year's benefits come from [`tree_year`] with a one-measurement record dated 1 July of that
/// year, the study's weather year, and that year's prices.
pub fn tree_path(cohort: &Cohort<'_>, setup: &Setup<'_>) -> Result<TreePath, ProjectionError> {
    let species = cohort.species;
    let n = setup.horizon_years as usize;
    let frost_free = setup
        .science
        .growth_frost_free_scaling
        .then_some(f64::from(setup.weather.frost_free_days));
    let (planted, first_year, base_dbh, base_year, template, dieback) = match &cohort.start {
        Start::Measured(m) => {
            let d = m.dbh_cm();
            if !(d.is_finite() && d > 0.0) {
                return Err(ProjectionError::Invalid(
                    "the tree's latest measurement has no usable DBH".to_string(),
                ));
            }
            (
                false,
                setup.start_year,
                d,
                chrono::Datelike::year(&m.measured_on),
                Some(m.clone()),
                dieback_of(m),
            )
        }
        Start::Planted { year, dbh_cm } => {
            if !(dbh_cm.is_finite() && *dbh_cm > 0.0) {
                return Err(ProjectionError::Invalid(format!(
                    "planting DBH {dbh_cm} cm must be above 0"
                )));
            }
            (true, *year, *dbh_cm, *year, None, 0.0)
        }
    };
    let rate = model_growth_cm_per_yr(species.growth_cm_per_yr, dieback, frost_free);
    let entry_offset = i64::from(first_year) - i64::from(setup.start_year);
    let entry = usize::try_from(entry_offset).ok().filter(|i| *i < n);
    if entry_offset < 0 {
        return Err(ProjectionError::Invalid(format!(
            "planting year {first_year} is before the study's first year {}",
            setup.start_year
        )));
    }
    let measured_w = template
        .as_ref()
        .and_then(|m| mean_crown_width_m(m.crown_width_m, m.crown_width2_m));
    let measured_h = template
        .as_ref()
        .and_then(|m| m.height_m.filter(|h| h.is_finite() && *h > 0.0));
    let mut years = Vec::with_capacity(n);
    for index in 0..n {
        let year = setup.year(index);
        if entry.is_none_or(|e| index < e) {
            years.push(None);
            continue;
        }
        let grown_years = f64::from((year - base_year).max(0));
        let dbh = base_dbh + rate * grown_years;
        let scale = dbh / base_dbh;
        let measurement = Measurement {
            measured_on: mid_year(year)?,
            stems_cm: vec![dbh],
            height_m: measured_h.map(|h| h * scale),
            crown_width_m: measured_w.map(|w| w * scale),
            crown_width2_m: None,
            crown_base_m: template.as_ref().and_then(|m| m.crown_base_m),
            dieback_pct: Some(dieback),
            condition: None,
        };
        let ctx = YearContext {
            year,
            imputer: setup.imputer,
            weather: setup.weather,
            settings: setup.science,
            prices: Prices::for_year(setup.science, year),
        };
        let input = TreeInput {
            species,
            site_kind: cohort.site_kind,
            status: crate::science::kinds::TreeStatus::Standing,
            measurements: std::slice::from_ref(&measurement),
        };
        let b: TreeBenefits = tree_year(&input, &ctx).map_err(|e| ProjectionError::Engine {
            year,
            reason: e.to_string(),
        })?;
        years.push(Some(TreeYear {
            year,
            dbh_cm: dbh,
            growth_cm_per_yr: b.detail.growth.dbh_cm_per_yr,
            flows: Flows {
                trees: 1.0,
                carbon_kg: b.carbon_kg,
                co2e_seq_kg_yr: b.co2e_seq_kg_yr,
                interception_m3_yr: b.interception_m3_yr,
                cooling_kwh_yr: b.cooling_kwh_yr,
                value: b.value,
                value_discounted: b.value * setup.discount_factor(index),
            },
        }));
    }
    Ok(TreePath {
        planted,
        count: cohort.count,
        entry,
        years,
    })
}

/// Expected-value projection: every tree-year weighted by the probability that the tree is alive
/// (M11), Σ count × P(alive at age) × flows [derived: linearity of expectation].
pub fn expected(paths: &[TreePath], survival: Survival, horizon_years: u32) -> Vec<Flows> {
    let mut totals = vec![Flows::default(); horizon_years as usize];
    for path in paths {
        let Some(entry) = path.entry else { continue };
        for (index, slot) in path.years.iter().enumerate().skip(entry) {
            if let Some(tree) = slot {
                let age = (index - entry) as u32;
                let weight = f64::from(path.count) * survival.alive_probability(path.planted, age);
                totals[index].add_scaled(&tree.flows, weight);
            }
        }
    }
    totals
}

/// SplitMix64 (Steele, Lea & Flood 2014, OOPSLA; the seeding generator recommended for the xoshiro
/// family by Blackman & Vigna) \[published\]: mixes a seed and a stream label into a new seed.
pub fn stream_seed(seed: u64, label: &str) -> u64 {
    // FNV-1a 64 of the label (Fowler, Noll & Vo) [published constants].
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for byte in label.as_bytes() {
        h ^= u64::from(*byte);
        h = h.wrapping_mul(0x0000_0100_0000_01b3);
    }
    let mut z = (seed ^ h).wrapping_add(0x9e37_79b9_7f4a_7c15);
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

/// Monte Carlo projection: `runs` runs of the population; in each, every tree is alive in its entry
/// year and then dies in year `age` with the M11 probability of that age (one uniform draw per living
/// tree-year). Returns the totals of each run, `[run][year]`. Reproducible: one xoshiro256++ generator
/// seeded with `seed`, runs and trees drawn in a fixed order (single-threaded).
pub fn monte_carlo(
    paths: &[TreePath],
    survival: Survival,
    horizon_years: u32,
    runs: u32,
    seed: u64,
) -> Vec<Vec<Flows>> {
    let n = horizon_years as usize;
    let mut rng = rand::rngs::Xoshiro256PlusPlus::seed_from_u64(seed);
    let mut all = Vec::with_capacity(runs as usize);
    for _ in 0..runs {
        let mut totals = vec![Flows::default(); n];
        for path in paths {
            let Some(entry) = path.entry else { continue };
            for _ in 0..path.count {
                let mut index = entry;
                while index < n {
                    if index > entry {
                        let age = (index - entry) as u32;
                        let q = survival.annual_mortality(path.planted, age);
                        if rng.random::<f64>() < q {
                            break;
                        }
                    }
                    if let Some(tree) = &path.years[index] {
                        totals[index].add_scaled(&tree.flows, 1.0);
                    }
                    index += 1;
                }
            }
        }
        all.push(totals);
    }
    all
}

/// A quantile of sorted values by linear interpolation between order statistics (Hyndman & Fan 1996,
/// The American Statistician 50(4):361–365, definition 7) \[published\]. `None` when empty.
pub fn quantile_sorted(sorted: &[f64], p: f64) -> Option<f64> {
    let n = sorted.len();
    if n == 0 {
        return None;
    }
    let h = (n - 1) as f64 * p.clamp(0.0, 1.0);
    let lo = h.floor() as usize;
    let hi = h.ceil() as usize;
    let (a, b) = (sorted[lo], sorted[hi.min(n - 1)]);
    Some(a + (h - lo as f64) * (b - a))
}

/// Mean and P10/P50/P90 of one metric over the runs.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct Band {
    pub mean: f64,
    pub p10: f64,
    pub p50: f64,
    pub p90: f64,
}

impl Band {
    /// The band of a set of values (sorted in place).
    pub fn of(values: &mut [f64]) -> Band {
        if values.is_empty() {
            return Band::default();
        }
        let mean = values.iter().sum::<f64>() / values.len() as f64;
        values.sort_by(f64::total_cmp);
        let q = |p| quantile_sorted(values, p).unwrap_or(0.0);
        Band {
            mean,
            p10: q(0.1),
            p50: q(0.5),
            p90: q(0.9),
        }
    }
}

/// The bands of every metric in one year.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct FlowBands {
    pub trees: Band,
    pub carbon_kg: Band,
    pub co2e_seq_kg_yr: Band,
    pub interception_m3_yr: Band,
    pub cooling_kwh_yr: Band,
    pub value: Band,
    pub value_discounted: Band,
}

impl FlowBands {
    /// The bands by metric, in [`Flows::METRICS`] order.
    pub fn by_metric(&self) -> [Band; 7] {
        [
            self.trees,
            self.carbon_kg,
            self.co2e_seq_kg_yr,
            self.interception_m3_yr,
            self.cooling_kwh_yr,
            self.value,
            self.value_discounted,
        ]
    }

    fn from_metric_bands(b: [Band; 7]) -> Self {
        FlowBands {
            trees: b[0],
            carbon_kg: b[1],
            co2e_seq_kg_yr: b[2],
            interception_m3_yr: b[3],
            cooling_kwh_yr: b[4],
            value: b[5],
            value_discounted: b[6],
        }
    }

    /// The central flows: the run means.
    pub fn means(&self) -> Flows {
        Flows::from_metrics(self.by_metric().map(|b| b.mean))
    }
}

/// Per-year bands of every metric over the runs (`runs[run][year]`).
pub fn bands(runs: &[Vec<Flows>]) -> Vec<FlowBands> {
    let years = runs.first().map_or(0, Vec::len);
    (0..years)
        .map(|year| {
            let metric_bands = Flows::METRICS.map(|(_, get)| {
                let mut values: Vec<f64> = runs.iter().map(|run| get(&run[year])).collect();
                Band::of(&mut values)
            });
            FlowBands::from_metric_bands(metric_bands)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    // Check: Hyndman & Fan 1996 definition 7 (the default of R's `quantile`): for 1..=10,
    // P10 = 1.9, P50 = 5.5, P90 = 9.1 [published definition; values derived].
    #[test]
    fn quantiles_follow_hyndman_fan_definition_7() {
        let v: Vec<f64> = (1..=10).map(f64::from).collect();
        let q = |p| quantile_sorted(&v, p).unwrap_or(f64::NAN);
        assert!((q(0.1) - 1.9).abs() < 1e-12);
        assert!((q(0.5) - 5.5).abs() < 1e-12);
        assert!((q(0.9) - 9.1).abs() < 1e-12);
        assert_eq!(quantile_sorted(&[], 0.5), None);
        assert_eq!(quantile_sorted(&[4.0], 0.9), Some(4.0));
    }

    #[test]
    fn stream_seeds_differ_by_label_and_seed() {
        assert_ne!(stream_seed(1, "kept"), stream_seed(1, "plan a"));
        assert_ne!(stream_seed(1, "kept"), stream_seed(2, "kept"));
        assert_eq!(stream_seed(7, "kept"), stream_seed(7, "kept"));
    }
}
