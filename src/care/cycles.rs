//! Maintenance cycles (METHODS.md M10 [common practice, sourced ranges]): routine pruning every N years,
//! young-tree training every 3 years while DBH < 15 cm, stake removal 1 year after planting. Work comes
//! due on demand (`care cycle --until DATE`): at most one pending occurrence per tree and cycle, and never
//! the same occurrence twice, so generating again creates nothing new.

use chrono::{Months, NaiveDate};
use serde::Serialize;

use super::InputError;
use super::risk::ordered_words;
use super::work::{Priority, WorkStatus, WorkTask};

ordered_words!(
    /// The cycle that generated a work order.
    CycleKind { RoutinePrune => "routine_prune", YoungTraining => "young_training", StakeRemoval => "stake_removal" }
);

/// Cycle lengths, from the settings `cycle_*`.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct CycleRules {
    /// Routine pruning interval, years. M10: 5 (5–7 ideal; Miller & Sylvester 1981 found 5 optimal).
    pub prune_years: u32,
    /// Young-tree training interval, years. M10: 3 [common practice].
    pub training_years: u32,
    /// Trees below this DBH are trained rather than routinely pruned, cm. M10: 15 [common practice].
    pub training_max_dbh_cm: f64,
    /// Stakes come out this long after planting, months. M10: 12 [common practice].
    pub stake_removal_months: u32,
}

impl Default for CycleRules {
    fn default() -> Self {
        CycleRules {
            prune_years: 5,
            training_years: 3,
            training_max_dbh_cm: 15.0,
            stake_removal_months: 12,
        }
    }
}

/// The settings keys of the cycle lengths with their defaults (METHODS.md M10).
pub fn default_setting_pairs() -> Vec<(&'static str, String)> {
    let rules = CycleRules::default();
    vec![
        ("cycle_prune_years", rules.prune_years.to_string()),
        ("cycle_training_years", rules.training_years.to_string()),
        (
            "cycle_training_max_dbh_cm",
            rules.training_max_dbh_cm.to_string(),
        ),
        (
            "cycle_stake_removal_months",
            rules.stake_removal_months.to_string(),
        ),
    ]
}

/// Checks one cycle setting's value: whole years or months from 1 to 50 years (600 months), or a DBH
/// above 0 and at most 100 cm (sanity bounds of our own, no source).
pub fn validate_setting(key: &str, value: &str) -> Result<(), InputError> {
    let text = value.trim();
    let whole = |max: u32, unit: &str| -> Result<(), InputError> {
        match text.parse::<u32>() {
            Ok(n) if (1..=max).contains(&n) => Ok(()),
            _ => Err(InputError::new(
                key,
                format!("'{value}' must be a whole number of {unit} from 1 to {max}"),
            )),
        }
    };
    match key {
        "cycle_prune_years" | "cycle_training_years" => whole(50, "years"),
        "cycle_stake_removal_months" => whole(600, "months"),
        "cycle_training_max_dbh_cm" => match text.parse::<f64>() {
            Ok(cm) if cm.is_finite() && cm > 0.0 && cm <= 100.0 => Ok(()),
            _ => Err(InputError::new(
                key,
                format!("'{value}' must be a DBH in cm above 0 and at most 100"),
            )),
        },
        _ => Err(InputError::new(key, "is not a cycle setting")),
    }
}

impl CycleRules {
    /// The rules from (key, value) settings; missing keys keep their defaults.
    pub fn from_pairs<'a>(
        pairs: impl IntoIterator<Item = (&'a str, &'a str)>,
    ) -> Result<Self, InputError> {
        let mut rules = CycleRules::default();
        for (key, value) in pairs {
            if !key.starts_with("cycle_") {
                continue;
            }
            validate_setting(key, value)?;
            let text = value.trim();
            let bad = || InputError::new(key, format!("'{value}' is not a number"));
            match key {
                "cycle_prune_years" => rules.prune_years = text.parse().map_err(|_| bad())?,
                "cycle_training_years" => rules.training_years = text.parse().map_err(|_| bad())?,
                "cycle_stake_removal_months" => {
                    rules.stake_removal_months = text.parse().map_err(|_| bad())?
                }
                "cycle_training_max_dbh_cm" => {
                    rules.training_max_dbh_cm = text.parse().map_err(|_| bad())?
                }
                _ => {}
            }
        }
        Ok(rules)
    }
}

/// A work order of a tree as the cycles see it.
#[derive(Debug, Clone, PartialEq)]
pub struct OrderFact {
    pub task: WorkTask,
    pub status: WorkStatus,
    pub due_on: Option<NaiveDate>,
    pub done_on: Option<NaiveDate>,
    pub cycle: Option<CycleKind>,
}

/// A standing tree with what the cycles need to know.
#[derive(Debug, Clone, PartialEq)]
pub struct CycleTree {
    pub tree_id: i64,
    pub planted_on: Option<NaiveDate>,
    /// The date of its first measurement (the start of the record when the planting date is unknown).
    pub first_measured_on: Option<NaiveDate>,
    /// Equivalent DBH of the latest measurement, cm.
    pub dbh_cm: Option<f64>,
    pub orders: Vec<OrderFact>,
}

/// One occurrence of cycle work that has come due.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DueWork {
    pub tree_id: i64,
    pub kind: CycleKind,
    pub task: WorkTask,
    pub priority: Priority,
    pub due_on: NaiveDate,
    pub notes: String,
}

fn add_years(date: NaiveDate, years: u32) -> NaiveDate {
    date.checked_add_months(Months::new(years.saturating_mul(12)))
        .unwrap_or(NaiveDate::MAX)
}

/// The cycle work of one tree due on or before `until`. Rules (M10; the bookkeeping is ours):
/// - a tree with a pending removal gets no cycle work;
/// - pruning: a tree with DBH below `training_max_dbh_cm` is on the training cycle, others on the
///   routine cycle. The next occurrence is due one interval after the last done pruning (any pruning
///   order, cycle or not), else after the planting date, else after the first measurement; a cancelled
///   occurrence counts as that round skipped, so the next is due one interval after it. Nothing is
///   generated while any pruning is pending;
/// - stake removal: for a tree with a recorded staking (a done `stake` order that is not itself a
///   removal), due `stake_removal_months` after the later of planting and staking, once per staking.
///
/// Cycle work is routine: priority 4 (M10).
pub fn due_work(tree: &CycleTree, rules: &CycleRules, until: NaiveDate) -> Vec<DueWork> {
    let mut out = Vec::new();
    let pending = |task: WorkTask| {
        tree.orders
            .iter()
            .any(|o| o.task == task && o.status.is_pending())
    };
    if pending(WorkTask::Remove) {
        return out;
    }
    if !pending(WorkTask::Prune) {
        let training = tree
            .dbh_cm
            .is_some_and(|dbh| dbh < rules.training_max_dbh_cm);
        let (kind, years, what) = if training {
            (
                CycleKind::YoungTraining,
                rules.training_years,
                "young-tree training prune",
            )
        } else {
            (
                CycleKind::RoutinePrune,
                rules.prune_years,
                "routine pruning",
            )
        };
        let last_done = tree
            .orders
            .iter()
            .filter(|o| o.task == WorkTask::Prune && o.status == WorkStatus::Done)
            .filter_map(|o| o.done_on)
            .max();
        let last_skipped = tree
            .orders
            .iter()
            .filter(|o| {
                o.status == WorkStatus::Cancelled
                    && matches!(
                        o.cycle,
                        Some(CycleKind::RoutinePrune | CycleKind::YoungTraining)
                    )
            })
            .filter_map(|o| o.due_on)
            .max();
        let (base, from) = match last_done.max(last_skipped) {
            Some(date) if Some(date) == last_done => (Some(date), "last pruning"),
            Some(date) => (Some(date), "skipped round"),
            None => match (tree.planted_on, tree.first_measured_on) {
                (Some(planted), _) => (Some(planted), "planting"),
                (None, Some(measured)) => (Some(measured), "first measurement"),
                (None, None) => (None, ""),
            },
        };
        if let Some(base) = base {
            let due_on = add_years(base, years);
            let repeat = tree
                .orders
                .iter()
                .any(|o| o.cycle == Some(kind) && o.due_on == Some(due_on));
            if due_on <= until && !repeat {
                out.push(DueWork {
                    tree_id: tree.tree_id,
                    kind,
                    task: WorkTask::Prune,
                    priority: Priority::ROUTINE,
                    due_on,
                    notes: format!("{what}: {years}-year cycle from the {from} ({base})"),
                });
            }
        }
    }
    let last_staked = tree
        .orders
        .iter()
        .filter(|o| {
            o.task == WorkTask::Stake
                && o.status == WorkStatus::Done
                && o.cycle != Some(CycleKind::StakeRemoval)
        })
        .filter_map(|o| o.done_on)
        .max();
    if let Some(staked) = last_staked {
        let anchor = tree.planted_on.map_or(staked, |p| p.max(staked));
        let handled = tree.orders.iter().any(|o| {
            o.cycle == Some(CycleKind::StakeRemoval) && o.due_on.is_some_and(|d| d >= anchor)
        });
        let due_on = anchor
            .checked_add_months(Months::new(rules.stake_removal_months))
            .unwrap_or(NaiveDate::MAX);
        if !handled && due_on <= until {
            out.push(DueWork {
                tree_id: tree.tree_id,
                kind: CycleKind::StakeRemoval,
                task: WorkTask::Stake,
                priority: Priority::ROUTINE,
                due_on,
                notes: format!(
                    "remove stakes and ties: {} months after planting/staking ({anchor})",
                    rules.stake_removal_months
                ),
            });
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn date(text: &str) -> NaiveDate {
        text.parse().expect("date")
    }

    fn tree(dbh: f64, planted: Option<&str>, orders: Vec<OrderFact>) -> CycleTree {
        CycleTree {
            tree_id: 1,
            planted_on: planted.map(date),
            first_measured_on: Some(date("2016-07-03")),
            dbh_cm: Some(dbh),
            orders,
        }
    }

    fn order(task: WorkTask, status: WorkStatus, due: &str, done: Option<&str>) -> OrderFact {
        OrderFact {
            task,
            status,
            due_on: Some(date(due)),
            done_on: done.map(date),
            cycle: None,
        }
    }

    /// Turns generated work into the facts the next run sees (status open).
    fn as_orders(work: &[DueWork]) -> Vec<OrderFact> {
        work.iter()
            .map(|w| OrderFact {
                task: w.task,
                status: WorkStatus::Open,
                due_on: Some(w.due_on),
                done_on: None,
                cycle: Some(w.kind),
            })
            .collect()
    }

    // M10: routine pruning cycle 5 years, counted from the last done pruning.
    #[test]
    fn routine_pruning_is_due_five_years_after_the_last_pruning() {
        let rules = CycleRules::default();
        let t = tree(
            40.0,
            Some("2001-04-01"),
            vec![order(
                WorkTask::Prune,
                WorkStatus::Done,
                "2022-03-01",
                Some("2022-03-10"),
            )],
        );
        assert!(due_work(&t, &rules, date("2027-03-09")).is_empty());
        let due = due_work(&t, &rules, date("2027-03-10"));
        assert_eq!(due.len(), 1);
        assert_eq!(due[0].kind, CycleKind::RoutinePrune);
        assert_eq!(due[0].due_on, date("2027-03-10"));
        assert_eq!(due[0].priority, Priority::ROUTINE);
        // Without a pruning on record: from the planting date, else the first measurement.
        let never = tree(40.0, Some("2001-04-01"), vec![]);
        assert_eq!(
            due_work(&never, &rules, date("2027-01-01"))[0].due_on,
            date("2006-04-01")
        );
        let unknown = tree(40.0, None, vec![]);
        assert_eq!(
            due_work(&unknown, &rules, date("2027-01-01"))[0].due_on,
            date("2021-07-03")
        );
    }

    // M10: young-tree training every 3 years for DBH < 15 cm.
    #[test]
    fn small_trees_are_trained_every_three_years() {
        let rules = CycleRules::default();
        let young = tree(8.0, Some("2024-04-07"), vec![]);
        let due = due_work(&young, &rules, date("2027-12-31"));
        assert_eq!(due.len(), 1);
        assert_eq!(due[0].kind, CycleKind::YoungTraining);
        assert_eq!(due[0].due_on, date("2027-04-07"));
        let grown = tree(15.0, Some("2024-04-07"), vec![]);
        assert_eq!(
            due_work(&grown, &rules, date("2030-12-31"))[0].kind,
            CycleKind::RoutinePrune
        );
    }

    // M10: stakes removed 1 year after planting; only for trees whose staking is on record.
    #[test]
    fn stakes_come_out_a_year_after_planting() {
        let rules = CycleRules::default();
        let staked = tree(
            5.0,
            Some("2025-05-04"),
            vec![order(
                WorkTask::Stake,
                WorkStatus::Done,
                "2025-05-04",
                Some("2025-05-04"),
            )],
        );
        let due = due_work(&staked, &rules, date("2026-06-01"));
        assert_eq!(due.len(), 1, "training is not due yet: {due:?}");
        assert_eq!(due[0].kind, CycleKind::StakeRemoval);
        assert_eq!(due[0].task, WorkTask::Stake);
        assert_eq!(due[0].due_on, date("2026-05-04"));
        let unstaked = tree(5.0, Some("2025-05-04"), vec![]);
        assert!(due_work(&unstaked, &rules, date("2026-06-01")).is_empty());
    }

    // Issue 5: generating twice creates nothing the second time; done work moves the next date on.
    #[test]
    fn generation_is_idempotent() {
        let rules = CycleRules::default();
        let until = date("2028-01-01");
        let mut t = tree(
            6.0,
            Some("2024-04-07"),
            vec![order(
                WorkTask::Stake,
                WorkStatus::Done,
                "2024-04-07",
                Some("2024-04-07"),
            )],
        );
        let first = due_work(&t, &rules, until);
        assert_eq!(first.len(), 2, "{first:?}");
        t.orders.extend(as_orders(&first));
        assert!(due_work(&t, &rules, until).is_empty(), "second run");
        // Done stake removal and training: the stakes are not due again; training is due 3 years on.
        for o in &mut t.orders {
            if o.cycle.is_some() {
                o.status = WorkStatus::Done;
                o.done_on = Some(date("2027-05-01"));
            }
        }
        assert!(due_work(&t, &rules, until).is_empty());
        let later = due_work(&t, &rules, date("2030-05-01"));
        assert_eq!(later.len(), 1);
        assert_eq!(later[0].due_on, date("2030-05-01"));
    }

    #[test]
    fn a_cancelled_round_is_skipped_and_pending_work_blocks_generation() {
        let rules = CycleRules::default();
        let until = date("2027-01-01");
        let mut t = tree(40.0, None, vec![]);
        let first = due_work(&t, &rules, until);
        assert_eq!(first[0].due_on, date("2021-07-03"));
        t.orders.extend(as_orders(&first));
        t.orders[0].status = WorkStatus::Cancelled;
        let next = due_work(&t, &rules, until);
        assert_eq!(
            next[0].due_on,
            date("2026-07-03"),
            "one interval after the skipped round"
        );
        // A pending hand-made pruning or a pending removal: nothing generated.
        let pruning = tree(
            40.0,
            None,
            vec![order(
                WorkTask::Prune,
                WorkStatus::Scheduled,
                "2026-01-01",
                None,
            )],
        );
        assert!(due_work(&pruning, &rules, until).is_empty());
        let removal = tree(
            40.0,
            None,
            vec![order(
                WorkTask::Remove,
                WorkStatus::Open,
                "2026-01-01",
                None,
            )],
        );
        assert!(due_work(&removal, &rules, until).is_empty());
    }

    #[test]
    fn settings_are_checked_and_read() {
        let rules = CycleRules::from_pairs([("cycle_prune_years", "7"), ("units", "metric")])
            .expect("valid");
        assert_eq!(rules.prune_years, 7);
        assert_eq!(rules.training_years, 3);
        assert!(validate_setting("cycle_prune_years", "0").is_err());
        assert!(validate_setting("cycle_prune_years", "five").is_err());
        assert!(validate_setting("cycle_training_max_dbh_cm", "-2").is_err());
        assert!(validate_setting("cycle_training_max_dbh_cm", "12.5").is_ok());
        assert!(validate_setting("cycle_stake_removal_months", "18").is_ok());
        for (key, value) in default_setting_pairs() {
            assert!(validate_setting(key, &value).is_ok(), "{key}");
        }
    }
}
