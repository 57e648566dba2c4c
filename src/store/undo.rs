//! Changes as the audit log records them: list them, see a tree's history, and undo the latest change
//! whole (an undo is itself a change, audited like any other; nothing is lost).

use rusqlite::{OptionalExtension, Transaction, params};
use serde::Serialize;

use super::audit::{self, AuditEntry};
use super::{Store, StoreError};

/// One numbered change: who, when, and how many rows of which tables it touched.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Change {
    pub txn: i64,
    pub at: String,
    pub actor: String,
    /// (table, action, rows).
    pub rows: Vec<(String, String, i64)>,
}

impl Change {
    /// The change in words: "crew A, 2026-11-30T10:00:00Z: insert 1 trees, insert 1 measurements".
    pub fn describe(&self) -> String {
        let parts: Vec<String> = self
            .rows
            .iter()
            .map(|(t, a, n)| format!("{a} {n} {t}"))
            .collect();
        format!(
            "change {} by {} at {}: {}",
            self.txn,
            self.actor,
            self.at,
            parts.join(", ")
        )
    }
}

impl Change {
    /// What undoing this change leaves as it was, when that is worth saying: undoing a merge reverts
    /// its rows but not the record of how far the two files agree, so merging the same copy again does
    /// not bring back the changes the merge took in (they stay in the copy).
    pub fn undo_caveat(&self) -> Option<&'static str> {
        (self.actor == super::merge::MERGE_ACTOR).then_some(
            "undoing a merge does not forget it: merging the same copy again brings only what changed there \
             since, not the values this undo took out (they stay in the copy's file)",
        )
    }
}

impl Store {
    /// The latest changes that can be undone (not seeding, not undos, not already undone), newest first.
    pub fn undoable_changes(&self, limit: usize) -> Result<Vec<Change>, StoreError> {
        let mut stmt = self.conn.prepare(
            "SELECT txn FROM audit_log
             WHERE txn > 0 AND undo_of IS NULL AND undone_by IS NULL AND actor <> 'system'
             GROUP BY txn ORDER BY txn DESC LIMIT ?1",
        )?;
        let txns = stmt
            .query_map([limit as i64], |r| r.get::<_, i64>(0))?
            .collect::<Result<Vec<_>, _>>()?;
        txns.into_iter()
            .map(|txn| change(&self.conn, txn))
            .collect()
    }

    /// Undoes the latest undoable change; returns what was undone (`None` when there is nothing).
    /// Refuses, changing nothing, when a row it touched was changed again since.
    pub fn undo_last(&mut self, actor: &str) -> Result<Option<Change>, StoreError> {
        let Some(target) = self.undoable_changes(1)?.into_iter().next() else {
            return Ok(None);
        };
        self.write(actor, |tx| {
            let own: i64 = tx.query_row("SELECT txn FROM audit_context WHERE id = 1", [], |r| {
                r.get(0)
            })?;
            tx.execute(
                "UPDATE audit_context SET undo_of = ?1 WHERE id = 1",
                [target.txn],
            )?;
            revert(tx, target.txn)?;
            tx.execute(
                "UPDATE audit_log SET undone_by = ?1 WHERE txn = ?2",
                params![own, target.txn],
            )?;
            Ok(())
        })?;
        Ok(Some(target))
    }

    /// Every audit row of a tree and of its measurements, assessments and work orders, oldest first
    /// (failure modes belong to an assessment and show in `care history`).
    pub fn tree_history(&self, tree_id: i64) -> Result<Vec<AuditEntry>, StoreError> {
        let mut stmt = self.conn.prepare(
            "SELECT id, at, table_name, row_id, action, before_json, after_json, actor FROM audit_log
             WHERE (table_name = 'trees' AND row_id = ?1)
                OR (table_name IN ('measurements', 'assessments', 'work_orders')
                    AND ?1 = coalesce(json_extract(after_json, '$.tree_id'), json_extract(before_json, '$.tree_id')))
             ORDER BY id",
        )?;
        let rows = stmt
            .query_map([tree_id], |row| {
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
            })?
            .collect::<Result<Vec<_>, _>>()?;
        Ok(rows)
    }
}

fn change(conn: &rusqlite::Connection, txn: i64) -> Result<Change, StoreError> {
    let (at, actor): (String, String) = conn.query_row(
        "SELECT min(at), min(actor) FROM audit_log WHERE txn = ?1",
        [txn],
        |r| Ok((r.get(0)?, r.get(1)?)),
    )?;
    let mut stmt = conn.prepare(
        "SELECT table_name, action, count(*) FROM audit_log WHERE txn = ?1 GROUP BY table_name, action
         ORDER BY min(id)",
    )?;
    let rows = stmt
        .query_map([txn], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?)))?
        .collect::<Result<Vec<_>, _>>()?;
    Ok(Change {
        txn,
        at,
        actor,
        rows,
    })
}

/// Reverts every row of change `txn`, newest row first.
fn revert(tx: &Transaction<'_>, txn: i64) -> Result<(), StoreError> {
    let mut stmt = tx.prepare(
        "SELECT table_name, row_id, action, before_json, after_json FROM audit_log WHERE txn = ?1 ORDER BY id DESC",
    )?;
    let rows = stmt
        .query_map([txn], |r| {
            Ok((
                r.get::<_, String>(0)?,
                r.get::<_, i64>(1)?,
                r.get::<_, String>(2)?,
                r.get::<_, Option<String>>(3)?,
                r.get::<_, Option<String>>(4)?,
            ))
        })?
        .collect::<Result<Vec<_>, _>>()?;
    drop(stmt);
    for (table, row_id, action, before, after) in rows {
        let columns = audit::columns(tx, &table)?;
        let current = current_json(tx, &table, row_id, &columns)?;
        let expected = after
            .as_deref()
            .map(serde_json::from_str::<serde_json::Value>)
            .transpose();
        let expected = expected
            .map_err(|e| StoreError::Invalid(format!("audit row of {table} {row_id}: {e}")))?;
        if current != expected {
            return Err(StoreError::Invalid(format!(
                "change {txn} cannot be undone: {table} row {row_id} was changed again since; nothing was undone"
            )));
        }
        match action.as_str() {
            "insert" => {
                tx.execute(&format!("DELETE FROM {table} WHERE rowid = ?1"), [row_id])?;
            }
            "update" => {
                let sets: Vec<String> = columns
                    .iter()
                    .map(|c| format!("\"{c}\" = json_extract(?1, '$.\"{c}\"')"))
                    .collect();
                tx.execute(
                    &format!("UPDATE {table} SET {} WHERE rowid = ?2", sets.join(", ")),
                    params![before, row_id],
                )?;
            }
            "delete" => {
                let names: Vec<String> = columns.iter().map(|c| format!("\"{c}\"")).collect();
                let values: Vec<String> = columns
                    .iter()
                    .map(|c| format!("json_extract(?1, '$.\"{c}\"')"))
                    .collect();
                tx.execute(
                    &format!(
                        "INSERT INTO {table} ({}) VALUES ({})",
                        names.join(", "),
                        values.join(", ")
                    ),
                    [before],
                )?;
            }
            other => {
                return Err(StoreError::Invalid(format!(
                    "unknown audit action '{other}'"
                )));
            }
        }
    }
    Ok(())
}

/// A row as the audit triggers would record it now (`None` when it does not exist).
fn current_json(
    tx: &Transaction<'_>,
    table: &str,
    row_id: i64,
    columns: &[String],
) -> Result<Option<serde_json::Value>, StoreError> {
    let pairs: Vec<String> = columns.iter().map(|c| format!("'{c}', \"{c}\"")).collect();
    let text: Option<String> = tx
        .query_row(
            &format!(
                "SELECT json_object({}) FROM {table} WHERE rowid = ?1",
                pairs.join(", ")
            ),
            [row_id],
            |r| r.get(0),
        )
        .optional()?;
    text.map(|t| serde_json::from_str(&t).map_err(|e| StoreError::Invalid(e.to_string())))
        .transpose()
}
