//! Field copies and their merge (issue 10): `copy` makes a copy for a crew and records it in both files;
//! `merge_from` brings another copy's rows and changes into this inventory in one write transaction.
//!
//! Identity of rows: trees by `uid` (always set); measurements, assessments, failure modes, mitigation
//! options and work orders by the `uid` of migration 0005, or, where it is NULL, by
//! `<file_id>:<id>` of the file that holds the row (the same name the migration's backfill and `copy`
//! write); species by scientific name and zones by name (added when missing, never changed).
//!
//! What the two files know of each other: `sync_peers` (how far each knows the other's audit log) and,
//! for files that forked from one another by a copy, the common prefix of their audit logs. A change
//! whose audit id is above that point is news to the other side. The decisions per field are the pure
//! functions of [`crate::sync`].

use std::collections::{BTreeMap, BTreeSet, HashMap, HashSet};
use std::path::Path;

use chrono::{DateTime, Utc};
use rusqlite::types::{Value as SqlValue, ValueRef};
use rusqlite::{Connection, OpenFlags, OptionalExtension, Transaction, params_from_iter};
use serde::{Deserialize, Serialize};
use serde_json::{Map, Value};

use super::{BUSY_TIMEOUT, Store, StoreError, backup, migrate, timestamp};
use crate::sync::{self, FieldConflict, FieldSide, Side};

/// The actor of every merge write (the audit log's `actor`).
pub const MERGE_ACTOR: &str = "merge";

/// Columns that are bookkeeping, not facts: copied when a row is added, never compared.
const BOOKKEEPING: [&str; 4] = ["id", "uid", "created_at", "updated_at"];

/// How rows of a table are matched across files.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Key {
    /// `uid`, or `<file_id>:<id>` when NULL (trees always have one).
    Uid,
    /// A unique name column, compared without case; such rows are added when missing, never changed.
    Name(&'static str),
}

struct TableSpec {
    name: &'static str,
    key: Key,
    /// (column, referenced table): stored as the referenced row's key, not its local id.
    refs: &'static [(&'static str, &'static str)],
}

/// Merged tables, parents before children.
const TABLES: [TableSpec; 8] = [
    TableSpec {
        name: "species",
        key: Key::Name("scientific_name"),
        refs: &[],
    },
    TableSpec {
        name: "zones",
        key: Key::Name("name"),
        refs: &[],
    },
    TableSpec {
        name: "trees",
        key: Key::Uid,
        refs: &[("species_id", "species"), ("zone_id", "zones")],
    },
    TableSpec {
        name: "measurements",
        key: Key::Uid,
        refs: &[("tree_id", "trees")],
    },
    TableSpec {
        name: "assessments",
        key: Key::Uid,
        refs: &[("tree_id", "trees")],
    },
    TableSpec {
        name: "failure_modes",
        key: Key::Uid,
        refs: &[("assessment_id", "assessments")],
    },
    TableSpec {
        name: "mitigation_options",
        key: Key::Uid,
        refs: &[("assessment_id", "assessments")],
    },
    TableSpec {
        name: "work_orders",
        key: Key::Uid,
        refs: &[("tree_id", "trees"), ("assessment_id", "assessments")],
    },
];

/// Tables whose rows may carry a NULL uid (named `<file_id>:<id>`).
const UID_TABLES: [&str; 5] = [
    "measurements",
    "assessments",
    "failure_modes",
    "mitigation_options",
    "work_orders",
];

/// A file's identity (migration 0005).
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct FileIdentity {
    pub file_id: String,
    pub inventory_id: String,
}

/// One recorded peer of a file.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct SyncPeer {
    pub peer_file_id: String,
    pub relation: String,
    pub crew: Option<String>,
    pub peer_path: Option<String>,
    pub seen_audit_id: i64,
    pub own_audit_id: i64,
    pub agreed_at: String,
}

/// What `copy` did.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct CopyOutcome {
    pub copy_file_id: String,
    pub origin_file_id: String,
    pub crew: String,
    /// The audit log both files share (ids up to this one).
    pub audit_id: i64,
    pub trees: i64,
}

/// Counts of one table in a merge.
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize)]
pub struct TableCounts {
    pub table: String,
    /// Rows of the other file that were new here.
    pub added: usize,
    /// Rows present in both files that the merge changed here.
    pub updated: usize,
    /// Rows present in both files left as they were.
    pub unchanged: usize,
    pub rejected: usize,
}

/// A conflict, with the row it is in.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MergeConflict {
    pub table: String,
    pub uid: String,
    /// The tree the row belongs to (its uid), for finding it.
    pub tree_uid: Option<String>,
    /// That tree's street in this file, for finding it.
    pub street: Option<String>,
    #[serde(flatten)]
    pub field: FieldConflict,
}

impl MergeConflict {
    /// Which conflict this is, for choosing its side.
    pub fn key(&self) -> ConflictKey {
        ConflictKey {
            table: self.table.clone(),
            uid: self.uid.clone(),
            field: self.field.field.clone(),
        }
    }
}

/// One field of one row: what a choice of side is for.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
pub struct ConflictKey {
    pub table: String,
    pub uid: String,
    pub field: String,
}

/// Sides chosen by hand for conflicts (`streetwood merge --interactive`); a conflict without a pick goes
/// to the rule's side (the later change).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct MergeChoices {
    /// The conflicts as the plan showed them. When given, the merge refuses, writing nothing, if the two
    /// files now give other conflicts (either file changed since the plan).
    pub planned: Option<Vec<MergeConflict>>,
    pub picks: BTreeMap<ConflictKey, Side>,
}

impl MergeChoices {
    /// Choices made on `plan` (a dry run's report).
    pub fn for_plan(plan: &MergeReport, picks: BTreeMap<ConflictKey, Side>) -> Self {
        MergeChoices {
            planned: Some(plan.conflicts.clone()),
            picks,
        }
    }
}

/// A row of the other file the merge did not take.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Rejected {
    pub table: String,
    pub uid: String,
    pub reason: String,
}

/// The merge report.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MergeReport {
    pub other: String,
    pub other_file_id: String,
    pub crew: Option<String>,
    pub dry_run: bool,
    /// Changes of this file the other had not seen counted from this audit id on (and the other's from
    /// `other_news_after`).
    pub target_news_after: i64,
    pub other_news_after: i64,
    pub tables: Vec<TableCounts>,
    pub conflicts: Vec<MergeConflict>,
    pub rejected: Vec<Rejected>,
}

impl MergeReport {
    /// Rows added plus rows updated over all tables.
    pub fn rows_changed(&self) -> usize {
        self.tables.iter().map(|t| t.added + t.updated).sum()
    }

    /// The report in words.
    pub fn to_text(&self) -> String {
        let mut out = format!(
            "{} {} (file {}{})\n",
            if self.dry_run {
                "Dry run: would merge"
            } else {
                "Merged"
            },
            self.other,
            self.other_file_id,
            self.crew
                .as_deref()
                .map(|c| format!(", crew {c}"))
                .unwrap_or_default()
        );
        out.push_str(&format!(
            "{:<20} {:>7} {:>8} {:>10} {:>9}\n",
            "table", "added", "updated", "unchanged", "rejected"
        ));
        for t in &self.tables {
            out.push_str(&format!(
                "{:<20} {:>7} {:>8} {:>10} {:>9}\n",
                t.table, t.added, t.updated, t.unchanged, t.rejected
            ));
        }
        let by_hand = self.conflicts.iter().filter(|c| c.field.by_hand).count();
        out.push_str(&format!(
            "conflicts: {}{}\n",
            self.conflicts.len(),
            if by_hand > 0 {
                format!(" ({by_hand} decided by hand)")
            } else {
                String::new()
            }
        ));
        let name = |side: Side| match side {
            Side::Target => "this file",
            Side::Other => "the copy",
        };
        for c in &self.conflicts {
            let f = &c.field;
            let (won, kept_where) = match f.winner {
                Side::Target => (
                    name(Side::Target),
                    "the copy's value stays in the copy's audit log",
                ),
                Side::Other => (
                    name(Side::Other),
                    "this file's value stays in its audit log",
                ),
            };
            let why = if f.by_hand {
                format!(
                    "chosen by hand; the rule's choice was {}, {}",
                    name(f.default_winner),
                    f.rule.describe()
                )
            } else {
                f.rule.describe().to_string()
            };
            out.push_str(&format!(
                "  {} {}{} field {}: this file {} (changed {}), the copy {} (changed {}); kept {} ({}); {}\n",
                c.table,
                c.uid,
                c.tree_uid
                    .as_deref()
                    .filter(|t| *t != c.uid)
                    .map(|t| format!(" (tree {t})"))
                    .unwrap_or_default(),
                f.field,
                f.target_value,
                f.target_changed_at,
                f.other_value,
                f.other_changed_at,
                won,
                why,
                kept_where
            ));
        }
        out.push_str(&format!("rejected: {}\n", self.rejected.len()));
        for r in &self.rejected {
            out.push_str(&format!("  {} {}: {}\n", r.table, r.uid, r.reason));
        }
        out
    }
}

/// A row read for merging: local id, key, and its columns (refs as the referenced rows' keys).
#[derive(Debug, Clone)]
struct LogicalRow {
    id: i64,
    key: String,
    values: BTreeMap<String, Value>,
}

/// One file's rows of one table, by key.
#[derive(Debug, Default)]
struct TableRows {
    rows: Vec<LogicalRow>,
    by_key: HashMap<String, usize>,
}

/// The file identity of an open inventory.
pub fn identity(conn: &Connection) -> Result<FileIdentity, StoreError> {
    Ok(conn.query_row(
        "SELECT file_id, inventory_id FROM sync_identity WHERE id = 1",
        [],
        |r| {
            Ok(FileIdentity {
                file_id: r.get(0)?,
                inventory_id: r.get(1)?,
            })
        },
    )?)
}

fn peer(conn: &Connection, peer_file_id: &str) -> Result<Option<SyncPeer>, StoreError> {
    Ok(conn
        .query_row(
            "SELECT peer_file_id, relation, crew, peer_path, seen_audit_id, own_audit_id, agreed_at
             FROM sync_peers WHERE peer_file_id = ?1",
            [peer_file_id],
            peer_from_row,
        )
        .optional()?)
}

fn peer_from_row(r: &rusqlite::Row<'_>) -> rusqlite::Result<SyncPeer> {
    Ok(SyncPeer {
        peer_file_id: r.get(0)?,
        relation: r.get(1)?,
        crew: r.get(2)?,
        peer_path: r.get(3)?,
        seen_audit_id: r.get(4)?,
        own_audit_id: r.get(5)?,
        agreed_at: r.get(6)?,
    })
}

fn max_audit_id(conn: &Connection) -> Result<i64, StoreError> {
    Ok(
        conn.query_row("SELECT coalesce(max(id), 0) FROM audit_log", [], |r| {
            r.get(0)
        })?,
    )
}

impl Store {
    /// This file's identity (file id and inventory id).
    pub fn file_identity(&self) -> Result<FileIdentity, StoreError> {
        identity(&self.conn)
    }

    /// The files this one has exchanged with, in the order they were recorded.
    pub fn sync_peers(&self) -> Result<Vec<SyncPeer>, StoreError> {
        let mut stmt = self.conn.prepare(
            "SELECT peer_file_id, relation, crew, peer_path, seen_audit_id, own_audit_id, agreed_at
             FROM sync_peers ORDER BY id",
        )?;
        let rows = stmt
            .query_map([], peer_from_row)?
            .collect::<Result<Vec<_>, _>>()?;
        Ok(rows)
    }

    /// Makes a field copy for `crew` at `dest` (which must not exist) with SQLite's backup API. The copy
    /// gets its own file id and records this file as its origin; this file records the copy. Both
    /// record the audit id up to which their logs are one.
    pub fn make_copy(
        &mut self,
        dest: &Path,
        crew: &str,
        now: DateTime<Utc>,
    ) -> Result<CopyOutcome, StoreError> {
        let crew = crew.trim();
        if crew.is_empty() {
            return Err(StoreError::Invalid(
                "--for: give the crew's name".to_string(),
            ));
        }
        if dest.exists() {
            return Err(StoreError::Invalid(format!(
                "{} exists already; choose a new file for the copy",
                dest.display()
            )));
        }
        let origin = self.file_identity()?;
        // Rows without a uid get their name now, so the copy and this file call them the same.
        self.write("copy", |tx| {
            for table in UID_TABLES {
                tx.execute(
                    &format!(
                        "UPDATE {table} SET uid = (SELECT file_id FROM sync_identity) || ':' || id WHERE uid IS NULL"
                    ),
                    [],
                )?;
            }
            Ok(())
        })?;
        let mut name = dest
            .file_name()
            .map(|n| n.to_os_string())
            .unwrap_or_default();
        name.push(".copying");
        let staging = dest.with_file_name(name);
        let _ = std::fs::remove_file(&staging);
        self.backup_file(&staging)?;
        let copy_id = uuid::Uuid::new_v4().to_string();
        let stamp = timestamp(now);
        let dest_text = dest.display().to_string();
        let own_path = self.path.as_ref().map(|p| p.display().to_string());
        let prepared = (|| -> Result<(i64, i64, i64), StoreError> {
            let mut conn = Connection::open(&staging)?;
            let tx = conn.transaction()?;
            let audit_id = max_audit_id(&tx)?;
            let txn: i64 = tx.query_row("SELECT txn FROM audit_context WHERE id = 1", [], |r| {
                r.get(0)
            })?;
            tx.execute(
                "UPDATE sync_identity SET file_id = ?1, created_at = ?2 WHERE id = 1",
                [&copy_id, &stamp],
            )?;
            tx.execute("DELETE FROM sync_peers WHERE peer_file_id = ?1", [&copy_id])?;
            tx.execute(
                "INSERT INTO sync_peers (peer_file_id, relation, crew, peer_path, seen_audit_id, own_audit_id, own_txn, agreed_at)
                 VALUES (?1, 'origin', ?2, ?3, ?4, ?4, ?5, ?6)
                 ON CONFLICT (peer_file_id) DO UPDATE SET relation = 'origin', crew = ?2, peer_path = ?3,
                     seen_audit_id = ?4, own_audit_id = ?4, own_txn = ?5, agreed_at = ?6",
                rusqlite::params![origin.file_id, crew, own_path, audit_id, txn, stamp],
            )?;
            let trees: i64 = tx.query_row("SELECT count(*) FROM trees", [], |r| r.get(0))?;
            tx.commit()?;
            conn.close().map_err(|(_, e)| StoreError::from(e))?;
            Ok((audit_id, txn, trees))
        })();
        let (audit_id, txn, trees) = match prepared {
            Ok(v) => v,
            Err(e) => {
                let _ = std::fs::remove_file(&staging);
                return Err(e);
            }
        };
        std::fs::File::open(&staging)
            .and_then(|f| f.sync_all())
            .and_then(|()| std::fs::rename(&staging, dest))
            .map_err(|e| {
                let _ = std::fs::remove_file(&staging);
                StoreError::Invalid(format!("cannot write {}: {e}", dest.display()))
            })?;
        self.write("copy", |tx| {
            tx.execute(
                "INSERT INTO sync_peers (peer_file_id, relation, crew, peer_path, seen_audit_id, own_audit_id, own_txn, agreed_at)
                 VALUES (?1, 'copy', ?2, ?3, ?4, ?4, ?5, ?6)",
                rusqlite::params![copy_id, crew, dest_text, audit_id, txn, stamp],
            )?;
            Ok(())
        })?;
        Ok(CopyOutcome {
            copy_file_id: copy_id,
            origin_file_id: origin.file_id,
            crew: crew.to_string(),
            audit_id,
            trees,
        })
    }

    /// Merges the inventory copy `other` into this one, in one write transaction (or, with `dry_run`,
    /// computes the report and changes nothing). `other` is only read.
    pub fn merge_from(
        &mut self,
        other: &Path,
        dry_run: bool,
        now: DateTime<Utc>,
    ) -> Result<MergeReport, StoreError> {
        self.merge_inner(other, dry_run, now, &MergeChoices::default())
    }

    /// The merge's plan: the report of a dry run (rows, conflicts with the rule's choice, rejections);
    /// nothing is written.
    pub fn merge_plan(
        &mut self,
        other: &Path,
        now: DateTime<Utc>,
    ) -> Result<MergeReport, StoreError> {
        self.merge_from(other, true, now)
    }

    /// Merges `other` like [`Store::merge_from`], with the sides of conflicts chosen in `choices` (the
    /// rest go to the later change). The losing value stays in the audit log, as always, and the report
    /// marks the conflicts decided by hand. Refuses, writing nothing, when a pick names no conflict of
    /// this merge or the conflicts differ from `choices.planned`.
    pub fn merge_from_with(
        &mut self,
        other: &Path,
        now: DateTime<Utc>,
        choices: &MergeChoices,
    ) -> Result<MergeReport, StoreError> {
        self.merge_inner(other, false, now, choices)
    }

    fn merge_inner(
        &mut self,
        other: &Path,
        dry_run: bool,
        now: DateTime<Utc>,
        choices: &MergeChoices,
    ) -> Result<MergeReport, StoreError> {
        let shown = other.display().to_string();
        if let Some(own) = self.path.as_deref()
            && let (Ok(a), Ok(b)) = (own.canonicalize(), other.canonicalize())
            && a == b
        {
            return Err(StoreError::Invalid(format!(
                "{shown} is this inventory itself; give another copy to merge"
            )));
        }
        let info = backup::inspect_backup(other)?;
        if info.schema_version != migrate::latest_version() {
            return Err(StoreError::Invalid(format!(
                "{shown} has schema version {} and this inventory {}; open {shown} once with this Streetwood (for example `streetwood --db {shown} check`) to bring it up to date, then merge",
                info.schema_version,
                migrate::latest_version()
            )));
        }
        let mut other_conn = Connection::open_with_flags(
            other,
            OpenFlags::SQLITE_OPEN_READ_ONLY | OpenFlags::SQLITE_OPEN_NO_MUTEX,
        )?;
        other_conn.busy_timeout(BUSY_TIMEOUT)?;
        // One read snapshot of the other file for the whole merge.
        let snapshot = other_conn.transaction()?;
        let theirs = identity(&snapshot)?;
        let ours = self.file_identity()?;
        if theirs.file_id == ours.file_id {
            return Err(StoreError::Invalid(format!(
                "{shown} is this same inventory file (a backup of it, not a field copy); make field copies with `streetwood copy --for CREW FILE`"
            )));
        }
        if theirs.inventory_id != ours.inventory_id {
            return Err(StoreError::Invalid(format!(
                "{shown} is a copy of a different inventory (inventory {}, this one is {}); only copies made with `streetwood copy` from this inventory or its copies can be merged",
                theirs.inventory_id, ours.inventory_id
            )));
        }
        let their_record_of_us = peer(&snapshot, &ours.file_id)?;
        let other_max = max_audit_id(&snapshot)?;
        let stamp = timestamp(now);
        let work = |tx: &Transaction<'_>| -> Result<MergeReport, StoreError> {
            let our_record_of_them = peer(tx, &theirs.file_id)?;
            let fork = common_audit_prefix(tx, &snapshot)?;
            let target_news_after = fork.max(
                their_record_of_us
                    .as_ref()
                    .map(|p| p.seen_audit_id)
                    .unwrap_or(0),
            );
            let other_news_after = fork.max(
                our_record_of_them
                    .as_ref()
                    .map(|p| p.seen_audit_id)
                    .unwrap_or(0),
            );
            // The crew the other file was copied for (none when it is not a field copy).
            let crew: Option<String> = snapshot
                .query_row(
                    "SELECT crew FROM sync_peers WHERE relation = 'origin' ORDER BY id DESC LIMIT 1",
                    [],
                    |r| r.get(0),
                )
                .optional()?
                .flatten();
            let mut merger = Merger {
                tx,
                other: &snapshot,
                target_file: &ours.file_id,
                other_file: &theirs.file_id,
                target_news_after,
                other_news_after,
                target_rows: HashMap::new(),
                other_rows: HashMap::new(),
                rejected_keys: HashMap::new(),
                other_news_rows: HashSet::new(),
                picks: &choices.picks,
                report: MergeReport {
                    other: shown.clone(),
                    other_file_id: theirs.file_id.clone(),
                    crew,
                    dry_run,
                    target_news_after,
                    other_news_after,
                    tables: Vec::new(),
                    conflicts: Vec::new(),
                    rejected: Vec::new(),
                },
            };
            for spec in &TABLES {
                merger.merge_table(spec)?;
            }
            check_choices(&merger.report, choices, &shown)?;
            let own_audit_id = max_audit_id(tx)?;
            let own_txn: i64 =
                tx.query_row("SELECT txn FROM audit_context WHERE id = 1", [], |r| {
                    r.get(0)
                })?;
            tx.execute(
                "INSERT INTO sync_peers (peer_file_id, relation, crew, peer_path, seen_audit_id, own_audit_id, own_txn, agreed_at)
                 VALUES (?1, 'merged', ?2, ?3, ?4, ?5, ?6, ?7)
                 ON CONFLICT (peer_file_id) DO UPDATE SET peer_path = ?3,
                     seen_audit_id = max(seen_audit_id, ?4), own_audit_id = ?5, own_txn = ?6, agreed_at = ?7",
                rusqlite::params![
                    theirs.file_id,
                    merger.report.crew,
                    shown,
                    other_max,
                    own_audit_id,
                    own_txn,
                    stamp
                ],
            )?;
            Ok(merger.report)
        };
        if dry_run {
            self.dry_run(MERGE_ACTOR, work)
        } else {
            self.write(MERGE_ACTOR, work)
        }
    }
}

/// The highest audit id up to which two files' audit logs are the same rows (0 when they share none):
/// files that forked by a copy share their history up to the copy.
fn common_audit_prefix(a: &Connection, b: &Connection) -> Result<i64, StoreError> {
    let fingerprint = |conn: &Connection, id: i64| -> Result<Option<String>, StoreError> {
        Ok(conn
            .query_row(
                "SELECT json_array(at, table_name, row_id, action, before_json, after_json, actor, txn)
                 FROM audit_log WHERE id = ?1",
                [id],
                |r| r.get(0),
            )
            .optional()?)
    };
    let same = |id: i64| -> Result<bool, StoreError> {
        let x = fingerprint(a, id)?;
        Ok(x.is_some() && x == fingerprint(b, id)?)
    };
    let (mut lo, mut hi) = (0_i64, max_audit_id(a)?.min(max_audit_id(b)?));
    if hi > 0 && same(hi)? {
        return Ok(hi);
    }
    // Invariant: `lo` is shared (0 trivially), `hi` is not.
    while hi - lo > 1 {
        let mid = lo + (hi - lo) / 2;
        if same(mid)? {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    Ok(lo)
}

struct Merger<'a, 't> {
    tx: &'a Transaction<'t>,
    other: &'a Connection,
    target_file: &'a str,
    other_file: &'a str,
    target_news_after: i64,
    other_news_after: i64,
    target_rows: HashMap<&'static str, TableRows>,
    other_rows: HashMap<&'static str, TableRows>,
    /// Keys of the other file's rows that were rejected, per table (their children are rejected too).
    rejected_keys: HashMap<&'static str, HashSet<String>>,
    /// Local ids of the other file's rows of the table being merged that have news (an audit row above
    /// `other_news_after`): only their equal fields can need a confirmation.
    other_news_rows: HashSet<i64>,
    /// Sides chosen by hand.
    picks: &'a BTreeMap<ConflictKey, Side>,
    report: MergeReport,
}

impl Merger<'_, '_> {
    fn merge_table(&mut self, spec: &TableSpec) -> Result<(), StoreError> {
        let target = load_rows(self.tx, spec, self.target_file, &self.target_rows)?;
        let other = load_rows(self.other, spec, self.other_file, &self.other_rows)?;
        let mut target = target;
        let mut counts = TableCounts {
            table: spec.name.to_string(),
            ..TableCounts::default()
        };
        let columns = column_names(self.tx, spec.name)?;
        self.other_news_rows = news_rows(self.other, spec.name, self.other_news_after)?;
        for row in &other.rows {
            if let Some(reason) = self.missing_parent(spec, row) {
                self.reject(spec, &row.key, reason, &mut counts);
                continue;
            }
            match target.by_key.get(&row.key).copied() {
                None => match self.insert(spec, row, &columns)? {
                    Ok(id) => {
                        counts.added += 1;
                        target.by_key.insert(row.key.clone(), target.rows.len());
                        target.rows.push(LogicalRow {
                            id,
                            key: row.key.clone(),
                            values: row.values.clone(),
                        });
                    }
                    Err(reason) => self.reject(spec, &row.key, reason, &mut counts),
                },
                Some(index) => {
                    if matches!(spec.key, Key::Name(_)) {
                        counts.unchanged += 1;
                        continue;
                    }
                    let mine = &target.rows[index];
                    match self.update(spec, mine, row)? {
                        Ok(Some(values)) => {
                            counts.updated += 1;
                            target.rows[index].values = values;
                        }
                        Ok(None) => counts.unchanged += 1,
                        Err(reason) => self.reject(spec, &row.key, reason, &mut counts),
                    }
                }
            }
        }
        self.report.tables.push(counts);
        self.target_rows.insert(spec.name, target);
        self.other_rows.insert(spec.name, other);
        Ok(())
    }

    fn reject(&mut self, spec: &TableSpec, key: &str, reason: String, counts: &mut TableCounts) {
        counts.rejected += 1;
        self.rejected_keys
            .entry(spec.name)
            .or_default()
            .insert(key.to_string());
        self.report.rejected.push(Rejected {
            table: spec.name.to_string(),
            uid: key.to_string(),
            reason,
        });
    }

    /// Why a row cannot come in because a row it refers to is not here (None when all are).
    fn missing_parent(&self, spec: &TableSpec, row: &LogicalRow) -> Option<String> {
        for (column, parent) in spec.refs {
            let Some(Value::String(key)) = row.values.get(*column) else {
                continue;
            };
            let known = self
                .target_rows
                .get(parent)
                .is_some_and(|t| t.by_key.contains_key(key));
            if known {
                continue;
            }
            let was_rejected = self
                .rejected_keys
                .get(parent)
                .is_some_and(|k| k.contains(key));
            return Some(if was_rejected {
                format!("its {} {key} was rejected", singular(parent))
            } else {
                format!(
                    "its {} {key} is in neither file (the copy refers to a row it does not have)",
                    singular(parent)
                )
            });
        }
        None
    }

    /// The value of a ref column as the target's local id (`Null` stays `Null`).
    fn local_ref(&self, parent: &str, value: &Value) -> Result<SqlValue, String> {
        match value {
            Value::String(key) => self
                .target_rows
                .get(parent)
                .and_then(|t| t.by_key.get(key).map(|&i| t.rows[i].id))
                .map(SqlValue::Integer)
                .ok_or_else(|| format!("its {} {key} is not in this file", singular(parent))),
            Value::Null => Ok(SqlValue::Null),
            other => Err(format!("unexpected reference {other}")),
        }
    }

    fn sql_value(&self, spec: &TableSpec, column: &str, value: &Value) -> Result<SqlValue, String> {
        match spec.refs.iter().find(|(c, _)| *c == column) {
            Some((_, parent)) => self.local_ref(parent, value),
            None => Ok(to_sql(value)),
        }
    }

    /// Inserts a row of the other file; `Ok(Err(reason))` when the inventory's checks refuse it.
    fn insert(
        &mut self,
        spec: &TableSpec,
        row: &LogicalRow,
        columns: &[String],
    ) -> Result<Result<i64, String>, StoreError> {
        let mut names = Vec::new();
        let mut values = Vec::new();
        for column in columns {
            if column == "id" {
                continue;
            }
            let value = if column == "uid" && spec.key == Key::Uid {
                Value::String(row.key.clone())
            } else {
                row.values.get(column).cloned().unwrap_or(Value::Null)
            };
            match self.sql_value(spec, column, &value) {
                Ok(v) => values.push(v),
                Err(reason) => return Ok(Err(reason)),
            }
            names.push(format!("\"{column}\""));
        }
        let placeholders: Vec<String> = (1..=names.len()).map(|i| format!("?{i}")).collect();
        let sql = format!(
            "INSERT INTO {} ({}) VALUES ({})",
            spec.name,
            names.join(", "),
            placeholders.join(", ")
        );
        let outcome = guarded(self.tx, |tx| {
            tx.execute(&sql, params_from_iter(values.iter()))?;
            Ok(tx.last_insert_rowid())
        })?;
        if let (Ok(_), Key::Uid) = (&outcome, spec.key) {
            // The new row's fields keep the times of their changes in the other file.
            let stamps = field_sides(
                self.other,
                spec.name,
                row,
                self.other_news_after,
                &fields_of(&row.values),
            )?;
            let stamps: BTreeMap<String, Stamp> = stamps
                .into_iter()
                .map(|(f, s)| (f, Stamp::At(s.changed_at)))
                .collect();
            save_stamps(self.tx, spec.name, &row.key, &stamps)?;
        }
        Ok(outcome)
    }

    /// Merges a row present in both files; `Ok(Ok(Some(values)))` when the target row's values changed.
    fn update(
        &mut self,
        spec: &TableSpec,
        mine: &LogicalRow,
        theirs: &LogicalRow,
    ) -> Result<Result<Option<BTreeMap<String, Value>>, String>, StoreError> {
        let differs = |f: &String| match (mine.values.get(f), theirs.values.get(f)) {
            (Some(a), Some(b)) => !sync::same_value(a, b),
            _ => false,
        };
        let differing: Vec<String> = fields_of(&mine.values)
            .into_iter()
            .filter(|f| differs(f))
            .collect();
        // Equal fields matter only where the other file has news for the row (a confirmation).
        let compared: Vec<String> = if self.other_news_rows.contains(&theirs.id) {
            fields_of(&mine.values)
                .into_iter()
                .filter(|f| theirs.values.contains_key(f))
                .collect()
        } else {
            differing.clone()
        };
        let mine_updated = text_of(mine.values.get("updated_at"));
        let their_updated = text_of(theirs.values.get("updated_at"));
        let newer_stamp = their_updated > mine_updated;
        if compared.is_empty() && !newer_stamp {
            return Ok(Ok(None));
        }
        let ours = field_sides(self.tx, spec.name, mine, self.target_news_after, &compared)?;
        let other = field_sides(
            self.other,
            spec.name,
            theirs,
            self.other_news_after,
            &compared,
        )?;
        let outcome = sync::merge_row_with(&ours, &other, |field| {
            self.picks
                .get(&ConflictKey {
                    table: spec.name.to_string(),
                    uid: theirs.key.clone(),
                    field: field.to_string(),
                })
                .copied()
        });
        let tree_uid = tree_of(spec, theirs);
        let street = if spec.name == "trees" {
            Some(mine)
        } else {
            tree_uid.as_ref().and_then(|uid| {
                let trees = self.target_rows.get("trees")?;
                trees.by_key.get(uid).map(|&i| &trees.rows[i])
            })
        }
        .and_then(|tree| match tree.values.get("street") {
            Some(Value::String(street)) => Some(street.clone()),
            _ => None,
        });
        for conflict in &outcome.conflicts {
            self.report.conflicts.push(MergeConflict {
                table: spec.name.to_string(),
                uid: theirs.key.clone(),
                tree_uid: tree_uid.clone(),
                street: street.clone(),
                field: conflict.clone(),
            });
        }
        let mut sets = Vec::new();
        let mut values = Vec::new();
        let mut merged = mine.values.clone();
        for write in &outcome.writes {
            match self.sql_value(spec, &write.field, &write.value) {
                Ok(v) => values.push(v),
                Err(reason) => return Ok(Err(reason)),
            }
            sets.push(format!("\"{}\" = ?{}", write.field, values.len()));
            merged.insert(write.field.clone(), write.value.clone());
        }
        let changes_values = !outcome.writes.is_empty() || (newer_stamp && !differing.is_empty());
        if changes_values && merged.contains_key("updated_at") {
            let later = sync::later(&mine_updated, &their_updated).to_string();
            values.push(SqlValue::Text(later.clone()));
            sets.push(format!("\"updated_at\" = ?{}", values.len()));
            merged.insert("updated_at".to_string(), Value::String(later));
        }
        if sets.is_empty() {
            match outcome.confirmations.first() {
                // Confirmations only: an update that changes no value, so the audit log has a row of this
                // merge for the row, whose id the confirmations name.
                Some(first) => sets.push(format!("\"{0}\" = \"{0}\"", first.field)),
                None => return Ok(Ok(None)),
            }
        }
        values.push(SqlValue::Integer(mine.id));
        let sql = format!(
            "UPDATE {} SET {} WHERE id = ?{}",
            spec.name,
            sets.join(", "),
            values.len()
        );
        let outcome_sql = guarded(self.tx, |tx| {
            tx.execute(&sql, params_from_iter(values.iter()))?;
            Ok(())
        })?;
        if let Err(reason) = outcome_sql {
            return Ok(Err(format!("the merged row is refused: {reason}")));
        }
        let mut stamps: BTreeMap<String, Stamp> = outcome
            .writes
            .iter()
            .map(|w| (w.field.clone(), Stamp::At(w.changed_at.clone())))
            .collect();
        if !outcome.confirmations.is_empty() {
            let audit_id: i64 = self.tx.query_row(
                "SELECT max(id) FROM audit_log WHERE table_name = ?1 AND row_id = ?2",
                rusqlite::params![spec.name, mine.id],
                |r| r.get(0),
            )?;
            for c in &outcome.confirmations {
                stamps.insert(
                    c.field.clone(),
                    Stamp::Confirmed {
                        at: c.changed_at.clone(),
                        audit_id,
                    },
                );
            }
        }
        save_stamps(self.tx, spec.name, &mine.key, &stamps)?;
        Ok(Ok(changes_values.then_some(merged)))
    }
}

/// Refuses choices that do not fit the merge's conflicts (the files changed since the plan was shown).
fn check_choices(
    report: &MergeReport,
    choices: &MergeChoices,
    shown: &str,
) -> Result<(), StoreError> {
    let changed = || {
        StoreError::Invalid(format!(
            "the inventory or {shown} changed since the conflicts were listed; nothing was merged: run the merge again"
        ))
    };
    let keys: HashSet<ConflictKey> = report.conflicts.iter().map(MergeConflict::key).collect();
    if choices.picks.keys().any(|k| !keys.contains(k)) {
        return Err(changed());
    }
    if let Some(planned) = &choices.planned {
        let facts = |c: &MergeConflict| {
            (
                c.key(),
                c.field.target_value.to_string(),
                c.field.other_value.to_string(),
            )
        };
        let now: BTreeSet<_> = report.conflicts.iter().map(facts).collect();
        let then: BTreeSet<_> = planned.iter().map(facts).collect();
        if now != then {
            return Err(changed());
        }
    }
    Ok(())
}

fn singular(table: &str) -> &str {
    match table {
        "trees" => "tree",
        "assessments" => "assessment",
        "species" => "species",
        "zones" => "zone",
        other => other,
    }
}

fn tree_of(spec: &TableSpec, row: &LogicalRow) -> Option<String> {
    if spec.name == "trees" {
        return Some(row.key.clone());
    }
    match row.values.get("tree_id") {
        Some(Value::String(uid)) => Some(uid.clone()),
        _ => None,
    }
}

fn text_of(value: Option<&Value>) -> String {
    match value {
        Some(Value::String(s)) => s.clone(),
        _ => String::new(),
    }
}

/// The compared fields of a row (everything but bookkeeping).
fn fields_of(values: &BTreeMap<String, Value>) -> Vec<String> {
    values
        .keys()
        .filter(|k| !BOOKKEEPING.contains(&k.as_str()))
        .cloned()
        .collect()
}

/// Runs one statement under a savepoint: a row the inventory's checks refuse (a CHECK, UNIQUE, NOT
/// NULL or foreign-key constraint) is rolled back alone and its reason returned; any other failure
/// (including a trigger's, such as the audit log's) aborts the whole merge.
fn guarded<T>(
    tx: &Transaction<'_>,
    work: impl FnOnce(&Transaction<'_>) -> rusqlite::Result<T>,
) -> Result<Result<T, String>, StoreError> {
    tx.execute_batch("SAVEPOINT merge_row")?;
    match work(tx) {
        Ok(value) => {
            tx.execute_batch("RELEASE merge_row")?;
            Ok(Ok(value))
        }
        Err(error) => {
            let row_problem = matches!(
                &error,
                rusqlite::Error::SqliteFailure(e, _)
                    if e.code == rusqlite::ErrorCode::ConstraintViolation
                        && e.extended_code != rusqlite::ffi::SQLITE_CONSTRAINT_TRIGGER
            );
            tx.execute_batch("ROLLBACK TO merge_row; RELEASE merge_row")?;
            if row_problem {
                Ok(Err(format!("rejected by the inventory's checks: {error}")))
            } else {
                Err(StoreError::from(error))
            }
        }
    }
}

fn column_names(conn: &Connection, table: &str) -> Result<Vec<String>, StoreError> {
    let mut stmt = conn.prepare("SELECT name FROM pragma_table_info(?1)")?;
    let names = stmt
        .query_map([table], |r| r.get::<_, String>(0))?
        .collect::<Result<Vec<_>, _>>()?;
    Ok(names)
}

/// Reads every row of a table with refs translated to keys through the already loaded parents.
fn load_rows(
    conn: &Connection,
    spec: &TableSpec,
    file_id: &str,
    loaded: &HashMap<&'static str, TableRows>,
) -> Result<TableRows, StoreError> {
    let mut stmt = conn.prepare(&format!("SELECT * FROM {} ORDER BY id", spec.name))?;
    let names: Vec<String> = stmt.column_names().map(|s| s.to_string()).collect();
    let mut parent_keys: HashMap<&str, HashMap<i64, String>> = HashMap::new();
    for (column, parent) in spec.refs {
        let keys = loaded
            .get(parent)
            .map(|t| t.rows.iter().map(|r| (r.id, r.key.clone())).collect())
            .unwrap_or_default();
        parent_keys.insert(column, keys);
    }
    let mut out = TableRows::default();
    let mut rows = stmt.query([])?;
    while let Some(row) = rows.next()? {
        let mut id = 0;
        let mut values = BTreeMap::new();
        for (i, name) in names.iter().enumerate() {
            let value = json_of(row.get_ref(i)?);
            if name == "id" {
                id = row.get(i)?;
                continue;
            }
            let value = match (parent_keys.get(name.as_str()), &value) {
                (Some(keys), Value::Number(n)) => match n.as_i64().and_then(|i| keys.get(&i)) {
                    Some(key) => Value::String(key.clone()),
                    None => Value::String(format!("(row {n} of another table)")),
                },
                _ => value,
            };
            values.insert(name.clone(), value);
        }
        let key = match spec.key {
            Key::Uid => match values.get("uid") {
                Some(Value::String(uid)) => uid.clone(),
                _ => format!("{file_id}:{id}"),
            },
            Key::Name(column) => text_of(values.get(column)).to_lowercase(),
        };
        out.by_key.insert(key.clone(), out.rows.len());
        out.rows.push(LogicalRow { id, key, values });
    }
    Ok(out)
}

fn json_of(value: ValueRef<'_>) -> Value {
    match value {
        ValueRef::Null => Value::Null,
        ValueRef::Integer(i) => Value::from(i),
        ValueRef::Real(f) => serde_json::Number::from_f64(f)
            .map(Value::Number)
            .unwrap_or(Value::Null),
        ValueRef::Text(t) => Value::String(String::from_utf8_lossy(t).into_owned()),
        ValueRef::Blob(b) => Value::String(b.iter().map(|x| format!("{x:02x}")).collect()),
    }
}

fn to_sql(value: &Value) -> SqlValue {
    match value {
        Value::Null => SqlValue::Null,
        Value::Bool(b) => SqlValue::Integer(i64::from(*b)),
        Value::Number(n) => match n.as_i64() {
            Some(i) => SqlValue::Integer(i),
            None => SqlValue::Real(n.as_f64().unwrap_or(0.0)),
        },
        Value::String(s) => SqlValue::Text(s.clone()),
        other => SqlValue::Text(other.to_string()),
    }
}

/// Each field's value, the time of the change that set it and whether that change is news to the
/// other side (its audit id is above `news_after`), from the row's audit history in `conn`.
fn field_sides(
    conn: &Connection,
    table: &str,
    row: &LogicalRow,
    news_after: i64,
    fields: &[String],
) -> Result<BTreeMap<String, FieldSide>, StoreError> {
    let mut stmt = conn.prepare_cached(
        "SELECT id, at, actor, before_json, after_json FROM audit_log
         WHERE table_name = ?1 AND row_id = ?2 ORDER BY id",
    )?;
    let history = stmt
        .query_map(rusqlite::params![table, row.id], |r| {
            Ok((
                r.get::<_, i64>(0)?,
                r.get::<_, String>(1)?,
                r.get::<_, String>(2)?,
                r.get::<_, Option<String>>(3)?,
                r.get::<_, Option<String>>(4)?,
            ))
        })?
        .collect::<Result<Vec<_>, _>>()?;
    let parse = |text: &Option<String>| -> Option<Map<String, Value>> {
        text.as_deref()
            .and_then(|t| serde_json::from_str::<Map<String, Value>>(t).ok())
    };
    let parsed: Vec<_> = history
        .iter()
        .map(|(id, at, actor, before, after)| (*id, at, actor, parse(before), parse(after)))
        .collect();
    let stamps = load_stamps(conn, table, &row.key)?;
    let mut out = BTreeMap::new();
    for field in fields {
        let last = parsed.iter().rev().find(|(_, _, _, before, after)| {
            let Some(after) = after else { return false };
            match before {
                None => true,
                Some(before) => before.get(field) != after.get(field),
            }
        });
        let stamp = stamps.get(field);
        let (mut audit_id, mut changed_at, mut changed_by) = match last {
            Some((id, at, actor, _, _)) => {
                let at = match stamp {
                    Some(stamp) if actor.as_str() == MERGE_ACTOR => stamp.at().to_string(),
                    _ => (*at).clone(),
                };
                (*id, at, (*actor).clone())
            }
            None => (0, String::new(), String::new()),
        };
        // A merge confirmed the (equal) value after its last change: its time and audit row count.
        if let Some(Stamp::Confirmed { at, audit_id: id }) = stamp
            && *id > audit_id
        {
            (audit_id, changed_at, changed_by) = (*id, at.clone(), MERGE_ACTOR.to_string());
        }
        out.insert(
            field.clone(),
            FieldSide {
                value: row.values.get(field).cloned().unwrap_or(Value::Null),
                changed_at,
                changed_by,
                news: audit_id > news_after,
            },
        );
    }
    Ok(out)
}

/// A field's entry in `merge_stamps`: the time of the change a merge brought in (written as a plain
/// string, the form of migration 0005), or a confirmation: an equal value whose later change came from
/// another file, with the audit row of the merge that recorded it (issue 10).
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
#[serde(untagged)]
enum Stamp {
    At(String),
    Confirmed { at: String, audit_id: i64 },
}

impl Stamp {
    fn at(&self) -> &str {
        match self {
            Stamp::At(at) | Stamp::Confirmed { at, .. } => at,
        }
    }
}

/// Local ids of a table's rows with an audit row above `after`.
fn news_rows(conn: &Connection, table: &str, after: i64) -> Result<HashSet<i64>, StoreError> {
    let mut stmt = conn.prepare_cached(
        "SELECT DISTINCT row_id FROM audit_log WHERE id > ?1 AND table_name = ?2",
    )?;
    let rows = stmt
        .query_map(rusqlite::params![after, table], |r| r.get::<_, i64>(0))?
        .collect::<Result<HashSet<_>, _>>()?;
    Ok(rows)
}

fn load_stamps(
    conn: &Connection,
    table: &str,
    uid: &str,
) -> Result<BTreeMap<String, Stamp>, StoreError> {
    let text: Option<String> = conn
        .query_row(
            "SELECT stamps_json FROM merge_stamps WHERE table_name = ?1 AND uid = ?2",
            [table, uid],
            |r| r.get(0),
        )
        .optional()?;
    Ok(text
        .and_then(|t| serde_json::from_str::<BTreeMap<String, Stamp>>(&t).ok())
        .unwrap_or_default())
}

fn save_stamps(
    tx: &Transaction<'_>,
    table: &str,
    uid: &str,
    stamps: &BTreeMap<String, Stamp>,
) -> Result<(), StoreError> {
    if stamps.is_empty() {
        return Ok(());
    }
    let mut all = load_stamps(tx, table, uid)?;
    all.extend(stamps.iter().map(|(k, v)| (k.clone(), v.clone())));
    let text = serde_json::to_string(&all).map_err(|e| StoreError::Invalid(e.to_string()))?;
    tx.execute(
        "INSERT INTO merge_stamps (table_name, uid, stamps_json) VALUES (?1, ?2, ?3)
         ON CONFLICT (table_name, uid) DO UPDATE SET stamps_json = ?3",
        [table, uid, &text],
    )?;
    Ok(())
}
