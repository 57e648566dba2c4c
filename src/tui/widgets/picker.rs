//! A popup list with type-to-narrow fuzzy matching (nucleo-matcher), used for the species picker,
//! filters and other choices.

use nucleo_matcher::pattern::{CaseMatching, Normalization, Pattern};
use nucleo_matcher::{Config, Matcher};
use ratatui::Frame;
use ratatui::crossterm::event::{KeyCode, KeyEvent};
use ratatui::layout::Rect;
use ratatui::style::{Modifier, Style};
use ratatui::text::Line;
use ratatui::widgets::{Block, Borders, Clear, List, ListItem, ListState, Paragraph};
use tui_input::Input;

use super::text;

/// What a key did to the picker.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Outcome {
    Pending,
    /// The index (into the items given) of the chosen item.
    Chosen(usize),
    Cancelled,
}

/// Picker state.
#[derive(Debug, Clone)]
pub struct Picker {
    pub title: String,
    items: Vec<String>,
    query: Input,
    shown: Vec<usize>,
    selected: usize,
}

impl Picker {
    /// A picker over `items`, narrowed at once by `query`.
    pub fn new(title: impl Into<String>, items: Vec<String>, query: &str) -> Self {
        let mut picker = Picker {
            title: title.into(),
            items,
            query: Input::new(query.to_string()),
            shown: Vec::new(),
            selected: 0,
        };
        picker.narrow();
        picker
    }

    /// The items still shown, best match first.
    pub fn shown(&self) -> Vec<&str> {
        self.shown.iter().map(|i| self.items[*i].as_str()).collect()
    }

    /// The query typed so far.
    pub fn query(&self) -> &str {
        self.query.value()
    }

    fn narrow(&mut self) {
        let query = self.query.value();
        self.shown = if query.trim().is_empty() {
            (0..self.items.len()).collect()
        } else {
            let pattern = Pattern::parse(query, CaseMatching::Ignore, Normalization::Smart);
            let mut matcher = Matcher::new(Config::DEFAULT);
            let indexed: Vec<(usize, &str)> =
                self.items.iter().map(String::as_str).enumerate().collect();
            let texts: Vec<IndexedText<'_>> =
                indexed.iter().map(|(i, t)| IndexedText(*i, t)).collect();
            pattern
                .match_list(texts, &mut matcher)
                .into_iter()
                .map(|(item, _score)| item.0)
                .collect()
        };
        self.selected = 0;
    }

    /// Handles a key.
    pub fn handle_key(&mut self, key: KeyEvent) -> Outcome {
        match key.code {
            KeyCode::Esc => Outcome::Cancelled,
            KeyCode::Enter => self
                .shown
                .get(self.selected)
                .map_or(Outcome::Pending, |i| Outcome::Chosen(*i)),
            KeyCode::Up => {
                self.selected = self.selected.saturating_sub(1);
                Outcome::Pending
            }
            KeyCode::Down | KeyCode::Tab => {
                if self.selected + 1 < self.shown.len() {
                    self.selected += 1;
                }
                Outcome::Pending
            }
            _ => {
                if text::edit(&mut self.query, key) {
                    self.narrow();
                }
                Outcome::Pending
            }
        }
    }

    /// Draws the picker centred in `area`.
    pub fn render(&self, frame: &mut Frame<'_>, area: Rect) {
        let width = area.width.min(60);
        let height = area.height.min(18);
        let popup = Rect {
            x: area.x + (area.width - width) / 2,
            y: area.y + (area.height - height) / 2,
            width,
            height,
        };
        frame.render_widget(Clear, popup);
        let block = Block::default().borders(Borders::ALL).title(format!(
            " {} — type to narrow, ↑↓ choose, Enter pick, Esc cancel ",
            self.title
        ));
        let inner = block.inner(popup);
        frame.render_widget(block, popup);
        if inner.height < 2 {
            return;
        }
        let query_area = Rect { height: 1, ..inner };
        frame.render_widget(
            Paragraph::new(Line::from(format!("> {}", text::with_cursor(&self.query)))),
            query_area,
        );
        let list_area = Rect {
            y: inner.y + 1,
            height: inner.height - 1,
            ..inner
        };
        let items: Vec<ListItem<'_>> = self
            .shown
            .iter()
            .map(|i| ListItem::new(self.items[*i].as_str()))
            .collect();
        let empty = items.is_empty();
        let list = List::new(items)
            .highlight_symbol("▶ ")
            .highlight_style(Style::new().add_modifier(Modifier::REVERSED));
        let mut state = ListState::default().with_selected((!empty).then_some(self.selected));
        frame.render_stateful_widget(list, list_area, &mut state);
        if empty {
            frame.render_widget(Paragraph::new("  (nothing matches)"), list_area);
        }
    }
}

/// An item with its index, matched by its text.
#[derive(Debug, Clone, Copy)]
struct IndexedText<'a>(usize, &'a str);

impl AsRef<str> for IndexedText<'_> {
    fn as_ref(&self) -> &str {
        self.1
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn key(c: char) -> KeyEvent {
        KeyEvent::from(KeyCode::Char(c))
    }

    #[test]
    fn typing_narrows_by_fuzzy_match_and_enter_picks() {
        let items = vec![
            "Acer rubrum — red maple".to_string(),
            "Tilia cordata — littleleaf linden".to_string(),
            "Quercus rubra — northern red oak".to_string(),
        ];
        let mut picker = Picker::new("Species", items, "");
        assert_eq!(picker.shown().len(), 3);
        for c in "lindn".chars() {
            assert_eq!(picker.handle_key(key(c)), Outcome::Pending);
        }
        assert_eq!(picker.shown(), vec!["Tilia cordata — littleleaf linden"]);
        assert_eq!(
            picker.handle_key(KeyEvent::from(KeyCode::Enter)),
            Outcome::Chosen(1)
        );
        let mut picker = Picker::new("Species", vec!["a".into()], "zzz");
        assert!(picker.shown().is_empty());
        assert_eq!(
            picker.handle_key(KeyEvent::from(KeyCode::Enter)),
            Outcome::Pending
        );
        assert_eq!(
            picker.handle_key(KeyEvent::from(KeyCode::Esc)),
            Outcome::Cancelled
        );
    }
}
