//! The facade between the TUI and the store: everything views read, as domain structs, and the few
//! writes the field work needs. No SQL here; `tui/` never reaches the store any other way.

use chrono::{DateTime, NaiveDate, Utc};

use crate::model::{Species, TreeRecord, TreeSummary};
use crate::science::inventory::BenefitRow;
use crate::spatial::ZoneIndex;
use crate::store::roster::{RosterIndexData, TreeDetail};
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
}

/// The year's rows, the line stating year and prices, and the currency.
type YearCache = (Vec<BenefitRow>, String, String);

impl<'a> Query<'a> {
    /// Wraps an open store.
    pub fn new(store: &'a mut Store) -> Self {
        Query {
            store,
            benefits: None,
        }
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

    /// This year's benefits of one tree (computing the whole inventory once, then cached).
    pub fn tree_benefits(&mut self, tree_id: i64) -> Result<CardBenefits, String> {
        if self.benefits.is_none() {
            self.benefits = Some(
                self.store
                    .year_benefits(None)
                    .map(|run| {
                        let basis = format!(
                            "{} weather at '{}'; {} {:.0}/t CO2e, {:.2}/m³ water",
                            run.year,
                            run.station.name,
                            run.prices.currency,
                            run.prices.co2_per_t,
                            run.prices.water_per_m3
                        );
                        (run.rows, basis, run.prices.currency)
                    })
                    .map_err(|e| e.to_string()),
            );
        }
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
            None => Err("benefits not computed".to_string()),
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
        self.benefits = None;
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
        self.benefits = None;
        self.store.mark_removed(tree_id, on, reason, actor, now)
    }

    /// A short name for the open file.
    pub fn file_label(&self) -> String {
        self.store
            .path()
            .map(|p| p.display().to_string())
            .unwrap_or_else(|| "(in memory)".to_string())
    }
}
