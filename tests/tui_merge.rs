//! The conflict screen of `streetwood merge OTHER --interactive`: drawn on ratatui's TestBackend from a
//! plan written out by hand (insta snapshots at 100×30 and 80×24) and driven by keys; the screen's
//! choice carried through the store; and the real binary in a pseudo-terminal.

mod common;

use std::path::Path;

use chrono::{NaiveDate, TimeZone, Utc};
use ratatui::Terminal;
use ratatui::backend::TestBackend;
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use serde_json::json;
use streetwood::model::TreeRecord;
use streetwood::store::Store;
use streetwood::store::merge::{MergeConflict, MergeReport, TableCounts};
use streetwood::store::trees::TreeImportRow;
use streetwood::sync::{FieldConflict, Rule, Side};
use streetwood::tui::views::merge_conflicts::{Outcome, State, Step, render};

fn counts(table: &str, added: usize, updated: usize) -> TableCounts {
    TableCounts {
        table: table.to_string(),
        added,
        updated,
        unchanged: 40,
        rejected: 0,
    }
}

/// A plan with two conflicts: the street of tree T-0012 (this file's change is the later one) and the
/// notes of a pruning order (the copy's is later).
fn plan() -> MergeReport {
    MergeReport {
        other: "crew-b.db".to_string(),
        other_file_id: "b7f1c2d4-0000-4000-8000-000000000002".to_string(),
        crew: Some("Birch".to_string()),
        dry_run: true,
        target_news_after: 120,
        other_news_after: 120,
        tables: vec![
            counts("trees", 2, 1),
            counts("measurements", 3, 0),
            counts("work_orders", 0, 1),
        ],
        conflicts: vec![
            MergeConflict {
                table: "trees".to_string(),
                uid: "T-0012".to_string(),
                tree_uid: Some("T-0012".to_string()),
                street: Some("Mill Lane".to_string()),
                field: FieldConflict {
                    field: "street".to_string(),
                    target_value: json!("Mill Lane"),
                    target_changed_at: "2026-06-03T10:15:00.000Z".to_string(),
                    other_value: json!("Quarry Road"),
                    other_changed_at: "2026-06-02T08:40:00.000Z".to_string(),
                    target_changed_by: "crew a".to_string(),
                    other_changed_by: "crew b".to_string(),
                    winner: Side::Target,
                    rule: Rule::LaterChange,
                    default_winner: Side::Target,
                    by_hand: false,
                },
            },
            MergeConflict {
                table: "work_orders".to_string(),
                uid: "a1:7".to_string(),
                tree_uid: Some("T-0031".to_string()),
                street: Some("Elm Row".to_string()),
                field: FieldConflict {
                    field: "notes".to_string(),
                    target_value: json!("done by crew A"),
                    target_changed_at: "2026-06-03T09:00:00.000Z".to_string(),
                    other_value: json!("bring the long ladder"),
                    other_changed_at: "2026-06-03T09:30:00.000Z".to_string(),
                    target_changed_by: "office".to_string(),
                    other_changed_by: "crew b".to_string(),
                    winner: Side::Other,
                    rule: Rule::LaterChange,
                    default_winner: Side::Other,
                    by_hand: false,
                },
            },
        ],
        rejected: Vec::new(),
    }
}

fn screen(state: &State, width: u16, height: u16) -> String {
    let mut terminal = Terminal::new(TestBackend::new(width, height)).expect("terminal");
    terminal
        .draw(|frame| render(state, frame, frame.area()))
        .expect("draw");
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

fn press(state: &mut State, code: KeyCode) -> Option<Outcome> {
    state.handle_key(KeyEvent::from(code))
}

#[test]
fn conflict_screen_at_100x30_and_80x24_driven_by_keys() {
    let plan = plan();
    let mut state = State::new(&plan);
    assert_eq!(state.step, Step::Choose);
    insta::assert_snapshot!("merge_conflicts_100x30", screen(&state, 100, 30));
    insta::assert_snapshot!("merge_conflicts_80x24", screen(&state, 80, 24));

    // Down to the order's notes, keep this file's value (the rule would take the copy's).
    assert_eq!(press(&mut state, KeyCode::Char('j')), None);
    assert_eq!(press(&mut state, KeyCode::Left), None);
    assert_eq!(state.side(1), Side::Target);
    let picked = screen(&state, 100, 30);
    insta::assert_snapshot!("merge_conflicts_picked_100x30", picked);
    assert!(picked.contains("(1 picked by hand)"), "{picked}");

    assert_eq!(press(&mut state, KeyCode::Enter), None);
    assert_eq!(state.step, Step::Review);
    insta::assert_snapshot!("merge_conflicts_review_100x30", screen(&state, 100, 30));
    let Some(Outcome::Merge(choices)) = press(&mut state, KeyCode::Enter) else {
        panic!("Enter on the review merges");
    };
    assert_eq!(choices.picks.len(), 1);
    assert_eq!(
        choices.picks.get(&plan.conflicts[1].key()),
        Some(&Side::Target)
    );
    assert_eq!(choices.planned.as_deref(), Some(plan.conflicts.as_slice()));
}

#[test]
fn keys_move_pick_accept_defaults_and_cancel() {
    let plan = plan();
    let mut state = State::new(&plan);
    // k at the top and j past the end stay in the list.
    press(&mut state, KeyCode::Char('k'));
    assert_eq!(state.selected, 0);
    for _ in 0..5 {
        press(&mut state, KeyCode::Down);
    }
    assert_eq!(state.selected, 1);
    press(&mut state, KeyCode::Up);
    // 2 and l take the copy's value; 1 and h keep this file's; Space flips.
    press(&mut state, KeyCode::Char('2'));
    assert_eq!(state.side(0), Side::Other);
    press(&mut state, KeyCode::Char('1'));
    assert_eq!(state.side(0), Side::Target);
    press(&mut state, KeyCode::Char('l'));
    assert_eq!(state.side(0), Side::Other);
    press(&mut state, KeyCode::Char(' '));
    assert_eq!(state.side(0), Side::Target);
    assert_eq!(state.picks, vec![Some(Side::Target), None]);

    // a: every conflict back to the rule's side, on to the review; Esc returns to the list.
    assert_eq!(press(&mut state, KeyCode::Char('a')), None);
    assert_eq!(state.step, Step::Review);
    assert_eq!(state.picks, vec![None, None]);
    assert_eq!((state.side(0), state.side(1)), (Side::Target, Side::Other));
    assert_eq!(press(&mut state, KeyCode::Esc), None);
    assert_eq!(state.step, Step::Choose);
    assert_eq!(press(&mut state, KeyCode::Char('m')), None);
    assert_eq!(press(&mut state, KeyCode::Char('q')), Some(Outcome::Cancel));

    let mut state = State::new(&plan);
    assert_eq!(press(&mut state, KeyCode::Esc), Some(Outcome::Cancel));
    let mut state = State::new(&plan);
    assert_eq!(press(&mut state, KeyCode::Char('q')), Some(Outcome::Cancel));
    let mut state = State::new(&plan);
    assert_eq!(
        state.handle_key(KeyEvent::new(KeyCode::Char('c'), KeyModifiers::CONTROL)),
        Some(Outcome::Cancel)
    );
}

#[test]
fn without_conflicts_the_screen_says_so_and_asks_to_merge() {
    let mut plan = plan();
    plan.conflicts.clear();
    let mut state = State::new(&plan);
    assert_eq!(state.step, Step::Review);
    let text = screen(&state, 80, 24);
    insta::assert_snapshot!("merge_no_conflicts_80x24", text);
    assert!(text.contains("No conflicts"), "{text}");
    let Some(Outcome::Merge(choices)) = press(&mut state, KeyCode::Char('y')) else {
        panic!("y merges");
    };
    assert!(choices.picks.is_empty());
    let mut state = State::new(&plan);
    assert_eq!(press(&mut state, KeyCode::Esc), Some(Outcome::Cancel));
}

fn now() -> chrono::DateTime<Utc> {
    Utc.with_ymd_and_hms(2026, 6, 1, 9, 0, 0)
        .single()
        .expect("time")
}

fn set_notes(path: &Path, notes: &str, actor: &str) {
    let mut store = Store::open_or_create(path).expect("open");
    let record = TreeRecord {
        uid: Some("T-1".to_string()),
        species: "Tilia cordata".to_string(),
        lon: None,
        lat: None,
        street: Some("Elm Row".to_string()),
        house_number: None,
        site_kind: None,
        planted_on: None,
        status: None,
        measured_on: NaiveDate::from_ymd_opt(2026, 5, 1).expect("date"),
        stems_cm: vec![20.0],
        multi_stem: false,
        height_m: None,
        crown_base_m: None,
        crown_width_m: None,
        crown_width2_m: None,
        dieback_pct: None,
        condition: None,
        notes: (!notes.is_empty()).then(|| notes.to_string()),
        measured_by: None,
    };
    store
        .import_trees(
            &[TreeImportRow {
                line: 2,
                record,
                zone_id: None,
            }],
            actor,
            now(),
            false,
        )
        .expect("import");
}

/// The office with tree T-1 and two crew copies: crew a writes "leans", then crew b "cavity".
fn two_crews(dir: &Path) {
    let office = dir.join("office.db");
    set_notes(&office, "", "office");
    let mut store = Store::open_existing(&office).expect("office");
    for crew in ["a", "b"] {
        store
            .make_copy(&dir.join(format!("{crew}.db")), crew, now())
            .expect("copy");
    }
    drop(store);
    set_notes(&dir.join("a.db"), "leans", "crew a");
    std::thread::sleep(std::time::Duration::from_millis(20));
    set_notes(&dir.join("b.db"), "cavity", "crew b");
}

fn notes(path: &Path) -> String {
    let store = Store::open_existing(path).expect("open");
    store
        .conn()
        .query_row("SELECT notes FROM trees WHERE uid = 'T-1'", [], |r| {
            r.get(0)
        })
        .expect("notes")
}

#[test]
fn the_side_picked_on_the_screen_is_the_one_merged() {
    let dir = tempfile::tempdir().expect("temp dir");
    two_crews(dir.path());
    let mut a = Store::open_existing(&dir.path().join("a.db")).expect("a");
    let plan = a.merge_plan(&dir.path().join("b.db"), now()).expect("plan");
    let mut state = State::new(&plan);
    let shown = screen(&state, 100, 30);
    assert!(
        shown.contains("leans") && shown.contains("cavity"),
        "{shown}"
    );
    assert!(
        shown.contains("by crew a") && shown.contains("by crew b"),
        "{shown}"
    );
    press(&mut state, KeyCode::Char('h'));
    press(&mut state, KeyCode::Enter);
    let Some(Outcome::Merge(choices)) = press(&mut state, KeyCode::Enter) else {
        panic!("merge");
    };
    let report = a
        .merge_from_with(&dir.path().join("b.db"), now(), &choices)
        .expect("merge");
    drop(a);
    assert_eq!(notes(&dir.path().join("a.db")), "leans");
    assert!(report.conflicts[0].field.by_hand);
    assert!(report.to_text().contains("decided by hand"));
}

/// The real binary in a pseudo-terminal: pick this file's side, review, merge; the report follows the
/// screen on the terminal. Then a second run cancelled with q writes nothing.
#[test]
fn binary_merges_interactively_in_a_terminal() {
    use expectrl::Expect;
    let dir = tempfile::tempdir().expect("temp dir");
    two_crews(dir.path());
    let spawn = || {
        let mut command = std::process::Command::new(common::binary());
        command
            .args(["--db", "a.db", "merge", "b.db", "--interactive"])
            .current_dir(dir.path())
            .env("TERM", "xterm-256color")
            .env("HOME", dir.path())
            .env("XDG_DATA_HOME", dir.path().join("xdg-data"))
            .env("STREETWOOD_BACKUP_DIR", dir.path().join("backups"))
            .env_remove("STREETWOOD_DB");
        let mut session = expectrl::session::Session::spawn(command).expect("spawn in a pty");
        session.set_expect_timeout(Some(std::time::Duration::from_secs(20)));
        session
    };
    let pause = || std::thread::sleep(std::time::Duration::from_millis(150));
    let audit_rows = || -> i64 {
        let store = Store::open_existing(&dir.path().join("a.db")).expect("open");
        store
            .conn()
            .query_row("SELECT count(*) FROM audit_log", [], |r| r.get(0))
            .expect("count")
    };

    let before = audit_rows();
    let mut session = spawn();
    session.expect("cavity").expect("the conflict is listed");
    pause();
    session.send("q").expect("q");
    session
        .expect("nothing was written")
        .expect("the cancel is reported");
    session.expect(expectrl::Eof).expect("the program ends");
    assert_eq!(audit_rows(), before);
    let merged = Store::open_existing(&dir.path().join("a.db"))
        .expect("open")
        .sync_peers()
        .expect("peers")
        .iter()
        .any(|p| p.relation == "merged");
    assert!(!merged, "a cancelled merge records nothing");

    let mut session = spawn();
    session.expect("cavity").expect("the conflict is listed");
    pause();
    session.send("h").expect("h");
    pause();
    session.send("\r").expect("enter");
    session.expect("Merge now").expect("the review");
    pause();
    session.send("y").expect("y");
    session
        .expect("decided by hand")
        .expect("the report follows the screen");
    session.expect(expectrl::Eof).expect("the program ends");
    assert_eq!(notes(&dir.path().join("a.db")), "leans");
    // This file's value was kept, so no row changed; the merge is recorded all the same.
    let peers = Store::open_existing(&dir.path().join("a.db"))
        .expect("open")
        .sync_peers()
        .expect("peers");
    assert!(peers.iter().any(|p| p.relation == "merged"), "{peers:?}");
}
