//! The facade between the TUI and the store: everything views read, as domain structs, and the few
//! writes the field work needs. No SQL here; `tui/` never reaches the store any other way.

use std::path::PathBuf;
use std::sync::mpsc::{Receiver, TryRecvError, channel};

use chrono::{DateTime, NaiveDate, Utc};

use crate::care::assessment::Assessment;
use crate::care::queue::{WatchItem, WorkItem};
use crate::care::risk::RiskRating;
use crate::care::work::{NewWorkOrder, WorkChange};
use crate::model::{Species, TreeRecord, TreeSummary};
use crate::science::inventory::BenefitRow;
use crate::spatial::ZoneIndex;
use crate::store::care::{RecordedAssessment, WorkOutcome};
use crate::store::roster::{RosterIndexData, TreeDetail};
use crate::store::tree_edit::{TreeEditOutcome, TreeEditText};
use crate::store::trees::TreeImportRow;
use crate::store::{Store, StoreError};

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
    benefits: Option<Result<YearCache, String>>,
    /// The year's benefits being computed on another thread (over its own read connection).
    pending: Option<Receiver<Result<YearCache, String>>>,
}

/// Shown while the year's benefits are being computed.
pub const COMPUTING: &str = "computing this year's benefits for the whole inventory…";

/// The year's rows, the line stating year and prices, and the currency.
type YearCache = (Vec<BenefitRow>, String, String);

impl<'a> Query<'a> {
    /// Wraps an open store.
    pub fn new(store: &'a mut Store) -> Self {
        Query {
            store,
            benefits: None,
            pending: None,
        }
    }

    /// Starts computing the year's benefits off the UI thread (a file-backed inventory opens a second,
    /// read-only connection; WAL lets it read while the UI writes). In memory it computes at once.
    pub fn start_benefits(&mut self) {
        if self.benefits.is_some() || self.pending.is_some() {
            return;
        }
        let Some(path) = self.store.path().map(PathBuf::from) else {
            self.benefits = Some(compute(self.store));
            return;
        };
        let (sender, receiver) = channel();
        std::thread::spawn(move || {
            let result = Store::open_existing(&path)
                .map_err(|e| e.to_string())
                .and_then(|store| compute(&store));
            // The UI may have gone; nothing to do then.
            let _ = sender.send(result);
        });
        self.pending = Some(receiver);
    }

    /// True when background work finished since the last call (the app then refreshes what shows it).
    pub fn poll_background(&mut self) -> bool {
        let Some(receiver) = &self.pending else {
            return false;
        };
        match receiver.try_recv() {
            Ok(result) => {
                self.benefits = Some(result);
                self.pending = None;
                true
            }
            Err(TryRecvError::Empty) => false,
            Err(TryRecvError::Disconnected) => {
                self.benefits = Some(Err(
                    "the benefit computation stopped unexpectedly".to_string()
                ));
                self.pending = None;
                true
            }
        }
    }

    /// True while background work runs.
    pub fn busy(&self) -> bool {
        self.pending.is_some()
    }

    /// The compact index of every tree.
    pub fn roster_index(&self) -> Result<RosterIndexData, StoreError> {
        self.store.roster_index()
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
            Some(Ok((rows, basis, currency))) => rows
                .iter()
                .find(|r| r.tree_id == tree_id)
                .map(|row| CardBenefits {
                    row: row.clone(),
                    basis: basis.clone(),
                    currency: currency.clone(),
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
    }

    /// A short name for the open file.
    pub fn file_label(&self) -> String {
        self.store
            .path()
            .map(|p| p.display().to_string())
            .unwrap_or_else(|| "(in memory)".to_string())
    }
}

fn compute(store: &Store) -> Result<YearCache, String> {
    let run = store.year_benefits(None).map_err(|e| e.to_string())?;
    let basis = format!(
        "{} weather at '{}'; {} {:.0}/t CO2e, {:.2}/m³ water",
        run.year,
        run.station.name,
        run.prices.currency,
        run.prices.co2_per_t,
        run.prices.water_per_m3
    );
    Ok((run.rows, basis, run.prices.currency))
}
