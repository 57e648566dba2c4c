//! What the benefit engine reads: standing trees with every measurement up to a year.

use rusqlite::params;

use super::{Store, StoreError};
use crate::model::{SiteKind, Species, StationInfo, TreeStatus};
use crate::science::condition::ConditionWord;
use crate::science::inventory::{BenefitRow, InventoryTree, compute_year, species_params};
use crate::science::money::Prices;
use crate::science::settings::{KEYS, ScienceSettings};
use crate::science::tree_year::{Measurement, SpeciesParams};
use crate::science::weather::{Station, YearWeather};

impl Store {
    /// The species list and every standing tree with its measurements dated on or before 31 December
    /// of `year`, in tree id order. `species_index` of each tree points into the returned list.
    pub fn inventory_for_year(
        &self,
        year: i32,
    ) -> Result<(Vec<Species>, Vec<InventoryTree>), StoreError> {
        let species = self.species()?;
        let index_of = |species_id: i64| species.iter().position(|s| s.id == species_id);
        let mut trees: Vec<InventoryTree> = Vec::new();
        let mut tree_stmt = self.conn.prepare(
            "SELECT t.id, t.uid, t.species_id, t.site_kind, t.street, z.name
             FROM trees t LEFT JOIN zones z ON z.id = t.zone_id
             WHERE t.status = 'standing' ORDER BY t.id",
        )?;
        let mut rows = tree_stmt.query([])?;
        while let Some(row) = rows.next()? {
            let species_id: i64 = row.get(2)?;
            let site: Option<String> = row.get(3)?;
            trees.push(InventoryTree {
                tree_id: row.get(0)?,
                uid: row.get(1)?,
                species_index: index_of(species_id).ok_or_else(|| {
                    StoreError::Invalid(format!("tree with unknown species id {species_id}"))
                })?,
                site_kind: site.and_then(|s| SiteKind::parse(&s).ok()),
                status: TreeStatus::Standing,
                street: row.get(4)?,
                zone: row.get(5)?,
                measurements: Vec::new(),
            });
        }
        let mut measurement_stmt = self.conn.prepare(
            "SELECT m.tree_id, m.measured_on, m.stems_cm, m.dbh_cm, m.height_m, m.crown_width_m, m.crown_width2_m,
                    m.crown_base_m, m.dieback_pct, m.condition
             FROM measurements m JOIN trees t ON t.id = m.tree_id
             WHERE t.status = 'standing' AND m.measured_on <= ?1
             ORDER BY m.tree_id, m.measured_on, m.id",
        )?;
        let mut rows = measurement_stmt.query(params![format!("{year:04}-12-31")])?;
        let mut cursor = 0usize;
        while let Some(row) = rows.next()? {
            let tree_id: i64 = row.get(0)?;
            while cursor < trees.len() && trees[cursor].tree_id < tree_id {
                cursor += 1;
            }
            let Some(tree) = trees.get_mut(cursor).filter(|t| t.tree_id == tree_id) else {
                continue;
            };
            let date_text: String = row.get(1)?;
            let measured_on = date_text.parse().map_err(|_| {
                StoreError::Invalid(format!("stored date '{date_text}' is not a date"))
            })?;
            let stems: Option<String> = row.get(2)?;
            let stems_cm = match stems {
                Some(text) => crate::io::parse_stems(&text).map_err(|reason| {
                    StoreError::Invalid(format!("stored stems '{text}': {reason}"))
                })?,
                None => vec![row.get::<_, f64>(3)?],
            };
            let condition: Option<String> = row.get(9)?;
            tree.measurements.push(Measurement {
                measured_on,
                stems_cm,
                height_m: row.get(4)?,
                crown_width_m: row.get(5)?,
                crown_width2_m: row.get(6)?,
                crown_base_m: row.get(7)?,
                dieback_pct: row.get(8)?,
                condition: condition.as_deref().and_then(ConditionWord::parse),
            });
        }
        Ok((species, trees))
    }

    /// A tree's id from an id number or a uid (or a unique uid prefix of at least 6 characters).
    pub fn find_tree(&self, reference: &str) -> Result<Option<i64>, StoreError> {
        let reference = reference.trim();
        if let Ok(id) = reference.parse::<i64>()
            && let Some(found) = self
                .conn
                .query_row("SELECT id FROM trees WHERE id = ?1", [id], |r| r.get(0))
                .ok()
        {
            return Ok(Some(found));
        }
        if let Some(id) = self.tree_id_by_uid(reference)? {
            return Ok(Some(id));
        }
        if reference.len() >= 6 {
            let mut stmt = self
                .conn
                .prepare("SELECT id FROM trees WHERE uid LIKE ?1 || '%' ESCAPE '\\' LIMIT 2")?;
            let escaped = reference
                .replace('\\', "\\\\")
                .replace('%', "\\%")
                .replace('_', "\\_");
            let ids = stmt
                .query_map([escaped], |r| r.get::<_, i64>(0))?
                .collect::<Result<Vec<_>, _>>()?;
            if ids.len() == 1 {
                return Ok(ids.first().copied());
            }
        }
        Ok(None)
    }
}

/// Everything one year's computation needs, loaded from the store.
pub struct YearRun {
    pub year: i32,
    pub station: StationInfo,
    pub settings: ScienceSettings,
    pub prices: Prices,
    pub weather: YearWeather,
    pub days_held: i64,
    pub rows: Vec<BenefitRow>,
    /// Standing trees, with or without a measurement up to the year.
    pub standing_trees: usize,
}

impl YearRun {
    /// One line stating the year, station and prices behind the value column.
    pub fn basis_line(&self) -> String {
        let p = &self.prices;
        format!(
            "year {}, weather of station '{}' ({} days held); value = the year's flows at {} {:.2}/t CO2e, {:.2}/m³ stormwater, {:.2}/kWh electricity × cooling share {} (COP {})",
            self.year,
            self.station.name,
            self.days_held,
            p.currency,
            p.co2_per_t,
            p.water_per_m3,
            p.electricity_per_kwh,
            p.cooling_value_share,
            p.cop
        )
    }
}

/// The engine's settings from the inventory's settings table.
fn science_settings(store: &Store) -> Result<ScienceSettings, StoreError> {
    let pairs = store.settings()?;
    ScienceSettings::from_pairs(
        pairs
            .iter()
            .filter(|(k, _)| KEYS.contains(&k.as_str()))
            .map(|(k, v)| (k.as_str(), v.as_str())),
    )
    .map_err(|e| StoreError::Invalid(format!("setting {} = '{}': {}", e.key, e.value, e.reason)))
}

impl Store {
    /// Loads the year's weather (default: the latest year held at the default station) and every
    /// standing tree, and computes the benefits of each (METHODS.md M13).
    pub fn year_benefits(&self, year: Option<i32>) -> Result<YearRun, StoreError> {
        run_year(self, year)
    }
}

fn run_year(store: &Store, year: Option<i32>) -> Result<YearRun, StoreError> {
    let station = pick_station(store)?;
    let years = store.weather_years(&station.name)?;
    let year = match year {
        Some(y) => y,
        None => years.first().map(|(y, _)| *y).ok_or_else(|| {
            StoreError::Invalid(format!(
                "station '{}' holds no weather; import a year with `streetwood import weather FILE --station \"{}\" --lat {} --elevation {}`",
                station.name, station.name, station.lat, station.elevation_m
            ))
        })?,
    };
    let Some(days_held) = years.iter().find(|(y, _)| *y == year).map(|(_, n)| *n) else {
        return Err(StoreError::Invalid(format!(
            "no weather for {year} at station '{}'; weather held: {}",
            station.name,
            weather_held(store)?
        )));
    };
    let days = store.weather_year(&station.name, year)?;
    let settings = science_settings(store)?;
    let science_station = Station {
        lat_deg: station.lat,
        elevation_m: station.elevation_m,
        coastal: station.coastal,
    };
    let weather = YearWeather::compute(year, &science_station, &days, &settings);
    let (species, trees) = store.inventory_for_year(year)?;
    let params: Vec<SpeciesParams> = species
        .iter()
        .map(species_params)
        .collect::<Result<_, _>>()
        .map_err(StoreError::Invalid)?;
    let rows = compute_year(&trees, &params, &weather, &settings);
    let prices = Prices::for_year(&settings, year);
    Ok(YearRun {
        year,
        station,
        settings,
        prices,
        weather,
        days_held,
        rows,
        standing_trees: trees.len(),
    })
}

fn pick_station(store: &Store) -> Result<StationInfo, StoreError> {
    if let Some(station) = store.default_station()? {
        return Ok(station);
    }
    let stations = store.stations()?;
    let wanted = store.setting("default_station")?.unwrap_or_default();
    Err(StoreError::Invalid(if stations.is_empty() {
        "the inventory holds no weather; import a year of daily weather with `streetwood import weather FILE --station NAME --lat DEG --elevation M`".to_string()
    } else if !wanted.trim().is_empty() {
        format!(
            "the default_station setting names '{wanted}', which is not held; stations: {}",
            stations
                .iter()
                .map(|s| s.name.as_str())
                .collect::<Vec<_>>()
                .join(", ")
        )
    } else {
        format!(
            "several weather stations are held ({}); choose one with `streetwood settings set default_station NAME`",
            stations
                .iter()
                .map(|s| s.name.as_str())
                .collect::<Vec<_>>()
                .join(", ")
        )
    }))
}

fn weather_held(store: &Store) -> Result<String, StoreError> {
    let mut parts = Vec::new();
    for station in store.stations()? {
        let years: Vec<String> = store
            .weather_years(&station.name)?
            .iter()
            .map(|(y, n)| format!("{y} ({n} days)"))
            .collect();
        parts.push(format!(
            "'{}': {}",
            station.name,
            if years.is_empty() {
                "none".to_string()
            } else {
                years.join(", ")
            }
        ));
    }
    Ok(if parts.is_empty() {
        "none".to_string()
    } else {
        parts.join("; ")
    })
}
