//! Editing a tree's attributes from its card (species, street, house number, site, position, planting
//! date, notes) without adding a measurement. Every field is checked as typed by the trees-import
//! rules ([`validate_tree_edit`]), with the reason next to the field; the store checks again on save.

use chrono::NaiveDate;
use ratatui::Frame;
use ratatui::crossterm::event::{KeyCode, KeyEvent};
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::{Modifier, Style};
use ratatui::text::Span;
use ratatui::widgets::{Block, Borders, Clear, Paragraph, Wrap};

use super::super::widgets::form::{Event, Field, Form};
use super::super::widgets::text;
use crate::io::species_lookup::SpeciesLookup;
use crate::model::{SiteKind, Species, TreeStatus};
use crate::store::roster::TreeDetail;
use crate::store::tree_edit::{TreeEditText, validate_tree_edit};

/// The fields.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Key {
    Species,
    Street,
    HouseNumber,
    Site,
    Lat,
    Lon,
    PlantedOn,
    Notes,
}

/// The import column whose reasons belong to a field.
fn key_of_column(column: &str) -> Option<Key> {
    Some(match column {
        "species" => Key::Species,
        "street" => Key::Street,
        "house_number" => Key::HouseNumber,
        "site_kind" => Key::Site,
        "lat" => Key::Lat,
        "lon" => Key::Lon,
        "planted_on" => Key::PlantedOn,
        "notes" => Key::Notes,
        _ => return None,
    })
}

/// What a key asks of the app.
#[derive(Debug, Clone, PartialEq)]
pub enum Outcome {
    /// Open the species picker, narrowed by the text typed.
    PickSpecies(String),
    /// Open a picker over the focused choice's options.
    Pick {
        title: String,
        options: Vec<String>,
    },
    Submit(TreeEditText),
    Leave,
    Message(String),
}

/// Dialog state.
#[derive(Debug, Clone)]
pub struct State {
    pub tree_id: i64,
    pub label: String,
    pub form: Form<Key>,
    pub dirty: bool,
    /// (botanical, common) names for the species picker.
    pub species_names: Vec<(String, String)>,
    lookup: SpeciesLookup,
    status: TreeStatus,
    today: NaiveDate,
}

impl State {
    /// The dialog filled in with the tree's attributes.
    pub fn new(detail: &TreeDetail, species: &[Species], today: NaiveDate) -> Self {
        let s = &detail.summary;
        let site_options: Vec<String> = SiteKind::ALL
            .iter()
            .map(|k| k.as_str().to_string())
            .collect();
        let form = Form::new(vec![
            Field::text(
                Key::Species,
                "species",
                &s.species,
                "Enter: pick from the list",
            ),
            Field::text(Key::Street, "street", s.street.as_deref().unwrap_or(""), ""),
            Field::text(
                Key::HouseNumber,
                "house number",
                s.house_number.as_deref().unwrap_or(""),
                "",
            ),
            Field::choice(
                Key::Site,
                "site",
                site_options,
                detail
                    .site_kind
                    .and_then(|k| SiteKind::ALL.iter().position(|x| *x == k)),
                "←/→; Backspace: none",
            ),
            Field::text(
                Key::Lat,
                "latitude °",
                &detail.lat.map(|v| v.to_string()).unwrap_or_default(),
                "decimal degrees",
            ),
            Field::text(
                Key::Lon,
                "longitude °",
                &detail.lon.map(|v| v.to_string()).unwrap_or_default(),
                "decimal degrees",
            ),
            Field::text(
                Key::PlantedOn,
                "planted on",
                detail.planted_on.as_deref().unwrap_or(""),
                "YYYY-MM-DD",
            ),
            Field::text(
                Key::Notes,
                "notes",
                &detail
                    .notes
                    .clone()
                    .unwrap_or_default()
                    .replace('\n', " / "),
                "",
            ),
        ]);
        let mut state = State {
            tree_id: s.id,
            label: format!("tree {} · uid {} · {}", s.id, s.uid, s.status),
            form,
            dirty: false,
            species_names: species
                .iter()
                .map(|x| (x.scientific_name.clone(), x.common_name.clone()))
                .collect(),
            lookup: SpeciesLookup::new(species),
            status: s.status,
            today,
        };
        state.check();
        state
    }

    /// The text of every field.
    pub fn text(&self) -> TreeEditText {
        let f = &self.form;
        TreeEditText {
            species: f.text(Key::Species).to_string(),
            street: f.text(Key::Street).to_string(),
            house_number: f.text(Key::HouseNumber).to_string(),
            site_kind: f
                .chosen(Key::Site)
                .and_then(|i| SiteKind::ALL.get(i))
                .map(|k| k.as_str().to_string())
                .unwrap_or_default(),
            lat: f.text(Key::Lat).to_string(),
            lon: f.text(Key::Lon).to_string(),
            planted_on: f.text(Key::PlantedOn).to_string(),
            notes: f.text(Key::Notes).to_string(),
        }
    }

    /// Sets the species (from the picker) and moves on.
    pub fn set_species(&mut self, botanical: &str) {
        self.form.set_text(Key::Species, botanical);
        self.form.focus_on(Key::Street);
        self.dirty = true;
        self.check();
    }

    /// Sets the focused choice to option `index` (from a picker).
    pub fn choose(&mut self, index: usize) {
        if let Some(key) = self.form.focused_key() {
            self.form.set_choice(key, Some(index));
            self.dirty = true;
            self.check();
        }
    }

    /// Handles a key.
    pub fn handle_key(&mut self, key: KeyEvent) -> Option<Outcome> {
        if key.code == KeyCode::Enter && self.form.focused_key() == Some(Key::Species) {
            return Some(Outcome::PickSpecies(
                self.form.text(Key::Species).to_string(),
            ));
        }
        match self.form.handle_key(key) {
            Event::Moved | Event::Ignored => None,
            Event::Changed => {
                self.dirty = true;
                self.check();
                None
            }
            Event::Pick => self.form.focused().map(|f| Outcome::Pick {
                title: f.label.clone(),
                options: f.options().to_vec(),
            }),
            Event::Leave => Some(Outcome::Leave),
            Event::Submit => {
                if self.check() {
                    Some(Outcome::Submit(self.text()))
                } else {
                    Some(Outcome::Message(
                        "not saved: fix the fields marked ✗".to_string(),
                    ))
                }
            }
        }
    }

    /// Checks every field by the import rules; true when all pass.
    fn check(&mut self) -> bool {
        self.form.clear_errors();
        match validate_tree_edit(&self.text(), &self.lookup, self.status, self.today) {
            Ok(_) => true,
            Err(problems) => {
                for (column, reason) in problems {
                    if let Some(key) = key_of_column(&column)
                        && self.form.field(key).is_some_and(|f| f.error.is_none())
                    {
                        self.form.set_error(key, Some(reason));
                    }
                }
                false
            }
        }
    }
}

/// Draws the dialog centred over `area`.
pub fn render(state: &State, frame: &mut Frame<'_>, area: Rect) {
    let width = area.width.saturating_sub(4).min(90);
    let help = "No measurement is added. Ctrl-S or F2 saves · Tab/↑↓ move · Esc closes";
    let help_height = text::wrapped_height(help, width.saturating_sub(2));
    let errors = state
        .form
        .fields
        .iter()
        .filter(|f| f.error.is_some())
        .count() as u16;
    let height = (state.form.fields.len() as u16 + errors + help_height + 4).min(area.height);
    let popup = Rect {
        x: area.x + (area.width - width) / 2,
        y: area.y + (area.height - height) / 2,
        width,
        height,
    };
    frame.render_widget(Clear, popup);
    let block = Block::default()
        .borders(Borders::ALL)
        .title(format!(" Edit {} ", state.label));
    let inner = block.inner(popup);
    frame.render_widget(block, popup);
    let [fields, keys] =
        Layout::vertical([Constraint::Min(1), Constraint::Length(help_height)]).areas(inner);
    state.form.render(frame, fields, 12, true);
    frame.render_widget(
        Paragraph::new(Span::styled(help, Style::new().add_modifier(Modifier::DIM)))
            .wrap(Wrap { trim: true }),
        keys,
    );
}
