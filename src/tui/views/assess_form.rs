//! The risk assessment form: level, time frame, assessor, one or more failure modes and mitigation
//! options, with the two matrices of the ISA Tree Risk Assessment BMP (METHODS.md M9) drawn beside the
//! fields as the categories are chosen (the chosen row, column and cell marked by ▶, ▼ and brackets or
//! reversed video, never by colour alone), each mode's likelihood and rating, the overall rating (the
//! highest) and the next inspection. The caution of [`CAUTION`] stays on screen.
//!
//! Saving evaluates the input by [`assessment::evaluate`]; a high or extreme rating then shows the work
//! order [`assessment::propose_work`] proposes, which the user creates (`y`), edits (`e`) or skips
//! (`s`). The app records the result through the query facade, in one transaction.

use std::collections::HashSet;

use chrono::NaiveDate;
use ratatui::Frame;
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::{Color, Modifier, Style};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Block, Borders, Paragraph, Wrap};

use super::super::widgets::form::{Event, Field, Form};
use super::super::widgets::text;
use super::work_form::{self, priority_of, priority_options, task_options};
use crate::care::assessment::{
    self, Assessment, AssessmentInput, AssessmentLevel, FailureMode, MitigationOption,
    ProposalEdits, WorkProposal,
};
use crate::care::risk::{
    self, CAUTION, Consequences, Likelihood, LikelihoodOfFailure, LikelihoodOfImpact, Occupancy,
    RiskRating, TreePart,
};
use crate::care::work::{NewWorkOrder, WorkTask};
use crate::science::units::{LengthUnit, parse_length};

/// The fields of one failure mode.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum ModeField {
    Part,
    Size,
    Target,
    Occupancy,
    Failure,
    Impact,
    Consequences,
}

/// The fields of one mitigation option.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum OptionField {
    Task,
    Residual,
    Note,
}

/// Every field of the form.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Key {
    On,
    Assessor,
    Level,
    TimeFrame,
    /// Field of failure mode `n` (from 0).
    Mode(usize, ModeField),
    /// Field of mitigation option `n` (from 0).
    Mitigation(usize, OptionField),
    Notes,
}

/// The fields of the proposed work order.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum ProposalKey {
    Task,
    Priority,
    Due,
    Crew,
    Cost,
}

/// The proposed work order under review.
#[derive(Debug, Clone)]
pub struct Proposal {
    pub assessment: Assessment,
    pub proposal: WorkProposal,
    pub form: Form<ProposalKey>,
    /// True while the user edits the fields (else the review keys y / e / s apply).
    pub editing: bool,
    /// The fields before editing began (Esc puts them back).
    before_edit: Option<Form<ProposalKey>>,
}

/// Where the form is.
#[derive(Debug, Clone)]
pub enum Stage {
    Editing,
    Proposal(Box<Proposal>),
}

/// What a key asks of the app.
#[derive(Debug, Clone, PartialEq)]
pub enum Outcome {
    /// Open a picker over the focused choice's options.
    Pick {
        title: String,
        options: Vec<String>,
    },
    /// Record the assessment (and the work order, when given).
    Save {
        assessment: Box<Assessment>,
        work: Option<Box<NewWorkOrder>>,
    },
    Leave,
    Message(String),
}

/// Form state.
#[derive(Debug, Clone)]
pub struct State {
    pub tree_id: i64,
    /// "tree 12 · Acer rubrum · 14 Quill Lane".
    pub label: String,
    pub form: Form<Key>,
    pub stage: Stage,
    pub dirty: bool,
    intervals: Vec<(RiskRating, u32)>,
    today: NaiveDate,
    us_units: bool,
    tried_save: bool,
    touched: HashSet<Key>,
    /// The failure mode the matrices show.
    shown_mode: usize,
}

fn words<T: Copy>(all: &[T], word: impl Fn(T) -> &'static str) -> Vec<String> {
    all.iter().map(|v| word(*v).replace('_', " ")).collect()
}

fn level_options() -> Vec<String> {
    [
        AssessmentLevel::Limited,
        AssessmentLevel::Basic,
        AssessmentLevel::Advanced,
    ]
    .iter()
    .map(|l| match l {
        AssessmentLevel::Limited => "1 limited".to_string(),
        other => format!("{} {}", other.number(), other.name()),
    })
    .collect()
}

fn mode_fields(n: usize, us_units: bool) -> Vec<Field<Key>> {
    let size_hint = if us_units {
        "diameter, in (or 30 cm)"
    } else {
        "diameter, cm (or 12 in)"
    };
    vec![
        Field::choice(
            Key::Mode(n, ModeField::Part),
            "part",
            words(TreePart::ALL, TreePart::as_str),
            None,
            "the part that may fail",
        ),
        Field::text(Key::Mode(n, ModeField::Size), "part size", "", size_hint),
        Field::text(
            Key::Mode(n, ModeField::Target),
            "target",
            "",
            "what it would hit",
        ),
        Field::choice(
            Key::Mode(n, ModeField::Occupancy),
            "occupancy",
            words(Occupancy::ALL, Occupancy::as_str),
            None,
            "how often the target zone is occupied",
        ),
        Field::choice(
            Key::Mode(n, ModeField::Failure),
            "failure",
            words(LikelihoodOfFailure::ALL, LikelihoodOfFailure::as_str),
            None,
            "Matrix 1 row",
        ),
        Field::choice(
            Key::Mode(n, ModeField::Impact),
            "impact",
            words(LikelihoodOfImpact::ALL, LikelihoodOfImpact::as_str),
            None,
            "Matrix 1 column",
        ),
        Field::choice(
            Key::Mode(n, ModeField::Consequences),
            "consequences",
            words(Consequences::ALL, Consequences::as_str),
            None,
            "Matrix 2 column",
        ),
    ]
}

fn option_fields(n: usize) -> Vec<Field<Key>> {
    vec![
        Field::choice(
            Key::Mitigation(n, OptionField::Task),
            "task",
            task_options(),
            None,
            "the work it takes",
        ),
        Field::choice(
            Key::Mitigation(n, OptionField::Residual),
            "residual",
            words(RiskRating::ALL, RiskRating::as_str),
            None,
            "rating once done",
        ),
        Field::text(
            Key::Mitigation(n, OptionField::Note),
            "description",
            "",
            "optional",
        ),
    ]
}

fn proposal_form(proposal: &WorkProposal) -> Form<ProposalKey> {
    Form::new(vec![
        Field::choice(
            ProposalKey::Task,
            "task",
            task_options(),
            WorkTask::ALL.iter().position(|t| *t == proposal.task),
            "←/→",
        ),
        Field::choice(
            ProposalKey::Priority,
            "priority",
            priority_options(),
            Some(usize::from(proposal.priority.get().saturating_sub(1))),
            "1 urgent … 4 routine",
        ),
        Field::text(
            ProposalKey::Due,
            "due",
            &proposal.due_on.to_string(),
            "YYYY-MM-DD",
        ),
        Field::text(ProposalKey::Crew, "crew", "", "optional"),
        Field::text(ProposalKey::Cost, "estimate", "", "estimated cost"),
    ])
}

/// A failure mode's choices so far (indices into the `ALL` lists).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct ModeChoice {
    pub failure: Option<LikelihoodOfFailure>,
    pub impact: Option<LikelihoodOfImpact>,
    pub consequences: Option<Consequences>,
}

impl ModeChoice {
    /// Matrix 1's result, once failure and impact are chosen.
    pub fn likelihood(self) -> Option<Likelihood> {
        Some(risk::likelihood(self.failure?, self.impact?))
    }

    /// Matrix 2's result, once all three are chosen.
    pub fn rating(self) -> Option<RiskRating> {
        Some(risk::rating(self.likelihood()?, self.consequences?))
    }
}

impl State {
    /// A new assessment of a tree dated `today`; `assessor` carries over from the last one.
    pub fn new(
        tree_id: i64,
        label: &str,
        assessor: &str,
        intervals: Vec<(RiskRating, u32)>,
        today: NaiveDate,
        us_units: bool,
    ) -> Self {
        let mut fields = vec![
            Field::text(Key::On, "assessed on", &today.to_string(), "YYYY-MM-DD")
                .in_section("Assessment"),
            Field::text(Key::Assessor, "assessor", assessor, "who assessed"),
            Field::choice(
                Key::Level,
                "level",
                level_options(),
                Some(1),
                "1 limited visual, 2 basic, 3 advanced",
            ),
            Field::text(Key::TimeFrame, "time frame", "", "years (optional)"),
        ];
        fields.extend(mode_fields(0, us_units));
        fields.push(
            Field::text(Key::Notes, "notes", "", "optional")
                .in_section("Ctrl-N: mode, Ctrl-O: option\nNotes"),
        );
        let mut state = State {
            tree_id,
            label: label.to_string(),
            form: Form::new(fields),
            stage: Stage::Editing,
            dirty: false,
            intervals,
            today,
            us_units,
            tried_save: false,
            touched: HashSet::new(),
            shown_mode: 0,
        };
        state.relabel();
        state.form.focus_on(Key::Mode(0, ModeField::Part));
        state
    }

    /// Number of failure modes.
    pub fn mode_count(&self) -> usize {
        self.count(|k| matches!(k, Key::Mode(_, ModeField::Part)))
    }

    /// Number of mitigation options.
    pub fn option_count(&self) -> usize {
        self.count(|k| matches!(k, Key::Mitigation(_, OptionField::Task)))
    }

    fn count(&self, which: impl Fn(&Key) -> bool) -> usize {
        self.form.fields.iter().filter(|f| which(&f.key)).count()
    }

    /// The failure mode the matrices show: the focused one, else the last one focused.
    pub fn shown_mode(&self) -> usize {
        match self.form.focused_key() {
            Some(Key::Mode(n, _)) => n,
            _ => self.shown_mode.min(self.mode_count().saturating_sub(1)),
        }
    }

    /// The categories chosen for mode `n`.
    pub fn mode_choice(&self, n: usize) -> ModeChoice {
        let pick = |field: ModeField| self.form.chosen(Key::Mode(n, field));
        ModeChoice {
            failure: pick(ModeField::Failure)
                .and_then(|i| LikelihoodOfFailure::ALL.get(i).copied()),
            impact: pick(ModeField::Impact).and_then(|i| LikelihoodOfImpact::ALL.get(i).copied()),
            consequences: pick(ModeField::Consequences)
                .and_then(|i| Consequences::ALL.get(i).copied()),
        }
    }

    /// The overall rating of the modes rated so far (the highest), and how many are rated.
    pub fn overall(&self) -> (Option<RiskRating>, usize) {
        let ratings: Vec<RiskRating> = (0..self.mode_count())
            .filter_map(|n| self.mode_choice(n).rating())
            .collect();
        (risk::overall_rating(ratings.iter().copied()), ratings.len())
    }

    /// Sets the headings: "Failure mode 1 of 2", "Mitigation option 1".
    fn relabel(&mut self) {
        let modes = self.mode_count();
        for field in &mut self.form.fields {
            match field.key {
                Key::Mode(n, ModeField::Part) => {
                    field.section = Some(format!("Failure mode {} of {modes}", n + 1))
                }
                Key::Mitigation(n, OptionField::Task) => {
                    field.section = Some(format!("Mitigation option {}", n + 1))
                }
                _ => {}
            }
        }
    }

    /// Adds a failure mode after the last one and focuses it.
    pub fn add_mode(&mut self) {
        let n = self.mode_count();
        let at = self
            .form
            .fields
            .iter()
            .position(|f| matches!(f.key, Key::Mitigation(..) | Key::Notes))
            .unwrap_or(self.form.fields.len());
        let new = mode_fields(n, self.us_units);
        self.form.fields.splice(at..at, new);
        self.relabel();
        self.form.focus_on(Key::Mode(n, ModeField::Part));
        self.shown_mode = n;
        self.dirty = true;
    }

    /// Adds a mitigation option before the notes and focuses it.
    pub fn add_option(&mut self) {
        let n = self.option_count();
        let at = self
            .form
            .fields
            .iter()
            .position(|f| f.key == Key::Notes)
            .unwrap_or(self.form.fields.len());
        self.form.fields.splice(at..at, option_fields(n));
        self.relabel();
        self.form.focus_on(Key::Mitigation(n, OptionField::Task));
        self.dirty = true;
    }

    /// Removes the focused failure mode or mitigation option (an assessment keeps at least one mode).
    pub fn remove_focused(&mut self) -> Result<(), String> {
        let Some(focused) = self.form.focused_key() else {
            return Ok(());
        };
        let renumber = |key: Key, gone: Key| -> Key {
            match (key, gone) {
                (Key::Mode(n, f), Key::Mode(g, _)) if n > g => Key::Mode(n - 1, f),
                (Key::Mitigation(n, f), Key::Mitigation(g, _)) if n > g => {
                    Key::Mitigation(n - 1, f)
                }
                _ => key,
            }
        };
        let same_group = |key: Key| match (key, focused) {
            (Key::Mode(n, _), Key::Mode(g, _)) => n == g,
            (Key::Mitigation(n, _), Key::Mitigation(g, _)) => n == g,
            _ => false,
        };
        match focused {
            Key::Mode(..) if self.mode_count() <= 1 => {
                return Err("an assessment needs at least one failure mode".to_string());
            }
            Key::Mode(..) | Key::Mitigation(..) => {}
            _ => {
                return Err(
                    "Ctrl-D removes the focused failure mode or mitigation option".to_string(),
                );
            }
        }
        let first = self
            .form
            .fields
            .iter()
            .position(|f| same_group(f.key))
            .unwrap_or(0);
        self.form.fields.retain(|f| !same_group(f.key));
        for field in &mut self.form.fields {
            field.key = renumber(field.key, focused);
        }
        self.touched = self
            .touched
            .iter()
            .filter(|k| !same_group(**k))
            .map(|k| renumber(*k, focused))
            .collect();
        self.form.focus = first.min(self.form.fields.len().saturating_sub(1));
        self.shown_mode = 0;
        self.relabel();
        self.dirty = true;
        self.check();
        Ok(())
    }

    /// Sets the focused choice to option `index` (from a picker).
    pub fn choose(&mut self, index: usize) {
        match &mut self.stage {
            Stage::Editing => {
                if let Some(key) = self.form.focused_key() {
                    self.form.set_choice(key, Some(index));
                    self.touched.insert(key);
                    self.dirty = true;
                    self.check();
                }
            }
            Stage::Proposal(p) => {
                if let Some(key) = p.form.focused_key() {
                    p.form.set_choice(key, Some(index));
                }
            }
        }
    }

    /// Handles a key.
    pub fn handle_key(&mut self, key: KeyEvent) -> Option<Outcome> {
        if matches!(self.stage, Stage::Proposal(_)) {
            return self.proposal_key(key);
        }
        let control = key.modifiers.contains(KeyModifiers::CONTROL);
        let outcome = match key.code {
            KeyCode::Char('n') if control => {
                self.add_mode();
                None
            }
            KeyCode::Char('o') if control => {
                self.add_option();
                None
            }
            KeyCode::Char('d') if control => self.remove_focused().err().map(Outcome::Message),
            _ => match self.form.handle_key(key) {
                Event::Moved | Event::Ignored => None,
                Event::Changed => {
                    if let Some(k) = self.form.focused_key() {
                        self.touched.insert(k);
                    }
                    self.dirty = true;
                    self.check();
                    None
                }
                Event::Pick => self.form.focused().map(|f| Outcome::Pick {
                    title: f.label.clone(),
                    options: f.options().to_vec(),
                }),
                Event::Leave => Some(Outcome::Leave),
                Event::Submit => Some(self.submit()),
            },
        };
        if let Some(Key::Mode(n, _)) = self.form.focused_key() {
            self.shown_mode = n;
        }
        outcome
    }

    /// Ctrl-S: checks everything; a valid assessment is saved at once, or, when its rating calls for
    /// work, shows the proposed work order first.
    fn submit(&mut self) -> Outcome {
        self.tried_save = true;
        let Some(assessment) = self.check() else {
            return Outcome::Message("not saved: fix the fields marked ✗".to_string());
        };
        match assessment::propose_work(&assessment) {
            None => Outcome::Save {
                assessment: Box::new(assessment),
                work: None,
            },
            Some(proposal) => {
                let form = proposal_form(&proposal);
                self.stage = Stage::Proposal(Box::new(Proposal {
                    assessment,
                    proposal,
                    form,
                    editing: false,
                    before_edit: None,
                }));
                Outcome::Message(
                    "the rating calls for work: y creates it, e edits it, s saves without"
                        .to_string(),
                )
            }
        }
    }

    fn proposal_key(&mut self, key: KeyEvent) -> Option<Outcome> {
        let Stage::Proposal(p) = &mut self.stage else {
            return None;
        };
        if p.editing {
            return match p.form.handle_key(key) {
                Event::Moved | Event::Ignored => None,
                Event::Changed => {
                    check_proposal(p);
                    None
                }
                Event::Pick => p.form.focused().map(|f| Outcome::Pick {
                    title: f.label.clone(),
                    options: f.options().to_vec(),
                }),
                Event::Submit => match check_proposal(p) {
                    Some(_) => {
                        p.editing = false;
                        p.before_edit = None;
                        Some(Outcome::Message(
                            "work order changed: y creates it, s saves without it".to_string(),
                        ))
                    }
                    None => Some(Outcome::Message(
                        "fix the fields marked ✗ (Esc drops the changes)".to_string(),
                    )),
                },
                Event::Leave => {
                    if let Some(before) = p.before_edit.take() {
                        p.form = before;
                    }
                    p.editing = false;
                    None
                }
            };
        }
        match key.code {
            KeyCode::Char('y') | KeyCode::Char('Y') | KeyCode::Enter => {
                let order = check_proposal(p).map(|edits| {
                    Box::new(assessment::order_from_proposal(
                        self.tree_id,
                        &p.assessment,
                        &p.proposal,
                        &edits,
                    ))
                });
                match order {
                    Some(order) => Some(Outcome::Save {
                        assessment: Box::new(p.assessment.clone()),
                        work: Some(order),
                    }),
                    None => {
                        p.editing = true;
                        Some(Outcome::Message(
                            "fix the work order's fields marked ✗".to_string(),
                        ))
                    }
                }
            }
            KeyCode::Char('e') | KeyCode::Char('E') => {
                p.before_edit = Some(p.form.clone());
                p.editing = true;
                p.form.focus = 0;
                None
            }
            KeyCode::Char('s') | KeyCode::Char('S') | KeyCode::Char('n') => Some(Outcome::Save {
                assessment: Box::new(p.assessment.clone()),
                work: None,
            }),
            KeyCode::Esc => {
                self.stage = Stage::Editing;
                Some(Outcome::Message(
                    "back to the assessment (nothing saved)".to_string(),
                ))
            }
            _ => None,
        }
    }

    /// Goes back from the proposal to the fields (after the store refused the save).
    pub fn back_to_fields(&mut self) {
        self.stage = Stage::Editing;
    }

    /// Re-checks every field; shows reasons on touched fields (on all after a save attempt). Returns
    /// the evaluated assessment when the whole form is valid.
    fn check(&mut self) -> Option<Assessment> {
        let all = self.tried_save;
        let mut errors: Vec<(Key, String)> = Vec::new();
        let form = &self.form;
        let mut rule_error: Option<Key> = None;
        let assessed_on = match work_form::parse_date(form.text(Key::On), true) {
            Ok(date) => date,
            Err(e) => {
                errors.push((Key::On, e));
                None
            }
        };
        let time_frame = match form.text(Key::TimeFrame) {
            "" => None,
            t => match crate::io::parse_number(t) {
                Ok(v) => Some(v),
                Err(e) => {
                    errors.push((Key::TimeFrame, e));
                    None
                }
            },
        };
        let level = form
            .chosen(Key::Level)
            .and_then(|i| AssessmentLevel::new(i as i64 + 1).ok());
        if level.is_none() {
            errors.push((Key::Level, "choose a level".to_string()));
        }
        let (default, target) = if self.us_units {
            (LengthUnit::Inch, LengthUnit::Cm)
        } else {
            (LengthUnit::Cm, LengthUnit::Cm)
        };
        let mut modes = Vec::new();
        for n in 0..self.mode_count() {
            let k = |f: ModeField| Key::Mode(n, f);
            let choose = |f: ModeField, what: &str, errors: &mut Vec<(Key, String)>| {
                let chosen = form.chosen(k(f));
                if chosen.is_none() {
                    errors.push((k(f), format!("choose {what}")));
                }
                chosen
            };
            let part = choose(ModeField::Part, "a part", &mut errors)
                .and_then(|i| TreePart::ALL.get(i).copied());
            let occupancy = choose(ModeField::Occupancy, "an occupancy", &mut errors)
                .and_then(|i| Occupancy::ALL.get(i).copied());
            choose(ModeField::Failure, "a likelihood of failure", &mut errors);
            choose(ModeField::Impact, "a likelihood of impact", &mut errors);
            choose(ModeField::Consequences, "the consequences", &mut errors);
            let size = match form.text(k(ModeField::Size)) {
                "" => None,
                t => match parse_length(t, default, target) {
                    Ok(v) => Some(v),
                    Err(e) => {
                        errors.push((k(ModeField::Size), e));
                        None
                    }
                },
            };
            let choice = self.mode_choice(n);
            if let (Some(part), Some(occupancy), Some(failure), Some(impact), Some(consequences)) = (
                part,
                occupancy,
                choice.failure,
                choice.impact,
                choice.consequences,
            ) {
                let target = form.text(k(ModeField::Target));
                modes.push(FailureMode {
                    part,
                    part_size_cm: size,
                    target: (!target.is_empty()).then(|| target.to_string()),
                    occupancy,
                    likelihood_of_failure: failure,
                    likelihood_of_impact: impact,
                    consequences,
                });
            }
        }
        let mut mitigations = Vec::new();
        for n in 0..self.option_count() {
            let k = |f: OptionField| Key::Mitigation(n, f);
            let task = form
                .chosen(k(OptionField::Task))
                .and_then(|i| WorkTask::ALL.get(i).copied());
            let residual = form
                .chosen(k(OptionField::Residual))
                .and_then(|i| RiskRating::ALL.get(i).copied());
            if task.is_none() {
                errors.push((k(OptionField::Task), "choose a task".to_string()));
            }
            if residual.is_none() {
                errors.push((
                    k(OptionField::Residual),
                    "choose a residual rating".to_string(),
                ));
            }
            if let (Some(task), Some(residual_rating)) = (task, residual) {
                let note = form.text(k(OptionField::Note));
                mitigations.push(MitigationOption {
                    task,
                    description: (!note.is_empty()).then(|| note.to_string()),
                    residual_rating,
                });
            }
        }
        let mut result = None;
        if errors.is_empty()
            && let (Some(assessed_on), Some(level)) = (assessed_on, level)
        {
            let notes = form.text(Key::Notes);
            let assessor = form.text(Key::Assessor);
            let input = AssessmentInput {
                assessed_on,
                assessor: (!assessor.is_empty()).then(|| assessor.to_string()),
                level,
                time_frame_years: time_frame,
                modes,
                mitigations,
                notes: (!notes.is_empty()).then(|| notes.to_string()),
            };
            match assessment::evaluate(input, &self.intervals, self.today) {
                Ok(a) => result = Some(a),
                Err(e) => {
                    let key = key_of_error(&e.field).unwrap_or(Key::On);
                    rule_error = Some(key);
                    errors.push((key, e.reason));
                }
            }
        }
        // The rules' own checks show at once (they only run once everything reads).
        if let Some(key) = rule_error {
            self.touched.insert(key);
        }
        self.form.clear_errors();
        for (key, reason) in errors {
            if all || self.touched.contains(&key) {
                self.form.set_error(key, Some(reason));
            }
        }
        result
    }
}

/// The field a care rule's error names ("on", "time_frame", "mode 2 size", "mitigation 1 residual").
fn key_of_error(field: &str) -> Option<Key> {
    let number = |text: &str| {
        text.trim()
            .parse::<usize>()
            .ok()
            .and_then(|n| n.checked_sub(1))
    };
    match field {
        "on" => Some(Key::On),
        "time_frame" => Some(Key::TimeFrame),
        "level" => Some(Key::Level),
        "mode" => Some(Key::Mode(0, ModeField::Part)),
        other => {
            if let Some(rest) = other.strip_prefix("mode ") {
                let (n, what) = rest.split_once(' ')?;
                let field = match what {
                    "size" => ModeField::Size,
                    _ => ModeField::Part,
                };
                Some(Key::Mode(number(n)?, field))
            } else if let Some(rest) = other.strip_prefix("mitigation ") {
                let (n, _) = rest.split_once(' ')?;
                Some(Key::Mitigation(number(n)?, OptionField::Residual))
            } else {
                None
            }
        }
    }
}

/// Checks the proposal's fields; returns the edits when they read.
fn check_proposal(p: &mut Proposal) -> Option<ProposalEdits> {
    p.form.clear_errors();
    let due = work_form::parse_date(p.form.text(ProposalKey::Due), true);
    let cost = work_form::parse_cost(p.form.text(ProposalKey::Cost));
    let task = p
        .form
        .chosen(ProposalKey::Task)
        .and_then(|i| WorkTask::ALL.get(i).copied());
    let priority = p.form.chosen(ProposalKey::Priority).and_then(priority_of);
    let mut ok = true;
    if let Err(e) = &due {
        p.form.set_error(ProposalKey::Due, Some(e.clone()));
        ok = false;
    }
    if let Err(e) = &cost {
        p.form.set_error(ProposalKey::Cost, Some(e.clone()));
        ok = false;
    }
    if task.is_none() {
        p.form
            .set_error(ProposalKey::Task, Some("choose a task".to_string()));
        ok = false;
    }
    if priority.is_none() {
        p.form
            .set_error(ProposalKey::Priority, Some("choose a priority".to_string()));
        ok = false;
    }
    if !ok {
        return None;
    }
    let crew = p.form.text(ProposalKey::Crew);
    Some(ProposalEdits {
        task,
        priority,
        due_on: due.ok().flatten(),
        crew: (!crew.is_empty()).then(|| crew.to_string()),
        estimated_cost: cost.ok().flatten(),
    })
}

/// The rating in capitals, as the results show it.
fn loud(rating: RiskRating) -> String {
    rating.as_str().to_uppercase()
}

/// Okabe & Ito's colour-blind-safe palette (2008) for ratings: bluish green, yellow, orange,
/// vermillion. The words are always shown too.
fn rating_colour(rating: RiskRating) -> Color {
    match rating {
        RiskRating::Low => Color::Rgb(0, 158, 115),
        RiskRating::Moderate => Color::Rgb(240, 228, 66),
        RiskRating::High => Color::Rgb(230, 159, 0),
        RiskRating::Extreme => Color::Rgb(213, 94, 0),
    }
}

fn likelihood_word(l: Likelihood, width: usize) -> &'static str {
    match (l, width >= 15, width >= 8) {
        (Likelihood::Unlikely, _, true) => "unlikely",
        (Likelihood::Unlikely, _, false) => "unlik.",
        (Likelihood::SomewhatLikely, true, _) => "somewhat likely",
        (Likelihood::SomewhatLikely, false, true) => "somewhat",
        (Likelihood::SomewhatLikely, false, false) => "s'what",
        (Likelihood::Likely, _, _) => "likely",
        (Likelihood::VeryLikely, _, true) => {
            if width >= 11 {
                "very likely"
            } else {
                "v.likely"
            }
        }
        (Likelihood::VeryLikely, _, false) => "v.lik.",
    }
}

fn rating_word(r: RiskRating, width: usize) -> &'static str {
    match (r, width >= 8) {
        (RiskRating::Moderate, false) => "mod.",
        (RiskRating::Extreme, false) => "extr.",
        (r, _) => r.as_str(),
    }
}

fn impact_word(i: LikelihoodOfImpact, width: usize) -> &'static str {
    match (i, width >= 8) {
        (LikelihoodOfImpact::VeryLow, true) => "very low",
        (LikelihoodOfImpact::VeryLow, false) => "v.low",
        (LikelihoodOfImpact::Medium, false) => "med.",
        (i, _) => i.as_str(),
    }
}

fn consequence_word(c: Consequences, width: usize) -> &'static str {
    match (c, width) {
        (c, w) if w >= 11 => c.as_str(),
        (Consequences::Negligible, w) if w >= 7 => "neglig.",
        (Consequences::Negligible, _) => "negl.",
        (Consequences::Significant, w) if w >= 7 => "signif.",
        (Consequences::Significant, _) => "sign.",
        (Consequences::Severe, w) if w < 6 => "sev.",
        (c, _) => c.as_str(),
    }
}

/// One matrix to draw: labels, cells, and what is chosen.
struct Matrix {
    title: String,
    rows: Vec<String>,
    cols: Vec<String>,
    /// Cell texts, row by row, with the rating that colours them (Matrix 2).
    cells: Vec<Vec<(String, Option<RiskRating>)>>,
    row: Option<usize>,
    col: Option<usize>,
}

fn matrix_lines(m: &Matrix, label_width: usize, cell: usize, no_color: bool) -> Vec<Line<'static>> {
    let strong = Style::new().add_modifier(Modifier::BOLD | Modifier::REVERSED);
    let widest = m
        .cells
        .iter()
        .flatten()
        .map(|(t, _)| t.chars().count())
        .max()
        .unwrap_or(0);
    let brackets = cell > widest + 1;
    let mut lines = vec![Line::from(Span::styled(
        m.title.clone(),
        Style::new().add_modifier(Modifier::BOLD),
    ))];
    let mut header = vec![Span::raw(" ".repeat(label_width))];
    for (c, name) in m.cols.iter().enumerate() {
        let chosen = m.col == Some(c);
        let text = format!("{}{name:<w$}", if chosen { "▼" } else { " " }, w = cell - 1);
        header.push(if chosen {
            Span::styled(text, strong)
        } else {
            Span::raw(text)
        });
    }
    lines.push(Line::from(header));
    for (r, name) in m.rows.iter().enumerate() {
        let row_chosen = m.row == Some(r);
        let label = format!(
            "{}{name:<w$}",
            if row_chosen { "▶" } else { " " },
            w = label_width - 1
        );
        let mut spans = vec![if row_chosen {
            Span::styled(label, strong)
        } else {
            Span::raw(label)
        }];
        for (c, (word, rating)) in m.cells[r].iter().enumerate() {
            let chosen = row_chosen && m.col == Some(c);
            let mut style = Style::new();
            if let (Some(rating), false) = (rating, no_color) {
                style = style.fg(rating_colour(*rating));
            }
            if row_chosen || m.col == Some(c) {
                style = style.add_modifier(Modifier::BOLD);
            }
            let text = if chosen && brackets {
                format!(
                    "[{word}]{}",
                    " ".repeat(cell.saturating_sub(word.chars().count() + 2))
                )
            } else {
                format!(" {word:<w$}", w = cell - 1)
            };
            spans.push(if chosen {
                Span::styled(text, style.add_modifier(Modifier::REVERSED))
            } else {
                Span::styled(text, style)
            });
        }
        lines.push(Line::from(spans));
    }
    lines
}

/// The two matrices for mode `n`, and the results below them.
fn matrices_and_results(state: &State, width: usize, no_color: bool) -> Vec<Line<'static>> {
    let n = state.shown_mode();
    let choice = state.mode_choice(n);
    let failures: Vec<LikelihoodOfFailure> =
        LikelihoodOfFailure::ALL.iter().rev().copied().collect();
    let likelihoods: Vec<Likelihood> = Likelihood::ALL.iter().rev().copied().collect();
    let label1 = 11;
    let cell1 = ((width.saturating_sub(label1)) / 4).clamp(6, 16);
    let m1 = Matrix {
        title: format!("Matrix 1 · mode {}: failure ▶ × impact ▼", n + 1),
        rows: failures.iter().map(|f| f.as_str().to_string()).collect(),
        cols: LikelihoodOfImpact::ALL
            .iter()
            .map(|i| impact_word(*i, cell1 - 1).to_string())
            .collect(),
        cells: failures
            .iter()
            .map(|f| {
                LikelihoodOfImpact::ALL
                    .iter()
                    .map(|i| {
                        (
                            likelihood_word(risk::likelihood(*f, *i), cell1 - 1).to_string(),
                            None,
                        )
                    })
                    .collect()
            })
            .collect(),
        row: choice
            .failure
            .and_then(|f| failures.iter().position(|x| *x == f)),
        col: choice
            .impact
            .and_then(|i| LikelihoodOfImpact::ALL.iter().position(|x| *x == i)),
    };
    let label2 = if width >= 16 + 4 * 8 { 16 } else { 10 };
    let cell2 = ((width.saturating_sub(label2)) / 4).clamp(6, 14);
    let m2 = Matrix {
        title: "Matrix 2 · likelihood ▶ × consequences ▼".to_string(),
        rows: likelihoods
            .iter()
            .map(|l| likelihood_word(*l, label2 - 1).to_string())
            .collect(),
        cols: Consequences::ALL
            .iter()
            .map(|c| consequence_word(*c, cell2 - 1).to_string())
            .collect(),
        cells: likelihoods
            .iter()
            .map(|l| {
                Consequences::ALL
                    .iter()
                    .map(|c| {
                        let r = risk::rating(*l, *c);
                        (rating_word(r, cell2 - 1).to_string(), Some(r))
                    })
                    .collect()
            })
            .collect(),
        row: choice
            .likelihood()
            .and_then(|l| likelihoods.iter().position(|x| *x == l)),
        col: choice
            .consequences
            .and_then(|c| Consequences::ALL.iter().position(|x| *x == c)),
    };
    let mut lines = matrix_lines(&m1, label1, cell1, no_color);
    lines.extend(matrix_lines(&m2, label2, cell2, no_color));
    let modes = state.mode_count();
    let bold = Style::new().add_modifier(Modifier::BOLD);
    lines.push(match (choice.likelihood(), choice.rating()) {
        (Some(l), Some(r)) => Line::from(vec![
            Span::raw(format!(
                "Mode {} of {modes}: {} → ",
                n + 1,
                l.as_str().replace('_', " ")
            )),
            Span::styled(loud(r), bold),
        ]),
        (Some(l), None) => Line::from(format!(
            "Mode {} of {modes}: {} → (consequences)",
            n + 1,
            l.as_str().replace('_', " ")
        )),
        _ => Line::from(format!(
            "Mode {} of {modes}: choose failure and impact",
            n + 1
        )),
    });
    if modes > 1 {
        let all: Vec<String> = (0..modes)
            .map(|m| {
                format!(
                    "{} {}",
                    m + 1,
                    state
                        .mode_choice(m)
                        .rating()
                        .map_or("—".to_string(), |r| r.as_str().to_string())
                )
            })
            .collect();
        lines.push(Line::from(format!("Modes: {}", all.join(", "))));
    }
    let (overall, rated) = state.overall();
    match overall {
        Some(r) => {
            lines.push(Line::from(vec![
                Span::raw("Overall: "),
                Span::styled(loud(r), bold),
                Span::raw(format!(
                    " (highest of {rated} mode{})",
                    if rated == 1 { "" } else { "s" }
                )),
            ]));
            let months = assessment::months_for(&state.intervals, r);
            if let Ok(Some(on)) = work_form::parse_date(state.form.text(Key::On), false) {
                lines.push(Line::from(format!(
                    "Next inspection {} ({months} months)",
                    risk::next_inspection(on, months)
                )));
            }
        }
        None => lines.push(Line::from("Overall: not rated yet")),
    }
    lines
}

fn proposal_lines(p: &Proposal) -> Vec<Line<'static>> {
    let bold = Style::new().add_modifier(Modifier::BOLD);
    let mut lines = vec![
        Line::from(Span::styled(
            format!("{} risk: proposed work order", loud(p.assessment.overall)),
            bold,
        )),
        Line::from(format!(
            "priority {} {} ({}); {}",
            p.proposal.priority,
            p.proposal.priority.label(),
            match p.assessment.overall {
                RiskRating::Extreme => "extreme: mitigate now",
                _ => "high",
            },
            p.proposal.reason
        )),
    ];
    lines.push(Line::from(""));
    lines
}

fn proposal_keys(p: &Proposal) -> &'static str {
    if p.editing {
        "Tab/↑↓ move · ←/→ choose · Ctrl-S or Enter on the last field: done · Esc drops the changes"
    } else {
        "y or Enter: save and create this order · e: edit it · s: save without it · Esc: back to the fields"
    }
}

/// Draws the form.
pub fn render(state: &State, no_color: bool, frame: &mut Frame<'_>, area: Rect) {
    let block = Block::default()
        .borders(Borders::ALL)
        .title(format!(" Risk assessment — {} ", state.label));
    let inner = block.inner(area);
    frame.render_widget(block, area);
    let caution_height = text::wrapped_height(CAUTION, inner.width);
    let [main, caution] =
        Layout::vertical([Constraint::Min(4), Constraint::Length(caution_height)]).areas(inner);
    // At 80 columns the fields take 30 and the matrices get room for words.
    let left_width = if inner.width < 90 {
        30.min(inner.width)
    } else {
        inner.width * 44 / 100
    };
    let [left, right] =
        Layout::horizontal([Constraint::Length(left_width), Constraint::Min(10)]).areas(main);
    let right_block = Block::default().borders(Borders::LEFT);
    let right_inner = right_block.inner(right);
    frame.render_widget(right_block, right);
    match &state.stage {
        Stage::Editing => state.form.render(frame, left, 12, true),
        Stage::Proposal(p) => {
            let head = proposal_lines(p);
            let head_height: u16 = head
                .iter()
                .map(|l| text::wrapped_height(&l.to_string(), left.width))
                .sum();
            let keys = proposal_keys(p);
            let keys_height = text::wrapped_height(keys, left.width);
            let [top, fields, bottom] = Layout::vertical([
                Constraint::Length(head_height),
                Constraint::Min(3),
                Constraint::Length(keys_height),
            ])
            .areas(left);
            frame.render_widget(Paragraph::new(head).wrap(Wrap { trim: true }), top);
            p.form.render(frame, fields, 9, p.editing);
            frame.render_widget(
                Paragraph::new(Span::styled(
                    keys,
                    Style::new().add_modifier(Modifier::BOLD),
                ))
                .wrap(Wrap { trim: true }),
                bottom,
            );
        }
    }
    frame.render_widget(
        Paragraph::new(matrices_and_results(
            state,
            right_inner.width as usize,
            no_color,
        )),
        right_inner,
    );
    frame.render_widget(
        Paragraph::new(Span::styled(
            CAUTION,
            Style::new().add_modifier(Modifier::ITALIC),
        ))
        .wrap(Wrap { trim: true }),
        caution,
    );
}

#[cfg(test)]
mod tests {
    use super::*;

    fn state() -> State {
        let intervals = RiskRating::ALL
            .iter()
            .map(|r| (*r, risk::default_reinspection_months(*r)))
            .collect();
        State::new(
            3,
            "tree 3",
            "K. Lee",
            intervals,
            NaiveDate::from_ymd_opt(2026, 11, 30).expect("date"),
            false,
        )
    }

    fn press(state: &mut State, code: KeyCode) -> Option<Outcome> {
        state.handle_key(KeyEvent::from(code))
    }

    fn ctrl(state: &mut State, c: char) -> Option<Outcome> {
        state.handle_key(KeyEvent::new(KeyCode::Char(c), KeyModifiers::CONTROL))
    }

    #[test]
    fn modes_are_added_removed_and_renumbered() {
        let mut s = state();
        assert_eq!(s.mode_count(), 1);
        ctrl(&mut s, 'n');
        ctrl(&mut s, 'n');
        assert_eq!(s.mode_count(), 3);
        assert_eq!(s.form.focused_key(), Some(Key::Mode(2, ModeField::Part)));
        press(&mut s, KeyCode::Right);
        s.form.focus_on(Key::Mode(1, ModeField::Target));
        ctrl(&mut s, 'd');
        assert_eq!(s.mode_count(), 2);
        assert_eq!(
            s.form.chosen(Key::Mode(1, ModeField::Part)),
            Some(0),
            "the third mode became the second"
        );
        ctrl(&mut s, 'o');
        assert_eq!(s.option_count(), 1);
        ctrl(&mut s, 'd');
        assert_eq!(s.option_count(), 0);
        s.form.focus_on(Key::Mode(0, ModeField::Part));
        ctrl(&mut s, 'd');
        assert!(
            matches!(ctrl(&mut s, 'd'), Some(Outcome::Message(m)) if m.contains("at least one"))
        );
    }

    #[test]
    fn missing_choices_are_named_on_save_and_a_moderate_rating_saves_without_work() {
        let mut s = state();
        assert!(matches!(ctrl(&mut s, 's'), Some(Outcome::Message(_))));
        assert_eq!(
            s.form
                .field(Key::Mode(0, ModeField::Failure))
                .and_then(|f| f.error.clone()),
            Some("choose a likelihood of failure".to_string())
        );
        // trunk, occasional, probable × medium = somewhat likely; × severe = moderate (ISA BMP 2017).
        s.form.set_choice(Key::Mode(0, ModeField::Part), Some(0));
        s.form
            .set_choice(Key::Mode(0, ModeField::Occupancy), Some(1));
        s.form.set_choice(Key::Mode(0, ModeField::Failure), Some(2));
        s.form.set_choice(Key::Mode(0, ModeField::Impact), Some(2));
        s.form
            .set_choice(Key::Mode(0, ModeField::Consequences), Some(3));
        assert_eq!(s.overall(), (Some(RiskRating::Moderate), 1));
        match ctrl(&mut s, 's') {
            Some(Outcome::Save { assessment, work }) => {
                assert_eq!(assessment.overall, RiskRating::Moderate);
                assert!(work.is_none());
            }
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn the_rules_errors_land_on_their_fields() {
        assert_eq!(key_of_error("on"), Some(Key::On));
        assert_eq!(
            key_of_error("mode 2 size"),
            Some(Key::Mode(1, ModeField::Size))
        );
        assert_eq!(
            key_of_error("mitigation 1 residual"),
            Some(Key::Mitigation(0, OptionField::Residual))
        );
        let mut s = state();
        s.form.set_text(Key::On, "2027-01-01");
        for (field, index) in [
            (ModeField::Part, 0),
            (ModeField::Occupancy, 0),
            (ModeField::Failure, 0),
            (ModeField::Impact, 0),
            (ModeField::Consequences, 0),
        ] {
            s.form.set_choice(Key::Mode(0, field), Some(index));
        }
        assert!(matches!(ctrl(&mut s, 's'), Some(Outcome::Message(_))));
        assert!(
            s.form
                .field(Key::On)
                .and_then(|f| f.error.clone())
                .is_some_and(|e| e.contains("after today"))
        );
    }
}
