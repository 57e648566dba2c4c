//! The audit log: one row per insert, update or delete of every audited table, with the row before and
//! after as JSON, written by SQL triggers so that no write path can forget it.
//!
//! The triggers are generated from the live schema (`PRAGMA table_info`) after migrations run, so a
//! migration that adds a column is audited without anyone writing a trigger by hand.

use rusqlite::{Connection, OptionalExtension, params};
use serde::Serialize;

use super::StoreError;

/// Tables whose every change is mirrored into `audit_log`.
pub const AUDITED_TABLES: &[&str] = &[
    "species",
    "zones",
    "trees",
    "measurements",
    "assessments",
    "failure_modes",
    "mitigation_options",
    "work_orders",
    "weather_stations",
    "weather_days",
    "studies",
    "study_trees",
    "study_plantings",
    "settings",
];

/// (Re)creates the audit triggers of every audited table from its current columns.
pub fn install_triggers(conn: &Connection) -> Result<(), StoreError> {
    let mut sql = String::new();
    for table in AUDITED_TABLES {
        let columns = table_columns(conn, table)?;
        for action in ["insert", "update", "delete"] {
            sql.push_str(&trigger_sql(table, &columns, action));
        }
    }
    conn.execute_batch(&sql)?;
    Ok(())
}

/// `json_object('col', alias."col", …)` over `columns` in table order: the JSON shape of every audit row.
fn json_of(columns: &[String], alias: &str) -> String {
    let pairs: Vec<String> = columns
        .iter()
        .map(|c| format!("'{c}', {alias}.\"{c}\""))
        .collect();
    format!("json_object({})", pairs.join(", "))
}

const ACTOR: &str = "(SELECT actor FROM audit_context WHERE id = 1)";
const TXN: &str = "(SELECT txn FROM audit_context WHERE id = 1)";
const UNDO_OF: &str = "(SELECT undo_of FROM audit_context WHERE id = 1)";

/// The SQL that (re)creates one audit trigger of `table` (`action`: insert, update or delete).
fn trigger_sql(table: &str, columns: &[String], action: &str) -> String {
    let (event, before, after, row) = match action {
        "insert" => (
            "INSERT",
            "NULL".to_string(),
            json_of(columns, "NEW"),
            "NEW.rowid",
        ),
        "update" => (
            "UPDATE",
            json_of(columns, "OLD"),
            json_of(columns, "NEW"),
            "NEW.rowid",
        ),
        _ => (
            "DELETE",
            json_of(columns, "OLD"),
            "NULL".to_string(),
            "OLD.rowid",
        ),
    };
    format!(
        "DROP TRIGGER IF EXISTS audit_{table}_{action};\n\
         CREATE TRIGGER audit_{table}_{action} AFTER {event} ON {table} BEGIN \
         INSERT INTO audit_log (table_name, row_id, action, before_json, after_json, actor, txn, undo_of) \
         VALUES ('{table}', {row}, '{action}', {before}, {after}, {ACTOR}, {TXN}, {UNDO_OF}); END;\n"
    )
}

/// Bulk writing with the audit log kept by hand: inside one write transaction, the insert triggers of
/// some audited tables are dropped, the writer inserts rows without them and then records each insert
/// with [`BulkAudit::record_inserts`] (the very rows, JSON and numbering the triggers would have
/// written), and [`BulkAudit::finish`] recreates the triggers before the commit. Dropping and
/// recreating happen in the caller's transaction: other connections never see the log without its
/// triggers, and a rollback or a crash brings them back with everything else.
pub struct BulkAudit {
    tables: Vec<&'static str>,
    /// One `INSERT INTO audit_log … SELECT` per batch: `?1` is a JSON array of the inserted rows in
    /// the order the triggers would have fired, each as `rowid * 8 + table index`.
    record_sql: String,
}

impl BulkAudit {
    /// Drops the insert triggers of `tables` (audited tables) inside the caller's transaction.
    pub fn begin(conn: &Connection, tables: &[&'static str]) -> Result<Self, StoreError> {
        if tables.len() > 8 {
            return Err(StoreError::Invalid(
                "bulk audit: at most 8 tables at once".to_string(),
            ));
        }
        let mut cases = String::new();
        let mut drops = String::new();
        for (index, table) in tables.iter().enumerate() {
            if !AUDITED_TABLES.contains(table) {
                return Err(StoreError::Invalid(format!(
                    "'{table}' is not an audited table"
                )));
            }
            let columns = table_columns(conn, table)?;
            cases.push_str(&format!(
                " WHEN {index} THEN (SELECT {json} FROM {table} r WHERE r.rowid = j.value / 8)",
                json = json_of(&columns, "r")
            ));
            drops.push_str(&format!("DROP TRIGGER IF EXISTS audit_{table}_insert;\n"));
        }
        let names: Vec<String> = tables
            .iter()
            .enumerate()
            .map(|(i, t)| format!("WHEN {i} THEN '{t}'"))
            .collect();
        let record_sql = format!(
            "INSERT INTO audit_log (table_name, row_id, action, before_json, after_json, actor, txn, undo_of) \
             SELECT CASE j.value % 8 {names} END, j.value / 8, 'insert', NULL, \
                    CASE j.value % 8{cases} END, {ACTOR}, {TXN}, {UNDO_OF} \
             FROM json_each(?1) j ORDER BY j.key",
            names = names.join(" ")
        );
        conn.execute_batch(&drops)?;
        Ok(BulkAudit {
            tables: tables.to_vec(),
            record_sql,
        })
    }

    /// Writes the audit rows of inserted rows, in order: `(index into the tables given to
    /// [`BulkAudit::begin`], rowid)`. Each row is recorded as it is now, so call this before anything
    /// changes the rows again.
    pub fn record_inserts(
        &self,
        conn: &Connection,
        inserted: &[(usize, i64)],
    ) -> Result<(), StoreError> {
        if inserted.is_empty() {
            return Ok(());
        }
        let mut list = String::with_capacity(inserted.len() * 12 + 2);
        list.push('[');
        for (n, &(table, rowid)) in inserted.iter().enumerate() {
            let code = rowid
                .checked_mul(8)
                .filter(|_| rowid > 0 && table < self.tables.len())
                .map(|c| c + table as i64)
                .ok_or_else(|| {
                    StoreError::Invalid(format!(
                        "bulk audit: cannot record row {rowid} of table {table}"
                    ))
                })?;
            if n > 0 {
                list.push(',');
            }
            list.push_str(&code.to_string());
        }
        list.push(']');
        let written = conn.prepare_cached(&self.record_sql)?.execute([list])?;
        if written != inserted.len() {
            return Err(StoreError::Invalid(format!(
                "bulk audit: {written} audit rows written for {} inserted rows",
                inserted.len()
            )));
        }
        Ok(())
    }

    /// Recreates the insert triggers from the live schema (the same SQL [`install_triggers`] writes).
    pub fn finish(self, conn: &Connection) -> Result<(), StoreError> {
        let mut sql = String::new();
        for table in &self.tables {
            sql.push_str(&trigger_sql(table, &table_columns(conn, table)?, "insert"));
        }
        conn.execute_batch(&sql)?;
        Ok(())
    }
}

fn table_columns(conn: &Connection, table: &str) -> Result<Vec<String>, StoreError> {
    let mut stmt = conn.prepare("SELECT name FROM pragma_table_info(?1)")?;
    let names = stmt
        .query_map([table], |row| row.get::<_, String>(0))?
        .collect::<Result<Vec<_>, _>>()?;
    Ok(names)
}

/// Starts a numbered change attributed to `actor` (inside the caller's transaction); returns its number.
pub fn set_actor(conn: &Connection, actor: &str) -> Result<i64, StoreError> {
    Ok(conn.query_row(
        "UPDATE audit_context SET actor = ?1, txn = txn + 1, undo_of = NULL WHERE id = 1 RETURNING txn",
        [actor],
        |row| row.get(0),
    )?)
}

/// The columns of an audited table, as the triggers record them.
pub fn columns(conn: &Connection, table: &str) -> Result<Vec<String>, StoreError> {
    if !AUDITED_TABLES.contains(&table) {
        return Err(StoreError::Invalid(format!(
            "'{table}' is not an audited table"
        )));
    }
    table_columns(conn, table)
}

/// One audit row.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AuditEntry {
    pub id: i64,
    pub at: String,
    pub table_name: String,
    pub row_id: i64,
    pub action: String,
    pub before_json: Option<String>,
    pub after_json: Option<String>,
    pub actor: String,
}

/// Audit rows of one table row, oldest first.
pub fn entries_for_row(
    conn: &Connection,
    table: &str,
    row_id: i64,
) -> Result<Vec<AuditEntry>, StoreError> {
    let mut stmt = conn.prepare(
        "SELECT id, at, table_name, row_id, action, before_json, after_json, actor
         FROM audit_log WHERE table_name = ?1 AND row_id = ?2 ORDER BY id",
    )?;
    let rows = stmt
        .query_map(params![table, row_id], audit_entry_from_row)?
        .collect::<Result<Vec<_>, _>>()?;
    Ok(rows)
}

/// Number of audit rows per action for one table.
pub fn count(conn: &Connection, table: &str, action: &str) -> Result<i64, StoreError> {
    Ok(conn.query_row(
        "SELECT count(*) FROM audit_log WHERE table_name = ?1 AND action = ?2",
        params![table, action],
        |row| row.get(0),
    )?)
}

/// The most recent audit row, if any.
pub fn latest(conn: &Connection) -> Result<Option<AuditEntry>, StoreError> {
    Ok(conn
        .query_row(
            "SELECT id, at, table_name, row_id, action, before_json, after_json, actor
             FROM audit_log ORDER BY id DESC LIMIT 1",
            [],
            audit_entry_from_row,
        )
        .optional()?)
}

fn audit_entry_from_row(row: &rusqlite::Row<'_>) -> rusqlite::Result<AuditEntry> {
    Ok(AuditEntry {
        id: row.get(0)?,
        at: row.get(1)?,
        table_name: row.get(2)?,
        row_id: row.get(3)?,
        action: row.get(4)?,
        before_json: row.get(5)?,
        after_json: row.get(6)?,
        actor: row.get(7)?,
    })
}
