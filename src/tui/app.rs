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

mod analysis_flow;
mod care_flow;

use super::query::Query;
use super::views::assess_form;
use super::views::care;
use super::views::field_log::{self, FieldId, FormAction};
use super::views::plan_view::{self, PlanAction};
use super::views::roster::{self, Filter};
use super::views::studies;
use super::views::tree_card;
use super::views::tree_edit;
use super::views::work_form;
use super::views::year_summary;
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
    Care,
    /// The year summary: totals, charts and tables of the groups, the printable report.
    YearSummary,
    /// Removal studies against their replanting plans.
    Studies,
    /// The risk assessment form (opened from the tree card or the care view; not a tab).
    Assess,
}

impl View {
    const ALL: [View; 7] = [
        View::Roster,
        View::Card,
        View::FieldLog,
        View::Plan,
        View::Care,
        View::YearSummary,
        View::Studies,
    ];

    fn title(self) -> &'static str {
        match self {
            View::Roster => "1 Roster",
            View::Card => "2 Tree card",
            View::FieldLog => "3 Field log",
            View::Plan => "4 Plan view",
            View::Care => "5 Care",
            View::YearSummary => "6 Summary",
            View::Studies => "7 Studies",
            View::Assess => "Assess",
        }
    }

    /// The tab's title when the full ones do not fit.
    fn short_title(self) -> &'static str {
        match self {
            View::Roster => "1 Roster",
            View::Card => "2 Card",
            View::FieldLog => "3 Log",
            View::Plan => "4 Plan",
            View::Care => "5 Care",
            View::YearSummary => "6 Summary",
            View::Studies => "7 Studies",
            View::Assess => "Assess",
        }
    }

    /// Views that take every key as typing (global keys need Ctrl or F-keys there).
    fn is_form(self) -> bool {
        matches!(self, View::FieldLog | View::Assess)
    }
}

/// What a work-order dialog opened from the work queue does.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum WorkStep {
    Schedule,
    Done,
    Cancel,
    Edit,
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
    /// Ask for the name of a removal study of the area chosen on the plan view.
    StartAreaStudy,
    /// Ask to undo the latest change.
    StartUndo,
    /// A key for the field log form.
    FormKey(KeyEvent),
    /// A key for the plan view.
    PlanKey(KeyEvent),
    /// A key for the open popup.
    PopupKey(KeyEvent),
    /// Care view: move in the list shown.
    CareMove(roster::Move),
    /// Care view: show the other list.
    CareToggle,
    /// Care view: show this list.
    CareShow(care::List),
    CareFilter,
    CareClearFilters,
    CareOverdue,
    /// Assess the tree of the card or of the care row.
    StartAssess,
    /// Add a work order to the tree of the card or of the care row.
    StartAddWork,
    /// Schedule, finish, cancel or edit the selected work order.
    StartWork(WorkStep),
    /// Edit the card's tree's attributes.
    StartEditTree,
    /// Show the card's tree's work orders in the work queue.
    ShowTreeWork,
    /// A key for the assessment form.
    AssessKey(KeyEvent),
    /// A key for the open dialog (work order, tree attributes).
    DialogKey(KeyEvent),
    /// A key of the year summary.
    Summary(year_summary::Key),
    /// Year summary: write the printable HTML report (asks for the file first).
    StartExport,
    /// A key of the studies view.
    Studies(studies::Key),
}

/// What a picker popup chooses.
#[derive(Debug, Clone, PartialEq, Eq)]
enum PickFor {
    Species,
    FilterKind,
    FilterValue(FilterKind),
    CareFilterKind,
    CareFilterValue(care::FilterKind),
    /// A choice of the assessment form's focused field.
    AssessChoice,
    /// A choice of the dialog's focused field.
    DialogChoice,
    /// The species of the tree-attributes dialog.
    EditSpecies,
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
    /// The file the year summary's HTML report goes to.
    ExportPath,
    /// The name of a new removal study of the plan-view area.
    StudyName,
}

/// What a yes/no question is for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum ConfirmFor {
    Quit,
    LeaveForm,
    Undo,
    LeaveAssess,
    CloseDialog,
}

/// A dialog drawn over the view (its keys come first, after a popup's).
#[derive(Debug, Clone)]
enum Dialog {
    Work(Box<work_form::State>),
    EditTree(Box<tree_edit::State>),
}

impl Dialog {
    fn dirty(&self) -> bool {
        match self {
            Dialog::Work(d) => d.dirty,
            Dialog::EditTree(d) => d.dirty,
        }
    }
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
    /// The care view (loaded when first shown).
    pub care: Option<care::State>,
    /// The assessment form in progress.
    pub assess: Option<assess_form::State>,
    /// The year summary (made when first shown).
    pub summary: Option<year_summary::State>,
    /// The studies view (made when first shown).
    pub studies: Option<studies::State>,
    pub settings: AppSettings,
    pub file_label: String,
    pub message: Option<String>,
    /// Background work is running (shown in the tab bar).
    pub busy: bool,
    /// The roster index is still loading (the first frame does not wait for it).
    pub loading_roster: Option<i64>,
    popup: Option<Popup>,
    /// Where the field log returns to.
    form_return: View,
    /// Where Esc on the tree card goes.
    card_return: View,
    /// Where the assessment form returns to.
    assess_return: View,
    /// The assessor of the last saved assessment (the next form starts with it).
    last_assessor: String,
    dialog: Option<Dialog>,
    /// The date care lists and forms are measured against.
    today: chrono::NaiveDate,
    quit: bool,
}

/// One key of a view: the keys, a short label for the footer, and what they do (for the help).
pub type KeyHelp = (&'static str, &'static str, &'static str);

/// Keys per view. Drives the footer (short labels, as many as fit) and the help (every key).
pub fn keys_of(view: View) -> &'static [KeyHelp] {
    match view {
        View::Roster => &[
            ("↑↓ PgUp PgDn g G", "move", "move"),
            ("Enter", "tree card", "tree card"),
            ("/", "search", "search uid, street, species"),
            ("f F", "filter", "filter / clear filters"),
            ("s r", "sort", "sort by next column / reverse"),
            ("n", "new tree", "new tree"),
            ("m", "re-measure", "re-measure selected"),
            (
                "S",
                "study of area",
                "start a removal study of the area chosen on the plan view",
            ),
        ],
        View::Card => &[
            ("↑↓ PgUp PgDn", "scroll", "scroll"),
            ("a", "assess", "assess risk"),
            ("w", "add work", "add a work order"),
            (
                "o",
                "its work",
                "this tree's work orders (schedule, done, cancel, edit)",
            ),
            ("e", "edit", "edit attributes (no measurement)"),
            ("m", "re-measure", "re-measure"),
            ("x", "removed", "mark removed"),
            ("Esc", "back", "back"),
        ],
        View::FieldLog => &[
            ("Tab ↑↓", "next / previous field", "next / previous field"),
            (
                "Enter",
                "species list / next",
                "species list (on species) / next field",
            ),
            ("Ctrl-S F2", "save", "save"),
            ("Esc", "leave", "leave"),
            ("F1", "help", "help"),
        ],
        View::Plan => &[
            ("←↑↓→ hjkl", "pan", "pan"),
            ("+ -", "zoom", "zoom"),
            ("c", "colour by", "colour by"),
            (".", "centre on selected", "centre on selected tree"),
            ("v", "area", "area: first corner, then second"),
            ("Enter", "card under ╋", "card of the tree under ╋"),
        ],
        View::Care => &[
            (
                "Tab",
                "switch list",
                "switch list (w work queue, l watchlist)",
            ),
            ("Enter", "card", "tree card of the row"),
            ("a", "assess", "assess the row's tree"),
            (
                "s d c e",
                "order",
                "work order: schedule / done / cancel / edit",
            ),
            ("n", "new order", "new work order for the row's tree"),
            ("f F", "filter", "filter / clear filters"),
            ("o", "overdue", "overdue only / all"),
            ("↑↓ PgUp PgDn g G", "move", "move"),
        ],
        View::YearSummary => &[
            (
                "b",
                "group by",
                "group by: species (top 10 + other), zone, street, DBH class, condition band",
            ),
            (
                "m",
                "measure",
                "measure: trees, carbon, CO2e, rain, transpiration, cooling, value",
            ),
            (
                "x",
                "export",
                "write the printable HTML report (asks for the file)",
            ),
            ("[ ]", "year", "earlier / later year of weather held"),
            ("↑↓ PgUp PgDn g G", "move", "move in the table of groups"),
        ],
        View::Studies => &[
            ("↑↓", "study", "choose a study in the list"),
            ("Enter", "open", "run and show the chosen study"),
            (
                "b",
                "benefit",
                "benefit charted: carbon, CO2e, rain, cooling, value",
            ),
            (
                "m",
                "expected / MC",
                "expected values / Monte Carlo runs (P10–P90 band)",
            ),
            ("PgUp PgDn", "scroll", "scroll the side-by-side table"),
            ("← →", "plans", "other plans when they do not all fit"),
            (
                "r",
                "reload",
                "reload the list (make studies: streetwood study …)",
            ),
        ],
        View::Assess => &[
            ("Tab ↑↓", "field", "next / previous field"),
            (
                "← →",
                "choose",
                "change a choice (or type its first letter)",
            ),
            (
                "Ctrl-S",
                "save",
                "save (F2 too; high or extreme: proposed work order)",
            ),
            ("Esc", "leave", "leave (asks if anything is typed)"),
            ("Enter", "list", "list of choices / next field"),
            ("Ctrl-N", "add mode", "add a failure mode"),
            ("Ctrl-O", "add option", "add a mitigation option"),
            ("Ctrl-D", "remove", "remove the focused mode or option"),
            (
                "Ctrl-U Ctrl-W",
                "clear",
                "clear the text field / its last word",
            ),
            (
                "y e s",
                "proposal",
                "proposed order: create / edit / save without it",
            ),
            ("F1", "help", "help"),
        ],
    }
}

/// Keys of the work-order and tree-attributes dialogs.
pub const DIALOG_KEYS: &[KeyHelp] = &[
    ("Tab ↑↓", "field", "next / previous field"),
    ("← →", "choose", "change a choice; Backspace clears it"),
    (
        "Ctrl-U Ctrl-W",
        "clear",
        "clear the text field / its last word",
    ),
    ("Ctrl-S", "save", "save (F2 too)"),
    ("Esc", "close", "close (asks if anything is typed)"),
    (
        "Enter",
        "list",
        "list of choices (species list on species) / next field",
    ),
    ("F1", "help", "help"),
];

/// Keys that work everywhere except while typing in the field log.
pub const GLOBAL_KEYS: &[(&str, &str)] = &[
    (
        "1 2 3 4 5 6 7",
        "roster, card, log, plan, care, summary, studies",
    ),
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
        App::new_with_index(query, settings, today, query.roster_index()?)
    }

    fn new_empty(
        query: &Query<'_>,
        settings: AppSettings,
        today: chrono::NaiveDate,
    ) -> Result<Self, StoreError> {
        Ok(App {
            view: View::Roster,
            roster: roster::State::default(),
            card: None,
            form: field_log::State::new(&query.species()?, today, settings.us_units),
            plan: None,
            care: None,
            assess: None,
            summary: None,
            studies: None,
            settings,
            file_label: query.file_label(),
            message: None,
            busy: false,
            loading_roster: None,
            popup: None,
            form_return: View::Roster,
            card_return: View::Roster,
            assess_return: View::Card,
            last_assessor: String::new(),
            dialog: None,
            today,
            quit: false,
        })
    }

    /// A new app whose roster fills in when the index loaded off the UI thread arrives (see
    /// [`Query::start_roster_index`]); everything else works at once.
    pub fn new_loading(
        query: &mut Query<'_>,
        settings: AppSettings,
        today: chrono::NaiveDate,
    ) -> Result<Self, StoreError> {
        let trees = query.tree_count_estimate()?;
        query.start_roster_index();
        let mut app = App::new_with_index(query, settings, today, Default::default())?;
        app.loading_roster = Some(trees);
        Ok(app)
    }

    fn new_with_index(
        query: &Query<'_>,
        settings: AppSettings,
        today: chrono::NaiveDate,
        index: crate::store::roster::RosterIndexData,
    ) -> Result<Self, StoreError> {
        let mut app = App::new_empty(query, settings, today)?;
        app.roster = roster::State::new(index);
        Ok(app)
    }

    /// After a write about these trees: only their roster entries are read again (the whole index
    /// when a new species, street or zone name appears), so an edit stays instant on a city's
    /// inventory. While the index is still loading, loading starts again so the edit is in it.
    pub(super) fn refresh_roster_entries(
        &mut self,
        ids: &[i64],
        query: &mut Query<'_>,
    ) -> Result<(), StoreError> {
        if self.loading_roster.is_some() {
            query.start_roster_index();
            return Ok(());
        }
        let mut data = std::mem::take(&mut self.roster.data);
        match query.roster_update(&mut data, ids) {
            Ok(true) => self.roster.reload(data),
            Ok(false) => self.roster.reload(query.roster_index()?),
            Err(error) => {
                self.roster.reload(data);
                return Err(error);
            }
        }
        Ok(())
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
        if self.dialog.is_some() || self.view.is_form() {
            return match key.code {
                KeyCode::F(1) => Some(Action::ToggleHelp),
                KeyCode::Char('q') if control => Some(Action::Quit),
                _ if self.dialog.is_some() => Some(Action::DialogKey(key)),
                _ if self.view == View::Assess => Some(Action::AssessKey(key)),
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
            KeyCode::Char('5') => Some(Action::Show(View::Care)),
            KeyCode::Char('6') => Some(Action::Show(View::YearSummary)),
            KeyCode::Char('7') => Some(Action::Show(View::Studies)),
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
                KeyCode::Char('S') => Some(Action::StartAreaStudy),
                KeyCode::Esc => Some(Action::ClearFilters),
                _ => roster::handle_key(key).map(Action::Roster),
            },
            View::Card => match key.code {
                KeyCode::Esc | KeyCode::Left => Some(Action::Show(self.card_return)),
                KeyCode::Char('m') => Some(Action::Remeasure),
                KeyCode::Char('x') => Some(Action::StartRemoval),
                KeyCode::Char('a') => Some(Action::StartAssess),
                KeyCode::Char('w') => Some(Action::StartAddWork),
                KeyCode::Char('e') => Some(Action::StartEditTree),
                KeyCode::Char('o') => Some(Action::ShowTreeWork),
                _ => tree_card::handle_key(key).map(Action::Card),
            },
            View::Plan => Some(Action::PlanKey(key)),
            View::Care => match key.code {
                KeyCode::Tab | KeyCode::BackTab => Some(Action::CareToggle),
                KeyCode::Char('w') => Some(Action::CareShow(care::List::Work)),
                KeyCode::Char('l') => Some(Action::CareShow(care::List::Watch)),
                KeyCode::Enter => Some(Action::OpenCard),
                KeyCode::Char('a') => Some(Action::StartAssess),
                KeyCode::Char('n') => Some(Action::StartAddWork),
                KeyCode::Char('s') => Some(Action::StartWork(WorkStep::Schedule)),
                KeyCode::Char('d') => Some(Action::StartWork(WorkStep::Done)),
                KeyCode::Char('c') => Some(Action::StartWork(WorkStep::Cancel)),
                KeyCode::Char('e') => Some(Action::StartWork(WorkStep::Edit)),
                KeyCode::Char('f') => Some(Action::CareFilter),
                KeyCode::Char('F') => Some(Action::CareClearFilters),
                KeyCode::Char('o') => Some(Action::CareOverdue),
                _ => roster::handle_key(key).map(Action::CareMove),
            },
            View::YearSummary => match key.code {
                KeyCode::Char('x') => Some(Action::StartExport),
                _ => year_summary::handle_key(key).map(Action::Summary),
            },
            View::Studies => studies::handle_key(key).map(Action::Studies),
            View::FieldLog | View::Assess => None,
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
                let unsaved = [
                    (self.form.dirty, "The field log has unsaved entries."),
                    (
                        self.assess.as_ref().is_some_and(|a| a.dirty),
                        "The risk assessment is not saved.",
                    ),
                    (
                        self.dialog.as_ref().is_some_and(Dialog::dirty),
                        "The open dialog is not saved.",
                    ),
                ];
                if let Some((_, what)) = unsaved.iter().find(|(dirty, _)| *dirty) {
                    self.popup = Some(Popup::Confirm(
                        ConfirmFor::Quit,
                        format!("{what} Quit anyway? (y / n)"),
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
            Action::Show(View::Care) => self.show_care(query)?,
            Action::Show(View::YearSummary) => self.show_summary(query)?,
            Action::Show(View::Studies) => self.show_studies(query)?,
            Action::Show(View::Assess) => {
                if self.assess.is_some() {
                    self.view = View::Assess;
                } else {
                    self.message = Some("no assessment in progress".to_string());
                }
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
            Action::OpenCard if self.view == View::Care => self.open_care_card(query)?,
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
            Action::StartAreaStudy => {
                let ids = self.area_standing_ids();
                if ids.is_empty() {
                    self.message = Some(
                        "choose an area first: 4 plan view, v at one corner, move, v at the other"
                            .to_string(),
                    );
                } else {
                    self.popup = Some(Popup::Prompt(
                        PromptFor::StudyName,
                        format!(
                            "Name of a new removal study of the {} standing trees in the area (Enter creates it, Esc cancels). {}",
                            ids.len(),
                            crate::care::risk::CAUTION
                        ),
                        Input::default(),
                    ));
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
            Action::CareMove(movement) => {
                if let Some(care) = &mut self.care {
                    care.apply(movement);
                }
            }
            Action::CareToggle => {
                if let Some(care) = &mut self.care {
                    care.toggle();
                }
            }
            Action::CareShow(list) => {
                if let Some(care) = &mut self.care {
                    care.show(list);
                }
            }
            Action::CareFilter => self.start_care_filter(),
            Action::CareClearFilters => {
                if let Some(care) = &mut self.care {
                    care.clear_filters();
                    self.message = Some("filters cleared".to_string());
                }
            }
            Action::CareOverdue => {
                if let Some(care) = &mut self.care {
                    let on = care.toggle_overdue();
                    self.message = Some(
                        if on {
                            "showing overdue rows only (o shows all)"
                        } else {
                            "showing all rows"
                        }
                        .to_string(),
                    );
                }
            }
            Action::StartAssess => self.start_assess(query)?,
            Action::StartAddWork => self.start_add_work(query)?,
            Action::StartWork(step) => self.start_work(step),
            Action::StartEditTree => self.start_edit_tree(query)?,
            Action::ShowTreeWork => self.show_tree_work(query)?,
            Action::AssessKey(key) => self.assess_key(key, query, now)?,
            Action::DialogKey(key) => self.dialog_key(key, query, now)?,
            Action::Summary(key) => self.summary_key(key, query),
            Action::StartExport => self.start_export(),
            Action::Studies(key) => self.studies_key(key, query)?,
        }
        Ok(())
    }

    fn open_card(&mut self, query: &mut Query<'_>) -> Result<(), StoreError> {
        let Some(id) = self.roster.selected_id() else {
            self.message = Some("no tree selected".to_string());
            return Ok(());
        };
        self.card_return = View::Roster;
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
        self.refresh_roster_entries(&[tree_id], query)?;
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
                    "roster filtered to the {count} trees of the area (F clears; S starts a removal study of them)"
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
                    ConfirmFor::LeaveAssess => self.leave_assess(query)?,
                    ConfirmFor::CloseDialog => self.dialog = None,
                },
                KeyCode::Char('n') | KeyCode::Char('N') | KeyCode::Esc => {}
                _ => self.popup = Some(Popup::Confirm(purpose, text)),
            },
            Popup::Prompt(purpose, prompt, mut input) => match key.code {
                KeyCode::Esc => {
                    if purpose == PromptFor::Search {
                        self.roster.set_search("", HashSet::new());
                    }
                    if purpose == PromptFor::ExportPath {
                        self.message = Some("report not written".to_string());
                    }
                }
                KeyCode::Enter => match purpose {
                    PromptFor::Search => self.apply_search(input.value(), query)?,
                    PromptFor::ExportPath => {
                        if !self.export_to(input.value(), query) {
                            self.popup = Some(Popup::Prompt(purpose, prompt, input));
                        }
                    }
                    PromptFor::StudyName => {
                        let ids = self.area_standing_ids();
                        match query.create_study_of(input.value(), &ids, now) {
                            Ok(added) => {
                                self.message = Some(format!(
                                    "created the removal study '{}' of {added} standing trees; add replanting plans with `streetwood study plan`, then see 7 Studies",
                                    input.value().trim()
                                ));
                            }
                            Err(error) => {
                                self.message = Some(format!("not created: {error}"));
                                self.popup = Some(Popup::Prompt(purpose, prompt, input));
                            }
                        }
                    }
                    PromptFor::RemovalReason(id) => {
                        let reason = input.value().trim().to_string();
                        if reason.is_empty() {
                            self.message =
                                Some("a reason is needed to mark a tree removed".to_string());
                            self.popup = Some(Popup::Prompt(purpose, prompt, input));
                        } else {
                            query.mark_removed(id, now.date_naive(), &reason, "tree card", now)?;
                            self.refresh_roster_entries(&[id], query)?;
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
                self.reload_care(query)?;
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
                self.message = Some(match change.undo_caveat() {
                    Some(caveat) => format!("undone: {}; note: {caveat}", change.describe()),
                    None => format!("undone: {}", change.describe()),
                });
            }
        }
        Ok(())
    }

    /// The standing trees of the plan-view area the roster is filtered to (empty when none).
    fn area_standing_ids(&self) -> Vec<i64> {
        let Some(ids) = self.roster.filters.iter().find_map(|f| match f {
            Filter::Ids(ids, _) => Some(ids),
            _ => None,
        }) else {
            return Vec::new();
        };
        let mut standing: Vec<i64> = self
            .roster
            .data
            .entries
            .iter()
            .filter(|e| e.status == TreeStatus::Standing && ids.contains(&e.id))
            .map(|e| e.id)
            .collect();
        standing.sort_unstable();
        standing
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
            PickFor::CareFilterKind => {
                let Some(care) = &self.care else { return };
                let Some((kind, label)) = care.filter_kinds().get(index).copied() else {
                    return;
                };
                let values = care.filter_values(kind);
                self.popup = Some(Popup::Pick(
                    PickFor::CareFilterValue(kind),
                    Picker::new(label, values, ""),
                ));
            }
            PickFor::CareFilterValue(kind) => {
                if let Some(care) = &mut self.care {
                    care.set_filter(kind, index);
                }
            }
            PickFor::AssessChoice => {
                if let Some(assess) = &mut self.assess {
                    assess.choose(index);
                }
            }
            PickFor::DialogChoice => match &mut self.dialog {
                Some(Dialog::Work(d)) => d.choose(index),
                Some(Dialog::EditTree(d)) => d.choose(index),
                None => {}
            },
            PickFor::EditSpecies => {
                if let Some(Dialog::EditTree(d)) = &mut self.dialog
                    && let Some((botanical, _)) = d.species_names.get(index).cloned()
                {
                    d.set_species(&botanical);
                }
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
        // Care: tabs, status, footer, list switch (4) + counts and caution (2 each) + header (1).
        if let Some(care) = &mut self.care {
            care.set_height(terminal_height.saturating_sub(9) as usize);
        }
    }

    /// Fetches what the visible view shows (the roster: only its visible rows), and takes in the
    /// results of background work.
    pub fn refresh(&mut self, query: &mut Query<'_>) -> Result<(), StoreError> {
        if let Some(index) = query.take_roster_index() {
            self.loading_roster = None;
            match index {
                Ok((index, orders)) => {
                    self.roster.reload(index);
                    self.roster.adopt_sort_orders(orders);
                    self.plan = None;
                }
                Err(error) => {
                    self.message = Some(format!("error: the roster could not load: {error}"))
                }
            }
        }
        if query.poll_background()
            && let Some(card) = &mut self.card
        {
            card.benefits = query.tree_benefits(card.detail.summary.id);
        }
        self.sync_analysis(query);
        self.busy = query.busy();
        self.roster.refresh(query)
    }

    /// Draws the whole screen from state.
    pub fn render(&self, frame: &mut Frame<'_>) {
        // A long message takes a second line (the body gives it up while the message shows).
        let status_height = self.message.as_ref().map_or(1, |m| {
            text::wrapped_height(&format!(" {m}"), frame.area().width).clamp(1, 2)
        });
        let [tabs, body, status, footer] = Layout::vertical([
            Constraint::Length(1),
            Constraint::Min(3),
            Constraint::Length(status_height),
            Constraint::Length(1),
        ])
        .areas(frame.area());
        let mut spans = vec![Span::styled(
            " Streetwood ",
            Style::new().add_modifier(Modifier::BOLD),
        )];
        let shown_tabs: Vec<View> = View::ALL
            .iter()
            .copied()
            .chain((self.view == View::Assess).then_some(View::Assess))
            .collect();
        let full_width: usize = 12
            + shown_tabs
                .iter()
                .map(|v| v.title().chars().count() + 2)
                .sum::<usize>();
        let width = usize::from(frame.area().width);
        let short = full_width > width;
        // Without room for the short titles too, the name goes (the tabs and the current view stay).
        let short_width: usize = 12
            + shown_tabs
                .iter()
                .map(|v| v.short_title().chars().count() + 2)
                .sum::<usize>();
        if short_width > width {
            spans.clear();
        }
        for view in shown_tabs {
            let title = if short {
                view.short_title()
            } else {
                view.title()
            };
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
            View::Care => match &self.care {
                Some(care) => care::render(care, self.settings.no_color, frame, body),
                None => {
                    frame.render_widget(Paragraph::new("Press 5 to load the care lists."), body)
                }
            },
            View::Assess => match &self.assess {
                Some(assess) => assess_form::render(assess, self.settings.no_color, frame, body),
                None => frame.render_widget(Paragraph::new("No assessment in progress."), body),
            },
            View::YearSummary => match &self.summary {
                Some(summary) => year_summary::render(summary, self.settings.no_color, frame, body),
                None => frame.render_widget(Paragraph::new("Press 6 for the year summary."), body),
            },
            View::Studies => match &self.studies {
                Some(s) => studies::render(s, self.settings.no_color, frame, body),
                None => frame.render_widget(Paragraph::new("Press 7 for the studies."), body),
            },
        }
        let status_line = match &self.message {
            Some(message) => Line::from(format!(" {message}")),
            None if self.view == View::Roster && self.loading_roster.is_some() => {
                Line::from(format!(
                    " ⧗ loading the roster of ~{} trees… (the field log and other views work meanwhile)",
                    self.loading_roster.unwrap_or_default()
                ))
            }
            None if self.view == View::Roster => roster::status_line(&self.roster),
            None if self.view == View::Care => self
                .care
                .as_ref()
                .map(care::status_line)
                .unwrap_or_default(),
            None if self.view == View::YearSummary => self
                .summary
                .as_ref()
                .map(year_summary::status_line)
                .unwrap_or_default(),
            None if self.view == View::Studies => self
                .studies
                .as_ref()
                .map(studies::status_line)
                .unwrap_or_default(),
            None => Line::from(""),
        };
        frame.render_widget(
            Paragraph::new(status_line).wrap(Wrap { trim: false }),
            status,
        );
        let (keys, form) = match &self.dialog {
            Some(_) => (DIALOG_KEYS, true),
            None => (keys_of(self.view), self.view.is_form()),
        };
        frame.render_widget(
            Paragraph::new(footer_line(keys, form, footer.width)),
            footer,
        );
        match &self.dialog {
            Some(Dialog::Work(d)) => work_form::render(d, frame, body),
            Some(Dialog::EditTree(d)) => tree_edit::render(d, frame, body),
            None => {}
        }
        if let Some(popup) = &self.popup {
            render_popup(popup, keys, form, frame);
        }
    }
}

/// The footer: as many of the view's keys as fit, then help and quit (in forms: F1 help only).
fn footer_line(keys: &[KeyHelp], form: bool, width: u16) -> Line<'static> {
    let tail: &[(&str, &str)] = if form {
        &[]
    } else {
        &[("?", "help"), ("q", "quit")]
    };
    let cell = |key: &str, what: &str| key.chars().count() + what.chars().count() + 4;
    let tail_width: usize = tail.iter().map(|(k, w)| cell(k, w)).sum();
    let mut room = usize::from(width).saturating_sub(tail_width);
    let mut chosen = Vec::new();
    for (key, short, _) in keys {
        let needed = cell(key, short);
        if needed > room {
            break;
        }
        room -= needed;
        chosen.push((*key, *short));
    }
    let mut spans = Vec::new();
    for (key, what) in chosen.iter().chain(tail.iter()) {
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

fn render_popup(popup: &Popup, keys: &[KeyHelp], form: bool, frame: &mut Frame<'_>) {
    let area = frame.area();
    match popup {
        Popup::Help => {
            let mut lines = vec![Line::from(Span::styled(
                "This view",
                Style::new().add_modifier(Modifier::BOLD),
            ))];
            for (key, _, what) in keys {
                lines.push(Line::from(format!("  {key:<18} {what}")));
            }
            if form {
                lines.push(Line::from(
                    "  Ctrl-Q Ctrl-C      quit (asks if anything is unsaved)",
                ));
            } else {
                lines.push(Line::from(Span::styled(
                    "Everywhere",
                    Style::new().add_modifier(Modifier::BOLD),
                )));
                for (key, what) in GLOBAL_KEYS {
                    lines.push(Line::from(format!("  {key:<18} {what}")));
                }
                lines.push(Line::from(
                    "  Ctrl-C             quit at once (asks if anything is unsaved)",
                ));
            }
            lines.push(Line::from(""));
            lines.push(Line::from(crate::care::risk::CAUTION));
            lines.push(Line::from("Any key closes this help."));
            let height: u16 = lines
                .iter()
                .map(|l| text::wrapped_height(&l.to_string(), 74))
                .sum();
            let popup = centred(area, 76, height + 2);
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
