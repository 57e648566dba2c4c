//! Work-order dialogs: add an order to a tree, schedule it (date, crew), mark it done (date, actual
//! cost), cancel it (reason) or edit its fields. The dialog checks what it can read (dates, amounts,
//! required choices) as typed; the life-cycle rules are the store's ([`crate::care::work::apply`]),
//! and their messages come back next to the field they name.

use chrono::NaiveDate;
use ratatui::Frame;
use ratatui::crossterm::event::KeyEvent;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::{Modifier, Style};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Block, Borders, Clear, Paragraph, Wrap};

use super::super::widgets::form::{Event, Field, Form};
use super::super::widgets::text;
use crate::care::check_cost;
use crate::care::queue::WorkItem;
use crate::care::work::{NewWorkOrder, Priority, WorkChange, WorkTask};

/// The fields of the work-order dialogs.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Key {
    Task,
    Priority,
    Due,
    /// The date booked (schedule) or done (done).
    On,
    Crew,
    /// Estimated cost (add, schedule, edit) or actual cost (done).
    Cost,
    Notes,
    Reason,
}

/// What the dialog does.
#[derive(Debug, Clone, PartialEq)]
pub enum Kind {
    Add { tree_id: i64 },
    Schedule { order_id: i64 },
    Done { order_id: i64 },
    Cancel { order_id: i64 },
    Edit { order: Box<WorkItem> },
}

/// What the app is asked to write.
#[derive(Debug, Clone, PartialEq)]
pub enum Request {
    Add(NewWorkOrder),
    Change { order_id: i64, change: WorkChange },
}

/// What a key asks of the app.
#[derive(Debug, Clone, PartialEq)]
pub enum Outcome {
    /// Open a picker over the focused choice's options.
    Pick {
        title: String,
        options: Vec<String>,
    },
    Submit(Request),
    Leave,
    Message(String),
}

/// Dialog state.
#[derive(Debug, Clone)]
pub struct State {
    pub kind: Kind,
    pub title: String,
    /// Lines above the fields: the order and tree, and what the change will do.
    pub context: Vec<String>,
    pub form: Form<Key>,
    pub dirty: bool,
}

/// The task words, in the order of [`WorkTask::ALL`].
pub fn task_options() -> Vec<String> {
    WorkTask::ALL
        .iter()
        .map(|t| t.as_str().to_string())
        .collect()
}

/// "1 urgent" … "4 routine".
pub fn priority_options() -> Vec<String> {
    (1..=4)
        .filter_map(|p| Priority::new(p).ok())
        .map(|p| format!("{} {}", p.get(), p.label()))
        .collect()
}

/// The priority of option `index` (0 → priority 1).
pub fn priority_of(index: usize) -> Option<Priority> {
    Priority::new(index as i64 + 1).ok()
}

/// Reads a date field; empty is `None` (an error when `required`).
pub fn parse_date(text: &str, required: bool) -> Result<Option<NaiveDate>, String> {
    let text = text.trim();
    if text.is_empty() {
        return if required {
            Err("a date is needed (YYYY-MM-DD)".to_string())
        } else {
            Ok(None)
        };
    }
    NaiveDate::parse_from_str(text, "%Y-%m-%d")
        .map(Some)
        .map_err(|_| format!("'{text}' is not a date (YYYY-MM-DD)"))
}

/// Reads an amount of money; empty is `None`; refuses negative amounts as the care rules do.
pub fn parse_cost(text: &str) -> Result<Option<f64>, String> {
    let text = text.trim();
    if text.is_empty() {
        return Ok(None);
    }
    let value = crate::io::parse_number(text)?;
    check_cost("cost", Some(value)).map_err(|e| e.reason)
}

fn date_text(date: Option<NaiveDate>) -> String {
    date.map(|d| d.to_string()).unwrap_or_default()
}

fn cost_text(cost: Option<f64>) -> String {
    cost.map(|c| format!("{c:.2}")).unwrap_or_default()
}

/// The order in a line: "#12 remove · priority 1 urgent · open · due 2026-11-30".
pub fn describe(item: &WorkItem) -> String {
    format!(
        "#{} {} · priority {} {} · {}{}{}",
        item.id,
        item.task,
        item.priority,
        item.priority.label(),
        item.status,
        item.due_on
            .map(|d| format!(" · due {d}"))
            .unwrap_or_default(),
        item.crew
            .as_deref()
            .map(|c| format!(" · {c}"))
            .unwrap_or_default()
    )
}

/// The tree of an order in a line: "tree 12 Acer rubrum, 14 Quill Lane".
pub fn tree_line(item: &WorkItem) -> String {
    let place = match (&item.house_number, &item.street) {
        (Some(n), Some(s)) => format!("{n} {s}"),
        (None, Some(s)) => s.clone(),
        _ => "no address".to_string(),
    };
    format!("tree {} {}, {place}", item.tree_id, item.species)
}

impl State {
    /// A new order for a tree (`label` names the tree).
    pub fn add(tree_id: i64, label: &str) -> Self {
        State {
            kind: Kind::Add { tree_id },
            title: "Add a work order".to_string(),
            context: vec![label.to_string()],
            form: Form::new(vec![
                Field::choice(Key::Task, "task", task_options(), None, "←/→ or Enter"),
                Field::choice(
                    Key::Priority,
                    "priority",
                    priority_options(),
                    None,
                    "1 urgent … 4 routine",
                ),
                Field::text(Key::Due, "due", "", "YYYY-MM-DD (optional)"),
                Field::text(Key::Crew, "crew", "", "optional"),
                Field::text(Key::Cost, "estimate", "", "estimated cost (optional)"),
                Field::text(Key::Notes, "notes", "", "optional"),
            ]),
            dirty: false,
        }
    }

    /// Book an open order (or re-book a scheduled one) for a date.
    pub fn schedule(item: &WorkItem, today: NaiveDate) -> Self {
        State {
            kind: Kind::Schedule { order_id: item.id },
            title: format!("Schedule work order {}", item.id),
            context: vec![describe(item), tree_line(item)],
            form: Form::new(vec![
                Field::text(
                    Key::On,
                    "booked for",
                    &date_text(item.scheduled_on.or(Some(today))),
                    "YYYY-MM-DD, today or later",
                ),
                Field::text(
                    Key::Crew,
                    "crew",
                    item.crew.as_deref().unwrap_or(""),
                    "empty keeps the crew",
                ),
                Field::text(
                    Key::Cost,
                    "estimate",
                    &cost_text(item.estimated_cost),
                    "estimated cost (empty keeps it)",
                ),
            ]),
            dirty: false,
        }
    }

    /// Record an order as done.
    pub fn done(item: &WorkItem, today: NaiveDate) -> Self {
        let mut context = vec![describe(item), tree_line(item)];
        if item.task == WorkTask::Remove {
            context.push(format!(
                "Marking this removal done marks tree {} removed on that date (kept in the inventory and its history) and cancels its other pending pruning, inspection, watering and staking.",
                item.tree_id
            ));
        }
        State {
            kind: Kind::Done { order_id: item.id },
            title: format!("Mark work order {} done", item.id),
            context,
            form: Form::new(vec![
                Field::text(
                    Key::On,
                    "done on",
                    &today.to_string(),
                    "YYYY-MM-DD, today or earlier",
                ),
                Field::text(
                    Key::Cost,
                    "actual cost",
                    &cost_text(item.actual_cost),
                    "optional",
                ),
                Field::text(Key::Notes, "notes", "", "added to the order's notes"),
            ]),
            dirty: false,
        }
    }

    /// Cancel an order.
    pub fn cancel(item: &WorkItem) -> Self {
        State {
            kind: Kind::Cancel { order_id: item.id },
            title: format!("Cancel work order {}", item.id),
            context: vec![
                describe(item),
                tree_line(item),
                "Cancelled orders are final (kept with the reason in their notes).".to_string(),
            ],
            form: Form::new(vec![Field::text(
                Key::Reason,
                "reason",
                "",
                "why (kept in the notes)",
            )]),
            dirty: false,
        }
    }

    /// Edit an open or scheduled order's fields.
    pub fn edit(item: &WorkItem) -> Self {
        State {
            kind: Kind::Edit {
                order: Box::new(item.clone()),
            },
            title: format!("Edit work order {}", item.id),
            context: vec![describe(item), tree_line(item)],
            form: Form::new(vec![
                Field::choice(
                    Key::Task,
                    "task",
                    task_options(),
                    WorkTask::ALL.iter().position(|t| *t == item.task),
                    "←/→ or Enter",
                ),
                Field::choice(
                    Key::Priority,
                    "priority",
                    priority_options(),
                    Some(usize::from(item.priority.get().saturating_sub(1))),
                    "1 urgent … 4 routine",
                ),
                Field::text(Key::Due, "due", &date_text(item.due_on), "YYYY-MM-DD"),
                Field::text(
                    Key::Crew,
                    "crew",
                    item.crew.as_deref().unwrap_or(""),
                    "empty clears",
                ),
                Field::text(
                    Key::Cost,
                    "estimate",
                    &cost_text(item.estimated_cost),
                    "estimated cost",
                ),
                Field::text(
                    Key::Notes,
                    "notes",
                    &item.notes.clone().unwrap_or_default().replace('\n', " / "),
                    "replaces the notes; empty clears",
                ),
            ]),
            dirty: false,
        }
    }

    /// Sets the focused choice to option `index` (from a picker).
    pub fn choose(&mut self, index: usize) {
        if let Some(key) = self.form.focused_key() {
            self.form.set_choice(key, Some(index));
            self.dirty = true;
            self.check(false);
        }
    }

    /// Handles a key.
    pub fn handle_key(&mut self, key: KeyEvent) -> Option<Outcome> {
        match self.form.handle_key(key) {
            Event::Moved | Event::Ignored => None,
            Event::Changed => {
                self.dirty = true;
                self.check(false);
                None
            }
            Event::Pick => {
                let field = self.form.focused()?;
                Some(Outcome::Pick {
                    title: field.label.clone(),
                    options: field.options().to_vec(),
                })
            }
            Event::Leave => Some(Outcome::Leave),
            Event::Submit => match self.check(true) {
                Some(request) => Some(Outcome::Submit(request)),
                None => Some(Outcome::Message(
                    "not saved: fix the fields marked ✗".to_string(),
                )),
            },
        }
    }

    /// Shows a store message next to the field it names ("work order 5: on: … is before today").
    pub fn show_error(&mut self, message: &str) {
        let detail = message
            .split_once(": ")
            .filter(|(head, _)| head.starts_with("work order") || head.starts_with("tree"))
            .map_or(message, |(_, rest)| rest);
        let (field, reason) = detail.split_once(": ").unwrap_or(("", detail));
        let key = match field {
            "on" => Some(Key::On),
            "cost" => Some(Key::Cost),
            "task" => Some(Key::Task),
            "priority" => Some(Key::Priority),
            _ => None,
        };
        match key.filter(|k| self.form.field(*k).is_some()) {
            Some(key) => {
                self.form.set_error(key, Some(reason.to_string()));
                self.form.focus_on(key);
            }
            None => {
                if let Some(key) = self.form.focused_key() {
                    self.form.set_error(key, Some(detail.to_string()));
                }
            }
        }
    }

    /// Checks the fields; with `all`, also the required choices. Returns the request when every field
    /// reads.
    fn check(&mut self, all: bool) -> Option<Request> {
        self.form.clear_errors();
        let form = &self.form;
        let mut errors: Vec<(Key, String)> = Vec::new();
        let date = |key: Key, required: bool, errors: &mut Vec<(Key, String)>| {
            let required = required && all && form.field(key).is_some();
            match parse_date(form.text(key), required) {
                Ok(d) => d,
                Err(e) => {
                    errors.push((key, e));
                    None
                }
            }
        };
        let due = date(Key::Due, false, &mut errors);
        let on = date(Key::On, true, &mut errors);
        let cost = match parse_cost(form.text(Key::Cost)) {
            Ok(c) => c,
            Err(e) => {
                errors.push((Key::Cost, e));
                None
            }
        };
        let task = form
            .chosen(Key::Task)
            .and_then(|i| WorkTask::ALL.get(i).copied());
        let priority = form.chosen(Key::Priority).and_then(priority_of);
        let text = |key: Key| {
            let t = form.text(key);
            (!t.is_empty()).then(|| t.to_string())
        };
        let request = match &self.kind {
            Kind::Add { tree_id } => {
                if all && task.is_none() {
                    errors.push((Key::Task, "choose a task".to_string()));
                }
                if all && priority.is_none() {
                    errors.push((Key::Priority, "choose a priority".to_string()));
                }
                match (task, priority) {
                    (Some(task), Some(priority)) => Some(Request::Add(NewWorkOrder {
                        tree_id: *tree_id,
                        task,
                        priority,
                        due_on: due,
                        crew: text(Key::Crew),
                        estimated_cost: cost,
                        notes: text(Key::Notes),
                        assessment_id: None,
                        cycle: None,
                    })),
                    _ => None,
                }
            }
            Kind::Schedule { order_id } => on.map(|on| Request::Change {
                order_id: *order_id,
                change: WorkChange::Schedule {
                    on,
                    crew: text(Key::Crew),
                    estimated_cost: cost,
                },
            }),
            Kind::Done { order_id } => on.map(|on| Request::Change {
                order_id: *order_id,
                change: WorkChange::Done {
                    on: Some(on),
                    actual_cost: cost,
                    notes: text(Key::Notes),
                },
            }),
            Kind::Cancel { order_id } => Some(Request::Change {
                order_id: *order_id,
                change: WorkChange::Cancel {
                    reason: text(Key::Reason),
                },
            }),
            Kind::Edit { order } => {
                let crew = form.text(Key::Crew).to_string();
                let notes = form.text(Key::Notes).to_string();
                let old_notes = order.notes.clone().unwrap_or_default().replace('\n', " / ");
                Some(Request::Change {
                    order_id: order.id,
                    change: WorkChange::Edit {
                        task: task.filter(|t| *t != order.task),
                        priority: priority.filter(|p| *p != order.priority),
                        due_on: due.filter(|d| Some(*d) != order.due_on),
                        crew: (crew != order.crew.clone().unwrap_or_default()).then_some(crew),
                        estimated_cost: cost.filter(|c| Some(*c) != order.estimated_cost),
                        notes: (notes != old_notes.trim()).then_some(notes),
                    },
                })
            }
        };
        let ok = errors.is_empty();
        for (key, reason) in errors {
            self.form.set_error(key, Some(reason));
        }
        if ok { request } else { None }
    }
}

/// Draws the dialog centred over `area`.
pub fn render(state: &State, frame: &mut Frame<'_>, area: Rect) {
    let width = area.width.saturating_sub(4).min(78);
    let inner_width = width.saturating_sub(2);
    let context_height: u16 = state
        .context
        .iter()
        .map(|c| text::wrapped_height(c, inner_width))
        .sum();
    let help = "Ctrl-S or F2 saves · Tab/↑↓ move · ←/→ choose (Enter: list) · Esc closes";
    let help_height = text::wrapped_height(help, inner_width);
    let errors = state
        .form
        .fields
        .iter()
        .filter(|f| f.error.is_some())
        .count() as u16;
    let wanted = context_height + 1 + state.form.fields.len() as u16 + errors + 1 + help_height + 2;
    let height = wanted.min(area.height);
    let popup = Rect {
        x: area.x + (area.width - width) / 2,
        y: area.y + (area.height - height) / 2,
        width,
        height,
    };
    frame.render_widget(Clear, popup);
    let block = Block::default()
        .borders(Borders::ALL)
        .title(format!(" {} ", state.title));
    let inner = block.inner(popup);
    frame.render_widget(block, popup);
    let [context, fields, keys] = Layout::vertical([
        Constraint::Length(context_height + 1),
        Constraint::Min(1),
        Constraint::Length(help_height),
    ])
    .areas(inner);
    let lines: Vec<Line<'_>> = state
        .context
        .iter()
        .enumerate()
        .map(|(i, c)| {
            if i == 0 {
                Line::from(Span::styled(
                    c.clone(),
                    Style::new().add_modifier(Modifier::BOLD),
                ))
            } else {
                Line::from(c.clone())
            }
        })
        .collect();
    frame.render_widget(Paragraph::new(lines).wrap(Wrap { trim: true }), context);
    state.form.render(frame, fields, 11, true);
    frame.render_widget(
        Paragraph::new(Span::styled(help, Style::new().add_modifier(Modifier::DIM)))
            .wrap(Wrap { trim: true }),
        keys,
    );
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::care::work::WorkStatus;
    use ratatui::crossterm::event::{KeyCode, KeyModifiers};

    fn item() -> WorkItem {
        WorkItem {
            id: 7,
            tree_id: 3,
            uid: "u".into(),
            species: "Acer rubrum".into(),
            street: Some("Quill Lane".into()),
            house_number: Some("4".into()),
            zone: None,
            task: WorkTask::Remove,
            priority: Priority::URGENT,
            status: WorkStatus::Open,
            due_on: None,
            scheduled_on: None,
            done_on: None,
            crew: Some("Kestrel crew".into()),
            estimated_cost: Some(900.0),
            actual_cost: None,
            notes: Some("leaning".into()),
            assessment_id: None,
            rating: None,
            cycle: None,
        }
    }

    fn today() -> NaiveDate {
        NaiveDate::from_ymd_opt(2026, 11, 30).expect("date")
    }

    fn save(state: &mut State) -> Option<Outcome> {
        state.handle_key(KeyEvent::new(KeyCode::Char('s'), KeyModifiers::CONTROL))
    }

    #[test]
    fn done_reads_the_date_and_cost_and_warns_of_the_removal() {
        let mut state = State::done(&item(), today());
        assert!(
            state
                .context
                .iter()
                .any(|c| c.contains("marks tree 3 removed"))
        );
        state.form.focus_on(Key::Cost);
        for c in "-5".chars() {
            state.handle_key(KeyEvent::from(KeyCode::Char(c)));
        }
        assert!(
            state
                .form
                .field(Key::Cost)
                .and_then(|f| f.error.clone())
                .is_some_and(|e| e.contains("must not be negative"))
        );
        assert_eq!(
            save(&mut state),
            Some(Outcome::Message(
                "not saved: fix the fields marked ✗".to_string()
            ))
        );
        state.form.set_text(Key::Cost, "1040");
        match save(&mut state) {
            Some(Outcome::Submit(Request::Change { order_id, change })) => {
                assert_eq!(order_id, 7);
                assert_eq!(
                    change,
                    WorkChange::Done {
                        on: Some(today()),
                        actual_cost: Some(1040.0),
                        notes: None
                    }
                );
            }
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn edit_sends_only_what_changed_and_store_messages_land_on_their_field() {
        let mut state = State::edit(&item());
        state.form.focus_on(Key::Priority);
        state.handle_key(KeyEvent::from(KeyCode::Right));
        match save(&mut state) {
            Some(Outcome::Submit(Request::Change { change, .. })) => assert_eq!(
                change,
                WorkChange::Edit {
                    task: None,
                    priority: Some(Priority::HIGH),
                    due_on: None,
                    crew: None,
                    estimated_cost: None,
                    notes: None
                }
            ),
            other => panic!("{other:?}"),
        }
        let mut schedule = State::schedule(&item(), today());
        schedule.show_error("work order 7: on: 2026-11-01 is before today (2026-11-30)");
        assert_eq!(
            schedule.form.field(Key::On).and_then(|f| f.error.clone()),
            Some("2026-11-01 is before today (2026-11-30)".to_string())
        );
    }

    #[test]
    fn add_needs_a_task_and_a_priority() {
        let mut state = State::add(3, "tree 3");
        assert!(matches!(save(&mut state), Some(Outcome::Message(_))));
        assert!(
            state
                .form
                .field(Key::Task)
                .is_some_and(|f| f.error.is_some())
        );
        state.handle_key(KeyEvent::from(KeyCode::Char('p')));
        state.handle_key(KeyEvent::from(KeyCode::Tab));
        state.handle_key(KeyEvent::from(KeyCode::Char('2')));
        match save(&mut state) {
            Some(Outcome::Submit(Request::Add(order))) => {
                assert_eq!(order.task, WorkTask::Prune);
                assert_eq!(order.priority, Priority::HIGH);
                assert_eq!(order.tree_id, 3);
            }
            other => panic!("{other:?}"),
        }
    }
}
