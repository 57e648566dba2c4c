//! TUI tests: every view drawn on ratatui's TestBackend from the demo inventory (insta snapshots at
//! 100×30 and 80×24), key sequences → state, and the real binary in a pseudo-terminal.

mod common;

use chrono::{NaiveDate, TimeZone, Utc};
use ratatui::Terminal;
use ratatui::backend::TestBackend;
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use streetwood::store::Store;
use streetwood::store::audit;
use streetwood::tui::app::{Action, App, AppSettings, View};
use streetwood::tui::query::Query;

fn demo_store() -> Store {
    let mut store = Store::open_in_memory().expect("store");
    streetwood::cli::demo::load_demo(&mut store).expect("demo loads");
    store
}

fn today() -> NaiveDate {
    NaiveDate::from_ymd_opt(2026, 11, 30).expect("date")
}

fn now() -> chrono::DateTime<Utc> {
    Utc.with_ymd_and_hms(2026, 11, 30, 10, 0, 0)
        .single()
        .expect("time")
}

fn screen(app: &mut App, query: &mut Query<'_>, width: u16, height: u16) -> String {
    let mut terminal = Terminal::new(TestBackend::new(width, height)).expect("terminal");
    app.set_viewport(height);
    app.refresh(query).expect("refresh");
    terminal.draw(|frame| app.render(frame)).expect("draw");
    let buffer = terminal.backend().buffer().clone();
    let mut text = String::new();
    for y in 0..buffer.area.height {
        let mut line = String::new();
        for x in 0..buffer.area.width {
            line.push_str(buffer[(x, y)].symbol());
        }
        text.push_str(line.trim_end());
        text.push('\n');
    }
    text
}

fn key(app: &mut App, query: &mut Query<'_>, code: KeyCode) {
    app.on_key(KeyEvent::from(code), query, now());
}

fn keys(app: &mut App, query: &mut Query<'_>, text: &str) {
    for c in text.chars() {
        key(app, query, KeyCode::Char(c));
    }
}

fn ctrl(app: &mut App, query: &mut Query<'_>, c: char) {
    app.on_key(
        KeyEvent::new(KeyCode::Char(c), KeyModifiers::CONTROL),
        query,
        now(),
    );
}

#[test]
fn views_at_100x30_and_80x24() {
    let mut store = demo_store();
    let mut query = Query::new(&mut store);
    let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
    insta::assert_snapshot!("roster_100x30", screen(&mut app, &mut query, 100, 30));
    insta::assert_snapshot!("roster_80x24", screen(&mut app, &mut query, 80, 24));
    key(&mut app, &mut query, KeyCode::Enter);
    assert_eq!(app.view, View::Card);
    insta::assert_snapshot!("card_100x30", screen(&mut app, &mut query, 100, 30));
    insta::assert_snapshot!("card_80x24", screen(&mut app, &mut query, 80, 24));
    keys(&mut app, &mut query, "3");
    insta::assert_snapshot!("field_log_80x24", screen(&mut app, &mut query, 80, 24));
    key(&mut app, &mut query, KeyCode::Esc);
    keys(&mut app, &mut query, "4");
    insta::assert_snapshot!("plan_100x30", screen(&mut app, &mut query, 100, 30));
    keys(&mut app, &mut query, "?");
    insta::assert_snapshot!("plan_help_80x24", screen(&mut app, &mut query, 80, 24));
}

#[test]
fn roster_scrolls_virtually_searches_filters_and_sorts() {
    let mut store = demo_store();
    let mut query = Query::new(&mut store);
    let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
    let first = screen(&mut app, &mut query, 120, 30);
    assert!(first.contains("tree 1 of 2497"), "{first}");
    assert_eq!(
        app.roster.visible_rows().len(),
        24,
        "only the visible rows are fetched"
    );
    keys(&mut app, &mut query, "G");
    let last = screen(&mut app, &mut query, 120, 30);
    assert!(last.contains("tree 2497 of 2497"), "{last}");

    // Incremental search on species and street.
    keys(&mut app, &mut query, "/linden");
    let searched = screen(&mut app, &mut query, 120, 30);
    assert!(searched.contains("search \"linden\""), "{searched}");
    assert!(app.roster.len() > 100 && app.roster.len() < 2497);
    assert!(
        app.roster
            .visible_rows()
            .iter()
            .all(|r| r.common_name.contains("linden"))
    );
    key(&mut app, &mut query, KeyCode::Enter);

    // Filter on a street through the picker, then sort by DBH descending.
    keys(&mut app, &mut query, "F");
    keys(&mut app, &mut query, "f");
    keys(&mut app, &mut query, "street");
    key(&mut app, &mut query, KeyCode::Enter);
    keys(&mut app, &mut query, "Foundry");
    key(&mut app, &mut query, KeyCode::Enter);
    let filtered = screen(&mut app, &mut query, 120, 30);
    assert!(filtered.contains("street Foundry Street"), "{filtered}");
    assert!(
        app.roster
            .visible_rows()
            .iter()
            .all(|r| r.street.as_deref() == Some("Foundry Street"))
    );
    for _ in 0..3 {
        keys(&mut app, &mut query, "s");
    }
    keys(&mut app, &mut query, "r");
    let sorted = screen(&mut app, &mut query, 120, 30);
    assert!(sorted.contains("sorted by DBH (descending)"), "{sorted}");
    let dbhs: Vec<f64> = app
        .roster
        .visible_rows()
        .iter()
        .filter_map(|r| r.dbh_cm)
        .collect();
    assert!(dbhs.windows(2).all(|w| w[0] >= w[1]), "{dbhs:?}");
}

#[test]
fn adding_a_tree_saves_it_with_an_audit_row_and_bad_dbh_is_refused_with_the_reason() {
    let mut store = demo_store();
    let before = audit::count(store.conn(), "trees", "insert").expect("count");
    {
        let mut query = Query::new(&mut store);
        let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
        keys(&mut app, &mut query, "n");
        assert_eq!(app.view, View::FieldLog);
        keys(&mut app, &mut query, "red maple");
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "Quill Lane");
        for _ in 0..6 {
            key(&mut app, &mut query, KeyCode::Tab);
        }
        keys(&mut app, &mut query, "4000");
        let text = screen(&mut app, &mut query, 100, 30);
        assert!(
            text.contains("4000 cm is not plausible"),
            "the reason is shown as typed:\n{text}"
        );
        ctrl(&mut app, &mut query, 's');
        assert!(
            app.message
                .as_deref()
                .is_some_and(|m| m.contains("not saved"))
        );
        for _ in 0..4 {
            key(&mut app, &mut query, KeyCode::Backspace);
        }
        keys(&mut app, &mut query, "12 in");
        ctrl(&mut app, &mut query, 's');
        let message = app.message.clone().unwrap_or_default();
        assert!(
            message.contains("saved new tree 2498 on Quill Lane"),
            "{message}"
        );
        assert_eq!(
            app.form
                .value(streetwood::tui::views::field_log::FieldId::Street),
            "Quill Lane"
        );
        assert_eq!(app.roster.selected_id(), Some(2498));
        assert!(app.roster.data.entries.iter().any(|e| e.id == 2498));
    }
    assert_eq!(
        audit::count(store.conn(), "trees", "insert").expect("count"),
        before + 1
    );
    let detail = store.tree_detail(2498).expect("query").expect("saved");
    assert_eq!(detail.summary.species, "Acer rubrum");
    // 12 in = 30.48 cm exactly (NIST SP 811).
    assert_eq!(detail.measurements[0].dbh_cm, 30.48);
    assert_eq!(
        detail.measurements[0].measured_on,
        today().succ_opt().map(|_| today()).unwrap_or(today())
    );
}

#[test]
fn remeasure_and_mark_removed_from_the_card() {
    let mut store = demo_store();
    {
        let mut query = Query::new(&mut store);
        let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
        key(&mut app, &mut query, KeyCode::Enter);
        keys(&mut app, &mut query, "m");
        assert_eq!(app.view, View::FieldLog);
        let text = screen(&mut app, &mut query, 100, 30);
        assert!(text.contains("re-measure tree 1"), "{text}");
        assert!(
            text.contains("was 49.2 cm"),
            "previous values are hints:\n{text}"
        );
        keys(&mut app, &mut query, "50.1");
        ctrl(&mut app, &mut query, 's');
        assert_eq!(app.view, View::Card);
        assert_eq!(
            app.card.as_ref().map(|c| c.detail.measurements.len()),
            Some(3)
        );

        keys(&mut app, &mut query, "x");
        keys(&mut app, &mut query, "storm damage");
        key(&mut app, &mut query, KeyCode::Enter);
        assert_eq!(
            app.card.as_ref().map(|c| c.detail.summary.status.as_str()),
            Some("removed")
        );
    }
    let detail = store.tree_detail(1).expect("query").expect("kept");
    assert_eq!(detail.summary.status.as_str(), "removed");
    assert_eq!(detail.removed_on.as_deref(), Some("2026-11-30"));
    assert!(detail.notes.unwrap_or_default().contains("storm damage"));
}

#[test]
fn quitting_with_unsaved_entries_asks_first() {
    let mut store = demo_store();
    let mut query = Query::new(&mut store);
    let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
    keys(&mut app, &mut query, "n");
    keys(&mut app, &mut query, "Acer");
    ctrl(&mut app, &mut query, 'q');
    assert!(!app.should_quit());
    let text = screen(&mut app, &mut query, 80, 24);
    assert!(text.contains("unsaved entries"), "{text}");
    keys(&mut app, &mut query, "y");
    assert!(app.should_quit());
}

#[test]
fn plan_area_selection_filters_the_roster() {
    let mut store = demo_store();
    let mut query = Query::new(&mut store);
    let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
    app.update(Action::Show(View::Plan), &mut query, now());
    keys(&mut app, &mut query, "v");
    keys(&mut app, &mut query, "ll");
    keys(&mut app, &mut query, "jj");
    keys(&mut app, &mut query, "v");
    assert_eq!(app.view, View::Roster);
    let n = app.roster.len();
    assert!(n > 0 && n < 2497, "{n} trees in the area");
    assert!(
        app.message
            .as_deref()
            .is_some_and(|m| m.contains(&format!("the {n} trees of the area")))
    );
    keys(&mut app, &mut query, "j");
    let text = screen(&mut app, &mut query, 120, 30);
    assert!(text.contains("area from the plan view"), "{text}");
}

#[test]
fn us_units_show_dbh_in_inches() {
    let mut store = demo_store();
    let mut query = Query::new(&mut store);
    let mut app = App::new(
        &query,
        AppSettings {
            us_units: true,
            no_color: true,
        },
        today(),
    )
    .expect("app");
    let text = screen(&mut app, &mut query, 120, 12);
    assert!(text.contains("DBH in"), "{text}");
    let first = app
        .roster
        .visible_rows()
        .first()
        .and_then(|r| r.dbh_cm)
        .expect("a DBH");
    // 1 in = 2.54 cm (NIST SP 811): the shown value is the stored cm divided by 2.54.
    assert!(text.contains(&format!("{:.1}", first / 2.54)), "{text}");
    keys(&mut app, &mut query, "U");
    let metric = screen(&mut app, &mut query, 120, 12);
    assert!(metric.contains("DBH cm"), "{metric}");
}

#[test]
fn empty_inventory_says_how_to_start() {
    let mut store = Store::open_in_memory().expect("store");
    let mut query = Query::new(&mut store);
    let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
    let text = screen(&mut app, &mut query, 100, 10);
    assert!(text.contains("no trees yet"), "{text}");
}

/// The real binary in a pseudo-terminal: add a tree through the field log by keystrokes, quit, then
/// find the new row and its audit row in the SQLite file.
#[test]
fn binary_adds_a_tree_by_keystrokes_in_a_terminal() {
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
    session
        .expect("2497")
        .expect("the roster's status line appears");
    let pause = || std::thread::sleep(std::time::Duration::from_millis(150));
    session.send("n").expect("n");
    pause();
    session.send("Ginkgo biloba").expect("species");
    pause();
    session.send("\t").expect("tab");
    session.send("Pty Test Street").expect("street");
    for _ in 0..6 {
        session.send("\t").expect("tab");
    }
    session.send("25").expect("dbh");
    pause();
    session.send("\x13").expect("ctrl-s");
    session.expect("saved").expect("the save is confirmed");
    pause();
    session.send("\x1b").expect("esc");
    pause();
    session.send("q").expect("q");
    session.expect(expectrl::Eof).expect("the program ends");

    let store = Store::open_existing(&db).expect("open");
    let id = store
        .find_tree("2498")
        .expect("query")
        .expect("the new tree");
    let detail = store.tree_detail(id).expect("query").expect("row");
    assert_eq!(detail.summary.species, "Ginkgo biloba");
    assert_eq!(detail.summary.street.as_deref(), Some("Pty Test Street"));
    assert_eq!(detail.measurements[0].dbh_cm, 25.0);
    let history = audit::entries_for_row(store.conn(), "trees", id).expect("audit");
    assert_eq!(history.len(), 1);
    assert_eq!(history[0].action, "insert");
}

/// On a file, the year's benefits are computed on another thread; the card says so until they come.
#[test]
fn card_benefits_arrive_from_the_background() {
    let dir = tempfile::tempdir().expect("temp dir");
    let path = dir.path().join("demo.db");
    let output = common::run(dir.path(), &["demo", "--out", path.to_str().expect("path")]);
    assert!(output.status.success());
    let mut store = Store::open_existing(&path).expect("open");
    let mut query = Query::new(&mut store);
    let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
    query.start_benefits();
    key(&mut app, &mut query, KeyCode::Enter);
    for _ in 0..200 {
        screen(&mut app, &mut query, 100, 40);
        if !query.busy() {
            break;
        }
        std::thread::sleep(std::time::Duration::from_millis(50));
    }
    assert!(!query.busy(), "the computation finished");
    let text = screen(&mut app, &mut query, 100, 40);
    assert!(text.contains("carbon stored 706.5 kg C"), "{text}");
}

#[test]
fn u_undoes_the_last_saved_tree_after_asking() {
    let mut store = demo_store();
    {
        let mut query = Query::new(&mut store);
        let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
        keys(&mut app, &mut query, "n");
        keys(&mut app, &mut query, "Ginkgo biloba");
        for _ in 0..7 {
            key(&mut app, &mut query, KeyCode::Tab);
        }
        keys(&mut app, &mut query, "20");
        ctrl(&mut app, &mut query, 's');
        key(&mut app, &mut query, KeyCode::Esc);
        assert_eq!(app.view, View::Roster);
        assert_eq!(app.roster.data.entries.len(), 2498);
        keys(&mut app, &mut query, "u");
        let text = screen(&mut app, &mut query, 100, 30);
        assert!(text.contains("Undo change"), "{text}");
        keys(&mut app, &mut query, "y");
        assert!(
            app.message
                .as_deref()
                .is_some_and(|m| m.starts_with("undone: change")),
            "{:?}",
            app.message
        );
        assert_eq!(app.roster.data.entries.len(), 2497);
    }
    assert_eq!(store.tree_count().expect("count"), 2497);
}
