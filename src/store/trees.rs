//! Trees and their measurements: import (all or nothing), export streams, roster pages.

use std::collections::HashMap;

use chrono::{DateTime, NaiveDate, Utc};
use rusqlite::types::Value;
use rusqlite::{ErrorCode, OptionalExtension, Row, Transaction, params};

use super::audit::BulkAudit;
use super::{Store, StoreError, timestamp};
use crate::model::{LeafHabit, SiteKind, Species, TreeRecord, TreeStatus, TreeSummary, WaterUse};
use crate::science::condition::ConditionWord;

/// Page cache during bulk imports (negative: KiB), 256 MiB.
const BULK_CACHE_KIB: i64 = -262_144;

/// From this many rows on, [`ImportPath::Auto`] takes the bulk path.
pub const BULK_MIN_ROWS: usize = 64;
/// Rows gathered before a bulk import writes them (trees plus measurements).
const BULK_BATCH_ROWS: usize = 1024;
/// Rows per multi-row `INSERT` of the bulk path.
const BULK_CHUNK_ROWS: usize = 64;

/// How an import writes its rows. Both paths leave the same rows and the same audit log (ids, JSON,
/// actor and change number; only the audit `at` times differ); `tests/import_bulk.rs` compares them.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ImportPath {
    /// One statement per row, audited by the triggers: for a tree from the TUI or the field log.
    PerRow,
    /// Rows gathered in batches and written by multi-row `INSERT`s with the audit insert triggers of
    /// trees and measurements set aside inside the transaction; each batch's audit rows are written
    /// by one `INSERT … SELECT` in row order ([`super::audit::BulkAudit`]).
    Bulk,
    /// `PerRow` below [`BULK_MIN_ROWS`] rows, `Bulk` from there on.
    Auto,
}

/// One validated row to import, with the line it came from (for messages) and its zone.
#[derive(Debug, Clone)]
pub struct TreeImportRow {
    pub line: u64,
    pub record: TreeRecord,
    pub zone_id: Option<i64>,
}

/// What an import did.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, serde::Serialize)]
pub struct ImportOutcome {
    pub trees_added: usize,
    pub trees_updated: usize,
    pub measurements_added: usize,
    /// Rows that repeat a measurement the tree already has (same date and DBH): skipped, so importing
    /// the same file twice changes nothing.
    pub measurements_unchanged: usize,
}

/// A tree record with the uid it has in the store.
#[derive(Debug, Clone, PartialEq)]
pub struct StoredTreeRecord {
    pub tree_id: i64,
    pub uid: String,
    pub record: TreeRecord,
}

impl Store {
    /// The species list, by scientific name.
    pub fn species(&self) -> Result<Vec<Species>, StoreError> {
        let mut stmt = self.conn.prepare(
            "SELECT id, scientific_name, common_name, genus, family, leaf_habit, sg_green, jenkins_group,
                    chojnacky_group, growth_cm_per_yr, growth_source, water_use, lai, max_height_m, builtin, source
             FROM species ORDER BY scientific_name",
        )?;
        let rows = stmt
            .query_map([], species_from_row)?
            .collect::<Result<Vec<_>, _>>()?;
        Ok(rows)
    }

    /// Imports rows in one transaction: a row whose uid is already known (in the file or earlier in
    /// `rows`) adds a measurement to that tree and updates the attributes it gives; others add a tree.
    /// Any failing row rolls the whole import back and is reported with its line.
    pub fn import_trees(
        &mut self,
        rows: &[TreeImportRow],
        actor: &str,
        now: DateTime<Utc>,
        dry_run: bool,
    ) -> Result<ImportOutcome, StoreError> {
        self.import_trees_via(rows, actor, now, dry_run, ImportPath::Auto)
    }

    /// [`Store::import_trees`] by a chosen path (tests compare the two).
    pub fn import_trees_via(
        &mut self,
        rows: &[TreeImportRow],
        actor: &str,
        now: DateTime<Utc>,
        dry_run: bool,
        path: ImportPath,
    ) -> Result<ImportOutcome, StoreError> {
        let bulk = match path {
            ImportPath::PerRow => false,
            ImportPath::Bulk => true,
            ImportPath::Auto => rows.len() >= BULK_MIN_ROWS,
        };
        let work = |tx: &Transaction<'_>| {
            let mut rows = rows.iter().cloned();
            if bulk {
                import_rows_bulk(tx, &mut rows, now)
            } else {
                import_rows(tx, &mut rows, now)
            }
        };
        // A large import is one transaction: a page cache big enough to hold it keeps SQLite from
        // spilling dirty pages to the WAL again and again before the commit (measured: 6× faster at
        // 100,000 trees). The usual cache is restored afterwards.
        let big = rows.len() > 10_000;
        if big {
            self.conn
                .pragma_update(None, "cache_size", BULK_CACHE_KIB)?;
        }
        let result = if dry_run {
            self.dry_run(actor, work)
        } else {
            self.write(actor, work)
        };
        if big {
            self.conn
                .pragma_update(None, "cache_size", super::CACHE_KIB)?;
        }
        result
    }

    /// Imports rows as an iterator yields them, in one transaction (so a million-row file is never
    /// held in memory). After the last row `keep` is asked whether to commit: when it says no (the
    /// caller found bad rows in an all-or-nothing import) everything is rolled back and
    /// `StoreError::Invalid` returned. Takes the bulk path once the stream has [`BULK_MIN_ROWS`] rows.
    pub fn import_tree_stream(
        &mut self,
        rows: &mut dyn Iterator<Item = TreeImportRow>,
        keep: &dyn Fn() -> bool,
        actor: &str,
        now: DateTime<Utc>,
        dry_run: bool,
    ) -> Result<ImportOutcome, StoreError> {
        self.conn
            .pragma_update(None, "cache_size", BULK_CACHE_KIB)?;
        let work = |tx: &Transaction<'_>| {
            // Look ahead: a short stream is written row by row, a long one in bulk.
            let head: Vec<TreeImportRow> = (&mut *rows).take(BULK_MIN_ROWS).collect();
            let outcome = if head.len() < BULK_MIN_ROWS {
                import_rows(tx, &mut head.into_iter(), now)?
            } else {
                import_rows_bulk(tx, &mut head.into_iter().chain(rows), now)?
            };
            if keep() {
                Ok(outcome)
            } else {
                Err(StoreError::Invalid(
                    "the import had rows with errors; nothing was written".to_string(),
                ))
            }
        };
        let result = if dry_run {
            self.dry_run(actor, work)
        } else {
            self.write(actor, work)
        };
        self.conn
            .pragma_update(None, "cache_size", super::CACHE_KIB)?;
        result
    }

    /// The number of trees at a glance, from the largest id (one index lookup, where `count(*)` reads a
    /// whole index: on a city's file opened cold that is a fifth of a second before the first frame).
    /// Exact while ids stay dense, as they do here: trees are never deleted and new ids follow the
    /// largest; shown as an approximation all the same.
    pub fn tree_count_estimate(&self) -> Result<i64, StoreError> {
        Ok(self
            .conn
            .query_row("SELECT coalesce(max(id), 0) FROM trees", [], |row| {
                row.get(0)
            })?)
    }

    /// Number of trees, all statuses.
    pub fn tree_count(&self) -> Result<i64, StoreError> {
        Ok(self
            .conn
            .query_row("SELECT count(*) FROM trees", [], |row| row.get(0))?)
    }

    /// Number of measurements.
    pub fn measurement_count(&self) -> Result<i64, StoreError> {
        Ok(self
            .conn
            .query_row("SELECT count(*) FROM measurements", [], |row| row.get(0))?)
    }

    /// Streams every tree as exchange records in tree id order: its latest measurement only, or every
    /// measurement (oldest first) when `history` is true.
    pub fn for_each_tree_record<E: From<StoreError>>(
        &self,
        history: bool,
        mut visit: impl FnMut(StoredTreeRecord) -> Result<(), E>,
    ) -> Result<(), E> {
        let measurement_filter = if history {
            "m.tree_id = t.id"
        } else {
            "m.id = (SELECT id FROM measurements WHERE tree_id = t.id ORDER BY measured_on DESC, id DESC LIMIT 1)"
        };
        let sql = format!(
            "SELECT t.id, t.uid, s.scientific_name, t.lon, t.lat, t.street, t.house_number, t.site_kind,
                    t.planted_on, t.status, m.measured_on, m.stems_cm, m.dbh_cm, m.height_m, m.crown_base_m,
                    m.crown_width_m, m.crown_width2_m, m.dieback_pct, m.condition, t.notes
             FROM trees t JOIN species s ON s.id = t.species_id
             JOIN measurements m ON {measurement_filter}
             ORDER BY t.id, m.measured_on, m.id"
        );
        let mut stmt = self.conn.prepare(&sql).map_err(StoreError::from)?;
        let mut rows = stmt.query([]).map_err(StoreError::from)?;
        while let Some(row) = rows.next().map_err(StoreError::from)? {
            visit(stored_record_from_row(row)?)?;
        }
        Ok(())
    }

    /// One roster page in keyset order: up to `limit` trees with id greater than `after_id`.
    pub fn roster_page(&self, after_id: i64, limit: usize) -> Result<Vec<TreeSummary>, StoreError> {
        let mut stmt = self.conn.prepare_cached(
            "SELECT t.id, t.uid, s.scientific_name, s.common_name, t.street, t.house_number, t.status,
                    m.dbh_cm, m.height_m, m.dieback_pct, m.condition, m.measured_on, z.name
             FROM trees t JOIN species s ON s.id = t.species_id
             LEFT JOIN zones z ON z.id = t.zone_id
             LEFT JOIN measurements m ON m.id =
                 (SELECT id FROM measurements WHERE tree_id = t.id ORDER BY measured_on DESC, id DESC LIMIT 1)
             WHERE t.id > ?1 ORDER BY t.id LIMIT ?2",
        )?;
        let rows = stmt
            .query_map(params![after_id, limit as i64], summary_from_row)?
            .collect::<Result<Vec<_>, _>>()?;
        Ok(rows)
    }

    /// The ids of all trees in id order (the roster's index for virtual scrolling).
    pub fn tree_ids(&self) -> Result<Vec<i64>, StoreError> {
        let mut stmt = self.conn.prepare("SELECT id FROM trees ORDER BY id")?;
        let ids = stmt
            .query_map([], |row| row.get(0))?
            .collect::<Result<Vec<i64>, _>>()?;
        Ok(ids)
    }

    /// The tree with this uid, if any.
    pub fn tree_id_by_uid(&self, uid: &str) -> Result<Option<i64>, StoreError> {
        Ok(self
            .conn
            .query_row("SELECT id FROM trees WHERE uid = ?1", [uid], |row| {
                row.get(0)
            })
            .optional()?)
    }

    /// Marks a tree removed (trees are never deleted).
    pub fn mark_removed(
        &mut self,
        tree_id: i64,
        removed_on: NaiveDate,
        reason: &str,
        actor: &str,
        now: DateTime<Utc>,
    ) -> Result<(), StoreError> {
        self.write(actor, |tx| {
            let changed = tx.execute(
                "UPDATE trees SET status = 'removed', removed_on = ?2, updated_at = ?3,
                     notes = CASE WHEN ?4 = '' THEN notes
                                  WHEN notes IS NULL OR notes = '' THEN 'removed: ' || ?4
                                  ELSE notes || char(10) || 'removed: ' || ?4 END
                 WHERE id = ?1",
                params![tree_id, removed_on.to_string(), timestamp(now), reason],
            )?;
            if changed == 0 {
                return Err(StoreError::Invalid(format!("no tree with id {tree_id}")));
            }
            Ok(())
        })
    }
}

/// Runs [`UPDATE_TREE_SQL`] for one import row (the per-row and the bulk path share it).
fn update_tree_row(
    update: &mut rusqlite::CachedStatement<'_>,
    id: i64,
    species_id: i64,
    row: &TreeImportRow,
    stamp: &str,
) -> rusqlite::Result<usize> {
    let record = &row.record;
    update.execute(params![
        id,
        species_id,
        record.lon,
        record.lat,
        record.street,
        record.house_number,
        record.site_kind.map(SiteKind::as_str),
        record.planted_on.map(|d| d.to_string()),
        record.status.map(TreeStatus::as_str),
        row.zone_id,
        record.notes,
        stamp,
    ])
}

/// An import row's update of a known tree: the attributes it gives, and only when one differs.
const UPDATE_TREE_SQL: &str = "UPDATE trees SET species_id = ?2, lon = coalesce(?3, lon), lat = coalesce(?4, lat),
     street = coalesce(?5, street), house_number = coalesce(?6, house_number),
     site_kind = coalesce(?7, site_kind), planted_on = coalesce(?8, planted_on),
     status = coalesce(?9, status), zone_id = coalesce(?10, zone_id), notes = coalesce(?11, notes),
     updated_at = ?12
 WHERE id = ?1 AND (species_id IS NOT ?2 OR lon IS NOT coalesce(?3, lon) OR lat IS NOT coalesce(?4, lat)
     OR street IS NOT coalesce(?5, street) OR house_number IS NOT coalesce(?6, house_number)
     OR site_kind IS NOT coalesce(?7, site_kind) OR planted_on IS NOT coalesce(?8, planted_on)
     OR status IS NOT coalesce(?9, status) OR zone_id IS NOT coalesce(?10, zone_id)
     OR notes IS NOT coalesce(?11, notes))";

/// Whether a tree has a measurement of this date and DBH.
const SAME_MEASUREMENT_SQL: &str = "SELECT 1 FROM measurements WHERE tree_id = ?1 AND measured_on = ?2 AND abs(dbh_cm - ?3) < 1e-9";

/// The per-row path of an import: one statement per row, audited by the triggers.
fn import_rows(
    tx: &Transaction<'_>,
    rows: &mut dyn Iterator<Item = TreeImportRow>,
    now: DateTime<Utc>,
) -> Result<ImportOutcome, StoreError> {
    let stamp = timestamp(now);
    let species_ids = species_ids_by_name(tx)?;
    let mut outcome = ImportOutcome::default();
    let mut find_tree = tx.prepare_cached("SELECT id FROM trees WHERE uid = ?1")?;
    let mut insert_tree = tx.prepare_cached(
        "INSERT INTO trees (uid, species_id, lon, lat, street, house_number, site_kind, planted_on, status,
                            zone_id, notes, created_at, updated_at)
         VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?12)",
    )?;
    let mut update_tree = tx.prepare_cached(UPDATE_TREE_SQL)?;
    let mut same_measurement = tx.prepare_cached(SAME_MEASUREMENT_SQL)?;
    let mut insert_measurement = tx.prepare_cached(
        "INSERT INTO measurements (tree_id, measured_on, stems_cm, dbh_cm, height_m, crown_base_m, crown_width_m,
                                   crown_width2_m, dieback_pct, condition, measured_by, created_at)
         VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?12, ?11)",
    )?;
    for row in rows {
        let record = &row.record;
        let fail = |message: String| StoreError::Row {
            line: row.line,
            message,
        };
        let species_id = *species_ids
            .get(&record.species.to_lowercase())
            .ok_or_else(|| {
                fail(format!(
                    "species: '{}' is not in the species list",
                    record.species
                ))
            })?;
        let existing: Option<i64> = match &record.uid {
            Some(uid) => find_tree.query_row([uid], |r| r.get(0)).optional()?,
            None => None,
        };
        let site_kind = record.site_kind.map(SiteKind::as_str);
        let planted_on = record.planted_on.map(|d| d.to_string());
        let status = record.status.map(TreeStatus::as_str);
        let tree_id = match existing {
            Some(id) => {
                let changed = update_tree_row(&mut update_tree, id, species_id, &row, &stamp)
                    .map_err(|e| fail(constraint_message(e)))?;
                outcome.trees_updated += changed;
                id
            }
            None => {
                let uid = record
                    .uid
                    .clone()
                    .unwrap_or_else(|| uuid::Uuid::new_v4().to_string());
                insert_tree
                    .execute(params![
                        uid,
                        species_id,
                        record.lon,
                        record.lat,
                        record.street,
                        record.house_number,
                        site_kind,
                        planted_on,
                        status.unwrap_or(TreeStatus::Standing.as_str()),
                        row.zone_id,
                        record.notes,
                        stamp,
                    ])
                    .map_err(|e| fail(constraint_message(e)))?;
                outcome.trees_added += 1;
                tx.last_insert_rowid()
            }
        };
        let measured_on = record.measured_on.to_string();
        if existing.is_some()
            && same_measurement
                .exists(params![tree_id, measured_on, record.dbh_cm()])
                .map_err(StoreError::from)?
        {
            outcome.measurements_unchanged += 1;
            continue;
        }
        let stems = record
            .multi_stem
            .then(|| crate::io::format_stems(&record.stems_cm));
        insert_measurement
            .execute(params![
                tree_id,
                measured_on,
                stems,
                record.dbh_cm(),
                record.height_m,
                record.crown_base_m,
                record.crown_width_m,
                record.crown_width2_m,
                record.dieback_pct,
                record.condition.map(ConditionWord::as_str),
                stamp,
                record.measured_by,
            ])
            .map_err(|e| fail(constraint_message(e)))?;
        outcome.measurements_added += 1;
    }
    Ok(outcome)
}

/// A tree of the current bulk batch, with the values its `INSERT` binds.
#[derive(Debug)]
struct PendingTree {
    line: u64,
    id: i64,
    uid: String,
    species_id: i64,
    lon: Option<f64>,
    lat: Option<f64>,
    street: Option<String>,
    house_number: Option<String>,
    site_kind: Option<&'static str>,
    planted_on: Option<String>,
    status: &'static str,
    zone_id: Option<i64>,
    notes: Option<String>,
}

impl PendingTree {
    /// The attributes an import may update, as stored ([`TREE_ATTRIBUTES`] order).
    fn attributes(&self) -> [Value; 10] {
        [
            Value::Integer(self.species_id),
            self.lon.map_or(Value::Null, Value::Real),
            self.lat.map_or(Value::Null, Value::Real),
            text_value(self.street.as_deref()),
            text_value(self.house_number.as_deref()),
            text_value(self.site_kind),
            text_value(self.planted_on.as_deref()),
            Value::Text(self.status.to_string()),
            self.zone_id.map_or(Value::Null, Value::Integer),
            text_value(self.notes.as_deref()),
        ]
    }
}

/// A measurement of the current bulk batch, with the values its `INSERT` binds.
#[derive(Debug)]
struct PendingMeasurement {
    line: u64,
    id: i64,
    tree_id: i64,
    measured_on: String,
    stems: Option<String>,
    dbh_cm: f64,
    height_m: Option<f64>,
    crown_base_m: Option<f64>,
    crown_width_m: Option<f64>,
    crown_width2_m: Option<f64>,
    dieback_pct: Option<f64>,
    condition: Option<&'static str>,
    measured_by: Option<String>,
}

/// One insert of a batch, in row order (the order the audit triggers would have fired).
#[derive(Debug, Clone, Copy)]
enum Pending {
    Tree(usize),
    Measurement(usize),
}

/// The rows of a bulk import not yet written.
#[derive(Debug, Default)]
struct Batch {
    trees: Vec<PendingTree>,
    measurements: Vec<PendingMeasurement>,
    order: Vec<Pending>,
    tree_by_uid: HashMap<String, usize>,
    measurements_by_tree: HashMap<i64, Vec<usize>>,
}

impl Batch {
    fn clear(&mut self) {
        self.trees.clear();
        self.measurements.clear();
        self.order.clear();
        self.tree_by_uid.clear();
        self.measurements_by_tree.clear();
    }
}

/// The tree columns an import's update may change, in the order of [`PendingTree::attributes`].
const TREE_ATTRIBUTES: &str =
    "species_id, lon, lat, street, house_number, site_kind, planted_on, status, zone_id, notes";
const TREE_INSERT_COLUMNS: &str = "id, uid, species_id, lon, lat, street, house_number, site_kind, planted_on, status, zone_id, notes, created_at, updated_at";
const MEASUREMENT_INSERT_COLUMNS: &str = "id, tree_id, measured_on, stems_cm, dbh_cm, height_m, crown_base_m, crown_width_m, crown_width2_m, dieback_pct, condition, measured_by, created_at";
/// Values bound per row of each multi-row insert (the shared timestamp is `?1`).
const TREE_PARAMS: usize = 12;
const MEASUREMENT_PARAMS: usize = 12;

fn text_value(text: Option<&str>) -> Value {
    text.map_or(Value::Null, |t| Value::Text(t.to_string()))
}

/// `INSERT INTO table (columns) VALUES (…), (…)` for `rows` rows of `per_row` values each, the last
/// column of every row being the shared timestamp `?1` (twice for trees: created and updated).
fn multi_row_insert(
    table: &str,
    columns: &str,
    rows: usize,
    per_row: usize,
    stamps: usize,
) -> String {
    let mut sql = format!("INSERT INTO {table} ({columns}) VALUES ");
    for row in 0..rows {
        if row > 0 {
            sql.push_str(", ");
        }
        sql.push('(');
        for value in 0..per_row {
            sql.push_str(&format!("?{}, ", 2 + row * per_row + value));
        }
        sql.push_str(&vec!["?1"; stamps].join(", "));
        sql.push(')');
    }
    sql
}

/// The bulk path of an import: the same decisions as [`import_rows`] row by row (a known uid updates
/// its tree and adds a measurement unless the tree has it), but inserts are gathered and written per
/// batch, trees first, then measurements, then the audit rows in row order. A row whose update would
/// change a tree first writes the batch, then runs the same `UPDATE` as the per-row path (its trigger
/// audits it in place). Ids are given explicitly: the next after the largest, as SQLite would choose.
struct BulkImport<'a> {
    conn: &'a rusqlite::Connection,
    audit: &'a BulkAudit,
    stamp: String,
    species_ids: HashMap<String, i64>,
    next_tree_id: i64,
    next_measurement_id: i64,
    batch: Batch,
    outcome: ImportOutcome,
    tree_chunk_sql: String,
    tree_one_sql: String,
    measurement_chunk_sql: String,
    measurement_one_sql: String,
}

fn import_rows_bulk(
    tx: &Transaction<'_>,
    rows: &mut dyn Iterator<Item = TreeImportRow>,
    now: DateTime<Utc>,
) -> Result<ImportOutcome, StoreError> {
    let audit = BulkAudit::begin(tx, &["trees", "measurements"])?;
    let next_id = |table: &str| -> Result<i64, StoreError> {
        let max: i64 = tx.query_row(
            &format!("SELECT coalesce(max(id), 0) FROM {table}"),
            [],
            |r| r.get(0),
        )?;
        max.checked_add(1)
            .ok_or_else(|| StoreError::Invalid(format!("{table}: no id left after {max}")))
    };
    let mut bulk = BulkImport {
        conn: tx,
        audit: &audit,
        stamp: timestamp(now),
        species_ids: species_ids_by_name(tx)?,
        next_tree_id: next_id("trees")?,
        next_measurement_id: next_id("measurements")?,
        batch: Batch::default(),
        outcome: ImportOutcome::default(),
        tree_chunk_sql: multi_row_insert(
            "trees",
            TREE_INSERT_COLUMNS,
            BULK_CHUNK_ROWS,
            TREE_PARAMS,
            2,
        ),
        tree_one_sql: multi_row_insert("trees", TREE_INSERT_COLUMNS, 1, TREE_PARAMS, 2),
        measurement_chunk_sql: multi_row_insert(
            "measurements",
            MEASUREMENT_INSERT_COLUMNS,
            BULK_CHUNK_ROWS,
            MEASUREMENT_PARAMS,
            1,
        ),
        measurement_one_sql: multi_row_insert(
            "measurements",
            MEASUREMENT_INSERT_COLUMNS,
            1,
            MEASUREMENT_PARAMS,
            1,
        ),
    };
    for row in rows {
        bulk.add(row)?;
    }
    bulk.flush()?;
    let outcome = bulk.outcome;
    audit.finish(tx)?;
    Ok(outcome)
}

impl BulkImport<'_> {
    fn add(&mut self, row: TreeImportRow) -> Result<(), StoreError> {
        let record = &row.record;
        let Some(&species_id) = self.species_ids.get(&record.species.to_lowercase()) else {
            // Earlier rows fail first, as they would row by row.
            self.flush()?;
            return Err(StoreError::Row {
                line: row.line,
                message: format!("species: '{}' is not in the species list", record.species),
            });
        };
        let site_kind = record.site_kind.map(SiteKind::as_str);
        let planted_on = record.planted_on.map(|d| d.to_string());
        let status = record.status.map(TreeStatus::as_str);
        let measured_on = record.measured_on.to_string();
        let dbh_cm = record.dbh_cm();

        let existing = match &record.uid {
            None => None,
            Some(uid) => match self.batch.tree_by_uid.get(uid) {
                Some(&index) => {
                    let tree = &self.batch.trees[index];
                    Some((tree.id, tree.attributes(), true))
                }
                None => self
                    .stored_tree(uid)?
                    .map(|(id, values)| (id, values, false)),
            },
        };
        let tree_id = match existing {
            Some((id, current, pending)) => {
                let given = [
                    Some(Value::Integer(species_id)),
                    record.lon.map(Value::Real),
                    record.lat.map(Value::Real),
                    record.street.as_deref().map(|t| text_value(Some(t))),
                    record.house_number.as_deref().map(|t| text_value(Some(t))),
                    site_kind.map(|t| text_value(Some(t))),
                    planted_on.as_deref().map(|t| text_value(Some(t))),
                    status.map(|t| text_value(Some(t))),
                    row.zone_id.map(Value::Integer),
                    record.notes.as_deref().map(|t| text_value(Some(t))),
                ];
                // Equal values (exactly, as SQLite compares them) change nothing; anything else goes
                // through the per-row UPDATE, after the batch, so the audit keeps row order.
                let same = given
                    .iter()
                    .zip(current.iter())
                    .all(|(given, current)| given.as_ref().is_none_or(|g| g == current));
                let mut stored = !pending;
                if !same {
                    self.flush()?;
                    stored = true;
                    let mut update = self.conn.prepare_cached(UPDATE_TREE_SQL)?;
                    let changed = update_tree_row(&mut update, id, species_id, &row, &self.stamp)
                        .map_err(|e| StoreError::Row {
                        line: row.line,
                        message: constraint_message(e),
                    })?;
                    self.outcome.trees_updated += changed;
                }
                if self.has_measurement(id, stored, &measured_on, dbh_cm)? {
                    self.outcome.measurements_unchanged += 1;
                    return Ok(());
                }
                id
            }
            None => {
                let id = self.next_tree_id;
                self.next_tree_id = id
                    .checked_add(1)
                    .ok_or_else(|| StoreError::Invalid("trees: no id left".to_string()))?;
                let uid = record
                    .uid
                    .clone()
                    .unwrap_or_else(|| uuid::Uuid::new_v4().to_string());
                let index = self.batch.trees.len();
                self.batch.tree_by_uid.insert(uid.clone(), index);
                self.batch.trees.push(PendingTree {
                    line: row.line,
                    id,
                    uid,
                    species_id,
                    lon: record.lon,
                    lat: record.lat,
                    street: record.street.clone(),
                    house_number: record.house_number.clone(),
                    site_kind,
                    planted_on,
                    status: status.unwrap_or(TreeStatus::Standing.as_str()),
                    zone_id: row.zone_id,
                    notes: record.notes.clone(),
                });
                self.batch.order.push(Pending::Tree(index));
                self.outcome.trees_added += 1;
                id
            }
        };
        let id = self.next_measurement_id;
        self.next_measurement_id = id
            .checked_add(1)
            .ok_or_else(|| StoreError::Invalid("measurements: no id left".to_string()))?;
        let index = self.batch.measurements.len();
        self.batch
            .measurements_by_tree
            .entry(tree_id)
            .or_default()
            .push(index);
        self.batch.measurements.push(PendingMeasurement {
            line: row.line,
            id,
            tree_id,
            measured_on,
            stems: record
                .multi_stem
                .then(|| crate::io::format_stems(&record.stems_cm)),
            dbh_cm,
            height_m: record.height_m,
            crown_base_m: record.crown_base_m,
            crown_width_m: record.crown_width_m,
            crown_width2_m: record.crown_width2_m,
            dieback_pct: record.dieback_pct,
            condition: record.condition.map(ConditionWord::as_str),
            measured_by: record.measured_by.clone(),
        });
        self.batch.order.push(Pending::Measurement(index));
        self.outcome.measurements_added += 1;
        if self.batch.order.len() >= BULK_BATCH_ROWS {
            self.flush()?;
        }
        Ok(())
    }

    /// The stored tree with this uid: its id and the attributes an import may update.
    fn stored_tree(&self, uid: &str) -> Result<Option<(i64, [Value; 10])>, StoreError> {
        let mut stmt = self.conn.prepare_cached(&format!(
            "SELECT id, {TREE_ATTRIBUTES} FROM trees WHERE uid = ?1"
        ))?;
        Ok(stmt
            .query_row([uid], |r| {
                Ok((
                    r.get(0)?,
                    [
                        r.get(1)?,
                        r.get(2)?,
                        r.get(3)?,
                        r.get(4)?,
                        r.get(5)?,
                        r.get(6)?,
                        r.get(7)?,
                        r.get(8)?,
                        r.get(9)?,
                        r.get(10)?,
                    ],
                ))
            })
            .optional()?)
    }

    /// Whether the tree already has this measurement (same date and DBH), written or in the batch.
    fn has_measurement(
        &self,
        tree_id: i64,
        stored: bool,
        measured_on: &str,
        dbh_cm: f64,
    ) -> Result<bool, StoreError> {
        let in_batch = self
            .batch
            .measurements_by_tree
            .get(&tree_id)
            .is_some_and(|indexes| {
                indexes.iter().any(|&i| {
                    let m = &self.batch.measurements[i];
                    m.measured_on == measured_on && (m.dbh_cm - dbh_cm).abs() < 1e-9
                })
            });
        if in_batch || !stored {
            // A tree of the batch has no measurements but the batch's.
            return Ok(in_batch);
        }
        Ok(self
            .conn
            .prepare_cached(SAME_MEASUREMENT_SQL)?
            .exists(params![tree_id, measured_on, dbh_cm])?)
    }

    /// Writes the batch: trees, measurements, then their audit rows in row order. A constraint that
    /// fails is traced to its row by writing the batch again row by row (in a savepoint undone first).
    fn flush(&mut self) -> Result<(), StoreError> {
        if self.batch.order.is_empty() {
            return Ok(());
        }
        self.conn.execute_batch("SAVEPOINT bulk_batch")?;
        match self.write_batch() {
            Ok(()) => self.conn.execute_batch("RELEASE bulk_batch")?,
            Err(error) => {
                self.conn
                    .execute_batch("ROLLBACK TO bulk_batch; RELEASE bulk_batch")?;
                let constraint = matches!(&error, StoreError::Sql(e)
                    if e.sqlite_error_code() == Some(ErrorCode::ConstraintViolation));
                return Err(match constraint {
                    true => self.failing_row().unwrap_or(error),
                    false => error,
                });
            }
        }
        self.batch.clear();
        Ok(())
    }

    fn write_batch(&self) -> Result<(), StoreError> {
        let trees = &self.batch.trees;
        let mut chunks = trees.chunks_exact(BULK_CHUNK_ROWS);
        for chunk in chunks.by_ref() {
            self.insert_trees(&self.tree_chunk_sql, chunk)?;
        }
        for tree in chunks.remainder() {
            self.insert_trees(&self.tree_one_sql, std::slice::from_ref(tree))?;
        }
        let measurements = &self.batch.measurements;
        let mut chunks = measurements.chunks_exact(BULK_CHUNK_ROWS);
        for chunk in chunks.by_ref() {
            self.insert_measurements(&self.measurement_chunk_sql, chunk)?;
        }
        for measurement in chunks.remainder() {
            self.insert_measurements(&self.measurement_one_sql, std::slice::from_ref(measurement))?;
        }
        let inserted: Vec<(usize, i64)> = self
            .batch
            .order
            .iter()
            .map(|pending| match *pending {
                Pending::Tree(i) => (0, trees[i].id),
                Pending::Measurement(i) => (1, measurements[i].id),
            })
            .collect();
        self.audit.record_inserts(self.conn, &inserted)
    }

    fn insert_trees(&self, sql: &str, trees: &[PendingTree]) -> rusqlite::Result<()> {
        let mut stmt = self.conn.prepare_cached(sql)?;
        stmt.raw_bind_parameter(1, &self.stamp)?;
        for (row, t) in trees.iter().enumerate() {
            let base = 2 + row * TREE_PARAMS;
            stmt.raw_bind_parameter(base, t.id)?;
            stmt.raw_bind_parameter(base + 1, &t.uid)?;
            stmt.raw_bind_parameter(base + 2, t.species_id)?;
            stmt.raw_bind_parameter(base + 3, t.lon)?;
            stmt.raw_bind_parameter(base + 4, t.lat)?;
            stmt.raw_bind_parameter(base + 5, &t.street)?;
            stmt.raw_bind_parameter(base + 6, &t.house_number)?;
            stmt.raw_bind_parameter(base + 7, t.site_kind)?;
            stmt.raw_bind_parameter(base + 8, &t.planted_on)?;
            stmt.raw_bind_parameter(base + 9, t.status)?;
            stmt.raw_bind_parameter(base + 10, t.zone_id)?;
            stmt.raw_bind_parameter(base + 11, &t.notes)?;
        }
        stmt.raw_execute()?;
        Ok(())
    }

    fn insert_measurements(&self, sql: &str, rows: &[PendingMeasurement]) -> rusqlite::Result<()> {
        let mut stmt = self.conn.prepare_cached(sql)?;
        stmt.raw_bind_parameter(1, &self.stamp)?;
        for (row, m) in rows.iter().enumerate() {
            let base = 2 + row * MEASUREMENT_PARAMS;
            stmt.raw_bind_parameter(base, m.id)?;
            stmt.raw_bind_parameter(base + 1, m.tree_id)?;
            stmt.raw_bind_parameter(base + 2, &m.measured_on)?;
            stmt.raw_bind_parameter(base + 3, &m.stems)?;
            stmt.raw_bind_parameter(base + 4, m.dbh_cm)?;
            stmt.raw_bind_parameter(base + 5, m.height_m)?;
            stmt.raw_bind_parameter(base + 6, m.crown_base_m)?;
            stmt.raw_bind_parameter(base + 7, m.crown_width_m)?;
            stmt.raw_bind_parameter(base + 8, m.crown_width2_m)?;
            stmt.raw_bind_parameter(base + 9, m.dieback_pct)?;
            stmt.raw_bind_parameter(base + 10, m.condition)?;
            stmt.raw_bind_parameter(base + 11, &m.measured_by)?;
        }
        stmt.raw_execute()?;
        Ok(())
    }

    /// After a failed batch (undone): the first row, in file order, whose insert the inventory
    /// refuses, with the message the per-row path gives.
    fn failing_row(&self) -> Option<StoreError> {
        for pending in &self.batch.order {
            let (line, result) = match *pending {
                Pending::Tree(i) => {
                    let tree = &self.batch.trees[i];
                    (
                        tree.line,
                        self.insert_trees(&self.tree_one_sql, std::slice::from_ref(tree)),
                    )
                }
                Pending::Measurement(i) => {
                    let m = &self.batch.measurements[i];
                    (
                        m.line,
                        self.insert_measurements(
                            &self.measurement_one_sql,
                            std::slice::from_ref(m),
                        ),
                    )
                }
            };
            if let Err(error) = result {
                return Some(StoreError::Row {
                    line,
                    message: constraint_message(error),
                });
            }
        }
        None
    }
}

fn constraint_message(error: rusqlite::Error) -> String {
    format!("rejected by the inventory's checks: {error}")
}

fn species_ids_by_name(tx: &Transaction<'_>) -> Result<HashMap<String, i64>, StoreError> {
    let mut stmt = tx.prepare("SELECT id, scientific_name FROM species")?;
    let map = stmt
        .query_map([], |row| {
            Ok((row.get::<_, String>(1)?.to_lowercase(), row.get(0)?))
        })?
        .collect::<Result<HashMap<_, _>, _>>()?;
    Ok(map)
}

fn parse_word<T>(
    index: usize,
    text: Option<String>,
    parse: impl Fn(&str) -> Result<T, crate::model::BadWord>,
) -> rusqlite::Result<Option<T>> {
    text.map(|t| {
        parse(&t).map_err(|e| {
            rusqlite::Error::FromSqlConversionFailure(
                index,
                rusqlite::types::Type::Text,
                Box::new(e),
            )
        })
    })
    .transpose()
}

fn parse_date(index: usize, text: Option<String>) -> rusqlite::Result<Option<NaiveDate>> {
    text.map(|t| {
        t.parse::<NaiveDate>().map_err(|e| {
            rusqlite::Error::FromSqlConversionFailure(
                index,
                rusqlite::types::Type::Text,
                Box::new(e),
            )
        })
    })
    .transpose()
}

fn parse_condition(index: usize, text: Option<String>) -> rusqlite::Result<Option<ConditionWord>> {
    text.map(|t| {
        ConditionWord::parse(&t).ok_or_else(|| {
            rusqlite::Error::FromSqlConversionFailure(
                index,
                rusqlite::types::Type::Text,
                format!("bad condition word '{t}'").into(),
            )
        })
    })
    .transpose()
}

fn species_from_row(row: &Row<'_>) -> rusqlite::Result<Species> {
    Ok(Species {
        id: row.get(0)?,
        scientific_name: row.get(1)?,
        common_name: row.get(2)?,
        genus: row.get(3)?,
        family: row.get(4)?,
        leaf_habit: parse_word(5, row.get(5)?, LeafHabit::parse)?.unwrap_or(LeafHabit::Deciduous),
        sg_green: row.get(6)?,
        jenkins_group: row.get(7)?,
        chojnacky_group: row.get(8)?,
        growth_cm_per_yr: row.get(9)?,
        growth_source: row.get(10)?,
        water_use: parse_word(11, row.get(11)?, WaterUse::parse)?.unwrap_or(WaterUse::Moderate),
        lai: row.get(12)?,
        max_height_m: row.get(13)?,
        builtin: row.get(14)?,
        source: row.get(15)?,
    })
}

fn stored_record_from_row(row: &Row<'_>) -> Result<StoredTreeRecord, StoreError> {
    let stems_text: Option<String> = row.get(11)?;
    let dbh_cm: f64 = row.get(12)?;
    let (stems_cm, multi_stem) = match stems_text {
        Some(text) => (
            crate::io::parse_stems(&text).map_err(|reason| {
                StoreError::Invalid(format!("stored stems '{text}': {reason}"))
            })?,
            true,
        ),
        None => (vec![dbh_cm], false),
    };
    let measured_on = parse_date(10, row.get(10)?)?
        .ok_or_else(|| StoreError::Invalid("a measurement without a date".to_string()))?;
    Ok(StoredTreeRecord {
        tree_id: row.get(0)?,
        uid: row.get(1)?,
        record: TreeRecord {
            uid: Some(row.get(1)?),
            species: row.get(2)?,
            lon: row.get(3)?,
            lat: row.get(4)?,
            street: row.get(5)?,
            house_number: row.get(6)?,
            site_kind: parse_word(7, row.get(7)?, SiteKind::parse)?,
            planted_on: parse_date(8, row.get(8)?)?,
            status: parse_word(9, row.get(9)?, TreeStatus::parse)?,
            measured_on,
            stems_cm,
            multi_stem,
            height_m: row.get(13)?,
            crown_base_m: row.get(14)?,
            crown_width_m: row.get(15)?,
            crown_width2_m: row.get(16)?,
            dieback_pct: row.get(17)?,
            condition: parse_condition(18, row.get(18)?)?,
            notes: row.get(19)?,
            measured_by: None,
        },
    })
}

pub(super) fn summary_from_row(row: &Row<'_>) -> rusqlite::Result<TreeSummary> {
    Ok(TreeSummary {
        id: row.get(0)?,
        uid: row.get(1)?,
        species: row.get(2)?,
        common_name: row.get(3)?,
        street: row.get(4)?,
        house_number: row.get(5)?,
        status: parse_word(6, row.get(6)?, TreeStatus::parse)?.unwrap_or(TreeStatus::Standing),
        dbh_cm: row.get(7)?,
        height_m: row.get(8)?,
        dieback_pct: row.get(9)?,
        condition: parse_condition(10, row.get(10)?)?,
        measured_on: parse_date(11, row.get(11)?)?,
        zone: row.get(12)?,
    })
}
