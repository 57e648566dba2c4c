//! A removal study from start to finish: the removed trees kept (the counterfactual) against each
//! replanting plan — yearly flows, cumulative deficits, payback years, discounted totals, the carbon
//! the removal releases and the trees' appraised replacement value.

use serde::Serialize;

use crate::science::biomass::co2e_kg;
use crate::science::dimensions::Imputer;
use crate::science::kinds::SiteKind;
use crate::science::settings::ScienceSettings;
use crate::science::tree_year::{Measurement, SpeciesParams};
use crate::science::weather::YearWeather;

use super::appraisal::{Appraisal, appraise};
use super::projection::{
    Cohort, FlowBands, Flows, ProjectionError, Setup, Start, TreePath, bands, dieback_of, expected,
    monte_carlo, stream_seed, tree_path,
};
use super::settings::{StudySettings, SurvivalScenario};
use super::survival::Survival;

/// Expected values or Monte Carlo runs.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Mode {
    /// Each tree weighted by its probability of being alive (deterministic).
    Expected,
    /// Seeded runs in which each tree lives or dies at random; P10/P50/P90 per year.
    MonteCarlo,
}

impl Mode {
    /// The word used on the command line and in outputs.
    pub fn as_str(self) -> &'static str {
        match self {
            Mode::Expected => "expected",
            Mode::MonteCarlo => "monte-carlo",
        }
    }
}

/// A standing tree the study removes.
#[derive(Debug, Clone, PartialEq)]
pub struct RemovedTree {
    pub tree_id: i64,
    /// Index into the species slice of [`StudyEnv`].
    pub species_index: usize,
    pub site_kind: Option<SiteKind>,
    /// Its latest measurement.
    pub latest: Measurement,
}

/// One row of a replanting plan.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PlantingRow {
    /// Index into the species slice of [`StudyEnv`].
    #[serde(skip)]
    pub species_index: usize,
    pub species: String,
    pub count: u32,
    pub dbh_cm: f64,
    pub year: i32,
}

/// A named replanting plan.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Plan {
    pub name: String,
    pub rows: Vec<PlantingRow>,
}

/// A study as stored.
#[derive(Debug, Clone, PartialEq)]
pub struct StudyInput {
    pub name: String,
    /// The year of the removal: the first projected year.
    pub start_year: i32,
    pub horizon_years: u32,
    pub seed: u64,
    pub runs: u32,
    /// Trunk-formula limitation factors of the study (0–1, METHODS.md M12).
    pub functional_limitation: f64,
    pub external_limitation: f64,
    pub removed: Vec<RemovedTree>,
    pub plans: Vec<Plan>,
}

/// What the study is computed with.
#[derive(Debug, Clone, Copy)]
pub struct StudyEnv<'a> {
    pub species: &'a [SpeciesParams],
    pub imputer: &'a Imputer,
    pub weather: &'a YearWeather,
    pub science: &'a ScienceSettings,
    pub settings: &'a StudySettings,
    /// The scenario whose mortalities apply (normally `settings.survival_scenario`).
    pub scenario: SurvivalScenario,
}

/// Why a study could not be run: the message names what to fix.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum StudyError {
    #[error("{0}")]
    Invalid(String),
    #[error("tree {tree_id}: {source}")]
    Tree {
        tree_id: i64,
        source: ProjectionError,
    },
    #[error("plan '{plan}' row {row}: {source}")]
    PlanRow {
        plan: String,
        row: usize,
        source: ProjectionError,
    },
}

/// A projected population (the kept trees, or a plan's plantings).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Population {
    pub label: String,
    pub years: Vec<i32>,
    /// Expected values, or the Monte Carlo run means.
    pub central: Vec<Flows>,
    /// Monte Carlo only: mean and P10/P50/P90 of every metric, per year.
    pub bands: Option<Vec<FlowBands>>,
    pub totals: Totals,
    /// Monte Carlo only: every run's totals, `[run][year]`.
    #[serde(skip)]
    pub runs: Option<Vec<Vec<Flows>>>,
}

/// Sums over the horizon (flows) and the state at its last year (stocks).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct Totals {
    pub co2e_seq_kg: f64,
    pub interception_m3: f64,
    pub cooling_kwh: f64,
    pub value: f64,
    pub value_discounted: f64,
    /// Living trees in the last projected year.
    pub trees_end: f64,
    /// Carbon stored in the last projected year, kg C.
    pub carbon_end_kg: f64,
}

impl Totals {
    fn of(series: &[Flows]) -> Totals {
        let mut t = Totals::default();
        for f in series {
            t.co2e_seq_kg += f.co2e_seq_kg_yr;
            t.interception_m3 += f.interception_m3_yr;
            t.cooling_kwh += f.cooling_kwh_yr;
            t.value += f.value;
            t.value_discounted += f.value_discounted;
        }
        if let Some(last) = series.last() {
            t.trees_end = last.trees;
            t.carbon_end_kg = last.carbon_kg;
        }
        t
    }

    fn minus(&self, other: &Totals) -> Totals {
        Totals {
            co2e_seq_kg: self.co2e_seq_kg - other.co2e_seq_kg,
            interception_m3: self.interception_m3 - other.interception_m3,
            cooling_kwh: self.cooling_kwh - other.cooling_kwh,
            value: self.value - other.value,
            value_discounted: self.value_discounted - other.value_discounted,
            trees_end: self.trees_end - other.trees_end,
            carbon_end_kg: self.carbon_end_kg - other.carbon_end_kg,
        }
    }
}

/// A deficit metric's name and how to read it from [`Deficit`].
pub type DeficitMetric = (&'static str, fn(&Deficit) -> f64);

/// The kept trees' advantage over a plan in one year: stock gaps, and flow deficits accumulated
/// from the start year (kept − plan; positive = benefits still owed by the plan).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct Deficit {
    pub year: i32,
    pub trees_gap: f64,
    pub carbon_gap_kg: f64,
    pub co2e_seq_cum_kg: f64,
    pub interception_cum_m3: f64,
    pub cooling_cum_kwh: f64,
    pub value_cum: f64,
    pub value_discounted_cum: f64,
}

impl Deficit {
    /// The deficit metrics by name, in column order.
    pub const METRICS: [DeficitMetric; 7] = [
        ("trees_gap", |d| d.trees_gap),
        ("carbon_gap_kg", |d| d.carbon_gap_kg),
        ("co2e_seq_cum_kg", |d| d.co2e_seq_cum_kg),
        ("interception_cum_m3", |d| d.interception_cum_m3),
        ("cooling_cum_kwh", |d| d.cooling_cum_kwh),
        ("value_cum", |d| d.value_cum),
        ("value_discounted_cum", |d| d.value_discounted_cum),
    ];
}

/// Deficits of a plan against the kept trees, year by year.
pub fn deficits(years: &[i32], kept: &[Flows], plan: &[Flows]) -> Vec<Deficit> {
    let mut acc = Deficit::default();
    years
        .iter()
        .zip(kept.iter().zip(plan))
        .map(|(year, (k, p))| {
            acc.year = *year;
            acc.trees_gap = k.trees - p.trees;
            acc.carbon_gap_kg = k.carbon_kg - p.carbon_kg;
            acc.co2e_seq_cum_kg += k.co2e_seq_kg_yr - p.co2e_seq_kg_yr;
            acc.interception_cum_m3 += k.interception_m3_yr - p.interception_m3_yr;
            acc.cooling_cum_kwh += k.cooling_kwh_yr - p.cooling_kwh_yr;
            acc.value_cum += k.value - p.value;
            acc.value_discounted_cum += k.value_discounted - p.value_discounted;
            acc
        })
        .collect()
}

/// A benefit whose payback is reported.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Benefit {
    /// Carbon stored (a stock): the year the plan's living trees hold as much as the kept ones.
    CarbonStored,
    Co2eSequestered,
    Interception,
    Cooling,
    Value,
}

impl Benefit {
    pub const ALL: [Benefit; 5] = [
        Benefit::CarbonStored,
        Benefit::Co2eSequestered,
        Benefit::Interception,
        Benefit::Cooling,
        Benefit::Value,
    ];

    /// A planner's label.
    pub fn label(self) -> &'static str {
        match self {
            Benefit::CarbonStored => "carbon stored",
            Benefit::Co2eSequestered => "CO2e sequestered",
            Benefit::Interception => "rain intercepted",
            Benefit::Cooling => "cooling (transpiration)",
            Benefit::Value => "money value of the year's flows",
        }
    }

    fn annual(self, f: &Flows) -> f64 {
        match self {
            Benefit::CarbonStored => f.carbon_kg,
            Benefit::Co2eSequestered => f.co2e_seq_kg_yr,
            Benefit::Interception => f.interception_m3_yr,
            Benefit::Cooling => f.cooling_kwh_yr,
            Benefit::Value => f.value,
        }
    }

    fn cumulative_deficit(self, d: &Deficit) -> Option<f64> {
        match self {
            Benefit::CarbonStored => None,
            Benefit::Co2eSequestered => Some(d.co2e_seq_cum_kg),
            Benefit::Interception => Some(d.interception_cum_m3),
            Benefit::Cooling => Some(d.cooling_cum_kwh),
            Benefit::Value => Some(d.value_cum),
        }
    }
}

/// The payback year of a benefit: the first projected year in which the plan's annual benefit (for
/// carbon stored: its stock) reaches the kept trees' — `None` when it never does within the horizon.
/// [Definition of issue 6; a relative tolerance of 1e-12 absorbs rounding when both are equal.]
pub fn payback_year(
    benefit: Benefit,
    years: &[i32],
    kept: &[Flows],
    plan: &[Flows],
) -> Option<i32> {
    years
        .iter()
        .zip(kept.iter().zip(plan))
        .find(|(_, (k, p))| {
            let (k, p) = (benefit.annual(k), benefit.annual(p));
            p >= k - 1e-12 * k.abs()
        })
        .map(|(y, _)| *y)
}

/// The break-even year of a flow: the first year in which the cumulative deficit is paid off
/// (≤ 0) — `None` for carbon stored (a stock) or when never within the horizon \[derived\].
pub fn break_even_year(benefit: Benefit, deficit: &[Deficit]) -> Option<i32> {
    deficit
        .iter()
        .find(|d| benefit.cumulative_deficit(d).is_some_and(|v| v <= 0.0))
        .map(|d| d.year)
}

/// The spread of a payback year over Monte Carlo runs (nearest-rank quantiles, "never within the
/// horizon" ranked after every year; Hyndman & Fan 1996 definition 1) [published definition].
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct YearSpread {
    pub p10: Option<i32>,
    pub p50: Option<i32>,
    pub p90: Option<i32>,
    /// Share of runs in which the year falls within the horizon.
    pub share_within_horizon: f64,
}

fn year_spread(mut years: Vec<Option<i32>>) -> YearSpread {
    let n = years.len();
    let within = years.iter().filter(|y| y.is_some()).count();
    years.sort_by_key(|y| y.unwrap_or(i32::MAX));
    let rank = |p: f64| -> Option<i32> {
        if n == 0 {
            return None;
        }
        let k = ((p * n as f64).ceil() as usize).clamp(1, n);
        years[k - 1]
    };
    YearSpread {
        p10: rank(0.1),
        p50: rank(0.5),
        p90: rank(0.9),
        share_within_horizon: if n == 0 {
            0.0
        } else {
            within as f64 / n as f64
        },
    }
}

/// Payback and break-even of one benefit.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Payback {
    pub benefit: Benefit,
    /// Expected mode: from the expected series. Monte Carlo: the median over runs.
    pub year: Option<i32>,
    pub break_even_year: Option<i32>,
    /// Monte Carlo only.
    pub payback_spread: Option<YearSpread>,
    pub break_even_spread: Option<YearSpread>,
}

/// Deficit bands per year over Monte Carlo runs.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct DeficitBands {
    pub year: i32,
    pub carbon_gap_kg: super::projection::Band,
    pub co2e_seq_cum_kg: super::projection::Band,
    pub interception_cum_m3: super::projection::Band,
    pub cooling_cum_kwh: super::projection::Band,
    pub value_cum: super::projection::Band,
    pub value_discounted_cum: super::projection::Band,
}

/// One plan against the kept trees.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PlanOutcome {
    pub plan: Plan,
    pub trees_planted: u32,
    pub planted: Population,
    /// Kept − plan, year by year (expected mode; Monte Carlo: of the run means).
    pub deficit: Vec<Deficit>,
    pub deficit_bands: Option<Vec<DeficitBands>>,
    pub paybacks: Vec<Payback>,
    /// Kept − plan over the horizon.
    pub totals_deficit: Totals,
    /// The largest cumulative value deficit and its year.
    pub peak_value_deficit: Option<(i32, f64)>,
}

/// What the removal takes at once.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Removal {
    pub trees: usize,
    /// Carbon stored in the removed trees in the start year, kg C (M2).
    pub stored_carbon_kg: f64,
    pub stored_co2e_kg: f64,
    /// Setting `removal_carbon_decay_share`.
    pub decay_share: f64,
    /// CO2e returned to the air within 10 years of the removal.
    pub released_co2e_kg_10y: f64,
    /// CO2e that stays in wood products.
    pub retained_co2e_kg: f64,
    /// The first year's flows that the removal forgoes (the kept trees in the start year).
    pub first_year: Flows,
    pub appraisal_total: f64,
    pub appraisal_unit_cost_per_cm2: f64,
    pub functional_limitation: f64,
    pub external_limitation: f64,
    pub appraisals: Vec<TreeAppraisal>,
}

/// One removed tree's appraisal (at its DBH projected to the start year).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TreeAppraisal {
    pub tree_id: i64,
    #[serde(flatten)]
    pub appraisal: Appraisal,
}

/// Everything a study run produces.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StudyOutcome {
    pub study: String,
    pub mode: Mode,
    pub start_year: i32,
    pub end_year: i32,
    pub horizon_years: u32,
    pub seed: u64,
    /// Monte Carlo only.
    pub runs: Option<u32>,
    pub weather_year: i32,
    pub scenario: SurvivalScenario,
    pub survival: Survival,
    pub discount_rate: f64,
    pub currency: String,
    pub removal: Removal,
    pub kept: Population,
    pub plans: Vec<PlanOutcome>,
}

fn population(
    label: &str,
    paths: &[TreePath],
    setup: &Setup<'_>,
    mode: Mode,
    runs: u32,
    seed: u64,
) -> Population {
    let years = setup.years();
    match mode {
        Mode::Expected => {
            let central = expected(paths, setup.survival, setup.horizon_years);
            Population {
                label: label.to_string(),
                totals: Totals::of(&central),
                years,
                central,
                bands: None,
                runs: None,
            }
        }
        Mode::MonteCarlo => {
            let all = monte_carlo(
                paths,
                setup.survival,
                setup.horizon_years,
                runs,
                stream_seed(seed, label),
            );
            let per_year = bands(&all);
            let central: Vec<Flows> = per_year.iter().map(FlowBands::means).collect();
            Population {
                label: label.to_string(),
                totals: Totals::of(&central),
                years,
                central,
                bands: Some(per_year),
                runs: Some(all),
            }
        }
    }
}

/// The stream label of the kept trees' Monte Carlo runs (plans use `plan:NAME`).
pub const KEPT_LABEL: &str = "kept";

/// Runs a study: validates it, projects the kept trees and every plan, and compares them.
pub fn run_study(
    input: &StudyInput,
    env: &StudyEnv<'_>,
    mode: Mode,
) -> Result<StudyOutcome, StudyError> {
    validate(input, env)?;
    let survival = env.scenario.survival();
    let setup = Setup {
        start_year: input.start_year,
        horizon_years: input.horizon_years,
        imputer: env.imputer,
        weather: env.weather,
        science: env.science,
        survival,
        discount_rate: env.settings.discount_rate,
    };
    let years = setup.years();
    let species = |i: usize| {
        env.species
            .get(i)
            .ok_or_else(|| StudyError::Invalid(format!("species index {i} is unknown")))
    };

    // The kept trees.
    let mut kept_paths = Vec::with_capacity(input.removed.len());
    for tree in &input.removed {
        let cohort = Cohort {
            species: species(tree.species_index)?,
            site_kind: tree.site_kind,
            count: 1,
            start: Start::Measured(tree.latest.clone()),
        };
        let path = tree_path(&cohort, &setup).map_err(|source| StudyError::Tree {
            tree_id: tree.tree_id,
            source,
        })?;
        kept_paths.push(path);
    }
    let kept = population(
        KEPT_LABEL,
        &kept_paths,
        &setup,
        mode,
        input.runs,
        input.seed,
    );
    let removal = removal_figures(input, env, &kept_paths)?;

    // Plantings go where the removed trees stood: the commonest site kind among them.
    let site_kind = commonest_site(&input.removed);
    let mut plans = Vec::with_capacity(input.plans.len());
    for plan in &input.plans {
        let mut paths = Vec::with_capacity(plan.rows.len());
        for (i, row) in plan.rows.iter().enumerate() {
            let cohort = Cohort {
                species: species(row.species_index)?,
                site_kind: Some(site_kind),
                count: row.count,
                start: Start::Planted {
                    year: row.year,
                    dbh_cm: row.dbh_cm,
                },
            };
            let path = tree_path(&cohort, &setup).map_err(|source| StudyError::PlanRow {
                plan: plan.name.clone(),
                row: i + 1,
                source,
            })?;
            paths.push(path);
        }
        let label = format!("plan:{}", plan.name);
        let planted = population(&label, &paths, &setup, mode, input.runs, input.seed);
        plans.push(compare_plan(plan, &kept, planted, &years));
    }
    Ok(StudyOutcome {
        study: input.name.clone(),
        mode,
        start_year: input.start_year,
        end_year: input.start_year + input.horizon_years as i32 - 1,
        horizon_years: input.horizon_years,
        seed: input.seed,
        runs: (mode == Mode::MonteCarlo).then_some(input.runs),
        weather_year: env.weather.year,
        scenario: env.scenario,
        survival,
        discount_rate: env.settings.discount_rate,
        currency: env.science.currency.clone(),
        removal,
        kept,
        plans,
    })
}

fn validate(input: &StudyInput, env: &StudyEnv<'_>) -> Result<(), StudyError> {
    if !(1..=200).contains(&input.horizon_years) {
        return Err(StudyError::Invalid(format!(
            "horizon: {} years is outside 1–200",
            input.horizon_years
        )));
    }
    if input.runs == 0 {
        return Err(StudyError::Invalid(
            "runs: at least 1 Monte Carlo run is needed".to_string(),
        ));
    }
    if input.removed.is_empty() {
        return Err(StudyError::Invalid(format!(
            "study '{}' has no trees; add some with `streetwood study add {}`",
            input.name, input.name
        )));
    }
    for (name, f) in [
        ("functional limitation", input.functional_limitation),
        ("external limitation", input.external_limitation),
    ] {
        if !(f.is_finite() && (0.0..=1.0).contains(&f)) {
            return Err(StudyError::Invalid(format!("{name}: {f} is outside 0–1")));
        }
    }
    let end = input.start_year + input.horizon_years as i32 - 1;
    for plan in &input.plans {
        for (i, row) in plan.rows.iter().enumerate() {
            let at = |reason: String| {
                StudyError::Invalid(format!("plan '{}' row {}: {reason}", plan.name, i + 1))
            };
            if row.species_index >= env.species.len() {
                return Err(at(format!("species '{}' is unknown", row.species)));
            }
            if row.count == 0 {
                return Err(at("count must be at least 1".to_string()));
            }
            if !(row.dbh_cm.is_finite() && row.dbh_cm > 0.0) {
                return Err(at(format!(
                    "planting DBH {} cm must be above 0",
                    row.dbh_cm
                )));
            }
            if row.year < input.start_year || row.year > end {
                return Err(at(format!(
                    "planting year {} is outside the study's years {}–{end}",
                    row.year, input.start_year
                )));
            }
        }
    }
    Ok(())
}

fn commonest_site(removed: &[RemovedTree]) -> SiteKind {
    let mut best = (SiteKind::default(), 0usize);
    for kind in SiteKind::ALL {
        let n = removed
            .iter()
            .filter(|t| t.site_kind.unwrap_or_default() == *kind)
            .count();
        if n > best.1 {
            best = (*kind, n);
        }
    }
    best.0
}

fn removal_figures(
    input: &StudyInput,
    env: &StudyEnv<'_>,
    kept_paths: &[TreePath],
) -> Result<Removal, StudyError> {
    let mut first_year = Flows::default();
    let mut appraisals = Vec::with_capacity(kept_paths.len());
    for (tree, path) in input.removed.iter().zip(kept_paths) {
        let Some(Some(now)) = path.years.first() else {
            return Err(StudyError::Invalid(format!(
                "tree {}: no projected first year",
                tree.tree_id
            )));
        };
        first_year.add_scaled(&now.flows, 1.0);
        appraisals.push(TreeAppraisal {
            tree_id: tree.tree_id,
            appraisal: appraise(
                now.dbh_cm,
                dieback_of(&tree.latest),
                env.settings.appraisal_unit_cost_per_cm2,
                input.functional_limitation,
                input.external_limitation,
            ),
        });
    }
    let stored_co2e = co2e_kg(first_year.carbon_kg);
    let share = env.settings.removal_carbon_decay_share;
    Ok(Removal {
        trees: input.removed.len(),
        stored_carbon_kg: first_year.carbon_kg,
        stored_co2e_kg: stored_co2e,
        decay_share: share,
        released_co2e_kg_10y: stored_co2e * share,
        retained_co2e_kg: stored_co2e * (1.0 - share),
        first_year,
        appraisal_total: appraisals.iter().map(|a| a.appraisal.value).sum(),
        appraisal_unit_cost_per_cm2: env.settings.appraisal_unit_cost_per_cm2,
        functional_limitation: input.functional_limitation,
        external_limitation: input.external_limitation,
        appraisals,
    })
}

fn compare_plan(plan: &Plan, kept: &Population, planted: Population, years: &[i32]) -> PlanOutcome {
    let deficit = deficits(years, &kept.central, &planted.central);
    let run_pairs: Option<Vec<(&Vec<Flows>, &Vec<Flows>)>> = match (&kept.runs, &planted.runs) {
        (Some(k), Some(p)) => Some(k.iter().zip(p.iter()).collect()),
        _ => None,
    };
    let run_deficits: Option<Vec<Vec<Deficit>>> = run_pairs
        .as_ref()
        .map(|pairs| pairs.iter().map(|(k, p)| deficits(years, k, p)).collect());
    let paybacks = Benefit::ALL
        .iter()
        .map(|&benefit| match (&run_pairs, &run_deficits) {
            (Some(pairs), Some(run_deficits)) => {
                let pay = year_spread(
                    pairs
                        .iter()
                        .map(|(k, p)| payback_year(benefit, years, k, p))
                        .collect(),
                );
                let even = (benefit != Benefit::CarbonStored).then(|| {
                    year_spread(
                        run_deficits
                            .iter()
                            .map(|d| break_even_year(benefit, d))
                            .collect(),
                    )
                });
                Payback {
                    benefit,
                    year: pay.p50,
                    break_even_year: even.and_then(|e| e.p50),
                    payback_spread: Some(pay),
                    break_even_spread: even,
                }
            }
            _ => Payback {
                benefit,
                year: payback_year(benefit, years, &kept.central, &planted.central),
                break_even_year: break_even_year(benefit, &deficit),
                payback_spread: None,
                break_even_spread: None,
            },
        })
        .collect();
    let deficit_bands = run_deficits.map(|runs| {
        (0..years.len())
            .map(|i| {
                let band = |get: fn(&Deficit) -> f64| {
                    let mut v: Vec<f64> = runs.iter().map(|r| get(&r[i])).collect();
                    super::projection::Band::of(&mut v)
                };
                DeficitBands {
                    year: years[i],
                    carbon_gap_kg: band(|d| d.carbon_gap_kg),
                    co2e_seq_cum_kg: band(|d| d.co2e_seq_cum_kg),
                    interception_cum_m3: band(|d| d.interception_cum_m3),
                    cooling_cum_kwh: band(|d| d.cooling_cum_kwh),
                    value_cum: band(|d| d.value_cum),
                    value_discounted_cum: band(|d| d.value_discounted_cum),
                }
            })
            .collect()
    });
    let peak_value_deficit = deficit
        .iter()
        .max_by(|a, b| a.value_cum.total_cmp(&b.value_cum))
        .filter(|d| d.value_cum > 0.0)
        .map(|d| (d.year, d.value_cum));
    PlanOutcome {
        trees_planted: plan.rows.iter().map(|r| r.count).sum(),
        totals_deficit: kept.totals.minus(&planted.totals),
        plan: plan.clone(),
        planted,
        deficit,
        deficit_bands,
        paybacks,
        peak_value_deficit,
    }
}

/// One line of a side-by-side comparison of studies and plans.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PlanSummary {
    pub study: String,
    pub plan: String,
    pub mode: Mode,
    pub start_year: i32,
    pub end_year: i32,
    pub trees_removed: usize,
    pub trees_planted: u32,
    pub stored_co2e_kg: f64,
    pub released_co2e_kg_10y: f64,
    pub appraisal_total: f64,
    pub kept: Totals,
    pub planted: Totals,
    pub deficit: Totals,
    pub peak_value_deficit: Option<(i32, f64)>,
    pub paybacks: Vec<Payback>,
}

impl StudyOutcome {
    /// One summary per plan (optionally only the named one).
    pub fn summaries(&self, only: Option<&str>) -> Vec<PlanSummary> {
        self.plans
            .iter()
            .filter(|p| only.is_none_or(|name| p.plan.name == name))
            .map(|p| PlanSummary {
                study: self.study.clone(),
                plan: p.plan.name.clone(),
                mode: self.mode,
                start_year: self.start_year,
                end_year: self.end_year,
                trees_removed: self.removal.trees,
                trees_planted: p.trees_planted,
                stored_co2e_kg: self.removal.stored_co2e_kg,
                released_co2e_kg_10y: self.removal.released_co2e_kg_10y,
                appraisal_total: self.removal.appraisal_total,
                kept: self.kept.totals,
                planted: p.planted.totals,
                deficit: p.totals_deficit,
                peak_value_deficit: p.peak_value_deficit,
                paybacks: p.paybacks.clone(),
            })
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nearest_rank_spread_ranks_never_last() {
        let s = year_spread(vec![Some(2030), None, Some(2028), Some(2040), None]);
        // Sorted: 2028, 2030, 2040, never, never; ranks ceil(0.1·5)=1, ceil(0.5·5)=3, ceil(0.9·5)=5.
        assert_eq!((s.p10, s.p50, s.p90), (Some(2028), Some(2040), None));
        assert!((s.share_within_horizon - 0.6).abs() < 1e-12);
    }

    #[test]
    fn deficits_accumulate_flows_and_gap_stocks() {
        let years = [2026, 2027];
        let k = Flows {
            trees: 1.0,
            carbon_kg: 100.0,
            co2e_seq_kg_yr: 10.0,
            value: 5.0,
            ..Flows::default()
        };
        let p = Flows {
            trees: 2.0,
            carbon_kg: 10.0,
            co2e_seq_kg_yr: 4.0,
            value: 6.0,
            ..Flows::default()
        };
        let d = deficits(&years, &[k, k], &[p, p]);
        assert_eq!(d[1].co2e_seq_cum_kg, 12.0);
        assert_eq!(d[1].carbon_gap_kg, 90.0);
        assert_eq!(d[1].trees_gap, -1.0);
        assert_eq!(d[0].value_cum, -1.0);
        assert_eq!(break_even_year(Benefit::Value, &d), Some(2026));
        assert_eq!(break_even_year(Benefit::Co2eSequestered, &d), None);
        assert_eq!(
            payback_year(Benefit::Value, &years, &[k, k], &[p, p]),
            Some(2026)
        );
        assert_eq!(
            payback_year(Benefit::CarbonStored, &years, &[k, k], &[p, p]),
            None
        );
    }
}
