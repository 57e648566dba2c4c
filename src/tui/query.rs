//! The facade between the TUI and the store: everything views read, as domain structs, and the few
//! writes the field work needs. No SQL here; `tui/` never reaches the store any other way.

use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::sync::mpsc::{Receiver, TryRecvError, channel};

use chrono::{DateTime, NaiveDate, Utc};

use super::views::roster::{SortOrders, all_sort_orders};
use crate::care::assessment::Assessment;
use crate::care::queue::{WatchItem, WorkItem};
use crate::care::risk::RiskRating;
use crate::care::work::{NewWorkOrder, WorkChange};
use crate::io::year_report::{ReportInputs, build as build_year_report};
use crate::model::{Species, TreeRecord, TreeSummary};
use crate::science::inventory::BenefitRow;
use crate::spatial::ZoneIndex;
use crate::store::benefits::YearRun;
use crate::store::care::{RecordedAssessment, WorkOutcome};
use crate::store::roster::{RosterIndexData, TreeDetail};
use crate::store::studies::StudyListRow;
use crate::store::tree_edit::{TreeEditOutcome, TreeEditText};
use crate::store::trees::TreeImportRow;
use crate::store::{Store, StoreError};
use crate::study::{Mode, StudyEnv, StudyOutcome, run_study};

/// One tree's benefits for the card, with the line that states year and prices.
#[derive(Debug, Clone)]
pub struct CardBenefits {
    pub row: BenefitRow,
    pub basis: String,
    pub currency: String,
}

/// The TUI's door to the inventory.
pub struct Query<'a> {
    store: &'a mut Store,
    /// Benefits of every standing tree for the latest weather year, computed on first use and dropped
    /// after every write (or the reason they cannot be computed).
    benefits: Option<YearResult>,
    /// The year's benefits being computed on another thread (over its own read connection).
    pending: Option<Receiver<YearResult>>,
    /// Benefits of other weather years asked for by the year summary.
    other_years: Vec<(i32, YearResult)>,
    other_pending: Vec<(i32, Receiver<YearResult>)>,
    /// Study runs, by study name and mode.
    studies: Vec<(StudyKey, StudyResult)>,
    studies_pending: Vec<(StudyKey, Receiver<StudyResult>)>,
    /// Counts the writes that dropped computed results (views holding older results ask again).
    generation: u64,
    /// The roster index loading off the UI thread at start, or already loaded (in memory).
    roster_pending: Option<Receiver<Result<(RosterIndexData, SortOrders), String>>>,
    roster_ready: Option<Result<(RosterIndexData, SortOrders), String>>,
}

/// Which run of a study.
type StudyKey = (String, Mode);

/// A computed year, or why it could not be computed.
pub type YearResult = Result<Arc<YearRun>, String>;

/// A study run, or why it could not run.
pub type StudyResult = Result<Arc<StudyRun>, String>;

/// A study run for the studies view: the outcome and the line stating how it was computed.
#[derive(Debug, Clone)]
pub struct StudyRun {
    pub outcome: StudyOutcome,
    /// Mode, survival, weather and discounting, in one line.
    pub basis: String,
}

/// Shown while the year's benefits are being computed.
pub const COMPUTING: &str = "computing this year's benefits for the whole inventory…";

/// Runs `work` over a store: at once when the store is in memory (tests), else on another thread over
/// its own read-only connection (WAL lets it read while the UI writes).
fn spawn_read<T: Send + 'static>(
    store: &Store,
    work: impl FnOnce(&Store) -> Result<T, String> + Send + 'static,
) -> Result<Receiver<Result<T, String>>, Result<T, String>> {
    let Some(path) = store.path().map(PathBuf::from) else {
        return Err(work(store));
    };
    let (sender, receiver) = channel();
    std::thread::spawn(move || {
        let result = Store::open_existing(&path)
            .map_err(|e| e.to_string())
            .and_then(|store| work(&store));
        // The UI may have gone; nothing to do then.
        let _ = sender.send(result);
    });
    Ok(receiver)
}

/// A finished background result, if any (a thread that vanished becomes an error).
fn try_take<T>(receiver: &Receiver<Result<T, String>>, what: &str) -> Option<Result<T, String>> {
    match receiver.try_recv() {
        Ok(result) => Some(result),
        Err(TryRecvError::Empty) => None,
        Err(TryRecvError::Disconnected) => Some(Err(format!("{what} stopped unexpectedly"))),
    }
}

impl<'a> Query<'a> {
    /// Wraps an open store.
    pub fn new(store: &'a mut Store) -> Self {
        Query {
            store,
            benefits: None,
            pending: None,
            other_years: Vec::new(),
            other_pending: Vec::new(),
            studies: Vec::new(),
            studies_pending: Vec::new(),
            generation: 0,
            roster_pending: None,
            roster_ready: None,
        }
    }

    /// Starts loading the roster index off the UI thread (a million trees take about a second), so
    /// the first frame comes at once. In memory it loads at once.
    pub fn start_roster_index(&mut self) {
        match spawn_read(self.store, |store| {
            let index = store.roster_index().map_err(|e| e.to_string())?;
            let orders = all_sort_orders(&index.entries);
            Ok((index, orders))
        }) {
            Ok(receiver) => self.roster_pending = Some(receiver),
            Err(result) => self.roster_ready = Some(result),
        }
    }

    /// The roster index started by [`Query::start_roster_index`], once it is there.
    /// It comes with every column's sort order, computed on the same thread.
    pub fn take_roster_index(&mut self) -> Option<Result<(RosterIndexData, SortOrders), String>> {
        if let Some(ready) = self.roster_ready.take() {
            return Some(ready);
        }
        let result = try_take(self.roster_pending.as_ref()?, "loading the roster")?;
        self.roster_pending = None;
        Some(result)
    }

    /// The number of trees at a glance (see [`Store::tree_count_estimate`]).
    pub fn tree_count_estimate(&self) -> Result<i64, StoreError> {
        self.store.tree_count_estimate()
    }

    /// Starts computing the year's benefits off the UI thread (a file-backed inventory opens a second,
    /// read-only connection; WAL lets it read while the UI writes). In memory it computes at once.
    pub fn start_benefits(&mut self) {
        if self.benefits.is_some() || self.pending.is_some() {
            return;
        }
        match spawn_read(self.store, |store| compute(store, None)) {
            Ok(receiver) => self.pending = Some(receiver),
            Err(done) => self.benefits = Some(done),
        }
    }

    /// True when background work finished since the last call (the app then refreshes what shows it).
    pub fn poll_background(&mut self) -> bool {
        let mut finished = false;
        if let Some(receiver) = &self.pending
            && let Some(result) = try_take(receiver, "the benefit computation")
        {
            self.benefits = Some(result);
            self.pending = None;
            finished = true;
        }
        let mut i = 0;
        while i < self.other_pending.len() {
            match try_take(&self.other_pending[i].1, "the benefit computation") {
                Some(result) => {
                    let (year, _) = self.other_pending.remove(i);
                    self.other_years.push((year, result));
                    finished = true;
                }
                None => i += 1,
            }
        }
        let mut i = 0;
        while i < self.studies_pending.len() {
            match try_take(&self.studies_pending[i].1, "the study run") {
                Some(result) => {
                    let (key, _) = self.studies_pending.remove(i);
                    self.studies.push((key, result));
                    finished = true;
                }
                None => i += 1,
            }
        }
        finished
    }

    /// Counts the writes that dropped computed results: a view holding a result of an older
    /// generation asks again.
    pub fn generation(&self) -> u64 {
        self.generation
    }

    /// The years of weather held at the default station, latest first (empty when none).
    pub fn weather_years(&self) -> Result<Vec<i32>, StoreError> {
        let Some(station) = self.store.default_station()? else {
            return Ok(Vec::new());
        };
        Ok(self
            .store
            .weather_years(&station.name)?
            .into_iter()
            .map(|(year, _)| year)
            .collect())
    }

    /// The benefits of every standing tree in a weather year (`None`: the latest year held, the one
    /// the tree card shows), or `None` while they are being computed off the UI thread (asking starts
    /// the computation).
    pub fn year_run(&mut self, year: Option<i32>) -> Option<YearResult> {
        let Some(year) = year else {
            self.start_benefits();
            return self.benefits.clone();
        };
        if let Some(Ok(run)) = &self.benefits
            && run.year == year
        {
            return self.benefits.clone();
        }
        if let Some((_, result)) = self.other_years.iter().find(|(y, _)| *y == year) {
            return Some(result.clone());
        }
        if self.other_pending.iter().any(|(y, _)| *y == year) {
            return None;
        }
        match spawn_read(self.store, move |store| compute(store, Some(year))) {
            Ok(receiver) => {
                self.other_pending.push((year, receiver));
                None
            }
            Err(done) => {
                self.other_years.push((year, done.clone()));
                Some(done)
            }
        }
    }

    /// Writes the printable HTML report of a computed year to `path` (through a temporary file in the
    /// same folder, renamed when complete). Refuses the inventory file itself and its WAL companions.
    /// Returns the absolute path written.
    pub fn export_year_report(
        &self,
        run: &YearRun,
        path: &Path,
        today: NaiveDate,
    ) -> Result<PathBuf, String> {
        if path.as_os_str().is_empty() {
            return Err("give a file name for the report".to_string());
        }
        let target =
            std::path::absolute(path).map_err(|e| format!("cannot use {}: {e}", path.display()))?;
        if let Some(inventory) = self.store.path() {
            let inventory = std::fs::canonicalize(inventory)
                .or_else(|_| std::path::absolute(inventory))
                .map_err(|e| format!("cannot resolve the inventory path: {e}"))?;
            let resolved = resolve_existing_parent(&target);
            let mut protected = vec![inventory.clone()];
            for suffix in ["-wal", "-shm", "-journal"] {
                let mut name = inventory.clone().into_os_string();
                name.push(suffix);
                protected.push(PathBuf::from(name));
            }
            if protected.contains(&resolved) {
                return Err(format!(
                    "{} is the inventory itself (or its journal); choose another file for the report",
                    target.display()
                ));
            }
        }
        if std::fs::metadata(&target).is_ok_and(|m| !m.is_file() && !m.is_dir()) {
            return Err(format!(
                "{} is not a regular file; choose a file for the report",
                target.display()
            ));
        }
        if target.is_dir() {
            return Err(format!(
                "{} is a folder; give a file name such as streetwood-summary-{}.html",
                target.display(),
                run.year
            ));
        }
        let inputs = ReportInputs {
            risk: self.store.risk_rating_counts().map_err(|e| e.to_string())?,
            work: self
                .store
                .open_work_by_priority()
                .map_err(|e| e.to_string())?,
            positions: self.store.tree_positions().map_err(|e| e.to_string())?,
            inventory: self.file_label(),
            top: SUMMARY_TOP_SPECIES,
            today,
        };
        let html = build_year_report(run, inputs)?;
        let mut partial_name = target
            .file_name()
            .map(|n| n.to_os_string())
            .unwrap_or_default();
        partial_name.push(".partial");
        let partial = target.with_file_name(partial_name);
        if let Err(e) = std::fs::write(&partial, html.as_bytes()) {
            let _ = std::fs::remove_file(&partial);
            return Err(format!("cannot write {}: {e}", partial.display()));
        }
        std::fs::rename(&partial, &target).map_err(|e| {
            let _ = std::fs::remove_file(&partial);
            format!("cannot write {}: {e}", target.display())
        })?;
        Ok(target)
    }

    /// Creates a removal study of these trees (an area chosen on the plan view): the defaults of
    /// `streetwood study new` (removal this year, 40 years, 1,000 runs, seed from the name, the latest
    /// weather year). Returns how many trees it holds.
    pub fn create_study_of(
        &mut self,
        name: &str,
        tree_ids: &[i64],
        now: DateTime<Utc>,
    ) -> Result<usize, StoreError> {
        use chrono::Datelike;
        let name = name.trim();
        if name.is_empty() || name.contains(':') {
            return Err(StoreError::Invalid(
                "a study needs a name (without ':')".to_string(),
            ));
        }
        let study = crate::store::studies::NewStudy {
            name: name.to_string(),
            description: Some("trees chosen on the plan view".to_string()),
            horizon_years: 40,
            seed: crate::study::seed_from_name(name),
            runs: 1000,
            weather_year: self.store.latest_weather_year()?,
            start_year: now.year(),
            functional_limitation: 1.0,
            external_limitation: 1.0,
        };
        let study_id = self.store.create_study(&study, now, "plan view")?;
        let chosen: Vec<crate::study::select::Selected> = tree_ids
            .iter()
            .map(|id| crate::study::select::Selected {
                tree_id: *id,
                distance_m: None,
            })
            .collect();
        let (added, _) =
            self.store
                .add_study_trees(study_id, &chosen, "area on the plan view", "plan view")?;
        self.forget_benefits();
        Ok(added)
    }

    /// The removal studies (created with `streetwood study …`).
    pub fn studies(&self) -> Result<Vec<StudyListRow>, StoreError> {
        self.store.studies()
    }

    /// A study's run in a mode, or `None` while it runs off the UI thread (asking starts it). The
    /// survival scenario is the `survival_scenario` setting, as `streetwood study run` uses by default.
    pub fn study_run(&mut self, name: &str, mode: Mode) -> Option<StudyResult> {
        let key = (name.to_string(), mode);
        if let Some((_, result)) = self.studies.iter().find(|(k, _)| *k == key) {
            return Some(result.clone());
        }
        if self.studies_pending.iter().any(|(k, _)| *k == key) {
            return None;
        }
        let owned = name.to_string();
        match spawn_read(self.store, move |store| {
            run_study_named(store, &owned, mode)
        }) {
            Ok(receiver) => {
                self.studies_pending.push((key, receiver));
                None
            }
            Err(done) => {
                self.studies.push((key, done.clone()));
                Some(done)
            }
        }
    }

    /// True while background work runs.
    pub fn busy(&self) -> bool {
        self.pending.is_some()
            || !self.other_pending.is_empty()
            || !self.studies_pending.is_empty()
            || self.roster_pending.is_some()
    }

    /// The compact index of every tree.
    pub fn roster_index(&self) -> Result<RosterIndexData, StoreError> {
        self.store.roster_index()
    }

    /// Brings these trees' entries up to date in a loaded index (false: reload the whole index).
    pub fn roster_update(
        &self,
        index: &mut RosterIndexData,
        ids: &[i64],
    ) -> Result<bool, StoreError> {
        self.store.roster_update(index, ids)
    }

    /// Rows of these trees, in this order (only the visible ones are ever asked for).
    pub fn roster_rows(&self, ids: &[i64]) -> Result<Vec<TreeSummary>, StoreError> {
        self.store.roster_rows(ids)
    }

    /// Trees whose uid starts with a prefix.
    pub fn ids_by_uid_prefix(&self, prefix: &str, limit: usize) -> Result<Vec<i64>, StoreError> {
        self.store.tree_ids_by_uid_prefix(prefix, limit)
    }

    /// One tree's card.
    pub fn tree_detail(&self, tree_id: i64) -> Result<Option<TreeDetail>, StoreError> {
        self.store.tree_detail(tree_id)
    }

    /// The species list.
    pub fn species(&self) -> Result<Vec<Species>, StoreError> {
        self.store.species()
    }

    /// Every tree's position as (id, lon, lat).
    pub fn positions(&self) -> Result<Vec<(i64, f64, f64)>, StoreError> {
        self.store.tree_positions()
    }

    /// This year's benefits of one tree, once computed (see [`Query::start_benefits`]).
    pub fn tree_benefits(&mut self, tree_id: i64) -> Result<CardBenefits, String> {
        self.start_benefits();
        match &self.benefits {
            Some(Ok(run)) => run
                .rows
                .iter()
                .find(|r| r.tree_id == tree_id)
                .map(|row| CardBenefits {
                    row: row.clone(),
                    basis: card_basis(run),
                    currency: run.prices.currency.clone(),
                })
                .ok_or_else(|| {
                    "no benefits this year: not standing, or no measurement up to the weather year"
                        .to_string()
                }),
            Some(Err(e)) => Err(e.clone()),
            None => Err(COMPUTING.to_string()),
        }
    }

    /// Saves one record (a new tree, or a re-measurement when its uid is known) in one transaction,
    /// with the tree's zone from its position. Returns the tree's id.
    pub fn save_record(
        &mut self,
        record: TreeRecord,
        actor: &str,
        now: DateTime<Utc>,
    ) -> Result<i64, StoreError> {
        let zones =
            ZoneIndex::from_geometry_json(&self.store.zones()?).map_err(StoreError::Invalid)?;
        let zone_id = match (record.lon, record.lat) {
            (Some(lon), Some(lat)) => zones.zone_of(lon, lat),
            _ => None,
        };
        let uid = record
            .uid
            .clone()
            .unwrap_or_else(|| uuid::Uuid::new_v4().to_string());
        let record = TreeRecord {
            uid: Some(uid.clone()),
            ..record
        };
        self.store.import_trees(
            &[TreeImportRow {
                line: 0,
                record,
                zone_id,
            }],
            actor,
            now,
            false,
        )?;
        self.forget_benefits();
        self.store
            .tree_id_by_uid(&uid)?
            .ok_or_else(|| StoreError::Invalid("the saved tree cannot be found".to_string()))
    }

    /// Marks a tree removed (never deleted).
    pub fn mark_removed(
        &mut self,
        tree_id: i64,
        on: NaiveDate,
        reason: &str,
        actor: &str,
        now: DateTime<Utc>,
    ) -> Result<(), StoreError> {
        self.forget_benefits();
        self.store.mark_removed(tree_id, on, reason, actor, now)
    }

    /// The change `undo` would revert, if any.
    pub fn last_change(&self) -> Result<Option<crate::store::undo::Change>, StoreError> {
        Ok(self.store.undoable_changes(1)?.into_iter().next())
    }

    /// Undoes the latest change (see [`Store::undo_last`]).
    pub fn undo_last(
        &mut self,
        actor: &str,
    ) -> Result<Option<crate::store::undo::Change>, StoreError> {
        self.forget_benefits();
        self.store.undo_last(actor)
    }

    /// The watchlist's rows: every standing tree with its latest assessment.
    pub fn watch_items(&self) -> Result<Vec<WatchItem>, StoreError> {
        self.store.watch_items()
    }

    /// The work queue's rows: every work order, whatever its status (the view filters).
    pub fn work_items(&self) -> Result<Vec<WorkItem>, StoreError> {
        self.store.work_items(&[])
    }

    /// The currency of costs (setting `currency`).
    pub fn currency(&self) -> Result<String, StoreError> {
        Ok(self.store.setting("currency")?.unwrap_or_default())
    }

    /// Months to the next inspection per rating (settings `reinspect_months_*`).
    pub fn reinspection_intervals(&self) -> Result<Vec<(RiskRating, u32)>, StoreError> {
        self.store.reinspection_intervals()
    }

    /// Records an evaluated assessment of a tree and, when given, the work order it calls for, in one
    /// transaction (see [`Store::record_assessment`]).
    pub fn record_assessment(
        &mut self,
        tree_id: i64,
        assessment: &Assessment,
        work: Option<&NewWorkOrder>,
        actor: &str,
        now: DateTime<Utc>,
    ) -> Result<RecordedAssessment, StoreError> {
        self.store
            .record_assessment(tree_id, assessment, work, actor, now)
    }

    /// Adds a work order (checked against its tree); returns its id.
    pub fn add_work_order(
        &mut self,
        order: &NewWorkOrder,
        actor: &str,
        now: DateTime<Utc>,
    ) -> Result<i64, StoreError> {
        self.store.add_work_order(order, actor, now)
    }

    /// Changes a work order by the life-cycle rules (a removal done marks the tree removed).
    pub fn change_work_order(
        &mut self,
        order_id: i64,
        change: &WorkChange,
        today: NaiveDate,
        actor: &str,
        now: DateTime<Utc>,
    ) -> Result<WorkOutcome, StoreError> {
        let outcome = self
            .store
            .change_work_order(order_id, change, today, actor, now)?;
        if outcome.tree_removed_on.is_some() {
            self.forget_benefits();
        }
        Ok(outcome)
    }

    /// Changes a tree's attributes without adding a measurement (see [`Store::edit_tree`]).
    pub fn edit_tree(
        &mut self,
        tree_id: i64,
        text: &TreeEditText,
        today: NaiveDate,
        actor: &str,
        now: DateTime<Utc>,
    ) -> Result<TreeEditOutcome, StoreError> {
        let outcome = self.store.edit_tree(tree_id, text, today, actor, now)?;
        if outcome.changed {
            self.forget_benefits();
        }
        Ok(outcome)
    }

    /// Drops computed benefits after a write (a running computation's result is ignored).
    fn forget_benefits(&mut self) {
        self.benefits = None;
        self.pending = None;
        self.other_years.clear();
        self.other_pending.clear();
        self.studies.clear();
        self.studies_pending.clear();
        self.generation += 1;
    }

    /// A short name for the open file.
    pub fn file_label(&self) -> String {
        self.store
            .path()
            .map(|p| p.display().to_string())
            .unwrap_or_else(|| "(in memory)".to_string())
    }
}

/// Species shown one by one in the year summary and its report before the rest are grouped as
/// "other" (the `summary --top` default).
pub const SUMMARY_TOP_SPECIES: usize = 10;

fn compute(store: &Store, year: Option<i32>) -> YearResult {
    store
        .year_benefits(year)
        .map(Arc::new)
        .map_err(|e| e.to_string())
}

/// The tree card's short line stating year, station and prices.
fn card_basis(run: &YearRun) -> String {
    format!(
        "{} weather at '{}'; {} {:.0}/t CO2e, {:.2}/m³ water",
        run.year,
        run.station.name,
        run.prices.currency,
        run.prices.co2_per_t,
        run.prices.water_per_m3
    )
}

/// The path as it will be opened: the existing part of it resolved (symbolic links, `..`), the rest
/// appended.
fn resolve_existing_parent(target: &Path) -> PathBuf {
    if let Ok(full) = std::fs::canonicalize(target) {
        return full;
    }
    match (target.parent(), target.file_name()) {
        (Some(parent), Some(name)) => std::fs::canonicalize(parent)
            .map(|p| p.join(name))
            .unwrap_or_else(|_| target.to_path_buf()),
        _ => target.to_path_buf(),
    }
}

/// Loads a study and runs it, as `streetwood study run` does.
fn run_study_named(store: &Store, name: &str, mode: Mode) -> StudyResult {
    let data = store.study_run_data(name).map_err(|e| e.to_string())?;
    let scenario = data.settings.survival_scenario;
    let env = StudyEnv {
        species: &data.params,
        imputer: &data.imputer,
        weather: &data.weather,
        science: &data.science,
        settings: &data.settings,
        scenario,
    };
    let outcome = run_study(&data.input, &env, mode).map_err(|e| format!("study '{name}': {e}"))?;
    let s = &outcome.survival;
    let mode_text = match mode {
        Mode::Expected => "expected values".to_string(),
        Mode::MonteCarlo => format!(
            "Monte Carlo, {} runs, seed {} (band: P10–P90 of the runs)",
            outcome.runs.unwrap_or(0),
            outcome.seed
        ),
    };
    let basis = format!(
        "{mode_text}; survival {} ({:.1} %/yr establishment, {:.1} %/yr after); weather of {} at '{}' ({} days) for every year; {} discounted at {:.1} %/yr to {}",
        outcome.scenario.as_str(),
        s.q_establishment * 100.0,
        s.q_post * 100.0,
        outcome.weather_year,
        data.station.name,
        data.weather_days_held,
        outcome.currency,
        outcome.discount_rate * 100.0,
        outcome.start_year
    );
    Ok(Arc::new(StudyRun { outcome, basis }))
}
