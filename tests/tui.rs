//! TUI tests: the roster drawn on ratatui's TestBackend from a real demo inventory, driven by actions,
//! and a smoke run of the real binary in a pseudo-terminal.

mod common;

use ratatui::Terminal;
use ratatui::backend::TestBackend;
use streetwood::store::Store;
use streetwood::tui::app::{Action, App, AppSettings};
use streetwood::tui::query::Query;
use streetwood::tui::views::roster::Move;

fn demo_store() -> Store {
    let mut store = Store::open_in_memory().expect("store");
    streetwood::cli::demo::load_demo(&mut store).expect("demo loads");
    store
}

fn screen(app: &mut App, query: &Query<'_>, width: u16, height: u16) -> String {
    let mut terminal = Terminal::new(TestBackend::new(width, height)).expect("terminal");
    app.set_viewport(height);
    app.refresh(query).expect("refresh");
    terminal.draw(|frame| app.render(frame)).expect("draw");
    let buffer = terminal.backend().buffer().clone();
    let mut text = String::new();
    for y in 0..buffer.area.height {
        for x in 0..buffer.area.width {
            text.push_str(buffer[(x, y)].symbol());
        }
        text.push('\n');
    }
    text
}

#[test]
fn roster_shows_the_first_page_and_scrolls_virtually() {
    let store = demo_store();
    let query = Query::new(&store);
    let mut app = App::new(&query, AppSettings::default()).expect("app");
    let first = screen(&mut app, &query, 120, 30);
    assert!(first.contains("Roster"), "{first}");
    assert!(first.contains("tree 1 of 2497"), "{first}");
    assert!(first.contains("DBH cm"), "{first}");
    assert!(first.contains("▶"), "the selection is marked by a sign");
    assert_eq!(
        app.roster.visible_rows().len(),
        24,
        "only the visible rows are fetched"
    );

    app.update(Action::Roster(Move::Last));
    let last = screen(&mut app, &query, 120, 30);
    assert!(last.contains("tree 2497 of 2497"), "{last}");
    assert_eq!(app.roster.visible_rows().last().map(|r| r.id), Some(2497));

    app.update(Action::Roster(Move::PageUp));
    app.update(Action::Roster(Move::Up));
    let paged = screen(&mut app, &query, 120, 30);
    assert!(
        paged.contains(&format!("tree {} of 2497", 2497 - 24 - 1)),
        "{paged}"
    );
}

#[test]
fn us_units_show_dbh_in_inches() {
    let store = demo_store();
    let query = Query::new(&store);
    let mut app = App::new(&query, AppSettings { us_units: true }).expect("app");
    let text = screen(&mut app, &query, 120, 12);
    assert!(text.contains("DBH in"), "{text}");
    let first = app
        .roster
        .visible_rows()
        .first()
        .and_then(|r| r.dbh_cm)
        .expect("a DBH");
    // 1 in = 2.54 cm (NIST SP 811): the shown value is the stored cm divided by 2.54.
    assert!(text.contains(&format!("{:.1}", first / 2.54)), "{text}");
}

#[test]
fn help_opens_with_the_caution_and_q_quits() {
    let store = demo_store();
    let query = Query::new(&store);
    let mut app = App::new(&query, AppSettings::default()).expect("app");
    app.update(Action::ToggleHelp);
    let text = screen(&mut app, &query, 100, 30);
    assert!(text.contains("Help"), "{text}");
    assert!(text.contains("qualified arborist"), "{text}");
    let q =
        ratatui::crossterm::event::KeyEvent::from(ratatui::crossterm::event::KeyCode::Char('q'));
    assert_eq!(
        app.handle_key(q),
        Some(Action::ToggleHelp),
        "any key closes help first"
    );
    app.update(Action::ToggleHelp);
    assert_eq!(app.handle_key(q), Some(Action::Quit));
}

#[test]
fn empty_inventory_says_how_to_start() {
    let store = Store::open_in_memory().expect("store");
    let query = Query::new(&store);
    let mut app = App::new(&query, AppSettings::default()).expect("app");
    let text = screen(&mut app, &query, 100, 10);
    assert!(text.contains("no trees yet"), "{text}");
}

/// The real binary in a pseudo-terminal: it starts, draws the roster of the demo and quits on `q`.
#[test]
fn binary_opens_the_roster_in_a_terminal_and_quits() {
    use expectrl::Expect;
    let dir = tempfile::tempdir().expect("temp dir");
    let db = dir.path().join("demo.db");
    let output = common::run(dir.path(), &["demo", "--out", db.to_str().expect("path")]);
    assert!(output.status.success(), "{}", common::stderr(&output));

    let mut command = std::process::Command::new(common::binary());
    command
        .args(["--db", db.to_str().expect("path")])
        .env("TERM", "xterm-256color");
    let mut session = expectrl::session::Session::spawn(command).expect("spawn in a pty");
    session.set_expect_timeout(Some(std::time::Duration::from_secs(20)));
    let found = session
        .expect("2497")
        .expect("the roster's status line appears");
    let size = std::num::NonZeroU16::new;
    let (Some(rows), Some(cols)) = (size(24), size(80)) else {
        unreachable!("non-zero sizes")
    };
    let mut parser = vt100::Parser::new(rows, cols, 0);
    parser.process(found.before());
    parser.process(found.as_bytes());
    let contents = parser.screen().contents();
    assert!(contents.contains("Streetwood"), "{contents}");
    assert!(contents.contains("Roster"), "{contents}");
    assert!(contents.contains("tree 1 of 2497"), "{contents}");
    session.send("q").expect("send q");
    session.expect(expectrl::Eof).expect("the program ends");
    let status = session.get_process().wait().expect("exit status");
    let status = format!("{status:?}");
    assert!(
        status.starts_with("Exited(") && status.ends_with(", 0)"),
        "{status}"
    );
}
