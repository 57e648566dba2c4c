//! The health check behind `streetwood check`: SQLite's integrity check, foreign keys, orphan rows,
//! and measurements implausible enough to send someone back to the tree. Reads only.
//!
//! Thresholds (common practice, no published source): a DBH cannot shrink by more than 2 cm between
//! successive measurements (bark loss and tape placement explain less); street trees rarely add more
//! than 3 cm of DBH a year, judged over at least a year so that tape error on close re-measurements is
//! not mistaken for growth; DBH is measured at 1.37 m (4.5 ft), so a tree shorter than that has none.

use serde::Serialize;

use super::{Store, StoreError};

/// Largest believable loss of DBH between successive measurements, cm.
pub const MAX_SHRINK_CM: f64 = 2.0;
/// Largest believable DBH growth, cm per year.
pub const MAX_GROWTH_CM_PER_YR: f64 = 3.0;
/// Breast height, m (4.5 ft): where DBH is measured.
pub const BREAST_HEIGHT_M: f64 = 1.37;

/// What kind of problem a finding is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum FindingKind {
    /// The file itself is damaged (`PRAGMA integrity_check`).
    Integrity,
    /// A row points at a row that does not exist (`PRAGMA foreign_key_check`).
    ForeignKey,
    /// A row the schema allows but the inventory should not have (a tree without measurements…).
    Orphan,
    /// A measurement to check in the field.
    Implausible,
}

impl FindingKind {
    /// The word used in text and CSV output.
    pub fn as_str(self) -> &'static str {
        match self {
            FindingKind::Integrity => "integrity",
            FindingKind::ForeignKey => "foreign_key",
            FindingKind::Orphan => "orphan",
            FindingKind::Implausible => "implausible",
        }
    }
}

/// One thing to follow up.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Finding {
    pub kind: FindingKind,
    /// The table of the row concerned (empty for whole-file problems).
    pub table: String,
    pub row_id: Option<i64>,
    pub tree_id: Option<i64>,
    pub tree_uid: Option<String>,
    pub message: String,
}

/// A successive pair of measurements of one tree.
struct Pair {
    tree_id: i64,
    uid: String,
    earlier_id: i64,
    earlier_on: String,
    earlier_dbh: f64,
    later_id: i64,
    later_on: String,
    later_dbh: f64,
    days: f64,
}

impl Store {
    /// Every finding, in order: integrity, foreign keys, orphans, implausible measurements (by tree).
    pub fn health_check(&self) -> Result<Vec<Finding>, StoreError> {
        let mut findings: Vec<Finding> = super::backup::integrity_problems(&self.conn)?
            .into_iter()
            .map(|message| Finding {
                kind: FindingKind::Integrity,
                table: String::new(),
                row_id: None,
                tree_id: None,
                tree_uid: None,
                message,
            })
            .collect();
        findings.extend(self.foreign_key_findings()?);
        findings.extend(self.orphan_findings()?);
        findings.extend(self.implausible_findings()?);
        Ok(findings)
    }

    fn foreign_key_findings(&self) -> Result<Vec<Finding>, StoreError> {
        let mut stmt = self.conn.prepare("PRAGMA foreign_key_check")?;
        let rows = stmt
            .query_map([], |r| {
                Ok((
                    r.get::<_, String>(0)?,
                    r.get::<_, Option<i64>>(1)?,
                    r.get::<_, String>(2)?,
                ))
            })?
            .collect::<Result<Vec<_>, _>>()?;
        Ok(rows
            .into_iter()
            .map(|(table, row_id, parent)| Finding {
                kind: FindingKind::ForeignKey,
                message: format!(
                    "{table} row {} refers to a row of {parent} that does not exist",
                    row_id.map(|id| id.to_string()).unwrap_or_default()
                ),
                table,
                row_id,
                tree_id: None,
                tree_uid: None,
            })
            .collect())
    }

    fn orphan_findings(&self) -> Result<Vec<Finding>, StoreError> {
        let mut findings = Vec::new();
        let mut stmt = self.conn.prepare(
            "SELECT t.id, t.uid FROM trees t
             WHERE NOT EXISTS (SELECT 1 FROM measurements m WHERE m.tree_id = t.id) ORDER BY t.id",
        )?;
        let rows = stmt
            .query_map([], |r| Ok((r.get::<_, i64>(0)?, r.get::<_, String>(1)?)))?
            .collect::<Result<Vec<_>, _>>()?;
        findings.extend(rows.into_iter().map(|(id, uid)| Finding {
            kind: FindingKind::Orphan,
            table: "trees".to_string(),
            row_id: Some(id),
            tree_id: Some(id),
            tree_uid: Some(uid),
            message: "tree has no measurement".to_string(),
        }));
        let mut stmt = self.conn.prepare(
            "SELECT w.id, w.tree_id, t.uid, a.tree_id FROM work_orders w
             JOIN assessments a ON a.id = w.assessment_id
             LEFT JOIN trees t ON t.id = w.tree_id
             WHERE a.tree_id <> w.tree_id ORDER BY w.id",
        )?;
        let rows = stmt
            .query_map([], |r| {
                Ok((
                    r.get::<_, i64>(0)?,
                    r.get::<_, i64>(1)?,
                    r.get::<_, Option<String>>(2)?,
                    r.get::<_, i64>(3)?,
                ))
            })?
            .collect::<Result<Vec<_>, _>>()?;
        findings.extend(rows.into_iter().map(|(id, tree, uid, other)| Finding {
            kind: FindingKind::Orphan,
            table: "work_orders".to_string(),
            row_id: Some(id),
            tree_id: Some(tree),
            tree_uid: uid,
            message: format!(
                "work order {id} is linked to an assessment of another tree (tree {other})"
            ),
        }));
        Ok(findings)
    }

    fn implausible_findings(&self) -> Result<Vec<Finding>, StoreError> {
        let mut findings = Vec::new();
        let mut stmt = self.conn.prepare(
            "SELECT m.tree_id, t.uid, m.id, m.measured_on, m.dbh_cm, m.height_m FROM measurements m
             JOIN trees t ON t.id = m.tree_id
             ORDER BY m.tree_id, m.measured_on, m.id",
        )?;
        let rows = stmt
            .query_map([], |r| {
                Ok((
                    r.get::<_, i64>(0)?,
                    r.get::<_, String>(1)?,
                    r.get::<_, i64>(2)?,
                    r.get::<_, String>(3)?,
                    r.get::<_, f64>(4)?,
                    r.get::<_, Option<f64>>(5)?,
                ))
            })?
            .collect::<Result<Vec<_>, _>>()?;
        let mut previous: Option<(i64, i64, String, f64)> = None;
        for (tree_id, uid, id, on, dbh, height) in rows {
            if let Some((prev_tree, prev_id, prev_on, prev_dbh)) = previous.take()
                && prev_tree == tree_id
            {
                let days = days_between(&prev_on, &on).unwrap_or(0.0);
                let pair = Pair {
                    tree_id,
                    uid: uid.clone(),
                    earlier_id: prev_id,
                    earlier_on: prev_on,
                    earlier_dbh: prev_dbh,
                    later_id: id,
                    later_on: on.clone(),
                    later_dbh: dbh,
                    days,
                };
                findings.extend(judge_pair(&pair));
            }
            if let Some(height) = height
                && height < BREAST_HEIGHT_M
            {
                findings.push(Finding {
                    kind: FindingKind::Implausible,
                    table: "measurements".to_string(),
                    row_id: Some(id),
                    tree_id: Some(tree_id),
                    tree_uid: Some(uid.clone()),
                    message: format!(
                        "{on}: height {height} m is below breast height ({BREAST_HEIGHT_M} m) but a DBH of {dbh} cm is recorded"
                    ),
                });
            }
            previous = Some((tree_id, id, on, dbh));
        }
        Ok(findings)
    }
}

impl StoreError {
    /// A plain explanation when SQLite failed because of where the inventory is stored (a read-only
    /// file, folder or disk; a full disk or file size limit; a failing disk), `None` otherwise. A failed
    /// write transaction is rolled back by SQLite, so in each case nothing of the write was kept.
    pub fn storage_problem(&self) -> Option<&'static str> {
        let StoreError::Sql(error) = self else {
            return None;
        };
        use rusqlite::ErrorCode;
        match error.sqlite_error_code()? {
            ErrorCode::ReadOnly => Some(
                "the inventory is read-only (the permissions of the file or its folder, or a read-only disk, do not allow writing); nothing was written",
            ),
            ErrorCode::DiskFull => {
                Some("the disk is full; nothing was written (free some space and try again)")
            }
            ErrorCode::SystemIoFailure => Some(
                "writing to the disk failed (the disk may be full, a file size limit reached, or the disk failing); nothing was written",
            ),
            ErrorCode::CannotOpen => Some(
                "the inventory or the files SQLite keeps beside it (FILE-wal, FILE-shm) cannot be opened; check the permissions of its folder",
            ),
            _ => None,
        }
    }
}

fn days_between(earlier: &str, later: &str) -> Option<f64> {
    let parse = |s: &str| chrono::NaiveDate::parse_from_str(s, "%Y-%m-%d").ok();
    Some((parse(later)? - parse(earlier)?).num_days() as f64)
}

fn judge_pair(pair: &Pair) -> Option<Finding> {
    let change = pair.later_dbh - pair.earlier_dbh;
    let years = pair.days / 365.25;
    let message = if -change > MAX_SHRINK_CM {
        format!(
            "DBH shrank {:.1} cm, from {} cm on {} to {} cm on {} (more than {MAX_SHRINK_CM} cm)",
            -change, pair.earlier_dbh, pair.earlier_on, pair.later_dbh, pair.later_on
        )
    } else if change > MAX_GROWTH_CM_PER_YR * years.max(1.0) {
        format!(
            "DBH grew {change:.1} cm in {} days, from {} cm on {} to {} cm on {} (more than {MAX_GROWTH_CM_PER_YR} cm a year)",
            pair.days, pair.earlier_dbh, pair.earlier_on, pair.later_dbh, pair.later_on
        )
    } else {
        return None;
    };
    Some(Finding {
        kind: FindingKind::Implausible,
        table: "measurements".to_string(),
        row_id: Some(pair.later_id),
        tree_id: Some(pair.tree_id),
        tree_uid: Some(pair.uid.clone()),
        message: format!(
            "{message}; measurements {} and {}",
            pair.earlier_id, pair.later_id
        ),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn pair(earlier: f64, later: f64, days: f64) -> Pair {
        Pair {
            tree_id: 1,
            uid: "u".to_string(),
            earlier_id: 1,
            earlier_on: "2020-01-01".to_string(),
            earlier_dbh: earlier,
            later_id: 2,
            later_on: "2021-01-01".to_string(),
            later_dbh: later,
            days,
        }
    }

    #[test]
    fn thresholds_flag_shrinking_and_fast_growth_only() {
        assert!(
            judge_pair(&pair(30.0, 28.1, 365.0)).is_none(),
            "1.9 cm shrink is tape error"
        );
        assert!(
            judge_pair(&pair(30.0, 27.9, 365.0)).is_some(),
            "2.1 cm shrink"
        );
        assert!(
            judge_pair(&pair(30.0, 32.9, 365.25)).is_none(),
            "2.9 cm in a year"
        );
        assert!(
            judge_pair(&pair(30.0, 33.2, 365.25)).is_some(),
            "3.2 cm in a year"
        );
        // Over two years 6 cm is the limit; within a month only more than 3 cm is flagged.
        assert!(judge_pair(&pair(30.0, 35.9, 730.5)).is_none());
        assert!(judge_pair(&pair(30.0, 36.2, 730.5)).is_some());
        assert!(judge_pair(&pair(30.0, 32.0, 30.0)).is_none());
        assert!(judge_pair(&pair(30.0, 33.5, 0.0)).is_some());
    }

    #[test]
    fn days_between_iso_dates() {
        assert_eq!(days_between("2024-01-01", "2025-01-01"), Some(366.0));
        assert_eq!(days_between("2024-01-01", "garbage"), None);
    }
}
