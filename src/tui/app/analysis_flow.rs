//! The app's analysis flows: the year summary (its year computed off the UI thread, the printable
//! report written to a file the user confirms) and the studies view (runs off the UI thread). Results
//! come through the query facade; a write makes them stale (the query's generation moves on) and the
//! view shown asks again.

use std::path::Path;

use tui_input::Input;

use super::{App, Popup, PromptFor, View};
use crate::store::StoreError;
use crate::tui::query::Query;
use crate::tui::views::studies;
use crate::tui::views::year_summary;

impl App {
    /// Shows the year summary; the first time, it starts computing the latest year.
    pub(super) fn show_summary(&mut self, query: &mut Query<'_>) -> Result<(), StoreError> {
        if self.summary.is_none() {
            self.summary = Some(year_summary::State::new(query.weather_years()?));
        }
        self.view = View::YearSummary;
        self.sync_analysis(query);
        Ok(())
    }

    /// A year summary key (another year is fetched at once).
    pub(super) fn summary_key(&mut self, key: year_summary::Key, query: &mut Query<'_>) {
        if let Some(summary) = &mut self.summary
            && summary.apply(key)
        {
            self.sync_analysis(query);
        }
    }

    /// `x` in the year summary: asks where the report goes.
    pub(super) fn start_export(&mut self) {
        let Some(summary) = &self.summary else {
            return;
        };
        match &summary.run {
            None => {
                self.message = Some(
                    "the year is still being computed; export when the totals show".to_string(),
                )
            }
            Some(Err(e)) => self.message = Some(format!("nothing to export: {e}")),
            Some(Ok(run)) => {
                self.popup = Some(Popup::Prompt(
                    PromptFor::ExportPath,
                    format!(
                        "Write the printable HTML report of {} to this file (relative to the folder Streetwood started in). Enter writes, Esc cancels.",
                        run.year
                    ),
                    Input::new(default_report_name(run.year)),
                ));
            }
        }
    }

    /// Writes the report to the typed path; false (and the reason in the status line) when refused,
    /// so the prompt stays open for another name.
    pub(super) fn export_to(&mut self, text: &str, query: &mut Query<'_>) -> bool {
        let Some(run) = self.summary.as_ref().and_then(|s| s.ready().cloned()) else {
            self.message = Some("nothing to export yet".to_string());
            return true;
        };
        match query.export_year_report(&run, Path::new(text.trim()), self.today) {
            Ok(path) => {
                self.message = Some(format!(
                    "wrote the year summary report of {} to {}",
                    run.year,
                    path.display()
                ));
                true
            }
            Err(e) => {
                self.message = Some(format!("not written: {e}"));
                false
            }
        }
    }

    /// Shows the studies; the first time, it reads the list and runs the first study.
    pub(super) fn show_studies(&mut self, query: &mut Query<'_>) -> Result<(), StoreError> {
        if self.studies.is_none() {
            self.studies = Some(studies::State::new(query.studies()?));
        }
        self.view = View::Studies;
        self.sync_analysis(query);
        Ok(())
    }

    /// A studies key (`r` reads the list again).
    pub(super) fn studies_key(
        &mut self,
        key: studies::Key,
        query: &mut Query<'_>,
    ) -> Result<(), StoreError> {
        if key == studies::Key::Reload {
            let list = query.studies()?;
            let count = list.len();
            if let Some(state) = &mut self.studies {
                state.reload(list);
            }
            self.message = Some(format!(
                "{count} stud{} read; create and edit them with `streetwood study …`",
                if count == 1 { "y" } else { "ies" }
            ));
        } else if let Some(state) = &mut self.studies {
            state.apply(key);
        }
        self.sync_analysis(query);
        Ok(())
    }

    /// Takes results of background work into the view shown, and asks again for those a write made
    /// stale (only for the view shown: nothing is recomputed for a view nobody looks at).
    pub(super) fn sync_analysis(&mut self, query: &mut Query<'_>) {
        let generation = query.generation();
        match self.view {
            View::YearSummary => {
                if let Some(summary) = &mut self.summary
                    && (summary.run.is_none() || summary.generation != generation)
                {
                    match query.year_run(summary.year) {
                        Some(result) => summary.set_run(result, generation),
                        None => {
                            summary.run = None;
                            summary.generation = generation;
                        }
                    }
                }
            }
            View::Studies => {
                if let Some(state) = &mut self.studies
                    && let Some(name) = state.open.clone()
                    && (state.run.is_none() || state.generation != generation)
                {
                    match query.study_run(&name, state.mode) {
                        Some(result) => state.set_run(result, generation),
                        None => {
                            state.run = None;
                            state.generation = generation;
                        }
                    }
                }
            }
            _ => {}
        }
    }
}

/// The report's default file name.
pub fn default_report_name(year: i32) -> String {
    format!("streetwood-summary-{year}.html")
}
