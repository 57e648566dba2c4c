//! Assessments (with their failure modes and mitigation options), work orders and their life cycle,
//! maintenance-cycle work, and the rows behind the watchlist and the work queue. The rules live in
//! [`crate::care`]; this module reads and writes, each change in one transaction.

use std::collections::HashMap;

use chrono::{DateTime, NaiveDate, Utc};
use rusqlite::{Connection, OptionalExtension, Row, params};
use serde::Serialize;

use super::{Store, StoreError, timestamp};
use crate::care::InputError;
use crate::care::assessment::{self, Assessment, MitigationOption};
use crate::care::cycles::{self, CycleKind, CycleRules, CycleTree, DueWork, OrderFact};
use crate::care::queue::{WatchItem, WorkItem};
use crate::care::risk::{
    self, Consequences, LikelihoodOfFailure, LikelihoodOfImpact, Occupancy, RiskRating, TreePart,
};
use crate::care::work::{
    self, NewWorkOrder, Priority, TreeState, WorkChange, WorkOrder, WorkStatus, WorkTask,
};
use crate::io::care_csv::{AssessmentRow, WorkOrderRow};
use crate::model::{BadWord, TreeStatus};

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

/// A tree as the care commands name it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TreeBrief {
    pub id: i64,
    pub uid: String,
    pub species: String,
    pub street: Option<String>,
    pub house_number: Option<String>,
    pub zone: Option<String>,
    pub status: TreeStatus,
    pub removed_on: Option<NaiveDate>,
}

impl TreeBrief {
    /// "12 Foundry Street" or the street alone, or "no address".
    pub fn address(&self) -> String {
        match (&self.house_number, &self.street) {
            (Some(number), Some(street)) => format!("{number} {street}"),
            (None, Some(street)) => street.clone(),
            _ => "no address".to_string(),
        }
    }
}

/// A stored failure mode (modes imported from CSV may carry their own mitigation text).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StoredMode {
    pub part: TreePart,
    pub part_size_cm: Option<f64>,
    pub target: Option<String>,
    pub occupancy: Occupancy,
    pub likelihood_of_failure: LikelihoodOfFailure,
    pub likelihood_of_impact: LikelihoodOfImpact,
    pub consequences: Consequences,
    pub rating: RiskRating,
    pub mitigation: Option<String>,
    pub residual_rating: Option<RiskRating>,
}

/// A stored assessment with its modes, mitigation options and the work orders that cite it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StoredAssessment {
    pub id: i64,
    pub tree_id: i64,
    pub assessed_on: NaiveDate,
    pub assessor: Option<String>,
    pub level: u8,
    pub time_frame_years: Option<f64>,
    pub rating: RiskRating,
    pub next_due_on: Option<NaiveDate>,
    pub notes: Option<String>,
    pub modes: Vec<StoredMode>,
    pub mitigations: Vec<MitigationOption>,
    pub work_order_ids: Vec<i64>,
}

/// What storing an assessment created.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct RecordedAssessment {
    pub assessment_id: i64,
    pub work_order_id: Option<i64>,
}

/// What a change to a work order did.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WorkOutcome {
    pub order: WorkOrder,
    /// The tree was marked removed on this date (a removal done).
    pub tree_removed_on: Option<NaiveDate>,
    /// Other pending orders of the tree cancelled because the tree is gone.
    pub cancelled_with_tree: Vec<i64>,
}

/// Cycle work generated (or, in a dry run, that would be), with the new order ids.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct GeneratedWork {
    pub order_id: Option<i64>,
    #[serde(flatten)]
    pub work: DueWork,
}

fn invalid(context: &str, error: InputError) -> StoreError {
    StoreError::Invalid(format!("{context}: {error}"))
}

fn stored_word<T>(
    what: &str,
    text: &str,
    parse: impl Fn(&str) -> Result<T, BadWord>,
) -> Result<T, StoreError> {
    parse(text).map_err(|e| StoreError::Invalid(format!("stored {what}: {e}")))
}

fn stored_date(what: &str, text: Option<String>) -> Result<Option<NaiveDate>, StoreError> {
    text.map(|t| {
        NaiveDate::parse_from_str(&t, "%Y-%m-%d")
            .map_err(|_| StoreError::Invalid(format!("stored {what} '{t}' is not a date")))
    })
    .transpose()
}

fn stored_priority(value: i64) -> Result<Priority, StoreError> {
    Priority::new(value).map_err(|e| StoreError::Invalid(format!("stored {e}")))
}

fn tree_brief_in(conn: &Connection, tree_id: i64) -> Result<Option<TreeBrief>, StoreError> {
    let raw = conn
        .query_row(
            "SELECT t.id, t.uid, s.scientific_name, t.street, t.house_number, z.name, t.status, t.removed_on
             FROM trees t JOIN species s ON s.id = t.species_id LEFT JOIN zones z ON z.id = t.zone_id
             WHERE t.id = ?1",
            [tree_id],
            |r| {
                Ok((
                    r.get::<_, i64>(0)?,
                    r.get::<_, String>(1)?,
                    r.get::<_, String>(2)?,
                    r.get::<_, Option<String>>(3)?,
                    r.get::<_, Option<String>>(4)?,
                    r.get::<_, Option<String>>(5)?,
                    r.get::<_, String>(6)?,
                    r.get::<_, Option<String>>(7)?,
                ))
            },
        )
        .optional()?;
    raw.map(
        |(id, uid, species, street, house_number, zone, status, removed_on)| {
            Ok(TreeBrief {
                id,
                uid,
                species,
                street,
                house_number,
                zone,
                status: stored_word("tree status", &status, TreeStatus::parse)?,
                removed_on: stored_date("removed_on", removed_on)?,
            })
        },
    )
    .transpose()
}

fn tree_state(conn: &Connection, tree_id: i64) -> Result<TreeState, StoreError> {
    let brief = tree_brief_in(conn, tree_id)?
        .ok_or_else(|| StoreError::Invalid(format!("no tree with id {tree_id}")))?;
    Ok(TreeState {
        status: brief.status,
        removed_on: brief.removed_on,
    })
}

const ORDER_COLUMNS: &str =
    "w.id, w.tree_id, w.task, w.priority, w.status, w.due_on, w.scheduled_on, w.done_on, w.crew,
     w.estimated_cost, w.actual_cost, w.notes, w.assessment_id, w.cycle";

fn order_from_row(r: &Row<'_>) -> Result<WorkOrder, StoreError> {
    let id: i64 = r.get(0)?;
    let what = |field: &str| format!("work order {id} {field}");
    let cycle: Option<String> = r.get(13)?;
    Ok(WorkOrder {
        id,
        tree_id: r.get(1)?,
        task: stored_word(&what("task"), &r.get::<_, String>(2)?, WorkTask::parse)?,
        priority: stored_priority(r.get(3)?)?,
        status: stored_word(&what("status"), &r.get::<_, String>(4)?, WorkStatus::parse)?,
        due_on: stored_date(&what("due_on"), r.get(5)?)?,
        scheduled_on: stored_date(&what("scheduled_on"), r.get(6)?)?,
        done_on: stored_date(&what("done_on"), r.get(7)?)?,
        crew: r.get(8)?,
        estimated_cost: r.get(9)?,
        actual_cost: r.get(10)?,
        notes: r.get(11)?,
        assessment_id: r.get(12)?,
        cycle: cycle
            .map(|c| stored_word(&what("cycle"), &c, CycleKind::parse))
            .transpose()?,
    })
}

fn load_order(conn: &Connection, id: i64) -> Result<Option<WorkOrder>, StoreError> {
    let mut stmt = conn.prepare_cached(&format!(
        "SELECT {ORDER_COLUMNS} FROM work_orders w WHERE w.id = ?1"
    ))?;
    let mut rows = stmt.query([id])?;
    match rows.next()? {
        Some(row) => Ok(Some(order_from_row(row)?)),
        None => Ok(None),
    }
}

fn insert_order(conn: &Connection, order: &NewWorkOrder, stamp: &str) -> Result<i64, StoreError> {
    conn.prepare_cached(
        "INSERT INTO work_orders (tree_id, task, priority, status, due_on, crew, estimated_cost, notes,
                                  assessment_id, cycle, created_at, updated_at)
         VALUES (?1, ?2, ?3, 'open', ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?10)",
    )?
    .execute(params![
        order.tree_id,
        order.task.as_str(),
        order.priority.get(),
        order.due_on.map(|d| d.to_string()),
        order.crew,
        order.estimated_cost,
        order.notes,
        order.assessment_id,
        order.cycle.map(CycleKind::as_str),
        stamp,
    ])?;
    Ok(conn.last_insert_rowid())
}

fn update_order(conn: &Connection, order: &WorkOrder, stamp: &str) -> Result<(), StoreError> {
    conn.prepare_cached(
        "UPDATE work_orders SET task = ?2, priority = ?3, status = ?4, due_on = ?5, scheduled_on = ?6,
             done_on = ?7, crew = ?8, estimated_cost = ?9, actual_cost = ?10, notes = ?11, updated_at = ?12
         WHERE id = ?1",
    )?
    .execute(params![
        order.id,
        order.task.as_str(),
        order.priority.get(),
        order.status.as_str(),
        order.due_on.map(|d| d.to_string()),
        order.scheduled_on.map(|d| d.to_string()),
        order.done_on.map(|d| d.to_string()),
        order.crew,
        order.estimated_cost,
        order.actual_cost,
        order.notes,
        stamp,
    ])?;
    Ok(())
}

fn cycle_trees(conn: &Connection) -> Result<Vec<CycleTree>, StoreError> {
    let mut trees: Vec<CycleTree> = Vec::new();
    let mut stmt = conn.prepare(
        "SELECT t.id, t.planted_on,
                (SELECT min(m.measured_on) FROM measurements m WHERE m.tree_id = t.id),
                (SELECT m.dbh_cm FROM measurements m WHERE m.tree_id = t.id
                 ORDER BY m.measured_on DESC, m.id DESC LIMIT 1)
         FROM trees t WHERE t.status = 'standing' ORDER BY t.id",
    )?;
    let mut rows = stmt.query([])?;
    while let Some(r) = rows.next()? {
        trees.push(CycleTree {
            tree_id: r.get(0)?,
            planted_on: stored_date("planted_on", r.get(1)?)?,
            first_measured_on: stored_date("measured_on", r.get(2)?)?,
            dbh_cm: r.get(3)?,
            orders: Vec::new(),
        });
    }
    let index: HashMap<i64, usize> = trees
        .iter()
        .enumerate()
        .map(|(i, t)| (t.tree_id, i))
        .collect();
    let mut stmt = conn.prepare(&format!(
        "SELECT {ORDER_COLUMNS} FROM work_orders w JOIN trees t ON t.id = w.tree_id
         WHERE t.status = 'standing' ORDER BY w.tree_id, w.id"
    ))?;
    let mut rows = stmt.query([])?;
    while let Some(r) = rows.next()? {
        let order = order_from_row(r)?;
        if let Some(&i) = index.get(&order.tree_id) {
            trees[i].orders.push(OrderFact {
                task: order.task,
                status: order.status,
                due_on: order.due_on,
                done_on: order.done_on,
                cycle: order.cycle,
            });
        }
    }
    Ok(trees)
}

fn settings_in(conn: &Connection) -> Result<Vec<(String, String)>, StoreError> {
    let mut stmt = conn.prepare("SELECT key, value FROM settings ORDER BY key")?;
    let rows = stmt
        .query_map([], |r| Ok((r.get(0)?, r.get(1)?)))?
        .collect::<Result<Vec<_>, _>>()?;
    Ok(rows)
}

fn rules_from(pairs: &[(String, String)]) -> Result<CycleRules, StoreError> {
    CycleRules::from_pairs(pairs.iter().map(|(k, v)| (k.as_str(), v.as_str())))
        .map_err(|e| StoreError::Invalid(format!("setting {e}")))
}

impl Store {
    /// The tree with this id, as care commands name it.
    pub fn tree_brief(&self, tree_id: i64) -> Result<Option<TreeBrief>, StoreError> {
        tree_brief_in(&self.conn, tree_id)
    }

    /// Stores an evaluated assessment of a standing tree (a new row: re-assessing keeps the history),
    /// its failure modes and mitigation options, and, when given, the work order it calls for (linked to
    /// it). All or nothing.
    pub fn record_assessment(
        &mut self,
        tree_id: i64,
        assessment: &Assessment,
        work: Option<&NewWorkOrder>,
        actor: &str,
        now: DateTime<Utc>,
    ) -> Result<RecordedAssessment, StoreError> {
        self.write(actor, |tx| {
            let stamp = timestamp(now);
            let tree = tree_state(tx, tree_id)?;
            assessment::check_tree(tree.status)
                .map_err(|e| StoreError::Invalid(e.to_string()))?;
            tx.execute(
                "INSERT INTO assessments (tree_id, assessed_on, assessor, level, time_frame_years, rating,
                                          next_due_on, notes, created_at)
                 VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9)",
                params![
                    tree_id,
                    assessment.assessed_on.to_string(),
                    assessment.assessor,
                    assessment.level.number(),
                    assessment.time_frame_years,
                    assessment.overall.as_str(),
                    assessment.next_due_on.to_string(),
                    assessment.notes,
                    stamp,
                ],
            )?;
            let assessment_id = tx.last_insert_rowid();
            for rated in &assessment.modes {
                let m = &rated.mode;
                tx.execute(
                    "INSERT INTO failure_modes (assessment_id, part, part_size_cm, target, occupancy,
                         likelihood_of_failure, likelihood_of_impact, consequences, rating)
                     VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9)",
                    params![
                        assessment_id,
                        m.part.as_str(),
                        m.part_size_cm,
                        m.target,
                        m.occupancy.as_str(),
                        m.likelihood_of_failure.as_str(),
                        m.likelihood_of_impact.as_str(),
                        m.consequences.as_str(),
                        rated.rating.as_str(),
                    ],
                )?;
            }
            for (index, option) in assessment.mitigations.iter().enumerate() {
                tx.execute(
                    "INSERT INTO mitigation_options (assessment_id, position, task, description, residual_rating)
                     VALUES (?1, ?2, ?3, ?4, ?5)",
                    params![
                        assessment_id,
                        index as i64 + 1,
                        option.task.as_str(),
                        option.description,
                        option.residual_rating.as_str(),
                    ],
                )?;
            }
            let work_order_id = match work {
                Some(order) => {
                    let mut order = order.clone();
                    order.tree_id = tree_id;
                    order.assessment_id = Some(assessment_id);
                    let order = order
                        .validated(tree.status)
                        .map_err(|e| invalid("work order", e))?;
                    Some(insert_order(tx, &order, &stamp)?)
                }
                None => None,
            };
            Ok(RecordedAssessment {
                assessment_id,
                work_order_id,
            })
        })
    }

    /// Every assessment of a tree, newest first, with its modes, mitigation options and work orders.
    pub fn assessments_of_tree(&self, tree_id: i64) -> Result<Vec<StoredAssessment>, StoreError> {
        let mut stmt = self.conn.prepare(
            "SELECT id, tree_id, assessed_on, assessor, level, time_frame_years, rating, next_due_on, notes
             FROM assessments WHERE tree_id = ?1 ORDER BY assessed_on DESC, id DESC",
        )?;
        let mut rows = stmt.query([tree_id])?;
        let mut out = Vec::new();
        while let Some(r) = rows.next()? {
            let id: i64 = r.get(0)?;
            let assessed_on: String = r.get(2)?;
            out.push(StoredAssessment {
                id,
                tree_id: r.get(1)?,
                assessed_on: stored_date("assessed_on", Some(assessed_on))?
                    .ok_or_else(|| StoreError::Invalid("stored assessed_on is empty".into()))?,
                assessor: r.get(3)?,
                level: r.get(4)?,
                time_frame_years: r.get(5)?,
                rating: stored_word("rating", &r.get::<_, String>(6)?, RiskRating::parse)?,
                next_due_on: stored_date("next_due_on", r.get(7)?)?,
                notes: r.get(8)?,
                modes: Vec::new(),
                mitigations: Vec::new(),
                work_order_ids: Vec::new(),
            });
        }
        let mut modes = self.conn.prepare_cached(
            "SELECT part, part_size_cm, target, occupancy, likelihood_of_failure, likelihood_of_impact,
                    consequences, rating, mitigation, residual_rating
             FROM failure_modes WHERE assessment_id = ?1 ORDER BY id",
        )?;
        let mut options = self.conn.prepare_cached(
            "SELECT task, description, residual_rating FROM mitigation_options
             WHERE assessment_id = ?1 ORDER BY position",
        )?;
        let mut orders = self
            .conn
            .prepare_cached("SELECT id FROM work_orders WHERE assessment_id = ?1 ORDER BY id")?;
        for a in &mut out {
            let mut rows = modes.query([a.id])?;
            while let Some(r) = rows.next()? {
                let residual: Option<String> = r.get(9)?;
                a.modes.push(StoredMode {
                    part: stored_word("part", &r.get::<_, String>(0)?, TreePart::parse)?,
                    part_size_cm: r.get(1)?,
                    target: r.get(2)?,
                    occupancy: stored_word("occupancy", &r.get::<_, String>(3)?, Occupancy::parse)?,
                    likelihood_of_failure: stored_word(
                        "likelihood_of_failure",
                        &r.get::<_, String>(4)?,
                        LikelihoodOfFailure::parse,
                    )?,
                    likelihood_of_impact: stored_word(
                        "likelihood_of_impact",
                        &r.get::<_, String>(5)?,
                        LikelihoodOfImpact::parse,
                    )?,
                    consequences: stored_word(
                        "consequences",
                        &r.get::<_, String>(6)?,
                        Consequences::parse,
                    )?,
                    rating: stored_word("rating", &r.get::<_, String>(7)?, RiskRating::parse)?,
                    mitigation: r.get(8)?,
                    residual_rating: residual
                        .map(|t| stored_word("residual_rating", &t, RiskRating::parse))
                        .transpose()?,
                });
            }
            let mut rows = options.query([a.id])?;
            while let Some(r) = rows.next()? {
                a.mitigations.push(MitigationOption {
                    task: stored_word("mitigation task", &r.get::<_, String>(0)?, WorkTask::parse)?,
                    description: r.get(1)?,
                    residual_rating: stored_word(
                        "residual_rating",
                        &r.get::<_, String>(2)?,
                        RiskRating::parse,
                    )?,
                });
            }
            a.work_order_ids = orders
                .query_map([a.id], |r| r.get(0))?
                .collect::<Result<Vec<i64>, _>>()?;
        }
        Ok(out)
    }

    /// Every standing tree that has an assessment, with its latest one (by date, then entry order):
    /// the rows of the watchlist.
    pub fn watch_items(&self) -> Result<Vec<WatchItem>, StoreError> {
        let mut stmt = self.conn.prepare(
            "SELECT t.id, t.uid, s.scientific_name, t.street, t.house_number, z.name,
                    a.id, a.assessed_on, a.assessor, a.level, a.rating, a.next_due_on,
                    (SELECT count(*) FROM work_orders w
                     WHERE w.tree_id = t.id AND w.status IN ('open', 'scheduled'))
             FROM assessments a
             JOIN trees t ON t.id = a.tree_id
             JOIN species s ON s.id = t.species_id
             LEFT JOIN zones z ON z.id = t.zone_id
             WHERE t.status = 'standing'
               AND a.id = (SELECT a2.id FROM assessments a2 WHERE a2.tree_id = a.tree_id
                           ORDER BY a2.assessed_on DESC, a2.id DESC LIMIT 1)
             ORDER BY t.id",
        )?;
        let mut rows = stmt.query([])?;
        let mut out = Vec::new();
        while let Some(r) = rows.next()? {
            let assessed_on: String = r.get(7)?;
            out.push(WatchItem {
                tree_id: r.get(0)?,
                uid: r.get(1)?,
                species: r.get(2)?,
                street: r.get(3)?,
                house_number: r.get(4)?,
                zone: r.get(5)?,
                assessment_id: r.get(6)?,
                assessed_on: stored_date("assessed_on", Some(assessed_on))?
                    .ok_or_else(|| StoreError::Invalid("stored assessed_on is empty".into()))?,
                assessor: r.get(8)?,
                level: r.get(9)?,
                rating: stored_word("rating", &r.get::<_, String>(10)?, RiskRating::parse)?,
                next_due_on: stored_date("next_due_on", r.get(11)?)?,
                pending_work: r.get(12)?,
            });
        }
        Ok(out)
    }

    /// Work orders with these statuses (all when empty) with their trees' place and the rating of the
    /// assessment behind them: the rows of the work queue.
    pub fn work_items(&self, statuses: &[WorkStatus]) -> Result<Vec<WorkItem>, StoreError> {
        // The status words are the enum's own constants, so they can be written into the SQL.
        let filter = if statuses.is_empty() {
            String::new()
        } else {
            let words: Vec<String> = statuses
                .iter()
                .map(|s| format!("'{}'", s.as_str()))
                .collect();
            format!("WHERE w.status IN ({})", words.join(", "))
        };
        let mut stmt = self.conn.prepare(&format!(
            "SELECT {ORDER_COLUMNS}, t.uid, s.scientific_name, t.street, t.house_number, z.name, a.rating
             FROM work_orders w
             JOIN trees t ON t.id = w.tree_id
             JOIN species s ON s.id = t.species_id
             LEFT JOIN zones z ON z.id = t.zone_id
             LEFT JOIN assessments a ON a.id = w.assessment_id
             {filter} ORDER BY w.id"
        ))?;
        let mut rows = stmt.query([])?;
        let mut out = Vec::new();
        while let Some(r) = rows.next()? {
            let order = order_from_row(r)?;
            let rating: Option<String> = r.get(19)?;
            out.push(WorkItem {
                id: order.id,
                tree_id: order.tree_id,
                uid: r.get(14)?,
                species: r.get(15)?,
                street: r.get(16)?,
                house_number: r.get(17)?,
                zone: r.get(18)?,
                task: order.task,
                priority: order.priority,
                status: order.status,
                due_on: order.due_on,
                scheduled_on: order.scheduled_on,
                done_on: order.done_on,
                crew: order.crew,
                estimated_cost: order.estimated_cost,
                actual_cost: order.actual_cost,
                notes: order.notes,
                assessment_id: order.assessment_id,
                rating: rating
                    .map(|t| stored_word("rating", &t, RiskRating::parse))
                    .transpose()?,
                cycle: order.cycle,
            });
        }
        Ok(out)
    }

    /// One work order.
    pub fn work_order(&self, id: i64) -> Result<Option<WorkOrder>, StoreError> {
        load_order(&self.conn, id)
    }

    /// Adds a work order after checking it against its tree (and its assessment, when linked: the
    /// assessment must be of the same tree). Returns the new id.
    pub fn add_work_order(
        &mut self,
        order: &NewWorkOrder,
        actor: &str,
        now: DateTime<Utc>,
    ) -> Result<i64, StoreError> {
        self.write(actor, |tx| {
            let tree = tree_state(tx, order.tree_id)?;
            let order = order
                .clone()
                .validated(tree.status)
                .map_err(|e| invalid(&format!("tree {}", order.tree_id), e))?;
            if let Some(assessment_id) = order.assessment_id {
                let of_tree: Option<i64> = tx
                    .query_row(
                        "SELECT tree_id FROM assessments WHERE id = ?1",
                        [assessment_id],
                        |r| r.get(0),
                    )
                    .optional()?;
                match of_tree {
                    None => {
                        return Err(StoreError::Invalid(format!(
                            "assessment: no assessment with id {assessment_id}"
                        )));
                    }
                    Some(t) if t != order.tree_id => {
                        return Err(StoreError::Invalid(format!(
                            "assessment: assessment {assessment_id} is of tree {t}, not of tree {}",
                            order.tree_id
                        )));
                    }
                    Some(_) => {}
                }
            }
            insert_order(tx, &order, &timestamp(now))
        })
    }

    /// Changes a work order by the life-cycle rules ([`work::apply`]). A removal marked done also marks
    /// the tree removed (`removed_on` = the done date; the tree is kept) and cancels the tree's other
    /// pending work that ends with it ([`work::ends_with_tree`]). All or nothing.
    pub fn change_work_order(
        &mut self,
        id: i64,
        change: &WorkChange,
        today: NaiveDate,
        actor: &str,
        now: DateTime<Utc>,
    ) -> Result<WorkOutcome, StoreError> {
        self.write(actor, |tx| {
            let stamp = timestamp(now);
            let context = format!("work order {id}");
            let before = load_order(tx, id)?
                .ok_or_else(|| StoreError::Invalid(format!("no work order with id {id}")))?;
            let tree = tree_state(tx, before.tree_id)?;
            let after =
                work::apply(&before, change, tree, today).map_err(|e| invalid(&context, e))?;
            update_order(tx, &after, &stamp)?;
            let tree_removed_on = work::removes_tree(&before, &after);
            let mut cancelled_with_tree = Vec::new();
            if let Some(removed_on) = tree_removed_on {
                tx.execute(
                    "UPDATE trees SET status = 'removed', removed_on = ?2, updated_at = ?3,
                         notes = CASE WHEN notes IS NULL OR notes = '' THEN ?4 ELSE notes || char(10) || ?4 END
                     WHERE id = ?1",
                    params![
                        after.tree_id,
                        removed_on.to_string(),
                        stamp,
                        format!("removed: work order {id}"),
                    ],
                )?;
                let mut stmt = tx.prepare(&format!(
                    "SELECT {ORDER_COLUMNS} FROM work_orders w
                     WHERE w.tree_id = ?1 AND w.id <> ?2 AND w.status IN ('open', 'scheduled') ORDER BY w.id"
                ))?;
                let mut others = Vec::new();
                let mut rows = stmt.query(params![after.tree_id, id])?;
                while let Some(r) = rows.next()? {
                    others.push(order_from_row(r)?);
                }
                let gone = TreeState {
                    status: TreeStatus::Removed,
                    removed_on: Some(removed_on),
                };
                for other in others.iter().filter(|o| work::ends_with_tree(o.task)) {
                    let cancel = WorkChange::Cancel {
                        reason: Some(format!("tree removed by work order {id}")),
                    };
                    let cancelled = work::apply(other, &cancel, gone, today)
                        .map_err(|e| invalid(&format!("work order {}", other.id), e))?;
                    update_order(tx, &cancelled, &stamp)?;
                    cancelled_with_tree.push(other.id);
                }
            }
            Ok(WorkOutcome {
                order: after,
                tree_removed_on,
                cancelled_with_tree,
            })
        })
    }

    /// The maintenance-cycle lengths from the settings.
    pub fn cycle_rules(&self) -> Result<CycleRules, StoreError> {
        rules_from(&self.settings()?)
    }

    /// Generates the cycle work due on or before `until` for every standing tree ([`cycles::due_work`])
    /// and adds it as open orders, in one transaction; a dry run adds nothing. Running it again creates
    /// nothing new.
    pub fn generate_cycle_work(
        &mut self,
        until: NaiveDate,
        dry_run: bool,
        actor: &str,
        now: DateTime<Utc>,
    ) -> Result<Vec<GeneratedWork>, StoreError> {
        let work = |tx: &rusqlite::Transaction<'_>| {
            let rules = rules_from(&settings_in(tx)?)?;
            let stamp = timestamp(now);
            let mut out = Vec::new();
            for tree in cycle_trees(tx)? {
                for due in cycles::due_work(&tree, &rules, until) {
                    let order_id = if dry_run {
                        None
                    } else {
                        Some(insert_order(
                            tx,
                            &NewWorkOrder {
                                tree_id: due.tree_id,
                                task: due.task,
                                priority: due.priority,
                                due_on: Some(due.due_on),
                                crew: None,
                                estimated_cost: None,
                                notes: Some(due.notes.clone()),
                                assessment_id: None,
                                cycle: Some(due.kind),
                            },
                            &stamp,
                        )?)
                    };
                    out.push(GeneratedWork {
                        order_id,
                        work: due,
                    });
                }
            }
            Ok(out)
        };
        if dry_run {
            self.dry_run(actor, work)
        } else {
            self.write(actor, work)
        }
    }
}
