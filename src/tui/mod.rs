//! The terminal UI: `app.rs` holds state and the `Action` enum (key → action → state change →
//! render), one module per view under `views/`, shared widgets under `widgets/`, and `query.rs`, the
//! facade every view reads and writes through (no SQL here).

pub mod app;
pub mod format;
pub mod merge;
pub mod query;
pub mod views;
pub mod widgets;

use std::time::Duration;

use ratatui::crossterm::event::{self, Event, KeyEventKind};

use crate::store::Store;
use app::App;
use query::Query;

/// Opens the TUI on a store until the user quits. `ratatui::init` installs a panic hook that restores
/// the terminal, and `restore` runs on every other exit path.
pub fn run(store: &mut Store, settings: app::AppSettings) -> anyhow::Result<()> {
    let mut query = Query::new(store);
    let today = chrono::Local::now().date_naive();
    // The roster index loads off the UI thread, so the first frame comes at once on any size.
    let mut app = App::new_loading(&mut query, settings, today)?;
    // The tree card's benefits need the whole inventory: start on them at once, off the UI thread.
    query.start_benefits();
    let mut terminal = ratatui::init();
    let result = event_loop(&mut terminal, &mut app, &mut query);
    ratatui::restore();
    result
}

fn event_loop(
    terminal: &mut ratatui::DefaultTerminal,
    app: &mut App,
    query: &mut Query<'_>,
) -> anyhow::Result<()> {
    loop {
        let size = terminal.size()?;
        app.set_viewport(size.height);
        if let Err(error) = app.refresh(query) {
            app.message = Some(format!("error: {error}"));
        }
        terminal.draw(|frame| app.render(frame))?;
        let wait = if query.busy() { 100 } else { 500 };
        if !event::poll(Duration::from_millis(wait))? {
            continue;
        }
        if let Event::Key(key) = event::read()?
            && key.kind == KeyEventKind::Press
        {
            app.on_key(key, query, chrono::Utc::now());
        }
        if app.should_quit() {
            return Ok(());
        }
    }
}
