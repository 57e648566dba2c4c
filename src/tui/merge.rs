//! The run loop of the conflict screen (`streetwood merge OTHER --interactive`, dispatched from
//! `main.rs`): draws [`views::merge_conflicts`] until the person merges or cancels. The screen only
//! decides; the caller plans and writes the merge.

use ratatui::crossterm::event::{self, Event, KeyEventKind};

use crate::store::merge::{MergeChoices, MergeReport};
use views::merge_conflicts::{Outcome, State, render};

use super::views;

/// Shows the conflicts of `plan` full screen; the choices to merge with, or `None` when the person
/// cancelled. `ratatui::init` installs a panic hook that restores the terminal; `restore` runs on every
/// other way out, before the caller prints the report.
pub fn choose_conflicts(plan: &MergeReport) -> anyhow::Result<Option<MergeChoices>> {
    let mut state = State::new(plan);
    let mut terminal = ratatui::init();
    let result = (|| -> anyhow::Result<Option<MergeChoices>> {
        loop {
            terminal.draw(|frame| render(&state, frame, frame.area()))?;
            if let Event::Key(key) = event::read()?
                && key.kind == KeyEventKind::Press
            {
                match state.handle_key(key) {
                    Some(Outcome::Merge(choices)) => return Ok(Some(choices)),
                    Some(Outcome::Cancel) => return Ok(None),
                    None => {}
                }
            }
        }
    })();
    ratatui::restore();
    result
}
