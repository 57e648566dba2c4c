//! Roster: the inventory table. Virtual scrolling: the state keeps only the ordered tree ids and the
//! rows on screen; each refresh fetches just the visible window.

use ratatui::Frame;
use ratatui::crossterm::event::{KeyCode, KeyEvent};
use ratatui::layout::{Constraint, Rect};
use ratatui::style::{Modifier, Style};
use ratatui::text::Line;
use ratatui::widgets::{Block, Borders, Cell, Row, Table};

use super::super::app::AppSettings;
use super::super::query::Query;
use crate::model::TreeSummary;
use crate::science::condition::ConditionBand;
use crate::science::units::cm_to_inches;
use crate::store::StoreError;

/// Movements in the roster.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Move {
    Up,
    Down,
    PageUp,
    PageDown,
    First,
    Last,
}

/// Roster state.
#[derive(Debug, Clone, Default)]
pub struct State {
    ids: Vec<i64>,
    selected: usize,
    offset: usize,
    height: usize,
    rows: Vec<TreeSummary>,
}

impl State {
    /// A roster over these tree ids (in display order).
    pub fn new(ids: Vec<i64>) -> Self {
        State {
            ids,
            height: 20,
            ..State::default()
        }
    }

    /// Number of trees in the roster.
    pub fn len(&self) -> usize {
        self.ids.len()
    }

    /// True when the roster has no trees.
    pub fn is_empty(&self) -> bool {
        self.ids.is_empty()
    }

    /// Index of the selected tree.
    pub fn selected(&self) -> usize {
        self.selected
    }

    /// The rows currently on screen.
    pub fn visible_rows(&self) -> &[TreeSummary] {
        &self.rows
    }

    /// Sets how many table rows fit on screen.
    pub fn set_height(&mut self, height: usize) {
        self.height = height.max(1);
        self.keep_selection_visible();
    }

    /// Moves the selection.
    pub fn apply(&mut self, movement: Move) {
        let last = self.ids.len().saturating_sub(1);
        self.selected = match movement {
            Move::Up => self.selected.saturating_sub(1),
            Move::Down => (self.selected + 1).min(last),
            Move::PageUp => self.selected.saturating_sub(self.height),
            Move::PageDown => (self.selected + self.height).min(last),
            Move::First => 0,
            Move::Last => last,
        };
        self.keep_selection_visible();
    }

    fn keep_selection_visible(&mut self) {
        if self.selected < self.offset {
            self.offset = self.selected;
        } else if self.selected >= self.offset + self.height {
            self.offset = self.selected + 1 - self.height;
        }
    }

    /// Fetches the visible window of rows.
    pub fn refresh(&mut self, query: &Query<'_>) -> Result<(), StoreError> {
        self.rows = match self.ids.get(self.offset) {
            Some(first) => query.roster_rows_from(*first, self.height)?,
            None => Vec::new(),
        };
        Ok(())
    }
}

/// The roster's keys.
pub fn handle_key(key: KeyEvent) -> Option<Move> {
    match key.code {
        KeyCode::Up | KeyCode::Char('k') => Some(Move::Up),
        KeyCode::Down | KeyCode::Char('j') => Some(Move::Down),
        KeyCode::PageUp => Some(Move::PageUp),
        KeyCode::PageDown | KeyCode::Char(' ') => Some(Move::PageDown),
        KeyCode::Home | KeyCode::Char('g') => Some(Move::First),
        KeyCode::End | KeyCode::Char('G') => Some(Move::Last),
        _ => None,
    }
}

/// The status line: counts and position.
pub fn status_line(state: &State) -> Line<'static> {
    if state.is_empty() {
        return Line::from(" no trees yet: import some with `streetwood import trees FILE`");
    }
    Line::from(format!(
        " tree {} of {} · rows {}–{}",
        state.selected + 1,
        state.len(),
        state.offset + 1,
        (state.offset + state.rows.len()).max(state.offset + 1)
    ))
}

/// Draws the table.
pub fn render(state: &State, settings: AppSettings, frame: &mut Frame<'_>, area: Rect) {
    let dbh_header = if settings.us_units {
        "DBH in"
    } else {
        "DBH cm"
    };
    let header = Row::new([
        "",
        "id",
        "uid",
        "species",
        "common name",
        "street",
        "no.",
        dbh_header,
        "condition",
        "status",
        "zone",
    ])
    .style(Style::new().add_modifier(Modifier::BOLD | Modifier::UNDERLINED));
    let rows = state.rows.iter().enumerate().map(|(i, tree)| {
        let dbh = tree.dbh_cm.map(|d| {
            if settings.us_units {
                cm_to_inches(d)
            } else {
                d
            }
        });
        let band = tree
            .effective_dieback_pct()
            .map(|p| ConditionBand::from_dieback(p).as_str())
            .unwrap_or("");
        let selected = state.offset + i == state.selected;
        let row = Row::new([
            // The selection is marked by a sign as well as by reversed video (never by colour alone).
            Cell::from(if selected { "▶" } else { "" }),
            Cell::from(tree.id.to_string()),
            Cell::from(tree.uid.chars().take(8).collect::<String>()),
            Cell::from(tree.species.clone()),
            Cell::from(tree.common_name.clone()),
            Cell::from(tree.street.clone().unwrap_or_default()),
            Cell::from(tree.house_number.clone().unwrap_or_default()),
            Cell::from(dbh.map(|d| format!("{d:>6.1}")).unwrap_or_default()),
            Cell::from(band),
            Cell::from(tree.status.as_str()),
            Cell::from(tree.zone.clone().unwrap_or_default()),
        ]);
        if selected {
            row.style(Style::new().add_modifier(Modifier::REVERSED))
        } else {
            row
        }
    });
    let widths = [
        Constraint::Length(1),
        Constraint::Length(7),
        Constraint::Length(8),
        Constraint::Fill(3),
        Constraint::Fill(2),
        Constraint::Fill(2),
        Constraint::Length(5),
        Constraint::Length(7),
        Constraint::Length(10),
        Constraint::Length(8),
        Constraint::Length(15),
    ];
    frame.render_widget(
        Table::new(rows, widths)
            .header(header)
            .block(Block::default().borders(Borders::TOP | Borders::BOTTOM)),
        area,
    );
}
