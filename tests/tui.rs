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
    // The TUI makes a rolling backup of the file it opens: keep it (and everything else) out of the
    // real home directory.
    command
        .args(["--db", db.to_str().expect("path")])
        .env("TERM", "xterm-256color")
        .env("HOME", dir.path())
        .env("XDG_DATA_HOME", dir.path().join("xdg-data"))
        .env("STREETWOOD_BACKUP_DIR", dir.path().join("backups"));
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
    assert!(
        dir.path().join("backups").is_dir(),
        "the rolling backup went to the test's folder"
    );
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

// ---- Care: watchlist, work queue, assessment form, work orders, tree attributes -------------------

use ratatui::buffer::Buffer;
use ratatui::style::{Color, Modifier};
use streetwood::care::risk::{CAUTION, RiskRating};
use streetwood::care::work::{Priority, WorkStatus, WorkTask};
use streetwood::model::TreeStatus;
use streetwood::tui::app::keys_of;
use streetwood::tui::views::assess_form::{self, ModeField};
use streetwood::tui::views::care::List;

fn buffer(app: &mut App, query: &mut Query<'_>, width: u16, height: u16) -> Buffer {
    let mut terminal = Terminal::new(TestBackend::new(width, height)).expect("terminal");
    app.set_viewport(height);
    app.refresh(query).expect("refresh");
    terminal.draw(|frame| app.render(frame)).expect("draw");
    terminal.backend().buffer().clone()
}

/// The (x, y) of the first cell where `needle` starts on a line that also holds `line_has`.
fn find(buffer: &Buffer, line_has: &str, needle: &str) -> Option<(u16, u16)> {
    for y in 0..buffer.area.height {
        let cells: Vec<&str> = (0..buffer.area.width)
            .map(|x| buffer[(x, y)].symbol())
            .collect();
        let line: String = cells.concat();
        if !line.contains(line_has) {
            continue;
        }
        for x in 0..cells.len() {
            if cells[x..].concat().starts_with(needle) {
                return Some((x as u16, y));
            }
        }
    }
    None
}

fn esc(app: &mut App, query: &mut Query<'_>) {
    key(app, query, KeyCode::Esc);
}

#[test]
fn care_views_and_the_assessment_form_at_100x30_and_80x24() {
    let mut store = demo_store();
    let mut query = Query::new(&mut store);
    let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
    keys(&mut app, &mut query, "5");
    assert_eq!(app.view, View::Care);
    insta::assert_snapshot!(
        "care_watchlist_100x30",
        screen(&mut app, &mut query, 100, 30)
    );
    insta::assert_snapshot!("care_watchlist_80x24", screen(&mut app, &mut query, 80, 24));
    key(&mut app, &mut query, KeyCode::Tab);
    insta::assert_snapshot!(
        "care_work_queue_100x30",
        screen(&mut app, &mut query, 100, 30)
    );
    insta::assert_snapshot!(
        "care_work_queue_80x24",
        screen(&mut app, &mut query, 80, 24)
    );
    // The assessment form of the watchlist's first tree, half filled in: Matrix 1's cell is chosen,
    // Matrix 2's row is chosen, its column not yet.
    keys(&mut app, &mut query, "l");
    keys(&mut app, &mut query, "a");
    assert_eq!(app.view, View::Assess);
    keys(&mut app, &mut query, "b");
    key(&mut app, &mut query, KeyCode::Tab);
    keys(&mut app, &mut query, "30");
    key(&mut app, &mut query, KeyCode::Tab);
    keys(&mut app, &mut query, "footpath");
    key(&mut app, &mut query, KeyCode::Tab);
    keys(&mut app, &mut query, "f");
    key(&mut app, &mut query, KeyCode::Tab);
    keys(&mut app, &mut query, "pp");
    key(&mut app, &mut query, KeyCode::Tab);
    keys(&mut app, &mut query, "m");
    insta::assert_snapshot!("assess_form_100x30", screen(&mut app, &mut query, 100, 30));
    insta::assert_snapshot!("assess_form_80x24", screen(&mut app, &mut query, 80, 24));
    let text = screen(&mut app, &mut query, 80, 24);
    assert!(
        text.contains("qualified arborist"),
        "the caution shows:\n{text}"
    );
}

#[test]
fn care_counts_match_the_store_and_filters_narrow_the_work_queue() {
    let mut store = demo_store();
    let mut query = Query::new(&mut store);
    let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
    keys(&mut app, &mut query, "5");
    let care = app.care.as_ref().expect("loaded");
    // The overdue re-inspections of the demo at 2026-11-30 (hand count in tests/cli_care.rs: 10).
    assert_eq!(care.watch.overdue, 10);
    assert_eq!(care.watch.entries.len(), 54);
    let first_not_overdue = care
        .watch
        .entries
        .iter()
        .position(|e| e.overdue_days.is_none())
        .expect("some are not overdue");
    assert!(
        care.watch.entries[..first_not_overdue]
            .iter()
            .all(|e| e.overdue_days.is_some()),
        "overdue re-inspections first"
    );
    let text = screen(&mut app, &mut query, 100, 30);
    assert!(
        text.contains("54 trees on the watchlist · 10 overdue for re-inspection as of 2026-11-30"),
        "{text}"
    );
    key(&mut app, &mut query, KeyCode::Tab);
    let queue = &app.care.as_ref().expect("loaded").work;
    let ids: Vec<(u8, Option<NaiveDate>)> = queue
        .entries
        .iter()
        .map(|e| (e.item.priority.get(), e.item.due_on))
        .collect();
    let mut sorted = ids.clone();
    sorted.sort_by(|a, b| {
        a.0.cmp(&b.0)
            .then(a.1.is_none().cmp(&b.1.is_none()))
            .then(a.1.cmp(&b.1))
    });
    assert_eq!(ids, sorted, "by priority, then due date");
    let open_cost: f64 = queue
        .entries
        .iter()
        .filter(|e| e.item.status.is_pending())
        .filter_map(|e| e.item.estimated_cost)
        .sum();
    assert!((queue.open_estimated_cost - open_cost).abs() < 1e-6);
    let text = screen(&mut app, &mut query, 100, 30);
    assert!(text.contains("42 orders"), "{text}");
    assert!(text.contains("USD 15,600.00"), "{text}");

    // Filter by crew through the picker, then by task.
    keys(&mut app, &mut query, "f");
    keys(&mut app, &mut query, "crew");
    key(&mut app, &mut query, KeyCode::Enter);
    keys(&mut app, &mut query, "Kestrel");
    key(&mut app, &mut query, KeyCode::Enter);
    let care = app.care.as_ref().expect("loaded");
    assert!(!care.work.entries.is_empty());
    assert!(
        care.work
            .entries
            .iter()
            .all(|e| e.item.crew.as_deref() == Some("Kestrel crew"))
    );
    let kestrel = care.work.entries.len();
    keys(&mut app, &mut query, "f");
    keys(&mut app, &mut query, "task");
    key(&mut app, &mut query, KeyCode::Enter);
    keys(&mut app, &mut query, "prune");
    key(&mut app, &mut query, KeyCode::Enter);
    let care = app.care.as_ref().expect("loaded");
    assert!(care.work.entries.len() <= kestrel);
    assert!(
        care.work
            .entries
            .iter()
            .all(|e| e.item.task == WorkTask::Prune)
    );
    let text = screen(&mut app, &mut query, 100, 30);
    assert!(text.contains("crew Kestrel crew, task prune"), "{text}");
    keys(&mut app, &mut query, "F");
    assert_eq!(app.care.as_ref().expect("loaded").work.entries.len(), 42);
    keys(&mut app, &mut query, "o");
    assert_eq!(app.care.as_ref().expect("loaded").work.entries.len(), 25);
    // Enter opens the row's tree card; Esc comes back to where the card was opened from.
    let tree = app.care.as_ref().and_then(|c| c.selected_tree());
    key(&mut app, &mut query, KeyCode::Enter);
    assert_eq!(app.view, View::Card);
    assert_eq!(app.card.as_ref().map(|c| c.detail.summary.id), tree);
    esc(&mut app, &mut query);
    assert_eq!(app.view, View::Care);
    keys(&mut app, &mut query, "1");
    key(&mut app, &mut query, KeyCode::Enter);
    esc(&mut app, &mut query);
    assert_eq!(app.view, View::Roster);
}

#[test]
fn help_lists_every_key_of_each_view() {
    let mut store = demo_store();
    let mut query = Query::new(&mut store);
    let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
    keys(&mut app, &mut query, "5");
    keys(&mut app, &mut query, "?");
    let text = screen(&mut app, &mut query, 80, 24);
    for (keys_text, _, what) in keys_of(View::Care) {
        assert!(text.contains(keys_text), "{keys_text} in:\n{text}");
        assert!(text.contains(what), "{what} in:\n{text}");
    }
    key(&mut app, &mut query, KeyCode::Esc);
    keys(&mut app, &mut query, "a");
    assert_eq!(app.view, View::Assess);
    key(&mut app, &mut query, KeyCode::F(1));
    let text = screen(&mut app, &mut query, 80, 24);
    for (keys_text, _, what) in keys_of(View::Assess) {
        assert!(text.contains(keys_text), "{keys_text} in:\n{text}");
        assert!(text.contains(what), "{what} in:\n{text}");
    }
    key(&mut app, &mut query, KeyCode::Esc);
    esc(&mut app, &mut query);
    assert_eq!(
        app.view,
        View::Care,
        "an untouched form leaves without asking"
    );
}

#[test]
fn ratings_have_words_and_colour_only_without_no_color() {
    for no_color in [false, true] {
        let mut store = demo_store();
        let mut query = Query::new(&mut store);
        let mut app = App::new(
            &query,
            AppSettings {
                us_units: false,
                no_color,
            },
            today(),
        )
        .expect("app");
        keys(&mut app, &mut query, "5");
        let buffer = buffer(&mut app, &mut query, 100, 30);
        let (x, y) = find(&buffer, "1480", "extreme").expect("an extreme row");
        let cell = &buffer[(x, y)];
        if no_color {
            assert_eq!(cell.fg, Color::Reset, "NO_COLOR: no colour");
        } else {
            assert_ne!(cell.fg, Color::Reset, "a colour beside the word");
        }
        assert!(
            cell.modifier.contains(Modifier::BOLD),
            "high and extreme are bold too"
        );
    }
}

/// Issue 5 "done when": a leaning tree over a bus stop is assessed to extreme through the form; the
/// matrices show the chosen row, column and cell as the categories are picked; saving proposes a
/// priority-1 work order, edited and confirmed; the order exists and the watchlist shows the tree.
#[test]
fn the_assessment_form_rates_by_the_matrices_and_creates_the_proposed_work_order() {
    let mut store = demo_store();
    {
        let mut query = Query::new(&mut store);
        let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
        key(&mut app, &mut query, KeyCode::Enter);
        assert_eq!(app.card.as_ref().map(|c| c.detail.summary.id), Some(1));
        keys(&mut app, &mut query, "a");
        assert_eq!(app.view, View::Assess);
        // part: whole tree (typed first letter), size, target, occupancy constant.
        keys(&mut app, &mut query, "w");
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "62");
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "bus stop");
        key(&mut app, &mut query, KeyCode::Tab);
        // Occupancy through the picker.
        key(&mut app, &mut query, KeyCode::Enter);
        keys(&mut app, &mut query, "const");
        key(&mut app, &mut query, KeyCode::Enter);
        key(&mut app, &mut query, KeyCode::Tab);
        // Likelihood of failure with ←/→: from none, ← is the last (imminent).
        key(&mut app, &mut query, KeyCode::Left);
        let form = app.assess.as_ref().expect("form");
        assert_eq!(
            form.mode_choice(0).failure,
            Some(streetwood::care::risk::LikelihoodOfFailure::Imminent)
        );
        let b = buffer(&mut app, &mut query, 100, 30);
        let (x, y) = find(&b, "imminent", "▶imminent").expect("the chosen row is marked");
        assert!(b[(x, y)].modifier.contains(Modifier::REVERSED));
        assert!(
            find(&b, "Mode 1 of 1", "choose failure and impact").is_some(),
            "no likelihood before impact is chosen"
        );
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "h");
        // Matrix 1: imminent × high → very likely (ISA BMP 2017, METHODS.md M9): the cell is marked.
        let b = buffer(&mut app, &mut query, 100, 30);
        let (x, y) = find(&b, "▶imminent", "[v.likely]").expect("the chosen cell is bracketed");
        assert!(b[(x + 1, y)].modifier.contains(Modifier::REVERSED));
        let (x, y) = find(&b, "very low", "▼high").expect("the chosen column is marked");
        assert!(b[(x, y)].modifier.contains(Modifier::REVERSED));
        let (x, y) = find(&b, "▶v", "▶v").expect("Matrix 2's row follows Matrix 1's result");
        assert!(b[(x, y)].modifier.contains(Modifier::REVERSED));
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "ss");
        // Matrix 2: very likely × severe → extreme.
        let text = screen(&mut app, &mut query, 100, 30);
        assert!(
            text.contains("Mode 1 of 1: very likely → EXTREME"),
            "{text}"
        );
        assert!(
            text.contains("Overall: EXTREME (highest of 1 mode)"),
            "{text}"
        );
        assert!(
            text.contains("Next inspection 2026-11-30 (0 months)"),
            "{text}"
        );
        assert!(text.contains(&CAUTION[..40]), "{text}");
        // A second mode, rated low, does not lower the overall rating (the highest wins).
        ctrl(&mut app, &mut query, 'n');
        keys(&mut app, &mut query, "b");
        key(&mut app, &mut query, KeyCode::Tab);
        key(&mut app, &mut query, KeyCode::Tab);
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "r");
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "p");
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "l");
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "m");
        let text = screen(&mut app, &mut query, 100, 30);
        assert!(text.contains("Mode 2 of 2: unlikely → LOW"), "{text}");
        assert!(text.contains("Modes: 1 extreme, 2 low"), "{text}");
        assert!(
            text.contains("Overall: EXTREME (highest of 2 modes)"),
            "{text}"
        );
        // Save: the extreme rating proposes a priority-1 order (no mitigation given, the whole
        // tree fails: removal).
        ctrl(&mut app, &mut query, 's');
        let text = screen(&mut app, &mut query, 100, 30);
        assert!(text.contains("EXTREME risk: proposed work order"), "{text}");
        assert!(text.contains("priority 1 urgent"), "{text}");
        match &app.assess.as_ref().expect("form").stage {
            assess_form::Stage::Proposal(p) => {
                assert_eq!(p.proposal.priority, Priority::URGENT);
                assert_eq!(p.proposal.task, WorkTask::Remove);
            }
            assess_form::Stage::Editing => panic!("the proposal shows"),
        }
        // Edit the proposal: crew and estimate, then confirm.
        keys(&mut app, &mut query, "e");
        for _ in 0..3 {
            key(&mut app, &mut query, KeyCode::Tab);
        }
        keys(&mut app, &mut query, "Kestrel crew");
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "-5");
        key(&mut app, &mut query, KeyCode::Enter);
        let text = screen(&mut app, &mut query, 100, 30);
        assert!(text.contains("must not be negative"), "{text}");
        key(&mut app, &mut query, KeyCode::Backspace);
        key(&mut app, &mut query, KeyCode::Backspace);
        keys(&mut app, &mut query, "1200");
        key(&mut app, &mut query, KeyCode::Enter);
        keys(&mut app, &mut query, "y");
        let message = app.message.clone().unwrap_or_default();
        assert!(message.contains(": EXTREME; work order"), "{message}");
        assert!(
            message.contains("created (remove, priority 1)"),
            "{message}"
        );
        assert_eq!(app.view, View::Card, "back where the form was opened");
        assert!(app.assess.is_none());
        let card = app.card.as_ref().expect("card");
        assert_eq!(card.detail.assessments[0].rating, "extreme");
        assert!(
            card.detail
                .work
                .iter()
                .any(|w| w.task == "remove" && w.priority == 1)
        );
        // The watchlist shows the tree at the top of the extreme ones.
        keys(&mut app, &mut query, "5");
        keys(&mut app, &mut query, "l");
        let care = app.care.as_ref().expect("care");
        let entry = care
            .watch
            .entries
            .iter()
            .find(|e| e.item.tree_id == 1)
            .expect("tree 1 on the watchlist");
        assert_eq!(entry.item.rating, RiskRating::Extreme);
        assert_eq!(entry.item.pending_work, 1);
        let text = screen(&mut app, &mut query, 100, 30);
        assert!(text.contains("Foundry Street"), "{text}");
        assert_eq!(
            app.roster.data.entries[0].risk, 4,
            "the roster's risk is reloaded"
        );
    }
    let orders = store.work_items(&[]).expect("orders");
    let order = orders
        .iter()
        .find(|o| o.tree_id == 1)
        .expect("the order exists");
    assert_eq!(order.task, WorkTask::Remove);
    assert_eq!(order.priority, Priority::URGENT);
    assert_eq!(order.status, WorkStatus::Open);
    assert_eq!(order.crew.as_deref(), Some("Kestrel crew"));
    assert_eq!(order.estimated_cost, Some(1200.0));
    assert_eq!(order.due_on, Some(today()));
    assert_eq!(order.rating, Some(RiskRating::Extreme));
    let assessments = store.assessments_of_tree(1).expect("history");
    assert_eq!(assessments.len(), 1);
    let a = &assessments[0];
    assert_eq!(a.rating, RiskRating::Extreme);
    assert_eq!(a.level, 2);
    assert_eq!(a.modes.len(), 2);
    assert_eq!(a.modes[0].target.as_deref(), Some("bus stop"));
    assert_eq!(a.modes[0].part_size_cm, Some(62.0));
    assert_eq!(a.work_order_ids, vec![order.id]);
    assert_eq!(
        audit::count(store.conn(), "assessments", "insert").expect("count"),
        55,
        "54 demo assessments and this one, audited"
    );
}

#[test]
fn a_moderate_assessment_proposes_no_work_and_skip_saves_without_the_order() {
    let mut store = demo_store();
    let before = store.work_items(&[]).expect("orders").len();
    {
        let mut query = Query::new(&mut store);
        let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
        key(&mut app, &mut query, KeyCode::Enter);
        keys(&mut app, &mut query, "a");
        // trunk, frequent, probable × high → likely; × significant → high: proposes priority 2.
        keys(&mut app, &mut query, "t");
        for _ in 0..3 {
            key(&mut app, &mut query, KeyCode::Tab);
        }
        keys(&mut app, &mut query, "f");
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "pp");
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "h");
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "s");
        ctrl(&mut app, &mut query, 's');
        match &app.assess.as_ref().expect("form").stage {
            assess_form::Stage::Proposal(p) => assert_eq!(p.proposal.priority, Priority::HIGH),
            assess_form::Stage::Editing => panic!("high proposes work"),
        }
        // Esc goes back to the fields; the mode's consequences become minor → moderate.
        esc(&mut app, &mut query);
        assert!(matches!(
            app.assess.as_ref().expect("form").stage,
            assess_form::Stage::Editing
        ));
        let form = app.assess.as_mut().expect("form");
        form.form
            .focus_on(assess_form::Key::Mode(0, ModeField::Consequences));
        keys(&mut app, &mut query, "m");
        ctrl(&mut app, &mut query, 's');
        let message = app.message.clone().unwrap_or_default();
        assert!(
            message.contains("MODERATE; next inspection 2028-11-30"),
            "{message}"
        );
        // A high one again, skipped with s.
        keys(&mut app, &mut query, "a");
        keys(&mut app, &mut query, "t");
        for _ in 0..3 {
            key(&mut app, &mut query, KeyCode::Tab);
        }
        keys(&mut app, &mut query, "f");
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "pp");
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "h");
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "s");
        ctrl(&mut app, &mut query, 's');
        keys(&mut app, &mut query, "s");
        let message = app.message.clone().unwrap_or_default();
        assert!(
            message.contains("HIGH; next inspection 2027-05-30"),
            "{message}"
        );
    }
    assert_eq!(store.work_items(&[]).expect("orders").len(), before);
    let history = store.assessments_of_tree(1).expect("history");
    assert_eq!(history.len(), 2, "re-assessing keeps the history");
}

#[test]
fn a_work_order_through_its_life_in_the_tui_and_a_removal_done_removes_the_tree() {
    let mut store = demo_store();
    let new_id;
    {
        let mut query = Query::new(&mut store);
        let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
        key(&mut app, &mut query, KeyCode::Enter);
        // Add a removal from the card (w): task and priority are required.
        keys(&mut app, &mut query, "w");
        ctrl(&mut app, &mut query, 's');
        let text = screen(&mut app, &mut query, 80, 24);
        assert!(text.contains("choose a task"), "{text}");
        keys(&mut app, &mut query, "r");
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "1");
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "2026-12-15");
        ctrl(&mut app, &mut query, 's');
        let message = app.message.clone().unwrap_or_default();
        assert!(message.starts_with("added work order "), "{message}");
        new_id = message
            .trim_start_matches("added work order ")
            .split(':')
            .next()
            .and_then(|n| n.parse::<i64>().ok())
            .expect("the new id");
        // And a pruning order, which the removal will cancel.
        keys(&mut app, &mut query, "w");
        keys(&mut app, &mut query, "p");
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "4");
        ctrl(&mut app, &mut query, 's');
        // The tree's orders in the work queue (o).
        keys(&mut app, &mut query, "o");
        assert_eq!(app.view, View::Care);
        let care = app.care.as_ref().expect("care");
        assert_eq!(care.list, List::Work);
        assert_eq!(care.work.entries.len(), 2);
        assert_eq!(care.selected_work().map(|e| e.item.id), Some(new_id));

        // Schedule: a date in the past is refused with the rule's reason next to the field.
        keys(&mut app, &mut query, "s");
        ctrl(&mut app, &mut query, 'u');
        keys(&mut app, &mut query, "2026-11-01");
        ctrl(&mut app, &mut query, 's');
        let text = screen(&mut app, &mut query, 80, 24);
        assert!(text.contains("2026-11-01 is before today"), "{text}");
        ctrl(&mut app, &mut query, 'u');
        keys(&mut app, &mut query, "2026-12-02");
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "Kestrel crew");
        ctrl(&mut app, &mut query, 's');
        let item = &app
            .care
            .as_ref()
            .expect("care")
            .selected_work()
            .expect("row")
            .item;
        assert_eq!(item.status, WorkStatus::Scheduled);
        assert_eq!(item.scheduled_on, NaiveDate::from_ymd_opt(2026, 12, 2));
        assert_eq!(item.crew.as_deref(), Some("Kestrel crew"));

        // Edit: the estimate; an edit that changes nothing is refused by the rules.
        keys(&mut app, &mut query, "e");
        ctrl(&mut app, &mut query, 's');
        let text = screen(&mut app, &mut query, 80, 24);
        assert!(text.contains("nothing to change"), "{text}");
        for _ in 0..4 {
            key(&mut app, &mut query, KeyCode::Tab);
        }
        keys(&mut app, &mut query, "950");
        ctrl(&mut app, &mut query, 's');
        let item = &app
            .care
            .as_ref()
            .expect("care")
            .selected_work()
            .expect("row")
            .item;
        assert_eq!(item.estimated_cost, Some(950.0));

        // Done: the removal marks the tree removed and cancels the pruning.
        keys(&mut app, &mut query, "d");
        let text = screen(&mut app, &mut query, 80, 24);
        assert!(text.contains("marks tree 1 removed"), "{text}");
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "1040");
        ctrl(&mut app, &mut query, 's');
        let message = app.message.clone().unwrap_or_default();
        assert!(
            message.contains("tree 1 now removed as of 2026-11-30"),
            "{message}"
        );
        assert!(message.contains("also cancelled"), "{message}");
        let care = app.care.as_ref().expect("care");
        let statuses: Vec<WorkStatus> = care.work.entries.iter().map(|e| e.item.status).collect();
        assert!(statuses.contains(&WorkStatus::Done) && statuses.contains(&WorkStatus::Cancelled));
        // Done is final.
        let done_row = care
            .work
            .entries
            .iter()
            .position(|e| e.item.id == new_id)
            .expect("row");
        keys(&mut app, &mut query, "g");
        for _ in 0..done_row {
            keys(&mut app, &mut query, "j");
        }
        keys(&mut app, &mut query, "d");
        let message = app.message.clone().unwrap_or_default();
        assert!(message.contains("done orders are final"), "{message}");

        // The roster and the card show the tree removed (kept).
        let card = app.card.as_ref().expect("card");
        assert_eq!(card.detail.summary.status, TreeStatus::Removed);
        key(&mut app, &mut query, KeyCode::Enter);
        assert_eq!(app.view, View::Card);
        let text = screen(&mut app, &mut query, 100, 30);
        assert!(text.contains("status removed on 2026-11-30"), "{text}");
        keys(&mut app, &mut query, "1");
        let text = screen(&mut app, &mut query, 100, 30);
        let row = text
            .lines()
            .find(|l| l.contains("▶ 1 "))
            .expect("tree 1's row");
        assert!(row.contains("removed"), "{row}");

        // A removed tree takes stump grinding; cancel it with a reason.
        keys(&mut app, &mut query, "2");
        keys(&mut app, &mut query, "w");
        keys(&mut app, &mut query, "ss");
        key(&mut app, &mut query, KeyCode::Tab);
        keys(&mut app, &mut query, "3");
        ctrl(&mut app, &mut query, 's');
        assert!(
            app.message
                .as_deref()
                .is_some_and(|m| m.contains("stump, priority 3")),
            "{:?}",
            app.message
        );
        keys(&mut app, &mut query, "o");
        let stump = app
            .care
            .as_ref()
            .expect("care")
            .work
            .entries
            .iter()
            .position(|e| e.item.task == WorkTask::Stump)
            .expect("the stump order");
        keys(&mut app, &mut query, "g");
        for _ in 0..stump {
            keys(&mut app, &mut query, "j");
        }
        keys(&mut app, &mut query, "c");
        keys(&mut app, &mut query, "duplicate");
        ctrl(&mut app, &mut query, 's');
        assert!(
            app.message
                .as_deref()
                .is_some_and(|m| m.ends_with("cancelled")),
            "{:?}",
            app.message
        );
    }
    let detail = store.tree_detail(1).expect("query").expect("kept");
    assert_eq!(detail.summary.status, TreeStatus::Removed);
    assert_eq!(detail.removed_on.as_deref(), Some("2026-11-30"));
    let orders = store.work_items(&[]).expect("orders");
    let removal = orders.iter().find(|o| o.id == new_id).expect("removal");
    assert_eq!(removal.status, WorkStatus::Done);
    assert_eq!(removal.actual_cost, Some(1040.0));
    assert_eq!(removal.estimated_cost, Some(950.0));
    let stump = orders
        .iter()
        .find(|o| o.tree_id == 1 && o.task == WorkTask::Stump)
        .expect("stump");
    assert_eq!(stump.status, WorkStatus::Cancelled);
    assert!(
        stump
            .notes
            .as_deref()
            .is_some_and(|n| n.contains("cancelled: duplicate"))
    );
    let history = audit::entries_for_row(store.conn(), "trees", 1).expect("audit");
    assert!(
        history
            .last()
            .and_then(|e| e.after_json.as_deref())
            .is_some_and(|j| j.contains("\"status\":\"removed\"")),
        "{history:?}"
    );
}

#[test]
fn editing_a_tree_street_from_the_card_saves_and_audits_it_without_a_measurement() {
    let mut store = demo_store();
    let measurements = store.measurement_count().expect("count");
    {
        let mut query = Query::new(&mut store);
        let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
        key(&mut app, &mut query, KeyCode::Enter);
        keys(&mut app, &mut query, "e");
        let text = screen(&mut app, &mut query, 80, 24);
        assert!(text.contains("Edit tree 1"), "{text}");
        assert!(text.contains("Foundry Street"), "{text}");
        key(&mut app, &mut query, KeyCode::Tab);
        ctrl(&mut app, &mut query, 'u');
        keys(&mut app, &mut query, "Quill Lane");
        // A bad latitude is refused as typed with the import's reason.
        for _ in 0..3 {
            key(&mut app, &mut query, KeyCode::Tab);
        }
        ctrl(&mut app, &mut query, 'u');
        keys(&mut app, &mut query, "95");
        let text = screen(&mut app, &mut query, 100, 30);
        assert!(
            text.contains("95 is out of range (-90 to 90 degrees)"),
            "{text}"
        );
        ctrl(&mut app, &mut query, 's');
        assert!(
            app.message
                .as_deref()
                .is_some_and(|m| m.contains("not saved")),
            "{:?}",
            app.message
        );
        ctrl(&mut app, &mut query, 'u');
        keys(&mut app, &mut query, "42.700081");
        ctrl(&mut app, &mut query, 's');
        let message = app.message.clone().unwrap_or_default();
        assert!(message.contains("saved tree 1's attributes"), "{message}");
        let card = app.card.as_ref().expect("card");
        assert_eq!(card.detail.summary.street.as_deref(), Some("Quill Lane"));
        let text = screen(&mut app, &mut query, 100, 30);
        assert!(text.contains("Quill Lane 111"), "{text}");
        // The roster index knows the new street.
        assert!(app.roster.data.streets.iter().any(|s| s == "Quill Lane"));
        // Esc with typed changes asks first.
        keys(&mut app, &mut query, "e");
        keys(&mut app, &mut query, "x");
        esc(&mut app, &mut query);
        let text = screen(&mut app, &mut query, 80, 24);
        assert!(text.contains("drop what is typed"), "{text}");
        keys(&mut app, &mut query, "y");
        let text = screen(&mut app, &mut query, 80, 24);
        assert!(!text.contains("Edit tree 1"), "{text}");
    }
    let history = audit::entries_for_row(store.conn(), "trees", 1).expect("audit");
    let last = history.last().expect("audited");
    assert_eq!(last.action, "update");
    assert_eq!(last.actor, "care (TUI)");
    assert!(
        last.before_json
            .as_deref()
            .is_some_and(|j| j.contains("Foundry Street"))
    );
    assert!(
        last.after_json
            .as_deref()
            .is_some_and(|j| j.contains("Quill Lane"))
    );
    assert_eq!(store.measurement_count().expect("count"), measurements);
}

#[test]
fn quitting_with_an_unsaved_assessment_asks_first() {
    let mut store = demo_store();
    let mut query = Query::new(&mut store);
    let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
    key(&mut app, &mut query, KeyCode::Enter);
    keys(&mut app, &mut query, "a");
    keys(&mut app, &mut query, "w");
    ctrl(&mut app, &mut query, 'q');
    assert!(!app.should_quit());
    let text = screen(&mut app, &mut query, 80, 24);
    assert!(text.contains("risk assessment is not saved"), "{text}");
    keys(&mut app, &mut query, "n");
    esc(&mut app, &mut query);
    let text = screen(&mut app, &mut query, 80, 24);
    assert!(text.contains("drop what is entered"), "{text}");
    keys(&mut app, &mut query, "y");
    assert_eq!(app.view, View::Card);
}

// ---- Year summary and studies ----------------------------------------------------------------------

use streetwood::science::inventory::{GroupBy, summarize, top_and_other};
use streetwood::store::studies::{NewPlanting, NewStudy};
use streetwood::study::outcome::Benefit;
use streetwood::study::select::{Criterion, select};
use streetwood::study::{Mode, StudyEnv, run_study};
use streetwood::tui::views::{studies, year_summary};

/// A study's plan row for the test setup: (plan, species, count, planting DBH cm, planting year).
type PlanRow<'a> = (&'a str, &'a str, u32, f64, i32);

/// Creates a study through the store, as `streetwood study new|add|plan` do.
fn add_study(store: &mut Store, name: &str, criterion: Criterion, plans: &[PlanRow<'_>]) {
    let weather_year = store.latest_weather_year().expect("weather");
    let id = store
        .create_study(
            &NewStudy {
                name: name.to_string(),
                description: None,
                horizon_years: 40,
                seed: 42,
                runs: 200,
                weather_year,
                start_year: 2026,
                functional_limitation: 1.0,
                external_limitation: 1.0,
            },
            now(),
            "test",
        )
        .expect("study created");
    let chosen =
        select(&store.study_candidates().expect("candidates"), &[criterion]).expect("trees chosen");
    store
        .add_study_trees(id, &chosen, "test", "test")
        .expect("trees added");
    let species = store.species().expect("species");
    for (plan, botanical, count, dbh_cm, year) in plans {
        let species_id = species
            .iter()
            .find(|s| s.scientific_name == *botanical)
            .expect("species held")
            .id;
        store
            .set_plan_rows(
                id,
                plan,
                &[NewPlanting {
                    species_id,
                    count: *count,
                    dbh_cm: *dbh_cm,
                    year: *year,
                }],
                false,
                "test",
            )
            .expect("plan row");
    }
}

/// The demo town with two studies: the Foundry Street works (no payback within 40 years) and two
/// trees replaced by more young ones (paybacks within the horizon for some benefits).
fn demo_with_studies() -> Store {
    let mut store = demo_store();
    add_study(
        &mut store,
        "Foundry works",
        Criterion::Street("Foundry Street".to_string()),
        &[
            ("2:1 oak", "Quercus rubra", 94, 5.0, 2027),
            ("1:1 cherry", "Prunus serrulata", 47, 5.0, 2027),
        ],
    );
    add_study(
        &mut store,
        "Quill corner",
        Criterion::Ids(vec![12, 15]),
        &[
            ("6 oaks", "Quercus rubra", 6, 5.0, 2026),
            ("3 cherries", "Prunus serrulata", 3, 5.0, 2027),
        ],
    );
    store
}

/// Draws without taking in background results (to see what shows while they are pending).
fn draw_only(app: &App, width: u16, height: u16) -> String {
    let mut terminal = Terminal::new(TestBackend::new(width, height)).expect("terminal");
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

/// Refreshes until no background work runs (at most 20 s).
fn wait_for_background(app: &mut App, query: &mut Query<'_>) {
    for _ in 0..400 {
        app.refresh(query).expect("refresh");
        if !query.busy() {
            app.refresh(query).expect("refresh");
            return;
        }
        std::thread::sleep(std::time::Duration::from_millis(50));
    }
    panic!("background work did not finish");
}

#[test]
fn year_summary_and_studies_at_100x30_and_80x24() {
    let mut store = demo_with_studies();
    let mut query = Query::new(&mut store);
    let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
    keys(&mut app, &mut query, "6");
    assert_eq!(app.view, View::YearSummary);
    insta::assert_snapshot!("summary_100x30", screen(&mut app, &mut query, 100, 30));
    insta::assert_snapshot!("summary_80x24", screen(&mut app, &mut query, 80, 24));
    keys(&mut app, &mut query, "bbb");
    insta::assert_snapshot!("summary_dbh_80x24", screen(&mut app, &mut query, 80, 24));

    keys(&mut app, &mut query, "7");
    assert_eq!(app.view, View::Studies);
    insta::assert_snapshot!(
        "studies_foundry_80x24",
        screen(&mut app, &mut query, 80, 24)
    );
    key(&mut app, &mut query, KeyCode::Down);
    key(&mut app, &mut query, KeyCode::Enter);
    insta::assert_snapshot!("studies_100x30", screen(&mut app, &mut query, 100, 30));
    insta::assert_snapshot!("studies_80x24", screen(&mut app, &mut query, 80, 24));
    keys(&mut app, &mut query, "m");
    insta::assert_snapshot!(
        "studies_monte_carlo_100x30",
        screen(&mut app, &mut query, 100, 30)
    );
    keys(&mut app, &mut query, "?");
    insta::assert_snapshot!("studies_help_80x24", screen(&mut app, &mut query, 80, 24));
}

#[test]
fn summary_totals_equal_summarize_and_the_grouping_changes_chart_and_table() {
    let mut store = demo_store();
    let mut query = Query::new(&mut store);
    let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
    keys(&mut app, &mut query, "6");
    let first = screen(&mut app, &mut query, 100, 30);
    let summary = app.summary.as_ref().expect("summary state");
    let run = summary.ready().expect("computed in memory at once").clone();
    assert_eq!(run.year, 2026, "the latest year of weather held");
    let (species, total) = summarize(&run.rows, GroupBy::Species);
    assert_eq!(summary.total, total, "the totals are summarize()'s");
    assert_eq!(total.trees, run.rows.len());
    assert_eq!(summary.groups, top_and_other(&species, 10));
    let totals = year_summary::totals_text(&total, &run.prices.currency);
    for part in totals.split(" · ") {
        assert!(
            first.replace('\n', " ").contains(part) || first.contains(part),
            "{part} in:\n{first}"
        );
    }
    assert!(
        first.contains(&format!("year {}", run.year)),
        "the basis line states the year:\n{first}"
    );
    assert!(first.contains("carbon stored, t C"), "{first}");
    assert!(first.contains("species (top 10 by carbon"), "{first}");
    assert!(first.contains(&species[0].group), "{first}");

    // b: species → zone; the chart and the table follow.
    keys(&mut app, &mut query, "b");
    let zones = screen(&mut app, &mut query, 100, 30);
    let summary = app.summary.as_ref().expect("summary state");
    assert_eq!(summary.grouping, year_summary::Grouping::Zone);
    let (by_zone, zone_total) = summarize(&run.rows, GroupBy::Zone);
    assert_eq!(summary.groups, by_zone);
    assert_eq!(
        summary.total, zone_total,
        "totals do not depend on grouping"
    );
    assert_ne!(zones, first);
    assert!(zones.contains("zone (by carbon)"), "{zones}");
    assert!(!zones.contains("species (top 10"), "{zones}");
    assert!(zones.contains(&by_zone[0].group), "{zones}");
    let bars = year_summary::bars(summary, 40);
    assert_eq!(bars.len(), by_zone.len());
    assert_eq!(bars[0].1, by_zone[0].carbon_kg / 1000.0);

    // The other groupings in turn, and back to species.
    for (grouping, by) in [
        (year_summary::Grouping::Street, GroupBy::Street),
        (year_summary::Grouping::DbhClass, GroupBy::DbhClass),
        (year_summary::Grouping::Condition, GroupBy::Condition),
    ] {
        keys(&mut app, &mut query, "b");
        let text = screen(&mut app, &mut query, 100, 30);
        let summary = app.summary.as_ref().expect("summary state");
        assert_eq!(summary.grouping, grouping);
        assert_eq!(summary.groups, summarize(&run.rows, by).0);
        assert!(text.contains(&summary.groups[0].group), "{text}");
    }
    keys(&mut app, &mut query, "b");
    assert_eq!(
        app.summary.as_ref().expect("state").grouping,
        year_summary::Grouping::Species
    );

    // m: the measure charted and tabled.
    keys(&mut app, &mut query, "m");
    let values = screen(&mut app, &mut query, 100, 30);
    assert!(values.contains("CO2e sequestered, t CO2e/yr"), "{values}");
    let summary = app.summary.as_ref().expect("summary state");
    assert_eq!(
        year_summary::bars(summary, 40)[0].1,
        species[0].co2e_seq_kg_yr / 1000.0
    );

    // [ steps to 2025 (weather held), ] back to 2026.
    keys(&mut app, &mut query, "[");
    let earlier = screen(&mut app, &mut query, 100, 30);
    let summary = app.summary.as_ref().expect("summary state");
    let run_2025 = summary.ready().expect("computed").clone();
    assert_eq!(run_2025.year, 2025);
    assert_eq!(summary.total, summarize(&run_2025.rows, GroupBy::None).1);
    assert!(earlier.contains("Year summary 2025"), "{earlier}");
    keys(&mut app, &mut query, "]");
    screen(&mut app, &mut query, 100, 30);
    assert_eq!(
        app.summary.as_ref().and_then(|s| s.ready()).map(|r| r.year),
        Some(2026)
    );
}

/// Checks that the text is well-formed XML (the report is XHTML-compatible).
fn assert_well_formed_html(html: &str) {
    let mut reader = quick_xml::Reader::from_str(html);
    let mut depth = 0i64;
    loop {
        match reader.read_event() {
            Ok(quick_xml::events::Event::Eof) => break,
            Ok(quick_xml::events::Event::Start(_)) => depth += 1,
            Ok(quick_xml::events::Event::End(_)) => depth -= 1,
            Ok(_) => {}
            Err(e) => panic!("not well-formed at byte {}: {e}", reader.buffer_position()),
        }
    }
    assert_eq!(depth, 0, "every element is closed");
}

/// On a file: the year is computed off the UI thread ("computing…" meanwhile); `x` writes the report
/// to the file confirmed, and refuses the inventory itself.
#[test]
fn summary_computes_in_the_background_and_exports_the_html_report_but_never_over_the_inventory() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = dir.path().join("demo.db");
    let output = common::run(dir.path(), &["demo", "--out", db.to_str().expect("path")]);
    assert!(output.status.success(), "{}", common::stderr(&output));
    let inventory_bytes = std::fs::read(&db).expect("inventory");
    let mut store = Store::open_existing(&db).expect("open");
    let mut query = Query::new(&mut store);
    let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
    keys(&mut app, &mut query, "6");
    assert!(query.busy(), "the year runs on another thread");
    let pending = draw_only(&app, 80, 24);
    assert!(pending.contains("computing 2026"), "{pending}");
    keys(&mut app, &mut query, "x");
    assert!(
        app.message
            .as_deref()
            .is_some_and(|m| m.contains("still being computed")),
        "{:?}",
        app.message
    );
    wait_for_background(&mut app, &mut query);
    let ready = screen(&mut app, &mut query, 80, 24);
    let run = app
        .summary
        .as_ref()
        .and_then(|s| s.ready())
        .expect("the year arrived")
        .clone();
    let (_, total) = summarize(&run.rows, GroupBy::None);
    assert!(
        ready.contains(&format!(
            "{} trees · carbon stored",
            streetwood::tui::format::num(total.trees as f64, 0)
        )),
        "{ready}"
    );

    // The inventory itself (named through another path) is refused; the prompt stays open.
    keys(&mut app, &mut query, "x");
    let prompt = screen(&mut app, &mut query, 80, 24);
    assert!(prompt.contains("streetwood-summary-2026.html"), "{prompt}");
    ctrl(&mut app, &mut query, 'u');
    let sneaky = dir.path().join(".").join("demo.db");
    keys(&mut app, &mut query, sneaky.to_str().expect("path"));
    key(&mut app, &mut query, KeyCode::Enter);
    let refused = app.message.clone().unwrap_or_default();
    assert!(refused.contains("is the inventory itself"), "{refused}");
    let still = screen(&mut app, &mut query, 80, 24);
    assert!(still.contains("Enter writes"), "the prompt stays:\n{still}");
    let wal = format!("{}-wal", db.display());
    ctrl(&mut app, &mut query, 'u');
    keys(&mut app, &mut query, &wal);
    key(&mut app, &mut query, KeyCode::Enter);
    assert!(
        app.message
            .as_deref()
            .is_some_and(|m| m.contains("is the inventory itself")),
        "{:?}",
        app.message
    );

    // A file in the folder is written whole, and the status line says where.
    let out = dir.path().join("council").join("report.html");
    std::fs::create_dir_all(out.parent().expect("folder")).expect("folder");
    ctrl(&mut app, &mut query, 'u');
    keys(&mut app, &mut query, out.to_str().expect("path"));
    key(&mut app, &mut query, KeyCode::Enter);
    let message = app.message.clone().unwrap_or_default();
    assert!(
        message.contains("wrote the year summary report of 2026 to")
            && message.contains("report.html"),
        "{message}"
    );
    let done = screen(&mut app, &mut query, 80, 24);
    assert!(!done.contains("Enter writes"), "the prompt closed:\n{done}");
    let html = std::fs::read_to_string(&out).expect("report written");
    assert_well_formed_html(&html);
    assert!(html.contains("<svg"), "charts inline");
    assert!(html.contains("2026"));
    let leftovers: Vec<_> = std::fs::read_dir(out.parent().expect("folder"))
        .expect("list")
        .flatten()
        .map(|e| e.file_name())
        .collect();
    assert_eq!(leftovers.len(), 1, "no partial file left: {leftovers:?}");
    drop(query);
    drop(store);
    let store = Store::open_existing(&db).expect("the inventory still opens");
    assert_eq!(store.tree_count().expect("count"), 2497);
    assert!(!inventory_bytes.is_empty());
}

/// The CLI's `study compare --format csv` payback columns, per plan: plan → [carbon stored, CO2e
/// sequestered, interception, cooling, value].
fn cli_paybacks(dir: &std::path::Path, db: &str, items: &[&str]) -> Vec<(String, Vec<String>)> {
    let mut args = vec!["--db", db, "study", "compare"];
    args.extend_from_slice(items);
    args.extend_from_slice(&["--format", "csv"]);
    let output = common::run(dir, &args);
    assert!(output.status.success(), "{}", common::stderr(&output));
    let text = common::stdout(&output);
    let mut reader = csv::Reader::from_reader(text.as_bytes());
    let header = reader.headers().expect("header").clone();
    let column = |name: &str| header.iter().position(|h| h == name).expect("column");
    let names = [
        "payback_carbon_stored",
        "payback_co2e_sequestered",
        "payback_interception",
        "payback_cooling",
        "payback_value",
    ];
    reader
        .records()
        .map(|r| {
            let r = r.expect("row");
            (
                r[column("plan")].to_string(),
                names.iter().map(|n| r[column(n)].to_string()).collect(),
            )
        })
        .collect()
}

/// Issue 6 "done when", in the TUI: the payback years shown are the CLI's, for every plan and benefit,
/// in both modes; the run happens off the UI thread.
#[test]
fn studies_view_shows_the_payback_years_the_cli_reports() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db_path = dir.path().join("demo.db");
    let db = db_path.to_str().expect("path").to_string();
    let ok = |args: &[&str]| {
        let output = common::run(dir.path(), args);
        assert!(
            output.status.success(),
            "{args:?}: {}",
            common::stderr(&output)
        );
    };
    ok(&["demo", "--out", &db]);
    ok(&[
        "--db",
        &db,
        "study",
        "new",
        "Quill corner",
        "--start-year",
        "2026",
        "--runs",
        "200",
    ]);
    ok(&[
        "--db",
        &db,
        "study",
        "add",
        "Quill corner",
        "--ids",
        "12,15",
    ]);
    ok(&[
        "--db",
        &db,
        "study",
        "plan",
        "Quill corner",
        "6 oaks",
        "--species",
        "Quercus rubra",
        "--count",
        "6",
        "--dbh",
        "5",
        "--year",
        "2026",
    ]);
    ok(&[
        "--db",
        &db,
        "study",
        "plan",
        "Quill corner",
        "3 cherries",
        "--species",
        "Prunus serrulata",
        "--count",
        "3",
        "--dbh",
        "5",
        "--year",
        "2027",
    ]);
    let expected = cli_paybacks(
        dir.path(),
        &db,
        &["Quill corner:6 oaks", "Quill corner:3 cherries"],
    );
    assert!(
        expected
            .iter()
            .flat_map(|(_, years)| years)
            .any(|y| !y.is_empty()),
        "the case has paybacks within the horizon: {expected:?}"
    );

    let mut store = Store::open_existing(&db_path).expect("open");
    let mut query = Query::new(&mut store);
    let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
    keys(&mut app, &mut query, "7");
    assert!(query.busy(), "the study runs on another thread");
    let pending = draw_only(&app, 80, 24);
    assert!(
        pending.contains("running study 'Quill corner'"),
        "{pending}"
    );
    wait_for_background(&mut app, &mut query);
    let text = screen(&mut app, &mut query, 100, 30);
    let state = app.studies.as_ref().expect("studies state");
    let run = state.ready().expect("the run arrived").clone();
    let rows = studies::table_rows(&run);
    for (plan_name, years) in &expected {
        let i = run
            .outcome
            .plans
            .iter()
            .position(|p| &p.plan.name == plan_name)
            .expect("plan shown");
        for (benefit, cli_year) in Benefit::ALL.iter().zip(years) {
            let shown = if cli_year.is_empty() {
                "not within horizon".to_string()
            } else {
                cli_year.clone()
            };
            assert_eq!(
                studies::year_text(studies::payback_of(&run.outcome.plans[i], *benefit)),
                shown,
                "{plan_name}, {benefit:?}"
            );
            let row = rows
                .iter()
                .find(|r| r.label.starts_with("payback: ") && r.label.contains(short(*benefit)))
                .expect("payback row");
            assert_eq!(row.plans[i], shown, "{plan_name}, {benefit:?} in the table");
        }
    }
    // The chart's legend names the payback year of the benefit shown (CO2e sequestered), and the
    // table shows the payback rows on screen.
    let oaks = &expected
        .iter()
        .find(|(p, _)| p == "6 oaks")
        .expect("oaks")
        .1;
    let oaks_index = run
        .outcome
        .plans
        .iter()
        .position(|p| p.plan.name == "6 oaks")
        .expect("plan");
    let mark = studies::PLAN_MARKERS[oaks_index];
    assert!(
        text.contains(&format!("{mark}{mark} 6 oaks (payback {})", oaks[1])),
        "{text}"
    );
    assert!(text.contains("payback: CO2e sequestered"), "{text}");
    assert!(text.contains("never replace, the judgment"), "{text}");

    // Monte Carlo: the medians over runs, as the CLI's.
    keys(&mut app, &mut query, "m");
    wait_for_background(&mut app, &mut query);
    let mc_text = screen(&mut app, &mut query, 100, 30);
    assert!(mc_text.contains("P10–P90"), "{mc_text}");
    let output = common::run(
        dir.path(),
        &[
            "--db",
            &db,
            "study",
            "compare",
            "Quill corner:6 oaks",
            "Quill corner:3 cherries",
            "--mode",
            "monte-carlo",
            "--format",
            "csv",
        ],
    );
    assert!(output.status.success(), "{}", common::stderr(&output));
    let expected_mc = common::stdout(&output);
    let run = app
        .studies
        .as_ref()
        .and_then(|s| s.ready())
        .expect("MC run")
        .clone();
    assert_eq!(run.outcome.mode, Mode::MonteCarlo);
    let mut reader = csv::Reader::from_reader(expected_mc.as_bytes());
    let header = reader.headers().expect("header").clone();
    let col = |n: &str| header.iter().position(|h| h == n).expect("column");
    for record in reader.records() {
        let r = record.expect("row");
        let plan = run
            .outcome
            .plans
            .iter()
            .find(|p| p.plan.name == r[col("plan")])
            .expect("plan");
        let cli = &r[col("payback_co2e_sequestered")];
        assert_eq!(
            studies::payback_of(plan, Benefit::Co2eSequestered).map(|y| y.to_string()),
            (!cli.is_empty()).then(|| cli.to_string()),
            "{}",
            plan.plan.name
        );
    }
}

fn short(benefit: Benefit) -> &'static str {
    match benefit {
        Benefit::CarbonStored => "carbon stored",
        Benefit::Co2eSequestered => "CO2e sequestered",
        Benefit::Interception => "rain intercepted",
        Benefit::Cooling => "cooling",
        Benefit::Value => "value",
    }
}

/// The same run through the study functions the CLI calls: the view's table equals the outcome's.
#[test]
fn studies_table_equals_the_outcome_and_keys_switch_benefit_mode_and_study() {
    let mut store = demo_with_studies();
    let data = store.study_run_data("Quill corner").expect("data");
    let env = StudyEnv {
        species: &data.params,
        imputer: &data.imputer,
        weather: &data.weather,
        science: &data.science,
        settings: &data.settings,
        scenario: data.settings.survival_scenario,
    };
    let outcome = run_study(&data.input, &env, Mode::Expected).expect("run");
    let mut query = Query::new(&mut store);
    let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
    keys(&mut app, &mut query, "7");
    let state = app.studies.as_ref().expect("state");
    assert_eq!(
        state.open.as_deref(),
        Some("Foundry works"),
        "the first opens"
    );
    key(&mut app, &mut query, KeyCode::Down);
    key(&mut app, &mut query, KeyCode::Enter);
    let text = screen(&mut app, &mut query, 100, 30);
    let run = app
        .studies
        .as_ref()
        .and_then(|s| s.ready())
        .expect("run")
        .clone();
    assert_eq!(
        run.outcome, outcome,
        "the view shows the study functions' outcome"
    );
    let rows = studies::table_rows(&run);
    for (i, plan) in outcome.plans.iter().enumerate() {
        for payback in &plan.paybacks {
            let row = rows
                .iter()
                .find(|r| r.label == format!("payback: {}", short(payback.benefit)))
                .expect("row");
            assert_eq!(row.plans[i], studies::year_text(payback.year));
        }
    }
    let appraised = rows
        .iter()
        .find(|r| r.label.starts_with("appraised value"))
        .expect("appraisal row");
    assert_eq!(
        appraised.kept,
        streetwood::tui::format::num(outcome.removal.appraisal_total, 0)
    );
    assert!(text.contains("CO2e sequestered, t/yr · expected"), "{text}");

    // b cycles the benefit charted; the legend follows with that benefit's payback year.
    keys(&mut app, &mut query, "b");
    let text = screen(&mut app, &mut query, 100, 30);
    assert_eq!(
        app.studies.as_ref().expect("state").benefit,
        Benefit::Interception
    );
    assert!(text.contains("rain intercepted, m³/yr"), "{text}");
    let oaks = outcome
        .plans
        .iter()
        .find(|p| p.plan.name == "6 oaks")
        .expect("plan");
    let year = studies::year_text(studies::payback_of(oaks, Benefit::Interception));
    assert!(text.contains(&format!("6 oaks (payback {year})")), "{text}");

    // PgDn scrolls the table down to the totals.
    for _ in 0..6 {
        key(&mut app, &mut query, KeyCode::PageDown);
    }
    let text = screen(&mut app, &mut query, 100, 30);
    assert!(text.contains("discounted deficit"), "{text}");

    // r reads the list again; the studies are kept.
    keys(&mut app, &mut query, "r");
    assert!(
        app.message
            .as_deref()
            .is_some_and(|m| m.starts_with("2 studies read")),
        "{:?}",
        app.message
    );
}

#[test]
fn studies_lines_differ_by_marker_and_colour_only_without_no_color() {
    for no_color in [false, true] {
        let mut store = demo_with_studies();
        let mut query = Query::new(&mut store);
        let settings = AppSettings {
            us_units: false,
            no_color,
        };
        let mut app = App::new(&query, settings, today()).expect("app");
        keys(&mut app, &mut query, "7");
        key(&mut app, &mut query, KeyCode::Down);
        key(&mut app, &mut query, KeyCode::Enter);
        let buffer = buffer(&mut app, &mut query, 100, 30);
        let text = screen(&mut app, &mut query, 100, 30);
        // Each plan has its own mark in the legend and in the chart.
        // Plans are listed by name: "3 cherries" first (o), "6 oaks" second (+).
        let (x, y) =
            find(&buffer, "oo 3 cherries", "oo 3 cherries").expect("legend of the first plan");
        assert!(find(&buffer, "++ 6 oaks", "++").is_some(), "{text}");
        let chart_rows: String = text.lines().take(11).collect::<Vec<_>>().join("\n");
        assert!(
            chart_rows.contains('o') && chart_rows.contains('+'),
            "{chart_rows}"
        );
        let cell = &buffer[(x, y)];
        if no_color {
            assert_eq!(cell.fg, Color::Reset, "NO_COLOR: no colour");
        } else {
            assert_ne!(cell.fg, Color::Reset, "a colour beside the mark");
        }
    }
}

#[test]
fn studies_view_without_studies_says_how_to_make_one_and_help_lists_every_key() {
    let mut store = demo_store();
    let mut query = Query::new(&mut store);
    let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
    keys(&mut app, &mut query, "7");
    let text = screen(&mut app, &mut query, 80, 24);
    assert!(text.contains("No removal studies yet"), "{text}");
    assert!(text.contains("streetwood study new"), "{text}");
    assert!(text.contains("never replace, the judgment"), "{text}");
    for view_key in ["7", "6"] {
        keys(&mut app, &mut query, view_key);
        keys(&mut app, &mut query, "?");
        let help = screen(&mut app, &mut query, 80, 24);
        for (keys_text, short_label, what) in keys_of(app.view) {
            assert!(help.contains(keys_text), "{keys_text} in:\n{help}");
            let flat = help
                .lines()
                .map(|l| l.trim_matches(|c| c == '│' || c == ' '))
                .collect::<Vec<_>>()
                .join(" ");
            assert!(
                flat.contains(what) || help.contains(&what[..what.len().min(40)]),
                "{what} in:\n{help}"
            );
            assert!(!short_label.is_empty());
        }
        key(&mut app, &mut query, KeyCode::Esc);
    }
    // The footer of each new view shows its keys; the tab bar names both views.
    keys(&mut app, &mut query, "6");
    let text = screen(&mut app, &mut query, 80, 24);
    let footer = text.lines().last().expect("footer");
    assert!(
        footer.contains(" b ") && footer.contains("group by"),
        "{footer}"
    );
    assert!(
        footer.contains(" x ") && footer.contains("export"),
        "{footer}"
    );
    let tabs = text.lines().next().expect("tabs");
    assert!(
        tabs.contains("6 Summary") && tabs.contains("7 Studies"),
        "{tabs}"
    );
}

#[test]
fn an_area_on_the_plan_view_starts_a_removal_study() {
    let mut store = demo_store();
    let expected;
    {
        let mut query = Query::new(&mut store);
        let mut app = App::new(&query, AppSettings::default(), today()).expect("app");
        keys(&mut app, &mut query, "S");
        assert!(
            app.message
                .as_deref()
                .is_some_and(|m| m.contains("choose an area first"))
        );
        app.update(Action::Show(View::Plan), &mut query, now());
        keys(&mut app, &mut query, "v");
        keys(&mut app, &mut query, "ll");
        keys(&mut app, &mut query, "jj");
        keys(&mut app, &mut query, "v");
        assert_eq!(app.view, View::Roster);
        expected = app
            .roster
            .data
            .entries
            .iter()
            .filter(|e| e.status == streetwood::model::TreeStatus::Standing)
            .filter(|e| {
                app.roster.filters.iter().any(|f| match f {
                    streetwood::tui::views::roster::Filter::Ids(ids, _) => ids.contains(&e.id),
                    _ => false,
                })
            })
            .count();
        assert!(expected > 0);
        keys(&mut app, &mut query, "S");
        let text = screen(&mut app, &mut query, 100, 30);
        assert!(text.contains("Name of a new removal study"), "{text}");
        assert!(
            text.contains("qualified arborist"),
            "the caution on the prompt:\n{text}"
        );
        keys(&mut app, &mut query, "Area works");
        key(&mut app, &mut query, KeyCode::Enter);
        let message = app.message.clone().unwrap_or_default();
        assert!(
            message.contains(&format!(
                "created the removal study 'Area works' of {expected} standing trees"
            )),
            "{message}"
        );
    }
    let studies = store.studies().expect("studies");
    assert!(studies.iter().any(|s| s.name == "Area works"));
    let study = store.require_study("Area works").expect("study");
    assert_eq!(
        store.study_tree_rows(study.id).expect("trees").len(),
        expected
    );
}

/// On a file the roster index loads on another thread: the app starts (and draws) before it is there,
/// says so, and fills the roster when it arrives.
#[test]
fn the_roster_loads_off_the_ui_thread() {
    let dir = tempfile::tempdir().expect("temp dir");
    let path = dir.path().join("demo.db");
    let output = common::run(dir.path(), &["demo", "--out", path.to_str().expect("path")]);
    assert!(output.status.success());
    let mut store = Store::open_existing(&path).expect("open");
    let mut query = Query::new(&mut store);
    let mut app = App::new_loading(&mut query, AppSettings::default(), today()).expect("app");
    assert_eq!(
        app.loading_roster,
        Some(2497),
        "the app exists before the index"
    );
    for _ in 0..400 {
        let text = screen(&mut app, &mut query, 100, 30);
        if app.loading_roster.is_none() {
            break;
        }
        assert!(text.contains("loading the roster of ~2497 trees"), "{text}");
        std::thread::sleep(std::time::Duration::from_millis(25));
    }
    assert_eq!(app.loading_roster, None, "the index arrived");
    let text = screen(&mut app, &mut query, 100, 30);
    assert!(text.contains("tree 1 of 2497"), "{text}");
    assert_eq!(app.roster.visible_rows().len(), 24);
}
