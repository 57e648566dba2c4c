//! The watchlist (trees by risk rating, overdue re-inspections first) and the work queue (by priority,
//! then due date), with their filters and totals. Pure: "today" is a parameter.

use chrono::NaiveDate;
use serde::Serialize;

use super::cycles::CycleKind;
use super::risk::RiskRating;
use super::work::{Priority, WorkStatus, WorkTask};

/// A standing tree with its latest assessment.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WatchItem {
    pub tree_id: i64,
    pub uid: String,
    pub species: String,
    pub street: Option<String>,
    pub house_number: Option<String>,
    pub zone: Option<String>,
    pub assessment_id: i64,
    pub assessed_on: NaiveDate,
    pub assessor: Option<String>,
    pub level: u8,
    pub rating: RiskRating,
    pub next_due_on: Option<NaiveDate>,
    /// Open or scheduled work orders of the tree.
    pub pending_work: i64,
}

/// Which trees the watchlist shows.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct WatchFilter {
    pub overdue_only: bool,
    /// Only these ratings (empty: all).
    pub ratings: Vec<RiskRating>,
    /// Only this rating or higher.
    pub min_rating: Option<RiskRating>,
    /// Street name, any case.
    pub street: Option<String>,
    /// Zone name, any case.
    pub zone: Option<String>,
}

/// A watchlist line: the tree and how many days its re-inspection is overdue.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WatchEntry {
    #[serde(flatten)]
    pub item: WatchItem,
    /// Days past the next inspection date (only when overdue).
    pub overdue_days: Option<i64>,
}

/// The watchlist with its counts.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Watchlist {
    pub today: NaiveDate,
    pub entries: Vec<WatchEntry>,
    pub overdue: usize,
    /// Trees per rating, lowest rating first (all four ratings, zero included).
    pub by_rating: Vec<(RiskRating, usize)>,
}

/// Days a date lies before `today`, when it does: an inspection due on `today` is due, not overdue.
pub fn overdue_days(due_on: Option<NaiveDate>, today: NaiveDate) -> Option<i64> {
    due_on
        .filter(|due| *due < today)
        .map(|due| (today - due).num_days())
}

fn same_text(wanted: &Option<String>, have: &Option<String>) -> bool {
    match wanted {
        None => true,
        Some(w) => have
            .as_deref()
            .is_some_and(|h| h.trim().eq_ignore_ascii_case(w.trim())),
    }
}

/// Filters and orders the watchlist: overdue re-inspections first, then by rating (highest first), then
/// the earliest due date, then tree id (the order issue 5 asks for).
pub fn watchlist(items: Vec<WatchItem>, filter: &WatchFilter, today: NaiveDate) -> Watchlist {
    let mut entries: Vec<WatchEntry> = items
        .into_iter()
        .filter(|i| filter.ratings.is_empty() || filter.ratings.contains(&i.rating))
        .filter(|i| filter.min_rating.is_none_or(|min| i.rating >= min))
        .filter(|i| same_text(&filter.street, &i.street) && same_text(&filter.zone, &i.zone))
        .map(|item| WatchEntry {
            overdue_days: overdue_days(item.next_due_on, today),
            item,
        })
        .filter(|e| !filter.overdue_only || e.overdue_days.is_some())
        .collect();
    entries.sort_by(|a, b| {
        b.overdue_days
            .is_some()
            .cmp(&a.overdue_days.is_some())
            .then(b.item.rating.cmp(&a.item.rating))
            .then(a.item.next_due_on.cmp(&b.item.next_due_on))
            .then(a.item.tree_id.cmp(&b.item.tree_id))
    });
    let by_rating = RiskRating::ALL
        .iter()
        .map(|r| (*r, entries.iter().filter(|e| e.item.rating == *r).count()))
        .collect();
    Watchlist {
        today,
        overdue: entries.iter().filter(|e| e.overdue_days.is_some()).count(),
        entries,
        by_rating,
    }
}

/// A work order with its tree's place and the rating of the assessment behind it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WorkItem {
    pub id: i64,
    pub tree_id: i64,
    pub uid: String,
    pub species: String,
    pub street: Option<String>,
    pub house_number: Option<String>,
    pub zone: Option<String>,
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
    pub rating: Option<RiskRating>,
    pub cycle: Option<CycleKind>,
}

/// Which orders the work queue shows.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct WorkFilter {
    /// Only these statuses (empty: open and scheduled, the queue of work to do).
    pub statuses: Vec<WorkStatus>,
    /// Only these tasks (empty: all).
    pub tasks: Vec<WorkTask>,
    /// Crew name, any case.
    pub crew: Option<String>,
    /// Street name, any case.
    pub street: Option<String>,
    /// Zone name, any case.
    pub zone: Option<String>,
    pub tree_id: Option<i64>,
    /// Only pending orders past their due date.
    pub overdue_only: bool,
}

impl WorkFilter {
    /// The statuses shown: the filter's, else open and scheduled.
    pub fn effective_statuses(&self) -> Vec<WorkStatus> {
        if self.statuses.is_empty() {
            vec![WorkStatus::Open, WorkStatus::Scheduled]
        } else {
            self.statuses.clone()
        }
    }
}

/// A work-queue line.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WorkEntry {
    #[serde(flatten)]
    pub item: WorkItem,
    /// Days past the due date (pending orders only).
    pub overdue_days: Option<i64>,
}

/// The work queue with its counts and the budget of its open work.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WorkQueue {
    pub today: NaiveDate,
    pub entries: Vec<WorkEntry>,
    /// Orders per priority 1 … 4.
    pub by_priority: [usize; 4],
    /// Orders per status (open, scheduled, done, cancelled).
    pub by_status: Vec<(WorkStatus, usize)>,
    pub overdue: usize,
    /// Sum of the estimated costs of the open and scheduled orders listed.
    pub open_estimated_cost: f64,
    /// Open and scheduled orders listed without an estimate (not in the sum).
    pub open_without_estimate: usize,
}

/// Filters and orders the work queue: by priority (1 first), then due date (undated last), then id
/// (the order issue 5 asks for).
pub fn work_queue(items: Vec<WorkItem>, filter: &WorkFilter, today: NaiveDate) -> WorkQueue {
    let statuses = filter.effective_statuses();
    let mut entries: Vec<WorkEntry> = items
        .into_iter()
        .filter(|i| statuses.contains(&i.status))
        .filter(|i| filter.tasks.is_empty() || filter.tasks.contains(&i.task))
        .filter(|i| filter.tree_id.is_none_or(|t| t == i.tree_id))
        .filter(|i| {
            same_text(&filter.crew, &i.crew)
                && same_text(&filter.street, &i.street)
                && same_text(&filter.zone, &i.zone)
        })
        .map(|item| WorkEntry {
            overdue_days: if item.status.is_pending() {
                overdue_days(item.due_on, today)
            } else {
                None
            },
            item,
        })
        .filter(|e| !filter.overdue_only || e.overdue_days.is_some())
        .collect();
    entries.sort_by(|a, b| {
        a.item
            .priority
            .cmp(&b.item.priority)
            .then(a.item.due_on.is_none().cmp(&b.item.due_on.is_none()))
            .then(a.item.due_on.cmp(&b.item.due_on))
            .then(a.item.id.cmp(&b.item.id))
    });
    let mut by_priority = [0usize; 4];
    for e in &entries {
        by_priority[usize::from(e.item.priority.get().clamp(1, 4)) - 1] += 1;
    }
    let by_status = WorkStatus::ALL
        .iter()
        .map(|s| (*s, entries.iter().filter(|e| e.item.status == *s).count()))
        .collect();
    let open: Vec<&WorkEntry> = entries
        .iter()
        .filter(|e| e.item.status.is_pending())
        .collect();
    WorkQueue {
        today,
        overdue: entries.iter().filter(|e| e.overdue_days.is_some()).count(),
        open_estimated_cost: open.iter().filter_map(|e| e.item.estimated_cost).sum(),
        open_without_estimate: open
            .iter()
            .filter(|e| e.item.estimated_cost.is_none())
            .count(),
        by_priority,
        by_status,
        entries,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn date(text: &str) -> NaiveDate {
        text.parse().expect("date")
    }

    fn watch(tree_id: i64, rating: RiskRating, due: &str, street: &str) -> WatchItem {
        WatchItem {
            tree_id,
            uid: format!("uid-{tree_id}"),
            species: "Tilia cordata".to_string(),
            street: Some(street.to_string()),
            house_number: None,
            zone: Some("Riverbend".to_string()),
            assessment_id: tree_id * 10,
            assessed_on: date("2024-01-01"),
            assessor: None,
            level: 2,
            rating,
            next_due_on: Some(date(due)),
            pending_work: 0,
        }
    }

    #[test]
    fn overdue_first_then_highest_rating() {
        let today = date("2026-06-01");
        let items = vec![
            watch(1, RiskRating::Low, "2029-01-01", "Foundry Street"),
            watch(2, RiskRating::Extreme, "2026-06-01", "Foundry Street"),
            watch(3, RiskRating::Moderate, "2026-01-01", "Wickam Street"),
            watch(4, RiskRating::High, "2026-05-01", "Foundry Street"),
            watch(5, RiskRating::High, "2026-04-01", "Foundry Street"),
        ];
        let list = watchlist(items.clone(), &WatchFilter::default(), today);
        let order: Vec<i64> = list.entries.iter().map(|e| e.item.tree_id).collect();
        assert_eq!(order, [5, 4, 3, 2, 1]);
        assert_eq!(list.overdue, 3, "due today is not overdue");
        assert_eq!(list.entries[0].overdue_days, Some(61));
        assert_eq!(list.by_rating[2], (RiskRating::High, 2));

        let overdue = watchlist(
            items.clone(),
            &WatchFilter {
                overdue_only: true,
                ..WatchFilter::default()
            },
            today,
        );
        assert_eq!(overdue.entries.len(), 3);
        let high = watchlist(
            items.clone(),
            &WatchFilter {
                ratings: vec![RiskRating::High],
                ..WatchFilter::default()
            },
            today,
        );
        assert_eq!(high.entries.len(), 2);
        let at_least = watchlist(
            items.clone(),
            &WatchFilter {
                min_rating: Some(RiskRating::High),
                street: Some("foundry street".to_string()),
                ..WatchFilter::default()
            },
            today,
        );
        assert_eq!(at_least.entries.len(), 3);
    }

    fn work(
        id: i64,
        priority: u8,
        due: Option<&str>,
        status: WorkStatus,
        cost: Option<f64>,
    ) -> WorkItem {
        WorkItem {
            id,
            tree_id: id,
            uid: format!("uid-{id}"),
            species: "Acer rubrum".to_string(),
            street: Some("Foundry Street".to_string()),
            house_number: None,
            zone: None,
            task: WorkTask::Prune,
            priority: Priority::new(i64::from(priority)).expect("priority"),
            status,
            due_on: due.map(date),
            scheduled_on: None,
            done_on: None,
            crew: Some("Kestrel crew".to_string()),
            estimated_cost: cost,
            actual_cost: None,
            notes: None,
            assessment_id: None,
            rating: None,
            cycle: None,
        }
    }

    #[test]
    fn queue_by_priority_then_due_date_with_the_open_budget() {
        let today = date("2026-06-01");
        let items = vec![
            work(1, 4, Some("2026-01-01"), WorkStatus::Open, Some(200.0)),
            work(2, 1, None, WorkStatus::Open, None),
            work(
                3,
                1,
                Some("2026-07-01"),
                WorkStatus::Scheduled,
                Some(1000.0),
            ),
            work(4, 1, Some("2026-05-01"), WorkStatus::Open, Some(50.5)),
            work(5, 2, Some("2025-01-01"), WorkStatus::Done, Some(300.0)),
            work(6, 3, Some("2025-01-01"), WorkStatus::Cancelled, Some(300.0)),
        ];
        let queue = work_queue(items.clone(), &WorkFilter::default(), today);
        let order: Vec<i64> = queue.entries.iter().map(|e| e.item.id).collect();
        assert_eq!(
            order,
            [4, 3, 2, 1],
            "done and cancelled are not in the queue"
        );
        assert_eq!(queue.by_priority, [3, 0, 0, 1]);
        assert!((queue.open_estimated_cost - 1250.5).abs() < 1e-9);
        assert_eq!(queue.open_without_estimate, 1);
        assert_eq!(queue.overdue, 2);

        let all = work_queue(
            items.clone(),
            &WorkFilter {
                statuses: WorkStatus::ALL.to_vec(),
                ..WorkFilter::default()
            },
            today,
        );
        assert_eq!(all.entries.len(), 6);
        assert_eq!(all.overdue, 2, "done work is never overdue");
        assert!(
            (all.open_estimated_cost - 1250.5).abs() < 1e-9,
            "open work only"
        );

        let crew = work_queue(
            items.clone(),
            &WorkFilter {
                crew: Some("bramble crew".to_string()),
                ..WorkFilter::default()
            },
            today,
        );
        assert!(crew.entries.is_empty());
        let overdue = work_queue(
            items,
            &WorkFilter {
                overdue_only: true,
                tasks: vec![WorkTask::Prune],
                ..WorkFilter::default()
            },
            today,
        );
        let ids: Vec<i64> = overdue.entries.iter().map(|e| e.item.id).collect();
        assert_eq!(ids, [4, 1]);
    }
}
