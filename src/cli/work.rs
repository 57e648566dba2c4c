//! `streetwood work add|schedule|done|cancel|edit|list`: work orders and the work queue, over
//! [`crate::care::work`] (the life-cycle rules), [`crate::care::queue`] and [`crate::store`].

use std::path::{Path, PathBuf};

use chrono::{DateTime, NaiveDate, Utc};
use clap::{Args, Subcommand};
use serde_json::json;

use super::care::{
    ListFormat, TextFormat, address, find_tree, input, parse_date, parse_task, short_uid, today,
    write_table,
};
use super::{CliError, csv_error, open_store, with_output};
use crate::care::queue::{WorkFilter, work_queue};
use crate::care::risk::CAUTION;
use crate::care::work::{NewWorkOrder, Priority, WorkChange, WorkStatus, WorkTask};
use crate::io::csv_safe;
use crate::store::care::WorkOutcome;

/// The audit actor of work commands.
const ACTOR: &str = "work";

/// `streetwood work …`.
#[derive(Debug, Subcommand)]
pub enum WorkCommand {
    /// Add a work order for a tree (status open).
    Add {
        /// The tree: its id, uid, or a unique uid prefix (6+ characters).
        tree: String,
        /// What to do.
        #[arg(long, value_parser = parse_task, value_name = "TASK")]
        task: WorkTask,
        /// 1 urgent, 2 high, 3 normal, 4 routine.
        #[arg(long, value_name = "1-4")]
        priority: i64,
        /// Due date.
        #[arg(long, value_parser = parse_date, value_name = "DATE")]
        due: Option<NaiveDate>,
        /// Crew.
        #[arg(long)]
        crew: Option<String>,
        /// Estimated cost.
        #[arg(long, value_name = "AMOUNT", allow_hyphen_values = true)]
        cost: Option<f64>,
        /// Notes.
        #[arg(long)]
        notes: Option<String>,
        /// The assessment that called for this work (of the same tree).
        #[arg(long, value_name = "ID")]
        assessment: Option<i64>,
        /// Output format.
        #[arg(long, value_enum, default_value = "text")]
        format: TextFormat,
    },
    /// Book an open (or re-book a scheduled) order for a date.
    Schedule {
        /// The work order id.
        id: i64,
        /// The date the crew is booked for (today or later).
        #[arg(long, value_parser = parse_date, value_name = "DATE")]
        on: NaiveDate,
        /// The crew (kept as it is when not given).
        #[arg(long)]
        crew: Option<String>,
        /// Estimated cost (kept as it is when not given).
        #[arg(long, value_name = "AMOUNT", allow_hyphen_values = true)]
        cost: Option<f64>,
        /// Today's date (default: the clock).
        #[arg(long, value_parser = parse_date, value_name = "DATE")]
        today: Option<NaiveDate>,
        /// Output format.
        #[arg(long, value_enum, default_value = "text")]
        format: TextFormat,
    },
    /// Record an order as done. A removal done marks the tree removed (kept in history, never deleted)
    /// and cancels its other pending pruning, inspection, watering and staking.
    Done {
        /// The work order id.
        id: i64,
        /// The date the work was done (today or earlier).
        #[arg(long, value_parser = parse_date, value_name = "DATE")]
        on: NaiveDate,
        /// Actual cost.
        #[arg(long, value_name = "AMOUNT", allow_hyphen_values = true)]
        cost: Option<f64>,
        /// Notes added to the order's notes.
        #[arg(long)]
        notes: Option<String>,
        /// Today's date (default: the clock).
        #[arg(long, value_parser = parse_date, value_name = "DATE")]
        today: Option<NaiveDate>,
        /// Output format.
        #[arg(long, value_enum, default_value = "text")]
        format: TextFormat,
    },
    /// Cancel an open or scheduled order (the reason is kept in its notes).
    Cancel {
        /// The work order id.
        id: i64,
        /// Why.
        #[arg(long)]
        reason: Option<String>,
        /// Output format.
        #[arg(long, value_enum, default_value = "text")]
        format: TextFormat,
    },
    /// Change an open or scheduled order.
    Edit {
        /// The work order id.
        id: i64,
        /// New task.
        #[arg(long, value_parser = parse_task, value_name = "TASK")]
        task: Option<WorkTask>,
        /// New priority (1 urgent … 4 routine).
        #[arg(long, value_name = "1-4")]
        priority: Option<i64>,
        /// New due date.
        #[arg(long, value_parser = parse_date, value_name = "DATE")]
        due: Option<NaiveDate>,
        /// New crew (an empty value clears it).
        #[arg(long)]
        crew: Option<String>,
        /// New estimated cost.
        #[arg(long, value_name = "AMOUNT", allow_hyphen_values = true)]
        cost: Option<f64>,
        /// New notes (replace the old; an empty value clears them).
        #[arg(long)]
        notes: Option<String>,
        /// Output format.
        #[arg(long, value_enum, default_value = "text")]
        format: TextFormat,
    },
    /// The work queue: by priority, then due date, with counts and the estimated cost of open work.
    List(Box<ListArgs>),
}

/// Arguments of `work list`.
#[derive(Debug, Args)]
pub struct ListArgs {
    /// Only these statuses (repeat; default: open and scheduled).
    #[arg(long, value_parser = parse_status, value_name = "STATUS", conflicts_with = "all")]
    pub status: Vec<WorkStatus>,
    /// Every status, done and cancelled included.
    #[arg(long)]
    pub all: bool,
    /// Only orders of this task (repeat for several).
    #[arg(long, value_parser = parse_task, value_name = "TASK")]
    pub task: Vec<WorkTask>,
    /// Only this crew (any case).
    #[arg(long)]
    pub crew: Option<String>,
    /// Only trees on this street (any case).
    #[arg(long)]
    pub street: Option<String>,
    /// Only trees in this zone (any case).
    #[arg(long)]
    pub zone: Option<String>,
    /// Only this tree (id, uid or unique uid prefix).
    #[arg(long)]
    pub tree: Option<String>,
    /// Only pending orders past their due date.
    #[arg(long)]
    pub overdue: bool,
    /// The date "overdue" is measured against (default: today by the clock).
    #[arg(long, value_parser = parse_date, value_name = "DATE")]
    pub today: Option<NaiveDate>,
    /// Output format.
    #[arg(long, value_enum, default_value = "table")]
    pub format: ListFormat,
    /// Output file (default: standard output).
    #[arg(long, value_name = "FILE")]
    pub out: Option<PathBuf>,
}

fn parse_status(text: &str) -> Result<WorkStatus, String> {
    WorkStatus::parse(text).map_err(|e| e.to_string())
}

fn priority(value: Option<i64>) -> Result<Option<Priority>, CliError> {
    value
        .map(Priority::new)
        .transpose()
        .map_err(|e| input("", e))
}

/// Runs a `work` subcommand.
pub fn run(inventory: &Path, command: &WorkCommand, now: DateTime<Utc>) -> Result<(), CliError> {
    match command {
        WorkCommand::Add {
            tree,
            task,
            priority: p,
            due,
            crew,
            cost,
            notes,
            assessment,
            format,
        } => {
            let mut store = open_store(inventory)?;
            let tree = find_tree(&store, tree)?;
            let order = NewWorkOrder {
                tree_id: tree.id,
                task: *task,
                priority: Priority::new(*p).map_err(|e| input("", e))?,
                due_on: *due,
                crew: crew.clone(),
                estimated_cost: *cost,
                notes: notes.clone(),
                assessment_id: *assessment,
                cycle: None,
            };
            let id = store.add_work_order(&order, ACTOR, now)?;
            let stored = store.work_order(id)?;
            with_output(None, inventory, |out| match format {
                TextFormat::Json => {
                    let document = json!({ "work_order_id": id, "order": stored, "tree": tree });
                    serde_json::to_writer_pretty(&mut *out, &document)
                        .map_err(anyhow::Error::from)?;
                    writeln!(out)?;
                    Ok(())
                }
                TextFormat::Text => {
                    writeln!(
                        out,
                        "added work order {id}: {task}, priority {p}, tree {} ({}, {}){}",
                        tree.id,
                        tree.species,
                        tree.address(),
                        due.map(|d| format!(", due {d}")).unwrap_or_default()
                    )?;
                    Ok(())
                }
            })
        }
        WorkCommand::Schedule {
            id,
            on,
            crew,
            cost,
            today: given,
            format,
        } => change(
            inventory,
            *id,
            &WorkChange::Schedule {
                on: *on,
                crew: crew.clone(),
                estimated_cost: *cost,
            },
            today(*given, now),
            *format,
            now,
        ),
        WorkCommand::Done {
            id,
            on,
            cost,
            notes,
            today: given,
            format,
        } => change(
            inventory,
            *id,
            &WorkChange::Done {
                on: Some(*on),
                actual_cost: *cost,
                notes: notes.clone(),
            },
            today(*given, now),
            *format,
            now,
        ),
        WorkCommand::Cancel { id, reason, format } => change(
            inventory,
            *id,
            &WorkChange::Cancel {
                reason: reason.clone(),
            },
            today(None, now),
            *format,
            now,
        ),
        WorkCommand::Edit {
            id,
            task,
            priority: p,
            due,
            crew,
            cost,
            notes,
            format,
        } => change(
            inventory,
            *id,
            &WorkChange::Edit {
                task: *task,
                priority: priority(*p)?,
                due_on: *due,
                crew: crew.clone(),
                estimated_cost: *cost,
                notes: notes.clone(),
            },
            today(None, now),
            *format,
            now,
        ),
        WorkCommand::List(args) => list(inventory, args, now),
    }
}

fn change(
    inventory: &Path,
    id: i64,
    change: &WorkChange,
    today: NaiveDate,
    format: TextFormat,
    now: DateTime<Utc>,
) -> Result<(), CliError> {
    let mut store = open_store(inventory)?;
    let outcome = store.change_work_order(id, change, today, ACTOR, now)?;
    let WorkOutcome {
        order,
        tree_removed_on,
        cancelled_with_tree,
    } = &outcome;
    if format == TextFormat::Json {
        return with_output(None, inventory, |out| {
            serde_json::to_writer_pretty(&mut *out, &outcome).map_err(anyhow::Error::from)?;
            writeln!(out)?;
            Ok(())
        });
    }
    let what = match change {
        WorkChange::Schedule { .. } => format!(
            "scheduled for {}{}",
            order
                .scheduled_on
                .map(|d| d.to_string())
                .unwrap_or_default(),
            order
                .crew
                .as_deref()
                .map(|c| format!(" ({c})"))
                .unwrap_or_default()
        ),
        WorkChange::Done { .. } => format!(
            "done on {}{}",
            order.done_on.map(|d| d.to_string()).unwrap_or_default(),
            order
                .actual_cost
                .map(|c| format!(", actual cost {c:.2}"))
                .unwrap_or_default()
        ),
        WorkChange::Cancel { .. } => "cancelled".to_string(),
        WorkChange::Edit { .. } => format!(
            "now {}, priority {}{}{}",
            order.task,
            order.priority,
            order
                .due_on
                .map(|d| format!(", due {d}"))
                .unwrap_or_default(),
            order
                .crew
                .as_deref()
                .map(|c| format!(", crew {c}"))
                .unwrap_or_default()
        ),
    };
    with_output(None, inventory, |out| {
        writeln!(
            out,
            "work order {id} ({}, tree {}): {what}",
            order.task, order.tree_id
        )?;
        if let Some(date) = tree_removed_on {
            writeln!(
                out,
                "tree {} marked removed on {date} (kept in the inventory and its history)",
                order.tree_id
            )?;
        }
        if !cancelled_with_tree.is_empty() {
            writeln!(
                out,
                "cancelled with the tree: work order{} {}",
                if cancelled_with_tree.len() == 1 {
                    ""
                } else {
                    "s"
                },
                cancelled_with_tree
                    .iter()
                    .map(|i| i.to_string())
                    .collect::<Vec<_>>()
                    .join(", ")
            )?;
        }
        Ok(())
    })
}

/// The CSV columns of `work list`.
pub const WORK_COLUMNS: [&str; 23] = [
    "id",
    "tree_id",
    "uid",
    "species",
    "street",
    "house_number",
    "zone",
    "task",
    "priority",
    "status",
    "due_on",
    "scheduled_on",
    "done_on",
    "overdue_days",
    "crew",
    "estimated_cost",
    "actual_cost",
    "assessment_id",
    "rating",
    "cycle",
    "notes",
    "currency",
    "caution",
];

fn list(inventory: &Path, args: &ListArgs, now: DateTime<Utc>) -> Result<(), CliError> {
    let today = today(args.today, now);
    let store = open_store(inventory)?;
    let tree_id = match &args.tree {
        Some(reference) => Some(find_tree(&store, reference)?.id),
        None => None,
    };
    let filter = WorkFilter {
        statuses: if args.all {
            WorkStatus::ALL.to_vec()
        } else {
            args.status.clone()
        },
        tasks: args.task.clone(),
        crew: args.crew.clone(),
        street: args.street.clone(),
        zone: args.zone.clone(),
        tree_id,
        overdue_only: args.overdue,
    };
    let currency = store.setting("currency")?.unwrap_or_default();
    let queue = work_queue(
        store.work_items(&filter.effective_statuses())?,
        &filter,
        today,
    );
    let pending: usize = queue
        .by_status
        .iter()
        .filter(|(s, _)| s.is_pending())
        .map(|(_, n)| n)
        .sum();
    let summary = format!(
        "{} work order{} (priority 1: {}, 2: {}, 3: {}, 4: {}; {}); {} overdue as of {today}; estimated cost of the {pending} open: {currency} {} ({} without an estimate)",
        queue.entries.len(),
        if queue.entries.len() == 1 { "" } else { "s" },
        queue.by_priority[0],
        queue.by_priority[1],
        queue.by_priority[2],
        queue.by_priority[3],
        queue
            .by_status
            .iter()
            .filter(|(_, n)| *n > 0)
            .map(|(s, n)| format!("{s} {n}"))
            .collect::<Vec<_>>()
            .join(", "),
        queue.overdue,
        money(queue.open_estimated_cost),
        queue.open_without_estimate
    );
    let text = |t: &Option<String>| t.clone().unwrap_or_default();
    let date = |d: Option<NaiveDate>| d.map(|d| d.to_string()).unwrap_or_default();
    let number = |x: Option<f64>| x.map(|v| format!("{v:.2}")).unwrap_or_default();
    with_output(args.out.as_deref(), inventory, |out| match args.format {
        ListFormat::Csv => {
            eprintln!("{summary}");
            let mut writer = csv::Writer::from_writer(out);
            writer.write_record(WORK_COLUMNS).map_err(csv_error)?;
            for e in &queue.entries {
                let i = &e.item;
                writer
                    .write_record([
                        i.id.to_string(),
                        i.tree_id.to_string(),
                        csv_safe(&i.uid).into_owned(),
                        csv_safe(&i.species).into_owned(),
                        csv_safe(&text(&i.street)).into_owned(),
                        csv_safe(&text(&i.house_number)).into_owned(),
                        csv_safe(&text(&i.zone)).into_owned(),
                        i.task.to_string(),
                        i.priority.to_string(),
                        i.status.to_string(),
                        date(i.due_on),
                        date(i.scheduled_on),
                        date(i.done_on),
                        e.overdue_days.map(|d| d.to_string()).unwrap_or_default(),
                        csv_safe(&text(&i.crew)).into_owned(),
                        number(i.estimated_cost),
                        number(i.actual_cost),
                        i.assessment_id.map(|a| a.to_string()).unwrap_or_default(),
                        i.rating.map(|r| r.to_string()).unwrap_or_default(),
                        i.cycle.map(|c| c.to_string()).unwrap_or_default(),
                        csv_safe(&text(&i.notes)).into_owned(),
                        csv_safe(&currency).into_owned(),
                        CAUTION.to_string(),
                    ])
                    .map_err(csv_error)?;
            }
            writer.flush()?;
            Ok(())
        }
        ListFormat::Json => {
            let by_status: serde_json::Map<String, serde_json::Value> = queue
                .by_status
                .iter()
                .map(|(s, n)| (s.to_string(), json!(n)))
                .collect();
            let document = json!({
                "today": today,
                "count": queue.entries.len(),
                "by_priority": {
                    "1": queue.by_priority[0],
                    "2": queue.by_priority[1],
                    "3": queue.by_priority[2],
                    "4": queue.by_priority[3],
                },
                "by_status": by_status,
                "overdue": queue.overdue,
                "open_estimated_cost": queue.open_estimated_cost,
                "open_without_estimate": queue.open_without_estimate,
                "currency": currency,
                "orders": queue.entries,
                "caution": CAUTION,
            });
            serde_json::to_writer_pretty(&mut *out, &document).map_err(anyhow::Error::from)?;
            writeln!(out)?;
            Ok(())
        }
        ListFormat::Table => {
            let rows: Vec<Vec<String>> = queue
                .entries
                .iter()
                .map(|e| {
                    let i = &e.item;
                    vec![
                        i.id.to_string(),
                        i.priority.to_string(),
                        i.status.to_string(),
                        i.task.to_string(),
                        date(i.due_on),
                        e.overdue_days.map(|d| format!("{d} d")).unwrap_or_default(),
                        date(i.scheduled_on.or(i.done_on)),
                        format!("{} {}", i.tree_id, short_uid(&i.uid)),
                        address(&i.house_number, &i.street),
                        text(&i.zone),
                        text(&i.crew),
                        number(i.estimated_cost),
                        i.rating.map(|r| r.to_string()).unwrap_or_default(),
                        clip(&text(&i.notes), 40),
                    ]
                })
                .collect();
            write_table(
                out,
                &[
                    "id",
                    "pri",
                    "status",
                    "task",
                    "due",
                    "overdue",
                    "booked/done",
                    "tree",
                    "address",
                    "zone",
                    "crew",
                    "estimate",
                    "risk",
                    "notes",
                ],
                &rows,
            )?;
            writeln!(out, "\n{summary}.\n{CAUTION}")?;
            Ok(())
        }
    })
}

/// An amount with two decimals and thousands separators.
fn money(x: f64) -> String {
    let text = format!("{:.2}", x.abs());
    let (whole, fraction) = text.split_once('.').unwrap_or((&text, "00"));
    let mut grouped = String::new();
    for (i, c) in whole.chars().enumerate() {
        if i > 0 && (whole.len() - i) % 3 == 0 {
            grouped.push(',');
        }
        grouped.push(c);
    }
    format!("{}{grouped}.{fraction}", if x < 0.0 { "-" } else { "" })
}

/// Text cut to `max` characters with an ellipsis, on one line.
fn clip(text: &str, max: usize) -> String {
    let one_line = text.replace(['\n', '\r'], " / ");
    if one_line.chars().count() <= max {
        one_line
    } else {
        let mut cut: String = one_line.chars().take(max.saturating_sub(1)).collect();
        cut.push('…');
        cut
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn money_and_clipping() {
        assert_eq!(money(1234567.891), "1,234,567.89");
        assert_eq!(money(0.0), "0.00");
        assert_eq!(clip("short", 10), "short");
        assert_eq!(clip("a\nb", 10), "a / b");
        assert_eq!(clip("abcdefghijkl", 5), "abcd…");
    }
}
