//! The app's care flows: the care view's lists and filters, the risk assessment form and the work order
//! it proposes, work-order dialogs (add, schedule, done, cancel, edit) and the tree-attributes dialog.
//! Every write goes through the query facade; a store error becomes the status message (and, in a
//! dialog, the reason next to the field it names).

use chrono::{DateTime, Utc};
use ratatui::crossterm::event::KeyEvent;

use super::{App, ConfirmFor, Dialog, PickFor, Popup, View, WorkStep};
use crate::care::work::{WorkChange, WorkStatus};
use crate::model::TreeStatus;
use crate::store::StoreError;
use crate::store::roster::TreeDetail;
use crate::tui::query::Query;
use crate::tui::views::assess_form::{self, Outcome as AssessOutcome};
use crate::tui::views::care;
use crate::tui::views::tree_edit::{self, Outcome as EditOutcome};
use crate::tui::views::work_form::{self, Outcome as WorkOutcome, Request};
use crate::tui::widgets::picker::Picker;

/// The audit actor of work-order and attribute changes made in the TUI.
const ACTOR: &str = "care (TUI)";

/// "tree 12 · Acer rubrum · 14 Quill Lane".
fn tree_label(detail: &TreeDetail) -> String {
    let s = &detail.summary;
    let place = match (&s.house_number, &s.street) {
        (Some(n), Some(street)) => format!("{n} {street}"),
        (None, Some(street)) => street.clone(),
        _ => "no address".to_string(),
    };
    format!("tree {} · {} · {place}", s.id, s.species)
}

impl App {
    /// Shows the care view, loading its lists the first time.
    pub(super) fn show_care(&mut self, query: &mut Query<'_>) -> Result<(), StoreError> {
        if self.care.is_none() {
            self.care = Some(care::State::new(
                query.watch_items()?,
                query.work_items()?,
                query.currency()?,
                self.today,
            ));
        }
        self.view = View::Care;
        Ok(())
    }

    /// Reloads the care lists after a write (when loaded).
    pub(super) fn reload_care(&mut self, query: &mut Query<'_>) -> Result<(), StoreError> {
        if let Some(care) = &mut self.care {
            care.reload(query.watch_items()?, query.work_items()?);
        }
        Ok(())
    }

    /// After a write about `tree_id`: the roster index, the plan, the care lists and the card (when it
    /// shows that tree) are read again.
    fn after_write(&mut self, tree_id: i64, query: &mut Query<'_>) -> Result<(), StoreError> {
        self.refresh_roster_entries(&[tree_id], query)?;
        self.plan = None;
        self.reload_care(query)?;
        if let Some(card) = &mut self.card
            && card.detail.summary.id == tree_id
        {
            if let Some(detail) = query.tree_detail(tree_id)? {
                card.detail = detail;
            }
            card.benefits = query.tree_benefits(tree_id);
        }
        Ok(())
    }

    /// Enter in the care view: the card of the row's tree (Esc comes back here).
    pub(super) fn open_care_card(&mut self, query: &mut Query<'_>) -> Result<(), StoreError> {
        let Some(id) = self.care.as_ref().and_then(care::State::selected_tree) else {
            self.message = Some("no row selected".to_string());
            return Ok(());
        };
        self.roster.select_id(id);
        self.show_card(id, query)?;
        self.card_return = View::Care;
        Ok(())
    }

    /// The tree the care actions are about: the card's in the card, the row's in the care view.
    fn target_tree(&self) -> Option<i64> {
        match self.view {
            View::Card => self.card.as_ref().map(|c| c.detail.summary.id),
            View::Care => self.care.as_ref().and_then(care::State::selected_tree),
            _ => self.roster.selected_id(),
        }
    }

    /// `f` in the care view: choose what to filter by, then the value.
    pub(super) fn start_care_filter(&mut self) {
        let Some(care) = &self.care else { return };
        let kinds = care
            .filter_kinds()
            .iter()
            .map(|(_, label)| label.to_string())
            .collect();
        let title = match care.list {
            care::List::Watch => "Filter the watchlist by",
            care::List::Work => "Filter the work queue by",
        };
        self.popup = Some(Popup::Pick(
            PickFor::CareFilterKind,
            Picker::new(title, kinds, ""),
        ));
    }

    /// `a`: opens the assessment form for the tree of the card or of the care row.
    pub(super) fn start_assess(&mut self, query: &mut Query<'_>) -> Result<(), StoreError> {
        let Some(id) = self.target_tree() else {
            self.message = Some("no tree selected".to_string());
            return Ok(());
        };
        let Some(detail) = query.tree_detail(id)? else {
            self.message = Some(format!("tree {id} no longer exists"));
            return Ok(());
        };
        if detail.summary.status != TreeStatus::Standing {
            self.message = Some(format!(
                "tree {id} is {}, and only standing trees are assessed",
                detail.summary.status
            ));
            return Ok(());
        }
        self.assess = Some(assess_form::State::new(
            id,
            &tree_label(&detail),
            &self.last_assessor,
            query.reinspection_intervals()?,
            self.today,
            self.settings.us_units,
        ));
        self.assess_return = self.view;
        self.view = View::Assess;
        Ok(())
    }

    /// Leaves the assessment form without saving.
    pub(super) fn leave_assess(&mut self, query: &mut Query<'_>) -> Result<(), StoreError> {
        let tree = self.assess.take().map(|a| a.tree_id);
        self.view = self.assess_return;
        if self.view == View::Card
            && let Some(tree) = tree
            && self.card.as_ref().map(|c| c.detail.summary.id) != Some(tree)
        {
            self.show_card(tree, query)?;
        }
        Ok(())
    }

    pub(super) fn assess_key(
        &mut self,
        key: KeyEvent,
        query: &mut Query<'_>,
        now: DateTime<Utc>,
    ) -> Result<(), StoreError> {
        let Some(assess) = &mut self.assess else {
            self.view = self.assess_return;
            return Ok(());
        };
        match assess.handle_key(key) {
            None => {}
            Some(AssessOutcome::Pick { title, options }) => {
                self.popup = Some(Popup::Pick(
                    PickFor::AssessChoice,
                    Picker::new(title, options, ""),
                ));
            }
            Some(AssessOutcome::Message(text)) => self.message = Some(text),
            Some(AssessOutcome::Leave) => {
                if assess.dirty {
                    self.popup = Some(Popup::Confirm(
                        ConfirmFor::LeaveAssess,
                        "Leave the risk assessment and drop what is entered? (y / n)".to_string(),
                    ));
                } else {
                    self.leave_assess(query)?;
                }
            }
            Some(AssessOutcome::Save { assessment, work }) => {
                let tree_id = assess.tree_id;
                let actor = assessment
                    .assessor
                    .clone()
                    .unwrap_or_else(|| "assessment form".to_string());
                match query.record_assessment(tree_id, &assessment, work.as_deref(), &actor, now) {
                    Err(error) => {
                        self.message = Some(format!("not saved: {error}"));
                    }
                    Ok(recorded) => {
                        self.last_assessor = assessment.assessor.clone().unwrap_or_default();
                        let rating = assessment.overall.as_str().to_uppercase();
                        let text = match (recorded.work_order_id, &work) {
                            (Some(order_id), Some(order)) => format!(
                                "saved assessment {}: {rating}; work order {order_id} created ({}, priority {})",
                                recorded.assessment_id, order.task, order.priority
                            ),
                            _ => format!(
                                "saved assessment {}: {rating}; next inspection {}",
                                recorded.assessment_id, assessment.next_due_on
                            ),
                        };
                        self.assess = None;
                        self.after_write(tree_id, query)?;
                        self.view = self.assess_return;
                        let card_of_tree =
                            self.card.as_ref().map(|c| c.detail.summary.id) == Some(tree_id);
                        match self.view {
                            View::Card if !card_of_tree => self.show_card(tree_id, query)?,
                            View::Care => {
                                if let Some(care) = &mut self.care {
                                    care.select_tree(tree_id);
                                    if let Some(order_id) = recorded.work_order_id {
                                        care.select_order(order_id);
                                    }
                                }
                            }
                            _ => {}
                        }
                        self.message = Some(text);
                    }
                }
            }
        }
        Ok(())
    }

    /// `w` on the card, `n` in the care view: a new work order for the tree.
    pub(super) fn start_add_work(&mut self, query: &mut Query<'_>) -> Result<(), StoreError> {
        let Some(id) = self.target_tree() else {
            self.message = Some("no tree selected".to_string());
            return Ok(());
        };
        let Some(detail) = query.tree_detail(id)? else {
            self.message = Some(format!("tree {id} no longer exists"));
            return Ok(());
        };
        self.dialog = Some(Dialog::Work(Box::new(work_form::State::add(
            id,
            &format!("{} ({})", tree_label(&detail), detail.summary.status),
        ))));
        Ok(())
    }

    /// `s`, `d`, `c`, `e` in the work queue: a dialog for the selected order.
    pub(super) fn start_work(&mut self, step: WorkStep) {
        let item = self
            .care
            .as_ref()
            .filter(|c| c.list == care::List::Work)
            .and_then(care::State::selected_work)
            .map(|e| e.item.clone());
        let Some(item) = item else {
            self.message = Some(
                "choose an order in the work queue first (w shows the work queue)".to_string(),
            );
            return;
        };
        if !item.status.is_pending() {
            let hint = if item.status == WorkStatus::Done {
                "done orders are final; add a new order (n) for more work"
            } else {
                "cancelled orders are final; add a new order (n) instead"
            };
            self.message = Some(format!("work order {} is {}: {hint}", item.id, item.status));
            return;
        }
        let state = match step {
            WorkStep::Schedule => work_form::State::schedule(&item, self.today),
            WorkStep::Done => work_form::State::done(&item, self.today),
            WorkStep::Cancel => work_form::State::cancel(&item),
            WorkStep::Edit => work_form::State::edit(&item),
        };
        self.dialog = Some(Dialog::Work(Box::new(state)));
    }

    /// `e` on the card: the tree-attributes dialog.
    pub(super) fn start_edit_tree(&mut self, query: &mut Query<'_>) -> Result<(), StoreError> {
        let Some(card) = &self.card else {
            return Ok(());
        };
        let species = query.species()?;
        self.dialog = Some(Dialog::EditTree(Box::new(tree_edit::State::new(
            &card.detail,
            &species,
            self.today,
        ))));
        Ok(())
    }

    /// `o` on the card: the tree's work orders (every status) in the work queue.
    pub(super) fn show_tree_work(&mut self, query: &mut Query<'_>) -> Result<(), StoreError> {
        let Some(id) = self.card.as_ref().map(|c| c.detail.summary.id) else {
            return Ok(());
        };
        self.show_care(query)?;
        if let Some(care) = &mut self.care {
            care.show_tree_work(id);
        }
        self.message = Some(format!(
            "work orders of tree {id}, every status (F shows the whole queue)"
        ));
        Ok(())
    }

    pub(super) fn dialog_key(
        &mut self,
        key: KeyEvent,
        query: &mut Query<'_>,
        now: DateTime<Utc>,
    ) -> Result<(), StoreError> {
        let Some(dialog) = self.dialog.take() else {
            return Ok(());
        };
        match dialog {
            Dialog::Work(mut state) => match state.handle_key(key) {
                None => self.dialog = Some(Dialog::Work(state)),
                Some(WorkOutcome::Pick { title, options }) => {
                    self.dialog = Some(Dialog::Work(state));
                    self.popup = Some(Popup::Pick(
                        PickFor::DialogChoice,
                        Picker::new(title, options, ""),
                    ));
                }
                Some(WorkOutcome::Message(text)) => {
                    self.message = Some(text);
                    self.dialog = Some(Dialog::Work(state));
                }
                Some(WorkOutcome::Leave) => {
                    if state.dirty {
                        self.popup = Some(Popup::Confirm(
                            ConfirmFor::CloseDialog,
                            "Close the dialog and drop what is typed? (y / n)".to_string(),
                        ));
                        self.dialog = Some(Dialog::Work(state));
                    }
                }
                Some(WorkOutcome::Submit(request)) => {
                    if let Err(error) = self.submit_work(&request, query, now) {
                        let text = error.to_string();
                        state.show_error(&text);
                        self.message = Some(format!("not saved: {text}"));
                        self.dialog = Some(Dialog::Work(state));
                    }
                }
            },
            Dialog::EditTree(mut state) => match state.handle_key(key) {
                None => self.dialog = Some(Dialog::EditTree(state)),
                Some(EditOutcome::PickSpecies(typed)) => {
                    let items = state
                        .species_names
                        .iter()
                        .map(|(botanical, common)| format!("{botanical} — {common}"))
                        .collect();
                    self.dialog = Some(Dialog::EditTree(state));
                    self.popup = Some(Popup::Pick(
                        PickFor::EditSpecies,
                        Picker::new("Species", items, &typed),
                    ));
                }
                Some(EditOutcome::Pick { title, options }) => {
                    self.dialog = Some(Dialog::EditTree(state));
                    self.popup = Some(Popup::Pick(
                        PickFor::DialogChoice,
                        Picker::new(title, options, ""),
                    ));
                }
                Some(EditOutcome::Message(text)) => {
                    self.message = Some(text);
                    self.dialog = Some(Dialog::EditTree(state));
                }
                Some(EditOutcome::Leave) => {
                    if state.dirty {
                        self.popup = Some(Popup::Confirm(
                            ConfirmFor::CloseDialog,
                            "Close the dialog and drop what is typed? (y / n)".to_string(),
                        ));
                        self.dialog = Some(Dialog::EditTree(state));
                    }
                }
                Some(EditOutcome::Submit(text)) => {
                    let tree_id = state.tree_id;
                    match query.edit_tree(tree_id, &text, self.today, ACTOR, now) {
                        Err(error) => {
                            self.message = Some(format!("not saved: {error}"));
                            self.dialog = Some(Dialog::EditTree(state));
                        }
                        Ok(outcome) => {
                            self.after_write(tree_id, query)?;
                            self.message = Some(if outcome.changed {
                                format!(
                                    "saved tree {tree_id}'s attributes (zone {}); no measurement added",
                                    outcome.zone.as_deref().unwrap_or("none")
                                )
                            } else {
                                format!("tree {tree_id}: nothing changed")
                            });
                        }
                    }
                }
            },
        }
        Ok(())
    }

    /// Writes a work-order request; on success closes the dialog and says what happened.
    fn submit_work(
        &mut self,
        request: &Request,
        query: &mut Query<'_>,
        now: DateTime<Utc>,
    ) -> Result<(), StoreError> {
        match request {
            Request::Add(order) => {
                let id = query.add_work_order(order, ACTOR, now)?;
                self.after_write(order.tree_id, query)?;
                if let Some(care) = &mut self.care {
                    care.select_order(id);
                }
                self.message = Some(format!(
                    "added work order {id}: {}, priority {}, tree {}",
                    order.task, order.priority, order.tree_id
                ));
            }
            Request::Change { order_id, change } => {
                let outcome = query.change_work_order(*order_id, change, self.today, ACTOR, now)?;
                let order = &outcome.order;
                self.after_write(order.tree_id, query)?;
                let mut text = match change {
                    WorkChange::Schedule { .. } => format!(
                        "work order {order_id} scheduled for {}{}",
                        order
                            .scheduled_on
                            .map(|d| d.to_string())
                            .unwrap_or_default(),
                        order
                            .crew
                            .as_deref()
                            .map(|c| format!(" ({c})"))
                            .unwrap_or_default()
                    ),
                    WorkChange::Done { .. } => format!(
                        "work order {order_id} ({}) done on {}",
                        order.task,
                        order.done_on.map(|d| d.to_string()).unwrap_or_default()
                    ),
                    WorkChange::Cancel { .. } => format!("work order {order_id} cancelled"),
                    WorkChange::Edit { .. } => format!(
                        "work order {order_id} now {}, priority {}{}",
                        order.task,
                        order.priority,
                        order
                            .due_on
                            .map(|d| format!(", due {d}"))
                            .unwrap_or_default()
                    ),
                };
                if let Some(on) = outcome.tree_removed_on {
                    text.push_str(&format!(
                        "; tree {} now removed as of {on} (kept in its history)",
                        order.tree_id
                    ));
                }
                if !outcome.cancelled_with_tree.is_empty() {
                    text.push_str(&format!(
                        "; also cancelled: {}",
                        outcome
                            .cancelled_with_tree
                            .iter()
                            .map(|i| i.to_string())
                            .collect::<Vec<_>>()
                            .join(", ")
                    ));
                }
                if let Some(care) = &mut self.care {
                    care.select_order(*order_id);
                }
                self.message = Some(text);
            }
        }
        Ok(())
    }
}
