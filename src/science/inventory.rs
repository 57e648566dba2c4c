//! A whole inventory for one year: species parameters from the species list, the imputer built from
//! the inventory's own measured trees (METHODS.md M3), every standing tree through [`tree_year`]
//! (M13), and totals by group that are exactly the sums of the per-tree rows. Pure: the caller loads
//! the trees and the weather.

use chrono::{Datelike, NaiveDate};
use serde::Serialize;

use super::biomass::{BiomassGroups, ChojnackyGroup, JenkinsGroup};
use super::condition::ConditionBand;
use super::dimensions::{Imputer, ImputerRow, mean_crown_width_m};
use super::kinds::{SiteKind, TreeStatus};
use super::settings::ScienceSettings;
use super::tree_year::{
    Measurement, SpeciesParams, TreeBenefits, TreeInput, YearContext, tree_year,
};
use super::weather::YearWeather;
use crate::model::Species;

/// The engine's parameters of a species from the species list (groups parsed from their words).
pub fn species_params(species: &Species) -> Result<SpeciesParams, String> {
    let jenkins = JenkinsGroup::parse(&species.jenkins_group).ok_or_else(|| {
        format!(
            "species '{}': unknown Jenkins 2003 group '{}'",
            species.scientific_name, species.jenkins_group
        )
    })?;
    let chojnacky = ChojnackyGroup::parse(&species.chojnacky_group).ok_or_else(|| {
        format!(
            "species '{}': unknown Chojnacky 2014 group '{}'",
            species.scientific_name, species.chojnacky_group
        )
    })?;
    Ok(SpeciesParams {
        key: species.scientific_name.clone(),
        genus: species.genus.clone(),
        leaf_habit: species.leaf_habit,
        biomass: BiomassGroups { jenkins, chojnacky },
        lai: species.lai,
        water_use: species.water_use,
        growth_cm_per_yr: species.growth_cm_per_yr,
    })
}

/// One tree as loaded for a year's computation.
#[derive(Debug, Clone, PartialEq)]
pub struct InventoryTree {
    pub tree_id: i64,
    pub uid: String,
    /// Index into the species slice given alongside.
    pub species_index: usize,
    pub site_kind: Option<SiteKind>,
    pub status: TreeStatus,
    pub street: Option<String>,
    pub zone: Option<String>,
    pub measurements: Vec<Measurement>,
}

/// One tree's row of the `benefits` output.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BenefitRow {
    pub tree_id: i64,
    pub uid: String,
    pub species: String,
    pub street: Option<String>,
    pub zone: Option<String>,
    pub condition: ConditionBand,
    pub benefits: TreeBenefits,
}

impl BenefitRow {
    /// The estimated inputs and data flags of the row, as the `estimated` column lists them:
    /// `height_m`, `crown_width_m` (imputed, M3), `dieback_pct` (none given: 0 % assumed),
    /// `no_crown` (no crown width measured or imputable: crown benefits 0), `remeasure` (the observed
    /// DBH increment was implausible, so the model growth rate was used).
    pub fn estimated(&self) -> Vec<&'static str> {
        let b = &self.benefits;
        let mut flags = Vec::new();
        if b.height_estimated {
            flags.push("height_m");
        }
        if b.crown_width_estimated {
            flags.push("crown_width_m");
        }
        if b.detail.dieback_source == super::tree_year::DiebackSource::Assumed {
            flags.push("dieback_pct");
        }
        if b.no_crown {
            flags.push("no_crown");
        }
        if b.remeasure {
            flags.push("remeasure");
        }
        flags
    }

    /// Whether [`BenefitRow::estimated`] lists anything, without building the list.
    pub fn has_estimate(&self) -> bool {
        let b = &self.benefits;
        b.height_estimated
            || b.crown_width_estimated
            || b.detail.dieback_source == super::tree_year::DiebackSource::Assumed
            || b.no_crown
            || b.remeasure
    }
}

/// The latest measurement dated on or before `until` with a usable DBH.
fn latest_until(measurements: &[Measurement], until: NaiveDate) -> Option<&Measurement> {
    measurements
        .iter()
        .filter(|m| m.measured_on <= until && m.dbh_cm() > 0.0)
        .max_by_key(|m| m.measured_on)
}

/// The imputer of METHODS.md M3 from the latest measurement (dated in or before the year) of every
/// standing tree.
pub fn build_imputer(trees: &[InventoryTree], species: &[SpeciesParams], year: i32) -> Imputer {
    let samples: Vec<ImputerSample> = trees
        .iter()
        .filter_map(|t| imputer_sample(t, year))
        .collect();
    imputer_from_samples(&samples, species)
}

/// What one tree adds to the imputer: its species (index) and its latest DBH, height and mean crown
/// width dated in or before the year. Small, so a million of them fit in memory while trees stream.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ImputerSample {
    pub species_index: usize,
    pub dbh_cm: f64,
    pub height_m: Option<f64>,
    pub crown_width_m: Option<f64>,
}

/// The imputer sample of a standing tree, if it has a measurement up to the year.
pub fn imputer_sample(tree: &InventoryTree, year: i32) -> Option<ImputerSample> {
    if tree.status != TreeStatus::Standing {
        return None;
    }
    let latest = latest_until(&tree.measurements, year_end(year))?;
    Some(ImputerSample {
        species_index: tree.species_index,
        dbh_cm: latest.dbh_cm(),
        height_m: latest.height_m,
        crown_width_m: mean_crown_width_m(latest.crown_width_m, latest.crown_width2_m),
    })
}

/// The imputer built from samples.
pub fn imputer_from_samples(samples: &[ImputerSample], species: &[SpeciesParams]) -> Imputer {
    Imputer::from_rows(samples.iter().filter_map(|sample| {
        let params = species.get(sample.species_index)?;
        Some(ImputerRow {
            species_key: &params.key,
            genus: &params.genus,
            dbh_cm: sample.dbh_cm,
            height_m: sample.height_m,
            crown_width_m: sample.crown_width_m,
        })
    }))
}

/// One tree's benefit row for the context's year (`None` when not standing or not measured by then).
pub fn benefit_row(
    tree: &InventoryTree,
    species: &[SpeciesParams],
    ctx: &YearContext<'_>,
) -> Option<BenefitRow> {
    let (params, benefits) = tree_benefits(tree, species, ctx)?;
    Some(BenefitRow {
        tree_id: tree.tree_id,
        uid: tree.uid.clone(),
        species: params.key.clone(),
        street: tree.street.clone(),
        zone: tree.zone.clone(),
        condition: ConditionBand::from_dieback(benefits.detail.dieback_pct),
        benefits,
    })
}

/// [`benefit_row`] for a tree the caller no longer needs: its uid, street and zone move into the row
/// instead of being copied (the engine's streaming path). The same numbers to the last bit.
pub fn into_benefit_row(
    tree: InventoryTree,
    species: &[SpeciesParams],
    ctx: &YearContext<'_>,
) -> Option<BenefitRow> {
    let (params, benefits) = tree_benefits(&tree, species, ctx)?;
    Some(row_from(tree, params, benefits))
}

/// The row of a tree from its computed benefits, moving the tree's uid, street and zone.
pub fn row_from(tree: InventoryTree, params: &SpeciesParams, benefits: TreeBenefits) -> BenefitRow {
    BenefitRow {
        tree_id: tree.tree_id,
        uid: tree.uid,
        species: params.key.clone(),
        street: tree.street,
        zone: tree.zone,
        condition: ConditionBand::from_dieback(benefits.detail.dieback_pct),
        benefits,
    }
}

/// A tree's benefits for the context's year and its species' parameters (`None` when not standing or
/// not measured by then): the computation of [`benefit_row`] without building the row.
pub fn tree_benefits<'s>(
    tree: &InventoryTree,
    species: &'s [SpeciesParams],
    ctx: &YearContext<'_>,
) -> Option<(&'s SpeciesParams, TreeBenefits)> {
    let params = species.get(tree.species_index)?;
    let input = TreeInput {
        species: params,
        site_kind: tree.site_kind,
        status: tree.status,
        measurements: &tree.measurements,
    };
    Some((params, tree_year(&input, ctx).ok()?))
}

fn year_end(year: i32) -> NaiveDate {
    NaiveDate::from_ymd_opt(year, 12, 31).unwrap_or(NaiveDate::MAX)
}

/// Every standing tree's benefits for the weather's year, in the order of `trees`. Trees that are not
/// standing or have no measurement up to the year have no row (M13 step 1).
pub fn compute_year(
    trees: &[InventoryTree],
    species: &[SpeciesParams],
    weather: &YearWeather,
    settings: &ScienceSettings,
) -> Vec<BenefitRow> {
    let imputer = build_imputer(trees, species, weather.year);
    let ctx = YearContext::new(&imputer, weather, settings);
    trees
        .iter()
        .filter_map(|tree| benefit_row(tree, species, &ctx))
        .collect()
}

/// How a summary groups trees.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum GroupBy {
    Species,
    Street,
    Zone,
    Condition,
    /// DBH classes of [`DBH_CLASSES`].
    DbhClass,
    None,
}

/// DBH classes of summaries and reports: (label, lower bound cm) [common practice, no source: the
/// 15 cm steps of street-tree inventories, wider for large trees].
pub const DBH_CLASSES: [(&str, f64); 6] = [
    ("< 15 cm", 0.0),
    ("15–30 cm", 15.0),
    ("30–45 cm", 30.0),
    ("45–60 cm", 45.0),
    ("60–90 cm", 60.0),
    ("≥ 90 cm", 90.0),
];

/// The DBH class label of a diameter.
pub fn dbh_class(dbh_cm: f64) -> &'static str {
    DBH_CLASSES
        .iter()
        .rev()
        .find(|(_, lower)| dbh_cm >= *lower)
        .map_or(DBH_CLASSES[0].0, |(label, _)| *label)
}

/// Sums of one group of trees (or of all). DBH is averaged, every flow and stock summed.
#[derive(Debug, Clone, PartialEq, Serialize, Default)]
pub struct SummaryRow {
    pub group: String,
    pub trees: usize,
    pub mean_dbh_cm: f64,
    pub crown_projection_m2: f64,
    pub leaf_area_m2: f64,
    pub biomass_kg: f64,
    pub carbon_kg: f64,
    pub co2e_kg: f64,
    pub co2e_seq_kg_yr: f64,
    pub interception_m3_yr: f64,
    pub transpiration_m3_yr: f64,
    pub cooling_kwh_yr: f64,
    pub value: f64,
    pub estimated_trees: usize,
}

impl SummaryRow {
    fn add(&mut self, row: &BenefitRow, estimated: bool) {
        let b = &row.benefits;
        self.trees += 1;
        self.mean_dbh_cm += b.dbh_cm; // a sum until `finish`
        self.crown_projection_m2 += b.detail.cpa_m2;
        self.leaf_area_m2 += b.leaf_area_m2;
        self.biomass_kg += b.biomass_kg;
        self.carbon_kg += b.carbon_kg;
        self.co2e_kg += b.co2e_kg;
        self.co2e_seq_kg_yr += b.co2e_seq_kg_yr;
        self.interception_m3_yr += b.interception_m3_yr;
        self.transpiration_m3_yr += b.transpiration_m3_yr;
        self.cooling_kwh_yr += b.cooling_kwh_yr;
        self.value += b.value;
        if estimated {
            self.estimated_trees += 1;
        }
    }

    fn finish(mut self) -> Self {
        if self.trees > 0 {
            self.mean_dbh_cm /= self.trees as f64;
        }
        self
    }
}

/// The group label of a row (borrowed: a row adds to its group without copying the label).
fn group_of(row: &BenefitRow, by: GroupBy) -> &str {
    fn or_none(v: &Option<String>) -> &str {
        match v.as_deref() {
            Some(s) if !s.trim().is_empty() => s,
            _ => "(none)",
        }
    }
    match by {
        GroupBy::Species => &row.species,
        GroupBy::Street => or_none(&row.street),
        GroupBy::Zone => or_none(&row.zone),
        GroupBy::Condition => row.condition.as_str(),
        GroupBy::DbhClass => dbh_class(row.benefits.dbh_cm),
        GroupBy::None => "all trees",
    }
}

/// Groups sorted by descending stored carbon (condition bands in band order), and the total of all
/// rows. Rows are added in their given order, so totals are reproducible to the last bit.
pub fn summarize(rows: &[BenefitRow], by: GroupBy) -> (Vec<SummaryRow>, SummaryRow) {
    let mut summary = Summarizer::new(by);
    for row in rows {
        summary.add(row);
    }
    summary.finish()
}

/// Sums rows one at a time (so a million streamed rows need no list); [`summarize`] in pieces.
#[derive(Debug, Clone)]
pub struct Summarizer {
    by: GroupBy,
    groups: Vec<SummaryRow>,
    index: std::collections::HashMap<String, usize>,
    total: SummaryRow,
}

impl Summarizer {
    /// An empty summary grouped `by`.
    pub fn new(by: GroupBy) -> Self {
        Summarizer {
            by,
            groups: Vec::new(),
            index: std::collections::HashMap::new(),
            total: SummaryRow {
                group: "total".to_string(),
                ..SummaryRow::default()
            },
        }
    }

    /// Adds one tree's row.
    pub fn add(&mut self, row: &BenefitRow) {
        let key = group_of(row, self.by);
        let slot = match self.index.get(key) {
            Some(slot) => *slot,
            None => {
                self.groups.push(SummaryRow {
                    group: key.to_string(),
                    ..SummaryRow::default()
                });
                self.index.insert(key.to_string(), self.groups.len() - 1);
                self.groups.len() - 1
            }
        };
        let estimated = row.has_estimate();
        self.groups[slot].add(row, estimated);
        self.total.add(row, estimated);
    }

    /// The groups in report order and the total.
    pub fn finish(self) -> (Vec<SummaryRow>, SummaryRow) {
        let by = self.by;
        let mut groups: Vec<SummaryRow> = self.groups.into_iter().map(SummaryRow::finish).collect();
        if by == GroupBy::Condition {
            let rank = |g: &SummaryRow| {
                ConditionBand::ALL
                    .iter()
                    .position(|b| b.as_str() == g.group)
                    .unwrap_or(usize::MAX)
            };
            groups.sort_by_key(rank);
        } else if by == GroupBy::DbhClass {
            let rank = |g: &SummaryRow| {
                DBH_CLASSES
                    .iter()
                    .position(|(l, _)| *l == g.group)
                    .unwrap_or(usize::MAX)
            };
            groups.sort_by_key(rank);
        } else {
            groups.sort_by(|a, b| {
                b.carbon_kg
                    .total_cmp(&a.carbon_kg)
                    .then(a.group.cmp(&b.group))
            });
        }
        (groups, self.total.finish())
    }
}

/// The first `keep` groups, and the rest combined into one row labelled `other` (trees summed, mean
/// DBH weighted by trees).
pub fn top_and_other(groups: &[SummaryRow], keep: usize) -> Vec<SummaryRow> {
    if groups.len() <= keep + 1 {
        return groups.to_vec();
    }
    let mut out: Vec<SummaryRow> = groups[..keep].to_vec();
    let rest = &groups[keep..];
    let trees: usize = rest.iter().map(|g| g.trees).sum();
    let sum = |get: fn(&SummaryRow) -> f64| rest.iter().map(get).sum::<f64>();
    out.push(SummaryRow {
        group: format!("other ({} groups)", rest.len()),
        trees,
        mean_dbh_cm: if trees > 0 {
            rest.iter()
                .map(|g| g.mean_dbh_cm * g.trees as f64)
                .sum::<f64>()
                / trees as f64
        } else {
            0.0
        },
        crown_projection_m2: sum(|g| g.crown_projection_m2),
        leaf_area_m2: sum(|g| g.leaf_area_m2),
        biomass_kg: sum(|g| g.biomass_kg),
        carbon_kg: sum(|g| g.carbon_kg),
        co2e_kg: sum(|g| g.co2e_kg),
        co2e_seq_kg_yr: sum(|g| g.co2e_seq_kg_yr),
        interception_m3_yr: sum(|g| g.interception_m3_yr),
        transpiration_m3_yr: sum(|g| g.transpiration_m3_yr),
        cooling_kwh_yr: sum(|g| g.cooling_kwh_yr),
        value: sum(|g| g.value),
        estimated_trees: rest.iter().map(|g| g.estimated_trees).sum(),
    });
    out
}

/// The calendar year of a date (for callers choosing a default year).
pub fn year_of(date: NaiveDate) -> i32 {
    date.year()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{LeafHabit, WaterUse};
    use crate::science::weather::{Station, WeatherDay};

    fn maple() -> Species {
        Species {
            id: 1,
            scientific_name: "Acer rubrum".into(),
            common_name: "red maple".into(),
            genus: "Acer".into(),
            family: "Aceraceae".into(),
            leaf_habit: LeafHabit::Deciduous,
            sg_green: 0.49,
            jenkins_group: "soft maple/birch".into(),
            chojnacky_group: "Aceraceae <0.50".into(),
            growth_cm_per_yr: 0.78,
            growth_source: String::new(),
            water_use: WaterUse::Moderate,
            lai: 4.0,
            max_height_m: None,
            builtin: true,
            source: String::new(),
        }
    }

    fn tree(id: i64, dbh: f64, street: &str, width: Option<f64>) -> InventoryTree {
        InventoryTree {
            tree_id: id,
            uid: format!("u{id}"),
            species_index: 0,
            site_kind: None,
            status: TreeStatus::Standing,
            street: Some(street.into()),
            zone: None,
            measurements: vec![Measurement {
                measured_on: NaiveDate::from_ymd_opt(2024, 6, 1).unwrap_or_default(),
                stems_cm: vec![dbh],
                height_m: Some(dbh * 0.4),
                crown_width_m: width,
                crown_width2_m: None,
                crown_base_m: None,
                dieback_pct: Some(5.0),
                condition: None,
            }],
        }
    }

    fn wet_year() -> YearWeather {
        let days: Vec<WeatherDay> = (1..=365)
            .filter_map(|d| NaiveDate::from_yo_opt(2025, d))
            .map(|date| WeatherDay {
                precip_mm: Some(if date.ordinal() % 3 == 0 { 6.0 } else { 0.0 }),
                tmin_c: Some(8.0),
                tmax_c: Some(20.0),
                rh_mean_pct: Some(70.0),
                wind_2m_ms: Some(2.0),
                ..WeatherDay::empty(date)
            })
            .collect();
        let station = Station {
            lat_deg: 42.7,
            elevation_m: 260.0,
            coastal: false,
        };
        YearWeather::compute(2025, &station, &days, &ScienceSettings::default())
    }

    #[test]
    fn summary_totals_are_the_sums_of_the_rows_and_missing_crowns_are_imputed() {
        let species = vec![species_params(&maple()).expect("groups parse")];
        let trees = vec![
            tree(1, 30.0, "Elm Row", Some(9.0)),
            tree(2, 20.0, "Elm Row", Some(6.0)),
            tree(3, 40.0, "Ash Lane", None),
        ];
        let rows = compute_year(&trees, &species, &wet_year(), &ScienceSettings::default());
        assert_eq!(rows.len(), 3);
        assert!(rows[2].benefits.crown_width_estimated);
        assert_eq!(rows[2].estimated(), vec!["crown_width_m"]);
        // Imputed from the species' median crown-width/DBH ratio (0.3 for both measured trees).
        assert!((rows[2].benefits.crown_width_m.unwrap_or(0.0) - 12.0).abs() < 1e-9);
        let (groups, total) = summarize(&rows, GroupBy::Street);
        assert_eq!(groups.len(), 2);
        let carbon: f64 = rows.iter().map(|r| r.benefits.carbon_kg).sum();
        assert_eq!(total.carbon_kg, carbon);
        let by_group: f64 = groups.iter().map(|g| g.co2e_seq_kg_yr).sum();
        assert!((by_group - total.co2e_seq_kg_yr).abs() < 1e-9);
        assert_eq!(total.trees, 3);
        assert!((total.mean_dbh_cm - 30.0).abs() < 1e-12);
    }

    // `has_estimate` is `!estimated().is_empty()` for every combination of the five flags, and the
    // moving `into_benefit_row` gives the same row as `benefit_row`.
    #[test]
    fn has_estimate_and_into_benefit_row_agree_with_their_references() {
        let species = vec![species_params(&maple()).expect("groups parse")];
        let trees = vec![tree(1, 30.0, "Elm Row", Some(9.0))];
        let mut rows = compute_year(&trees, &species, &wet_year(), &ScienceSettings::default());
        let mut row = rows.pop().expect("a row");
        for bits in 0u8..32 {
            let b = &mut row.benefits;
            b.height_estimated = bits & 1 != 0;
            b.crown_width_estimated = bits & 2 != 0;
            b.detail.dieback_source = if bits & 4 != 0 {
                super::super::tree_year::DiebackSource::Assumed
            } else {
                super::super::tree_year::DiebackSource::Measured
            };
            b.no_crown = bits & 8 != 0;
            b.remeasure = bits & 16 != 0;
            assert_eq!(row.has_estimate(), !row.estimated().is_empty(), "{bits}");
        }
        let weather = wet_year();
        let settings = ScienceSettings::default();
        let imputer = build_imputer(&trees, &species, weather.year);
        let ctx = YearContext::new(&imputer, &weather, &settings);
        let by_ref = benefit_row(&trees[0], &species, &ctx);
        let moved = into_benefit_row(trees[0].clone(), &species, &ctx);
        assert!(by_ref.is_some());
        assert_eq!(format!("{by_ref:?}"), format!("{moved:?}"));
    }

    #[test]
    fn every_built_in_species_has_parseable_groups() {
        let text = include_str!("../store/species-reference.csv");
        let mut reader = csv::Reader::from_reader(text.as_bytes());
        for row in reader.records() {
            let row = row.expect("valid built-in csv");
            let mut s = maple();
            s.scientific_name = row[0].to_string();
            s.jenkins_group = row[5].to_string();
            s.chojnacky_group = row[6].to_string();
            assert!(species_params(&s).is_ok(), "{}", &row[0]);
        }
    }

    #[test]
    fn dbh_classes_and_top_and_other() {
        assert_eq!(dbh_class(3.0), "< 15 cm");
        assert_eq!(dbh_class(15.0), "15–30 cm");
        assert_eq!(dbh_class(89.9), "60–90 cm");
        assert_eq!(dbh_class(140.0), "≥ 90 cm");
        let row = |group: &str, trees: usize, carbon: f64| SummaryRow {
            group: group.into(),
            trees,
            mean_dbh_cm: 10.0 * trees as f64,
            carbon_kg: carbon,
            ..SummaryRow::default()
        };
        let groups = vec![row("a", 1, 5.0), row("b", 2, 4.0), row("c", 3, 3.0)];
        let kept = top_and_other(&groups, 1);
        assert_eq!(kept.len(), 2);
        assert_eq!(kept[1].trees, 5);
        assert_eq!(kept[1].carbon_kg, 7.0);
        // Weighted mean DBH: (2×20 + 3×30) / 5 = 26.
        assert!((kept[1].mean_dbh_cm - 26.0).abs() < 1e-12);
        assert_eq!(
            top_and_other(&groups, 2).len(),
            3,
            "one leftover group is shown as itself"
        );
    }
}
