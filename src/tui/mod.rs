//! The terminal UI: `app.rs` holds state and the `Action` enum (input → action → state change →
//! render), one module per view under `views/`, and `query.rs` is the facade views read through (no
//! SQL here).

pub mod app;
pub mod query;
pub mod views;

use std::time::Duration;

use ratatui::crossterm::event::{self, Event, KeyEventKind};

use crate::store::Store;
use app::App;
use query::Query;

/// Opens the TUI on a store until the user quits. Restores the terminal on every exit path.
pub fn run(store: &Store, settings: app::AppSettings) -> anyhow::Result<()> {
    let query = Query::new(store);
    let mut app = App::new(&query, settings)?;
    let mut terminal = ratatui::init();
    let result = event_loop(&mut terminal, &mut app, &query);
    ratatui::restore();
    result
}

fn event_loop(
    terminal: &mut ratatui::DefaultTerminal,
    app: &mut App,
    query: &Query<'_>,
) -> anyhow::Result<()> {
    loop {
        let size = terminal.size()?;
        app.set_viewport(size.height);
        app.refresh(query)?;
        terminal.draw(|frame| app.render(frame))?;
        if !event::poll(Duration::from_millis(250))? {
            continue;
        }
        match event::read()? {
            Event::Key(key) if key.kind == KeyEventKind::Press => {
                if let Some(action) = app.handle_key(key) {
                    app.update(action);
                }
            }
            Event::Resize(_, _) => {}
            _ => {}
        }
        if app.should_quit() {
            return Ok(());
        }
    }
}
