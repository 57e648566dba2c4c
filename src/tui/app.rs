//! Application state. A key becomes an [`Action`] (`App::action_for`); `App::update` applies it,
//! reading and writing through the [`Query`] facade; `render` draws from state only. Errors from the
//! store never crash the UI: they become the status message.

use std::collections::HashSet;

use chrono::{DateTime, Utc};
use ratatui::Frame;
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::{Modifier, Style};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Block, Borders, Clear, Paragraph, Wrap};
use tui_input::Input;

use super::query::Query;
use super::views::field_log::{self, FieldId, FormAction};
use super::views::plan_view::{self, PlanAction};
use super::views::roster::{self, Filter};
use super::views::tree_card;
use super::widgets::picker::{Outcome, Picker};
use super::widgets::text;
use crate::model::TreeStatus;
use crate::science::condition::ConditionBand;
use crate::store::StoreError;

/// Display choices.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct AppSettings {
    /// Show lengths in inches/feet instead of cm/m.
    pub us_units: bool,
    /// No colours (the `NO_COLOR` convention).
    pub no_color: bool,
}

/// The views.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum View {
    Roster,
    Card,
    FieldLog,
    Plan,
}

impl View {
    const ALL: [View; 4] = [View::Roster, View::Card, View::FieldLog, View::Plan];

    fn title(self) -> &'static str {
        match self {
            View::Roster => "1 Roster",
            View::Card => "2 Tree card",
            View::FieldLog => "3 Field log",
            View::Plan => "4 Plan view",
        }
    }
}

/// What the user asked for.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Action {
    Quit,
    ToggleHelp,
    Show(View),
    ToggleUnits,
    Roster(roster::Move),
    OpenCard,
    NextSort,
    ReverseSort,
    StartSearch,
    StartFilter,
    ClearFilters,
    NewTree,
    Remeasure,
    Card(tree_card::Scroll),
    StartRemoval,
    /// Ask to undo the latest change.
    StartUndo,
    /// A key for the field log form.
    FormKey(KeyEvent),
    /// A key for the plan view.
    PlanKey(KeyEvent),
    /// A key for the open popup.
    PopupKey(KeyEvent),
}

/// What a picker popup chooses.
#[derive(Debug, Clone, PartialEq, Eq)]
enum PickFor {
    Species,
    FilterKind,
    FilterValue(FilterKind),
}

/// Kinds of roster filter.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum FilterKind {
    Species,
    Street,
    Zone,
    Condition,
    Risk,
    OpenWork,
    Status,
}

const FILTER_KINDS: [(FilterKind, &str); 7] = [
    (FilterKind::Species, "species"),
    (FilterKind::Street, "street"),
    (FilterKind::Zone, "zone"),
    (FilterKind::Condition, "condition band"),
    (FilterKind::Risk, "risk rating at least"),
    (FilterKind::OpenWork, "has open work"),
    (FilterKind::Status, "status"),
];

/// What a one-line prompt is for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum PromptFor {
    Search,
    RemovalReason(i64),
}

/// What a yes/no question is for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum ConfirmFor {
    Quit,
    LeaveForm,
    Undo,
}

#[derive(Debug, Clone)]
enum Popup {
    Help,
    Pick(PickFor, Picker),
    Prompt(PromptFor, String, Input),
    Confirm(ConfirmFor, String),
}

/// The application state.
pub struct App {
    pub view: View,
    pub roster: roster::State,
    pub card: Option<tree_card::State>,
    pub form: field_log::State,
    pub plan: Option<plan_view::State>,
    pub settings: AppSettings,
    pub file_label: String,
    pub message: Option<String>,
    /// Background work is running (shown in the tab bar).
    pub busy: bool,
    popup: Option<Popup>,
    /// Where the field log returns to.
    form_return: View,
    quit: bool,
}

/// Keys per view: (keys, what they do). Drives the footer and the help.
pub fn keys_of(view: View) -> &'static [(&'static str, &'static str)] {
    match view {
        View::Roster => &[
            ("↑↓ PgUp PgDn g G", "move"),
            ("Enter", "tree card"),
            ("/", "search uid, street, species"),
            ("f F", "filter / clear filters"),
            ("s r", "sort by next column / reverse"),
            ("n", "new tree"),
            ("m", "re-measure selected"),
        ],
        View::Card => &[
            ("↑↓ PgUp PgDn", "scroll"),
            ("m", "re-measure"),
            ("x", "mark removed"),
            ("Esc", "back to roster"),
        ],
        View::FieldLog => &[
            ("Tab ↑↓", "next / previous field"),
            ("Enter", "species list (on species) / next field"),
            ("Ctrl-S F2", "save"),
            ("Esc", "leave"),
            ("F1", "help"),
        ],
        View::Plan => &[
            ("←↑↓→ hjkl", "pan"),
            ("+ -", "zoom"),
            ("c", "colour by"),
            (".", "centre on selected tree"),
            ("v", "area: first corner, then second"),
            ("Enter", "card of the tree under ╋"),
        ],
    }
}

/// Keys that work everywhere except while typing in the field log.
pub const GLOBAL_KEYS: &[(&str, &str)] = &[
    ("1 2 3 4", "roster, tree card, field log, plan view"),
    ("U", "metric / US units"),
    ("u", "undo the last change (asks first)"),
    ("?", "help"),
    ("q", "quit"),
];

impl App {
    /// A new app over the inventory behind `query`; `today` dates new field entries.
    pub fn new(
        query: &Query<'_>,
        settings: AppSettings,
        today: chrono::NaiveDate,
    ) -> Result<Self, StoreError> {
        Ok(App {
            view: View::Roster,
            roster: roster::State::new(query.roster_index()?),
            card: None,
            form: field_log::State::new(&query.species()?, today, settings.us_units),
            plan: None,
            settings,
            file_label: query.file_label(),
            message: None,
            busy: false,
            popup: None,
            form_return: View::Roster,
            quit: false,
        })
    }

    /// True once the user asked to quit.
    pub fn should_quit(&self) -> bool {
        self.quit
    }

    /// The action a key asks for, if any.
    pub fn action_for(&self, key: KeyEvent) -> Option<Action> {
        let control = key.modifiers.contains(KeyModifiers::CONTROL);
        if control && key.code == KeyCode::Char('c') {
            return Some(Action::Quit);
        }
        if self.popup.is_some() {
            return Some(Action::PopupKey(key));
        }
        if self.view == View::FieldLog {
            return match key.code {
                KeyCode::F(1) => Some(Action::ToggleHelp),
                KeyCode::Char('q') if control => Some(Action::Quit),
                _ => Some(Action::FormKey(key)),
            };
        }
        let global = match key.code {
            KeyCode::Char('q') => Some(Action::Quit),
            KeyCode::Char('?') => Some(Action::ToggleHelp),
            KeyCode::Char('1') => Some(Action::Show(View::Roster)),
            KeyCode::Char('2') => Some(Action::Show(View::Card)),
            KeyCode::Char('3') => Some(Action::NewTree),
            KeyCode::Char('4') => Some(Action::Show(View::Plan)),
            KeyCode::Char('U') => Some(Action::ToggleUnits),
            KeyCode::Char('u') => Some(Action::StartUndo),
            _ => None,
        };
        if global.is_some() {
            return global;
        }
        match self.view {
            View::Roster => match key.code {
                KeyCode::Enter => Some(Action::OpenCard),
                KeyCode::Char('/') => Some(Action::StartSearch),
                KeyCode::Char('f') => Some(Action::StartFilter),
                KeyCode::Char('F') => Some(Action::ClearFilters),
                KeyCode::Char('s') => Some(Action::NextSort),
                KeyCode::Char('r') => Some(Action::ReverseSort),
                KeyCode::Char('n') => Some(Action::NewTree),
                KeyCode::Char('m') => Some(Action::Remeasure),
                KeyCode::Esc => Some(Action::ClearFilters),
                _ => roster::handle_key(key).map(Action::Roster),
            },
            View::Card => match key.code {
                KeyCode::Esc | KeyCode::Left => Some(Action::Show(View::Roster)),
                KeyCode::Char('m') => Some(Action::Remeasure),
                KeyCode::Char('x') => Some(Action::StartRemoval),
                _ => tree_card::handle_key(key).map(Action::Card),
            },
            View::Plan => Some(Action::PlanKey(key)),
            View::FieldLog => None,
        }
    }

    /// Handles a key end to end: finds its action and applies it.
    pub fn on_key(&mut self, key: KeyEvent, query: &mut Query<'_>, now: DateTime<Utc>) {
        // A message stays until the next key.
        self.message = None;
        if let Some(action) = self.action_for(key) {
            self.update(action, query, now);
        }
    }

    /// Applies an action. Store errors become the status message.
    pub fn update(&mut self, action: Action, query: &mut Query<'_>, now: DateTime<Utc>) {
        if let Err(error) = self.apply(action, query, now) {
            self.message = Some(format!("error: {error}"));
        }
    }

    fn apply(
        &mut self,
        action: Action,
        query: &mut Query<'_>,
        now: DateTime<Utc>,
    ) -> Result<(), StoreError> {
        match action {
            Action::Quit => {
                if self.form.dirty {
                    self.popup = Some(Popup::Confirm(
                        ConfirmFor::Quit,
                        "The field log has unsaved entries. Quit anyway? (y / n)".to_string(),
                    ));
                } else {
                    self.quit = true;
                }
            }
            Action::ToggleHelp => {
                self.popup = match self.popup {
                    Some(Popup::Help) => None,
                    _ => Some(Popup::Help),
                }
            }
            Action::Show(View::Card) => self.open_card(query)?,
            Action::Show(View::Plan) => {
                if self.plan.is_none() {
                    self.plan = Some(plan_view::State::new(
                        &query.positions()?,
                        &self.roster.data,
                    ));
                }
                self.view = View::Plan;
            }
            Action::Show(view) => self.view = view,
            Action::ToggleUnits => {
                self.settings.us_units = !self.settings.us_units;
                self.form.set_units(self.settings.us_units);
                self.message = Some(format!(
                    "units: {}",
                    if self.settings.us_units {
                        "US customary (in, ft)"
                    } else {
                        "metric (cm, m)"
                    }
                ));
            }
            Action::Roster(movement) => self.roster.apply(movement),
            Action::OpenCard => self.open_card(query)?,
            Action::NextSort => self.roster.next_sort(),
            Action::ReverseSort => self.roster.reverse_sort(),
            Action::StartSearch => {
                let current = self.roster.search().to_string();
                self.popup = Some(Popup::Prompt(
                    PromptFor::Search,
                    "Search uid, street or species (Enter keeps, Esc clears)".to_string(),
                    Input::new(current),
                ));
            }
            Action::StartFilter => {
                let kinds = FILTER_KINDS
                    .iter()
                    .map(|(_, label)| (*label).to_string())
                    .collect();
                self.popup = Some(Popup::Pick(
                    PickFor::FilterKind,
                    Picker::new("Filter by", kinds, ""),
                ));
            }
            Action::ClearFilters => {
                self.roster.clear_filters();
                self.message = Some("filters and search cleared".to_string());
            }
            Action::NewTree => {
                if !matches!(self.form.mode, field_log::Mode::New) {
                    self.form.next_tree();
                }
                self.form_return = if self.view == View::FieldLog {
                    View::Roster
                } else {
                    self.view
                };
                self.view = View::FieldLog;
            }
            Action::Remeasure => self.start_remeasure(query)?,
            Action::Card(scroll) => {
                if let Some(card) = &mut self.card {
                    card.scroll(scroll);
                }
            }
            Action::StartRemoval => {
                if let Some(card) = &self.card {
                    if card.detail.summary.status == TreeStatus::Removed {
                        self.message = Some("this tree is already marked removed".to_string());
                    } else {
                        self.popup = Some(Popup::Prompt(
                            PromptFor::RemovalReason(card.detail.summary.id),
                            format!(
                                "Mark tree {} removed (kept in the inventory and its history). Reason, then Enter; Esc cancels. {}",
                                card.detail.summary.id,
                                crate::care::risk::CAUTION
                            ),
                            Input::default(),
                        ));
                    }
                }
            }
            Action::StartUndo => match query.last_change()? {
                None => self.message = Some("nothing to undo".to_string()),
                Some(change) => {
                    self.popup = Some(Popup::Confirm(
                        ConfirmFor::Undo,
                        format!("Undo {}? (y / n)", change.describe()),
                    ))
                }
            },
            Action::FormKey(key) => self.form_key(key, query, now)?,
            Action::PlanKey(key) => self.plan_key(key, query)?,
            Action::PopupKey(key) => self.popup_key(key, query, now)?,
        }
        Ok(())
    }

    fn open_card(&mut self, query: &mut Query<'_>) -> Result<(), StoreError> {
        let Some(id) = self.roster.selected_id() else {
            self.message = Some("no tree selected".to_string());
            return Ok(());
        };
        self.show_card(id, query)
    }

    fn show_card(&mut self, id: i64, query: &mut Query<'_>) -> Result<(), StoreError> {
        let Some(detail) = query.tree_detail(id)? else {
            self.message = Some(format!("tree {id} no longer exists"));
            return Ok(());
        };
        let benefits = query.tree_benefits(id);
        self.card = Some(tree_card::State {
            detail,
            benefits,
            scroll: 0,
        });
        self.view = View::Card;
        Ok(())
    }

    fn start_remeasure(&mut self, query: &mut Query<'_>) -> Result<(), StoreError> {
        let id = match (&self.card, self.view) {
            (Some(card), View::Card) => Some(card.detail.summary.id),
            _ => self.roster.selected_id(),
        };
        let Some(id) = id else {
            self.message = Some("no tree selected".to_string());
            return Ok(());
        };
        let Some(detail) = query.tree_detail(id)? else {
            return Ok(());
        };
        let s = &detail.summary;
        let mut attributes = vec![(FieldId::Species, s.species.clone())];
        let mut push = |field: FieldId, value: Option<String>| {
            if let Some(v) = value {
                attributes.push((field, v));
            }
        };
        push(FieldId::Street, s.street.clone());
        push(FieldId::HouseNumber, s.house_number.clone());
        push(
            FieldId::SiteKind,
            detail.site_kind.map(|k| k.as_str().to_string()),
        );
        push(FieldId::Lat, detail.lat.map(|v| v.to_string()));
        push(FieldId::Lon, detail.lon.map(|v| v.to_string()));
        let mut previous = Vec::new();
        if let Some(last) = detail.measurements.last() {
            previous.push((
                FieldId::Dbh,
                format!("{:.1} cm on {}", last.dbh_cm, last.measured_on),
            ));
            if let Some(h) = last.height_m {
                previous.push((FieldId::Height, format!("{h:.1} m")));
            }
            if let Some(w) = last.crown_width_m {
                previous.push((FieldId::CrownWidth, format!("{w:.1} m")));
            }
            if let Some(w) = last.crown_width2_m {
                previous.push((FieldId::CrownWidth2, format!("{w:.1} m")));
            }
            if let Some(b) = last.crown_base_m {
                previous.push((FieldId::CrownBase, format!("{b:.1} m")));
            }
            if let Some(d) = last.dieback_pct {
                previous.push((FieldId::Dieback, format!("{d:.0} %")));
            }
        }
        let label = format!(
            "tree {} ({} {})",
            s.id,
            s.species,
            s.street.clone().unwrap_or_default()
        );
        self.form
            .remeasure(s.id, &s.uid, &label, &attributes, &previous);
        self.form_return = if self.view == View::Card {
            View::Card
        } else {
            View::Roster
        };
        self.view = View::FieldLog;
        Ok(())
    }

    fn form_key(
        &mut self,
        key: KeyEvent,
        query: &mut Query<'_>,
        now: DateTime<Utc>,
    ) -> Result<(), StoreError> {
        match self.form.handle_key(key) {
            None => {}
            Some(FormAction::PickSpecies) => {
                let items: Vec<String> = self
                    .form
                    .species_names
                    .iter()
                    .map(|(botanical, common)| format!("{botanical} — {common}"))
                    .collect();
                let query_text = self.form.value(FieldId::Species).to_string();
                self.popup = Some(Popup::Pick(
                    PickFor::Species,
                    Picker::new("Species", items, &query_text),
                ));
            }
            Some(FormAction::Leave) => {
                if self.form.dirty {
                    self.popup = Some(Popup::Confirm(
                        ConfirmFor::LeaveForm,
                        "Leave the field log and drop what is typed? (y / n)".to_string(),
                    ));
                } else {
                    self.view = self.form_return;
                }
            }
            Some(FormAction::Save) => self.save_form(query, now)?,
        }
        Ok(())
    }

    fn save_form(&mut self, query: &mut Query<'_>, now: DateTime<Utc>) -> Result<(), StoreError> {
        self.form.tried_to_save();
        let Some(record) = self.form.record().cloned() else {
            self.message = Some("not saved: fix the fields marked ✗".to_string());
            return Ok(());
        };
        let actor = record
            .measured_by
            .clone()
            .unwrap_or_else(|| "field log".to_string());
        let tree_id = query.save_record(record, &actor, now)?;
        self.roster.reload(query.roster_index()?);
        self.plan = None;
        match self.form.mode.clone() {
            field_log::Mode::New => {
                self.roster.select_id(tree_id);
                self.message = Some(format!(
                    "saved new tree {tree_id} on {}; the next one keeps street, site, date and crew",
                    self.form.value(FieldId::Street)
                ));
                self.form.next_tree();
            }
            field_log::Mode::Remeasure { tree_id, .. } => {
                self.message = Some(format!("saved the new measurement of tree {tree_id}"));
                self.form.next_tree();
                self.roster.select_id(tree_id);
                self.show_card(tree_id, query)?;
            }
        }
        Ok(())
    }

    fn plan_key(&mut self, key: KeyEvent, query: &mut Query<'_>) -> Result<(), StoreError> {
        if key.code == KeyCode::Esc {
            self.view = View::Roster;
            return Ok(());
        }
        let Some(plan) = &mut self.plan else {
            return Ok(());
        };
        match plan.handle_key(key) {
            None => {}
            Some(PlanAction::CentreOnSelected) => {
                let found = self
                    .roster
                    .selected_id()
                    .is_some_and(|id| plan.centre_on(id));
                if !found {
                    self.message = Some("the selected tree has no position".to_string());
                }
            }
            Some(PlanAction::OpenNearest(id)) => {
                self.roster.select_id(id);
                self.show_card(id, query)?;
            }
            Some(PlanAction::SelectArea(ids)) => {
                let count = ids.len();
                self.roster
                    .add_filter(Filter::Ids(ids, "area from the plan view".to_string()));
                self.view = View::Roster;
                self.message = Some(format!(
                    "roster filtered to the {count} trees of the area (F clears)"
                ));
            }
        }
        Ok(())
    }

    fn popup_key(
        &mut self,
        key: KeyEvent,
        query: &mut Query<'_>,
        now: DateTime<Utc>,
    ) -> Result<(), StoreError> {
        let Some(popup) = self.popup.take() else {
            return Ok(());
        };
        match popup {
            Popup::Help => {}
            Popup::Confirm(purpose, text) => match key.code {
                KeyCode::Char('y') | KeyCode::Char('Y') => match purpose {
                    ConfirmFor::Quit => self.quit = true,
                    ConfirmFor::LeaveForm => {
                        self.form.next_tree();
                        self.view = self.form_return;
                    }
                    ConfirmFor::Undo => self.undo(query)?,
                },
                KeyCode::Char('n') | KeyCode::Char('N') | KeyCode::Esc => {}
                _ => self.popup = Some(Popup::Confirm(purpose, text)),
            },
            Popup::Prompt(purpose, prompt, mut input) => match key.code {
                KeyCode::Esc => {
                    if purpose == PromptFor::Search {
                        self.roster.set_search("", HashSet::new());
                    }
                }
                KeyCode::Enter => match purpose {
                    PromptFor::Search => self.apply_search(input.value(), query)?,
                    PromptFor::RemovalReason(id) => {
                        let reason = input.value().trim().to_string();
                        if reason.is_empty() {
                            self.message =
                                Some("a reason is needed to mark a tree removed".to_string());
                            self.popup = Some(Popup::Prompt(purpose, prompt, input));
                        } else {
                            query.mark_removed(id, now.date_naive(), &reason, "tree card", now)?;
                            self.roster.reload(query.roster_index()?);
                            self.plan = None;
                            self.show_card(id, query)?;
                            self.message =
                                Some(format!("tree {id} marked removed (kept in history)"));
                        }
                    }
                },
                _ => {
                    text::edit(&mut input, key);
                    if purpose == PromptFor::Search {
                        self.apply_search(input.value(), query)?;
                    }
                    self.popup = Some(Popup::Prompt(purpose, prompt, input));
                }
            },
            Popup::Pick(purpose, mut picker) => match picker.handle_key(key) {
                Outcome::Pending => self.popup = Some(Popup::Pick(purpose, picker)),
                Outcome::Cancelled => {}
                Outcome::Chosen(index) => self.picked(purpose, index),
            },
        }
        Ok(())
    }

    fn undo(&mut self, query: &mut Query<'_>) -> Result<(), StoreError> {
        match query.undo_last("undo (TUI)")? {
            None => self.message = Some("nothing to undo".to_string()),
            Some(change) => {
                self.roster.reload(query.roster_index()?);
                self.plan = None;
                if let Some(id) = self.card.as_ref().map(|c| c.detail.summary.id) {
                    let view = self.view;
                    match query.tree_detail(id)? {
                        Some(_) => {
                            self.show_card(id, query)?;
                            self.view = view;
                        }
                        None => {
                            self.card = None;
                            if self.view == View::Card {
                                self.view = View::Roster;
                            }
                        }
                    }
                }
                self.message = Some(format!("undone: {}", change.describe()));
            }
        }
        Ok(())
    }

    fn apply_search(&mut self, text: &str, query: &Query<'_>) -> Result<(), StoreError> {
        let uid_matches: HashSet<i64> = if text.trim().len() >= 2 {
            query
                .ids_by_uid_prefix(text.trim(), 1000)?
                .into_iter()
                .collect()
        } else {
            HashSet::new()
        };
        self.roster.set_search(text, uid_matches);
        Ok(())
    }

    fn picked(&mut self, purpose: PickFor, index: usize) {
        match purpose {
            PickFor::Species => {
                if let Some((botanical, _)) = self.form.species_names.get(index).cloned() {
                    self.form.set(FieldId::Species, &botanical);
                    self.form.focus += 1;
                }
            }
            PickFor::FilterKind => {
                let Some((kind, label)) = FILTER_KINDS.get(index).copied() else {
                    return;
                };
                if kind == FilterKind::OpenWork {
                    self.roster.add_filter(Filter::OpenWork);
                    return;
                }
                let data = &self.roster.data;
                let values: Vec<String> = match kind {
                    FilterKind::Species => data
                        .species
                        .iter()
                        .map(|(_, b, c)| format!("{b} — {c}"))
                        .collect(),
                    FilterKind::Street => data.streets.clone(),
                    FilterKind::Zone => data.zones.clone(),
                    FilterKind::Condition => ConditionBand::ALL
                        .iter()
                        .map(|b| b.as_str().to_string())
                        .collect(),
                    FilterKind::Risk => (1..=4).map(|r| roster::risk_word(r).to_string()).collect(),
                    FilterKind::Status => TreeStatus::ALL
                        .iter()
                        .map(|s| s.as_str().to_string())
                        .collect(),
                    FilterKind::OpenWork => Vec::new(),
                };
                self.popup = Some(Popup::Pick(
                    PickFor::FilterValue(kind),
                    Picker::new(label, values, ""),
                ));
            }
            PickFor::FilterValue(kind) => {
                let filter = match kind {
                    FilterKind::Species => Filter::Species(index as u32),
                    FilterKind::Street => Filter::Street(index as u32),
                    FilterKind::Zone => Filter::Zone(index as u32),
                    FilterKind::Condition => Filter::Band(ConditionBand::ALL[index.min(4)]),
                    FilterKind::Risk => Filter::RiskAtLeast(index as u8 + 1),
                    FilterKind::Status => {
                        Filter::Status(TreeStatus::ALL[index.min(TreeStatus::ALL.len() - 1)])
                    }
                    FilterKind::OpenWork => Filter::OpenWork,
                };
                self.roster.add_filter(filter);
            }
        }
    }

    /// Tells the views how many terminal rows there are (before `refresh`).
    pub fn set_viewport(&mut self, terminal_height: u16) {
        // Tabs (1) + table border and header (3) + status (1) + footer (1).
        self.roster
            .set_height(terminal_height.saturating_sub(6) as usize);
    }

    /// Fetches what the visible view shows (the roster: only its visible rows), and takes in the
    /// results of background work.
    pub fn refresh(&mut self, query: &mut Query<'_>) -> Result<(), StoreError> {
        if query.poll_background()
            && let Some(card) = &mut self.card
        {
            card.benefits = query.tree_benefits(card.detail.summary.id);
        }
        self.busy = query.busy();
        self.roster.refresh(query)
    }

    /// Draws the whole screen from state.
    pub fn render(&self, frame: &mut Frame<'_>) {
        let [tabs, body, status, footer] = Layout::vertical([
            Constraint::Length(1),
            Constraint::Min(3),
            Constraint::Length(1),
            Constraint::Length(1),
        ])
        .areas(frame.area());
        let mut spans = vec![Span::styled(
            " Streetwood ",
            Style::new().add_modifier(Modifier::BOLD),
        )];
        for view in View::ALL {
            let title = view.title();
            if view == self.view {
                spans.push(Span::styled(
                    format!("[{title}]"),
                    Style::new().add_modifier(Modifier::REVERSED | Modifier::BOLD),
                ));
            } else {
                spans.push(Span::raw(format!(" {title} ")));
            }
        }
        spans.push(Span::styled(
            format!("  {}", self.file_label),
            Style::new().add_modifier(Modifier::DIM),
        ));
        frame.render_widget(Paragraph::new(Line::from(spans)), tabs);
        match self.view {
            View::Roster => roster::render(&self.roster, self.settings, frame, body),
            View::Card => match &self.card {
                Some(card) => tree_card::render(card, self.settings, frame, body),
                None => frame.render_widget(
                    Paragraph::new("Pick a tree in the roster and press Enter."),
                    body,
                ),
            },
            View::FieldLog => field_log::render(&self.form, frame, body),
            View::Plan => match &self.plan {
                Some(plan) if !plan.is_empty() => {
                    plan_view::render(plan, self.settings.no_color, frame, body)
                }
                _ => frame.render_widget(Paragraph::new("No tree has a position yet."), body),
            },
        }
        let status_line = match &self.message {
            Some(message) => Line::from(format!(" {message}")),
            None if self.view == View::Roster => roster::status_line(&self.roster),
            None => Line::from(""),
        };
        frame.render_widget(Paragraph::new(status_line), status);
        frame.render_widget(Paragraph::new(footer_line(self.view)), footer);
        if let Some(popup) = &self.popup {
            render_popup(popup, self.view, frame);
        }
    }
}

fn footer_line(view: View) -> Line<'static> {
    let mut spans = Vec::new();
    let keys = keys_of(view).iter().take(4);
    let tail: &[(&str, &str)] = if view == View::FieldLog {
        &[]
    } else {
        &[("?", "help"), ("q", "quit")]
    };
    for (key, what) in keys.chain(tail.iter()) {
        spans.push(Span::styled(
            format!(" {key} "),
            Style::new().add_modifier(Modifier::REVERSED),
        ));
        spans.push(Span::raw(format!(" {what} ")));
    }
    Line::from(spans)
}

fn centred(area: Rect, width: u16, height: u16) -> Rect {
    let width = width.min(area.width);
    let height = height.min(area.height);
    Rect {
        x: area.x + (area.width - width) / 2,
        y: area.y + (area.height - height) / 2,
        width,
        height,
    }
}

fn render_popup(popup: &Popup, view: View, frame: &mut Frame<'_>) {
    let area = frame.area();
    match popup {
        Popup::Help => {
            let mut lines = vec![Line::from(Span::styled(
                "This view",
                Style::new().add_modifier(Modifier::BOLD),
            ))];
            for (key, what) in keys_of(view) {
                lines.push(Line::from(format!("  {key:<18} {what}")));
            }
            lines.push(Line::from(Span::styled(
                "Everywhere",
                Style::new().add_modifier(Modifier::BOLD),
            )));
            for (key, what) in GLOBAL_KEYS {
                lines.push(Line::from(format!("  {key:<18} {what}")));
            }
            lines.push(Line::from(
                "  Ctrl-C             quit at once (asks if the field log has unsaved entries)",
            ));
            lines.push(Line::from(""));
            lines.push(Line::from(crate::care::risk::CAUTION));
            lines.push(Line::from("Any key closes this help."));
            let popup = centred(area, 76, lines.len() as u16 + 4);
            frame.render_widget(Clear, popup);
            frame.render_widget(
                Paragraph::new(lines)
                    .wrap(Wrap { trim: false })
                    .block(Block::default().borders(Borders::ALL).title(" Help ")),
                popup,
            );
        }
        Popup::Pick(_, picker) => picker.render(frame, area),
        Popup::Prompt(_, prompt, input) => {
            let popup = centred(area, 72, 6);
            frame.render_widget(Clear, popup);
            let lines = vec![
                Line::from(prompt.clone()),
                Line::from(format!("> {}", text::with_cursor(input))),
            ];
            frame.render_widget(
                Paragraph::new(lines)
                    .wrap(Wrap { trim: true })
                    .block(Block::default().borders(Borders::ALL)),
                popup,
            );
        }
        Popup::Confirm(_, question) => {
            let popup = centred(area, 64, 4);
            frame.render_widget(Clear, popup);
            frame.render_widget(
                Paragraph::new(question.clone())
                    .wrap(Wrap { trim: true })
                    .block(Block::default().borders(Borders::ALL)),
                popup,
            );
        }
    }
}
