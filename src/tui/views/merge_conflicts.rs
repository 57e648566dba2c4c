//! The conflict screen of `streetwood merge OTHER --interactive`: every conflict of the merge's plan
//! (both copies changed a field differently) with both values, when and by whom each was made; the
//! side the rule picks (the later change) is chosen until a person picks the other. Then a review step,
//! and the merge with those choices, or a cancel with nothing written. The state is built from the plan
//! (a dry run's report) and knows nothing of the store; `tui/merge.rs` runs it.

use std::collections::BTreeMap;

use ratatui::Frame;
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::{Modifier, Style};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Wrap};
use serde_json::Value;

use crate::store::merge::{MergeChoices, MergeConflict, MergeReport};
use crate::sync::Side;

/// Where the person is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Step {
    /// The list of conflicts, choosing sides.
    Choose,
    /// What will be written; Enter merges.
    Review,
}

/// What a key asks of the run loop.
#[derive(Debug, Clone, PartialEq)]
pub enum Outcome {
    /// Merge with these choices.
    Merge(MergeChoices),
    /// Leave with nothing written.
    Cancel,
}

/// Lines each conflict takes in the list.
const ENTRY_LINES: usize = 3;

/// Keys of the list, for the footer.
pub const CHOOSE_KEYS: &str =
    "↑↓/jk move · ←→/hl or 1 2 pick a side · a accept all defaults · Enter/m review · Esc/q cancel";
/// Keys of the review.
pub const REVIEW_KEYS: &str = "Enter/y merge · Esc/n back to the list · q cancel";

/// Screen state.
#[derive(Debug, Clone)]
pub struct State {
    plan: MergeReport,
    /// The side picked by hand for each conflict (`None`: the rule's side).
    pub picks: Vec<Option<Side>>,
    pub selected: usize,
    pub step: Step,
}

impl State {
    /// The screen for a merge's plan: the list, or the review when there is no conflict.
    pub fn new(plan: &MergeReport) -> Self {
        State {
            picks: vec![None; plan.conflicts.len()],
            selected: 0,
            step: if plan.conflicts.is_empty() {
                Step::Review
            } else {
                Step::Choose
            },
            plan: plan.clone(),
        }
    }

    pub fn conflicts(&self) -> &[MergeConflict] {
        &self.plan.conflicts
    }

    /// The side conflict `i` goes to: the pick, else the rule's.
    pub fn side(&self, i: usize) -> Side {
        match (
            self.picks.get(i).copied().flatten(),
            self.plan.conflicts.get(i),
        ) {
            (Some(side), _) => side,
            (None, Some(c)) => c.field.default_winner,
            (None, None) => Side::Target,
        }
    }

    /// The choices to merge with: the picks, tied to the conflicts of the plan.
    pub fn choices(&self) -> MergeChoices {
        let picks: BTreeMap<_, _> = self
            .plan
            .conflicts
            .iter()
            .zip(&self.picks)
            .filter_map(|(c, pick)| pick.map(|side| (c.key(), side)))
            .collect();
        MergeChoices::for_plan(&self.plan, picks)
    }

    /// Handles a key; `Some` when the screen is done.
    pub fn handle_key(&mut self, key: KeyEvent) -> Option<Outcome> {
        if key.modifiers.contains(KeyModifiers::CONTROL) && key.code == KeyCode::Char('c') {
            return Some(Outcome::Cancel);
        }
        match self.step {
            Step::Choose => self.choose_key(key.code),
            Step::Review => self.review_key(key.code),
        }
    }

    fn choose_key(&mut self, code: KeyCode) -> Option<Outcome> {
        let last = self.plan.conflicts.len().saturating_sub(1);
        match code {
            KeyCode::Up | KeyCode::Char('k') => self.selected = self.selected.saturating_sub(1),
            KeyCode::Down | KeyCode::Char('j') => self.selected = (self.selected + 1).min(last),
            KeyCode::PageUp => self.selected = self.selected.saturating_sub(5),
            KeyCode::PageDown => self.selected = (self.selected + 5).min(last),
            KeyCode::Home | KeyCode::Char('g') => self.selected = 0,
            KeyCode::End | KeyCode::Char('G') => self.selected = last,
            KeyCode::Left | KeyCode::Char('h') | KeyCode::Char('1') => self.pick(Side::Target),
            KeyCode::Right | KeyCode::Char('l') | KeyCode::Char('2') => self.pick(Side::Other),
            KeyCode::Char(' ') => {
                let flipped = match self.side(self.selected) {
                    Side::Target => Side::Other,
                    Side::Other => Side::Target,
                };
                self.pick(flipped);
            }
            KeyCode::Char('a') => {
                self.picks.iter_mut().for_each(|p| *p = None);
                self.step = Step::Review;
            }
            KeyCode::Enter | KeyCode::Char('m') => self.step = Step::Review,
            KeyCode::Esc | KeyCode::Char('q') => return Some(Outcome::Cancel),
            _ => {}
        }
        None
    }

    fn review_key(&mut self, code: KeyCode) -> Option<Outcome> {
        match code {
            KeyCode::Enter | KeyCode::Char('y') | KeyCode::Char('m') => {
                Some(Outcome::Merge(self.choices()))
            }
            KeyCode::Esc | KeyCode::Char('n') | KeyCode::Backspace
                if !self.plan.conflicts.is_empty() =>
            {
                self.step = Step::Choose;
                None
            }
            KeyCode::Esc | KeyCode::Char('n') | KeyCode::Char('q') => Some(Outcome::Cancel),
            _ => None,
        }
    }

    fn pick(&mut self, side: Side) {
        if let Some(pick) = self.picks.get_mut(self.selected) {
            *pick = Some(side);
        }
    }

    /// (kept from this file, taken from the copy, picked by hand).
    fn tally(&self) -> (usize, usize, usize) {
        let mut out = (0, 0, 0);
        for i in 0..self.plan.conflicts.len() {
            match self.side(i) {
                Side::Target => out.0 += 1,
                Side::Other => out.1 += 1,
            }
            if self.picks[i].is_some() {
                out.2 += 1;
            }
        }
        out
    }
}

/// A stored value as the person reads it.
fn shown(value: &Value) -> String {
    match value {
        Value::Null => "(empty)".to_string(),
        Value::String(s) => s.replace('\n', " / "),
        other => other.to_string(),
    }
}

/// An audit time as "2026-06-01 09:00 UTC".
fn when(at: &str) -> String {
    if at.is_empty() {
        return "time unknown".to_string();
    }
    let short: String = at.chars().take(16).collect();
    format!("{} UTC", short.replace('T', " "))
}

/// Cuts `text` to `width` characters, with "…" when cut.
fn clip(text: &str, width: usize) -> String {
    if text.chars().count() <= width {
        return text.to_string();
    }
    let mut out: String = text.chars().take(width.saturating_sub(1)).collect();
    out.push('…');
    out
}

fn side_name(side: Side) -> &'static str {
    match side {
        Side::Target => "this file",
        Side::Other => "the copy",
    }
}

/// Where the conflict is: "tree T-0012 · Mill Lane · trees.street", or for a row of a tree
/// "tree T-0031 · Elm Row · work_orders.notes (row a1:7)".
fn place(c: &MergeConflict) -> String {
    let mut parts = Vec::new();
    if let Some(tree) = &c.tree_uid {
        parts.push(format!("tree {tree}"));
    }
    if let Some(street) = c.street.as_deref().filter(|s| !s.is_empty()) {
        parts.push(street.to_string());
    }
    if c.tree_uid.as_deref() == Some(c.uid.as_str()) {
        parts.push(format!("{}.{}", c.table, c.field.field));
    } else {
        parts.push(format!("{}.{} (row {})", c.table, c.field.field, c.uid));
    }
    parts.join(" · ")
}

fn header(state: &State) -> Vec<Line<'static>> {
    let plan = &state.plan;
    let crew = plan
        .crew
        .as_deref()
        .map(|c| format!(", crew {c}"))
        .unwrap_or_default();
    let added: usize = plan.tables.iter().map(|t| t.added).sum();
    let updated: usize = plan.tables.iter().map(|t| t.updated).sum();
    let rejected = plan.rejected.len();
    let (_, _, by_hand) = state.tally();
    vec![
        Line::from(Span::styled(
            format!("Merge {}{crew} into this inventory", plan.other),
            Style::new().add_modifier(Modifier::BOLD),
        )),
        Line::from(format!(
            "rows: {added} to add, {updated} to update, {rejected} rejected · conflicts: {} ({by_hand} picked by hand)",
            plan.conflicts.len()
        )),
    ]
}

fn side_line(state: &State, i: usize, side: Side, width: usize) -> Line<'static> {
    let c = &state.plan.conflicts[i];
    let f = &c.field;
    let (value, at, by) = match side {
        Side::Target => (&f.target_value, &f.target_changed_at, &f.target_changed_by),
        Side::Other => (&f.other_value, &f.other_changed_at, &f.other_changed_by),
    };
    let chosen = state.side(i) == side;
    let mark = if chosen { "(•)" } else { "( )" };
    let mut tail = format!("  {}", when(at));
    if !by.is_empty() {
        tail.push_str(&format!(" by {by}"));
    }
    if f.default_winner == side {
        tail.push_str("  ← later: default");
    }
    let lead = format!("    {mark} {:<9}  ", side_name(side));
    let room = width.saturating_sub(lead.chars().count() + tail.chars().count());
    let value = clip(&shown(value), room.max(8));
    let style = if chosen {
        Style::new().add_modifier(Modifier::BOLD)
    } else {
        Style::new().add_modifier(Modifier::DIM)
    };
    Line::from(vec![
        Span::styled(lead, style),
        Span::styled(value, style),
        Span::styled(tail, style),
    ])
}

fn list_lines(state: &State, width: usize, height: usize) -> Vec<Line<'static>> {
    let per_page = (height / ENTRY_LINES).max(1);
    let first = (state.selected + 1).saturating_sub(per_page);
    let total = state.plan.conflicts.len();
    let mut lines = Vec::new();
    for i in (first..total).take(per_page) {
        let selected = i == state.selected;
        let pointer = if selected { "▶" } else { " " };
        let hand = if state.picks[i].is_some() {
            " · picked by hand"
        } else {
            ""
        };
        let title = clip(
            &format!(
                "{pointer} {}/{total} {}{hand}",
                i + 1,
                place(&state.plan.conflicts[i])
            ),
            width,
        );
        let style = if selected {
            Style::new().add_modifier(Modifier::REVERSED | Modifier::BOLD)
        } else {
            Style::new().add_modifier(Modifier::BOLD)
        };
        lines.push(Line::from(Span::styled(title, style)));
        lines.push(side_line(state, i, Side::Target, width));
        lines.push(side_line(state, i, Side::Other, width));
    }
    lines
}

fn review_lines(state: &State, width: usize) -> Vec<Line<'static>> {
    let plan = &state.plan;
    let mut lines = Vec::new();
    if plan.conflicts.is_empty() {
        lines.push(Line::from(
            "No conflicts: the two files never changed the same field differently.",
        ));
    } else {
        let (kept, taken, by_hand) = state.tally();
        lines.push(Line::from(format!(
            "{} conflicts: {kept} keep this file's value, {taken} take the copy's ({by_hand} picked by hand).",
            plan.conflicts.len()
        )));
        lines.push(Line::from(
            "The report lists every value that loses; this file's values that lose stay in its audit log.",
        ));
        lines.push(Line::from(""));
        for (i, c) in plan.conflicts.iter().enumerate() {
            let side = state.side(i);
            let value = match side {
                Side::Target => &c.field.target_value,
                Side::Other => &c.field.other_value,
            };
            let how = if state.picks[i].is_some() {
                "by hand"
            } else {
                "the later change"
            };
            lines.push(Line::from(clip(
                &format!(
                    "  {} {} {}: {} \"{}\" ({how})",
                    c.table,
                    c.tree_uid.as_deref().unwrap_or(&c.uid),
                    c.field.field,
                    side_name(side),
                    shown(value),
                ),
                width,
            )));
        }
    }
    if !plan.rejected.is_empty() {
        lines.push(Line::from(""));
        lines.push(Line::from(format!(
            "{} rows of the copy will be rejected (the report says why).",
            plan.rejected.len()
        )));
    }
    lines.push(Line::from(""));
    lines.push(Line::from(Span::styled(
        "Merge now? Enter/y merges in one transaction; the report follows on the terminal.",
        Style::new().add_modifier(Modifier::BOLD),
    )));
    lines
}

/// Draws the screen over `area`.
pub fn render(state: &State, frame: &mut Frame<'_>, area: Rect) {
    let keys = match state.step {
        Step::Choose => CHOOSE_KEYS,
        Step::Review => REVIEW_KEYS,
    };
    let keys_height = super::super::widgets::text::wrapped_height(keys, area.width).min(2);
    let [top, body, footer] = Layout::vertical([
        Constraint::Length(3),
        Constraint::Min(1),
        Constraint::Length(keys_height),
    ])
    .areas(area);
    frame.render_widget(Paragraph::new(header(state)).wrap(Wrap { trim: true }), top);
    let width = body.width as usize;
    let lines = match state.step {
        Step::Choose => list_lines(state, width, body.height as usize),
        Step::Review => review_lines(state, width),
    };
    let body_widget = Paragraph::new(lines);
    let body_widget = if state.step == Step::Review {
        body_widget.wrap(Wrap { trim: false })
    } else {
        body_widget
    };
    frame.render_widget(body_widget, body);
    frame.render_widget(
        Paragraph::new(Span::styled(keys, Style::new().add_modifier(Modifier::DIM)))
            .wrap(Wrap { trim: true }),
        footer,
    );
}
