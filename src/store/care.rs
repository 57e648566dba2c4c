//! Assessments (with their failure modes) and work orders.

use chrono::{DateTime, Utc};
use rusqlite::params;

use super::{Store, StoreError, timestamp};
use crate::care::risk::{self, RiskRating};
use crate::io::care_csv::{AssessmentRow, WorkOrderRow};

/// Failure-mode rows of one tree on one date: one assessment.
type AssessmentGroup<'a> = (&'a str, chrono::NaiveDate, Vec<&'a (u64, AssessmentRow)>);

impl Store {
    /// Adds assessments, one failure mode per row; rows of the same tree and date form one
    /// assessment whose overall rating is the highest of its modes. All or nothing.
    pub fn import_assessments(
        &mut self,
        rows: &[(u64, AssessmentRow)],
        actor: &str,
        now: DateTime<Utc>,
    ) -> Result<usize, StoreError> {
        let intervals = self.reinspection_intervals()?;
        self.write(actor, |tx| {
            let stamp = timestamp(now);
            let mut groups: Vec<AssessmentGroup<'_>> = Vec::new();
            for row in rows {
                match groups
                    .iter_mut()
                    .find(|(uid, date, _)| *uid == row.1.tree_uid && *date == row.1.assessed_on)
                {
                    Some(group) => group.2.push(row),
                    None => groups.push((&row.1.tree_uid, row.1.assessed_on, vec![row])),
                }
            }
            let mut find_tree = tx.prepare_cached("SELECT id FROM trees WHERE uid = ?1")?;
            for (uid, assessed_on, modes) in &groups {
                let line = modes.first().map(|m| m.0).unwrap_or(0);
                let tree_id: i64 = find_tree
                    .query_row([uid], |r| r.get(0))
                    .map_err(|_| StoreError::Row { line, message: format!("tree_uid: no tree with uid '{uid}'") })?;
                let ratings: Vec<RiskRating> = modes
                    .iter()
                    .map(|(_, m)| risk::failure_mode_rating(m.likelihood_of_failure, m.likelihood_of_impact, m.consequences))
                    .collect();
                let overall = risk::overall_rating(ratings.iter().copied()).unwrap_or(RiskRating::Low);
                let months = intervals
                    .iter()
                    .find(|(r, _)| *r == overall)
                    .map(|(_, m)| *m)
                    .unwrap_or_else(|| risk::default_reinspection_months(overall));
                let first = &modes[0].1;
                tx.execute(
                    "INSERT INTO assessments (tree_id, assessed_on, assessor, level, rating, next_due_on, notes, created_at)
                     VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8)",
                    params![
                        tree_id,
                        assessed_on.to_string(),
                        first.assessor,
                        first.level,
                        overall.as_str(),
                        risk::next_inspection(*assessed_on, months).to_string(),
                        first.notes,
                        stamp,
                    ],
                )
                .map_err(|e| StoreError::Row { line, message: e.to_string() })?;
                let assessment_id = tx.last_insert_rowid();
                for ((line, mode), rating) in modes.iter().zip(&ratings) {
                    tx.execute(
                        "INSERT INTO failure_modes (assessment_id, part, part_size_cm, target, occupancy,
                             likelihood_of_failure, likelihood_of_impact, consequences, rating, mitigation)
                         VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10)",
                        params![
                            assessment_id,
                            mode.part.as_str(),
                            mode.part_size_cm,
                            mode.target,
                            mode.occupancy.as_str(),
                            mode.likelihood_of_failure.as_str(),
                            mode.likelihood_of_impact.as_str(),
                            mode.consequences.as_str(),
                            rating.as_str(),
                            mode.mitigation,
                        ],
                    )
                    .map_err(|e| StoreError::Row { line: *line, message: e.to_string() })?;
                }
            }
            Ok(groups.len())
        })
    }

    /// Adds work orders. All or nothing.
    pub fn import_work_orders(
        &mut self,
        rows: &[(u64, WorkOrderRow)],
        actor: &str,
        now: DateTime<Utc>,
    ) -> Result<usize, StoreError> {
        self.write(actor, |tx| {
            let stamp = timestamp(now);
            let mut find_tree = tx.prepare_cached("SELECT id FROM trees WHERE uid = ?1")?;
            let mut insert = tx.prepare_cached(
                "INSERT INTO work_orders (tree_id, task, priority, status, due_on, done_on, crew, estimated_cost,
                                          notes, created_at, updated_at)
                 VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?10)",
            )?;
            for (line, order) in rows {
                let tree_id: i64 = find_tree.query_row([&order.tree_uid], |r| r.get(0)).map_err(|_| StoreError::Row {
                    line: *line,
                    message: format!("tree_uid: no tree with uid '{}'", order.tree_uid),
                })?;
                insert
                    .execute(params![
                        tree_id,
                        order.task,
                        order.priority,
                        order.status,
                        order.due_on.map(|d| d.to_string()),
                        order.done_on.map(|d| d.to_string()),
                        order.crew,
                        order.estimated_cost,
                        order.notes,
                        stamp,
                    ])
                    .map_err(|e| StoreError::Row { line: *line, message: e.to_string() })?;
            }
            Ok(rows.len())
        })
    }

    /// Number of assessments and of open (open or scheduled) work orders.
    pub fn care_counts(&self) -> Result<(i64, i64), StoreError> {
        let assessments = self
            .conn
            .query_row("SELECT count(*) FROM assessments", [], |r| r.get(0))?;
        let open = self.conn.query_row(
            "SELECT count(*) FROM work_orders WHERE status IN ('open', 'scheduled')",
            [],
            |r| r.get(0),
        )?;
        Ok((assessments, open))
    }

    /// The re-inspection interval (months) of each rating, from settings.
    pub fn reinspection_intervals(&self) -> Result<Vec<(RiskRating, u32)>, StoreError> {
        let mut intervals = Vec::new();
        for rating in RiskRating::ALL {
            let key = crate::settings::reinspect_key(*rating);
            let months = match self.setting(key)? {
                Some(text) => text.trim().parse::<u32>().map_err(|_| {
                    StoreError::Invalid(format!(
                        "setting {key} = '{text}' is not a whole number of months"
                    ))
                })?,
                None => risk::default_reinspection_months(*rating),
            };
            intervals.push((*rating, months));
        }
        Ok(intervals)
    }
}
