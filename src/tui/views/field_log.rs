//! Field log: add a tree or re-measure one. Every field is checked as it is typed, by the same rules as
//! the trees CSV import, with the reason shown next to the field; numbers take units (`30`, `30 cm`,
//! `12 in`, `40 ft`); stems as `22;18;9`; street, date, site and crew carry over to the next tree.

use chrono::NaiveDate;
use ratatui::Frame;
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::{Modifier, Style};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Block, Borders, Paragraph};
use tui_input::Input;

use super::super::widgets::text;
use crate::io::species_lookup::SpeciesLookup;
use crate::io::trees_csv::{Column, FieldValue, ValidationContext, validate_tree_fields};
use crate::model::{Species, TreeRecord};
use crate::science::units::{LengthUnit, parse_length};

/// The form's fields, in order.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FieldId {
    Species,
    Street,
    HouseNumber,
    SiteKind,
    Lat,
    Lon,
    MeasuredOn,
    Dbh,
    Height,
    CrownWidth,
    CrownWidth2,
    CrownBase,
    Dieback,
    Condition,
    Crew,
    Notes,
}

/// Every field in form order.
pub const FIELDS: [FieldId; 16] = [
    FieldId::Species,
    FieldId::Street,
    FieldId::HouseNumber,
    FieldId::SiteKind,
    FieldId::Lat,
    FieldId::Lon,
    FieldId::MeasuredOn,
    FieldId::Dbh,
    FieldId::Height,
    FieldId::CrownWidth,
    FieldId::CrownWidth2,
    FieldId::CrownBase,
    FieldId::Dieback,
    FieldId::Condition,
    FieldId::Crew,
    FieldId::Notes,
];

impl FieldId {
    fn index(self) -> usize {
        FIELDS.iter().position(|f| *f == self).unwrap_or(0)
    }

    /// The field's label.
    pub fn label(self, us: bool) -> &'static str {
        match (self, us) {
            (FieldId::Species, _) => "species",
            (FieldId::Street, _) => "street",
            (FieldId::HouseNumber, _) => "house number",
            (FieldId::SiteKind, _) => "site",
            (FieldId::Lat, _) => "latitude °",
            (FieldId::Lon, _) => "longitude °",
            (FieldId::MeasuredOn, _) => "measured on",
            (FieldId::Dbh, false) => "DBH cm",
            (FieldId::Dbh, true) => "DBH in",
            (FieldId::Height, false) => "height m",
            (FieldId::Height, true) => "height ft",
            (FieldId::CrownWidth, false) => "crown spread m",
            (FieldId::CrownWidth, true) => "crown spread ft",
            (FieldId::CrownWidth2, false) => "2nd spread m",
            (FieldId::CrownWidth2, true) => "2nd spread ft",
            (FieldId::CrownBase, false) => "crown base m",
            (FieldId::CrownBase, true) => "crown base ft",
            (FieldId::Dieback, _) => "dieback %",
            (FieldId::Condition, _) => "condition",
            (FieldId::Crew, _) => "crew",
            (FieldId::Notes, _) => "notes",
        }
    }

    fn hint(self) -> &'static str {
        match self {
            FieldId::Species => "Enter: pick from the list",
            FieldId::SiteKind => "verge pit median park yard",
            FieldId::MeasuredOn => "YYYY-MM-DD",
            FieldId::Dbh => "30, 12 in, or stems 22;18;9",
            FieldId::Height | FieldId::CrownWidth | FieldId::CrownWidth2 | FieldId::CrownBase => {
                "40 ft, 12 m"
            }
            FieldId::Dieback => "0–100, or use condition",
            FieldId::Condition => "good fair poor dead",
            FieldId::Lat | FieldId::Lon => "decimal degrees",
            _ => "",
        }
    }

    /// The import column(s) whose errors belong to this field.
    fn owns(self, column_name: &str) -> bool {
        let columns: &[&str] = match self {
            FieldId::Species => &["species"],
            FieldId::Street => &["street"],
            FieldId::HouseNumber => &["house_number"],
            FieldId::SiteKind => &["site_kind"],
            FieldId::Lat => &["lat"],
            FieldId::Lon => &["lon"],
            FieldId::MeasuredOn => &["measured_on"],
            FieldId::Dbh => &["dbh_cm", "stems_cm"],
            FieldId::Height => &["height_m"],
            FieldId::CrownWidth => &["crown_width_m"],
            FieldId::CrownWidth2 => &["crown_width2_m"],
            FieldId::CrownBase => &["crown_base_m"],
            FieldId::Dieback => &["dieback_pct"],
            FieldId::Condition => &["condition"],
            FieldId::Crew | FieldId::Notes => &["notes"],
        };
        columns.contains(&column_name)
    }
}

/// Adding a tree or re-measuring one.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Mode {
    New,
    Remeasure {
        tree_id: i64,
        uid: String,
        label: String,
    },
}

/// What a key asks of the app.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FormAction {
    Save,
    Leave,
    PickSpecies,
}

/// Field log state.
#[derive(Debug, Clone)]
pub struct State {
    pub mode: Mode,
    inputs: Vec<Input>,
    touched: Vec<bool>,
    errors: Vec<Option<String>>,
    hints: Vec<Option<String>>,
    pub focus: usize,
    pub dirty: bool,
    tried_save: bool,
    record: Option<TreeRecord>,
    lookup: SpeciesLookup,
    pub species_names: Vec<(String, String)>,
    today: NaiveDate,
    us_units: bool,
}

impl State {
    /// An empty form for a new tree.
    pub fn new(species: &[Species], today: NaiveDate, us_units: bool) -> Self {
        let mut state = State {
            mode: Mode::New,
            inputs: vec![Input::default(); FIELDS.len()],
            touched: vec![false; FIELDS.len()],
            errors: vec![None; FIELDS.len()],
            hints: vec![None; FIELDS.len()],
            focus: 0,
            dirty: false,
            tried_save: false,
            record: None,
            lookup: SpeciesLookup::new(species),
            species_names: species
                .iter()
                .map(|s| (s.scientific_name.clone(), s.common_name.clone()))
                .collect(),
            today,
            us_units,
        };
        state.set(FieldId::MeasuredOn, &today.to_string());
        state.dirty = false;
        state.validate();
        state
    }

    /// The text of a field.
    pub fn value(&self, field: FieldId) -> &str {
        self.inputs[field.index()].value()
    }

    /// Sets a field's text (as if typed).
    pub fn set(&mut self, field: FieldId, value: &str) {
        let i = field.index();
        self.inputs[i] = Input::new(value.to_string());
        self.touched[i] = true;
        self.dirty = true;
        self.validate();
    }

    /// The reason shown next to a field, if any.
    pub fn error(&self, field: FieldId) -> Option<&str> {
        let i = field.index();
        if self.touched[i] || self.tried_save {
            self.errors[i].as_deref()
        } else {
            None
        }
    }

    /// The valid record, when every field passes.
    pub fn record(&self) -> Option<&TreeRecord> {
        self.record.as_ref()
    }

    /// The focused field.
    pub fn focused(&self) -> FieldId {
        FIELDS[self.focus]
    }

    /// Switches display units (typed numbers without a unit are read in these).
    pub fn set_units(&mut self, us: bool) {
        self.us_units = us;
        self.validate();
    }

    /// Prepares the form to re-measure a tree: its attributes filled in, measurement fields empty
    /// with the previous values as hints.
    #[allow(clippy::too_many_arguments)]
    pub fn remeasure(
        &mut self,
        tree_id: i64,
        uid: &str,
        label: &str,
        attributes: &[(FieldId, String)],
        previous: &[(FieldId, String)],
    ) {
        let crew = self.value(FieldId::Crew).to_string();
        *self = State::new_like(self);
        self.mode = Mode::Remeasure {
            tree_id,
            uid: uid.to_string(),
            label: label.to_string(),
        };
        for (field, value) in attributes {
            self.inputs[field.index()] = Input::new(value.clone());
        }
        self.inputs[FieldId::Crew.index()] = Input::new(crew);
        for (field, value) in previous {
            self.hints[field.index()] = Some(format!("was {value}"));
        }
        self.focus = FieldId::Dbh.index();
        self.dirty = false;
        self.validate();
    }

    fn new_like(other: &State) -> State {
        State {
            mode: Mode::New,
            inputs: vec![Input::default(); FIELDS.len()],
            touched: vec![false; FIELDS.len()],
            errors: vec![None; FIELDS.len()],
            hints: vec![None; FIELDS.len()],
            focus: 0,
            dirty: false,
            tried_save: false,
            record: None,
            lookup: other.lookup.clone(),
            species_names: other.species_names.clone(),
            today: other.today,
            us_units: other.us_units,
        }
        .with_date(other.today)
    }

    fn with_date(mut self, today: NaiveDate) -> Self {
        self.inputs[FieldId::MeasuredOn.index()] = Input::new(today.to_string());
        self
    }

    /// After a save: a fresh form for the next tree on the block, keeping street, site, date and crew.
    pub fn next_tree(&mut self) {
        let keep: Vec<(FieldId, String)> = [
            FieldId::Street,
            FieldId::SiteKind,
            FieldId::MeasuredOn,
            FieldId::Crew,
        ]
        .iter()
        .map(|f| (*f, self.value(*f).to_string()))
        .collect();
        *self = State::new_like(self);
        for (field, value) in keep {
            self.inputs[field.index()] = Input::new(value);
        }
        self.focus = FieldId::Species.index();
        self.validate();
    }

    /// Marks a save attempt (errors of untouched fields are shown from now on).
    pub fn tried_to_save(&mut self) {
        self.tried_save = true;
    }

    /// Handles a key.
    pub fn handle_key(&mut self, key: KeyEvent) -> Option<FormAction> {
        let control = key.modifiers.contains(KeyModifiers::CONTROL);
        match key.code {
            KeyCode::Char('s') if control => return Some(FormAction::Save),
            KeyCode::F(2) => return Some(FormAction::Save),
            KeyCode::Esc => return Some(FormAction::Leave),
            KeyCode::Tab | KeyCode::Down => self.focus = (self.focus + 1) % FIELDS.len(),
            KeyCode::BackTab | KeyCode::Up => {
                self.focus = (self.focus + FIELDS.len() - 1) % FIELDS.len()
            }
            KeyCode::Enter if self.focused() == FieldId::Species => {
                return Some(FormAction::PickSpecies);
            }
            KeyCode::Enter if self.focus + 1 == FIELDS.len() => return Some(FormAction::Save),
            KeyCode::Enter => self.focus += 1,
            _ => {
                let i = self.focus;
                if text::edit(&mut self.inputs[i], key) {
                    self.touched[i] = true;
                    self.dirty = true;
                    self.validate();
                }
            }
        }
        None
    }

    /// Re-checks every field by the import's rules.
    fn validate(&mut self) {
        let (length_default, dbh_default) = if self.us_units {
            (LengthUnit::Foot, LengthUnit::Inch)
        } else {
            (LengthUnit::M, LengthUnit::Cm)
        };
        let mut errors: Vec<Option<String>> = vec![None; FIELDS.len()];
        let mut values: Vec<(Column, &'static str, String)> = Vec::new();
        for field in FIELDS {
            let text = self.value(field).trim().to_string();
            if text.is_empty() {
                continue;
            }
            let converted =
                match field {
                    FieldId::Dbh => {
                        let parts: Result<Vec<String>, String> = text
                            .split(';')
                            .map(|p| {
                                parse_length(p, dbh_default, LengthUnit::Cm).map(|v| v.to_string())
                            })
                            .collect();
                        parts.map(|p| {
                            if p.len() > 1 {
                                (Column::Stems, "stems_cm", p.join(";"))
                            } else {
                                (Column::Dbh, "dbh_cm", p.join(""))
                            }
                        })
                    }
                    FieldId::Height => {
                        length(&text, length_default).map(|v| (Column::Height, "height_m", v))
                    }
                    FieldId::CrownWidth => length(&text, length_default)
                        .map(|v| (Column::CrownWidth, "crown_width_m", v)),
                    FieldId::CrownWidth2 => length(&text, length_default)
                        .map(|v| (Column::CrownWidth2, "crown_width2_m", v)),
                    FieldId::CrownBase => length(&text, length_default)
                        .map(|v| (Column::CrownBase, "crown_base_m", v)),
                    FieldId::Species => Ok((Column::Species, "species", text)),
                    FieldId::Street => Ok((Column::Street, "street", text)),
                    FieldId::HouseNumber => Ok((Column::HouseNumber, "house_number", text)),
                    FieldId::SiteKind => Ok((Column::SiteKind, "site_kind", text)),
                    FieldId::Lat => Ok((Column::Lat, "lat", text)),
                    FieldId::Lon => Ok((Column::Lon, "lon", text)),
                    FieldId::MeasuredOn => Ok((Column::MeasuredOn, "measured_on", text)),
                    FieldId::Dieback => Ok((Column::DiebackPct, "dieback_pct", text)),
                    FieldId::Condition => Ok((Column::Condition, "condition", text)),
                    FieldId::Notes => Ok((Column::Notes, "notes", text)),
                    FieldId::Crew => continue,
                };
            match converted {
                Ok(value) => values.push(value),
                Err(reason) => errors[field.index()] = Some(reason),
            }
        }
        let uid = match &self.mode {
            Mode::Remeasure { uid, .. } => Some(uid.clone()),
            Mode::New => None,
        };
        if let Some(uid) = &uid {
            values.push((Column::Uid, "uid", uid.clone()));
        }
        let get = |column: Column| {
            values
                .iter()
                .find(|(c, _, _)| *c == column)
                .map(|(_, name, text)| FieldValue {
                    field: name,
                    text,
                    to_si: 1.0,
                })
        };
        let ctx = ValidationContext {
            species: &self.lookup,
            today: self.today,
        };
        let result = validate_tree_fields(get, ctx);
        match result {
            Ok(mut record) if errors.iter().all(Option::is_none) => {
                let crew = self.value(FieldId::Crew).trim();
                record.measured_by = (!crew.is_empty()).then(|| crew.to_string());
                self.record = Some(record);
            }
            Ok(_) => self.record = None,
            Err(problems) => {
                self.record = None;
                for (column, reason) in problems {
                    if let Some(field) = FIELDS.iter().find(|f| f.owns(&column)) {
                        let slot = &mut errors[field.index()];
                        if slot.is_none() {
                            *slot = Some(reason);
                        }
                    }
                }
            }
        }
        self.errors = errors;
    }
}

fn length(text: &str, default: LengthUnit) -> Result<String, String> {
    parse_length(text, default, LengthUnit::M).map(|v| v.to_string())
}

/// Draws the form.
pub fn render(state: &State, frame: &mut Frame<'_>, area: Rect) {
    let title = match &state.mode {
        Mode::New => " Field log — new tree ".to_string(),
        Mode::Remeasure { label, .. } => format!(" Field log — re-measure {label} "),
    };
    let block = Block::default().borders(Borders::ALL).title(title);
    let inner = block.inner(area);
    frame.render_widget(block, area);
    let mut constraints = vec![Constraint::Length(1); FIELDS.len()];
    constraints.push(Constraint::Min(1));
    let rows = Layout::vertical(constraints).split(inner);
    for (i, field) in FIELDS.iter().enumerate() {
        let Some(row) = rows.get(i) else { break };
        let focused = i == state.focus;
        let value = if focused {
            text::with_cursor(&state.inputs[i])
        } else {
            state.inputs[i].value().to_string()
        };
        let note: Span<'_> = match state.error(*field) {
            Some(reason) => Span::styled(
                format!("✗ {reason}"),
                Style::new().add_modifier(Modifier::BOLD),
            ),
            None => {
                let hint = state.hints[i]
                    .clone()
                    .unwrap_or_else(|| field.hint().to_string());
                Span::styled(hint, Style::new().add_modifier(Modifier::DIM))
            }
        };
        let marker = if focused { "▶ " } else { "  " };
        let label_style = if focused {
            Style::new().add_modifier(Modifier::REVERSED)
        } else {
            Style::new()
        };
        let line = Line::from(vec![
            Span::raw(marker),
            Span::styled(format!("{:<15}", field.label(state.us_units)), label_style),
            Span::raw(" "),
            Span::raw(format!("{value:<18} ")),
            note,
        ]);
        frame.render_widget(Paragraph::new(line), *row);
    }
    if let Some(row) = rows.get(FIELDS.len()) {
        let focused = state.focused();
        let ready = match (state.error(focused), state.record()) {
            (Some(reason), _) => format!("✗ {}: {reason}", focused.label(state.us_units)),
            (None, Some(_)) => "✓ ready: Ctrl-S (or F2) saves".to_string(),
            (None, None) => {
                "not ready: fix the fields marked ✗ (species and DBH are required)".to_string()
            }
        };
        frame.render_widget(
            Paragraph::new(Line::from(format!("  {ready}")))
                .wrap(ratatui::widgets::Wrap { trim: true }),
            *row,
        );
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{LeafHabit, WaterUse};

    fn species() -> Vec<Species> {
        vec![Species {
            id: 1,
            scientific_name: "Acer rubrum".into(),
            common_name: "red maple".into(),
            genus: "Acer".into(),
            family: "Aceraceae".into(),
            leaf_habit: LeafHabit::Deciduous,
            sg_green: 0.49,
            jenkins_group: "soft maple/birch".into(),
            chojnacky_group: "Aceraceae <0.50".into(),
            growth_cm_per_yr: 0.78,
            growth_source: String::new(),
            water_use: WaterUse::Moderate,
            lai: 4.0,
            max_height_m: None,
            builtin: true,
            source: String::new(),
        }]
    }

    fn today() -> NaiveDate {
        NaiveDate::from_ymd_opt(2026, 6, 1).unwrap_or_default()
    }

    fn type_text(state: &mut State, text: &str) {
        for c in text.chars() {
            state.handle_key(KeyEvent::from(KeyCode::Char(c)));
        }
    }

    #[test]
    fn bad_dbh_is_rejected_with_the_import_reason_as_typed() {
        let mut form = State::new(&species(), today(), false);
        assert!(
            form.error(FieldId::Dbh).is_none(),
            "untouched fields show no error"
        );
        form.set(FieldId::Species, "red maple");
        form.set(FieldId::Dbh, "4000");
        assert!(
            form.error(FieldId::Dbh)
                .is_some_and(|e| e.contains("4000 cm is not plausible"))
        );
        assert!(form.record().is_none());
        form.set(FieldId::Dbh, "12 in");
        assert!(form.error(FieldId::Dbh).is_none());
        let record = form.record().expect("valid");
        assert_eq!(record.species, "Acer rubrum");
        assert_eq!(record.stems_cm, vec![12.0 * 2.54]);
        form.set(FieldId::Dbh, "thirty");
        assert!(
            form.error(FieldId::Dbh)
                .is_some_and(|e| e.contains("not a number"))
        );
    }

    #[test]
    fn typing_moves_and_multi_stems_and_units() {
        let mut form = State::new(&species(), today(), true);
        type_text(&mut form, "Acer rubrum");
        assert_eq!(
            form.handle_key(KeyEvent::from(KeyCode::Enter)),
            Some(FormAction::PickSpecies)
        );
        form.focus = FieldId::Dbh.index();
        type_text(&mut form, "10;10");
        form.focus = FieldId::Height.index();
        type_text(&mut form, "40");
        let record = form.record().expect("valid");
        assert!(record.multi_stem);
        assert_eq!(
            record.stems_cm,
            vec![25.4, 25.4],
            "US units: bare numbers are inches (NIST SP 811)"
        );
        assert_eq!(record.height_m, Some(40.0 * 0.3048));
        assert_eq!(
            form.handle_key(KeyEvent::new(KeyCode::Char('s'), KeyModifiers::CONTROL)),
            Some(FormAction::Save)
        );
    }

    #[test]
    fn next_tree_keeps_street_date_site_and_crew() {
        let mut form = State::new(&species(), today(), false);
        form.set(FieldId::Species, "Acer rubrum");
        form.set(FieldId::Street, "Elm Row");
        form.set(FieldId::SiteKind, "pit");
        form.set(FieldId::Crew, "crew A");
        form.set(FieldId::Dbh, "30");
        form.set(FieldId::HouseNumber, "12");
        form.next_tree();
        assert_eq!(form.value(FieldId::Street), "Elm Row");
        assert_eq!(form.value(FieldId::SiteKind), "pit");
        assert_eq!(form.value(FieldId::Crew), "crew A");
        assert_eq!(form.value(FieldId::MeasuredOn), "2026-06-01");
        assert_eq!(form.value(FieldId::Dbh), "");
        assert_eq!(form.value(FieldId::HouseNumber), "");
        assert_eq!(form.focused(), FieldId::Species);
        assert!(!form.dirty);
    }
}
