//! What the benefit engine reads: standing trees with every measurement up to a year.

use rusqlite::params;

use super::{Store, StoreError};
use crate::model::{SiteKind, Species, StationInfo, TreeStatus};
use crate::science::condition::ConditionWord;
use crate::science::dimensions::mean_crown_width_m;
use crate::science::inventory::{
    BenefitRow, ImputerSample, InventoryTree, imputer_from_samples, row_from, species_params,
    tree_benefits,
};
use crate::science::money::Prices;
use crate::science::settings::{KEYS, ScienceSettings};
use crate::science::tree_year::YearContext;
use crate::science::tree_year::{Measurement, SpeciesParams, equivalent_dbh_cm};
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
                let site = text_ref(row, 3).map_err(StoreError::from)?;
                current = Some(InventoryTree {
                    tree_id,
                    uid: row.get(1).map_err(StoreError::from)?,
                    species_index: *index_of.get(&species_id).ok_or_else(|| {
                        StoreError::Invalid(format!(
                            "tree {tree_id} has an unknown species id {species_id}"
                        ))
                    })?,
                    site_kind: site.and_then(|s| SiteKind::parse(s).ok()),
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

/// A text column read in place (no copy); `None` for NULL. Other types are refused as `row.get` would.
fn text_ref<'r>(row: &'r rusqlite::Row<'_>, index: usize) -> rusqlite::Result<Option<&'r str>> {
    row.get_ref(index)?.as_str_or_null().map_err(|e| {
        rusqlite::Error::FromSqlConversionFailure(index, rusqlite::types::Type::Text, e.into())
    })
}

/// A stored ISO date: `YYYY-MM-DD` read directly (what the store writes), anything else through
/// chrono's parser; the same date either way.
fn stored_date(text: &str) -> Result<chrono::NaiveDate, StoreError> {
    let fast = match text.as_bytes() {
        [y0, y1, y2, y3, b'-', m0, m1, b'-', d0, d1]
            if [y0, y1, y2, y3, m0, m1, d0, d1]
                .iter()
                .all(|b| b.is_ascii_digit()) =>
        {
            let n = |digits: &[&u8]| {
                digits
                    .iter()
                    .fold(0u32, |v, d| v * 10 + u32::from(**d - b'0'))
            };
            chrono::NaiveDate::from_ymd_opt(n(&[y0, y1, y2, y3]) as i32, n(&[m0, m1]), n(&[d0, d1]))
        }
        _ => None,
    };
    match fast {
        Some(date) => Ok(date),
        None => text
            .parse()
            .map_err(|_| StoreError::Invalid(format!("stored date '{text}' is not a date"))),
    }
}

/// The stems of a stored measurement: the `stems_cm` list, or the single `dbh_cm` (columns `stems`
/// and `dbh`).
fn stored_stems(row: &rusqlite::Row<'_>, stems: usize, dbh: usize) -> Result<Vec<f64>, StoreError> {
    Ok(match text_ref(row, stems)? {
        Some(text) => crate::io::parse_stems(text)
            .map_err(|reason| StoreError::Invalid(format!("stored stems '{text}': {reason}")))?,
        None => vec![row.get::<_, f64>(dbh)?],
    })
}

fn measurement_from_row(row: &rusqlite::Row<'_>) -> Result<Measurement, StoreError> {
    let measured_on = match text_ref(row, 6)? {
        Some(text) => stored_date(text)?,
        None => {
            return Err(StoreError::Invalid(
                "a stored measurement has no date".to_string(),
            ));
        }
    };
    Ok(Measurement {
        measured_on,
        stems_cm: stored_stems(row, 7, 8)?,
        height_m: row.get(9)?,
        crown_width_m: row.get(10)?,
        crown_width2_m: row.get(11)?,
        crown_base_m: row.get(12)?,
        dieback_pct: row.get(13)?,
        condition: text_ref(row, 14)?.and_then(ConditionWord::parse),
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

/// Trees per batch of the parallel engine: read on the calling thread, computed on the pool, handed
/// to the caller in order. About 4,096 × (tree + row) ≈ a few MB per batch; at most one batch per pool
/// thread is in flight, plus the one being read and the one being handed over.
pub const BATCH_TREES: usize = 4096;

/// The environment variable that sets the engine's threads: unset, empty or `1` computes on the
/// calling thread only (the default: on a 2-core machine the computation is small next to the SQLite
/// reads and handing batches to other threads cost more than it saved, DEVELOPERS.md "The benefit
/// engine at city scale"); `0` one thread per core (rayon's default, which `RAYON_NUM_THREADS` also
/// sets); `N` a pool of N threads.
pub const THREADS_ENV: &str = "STREETWOOD_THREADS";

/// How [`Store::for_each_benefit_with`] spreads the per-tree computation. Every choice gives the same
/// rows, in the same order, to the last bit: each tree's row is a pure function of the tree and the
/// year's shared context, and the caller receives (and sums) the rows serially in tree id order.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Parallelism {
    /// Everything on the calling thread.
    Serial,
    /// rayon's global pool (one thread per core).
    AllCores,
    /// A pool of this many threads (2 or more).
    Threads(usize),
}

impl Parallelism {
    /// From [`THREADS_ENV`] (unset: [`Parallelism::Serial`]).
    pub fn from_env() -> Result<Self, StoreError> {
        match std::env::var(THREADS_ENV) {
            Ok(text) => Self::parse(&text),
            Err(std::env::VarError::NotPresent) => Ok(Parallelism::Serial),
            Err(std::env::VarError::NotUnicode(_)) => Err(StoreError::Invalid(format!(
                "{THREADS_ENV} is not text; give a number of threads (1 = no parallelism, 0 = one per core)"
            ))),
        }
    }

    /// `1` or empty → serial, `0` → all cores, `N` → N threads.
    pub fn parse(text: &str) -> Result<Self, StoreError> {
        let text = text.trim();
        if text.is_empty() {
            return Ok(Parallelism::Serial);
        }
        match text.parse::<usize>() {
            Ok(0) => Ok(Parallelism::AllCores),
            Ok(1) => Ok(Parallelism::Serial),
            Ok(n) => Ok(Parallelism::Threads(n)),
            Err(_) => Err(StoreError::Invalid(format!(
                "{THREADS_ENV} = '{text}': give a number of threads (1 = no parallelism, 0 = one per core)"
            ))),
        }
    }
}

impl Store {
    /// Streams every standing tree's benefit row of the setup's year, in tree id order: one scan
    /// builds the imputer from each tree's latest measurement (M3), a second computes the rows
    /// (M13). Memory stays small however large the inventory. Returns the number of standing trees
    /// (with or without a measurement up to the year). Threads as [`THREADS_ENV`] says (default: the
    /// calling thread only); the rows are the same whatever it says.
    pub fn for_each_benefit<E: From<StoreError>>(
        &self,
        setup: &YearSetup,
        visit: impl FnMut(BenefitRow) -> Result<(), E>,
    ) -> Result<usize, E> {
        let parallelism = Parallelism::from_env()?;
        self.for_each_benefit_with(setup, parallelism, visit)
    }

    /// [`Store::for_each_benefit`] with the threads chosen by the caller. The SQLite reads and every
    /// call of `visit` stay on the calling thread; with parallelism, trees are read in batches of
    /// [`BATCH_TREES`] and a batch's rows are computed on the pool while the next batch is read and
    /// the previous one handed to `visit`.
    pub fn for_each_benefit_with<E: From<StoreError>>(
        &self,
        setup: &YearSetup,
        parallelism: Parallelism,
        visit: impl FnMut(BenefitRow) -> Result<(), E>,
    ) -> Result<usize, E> {
        self.for_each_benefit_mapped(setup, parallelism, |row| row, visit)
    }

    /// [`Store::for_each_benefit_with`], with `map` applied to each row on the pool beside its
    /// computation (for instance turning it into output cells), and `visit` given the results serially
    /// in tree id order. `map` must be a pure function of the row for the output not to depend on the
    /// threads.
    pub fn for_each_benefit_mapped<T: Send, E: From<StoreError>>(
        &self,
        setup: &YearSetup,
        parallelism: Parallelism,
        map: impl Fn(BenefitRow) -> T + Sync,
        mut visit: impl FnMut(T) -> Result<(), E>,
    ) -> Result<usize, E> {
        let samples = self.imputer_samples(&setup.species, setup.year)?;
        let imputer = imputer_from_samples(&samples, &setup.params);
        drop(samples);
        let ctx = YearContext::new(&imputer, &setup.weather, &setup.settings);
        // A tree's item, and its measurements handed back so that they are freed on the thread that
        // read them (freeing on the pool's threads cost more in the allocator than the computation).
        let item_of = |mut tree: InventoryTree| {
            let item = tree_benefits(&tree, &setup.params, &ctx).map(|(params, benefits)| {
                let measurements = std::mem::take(&mut tree.measurements);
                (map(row_from(tree, params, benefits)), measurements)
            });
            match item {
                Some((item, measurements)) => (Some(item), measurements),
                None => (None, Vec::new()),
            }
        };
        match parallelism {
            Parallelism::Serial => {
                self.for_each_standing_tree(setup.year, &setup.species, |tree| {
                    match item_of(tree).0 {
                        Some(item) => visit(item),
                        None => Ok(()),
                    }
                })?;
            }
            Parallelism::AllCores => {
                let lanes = rayon::current_num_threads();
                rayon::in_place_scope(|scope| {
                    self.pipeline(setup, scope, lanes, &item_of, &mut visit)
                })?;
            }
            Parallelism::Threads(n) => {
                let pool = rayon::ThreadPoolBuilder::new()
                    .num_threads(n)
                    .build()
                    .map_err(|e| {
                        StoreError::Invalid(format!("could not start {n} threads: {e}"))
                    })?;
                pool.in_place_scope(|scope| self.pipeline(setup, scope, n, &item_of, &mut visit))?;
            }
        }
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

    /// The batched pipeline of [`Store::for_each_benefit_with`]: each batch is one task of `scope`
    /// (its trees in input order), up to `lanes` batches computing at once on the pool's threads, while
    /// this thread reads the next batch and hands the oldest finished one to `visit`. One task per
    /// batch rather than a `par_iter` over its trees: the computation is small next to the reads, and
    /// splitting a batch across threads cost more CPU than it saved (measured on 2 cores).
    fn pipeline<'scope, T, E, R>(
        &self,
        setup: &YearSetup,
        scope: &rayon::Scope<'scope>,
        lanes: usize,
        item_of: &'scope R,
        visit: &mut impl FnMut(T) -> Result<(), E>,
    ) -> Result<(), E>
    where
        T: Send + 'scope,
        E: From<StoreError>,
        R: Fn(InventoryTree) -> (Option<T>, Vec<Measurement>) + Sync,
    {
        use std::collections::VecDeque;
        use std::sync::mpsc::{Receiver, sync_channel};

        type Done<T> = Vec<(Option<T>, Vec<Measurement>)>;
        let mut in_flight: VecDeque<Receiver<Done<T>>> = VecDeque::new();
        let mut deliver = |batch: Receiver<Done<T>>| -> Result<(), E> {
            let items = batch.recv().map_err(|_| {
                StoreError::Invalid("a thread computing benefits stopped".to_string())
            })?;
            for (item, spent) in items {
                drop(spent);
                if let Some(item) = item {
                    visit(item)?;
                }
            }
            Ok(())
        };
        let spawn = |trees: Vec<InventoryTree>| {
            let (done, result) = sync_channel(1);
            scope.spawn(move |_| {
                let items: Done<T> = trees.into_iter().map(item_of).collect();
                // The receiver is gone only when the caller stopped on an error.
                let _ = done.send(items);
            });
            result
        };
        let mut batch = Vec::with_capacity(BATCH_TREES);
        self.for_each_standing_tree(setup.year, &setup.species, |tree| {
            batch.push(tree);
            if batch.len() == BATCH_TREES {
                let full = std::mem::replace(&mut batch, Vec::with_capacity(BATCH_TREES));
                in_flight.push_back(spawn(full));
                if in_flight.len() > lanes.max(1)
                    && let Some(previous) = in_flight.pop_front()
                {
                    deliver(previous)?;
                }
            }
            Ok::<(), E>(())
        })?;
        if !batch.is_empty() {
            in_flight.push_back(spawn(batch));
        }
        while let Some(next) = in_flight.pop_front() {
            deliver(next)?;
        }
        Ok(())
    }

    /// What every standing tree adds to the imputer (M3): its latest measurement dated in or before
    /// the year with a usable DBH, read by a scan of only the columns the imputer needs. The same
    /// samples as [`crate::science::inventory::imputer_sample`] of each streamed tree: rows come in
    /// (measured_on, id) order, so the last usable row of a tree is the latest (ties: the last).
    /// The imputer sample (METHODS.md M3) of every standing tree's latest measurement dated in or
    /// before `year`, in one ordered scan that holds only the samples (a few words per tree).
    pub(crate) fn imputer_samples(
        &self,
        species: &[Species],
        year: i32,
    ) -> Result<Vec<ImputerSample>, StoreError> {
        let index_of: std::collections::HashMap<i64, usize> =
            species.iter().enumerate().map(|(i, s)| (s.id, i)).collect();
        let mut stmt = self.conn.prepare(
            "SELECT t.id, t.species_id, m.stems_cm, m.dbh_cm, m.height_m, m.crown_width_m,
                    m.crown_width2_m
             FROM trees t
             JOIN measurements m ON m.tree_id = t.id AND m.measured_on <= ?1
             WHERE t.status = 'standing'
             ORDER BY t.id, m.measured_on, m.id",
        )?;
        let mut rows = stmt.query(params![format!("{year:04}-12-31")])?;
        let mut samples = Vec::new();
        let mut current: Option<(i64, Option<ImputerSample>)> = None;
        while let Some(row) = rows.next()? {
            let tree_id: i64 = row.get(0)?;
            if current.as_ref().is_some_and(|(id, _)| *id != tree_id)
                && let Some((_, Some(sample))) = current.take()
            {
                samples.push(sample);
            }
            if current.as_ref().is_none_or(|(id, _)| *id != tree_id) {
                current = Some((tree_id, None));
            }
            let dbh_cm = equivalent_dbh_cm(&stored_stems(row, 2, 3)?);
            if dbh_cm > 0.0 {
                let species_id: i64 = row.get(1)?;
                let species_index = *index_of.get(&species_id).ok_or_else(|| {
                    StoreError::Invalid(format!(
                        "tree {tree_id} has an unknown species id {species_id}"
                    ))
                })?;
                let sample = ImputerSample {
                    species_index,
                    dbh_cm,
                    height_m: row.get(4)?,
                    crown_width_m: mean_crown_width_m(row.get(5)?, row.get(6)?),
                };
                if let Some((_, slot)) = current.as_mut() {
                    *slot = Some(sample);
                }
            }
        }
        if let Some((_, Some(sample))) = current {
            samples.push(sample);
        }
        Ok(samples)
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
