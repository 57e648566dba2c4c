//! Care: the watchlist (standing trees by their latest risk rating, overdue re-inspections first) and
//! the work queue (by priority, then due date; filtered by crew, street, zone, task or status), each
//! with its counts, the queue with the summed estimated cost of its open work. The lists and their
//! order come from [`crate::care::queue`]; this module keeps the selection and draws them.

use chrono::NaiveDate;
use ratatui::Frame;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::{Color, Modifier, Style};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Cell, Paragraph, Row, Table, Wrap};

use super::super::widgets::text;
use super::roster::Move;
use crate::care::queue::{
    WatchEntry, WatchFilter, WatchItem, Watchlist, WorkEntry, WorkFilter, WorkItem, WorkQueue,
    watchlist, work_queue,
};
use crate::care::risk::{CAUTION, RiskRating};
use crate::care::work::{WorkStatus, WorkTask};

/// Which list shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum List {
    Watch,
    Work,
}

/// What a care filter narrows by.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FilterKind {
    Crew,
    Street,
    Zone,
    Task,
    Status,
    /// Watchlist: this rating or higher.
    Rating,
}

/// The statuses the work queue can show, with their labels (the first is the queue of work to do).
const STATUS_CHOICES: [(&str, &[WorkStatus]); 6] = [
    ("open and scheduled (work to do)", &[]),
    ("open", &[WorkStatus::Open]),
    ("scheduled", &[WorkStatus::Scheduled]),
    ("done", &[WorkStatus::Done]),
    ("cancelled", &[WorkStatus::Cancelled]),
    (
        "every status",
        &[
            WorkStatus::Open,
            WorkStatus::Scheduled,
            WorkStatus::Done,
            WorkStatus::Cancelled,
        ],
    ),
];

/// Selection and scroll position in one list.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
struct Position {
    selected: usize,
    offset: usize,
}

impl Position {
    fn apply(&mut self, movement: Move, len: usize, height: usize) {
        let last = len.saturating_sub(1);
        self.selected = match movement {
            Move::Up => self.selected.saturating_sub(1),
            Move::Down => (self.selected + 1).min(last),
            Move::PageUp => self.selected.saturating_sub(height),
            Move::PageDown => (self.selected + height).min(last),
            Move::First => 0,
            Move::Last => last,
        };
        self.clamp(len, height);
    }

    fn clamp(&mut self, len: usize, height: usize) {
        let height = height.max(1);
        self.selected = self.selected.min(len.saturating_sub(1));
        if self.selected < self.offset {
            self.offset = self.selected;
        } else if self.selected >= self.offset + height {
            self.offset = self.selected + 1 - height;
        }
        self.offset = self.offset.min(len.saturating_sub(height));
    }

    /// The offset that shows the selection in `rows` rows (drawing never hides it).
    fn visible_offset(&self, rows: usize) -> usize {
        let rows = rows.max(1);
        if self.selected >= self.offset + rows {
            self.selected + 1 - rows
        } else {
            self.offset.min(self.selected)
        }
    }
}

/// Care view state.
#[derive(Debug, Clone)]
pub struct State {
    pub list: List,
    watch_items: Vec<WatchItem>,
    work_items: Vec<WorkItem>,
    pub watch_filter: WatchFilter,
    pub work_filter: WorkFilter,
    pub watch: Watchlist,
    pub work: WorkQueue,
    watch_pos: Position,
    work_pos: Position,
    height: usize,
    pub currency: String,
    pub today: NaiveDate,
}

impl State {
    /// The lists over the store's rows (work items of every status; the filter picks).
    pub fn new(
        watch_items: Vec<WatchItem>,
        work_items: Vec<WorkItem>,
        currency: String,
        today: NaiveDate,
    ) -> Self {
        let mut state = State {
            list: List::Watch,
            watch: watchlist(Vec::new(), &WatchFilter::default(), today),
            work: work_queue(Vec::new(), &WorkFilter::default(), today),
            watch_items,
            work_items,
            watch_filter: WatchFilter::default(),
            work_filter: WorkFilter::default(),
            watch_pos: Position::default(),
            work_pos: Position::default(),
            height: 10,
            currency,
            today,
        };
        state.recompute();
        state
    }

    /// New rows after a write; filters, list and the selected rows stay.
    pub fn reload(&mut self, watch_items: Vec<WatchItem>, work_items: Vec<WorkItem>) {
        let tree = self.selected_watch().map(|e| e.item.tree_id);
        let order = self.selected_work().map(|e| e.item.id);
        self.watch_items = watch_items;
        self.work_items = work_items;
        self.recompute();
        if let Some(tree) = tree {
            self.select_tree(tree);
        }
        if let Some(order) = order {
            self.select_order(order);
        }
    }

    fn recompute(&mut self) {
        self.watch = watchlist(self.watch_items.clone(), &self.watch_filter, self.today);
        self.work = work_queue(self.work_items.clone(), &self.work_filter, self.today);
        self.watch_pos.clamp(self.watch.entries.len(), self.height);
        self.work_pos.clamp(self.work.entries.len(), self.height);
    }

    /// Sets how many table rows fit.
    pub fn set_height(&mut self, height: usize) {
        self.height = height.max(1);
        self.watch_pos.clamp(self.watch.entries.len(), self.height);
        self.work_pos.clamp(self.work.entries.len(), self.height);
    }

    /// Shows a list.
    pub fn show(&mut self, list: List) {
        self.list = list;
    }

    /// Shows the other list.
    pub fn toggle(&mut self) {
        self.list = match self.list {
            List::Watch => List::Work,
            List::Work => List::Watch,
        };
    }

    /// Moves the selection in the list shown.
    pub fn apply(&mut self, movement: Move) {
        match self.list {
            List::Watch => self
                .watch_pos
                .apply(movement, self.watch.entries.len(), self.height),
            List::Work => self
                .work_pos
                .apply(movement, self.work.entries.len(), self.height),
        }
    }

    /// The selected watchlist row.
    pub fn selected_watch(&self) -> Option<&WatchEntry> {
        self.watch.entries.get(self.watch_pos.selected)
    }

    /// The selected work-queue row.
    pub fn selected_work(&self) -> Option<&WorkEntry> {
        self.work.entries.get(self.work_pos.selected)
    }

    /// The tree of the selected row of the list shown.
    pub fn selected_tree(&self) -> Option<i64> {
        match self.list {
            List::Watch => self.selected_watch().map(|e| e.item.tree_id),
            List::Work => self.selected_work().map(|e| e.item.tree_id),
        }
    }

    /// Selects a tree's row in the watchlist, if listed.
    pub fn select_tree(&mut self, tree_id: i64) -> bool {
        match self
            .watch
            .entries
            .iter()
            .position(|e| e.item.tree_id == tree_id)
        {
            Some(i) => {
                self.watch_pos.selected = i;
                self.watch_pos.clamp(self.watch.entries.len(), self.height);
                true
            }
            None => false,
        }
    }

    /// Selects an order's row in the work queue, if listed.
    pub fn select_order(&mut self, order_id: i64) -> bool {
        match self.work.entries.iter().position(|e| e.item.id == order_id) {
            Some(i) => {
                self.work_pos.selected = i;
                self.work_pos.clamp(self.work.entries.len(), self.height);
                true
            }
            None => false,
        }
    }

    /// Shows every work order of one tree, whatever its status.
    pub fn show_tree_work(&mut self, tree_id: i64) {
        self.work_filter = WorkFilter {
            tree_id: Some(tree_id),
            statuses: WorkStatus::ALL.to_vec(),
            ..WorkFilter::default()
        };
        self.list = List::Work;
        self.work_pos = Position::default();
        self.recompute();
    }

    /// The filters offered for the list shown.
    pub fn filter_kinds(&self) -> Vec<(FilterKind, &'static str)> {
        match self.list {
            List::Watch => vec![
                (FilterKind::Rating, "risk rating at least"),
                (FilterKind::Street, "street"),
                (FilterKind::Zone, "zone"),
            ],
            List::Work => vec![
                (FilterKind::Crew, "crew"),
                (FilterKind::Street, "street"),
                (FilterKind::Zone, "zone"),
                (FilterKind::Task, "task"),
                (FilterKind::Status, "status"),
            ],
        }
    }

    /// The values a filter can take (from the rows loaded, sorted).
    pub fn filter_values(&self, kind: FilterKind) -> Vec<String> {
        let distinct = |values: Vec<Option<String>>| {
            let mut v: Vec<String> = values.into_iter().flatten().collect();
            v.sort();
            v.dedup();
            v
        };
        match (kind, self.list) {
            (FilterKind::Crew, _) => {
                distinct(self.work_items.iter().map(|i| i.crew.clone()).collect())
            }
            (FilterKind::Street, List::Work) => {
                distinct(self.work_items.iter().map(|i| i.street.clone()).collect())
            }
            (FilterKind::Street, List::Watch) => {
                distinct(self.watch_items.iter().map(|i| i.street.clone()).collect())
            }
            (FilterKind::Zone, List::Work) => {
                distinct(self.work_items.iter().map(|i| i.zone.clone()).collect())
            }
            (FilterKind::Zone, List::Watch) => {
                distinct(self.watch_items.iter().map(|i| i.zone.clone()).collect())
            }
            (FilterKind::Task, _) => WorkTask::ALL
                .iter()
                .map(|t| t.as_str().to_string())
                .collect(),
            (FilterKind::Status, _) => STATUS_CHOICES.iter().map(|(l, _)| l.to_string()).collect(),
            (FilterKind::Rating, _) => RiskRating::ALL
                .iter()
                .map(|r| r.as_str().to_string())
                .collect(),
        }
    }

    /// Applies value `index` of a filter (an index into [`State::filter_values`]).
    pub fn set_filter(&mut self, kind: FilterKind, index: usize) {
        let value = self.filter_values(kind).get(index).cloned();
        match (kind, self.list) {
            (FilterKind::Crew, _) => self.work_filter.crew = value,
            (FilterKind::Street, List::Work) => self.work_filter.street = value,
            (FilterKind::Street, List::Watch) => self.watch_filter.street = value,
            (FilterKind::Zone, List::Work) => self.work_filter.zone = value,
            (FilterKind::Zone, List::Watch) => self.watch_filter.zone = value,
            (FilterKind::Task, _) => {
                self.work_filter.tasks = WorkTask::ALL.get(index).copied().into_iter().collect()
            }
            (FilterKind::Status, _) => {
                self.work_filter.statuses = STATUS_CHOICES
                    .get(index)
                    .map(|(_, s)| s.to_vec())
                    .unwrap_or_default()
            }
            (FilterKind::Rating, _) => {
                self.watch_filter.min_rating = RiskRating::ALL.get(index).copied()
            }
        }
        match self.list {
            List::Watch => self.watch_pos = Position::default(),
            List::Work => self.work_pos = Position::default(),
        }
        self.recompute();
    }

    /// Shows only overdue rows (re-inspections or work past due), or all again.
    pub fn toggle_overdue(&mut self) -> bool {
        let on = match self.list {
            List::Watch => {
                self.watch_filter.overdue_only = !self.watch_filter.overdue_only;
                self.watch_filter.overdue_only
            }
            List::Work => {
                self.work_filter.overdue_only = !self.work_filter.overdue_only;
                self.work_filter.overdue_only
            }
        };
        self.recompute();
        on
    }

    /// Clears the filters of the list shown.
    pub fn clear_filters(&mut self) {
        match self.list {
            List::Watch => self.watch_filter = WatchFilter::default(),
            List::Work => self.work_filter = WorkFilter::default(),
        }
        self.recompute();
    }

    /// The filters of the list shown, in words.
    pub fn describe(&self) -> String {
        let mut parts = Vec::new();
        match self.list {
            List::Watch => {
                let f = &self.watch_filter;
                if f.overdue_only {
                    parts.push("overdue only".to_string());
                }
                if let Some(r) = f.min_rating {
                    parts.push(format!("rating ≥ {r}"));
                }
                if let Some(s) = &f.street {
                    parts.push(format!("street {s}"));
                }
                if let Some(z) = &f.zone {
                    parts.push(format!("zone {z}"));
                }
            }
            List::Work => {
                let f = &self.work_filter;
                if let Some(t) = f.tree_id {
                    parts.push(format!("tree {t}"));
                }
                if !f.statuses.is_empty() {
                    let label = STATUS_CHOICES
                        .iter()
                        .find(|(_, s)| *s == f.statuses.as_slice())
                        .map(|(l, _)| l.to_string())
                        .unwrap_or_else(|| {
                            f.statuses
                                .iter()
                                .map(|s| s.as_str())
                                .collect::<Vec<_>>()
                                .join(", ")
                        });
                    parts.push(format!("status {label}"));
                }
                if f.overdue_only {
                    parts.push("overdue only".to_string());
                }
                for (name, value) in [("crew", &f.crew), ("street", &f.street), ("zone", &f.zone)] {
                    if let Some(v) = value {
                        parts.push(format!("{name} {v}"));
                    }
                }
                if let Some(t) = f.tasks.first() {
                    parts.push(format!("task {t}"));
                }
            }
        }
        parts.join(", ")
    }
}

/// An amount with two decimals and thousands separators.
pub fn money(x: f64) -> String {
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

fn plural(n: usize, one: &str, many: &str) -> String {
    format!("{n} {}", if n == 1 { one } else { many })
}

/// The counts above the list shown.
pub fn summary(state: &State) -> String {
    match state.list {
        List::Watch => {
            let w = &state.watch;
            format!(
                "{} on the watchlist · {} overdue for re-inspection as of {} · {}",
                plural(w.entries.len(), "tree", "trees"),
                w.overdue,
                w.today,
                w.by_rating
                    .iter()
                    .rev()
                    .map(|(r, n)| format!("{r} {n}"))
                    .collect::<Vec<_>>()
                    .join(", ")
            )
        }
        List::Work => {
            let q = &state.work;
            let pending: usize = q
                .by_status
                .iter()
                .filter(|(s, _)| s.is_pending())
                .map(|(_, n)| n)
                .sum();
            format!(
                "{} · priority 1: {}, 2: {}, 3: {}, 4: {} · {} · {} overdue · estimated cost of the {pending} open: {} {} ({} without an estimate)",
                plural(q.entries.len(), "order", "orders"),
                q.by_priority[0],
                q.by_priority[1],
                q.by_priority[2],
                q.by_priority[3],
                q.by_status
                    .iter()
                    .filter(|(_, n)| *n > 0)
                    .map(|(s, n)| format!("{s} {n}"))
                    .collect::<Vec<_>>()
                    .join(", "),
                q.overdue,
                state.currency,
                money(q.open_estimated_cost),
                q.open_without_estimate
            )
        }
    }
}

/// The status line: position and filters.
pub fn status_line(state: &State) -> Line<'static> {
    let (len, pos, what) = match state.list {
        List::Watch => (state.watch.entries.len(), state.watch_pos.selected, "tree"),
        List::Work => (state.work.entries.len(), state.work_pos.selected, "order"),
    };
    let filters = state.describe();
    let filters = if filters.is_empty() {
        String::new()
    } else {
        format!(" · {filters} (F clears)")
    };
    if len == 0 {
        return Line::from(format!(" nothing listed{filters}"));
    }
    Line::from(format!(" {what} {} of {len}{filters}", pos + 1))
}

/// Okabe & Ito's colour-blind-safe palette (2008) for ratings; the word is always shown too.
fn rating_style(rating: RiskRating, no_color: bool) -> Style {
    let style = if rating >= RiskRating::High {
        Style::new().add_modifier(Modifier::BOLD)
    } else {
        Style::new()
    };
    if no_color {
        return style;
    }
    style.fg(match rating {
        RiskRating::Low => Color::Rgb(0, 158, 115),
        RiskRating::Moderate => Color::Rgb(240, 228, 66),
        RiskRating::High => Color::Rgb(230, 159, 0),
        RiskRating::Extreme => Color::Rgb(213, 94, 0),
    })
}

fn address(house_number: &Option<String>, street: &Option<String>) -> String {
    match (house_number, street) {
        (Some(n), Some(s)) => format!("{n} {s}"),
        (None, Some(s)) => s.clone(),
        _ => String::new(),
    }
}

fn date(d: Option<NaiveDate>) -> String {
    d.map(|d| d.to_string()).unwrap_or_default()
}

/// Draws the view.
pub fn render(state: &State, no_color: bool, frame: &mut Frame<'_>, area: Rect) {
    let summary_text = summary(state);
    let summary_height = text::wrapped_height(&summary_text, area.width).min(3);
    let caution_height = text::wrapped_height(CAUTION, area.width).min(3);
    let [tabs, counts, table, caution] = Layout::vertical([
        Constraint::Length(1),
        Constraint::Length(summary_height),
        Constraint::Min(2),
        Constraint::Length(caution_height),
    ])
    .areas(area);
    let tab = |label: String, on: bool| {
        if on {
            Span::styled(
                format!("[{label}]"),
                Style::new().add_modifier(Modifier::REVERSED | Modifier::BOLD),
            )
        } else {
            Span::raw(format!(" {label} "))
        }
    };
    frame.render_widget(
        Paragraph::new(Line::from(vec![
            tab(
                format!("Watchlist {}", state.watch.entries.len()),
                state.list == List::Watch,
            ),
            Span::raw(" "),
            tab(
                format!("Work queue {}", state.work.entries.len()),
                state.list == List::Work,
            ),
            Span::styled("   Tab switches", Style::new().add_modifier(Modifier::DIM)),
        ])),
        tabs,
    );
    frame.render_widget(
        Paragraph::new(summary_text).wrap(Wrap { trim: true }),
        counts,
    );
    let rows = (table.height as usize).saturating_sub(1);
    let wide = area.width >= 100;
    match state.list {
        List::Watch => render_watch(state, no_color, wide, rows, frame, table),
        List::Work => render_work(state, no_color, wide, rows, frame, table),
    }
    frame.render_widget(
        Paragraph::new(Span::styled(
            CAUTION,
            Style::new().add_modifier(Modifier::DIM),
        ))
        .wrap(Wrap { trim: true }),
        caution,
    );
}

fn header(titles: Vec<&'static str>) -> Row<'static> {
    Row::new(titles).style(Style::new().add_modifier(Modifier::BOLD | Modifier::UNDERLINED))
}

fn selected_row(row: Row<'static>, selected: bool) -> Row<'static> {
    if selected {
        row.style(Style::new().add_modifier(Modifier::REVERSED))
    } else {
        row
    }
}

fn render_watch(
    state: &State,
    no_color: bool,
    wide: bool,
    rows: usize,
    frame: &mut Frame<'_>,
    area: Rect,
) {
    let offset = state.watch_pos.visible_offset(rows);
    let mut titles = vec!["", "tree", "species", "address"];
    let mut widths = vec![
        Constraint::Length(1),
        Constraint::Length(5),
        Constraint::Fill(3),
        Constraint::Fill(3),
    ];
    if wide {
        titles.push("zone");
        widths.push(Constraint::Fill(2));
    }
    titles.extend(["rating", "next due", "overdue", "work"]);
    widths.extend([
        Constraint::Length(8),
        Constraint::Length(10),
        Constraint::Length(7),
        Constraint::Length(4),
    ]);
    if wide {
        titles.insert(titles.len() - 3, "assessed");
        widths.insert(widths.len() - 3, Constraint::Length(10));
    }
    let body = state
        .watch
        .entries
        .iter()
        .enumerate()
        .skip(offset)
        .take(rows)
        .map(|(i, e)| {
            let item = &e.item;
            let selected = i == state.watch_pos.selected;
            let mut cells = vec![
                Cell::from(if selected { "▶" } else { "" }),
                Cell::from(item.tree_id.to_string()),
                Cell::from(item.species.clone()),
                Cell::from(address(&item.house_number, &item.street)),
            ];
            if wide {
                cells.push(Cell::from(item.zone.clone().unwrap_or_default()));
            }
            cells.push(Cell::from(Span::styled(
                item.rating.as_str(),
                rating_style(item.rating, no_color),
            )));
            if wide {
                cells.push(Cell::from(item.assessed_on.to_string()));
            }
            cells.extend([
                Cell::from(date(item.next_due_on)),
                Cell::from(e.overdue_days.map(|d| format!("{d} d")).unwrap_or_default()),
                Cell::from(if item.pending_work > 0 {
                    item.pending_work.to_string()
                } else {
                    String::new()
                }),
            ]);
            selected_row(Row::new(cells), selected)
        });
    if state.watch.entries.is_empty() {
        frame.render_widget(
            Paragraph::new(
                "No assessed standing tree matches. Assess a tree from its card with a (F clears filters).",
            )
            .wrap(Wrap { trim: true }),
            area,
        );
        return;
    }
    frame.render_widget(Table::new(body, widths).header(header(titles)), area);
}

fn render_work(
    state: &State,
    no_color: bool,
    wide: bool,
    rows: usize,
    frame: &mut Frame<'_>,
    area: Rect,
) {
    let offset = state.work_pos.visible_offset(rows);
    let mut titles = vec!["", "#", "pri", "status", "task", "due", "late"];
    let mut widths = vec![
        Constraint::Length(1),
        Constraint::Length(4),
        Constraint::Length(3),
        Constraint::Length(9),
        Constraint::Length(7),
        Constraint::Length(10),
        Constraint::Length(6),
    ];
    if wide {
        titles.push("tree");
        widths.push(Constraint::Length(5));
    }
    titles.extend(["address", "crew", "estimate"]);
    widths.extend([
        Constraint::Fill(3),
        Constraint::Fill(2),
        Constraint::Length(9),
    ]);
    if wide {
        titles.push("risk");
        widths.push(Constraint::Length(8));
    }
    if state.work.entries.is_empty() {
        frame.render_widget(
            Paragraph::new(
                "No work order matches. Add one from a tree card with w (F clears filters).",
            )
            .wrap(Wrap { trim: true }),
            area,
        );
        return;
    }
    let body = state
        .work
        .entries
        .iter()
        .enumerate()
        .skip(offset)
        .take(rows)
        .map(|(i, e)| {
            let item = &e.item;
            let selected = i == state.work_pos.selected;
            let priority_style = if item.priority.get() == 1 {
                Style::new().add_modifier(Modifier::BOLD)
            } else {
                Style::new()
            };
            let mut cells = vec![
                Cell::from(if selected { "▶" } else { "" }),
                Cell::from(item.id.to_string()),
                Cell::from(Span::styled(item.priority.to_string(), priority_style)),
                Cell::from(item.status.as_str()),
                Cell::from(item.task.as_str()),
                Cell::from(date(item.due_on)),
                Cell::from(e.overdue_days.map(|d| format!("{d} d")).unwrap_or_default()),
            ];
            if wide {
                cells.push(Cell::from(item.tree_id.to_string()));
            }
            cells.extend([
                Cell::from(address(&item.house_number, &item.street)),
                Cell::from(item.crew.clone().unwrap_or_default()),
                Cell::from(
                    item.estimated_cost
                        .map(|c| format!("{:>9}", money(c)))
                        .unwrap_or_default(),
                ),
            ]);
            if wide {
                cells.push(match item.rating {
                    Some(r) => Cell::from(Span::styled(r.as_str(), rating_style(r, no_color))),
                    None => Cell::from(""),
                });
            }
            selected_row(Row::new(cells), selected)
        });
    frame.render_widget(Table::new(body, widths).header(header(titles)), area);
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn money_groups_thousands() {
        assert_eq!(money(15600.0), "15,600.00");
        assert_eq!(money(0.5), "0.50");
        assert_eq!(money(-1234.5), "-1,234.50");
    }

    #[test]
    fn positions_keep_the_selection_visible() {
        let mut p = Position::default();
        p.apply(Move::Last, 30, 10);
        assert_eq!((p.selected, p.offset), (29, 20));
        p.apply(Move::Up, 30, 10);
        assert_eq!((p.selected, p.offset), (28, 20));
        assert_eq!(p.visible_offset(5), 24, "a smaller table still shows it");
        p.apply(Move::First, 30, 10);
        assert_eq!((p.selected, p.offset), (0, 0));
        p.clamp(0, 10);
        assert_eq!((p.selected, p.offset), (0, 0));
    }
}
