//! Work orders: tasks, priorities, statuses and the rules of their life cycle (DESIGN.md data model;
//! METHODS.md M10 "priorities 1 urgent … 4 routine"; M9 for the priority a risk rating calls for).
//!
//! The life cycle: `open` → `scheduled` (a crew booked for a date; may be re-scheduled) → `done` (needs
//! the date it was done), and `open`/`scheduled` → `cancelled`. Done and cancelled orders are final: more
//! work is a new order, so the record of what was done is never rewritten. A removal marked done removes
//! the tree (status `removed`, `removed_on` = the done date; trees are never deleted). These are
//! Streetwood's own record-keeping rules (DESIGN.md, issue 5), not a published method.

use chrono::NaiveDate;
use serde::Serialize;

use super::cycles::CycleKind;
use super::risk::ordered_words;
use super::{InputError, check_cost, clean_text};
use crate::model::TreeStatus;

ordered_words!(
    /// What a work order asks for (DESIGN.md data model).
    WorkTask { Prune => "prune", Remove => "remove", Plant => "plant", Stake => "stake", Water => "water", Inspect => "inspect", Stump => "stump", Other => "other" }
);
ordered_words!(
    /// Where a work order stands in its life cycle.
    WorkStatus { Open => "open", Scheduled => "scheduled", Done => "done", Cancelled => "cancelled" }
);

impl WorkStatus {
    /// Open or scheduled: work still to do (the work queue, the budget of open work).
    pub fn is_pending(self) -> bool {
        matches!(self, WorkStatus::Open | WorkStatus::Scheduled)
    }
}

/// Work-order priority, 1 urgent … 4 routine (METHODS.md M10).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(transparent)]
pub struct Priority(u8);

impl Priority {
    /// Priority 1: mitigate now (METHODS.md M9: an extreme rating calls for a priority-1 order).
    pub const URGENT: Priority = Priority(1);
    /// Priority 2: what a high rating calls for (issue 5; M9 gives high risk "several months to 1 year").
    pub const HIGH: Priority = Priority(2);
    /// Priority 4: routine work such as cycle pruning (METHODS.md M10).
    pub const ROUTINE: Priority = Priority(4);

    /// A priority from 1 to 4.
    pub fn new(value: i64) -> Result<Self, InputError> {
        match u8::try_from(value) {
            Ok(v @ 1..=4) => Ok(Priority(v)),
            _ => Err(InputError::new(
                "priority",
                format!("{value} must be a whole number from 1 (urgent) to 4 (routine)"),
            )),
        }
    }

    /// The number, 1 … 4.
    pub fn get(self) -> u8 {
        self.0
    }

    /// A word for reading beside the number: 1 urgent and 4 routine are M10's; 2 high and 3 normal are
    /// our own labels for the steps between.
    pub fn label(self) -> &'static str {
        match self.0 {
            1 => "urgent",
            2 => "high",
            3 => "normal",
            _ => "routine",
        }
    }
}

impl std::fmt::Display for Priority {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}", self.0)
    }
}

/// One work order as the rules see it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WorkOrder {
    pub id: i64,
    pub tree_id: i64,
    pub task: WorkTask,
    pub priority: Priority,
    pub status: WorkStatus,
    pub due_on: Option<NaiveDate>,
    pub scheduled_on: Option<NaiveDate>,
    pub done_on: Option<NaiveDate>,
    pub crew: Option<String>,
    pub estimated_cost: Option<f64>,
    pub actual_cost: Option<f64>,
    pub notes: Option<String>,
    pub assessment_id: Option<i64>,
    pub cycle: Option<CycleKind>,
}

/// A work order to add.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NewWorkOrder {
    pub tree_id: i64,
    pub task: WorkTask,
    pub priority: Priority,
    pub due_on: Option<NaiveDate>,
    pub crew: Option<String>,
    pub estimated_cost: Option<f64>,
    pub notes: Option<String>,
    pub assessment_id: Option<i64>,
    pub cycle: Option<CycleKind>,
}

impl NewWorkOrder {
    /// Checks the order against the tree it is for and tidies its text.
    pub fn validated(mut self, tree_status: TreeStatus) -> Result<Self, InputError> {
        task_allowed(self.task, tree_status)?;
        self.estimated_cost = check_cost("cost", self.estimated_cost)?;
        self.crew = clean_text(self.crew.as_deref());
        self.notes = clean_text(self.notes.as_deref());
        Ok(self)
    }
}

/// Which tasks fit a tree's status: a standing tree takes any work; a removed tree only stump grinding,
/// replanting its site or other work; a planned tree only its planting or other work [common practice,
/// no source].
pub fn task_allowed(task: WorkTask, tree_status: TreeStatus) -> Result<(), InputError> {
    let allowed: &[WorkTask] = match tree_status {
        TreeStatus::Standing => WorkTask::ALL,
        TreeStatus::Removed => &[WorkTask::Stump, WorkTask::Plant, WorkTask::Other],
        TreeStatus::Planned => &[WorkTask::Plant, WorkTask::Other],
    };
    if allowed.contains(&task) {
        Ok(())
    } else {
        let names: Vec<&str> = allowed.iter().map(|t| t.as_str()).collect();
        Err(InputError::new(
            "task",
            format!(
                "'{task}' does not fit a {tree_status} tree; allowed: {}",
                names.join(", ")
            ),
        ))
    }
}

/// A change to an existing work order.
#[derive(Debug, Clone, PartialEq)]
pub enum WorkChange {
    /// Book a crew for a date (again, if already scheduled).
    Schedule {
        on: NaiveDate,
        crew: Option<String>,
        estimated_cost: Option<f64>,
    },
    /// Record the work as done on a date.
    Done {
        on: Option<NaiveDate>,
        actual_cost: Option<f64>,
        notes: Option<String>,
    },
    /// Cancel the order, optionally saying why (kept in its notes).
    Cancel { reason: Option<String> },
    /// Change the fields of a pending order; `None` keeps a field as it is.
    Edit {
        task: Option<WorkTask>,
        priority: Option<Priority>,
        due_on: Option<NaiveDate>,
        crew: Option<String>,
        estimated_cost: Option<f64>,
        notes: Option<String>,
    },
}

impl WorkChange {
    /// The status the change leads to.
    fn target(&self, from: WorkStatus) -> WorkStatus {
        match self {
            WorkChange::Schedule { .. } => WorkStatus::Scheduled,
            WorkChange::Done { .. } => WorkStatus::Done,
            WorkChange::Cancel { .. } => WorkStatus::Cancelled,
            WorkChange::Edit { .. } => from,
        }
    }
}

/// Whether an order may move from one status to another (see the module documentation).
pub fn check_transition(from: WorkStatus, to: WorkStatus) -> Result<(), InputError> {
    use WorkStatus::*;
    match (from, to) {
        (Done, _) => Err(InputError::new(
            "status",
            "the order is done, and done orders are final; add a new order for more work",
        )),
        (Cancelled, _) => Err(InputError::new(
            "status",
            "the order was cancelled, and cancelled orders are final; add a new order instead",
        )),
        (Open, Open) | (Scheduled, Scheduled) | (Open | Scheduled, Done | Cancelled) => Ok(()),
        (Open, Scheduled) => Ok(()),
        (Scheduled, Open) => Err(InputError::new(
            "status",
            "a scheduled order is re-scheduled or cancelled, not reopened",
        )),
    }
}

/// What the tree of an order is like when the order changes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct TreeState {
    pub status: TreeStatus,
    pub removed_on: Option<NaiveDate>,
}

/// Applies a change to an order: checks the transition and the values, and returns the order as it
/// will be stored. `today` bounds done dates (work is recorded once done) and schedule dates (a
/// schedule looks forward).
pub fn apply(
    order: &WorkOrder,
    change: &WorkChange,
    tree: TreeState,
    today: NaiveDate,
) -> Result<WorkOrder, InputError> {
    let to = change.target(order.status);
    check_transition(order.status, to)?;
    let mut next = order.clone();
    next.status = to;
    match change {
        WorkChange::Schedule {
            on,
            crew,
            estimated_cost,
        } => {
            if *on < today {
                return Err(InputError::new(
                    "on",
                    format!(
                        "{on} is before today ({today}); a schedule looks forward (record past work with `work done`)"
                    ),
                ));
            }
            next.scheduled_on = Some(*on);
            if let Some(crew) = clean_text(crew.as_deref()) {
                next.crew = Some(crew);
            }
            if let Some(cost) = check_cost("cost", *estimated_cost)? {
                next.estimated_cost = Some(cost);
            }
        }
        WorkChange::Done {
            on,
            actual_cost,
            notes,
        } => {
            let Some(on) = *on else {
                return Err(InputError::new(
                    "on",
                    "a done order needs the date the work was done",
                ));
            };
            if on > today {
                return Err(InputError::new(
                    "on",
                    format!("{on} is after today ({today}); record work once it is done"),
                ));
            }
            if order.task == WorkTask::Remove {
                check_removal(tree, on)?;
            }
            next.done_on = Some(on);
            next.actual_cost = check_cost("cost", *actual_cost)?.or(order.actual_cost);
            next.notes = append_note(order.notes.as_deref(), clean_text(notes.as_deref()));
        }
        WorkChange::Cancel { reason } => {
            next.notes = append_note(
                order.notes.as_deref(),
                Some(match clean_text(reason.as_deref()) {
                    Some(reason) => format!("cancelled: {reason}"),
                    None => "cancelled".to_string(),
                }),
            );
        }
        WorkChange::Edit {
            task,
            priority,
            due_on,
            crew,
            estimated_cost,
            notes,
        } => {
            if let Some(task) = task {
                task_allowed(*task, tree.status)?;
                next.task = *task;
            }
            if let Some(priority) = priority {
                next.priority = *priority;
            }
            if let Some(due_on) = due_on {
                next.due_on = Some(*due_on);
            }
            if let Some(crew) = crew {
                next.crew = clean_text(Some(crew));
            }
            if let Some(cost) = check_cost("cost", *estimated_cost)? {
                next.estimated_cost = Some(cost);
            }
            if let Some(notes) = notes {
                next.notes = clean_text(Some(notes));
            }
            if next == *order {
                return Err(InputError::new(
                    "edit",
                    "nothing to change; give at least one of --task, --priority, --due, --crew, --cost, --notes",
                ));
            }
        }
    }
    Ok(next)
}

/// A removal can be done only on a standing tree, and not before it was planted.
fn check_removal(tree: TreeState, on: NaiveDate) -> Result<(), InputError> {
    match tree.status {
        TreeStatus::Standing => Ok(()),
        TreeStatus::Removed => Err(InputError::new(
            "task",
            format!(
                "the tree was already removed{}; cancel this order instead",
                tree.removed_on
                    .map(|d| format!(" on {d}"))
                    .unwrap_or_default()
            ),
        )),
        TreeStatus::Planned => Err(InputError::new(
            "task",
            format!(
                "the tree is only planned, so it cannot be removed on {on}; cancel this order instead"
            ),
        )),
    }
}

/// The date the tree is removed on when an order goes from `before` to `after`: a removal marked done.
pub fn removes_tree(before: &WorkOrder, after: &WorkOrder) -> Option<NaiveDate> {
    (after.task == WorkTask::Remove
        && after.status == WorkStatus::Done
        && before.status != WorkStatus::Done)
        .then_some(after.done_on)
        .flatten()
}

/// Pending work that ends with the tree: once the tree is removed, its pending pruning, inspection,
/// watering, staking and other removals are cancelled; stump grinding, replanting and other work stay
/// [common practice, no source].
pub fn ends_with_tree(task: WorkTask) -> bool {
    matches!(
        task,
        WorkTask::Prune | WorkTask::Inspect | WorkTask::Water | WorkTask::Stake | WorkTask::Remove
    )
}

fn append_note(notes: Option<&str>, addition: Option<String>) -> Option<String> {
    match (clean_text(notes), addition) {
        (Some(old), Some(new)) => Some(format!("{old}\n{new}")),
        (old, new) => new.or(old),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn date(text: &str) -> NaiveDate {
        text.parse().expect("date")
    }

    fn order(task: WorkTask, status: WorkStatus) -> WorkOrder {
        WorkOrder {
            id: 7,
            tree_id: 3,
            task,
            priority: Priority::URGENT,
            status,
            due_on: Some(date("2026-05-14")),
            scheduled_on: None,
            done_on: None,
            crew: None,
            estimated_cost: Some(900.0),
            actual_cost: None,
            notes: Some("leaning over the bus stop".to_string()),
            assessment_id: Some(1),
            cycle: None,
        }
    }

    const STANDING: TreeState = TreeState {
        status: TreeStatus::Standing,
        removed_on: None,
    };

    #[test]
    fn priorities_run_from_one_to_four() {
        assert_eq!(Priority::new(1).map(Priority::get), Ok(1));
        assert_eq!(Priority::new(4).map(|p| p.label()), Ok("routine"));
        for bad in [0, 5, -1, 300] {
            let error = Priority::new(bad).expect_err("out of range");
            assert_eq!(error.field, "priority");
        }
    }

    #[test]
    fn the_life_cycle_open_scheduled_done() {
        let today = date("2026-05-14");
        let open = order(WorkTask::Remove, WorkStatus::Open);
        let scheduled = apply(
            &open,
            &WorkChange::Schedule {
                on: date("2026-05-20"),
                crew: Some(" Kestrel crew ".to_string()),
                estimated_cost: None,
            },
            STANDING,
            today,
        )
        .expect("schedule");
        assert_eq!(scheduled.status, WorkStatus::Scheduled);
        assert_eq!(scheduled.scheduled_on, Some(date("2026-05-20")));
        assert_eq!(scheduled.crew.as_deref(), Some("Kestrel crew"));
        assert_eq!(scheduled.estimated_cost, Some(900.0));
        let later = date("2026-05-21");
        let done = apply(
            &scheduled,
            &WorkChange::Done {
                on: Some(later),
                actual_cost: Some(1040.0),
                notes: None,
            },
            STANDING,
            later,
        )
        .expect("done");
        assert_eq!(done.status, WorkStatus::Done);
        assert_eq!(done.done_on, Some(later));
        assert_eq!(done.actual_cost, Some(1040.0));
        assert_eq!(removes_tree(&scheduled, &done), Some(later));
        // Done is final: neither done again nor cancelled nor edited.
        for change in [
            WorkChange::Done {
                on: Some(later),
                actual_cost: None,
                notes: None,
            },
            WorkChange::Cancel { reason: None },
            WorkChange::Schedule {
                on: later,
                crew: None,
                estimated_cost: None,
            },
        ] {
            let error = apply(&done, &change, STANDING, later).expect_err("final");
            assert!(error.reason.contains("final"), "{error}");
        }
    }

    #[test]
    fn done_needs_a_date_that_is_not_in_the_future() {
        let today = date("2026-05-14");
        let open = order(WorkTask::Prune, WorkStatus::Open);
        let missing = WorkChange::Done {
            on: None,
            actual_cost: None,
            notes: None,
        };
        assert_eq!(
            apply(&open, &missing, STANDING, today)
                .expect_err("no date")
                .field,
            "on"
        );
        let future = WorkChange::Done {
            on: Some(date("2026-05-15")),
            actual_cost: None,
            notes: None,
        };
        assert!(
            apply(&open, &future, STANDING, today)
                .expect_err("future")
                .reason
                .contains("after today")
        );
        let negative = WorkChange::Done {
            on: Some(today),
            actual_cost: Some(-3.0),
            notes: None,
        };
        assert_eq!(
            apply(&open, &negative, STANDING, today)
                .expect_err("cost")
                .field,
            "cost"
        );
        let pruned = apply(
            &open,
            &WorkChange::Done {
                on: Some(today),
                actual_cost: None,
                notes: Some("crown raised".to_string()),
            },
            STANDING,
            today,
        )
        .expect("done");
        assert_eq!(removes_tree(&open, &pruned), None, "pruning keeps the tree");
        assert_eq!(
            pruned.notes.as_deref(),
            Some("leaning over the bus stop\ncrown raised")
        );
    }

    #[test]
    fn cancelled_orders_are_final_and_keep_the_reason() {
        let today = date("2026-05-14");
        let open = order(WorkTask::Prune, WorkStatus::Open);
        let cancelled = apply(
            &open,
            &WorkChange::Cancel {
                reason: Some("duplicate".to_string()),
            },
            STANDING,
            today,
        )
        .expect("cancel");
        assert_eq!(cancelled.status, WorkStatus::Cancelled);
        assert_eq!(
            cancelled.notes.as_deref(),
            Some("leaning over the bus stop\ncancelled: duplicate")
        );
        let again = apply(
            &cancelled,
            &WorkChange::Done {
                on: Some(today),
                actual_cost: None,
                notes: None,
            },
            STANDING,
            today,
        );
        assert!(again.expect_err("final").reason.contains("cancelled"));
    }

    #[test]
    fn schedules_look_forward_and_edits_must_change_something() {
        let today = date("2026-05-14");
        let open = order(WorkTask::Prune, WorkStatus::Open);
        let past = WorkChange::Schedule {
            on: date("2026-05-01"),
            crew: None,
            estimated_cost: None,
        };
        assert_eq!(
            apply(&open, &past, STANDING, today)
                .expect_err("past")
                .field,
            "on"
        );
        let nothing = WorkChange::Edit {
            task: None,
            priority: None,
            due_on: None,
            crew: None,
            estimated_cost: None,
            notes: None,
        };
        assert_eq!(
            apply(&open, &nothing, STANDING, today)
                .expect_err("no change")
                .field,
            "edit"
        );
        let edit = WorkChange::Edit {
            task: Some(WorkTask::Remove),
            priority: Some(Priority::HIGH),
            due_on: None,
            crew: Some(String::new()),
            estimated_cost: Some(1200.0),
            notes: None,
        };
        let edited = apply(&open, &edit, STANDING, today).expect("edit");
        assert_eq!(edited.task, WorkTask::Remove);
        assert_eq!(edited.priority, Priority::HIGH);
        assert_eq!(edited.status, WorkStatus::Open);
        assert_eq!(edited.estimated_cost, Some(1200.0));
    }

    #[test]
    fn a_removed_or_planned_tree_is_not_removed_again() {
        let today = date("2026-05-14");
        let open = order(WorkTask::Remove, WorkStatus::Open);
        let done = WorkChange::Done {
            on: Some(today),
            actual_cost: None,
            notes: None,
        };
        let removed = TreeState {
            status: TreeStatus::Removed,
            removed_on: Some(date("2025-01-02")),
        };
        let error = apply(&open, &done, removed, today).expect_err("removed");
        assert!(
            error.reason.contains("already removed on 2025-01-02"),
            "{error}"
        );
        let planned = TreeState {
            status: TreeStatus::Planned,
            removed_on: None,
        };
        assert!(apply(&open, &done, planned, today).is_err());
    }

    #[test]
    fn tasks_fit_the_tree_status() {
        assert!(task_allowed(WorkTask::Remove, TreeStatus::Standing).is_ok());
        assert!(task_allowed(WorkTask::Stump, TreeStatus::Removed).is_ok());
        assert!(task_allowed(WorkTask::Prune, TreeStatus::Removed).is_err());
        assert!(task_allowed(WorkTask::Plant, TreeStatus::Planned).is_ok());
        assert!(task_allowed(WorkTask::Inspect, TreeStatus::Planned).is_err());
        assert!(ends_with_tree(WorkTask::Prune));
        assert!(!ends_with_tree(WorkTask::Stump));
        assert!(!ends_with_tree(WorkTask::Plant));
    }

    #[test]
    fn transitions_table() {
        use WorkStatus::*;
        let allowed = [
            (Open, Scheduled),
            (Open, Done),
            (Open, Cancelled),
            (Scheduled, Scheduled),
            (Scheduled, Done),
            (Scheduled, Cancelled),
        ];
        for from in WorkStatus::ALL {
            for to in [Scheduled, Done, Cancelled] {
                assert_eq!(
                    check_transition(*from, to).is_ok(),
                    allowed.contains(&(*from, to)),
                    "{from} → {to}"
                );
            }
        }
    }
}
