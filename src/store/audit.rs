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
        let json_of = |alias: &str| {
            let pairs: Vec<String> = columns
                .iter()
                .map(|c| format!("'{c}', {alias}.\"{c}\""))
                .collect();
            format!("json_object({})", pairs.join(", "))
        };
        let actor = "(SELECT actor FROM audit_context WHERE id = 1)";
        let txn = "(SELECT txn FROM audit_context WHERE id = 1)";
        let undo_of = "(SELECT undo_of FROM audit_context WHERE id = 1)";
        for (action, event, before, after, row) in [
            (
                "insert",
                "INSERT",
                "NULL".to_string(),
                json_of("NEW"),
                "NEW.rowid",
            ),
            (
                "update",
                "UPDATE",
                json_of("OLD"),
                json_of("NEW"),
                "NEW.rowid",
            ),
            (
                "delete",
                "DELETE",
                json_of("OLD"),
                "NULL".to_string(),
                "OLD.rowid",
            ),
        ] {
            sql.push_str(&format!(
                "DROP TRIGGER IF EXISTS audit_{table}_{action};\n\
                 CREATE TRIGGER audit_{table}_{action} AFTER {event} ON {table} BEGIN \
                 INSERT INTO audit_log (table_name, row_id, action, before_json, after_json, actor, txn, undo_of) \
                 VALUES ('{table}', {row}, '{action}', {before}, {after}, {actor}, {txn}, {undo_of}); END;\n"
            ));
        }
    }
    conn.execute_batch(&sql)?;
    Ok(())
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
