//! What the benefit engine reads: standing trees with every measurement up to a year.

use rusqlite::params;

use super::{Store, StoreError};
use crate::model::{SiteKind, Species, StationInfo, TreeStatus};
use crate::science::condition::ConditionWord;
use crate::science::inventory::{
    BenefitRow, InventoryTree, benefit_row, imputer_from_samples, imputer_sample, species_params,
};
use crate::science::money::Prices;
use crate::science::settings::{KEYS, ScienceSettings};
use crate::science::tree_year::YearContext;
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
        let mut trees = Vec::new();
        self.for_each_standing_tree(year, &species, |tree| {
            trees.push(tree);
            Ok::<(), StoreError>(())
        })?;
        Ok((species, trees))
    }

    /// Streams every standing tree that has a measurement dated on or before 31 December of `year`,
    /// with those measurements, in tree id order (one ordered scan; nothing is held but the current
    /// tree). `species_index` points into `species`.
    pub fn for_each_standing_tree<E: From<StoreError>>(
        &self,
        year: i32,
        species: &[Species],
        mut visit: impl FnMut(InventoryTree) -> Result<(), E>,
    ) -> Result<(), E> {
        let index_of: std::collections::HashMap<i64, usize> =
            species.iter().enumerate().map(|(i, s)| (s.id, i)).collect();
        let mut stmt = self
            .conn
            .prepare(
                "SELECT t.id, t.uid, t.species_id, t.site_kind, t.street, z.name,
                        m.measured_on, m.stems_cm, m.dbh_cm, m.height_m, m.crown_width_m, m.crown_width2_m,
                        m.crown_base_m, m.dieback_pct, m.condition
                 FROM trees t
                 JOIN measurements m ON m.tree_id = t.id AND m.measured_on <= ?1
                 LEFT JOIN zones z ON z.id = t.zone_id
                 WHERE t.status = 'standing'
                 ORDER BY t.id, m.measured_on, m.id",
            )
            .map_err(StoreError::from)?;
        let mut rows = stmt
            .query(params![format!("{year:04}-12-31")])
            .map_err(StoreError::from)?;
        let mut current: Option<InventoryTree> = None;
        while let Some(row) = rows.next().map_err(StoreError::from)? {
            let tree_id: i64 = row.get(0).map_err(StoreError::from)?;
            if current.as_ref().is_some_and(|t| t.tree_id != tree_id)
                && let Some(done) = current.take()
            {
                visit(done)?;
            }
            if current.is_none() {
                let species_id: i64 = row.get(2).map_err(StoreError::from)?;
                let site: Option<String> = row.get(3).map_err(StoreError::from)?;
                current = Some(InventoryTree {
                    tree_id,
                    uid: row.get(1).map_err(StoreError::from)?,
                    species_index: *index_of.get(&species_id).ok_or_else(|| {
                        StoreError::Invalid(format!(
                            "tree {tree_id} has an unknown species id {species_id}"
                        ))
                    })?,
                    site_kind: site.and_then(|s| SiteKind::parse(&s).ok()),
                    status: TreeStatus::Standing,
                    street: row.get(4).map_err(StoreError::from)?,
                    zone: row.get(5).map_err(StoreError::from)?,
                    measurements: Vec::new(),
                });
            }
            let measurement = measurement_from_row(row).map_err(E::from)?;
            if let Some(tree) = current.as_mut() {
                tree.measurements.push(measurement);
            }
        }
        if let Some(done) = current {
            visit(done)?;
        }
        Ok(())
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

fn measurement_from_row(row: &rusqlite::Row<'_>) -> Result<Measurement, StoreError> {
    let date_text: String = row.get(6)?;
    let measured_on = date_text
        .parse()
        .map_err(|_| StoreError::Invalid(format!("stored date '{date_text}' is not a date")))?;
    let stems: Option<String> = row.get(7)?;
    let stems_cm = match stems {
        Some(text) => crate::io::parse_stems(&text)
            .map_err(|reason| StoreError::Invalid(format!("stored stems '{text}': {reason}")))?,
        None => vec![row.get::<_, f64>(8)?],
    };
    let condition: Option<String> = row.get(14)?;
    Ok(Measurement {
        measured_on,
        stems_cm,
        height_m: row.get(9)?,
        crown_width_m: row.get(10)?,
        crown_width2_m: row.get(11)?,
        crown_base_m: row.get(12)?,
        dieback_pct: row.get(13)?,
        condition: condition.as_deref().and_then(ConditionWord::parse),
    })
}

/// A year's weather, settings, prices and species: everything but the trees' rows.
pub struct YearSetup {
    pub year: i32,
    pub station: StationInfo,
    pub settings: ScienceSettings,
    pub prices: Prices,
    pub weather: YearWeather,
    pub days_held: i64,
    pub species: Vec<Species>,
    pub params: Vec<SpeciesParams>,
}

impl YearSetup {
    /// One line stating the year, station and prices behind the value column.
    pub fn basis_line(&self) -> String {
        basis_line(self.year, &self.station, self.days_held, &self.prices)
    }
}

fn basis_line(year: i32, station: &StationInfo, days_held: i64, p: &Prices) -> String {
    format!(
        "year {}, weather of station '{}' ({} days held); value = the year's flows at {} {:.2}/t CO2e, {:.2}/m³ stormwater, {:.2}/kWh electricity × cooling share {} (COP {})",
        year,
        station.name,
        days_held,
        p.currency,
        p.co2_per_t,
        p.water_per_m3,
        p.electricity_per_kwh,
        p.cooling_value_share,
        p.cop
    )
}

impl Store {
    /// Streams every standing tree's benefit row of the setup's year, in tree id order: one scan
    /// builds the imputer from each tree's latest measurement (M3), a second computes the rows
    /// (M13). Memory stays small however large the inventory. Returns the number of standing trees
    /// (with or without a measurement up to the year).
    pub fn for_each_benefit<E: From<StoreError>>(
        &self,
        setup: &YearSetup,
        mut visit: impl FnMut(BenefitRow) -> Result<(), E>,
    ) -> Result<usize, E> {
        let mut samples = Vec::new();
        self.for_each_standing_tree(setup.year, &setup.species, |tree| {
            if let Some(sample) = imputer_sample(&tree, setup.year) {
                samples.push(sample);
            }
            Ok::<(), E>(())
        })?;
        let imputer = imputer_from_samples(&samples, &setup.params);
        drop(samples);
        let ctx = YearContext::new(&imputer, &setup.weather, &setup.settings);
        self.for_each_standing_tree(setup.year, &setup.species, |tree| {
            match benefit_row(&tree, &setup.params, &ctx) {
                Some(row) => visit(row),
                None => Ok(()),
            }
        })?;
        let standing: i64 = self
            .conn
            .query_row(
                "SELECT count(*) FROM trees WHERE status = 'standing'",
                [],
                |r| r.get(0),
            )
            .map_err(StoreError::from)?;
        Ok(standing as usize)
    }
}

impl YearRun {
    /// One line stating the year, station and prices behind the value column.
    pub fn basis_line(&self) -> String {
        basis_line(self.year, &self.station, self.days_held, &self.prices)
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
    let setup = year_setup(store, year)?;
    let mut rows = Vec::new();
    let standing_trees = store.for_each_benefit(&setup, |row| {
        rows.push(row);
        Ok::<(), StoreError>(())
    })?;
    let YearSetup {
        year,
        station,
        settings,
        prices,
        weather,
        days_held,
        ..
    } = setup;
    Ok(YearRun {
        year,
        station,
        settings,
        prices,
        weather,
        days_held,
        rows,
        standing_trees,
    })
}

impl Store {
    /// The year's weather (default: the latest year held at the default station), settings, prices and
    /// species, ready for [`Store::for_each_benefit`].
    pub fn year_setup(&self, year: Option<i32>) -> Result<YearSetup, StoreError> {
        year_setup(self, year)
    }
}

fn year_setup(store: &Store, year: Option<i32>) -> Result<YearSetup, StoreError> {
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
    let species = store.species()?;
    let params: Vec<SpeciesParams> = species
        .iter()
        .map(species_params)
        .collect::<Result<_, _>>()
        .map_err(StoreError::Invalid)?;
    let prices = Prices::for_year(&settings, year);
    Ok(YearSetup {
        year,
        station,
        settings,
        prices,
        weather,
        days_held,
        species,
        params,
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
