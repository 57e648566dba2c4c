//! Application state and the `Action` enum. `handle_key` turns a key into an action; `update` applies
//! it (pure, testable without a terminal); `refresh` fetches what the visible views need; `render`
//! draws from state only.

use ratatui::Frame;
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use ratatui::layout::{Constraint, Layout};
use ratatui::style::{Modifier, Style};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Block, Borders, Clear, Paragraph, Wrap};

use super::query::Query;
use super::views::roster;
use crate::store::StoreError;

/// Display choices the TUI starts with.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct AppSettings {
    /// Show lengths in inches/feet instead of cm/m.
    pub us_units: bool,
}

/// Everything the user can ask for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Action {
    Roster(roster::Move),
    ToggleHelp,
    Quit,
}

/// The application state.
pub struct App {
    pub roster: roster::State,
    pub settings: AppSettings,
    pub file_label: String,
    show_help: bool,
    quit: bool,
}

/// Keys shown in the footer and in the help popup: (keys, what they do).
pub const KEYS: &[(&str, &str)] = &[
    ("↑/↓ j/k", "move"),
    ("PgUp/PgDn", "page"),
    ("g/G Home/End", "first/last tree"),
    ("?", "help"),
    ("q Esc", "quit"),
];

impl App {
    /// A new app over the inventory behind `query`.
    pub fn new(query: &Query<'_>, settings: AppSettings) -> Result<Self, StoreError> {
        Ok(App {
            roster: roster::State::new(query.roster_ids()?),
            settings,
            file_label: query.file_label(),
            show_help: false,
            quit: false,
        })
    }

    /// The action a key asks for, if any.
    pub fn handle_key(&self, key: KeyEvent) -> Option<Action> {
        if key.modifiers.contains(KeyModifiers::CONTROL) && key.code == KeyCode::Char('c') {
            return Some(Action::Quit);
        }
        if self.show_help {
            return Some(Action::ToggleHelp);
        }
        match key.code {
            KeyCode::Char('q') | KeyCode::Esc => Some(Action::Quit),
            KeyCode::Char('?') => Some(Action::ToggleHelp),
            _ => roster::handle_key(key).map(Action::Roster),
        }
    }

    /// Applies an action to the state.
    pub fn update(&mut self, action: Action) {
        match action {
            Action::Roster(movement) => self.roster.apply(movement),
            Action::ToggleHelp => self.show_help = !self.show_help,
            Action::Quit => self.quit = true,
        }
    }

    /// True once the user asked to quit.
    pub fn should_quit(&self) -> bool {
        self.quit
    }

    /// Tells the views how many terminal rows there are (before `refresh`).
    pub fn set_viewport(&mut self, terminal_height: u16) {
        // Title (1) + table border and header (3) + status (1) + footer (1).
        self.roster
            .set_height(terminal_height.saturating_sub(6) as usize);
    }

    /// Fetches the rows the visible view shows (only those: virtual scrolling).
    pub fn refresh(&mut self, query: &Query<'_>) -> Result<(), StoreError> {
        self.roster.refresh(query)
    }

    /// Draws the whole screen from state.
    pub fn render(&self, frame: &mut Frame<'_>) {
        let [title, body, status, footer] = Layout::vertical([
            Constraint::Length(1),
            Constraint::Min(3),
            Constraint::Length(1),
            Constraint::Length(1),
        ])
        .areas(frame.area());
        frame.render_widget(
            Paragraph::new(Line::from(vec![
                Span::styled(
                    " Streetwood ",
                    Style::new().add_modifier(Modifier::BOLD | Modifier::REVERSED),
                ),
                Span::raw(" Roster · "),
                Span::raw(self.file_label.as_str()),
            ])),
            title,
        );
        roster::render(&self.roster, self.settings, frame, body);
        frame.render_widget(Paragraph::new(roster::status_line(&self.roster)), status);
        let keys: Vec<Span<'_>> = KEYS
            .iter()
            .flat_map(|(key, what)| {
                [
                    Span::styled(
                        format!(" {key} "),
                        Style::new().add_modifier(Modifier::REVERSED),
                    ),
                    Span::raw(format!(" {what} ")),
                ]
            })
            .collect();
        frame.render_widget(Paragraph::new(Line::from(keys)), footer);
        if self.show_help {
            render_help(frame);
        }
    }
}

fn render_help(frame: &mut Frame<'_>) {
    let area = frame.area();
    let width = area.width.min(64);
    let height = area.height.min(KEYS.len() as u16 + 8);
    let popup = ratatui::layout::Rect {
        x: area.x + (area.width - width) / 2,
        y: area.y + (area.height - height) / 2,
        width,
        height,
    };
    let mut lines: Vec<Line<'_>> = KEYS
        .iter()
        .map(|(key, what)| Line::from(format!("{key:>14}  {what}")))
        .collect();
    lines.push(Line::from(""));
    lines.push(Line::from(crate::care::risk::CAUTION));
    lines.push(Line::from("Any key closes this help."));
    frame.render_widget(Clear, popup);
    frame.render_widget(
        Paragraph::new(lines)
            .wrap(Wrap { trim: true })
            .block(Block::default().borders(Borders::ALL).title(" Help ")),
        popup,
    );
}
