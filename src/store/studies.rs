//! Removal studies: the study rows, their trees and replanting plans, and everything a run needs
//! (trees with their measurements, species, the imputer, the weather year, the settings), loaded for
//! the pure core in [`crate::study`].

use rusqlite::{OptionalExtension, params};
use serde::Serialize;

use super::{Store, StoreError};
use crate::model::{SiteKind, Species, StationInfo};
use crate::science::condition::ConditionWord;
use crate::science::dimensions::Imputer;
use crate::science::inventory::{imputer_from_samples, species_params};
use crate::science::settings::{KEYS as SCIENCE_KEYS, ScienceSettings};
use crate::science::tree_year::{Measurement, SpeciesParams};
use crate::science::weather::{Station, YearWeather};
use crate::study::outcome::{Plan, PlantingRow, RemovedTree, StudyInput};
use crate::study::select::{Candidate, Selected};
use crate::study::settings::{KEYS as STUDY_KEYS, StudySettings};

/// A study to create.
#[derive(Debug, Clone, PartialEq)]
pub struct NewStudy {
    pub name: String,
    pub description: Option<String>,
    pub horizon_years: u32,
    /// Stored as a non-negative 64-bit integer.
    pub seed: u64,
    pub runs: u32,
    pub weather_year: Option<i32>,
    pub start_year: i32,
    pub functional_limitation: f64,
    pub external_limitation: f64,
}

/// A stored study.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StudyRecord {
    pub id: i64,
    pub name: String,
    pub description: Option<String>,
    pub horizon_years: u32,
    pub seed: u64,
    pub runs: u32,
    pub weather_year: Option<i32>,
    pub start_year: i32,
    pub functional_limitation: f64,
    pub external_limitation: f64,
    pub created_at: String,
}

/// A study in the list of studies.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StudyListRow {
    pub name: String,
    pub start_year: i32,
    pub horizon_years: u32,
    pub trees: i64,
    pub plans: i64,
    pub created_at: String,
}

/// A tree of a study, for `study show`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StudyTreeRow {
    pub tree_id: i64,
    pub uid: String,
    pub species: String,
    pub street: Option<String>,
    pub house_number: Option<String>,
    pub status: String,
    pub dbh_cm: Option<f64>,
    pub measured_on: Option<String>,
    pub selected_by: Option<String>,
    pub line_distance_m: Option<f64>,
}

/// A row of a replanting plan as stored.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PlantingRecord {
    pub plan: String,
    pub species_id: i64,
    pub species: String,
    pub count: u32,
    pub dbh_cm: f64,
    pub year: i32,
}

/// A row of a replanting plan to store.
#[derive(Debug, Clone, PartialEq)]
pub struct NewPlanting {
    pub species_id: i64,
    pub count: u32,
    pub dbh_cm: f64,
    pub year: i32,
}

/// Everything one run of a study needs, loaded in one go.
pub struct StudyRunData {
    pub record: StudyRecord,
    pub input: StudyInput,
    pub species: Vec<Species>,
    pub params: Vec<SpeciesParams>,
    pub imputer: Imputer,
    pub station: StationInfo,
    pub weather: YearWeather,
    pub weather_days_held: i64,
    pub science: ScienceSettings,
    pub settings: StudySettings,
}

fn record_from_row(row: &rusqlite::Row<'_>) -> rusqlite::Result<StudyRecord> {
    let created_at: String = row.get(10)?;
    let start: Option<i32> = row.get(7)?;
    let seed: i64 = row.get(4)?;
    Ok(StudyRecord {
        id: row.get(0)?,
        name: row.get(1)?,
        description: row.get(2)?,
        horizon_years: row.get(3)?,
        seed: seed as u64,
        runs: row.get(5)?,
        weather_year: row.get(6)?,
        start_year: start.unwrap_or_else(|| {
            created_at
                .get(0..4)
                .and_then(|y| y.parse().ok())
                .unwrap_or(2000)
        }),
        functional_limitation: row.get(8)?,
        external_limitation: row.get(9)?,
        created_at,
    })
}

const STUDY_COLUMNS: &str =
    "id, name, description, horizon_years, seed, runs, weather_year, start_year,
     functional_limitation, external_limitation, created_at";

impl Store {
    /// Creates a study; a name already used is refused.
    pub fn create_study(
        &mut self,
        study: &NewStudy,
        now: chrono::DateTime<chrono::Utc>,
        actor: &str,
    ) -> Result<i64, StoreError> {
        let seed = i64::try_from(study.seed).map_err(|_| {
            StoreError::Invalid(format!(
                "seed: {} is too large (at most {})",
                study.seed,
                i64::MAX
            ))
        })?;
        self.write(actor, |tx| {
            let exists: bool = tx
                .query_row(
                    "SELECT 1 FROM studies WHERE name = ?1",
                    [&study.name],
                    |_| Ok(true),
                )
                .optional()?
                .unwrap_or(false);
            if exists {
                return Err(StoreError::Invalid(format!(
                    "name: a study named '{}' exists already (see `streetwood study list`)",
                    study.name
                )));
            }
            tx.execute(
                "INSERT INTO studies (name, description, horizon_years, seed, runs, weather_year, start_year,
                     functional_limitation, external_limitation, created_at)
                 VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10)",
                params![
                    study.name,
                    study.description,
                    study.horizon_years,
                    seed,
                    study.runs,
                    study.weather_year,
                    study.start_year,
                    study.functional_limitation,
                    study.external_limitation,
                    super::timestamp(now),
                ],
            )?;
            Ok(tx.last_insert_rowid())
        })
    }

    /// A study by its exact name.
    pub fn study(&self, name: &str) -> Result<Option<StudyRecord>, StoreError> {
        Ok(self
            .conn
            .query_row(
                &format!("SELECT {STUDY_COLUMNS} FROM studies WHERE name = ?1"),
                [name],
                record_from_row,
            )
            .optional()?)
    }

    /// A study by name, or an error that lists the studies there are.
    pub fn require_study(&self, name: &str) -> Result<StudyRecord, StoreError> {
        if let Some(study) = self.study(name)? {
            return Ok(study);
        }
        let names: Vec<String> = self.studies()?.into_iter().map(|s| s.name).collect();
        Err(StoreError::Invalid(if names.is_empty() {
            format!("no study named '{name}'; create one with `streetwood study new {name}`")
        } else {
            format!("no study named '{name}'; studies: {}", names.join(", "))
        }))
    }

    /// Every study with its counts of trees and plans, by name.
    pub fn studies(&self) -> Result<Vec<StudyListRow>, StoreError> {
        let mut stmt = self.conn.prepare(&format!(
            "SELECT {STUDY_COLUMNS},
                    (SELECT count(*) FROM study_trees t WHERE t.study_id = s.id),
                    (SELECT count(DISTINCT plan_name) FROM study_plantings p WHERE p.study_id = s.id)
             FROM studies s ORDER BY name"
        ))?;
        let rows = stmt
            .query_map([], |row| {
                let record = record_from_row(row)?;
                Ok(StudyListRow {
                    name: record.name,
                    start_year: record.start_year,
                    horizon_years: record.horizon_years,
                    trees: row.get(11)?,
                    plans: row.get(12)?,
                    created_at: record.created_at,
                })
            })?
            .collect::<Result<Vec<_>, _>>()?;
        Ok(rows)
    }

    /// Every tree as a selection candidate (position, street, zone name, standing or not).
    pub fn study_candidates(&self) -> Result<Vec<Candidate>, StoreError> {
        let mut stmt = self.conn.prepare(
            "SELECT t.id, t.lon, t.lat, t.street, z.name, t.status
             FROM trees t LEFT JOIN zones z ON z.id = t.zone_id ORDER BY t.id",
        )?;
        let rows = stmt
            .query_map([], |row| {
                let lon: Option<f64> = row.get(1)?;
                let lat: Option<f64> = row.get(2)?;
                let status: String = row.get(5)?;
                Ok(Candidate {
                    tree_id: row.get(0)?,
                    position: lon.zip(lat),
                    street: row.get(3)?,
                    zone: row.get(4)?,
                    standing: status == "standing",
                })
            })?
            .collect::<Result<Vec<_>, _>>()?;
        Ok(rows)
    }

    /// Adds selected trees to a study in one write; trees already in it are left as they are.
    /// Returns (added, already in the study).
    pub fn add_study_trees(
        &mut self,
        study_id: i64,
        chosen: &[Selected],
        selected_by: &str,
        actor: &str,
    ) -> Result<(usize, usize), StoreError> {
        self.write(actor, |tx| {
            let mut insert = tx.prepare_cached(
                "INSERT INTO study_trees (study_id, tree_id, selected_by, line_distance_m)
                 VALUES (?1, ?2, ?3, ?4) ON CONFLICT (study_id, tree_id) DO NOTHING",
            )?;
            let mut added = 0;
            for tree in chosen {
                added += insert.execute(params![
                    study_id,
                    tree.tree_id,
                    selected_by,
                    tree.distance_m
                ])?;
            }
            Ok((added, chosen.len() - added))
        })
    }

    /// The trees of a study with their latest measurement, by tree id.
    pub fn study_tree_rows(&self, study_id: i64) -> Result<Vec<StudyTreeRow>, StoreError> {
        let mut stmt = self.conn.prepare(
            "SELECT t.id, t.uid, s.scientific_name, t.street, t.house_number, t.status,
                    (SELECT m.dbh_cm FROM measurements m WHERE m.tree_id = t.id
                      ORDER BY m.measured_on DESC, m.id DESC LIMIT 1),
                    (SELECT m.measured_on FROM measurements m WHERE m.tree_id = t.id
                      ORDER BY m.measured_on DESC, m.id DESC LIMIT 1),
                    st.selected_by, st.line_distance_m
             FROM study_trees st JOIN trees t ON t.id = st.tree_id JOIN species s ON s.id = t.species_id
             WHERE st.study_id = ?1 ORDER BY t.id",
        )?;
        let rows = stmt
            .query_map([study_id], |row| {
                Ok(StudyTreeRow {
                    tree_id: row.get(0)?,
                    uid: row.get(1)?,
                    species: row.get(2)?,
                    street: row.get(3)?,
                    house_number: row.get(4)?,
                    status: row.get(5)?,
                    dbh_cm: row.get(6)?,
                    measured_on: row.get(7)?,
                    selected_by: row.get(8)?,
                    line_distance_m: row.get(9)?,
                })
            })?
            .collect::<Result<Vec<_>, _>>()?;
        Ok(rows)
    }

    /// Adds rows to a plan of a study (or, with `replace`, makes them the plan's only rows), in one
    /// write. Returns the plan's row count afterwards.
    pub fn set_plan_rows(
        &mut self,
        study_id: i64,
        plan: &str,
        rows: &[NewPlanting],
        replace: bool,
        actor: &str,
    ) -> Result<usize, StoreError> {
        self.write(actor, |tx| {
            if replace {
                tx.execute(
                    "DELETE FROM study_plantings WHERE study_id = ?1 AND plan_name = ?2",
                    params![study_id, plan],
                )?;
            }
            let mut insert = tx.prepare_cached(
                "INSERT INTO study_plantings (study_id, plan_name, species_id, count, dbh_cm, planting_year)
                 VALUES (?1, ?2, ?3, ?4, ?5, ?6)",
            )?;
            for row in rows {
                insert.execute(params![
                    study_id,
                    plan,
                    row.species_id,
                    row.count,
                    row.dbh_cm,
                    row.year
                ])?;
            }
            let n: i64 = tx.query_row(
                "SELECT count(*) FROM study_plantings WHERE study_id = ?1 AND plan_name = ?2",
                params![study_id, plan],
                |r| r.get(0),
            )?;
            Ok(usize::try_from(n).unwrap_or(0))
        })
    }

    /// The plan rows of a study, by plan name then entry order.
    pub fn study_plantings(&self, study_id: i64) -> Result<Vec<PlantingRecord>, StoreError> {
        let mut stmt = self.conn.prepare(
            "SELECT p.plan_name, p.species_id, s.scientific_name, p.count, p.dbh_cm, p.planting_year
             FROM study_plantings p JOIN species s ON s.id = p.species_id
             WHERE p.study_id = ?1 ORDER BY p.plan_name, p.id",
        )?;
        let rows = stmt
            .query_map([study_id], |row| {
                Ok(PlantingRecord {
                    plan: row.get(0)?,
                    species_id: row.get(1)?,
                    species: row.get(2)?,
                    count: row.get(3)?,
                    dbh_cm: row.get(4)?,
                    year: row.get(5)?,
                })
            })?
            .collect::<Result<Vec<_>, _>>()?;
        Ok(rows)
    }

    /// The study settings (discount rate, survival scenario, …) from the settings table.
    pub fn study_settings(&self) -> Result<StudySettings, StoreError> {
        let pairs = self.settings()?;
        StudySettings::from_pairs(
            pairs
                .iter()
                .filter(|(k, _)| STUDY_KEYS.contains(&k.as_str()))
                .map(|(k, v)| (k.as_str(), v.as_str())),
        )
        .map_err(|e| {
            StoreError::Invalid(format!("setting {} = '{}': {}", e.key, e.value, e.reason))
        })
    }

    /// The latest year of weather held at the default station, if any.
    pub fn latest_weather_year(&self) -> Result<Option<i32>, StoreError> {
        let Some(station) = self.default_station()? else {
            return Ok(None);
        };
        Ok(self.weather_years(&station.name)?.first().map(|(y, _)| *y))
    }

    /// Loads everything a run of the named study needs.
    pub fn study_run_data(&self, name: &str) -> Result<StudyRunData, StoreError> {
        let record = self.require_study(name)?;
        let science = science_settings(self)?;
        let settings = self.study_settings()?;
        let station = self.default_station()?.ok_or_else(|| {
            StoreError::Invalid(
                "the inventory has no default weather station; import a year of daily weather with \
                 `streetwood import weather FILE --station NAME --lat DEG --elevation M` (or set \
                 default_station)"
                    .to_string(),
            )
        })?;
        let years = self.weather_years(&station.name)?;
        let weather_year = match record.weather_year {
            Some(y) => y,
            None => years.first().map(|(y, _)| *y).ok_or_else(|| {
                StoreError::Invalid(format!(
                    "station '{}' holds no weather; import a year of daily weather first",
                    station.name
                ))
            })?,
        };
        let Some(days_held) = years
            .iter()
            .find(|(y, _)| *y == weather_year)
            .map(|(_, n)| *n)
        else {
            let held: Vec<String> = years.iter().map(|(y, _)| y.to_string()).collect();
            return Err(StoreError::Invalid(format!(
                "weather year: study '{}' uses the weather of {weather_year}, which station '{}' does not hold (held: {})",
                record.name,
                station.name,
                if held.is_empty() {
                    "none".to_string()
                } else {
                    held.join(", ")
                }
            )));
        };
        let days = self.weather_year(&station.name, weather_year)?;
        let weather = YearWeather::compute(
            weather_year,
            &Station {
                lat_deg: station.lat,
                elevation_m: station.elevation_m,
                coastal: station.coastal,
            },
            &days,
            &science,
        );
        // The imputer of METHODS.md M3 from every standing tree's latest measurement, streamed (a
        // city's whole inventory is never held in memory).
        let species = self.species()?;
        let params: Vec<SpeciesParams> = species
            .iter()
            .map(species_params)
            .collect::<Result<_, _>>()
            .map_err(StoreError::Invalid)?;
        let imputer = imputer_from_samples(&self.imputer_samples(&species, 9999)?, &params);
        let index_of = |species_id: i64| species.iter().position(|s| s.id == species_id);

        let removed = self.study_removed_trees(record.id, &index_of)?;
        let mut plans: Vec<Plan> = Vec::new();
        for row in self.study_plantings(record.id)? {
            let species_index = index_of(row.species_id).ok_or_else(|| {
                StoreError::Invalid(format!(
                    "plan '{}': species id {} is not in the species list",
                    row.plan, row.species_id
                ))
            })?;
            let planting = PlantingRow {
                species_index,
                species: row.species.clone(),
                count: row.count,
                dbh_cm: row.dbh_cm,
                year: row.year,
            };
            match plans.iter_mut().find(|p| p.name == row.plan) {
                Some(plan) => plan.rows.push(planting),
                None => plans.push(Plan {
                    name: row.plan,
                    rows: vec![planting],
                }),
            }
        }
        let input = StudyInput {
            name: record.name.clone(),
            start_year: record.start_year,
            horizon_years: record.horizon_years,
            seed: record.seed,
            runs: record.runs,
            functional_limitation: record.functional_limitation,
            external_limitation: record.external_limitation,
            removed,
            plans,
        };
        Ok(StudyRunData {
            record,
            input,
            species,
            params,
            imputer,
            station,
            weather,
            weather_days_held: days_held,
            science,
            settings,
        })
    }

    /// The study's trees (any status: a study stays runnable after the removal) with their latest
    /// measurement that has a DBH.
    fn study_removed_trees(
        &self,
        study_id: i64,
        index_of: &dyn Fn(i64) -> Option<usize>,
    ) -> Result<Vec<RemovedTree>, StoreError> {
        let mut stmt = self.conn.prepare(
            "SELECT t.id, t.species_id, t.site_kind,
                    m.measured_on, m.stems_cm, m.dbh_cm, m.height_m, m.crown_width_m, m.crown_width2_m,
                    m.crown_base_m, m.dieback_pct, m.condition
             FROM study_trees st JOIN trees t ON t.id = st.tree_id
             LEFT JOIN measurements m ON m.id = (
                 SELECT m2.id FROM measurements m2 WHERE m2.tree_id = t.id
                 ORDER BY m2.measured_on DESC, m2.id DESC LIMIT 1)
             WHERE st.study_id = ?1 ORDER BY t.id",
        )?;
        let mut rows = stmt.query([study_id])?;
        let mut trees = Vec::new();
        while let Some(row) = rows.next()? {
            let tree_id: i64 = row.get(0)?;
            let species_id: i64 = row.get(1)?;
            let site: Option<String> = row.get(2)?;
            let Some(date_text) = row.get::<_, Option<String>>(3)? else {
                return Err(StoreError::Invalid(format!(
                    "tree {tree_id} has no measurement; measure it before running the study"
                )));
            };
            let measured_on = date_text.parse().map_err(|_| {
                StoreError::Invalid(format!("stored date '{date_text}' is not a date"))
            })?;
            let stems: Option<String> = row.get(4)?;
            let stems_cm = match stems {
                Some(text) => crate::io::parse_stems(&text).map_err(|reason| {
                    StoreError::Invalid(format!("stored stems '{text}': {reason}"))
                })?,
                None => vec![row.get::<_, f64>(5)?],
            };
            let condition: Option<String> = row.get(11)?;
            trees.push(RemovedTree {
                tree_id,
                species_index: index_of(species_id).ok_or_else(|| {
                    StoreError::Invalid(format!(
                        "tree {tree_id} has unknown species id {species_id}"
                    ))
                })?,
                site_kind: site.and_then(|s| SiteKind::parse(&s).ok()),
                latest: Measurement {
                    measured_on,
                    stems_cm,
                    height_m: row.get(6)?,
                    crown_width_m: row.get(7)?,
                    crown_width2_m: row.get(8)?,
                    crown_base_m: row.get(9)?,
                    dieback_pct: row.get(10)?,
                    condition: condition.as_deref().and_then(ConditionWord::parse),
                },
            });
        }
        Ok(trees)
    }
}

/// The engine's settings from the settings table (as `benefits` reads them).
fn science_settings(store: &Store) -> Result<ScienceSettings, StoreError> {
    let pairs = store.settings()?;
    ScienceSettings::from_pairs(
        pairs
            .iter()
            .filter(|(k, _)| SCIENCE_KEYS.contains(&k.as_str()))
            .map(|(k, v)| (k.as_str(), v.as_str())),
    )
    .map_err(|e| StoreError::Invalid(format!("setting {} = '{}': {}", e.key, e.value, e.reason)))
}
