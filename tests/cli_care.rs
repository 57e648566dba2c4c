//! End-to-end tests of `care` and `work` on the demo inventory: the round trip of issue 5 ("a leaning tree
//! over a bus stop" → extreme → proposed priority-1 order → scheduled → done → tree removed but kept), the
//! overdue watchlist against a hand count of `demo-inventory/assessments.csv`, the work queue against
//! `demo-inventory/work_orders.csv`, idempotent cycles, CSV safety and the caution, and bad input.

mod common;

use std::collections::{HashMap, HashSet};

use common::{run, stderr, stdout};

fn demo(dir: &std::path::Path) -> String {
    let db = dir.join("demo.db");
    let output = run(dir, &["demo", "--out", db.to_str().expect("path")]);
    assert!(output.status.success(), "{}", stderr(&output));
    db.to_string_lossy().into_owned()
}

fn ok(dir: &std::path::Path, args: &[&str]) -> String {
    let output = run(dir, args);
    assert!(
        output.status.success(),
        "{args:?} failed: {}",
        stderr(&output)
    );
    stdout(&output)
}

fn json(dir: &std::path::Path, args: &[&str]) -> serde_json::Value {
    serde_json::from_str(&ok(dir, args)).expect("json output")
}

fn records(text: &str) -> (csv::StringRecord, Vec<csv::StringRecord>) {
    let mut reader = csv::Reader::from_reader(text.as_bytes());
    let header = reader.headers().expect("header").clone();
    let rows = reader
        .records()
        .map(|r| r.expect("valid csv row"))
        .collect();
    (header, rows)
}

fn column(header: &csv::StringRecord, name: &str) -> usize {
    header
        .iter()
        .position(|h| h == name)
        .unwrap_or_else(|| panic!("no column {name}"))
}

fn audit_rows(db: &str) -> i64 {
    let store = streetwood::store::Store::open_existing(std::path::Path::new(db)).expect("open");
    store
        .conn()
        .query_row("SELECT count(*) FROM audit_log", [], |r| r.get(0))
        .expect("count")
}

const CAUTION: &str = streetwood::care::risk::CAUTION;
const LEANING: &str = "part=whole_tree,size=62,target=bus stop,occupancy=constant,failure=imminent,impact=high,consequences=severe";

/// A standing tree of the demo with no assessment and no work order.
fn quiet_standing_tree(dir: &std::path::Path, db: &str) -> (String, String) {
    let trees = ok(dir, &["--db", db, "export", "trees"]);
    let (header, rows) = records(&trees);
    let status = column(&header, "status");
    let busy: HashSet<String> = ["assessments.csv", "work_orders.csv"]
        .iter()
        .flat_map(|f| {
            let text = std::fs::read_to_string(format!(
                "{}/demo-inventory/{f}",
                env!("CARGO_MANIFEST_DIR")
            ))
            .expect("demo file");
            records(&text).1.into_iter().map(|r| r[0].to_string())
        })
        .collect();
    let row = rows
        .iter()
        .find(|r| &r[status] == "standing" && !busy.contains(&r[0]))
        .expect("a quiet standing tree");
    (row[0].to_string(), row[0][..8].to_string())
}

#[test]
fn done_when_a_leaning_tree_over_a_bus_stop_is_removed_but_kept_in_history() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let db = demo(d);
    let (uid, prefix) = quiet_standing_tree(d, &db);
    let today = "2026-11-30";
    let before = json(
        d,
        &[
            "--db", &db, "work", "list", "--format", "json", "--today", today,
        ],
    );

    // 1. Assess without accepting: the proposal is printed, nothing is created.
    let text = ok(
        d,
        &[
            "--db",
            &db,
            "care",
            "assess",
            &prefix,
            "--mode",
            LEANING,
            "--mitigation",
            "task=prune,residual=moderate,note=reduce the lean",
            "--mitigation",
            "task=remove,residual=low,note=remove the tree",
            "--assessor",
            "K. Lee",
            "--on",
            today,
            "--today",
            today,
        ],
    );
    assert!(text.contains("Overall rating: extreme"), "{text}");
    assert!(
        text.contains("Proposed work order: remove, priority 1 (urgent), due 2026-11-30"),
        "{text}"
    );
    assert!(text.contains("Not created: add --accept-work"), "{text}");
    assert!(text.contains(CAUTION));
    let unchanged = json(
        d,
        &[
            "--db", &db, "work", "list", "--format", "json", "--today", today,
        ],
    );
    assert_eq!(unchanged["count"], before["count"]);

    // 2. Assess again and accept the proposal, edited with a crew and an estimate.
    let accepted = json(
        d,
        &[
            "--db",
            &db,
            "care",
            "assess",
            &uid,
            "--mode",
            LEANING,
            "--mitigation",
            "task=remove,residual=low",
            "--accept-work",
            "--work-crew",
            "Kestrel crew",
            "--work-cost",
            "1850",
            "--on",
            today,
            "--today",
            today,
            "--format",
            "json",
        ],
    );
    assert_eq!(accepted["assessment"]["overall"], "extreme");
    assert_eq!(
        accepted["assessment"]["modes"][0]["likelihood"],
        "very_likely"
    );
    assert_eq!(accepted["assessment"]["next_due_on"], today);
    assert_eq!(accepted["proposal"]["priority"], 1);
    assert_eq!(accepted["proposal"]["task"], "remove");
    assert_eq!(accepted["caution"], CAUTION);
    let order = accepted["work_order_id"].as_i64().expect("order created");
    let tree_id = accepted["tree"]["id"]
        .as_i64()
        .expect("tree id")
        .to_string();

    let queue = json(
        d,
        &[
            "--db", &db, "work", "list", "--format", "json", "--today", today,
        ],
    );
    assert_eq!(
        queue["count"].as_u64(),
        before["count"].as_u64().map(|n| n + 1)
    );
    let orders = queue["orders"].as_array().expect("orders");
    let mine = orders
        .iter()
        .position(|o| o["id"] == order)
        .expect("in the queue");
    assert_eq!(orders[mine]["rating"], "extreme");
    assert_eq!(orders[mine]["priority"], 1);
    assert!(
        orders[..mine].iter().all(|o| o["priority"] == 1),
        "priority 1 work comes first"
    );
    let budget = |q: &serde_json::Value| q["open_estimated_cost"].as_f64().expect("cost");
    assert!((budget(&queue) - budget(&before) - 1850.0).abs() < 1e-6);

    // 3. Schedule and complete it.
    let id = order.to_string();
    let scheduled = ok(
        d,
        &[
            "--db",
            &db,
            "work",
            "schedule",
            &id,
            "--on",
            "2026-12-03",
            "--today",
            today,
        ],
    );
    assert!(
        scheduled.contains("scheduled for 2026-12-03 (Kestrel crew)"),
        "{scheduled}"
    );
    let done = ok(
        d,
        &[
            "--db",
            &db,
            "work",
            "done",
            &id,
            "--on",
            "2026-12-03",
            "--cost",
            "1920",
            "--today",
            "2026-12-04",
        ],
    );
    assert!(
        done.contains(&format!("tree {tree_id} marked removed on 2026-12-03")),
        "{done}"
    );

    // 4. Removed from the standing roster, kept in the inventory and its history.
    let trees = ok(d, &["--db", &db, "export", "trees"]);
    let (header, rows) = records(&trees);
    let row = rows.iter().find(|r| r[0] == uid).expect("the tree is kept");
    assert_eq!(&row[column(&header, "status")], "removed");
    let benefits = ok(d, &["--db", &db, "benefits"]);
    assert!(
        !benefits.contains(&uid),
        "no longer among the standing trees"
    );
    let history = json(
        d,
        &["--db", &db, "care", "history", &tree_id, "--format", "json"],
    );
    assert_eq!(history["tree"]["status"], "removed");
    assert_eq!(history["tree"]["removed_on"], "2026-12-03");
    assert_eq!(history["assessments"].as_array().map(Vec::len), Some(2));
    let all = json(
        d,
        &[
            "--db", &db, "work", "list", "--all", "--tree", &tree_id, "--format", "json",
        ],
    );
    assert_eq!(all["orders"][0]["status"], "done");
    assert_eq!(all["orders"][0]["actual_cost"], 1920.0);
    let watch = ok(
        d,
        &[
            "--db", &db, "care", "list", "--format", "csv", "--today", today,
        ],
    );
    assert!(!watch.contains(&uid), "a removed tree leaves the watchlist");

    // 5. Done is final.
    let again = run(
        d,
        &[
            "--db",
            &db,
            "work",
            "done",
            &id,
            "--on",
            "2026-12-03",
            "--today",
            "2026-12-04",
        ],
    );
    assert_eq!(again.status.code(), Some(2));
    assert!(
        stderr(&again).contains("done orders are final"),
        "{}",
        stderr(&again)
    );
}

/// The matrices of METHODS.md M9 (ISA BMP 2017), written out independently for the hand count.
fn demo_rating(failure: &str, impact: &str, consequences: &str) -> usize {
    let impacts = ["very_low", "low", "medium", "high"];
    let likely = match failure {
        "imminent" => [0, 1, 2, 3],
        "probable" => [0, 0, 1, 2],
        "possible" => [0, 0, 0, 1],
        _ => [0, 0, 0, 0],
    }[impacts.iter().position(|i| *i == impact).expect("impact")];
    let consequence = ["negligible", "minor", "significant", "severe"]
        .iter()
        .position(|c| *c == consequences)
        .expect("consequences");
    // 0 low, 1 moderate, 2 high, 3 extreme; rows: unlikely, somewhat likely, likely, very likely
    [[0, 0, 0, 0], [0, 0, 1, 1], [0, 1, 2, 2], [0, 1, 2, 3]][likely][consequence]
}

#[test]
fn the_overdue_watchlist_on_the_demo_matches_a_hand_count() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let db = demo(d);
    // Hand count from demo-inventory/assessments.csv with --today 2026-11-30: rows of one tree and date
    // form one assessment rated by its worst mode; the latest assessment of each tree sets the next
    // inspection (extreme +0, high +6, moderate +24, low +60 months); overdue = due before today.
    // Worked by hand: 59 rows → 54 assessments of 54 trees; overdue: 2 extreme (due 2025-04-29,
    // 2025-06-03), 4 high (2025-05-22, 2025-12-18, 2026-01-29, 2026-05-15) and 4 moderate (2026-04-26,
    // 2026-05-13, 2026-10-01, 2026-11-03) = 10.
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/demo-inventory/assessments.csv"
    ))
    .expect("assessments.csv");
    let (header, rows) = records(&text);
    let at = |name: &str| column(&header, name);
    let mut assessments: HashMap<(String, String), usize> = HashMap::new();
    for r in &rows {
        let rating = demo_rating(
            &r[at("likelihood_of_failure")],
            &r[at("likelihood_of_impact")],
            &r[at("consequences")],
        );
        let key = (
            r[at("tree_uid")].to_string(),
            r[at("assessed_on")].to_string(),
        );
        let worst = assessments.entry(key).or_insert(0);
        *worst = (*worst).max(rating);
    }
    let mut latest: HashMap<String, (chrono::NaiveDate, usize)> = HashMap::new();
    for ((uid, on), rating) in assessments {
        let on: chrono::NaiveDate = on.parse().expect("date");
        let entry = latest.entry(uid).or_insert((on, rating));
        if on > entry.0 {
            *entry = (on, rating);
        }
    }
    let today: chrono::NaiveDate = "2026-11-30".parse().expect("date");
    let expected: HashSet<String> = latest
        .iter()
        .filter(|(_, (on, rating))| {
            let months = [60, 24, 6, 0][*rating];
            on.checked_add_months(chrono::Months::new(months))
                .expect("date")
                < today
        })
        .map(|(uid, _)| uid.clone())
        .collect();
    assert_eq!(expected.len(), 10, "the hand count");

    let csv_text = ok(
        d,
        &[
            "--db",
            &db,
            "care",
            "list",
            "--overdue",
            "--today",
            "2026-11-30",
            "--format",
            "csv",
        ],
    );
    let (header, listed) = records(&csv_text);
    let got: HashSet<String> = listed
        .iter()
        .map(|r| r[column(&header, "uid")].to_string())
        .collect();
    assert_eq!(got, expected);
    // Overdue re-inspections first, the highest rating first among them.
    let ratings: Vec<String> = listed
        .iter()
        .map(|r| r[column(&header, "rating")].to_string())
        .collect();
    assert_eq!(
        ratings,
        [
            "extreme", "extreme", "high", "high", "high", "high", "moderate", "moderate",
            "moderate", "moderate"
        ]
    );
    assert!(
        listed
            .iter()
            .all(|r| &r[column(&header, "caution")] == CAUTION)
    );

    let all = json(
        d,
        &[
            "--db",
            &db,
            "care",
            "list",
            "--today",
            "2026-11-30",
            "--format",
            "json",
        ],
    );
    assert_eq!(all["count"], 54);
    assert_eq!(all["overdue"], 10);
    assert_eq!(all["by_rating"]["extreme"], 2);
    assert_eq!(all["by_rating"]["high"], 6);
    assert_eq!(all["by_rating"]["moderate"], 10);
    assert_eq!(all["by_rating"]["low"], 36);
    assert_eq!(all["caution"], CAUTION);
    let trees = all["trees"].as_array().expect("trees");
    assert!(trees[..10].iter().all(|t| t["overdue_days"].is_number()));
    assert!(trees[10..].iter().all(|t| t["overdue_days"].is_null()));
    let high = json(
        d,
        &[
            "--db",
            &db,
            "care",
            "list",
            "--rating",
            "high",
            "--today",
            "2026-11-30",
            "--format",
            "json",
        ],
    );
    assert_eq!(high["count"], 6);
    let at_least = json(
        d,
        &[
            "--db",
            &db,
            "care",
            "list",
            "--min-rating",
            "high",
            "--today",
            "2026-11-30",
            "--format",
            "json",
        ],
    );
    assert_eq!(at_least["count"], 8);
    let table = ok(
        d,
        &[
            "--db",
            &db,
            "care",
            "list",
            "--overdue",
            "--today",
            "2026-11-30",
        ],
    );
    assert!(
        table.contains(
            "10 trees on the watchlist, 10 with an overdue re-inspection as of 2026-11-30"
        ),
        "{table}"
    );
    assert!(table.contains(CAUTION));
}

#[test]
fn the_work_queue_on_the_demo_matches_work_orders_csv() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let db = demo(d);
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/demo-inventory/work_orders.csv"
    ))
    .expect("work_orders.csv");
    let (header, rows) = records(&text);
    let status = column(&header, "status");
    let crew = column(&header, "crew");
    let cost = column(&header, "cost");
    let open: Vec<&csv::StringRecord> = rows
        .iter()
        .filter(|r| &r[status] == "open" || &r[status] == "scheduled")
        .collect();
    let sum: f64 = open
        .iter()
        .filter_map(|r| r[cost].parse::<f64>().ok())
        .sum();
    let unestimated = open.iter().filter(|r| r[cost].is_empty()).count();

    let queue = json(
        d,
        &[
            "--db",
            &db,
            "work",
            "list",
            "--format",
            "json",
            "--today",
            "2026-11-30",
        ],
    );
    assert_eq!(queue["count"].as_u64(), Some(open.len() as u64));
    assert!((queue["open_estimated_cost"].as_f64().expect("sum") - sum).abs() < 1e-6);
    assert_eq!(
        queue["open_without_estimate"].as_u64(),
        Some(unestimated as u64)
    );
    assert_eq!(queue["currency"], "USD");
    let orders = queue["orders"].as_array().expect("orders");
    let keys: Vec<(i64, String)> = orders
        .iter()
        .map(|o| {
            (
                o["priority"].as_i64().expect("priority"),
                o["due_on"].as_str().unwrap_or("9999").to_string(),
            )
        })
        .collect();
    let mut sorted = keys.clone();
    sorted.sort();
    assert_eq!(keys, sorted, "by priority, then due date");

    let kestrel = open.iter().filter(|r| &r[crew] == "Kestrel crew").count();
    let by_crew = json(
        d,
        &[
            "--db",
            &db,
            "work",
            "list",
            "--crew",
            "kestrel crew",
            "--format",
            "json",
            "--today",
            "2026-11-30",
        ],
    );
    assert_eq!(by_crew["count"].as_u64(), Some(kestrel as u64));
    let everything = json(
        d,
        &["--db", &db, "work", "list", "--all", "--format", "json"],
    );
    assert_eq!(everything["count"].as_u64(), Some(rows.len() as u64));
    let removals = json(
        d,
        &[
            "--db", &db, "work", "list", "--task", "remove", "--status", "open", "--format", "json",
        ],
    );
    let open_removals = rows
        .iter()
        .filter(|r| &r[column(&header, "task")] == "remove" && &r[status] == "open")
        .count();
    assert_eq!(removals["count"].as_u64(), Some(open_removals as u64));
    let street = json(
        d,
        &[
            "--db",
            &db,
            "work",
            "list",
            "--street",
            "foundry street",
            "--format",
            "json",
        ],
    );
    let streets: HashSet<&str> = street["orders"]
        .as_array()
        .expect("orders")
        .iter()
        .filter_map(|o| o["street"].as_str())
        .collect();
    assert!(
        streets.len() <= 1 && streets.iter().all(|s| *s == "Foundry Street"),
        "{streets:?}"
    );
    let table = ok(d, &["--db", &db, "work", "list", "--today", "2026-11-30"]);
    assert!(table.contains("estimated cost of the"), "{table}");
}

#[test]
fn cycle_generation_twice_creates_nothing_the_second_time() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let db = demo(d);
    let preview = json(
        d,
        &[
            "--db",
            &db,
            "care",
            "cycle",
            "--until",
            "2027-06-30",
            "--dry-run",
            "--format",
            "json",
        ],
    );
    let first = json(
        d,
        &[
            "--db",
            &db,
            "care",
            "cycle",
            "--until",
            "2027-06-30",
            "--format",
            "json",
        ],
    );
    let n = first["count"].as_u64().expect("count");
    assert!(n > 100, "the demo has years of pruning due: {n}");
    assert_eq!(preview["count"], first["count"]);
    let kinds: HashSet<&str> = first["orders"]
        .as_array()
        .expect("orders")
        .iter()
        .filter_map(|o| o["kind"].as_str())
        .collect();
    assert!(
        kinds.contains("routine_prune") && kinds.contains("young_training"),
        "{kinds:?}"
    );
    let audit = audit_rows(&db);
    let second = json(
        d,
        &[
            "--db",
            &db,
            "care",
            "cycle",
            "--until",
            "2027-06-30",
            "--format",
            "json",
        ],
    );
    assert_eq!(second["count"], 0);
    assert_eq!(audit_rows(&db), audit, "the second run writes nothing");
    let queue = json(
        d,
        &[
            "--db",
            &db,
            "work",
            "list",
            "--task",
            "prune",
            "--format",
            "json",
            "--today",
            "2026-11-30",
        ],
    );
    let cycle_orders = queue["orders"]
        .as_array()
        .expect("orders")
        .iter()
        .filter(|o| o["cycle"].is_string())
        .count() as u64;
    assert_eq!(
        cycle_orders,
        n - first["orders"]
            .as_array()
            .expect("orders")
            .iter()
            .filter(|o| o["task"] != "prune")
            .count() as u64
    );
    let text = ok(d, &["--db", &db, "care", "cycle", "--until", "2027-06-30"]);
    assert!(text.contains("created 0 cycle work orders"), "{text}");
}

#[test]
fn risk_outputs_carry_the_caution_and_csv_cells_are_safe() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let db = demo(d);
    let (uid, _) = quiet_standing_tree(d, &db);
    let today = "2026-11-30";
    ok(
        d,
        &[
            "--db",
            &db,
            "care",
            "assess",
            &uid,
            "--mode",
            "part=branch,size=30,target=sidewalk,occupancy=frequent,failure=probable,impact=high,consequences=significant",
            "--assessor",
            "=cmd()",
            "--accept-work",
            "--today",
            today,
        ],
    );
    ok(
        d,
        &[
            "--db",
            &db,
            "work",
            "add",
            &uid,
            "--task",
            "water",
            "--priority",
            "3",
            "--notes",
            "+SUM(A1)",
        ],
    );
    let watch = ok(
        d,
        &[
            "--db", &db, "care", "list", "--rating", "high", "--format", "csv", "--today", today,
        ],
    );
    let (header, rows) = records(&watch);
    let mine = rows
        .iter()
        .find(|r| r[column(&header, "uid")] == uid)
        .expect("listed");
    assert_eq!(&mine[column(&header, "assessor")], "'=cmd()");
    assert_eq!(&mine[column(&header, "caution")], CAUTION);
    let work = ok(
        d,
        &[
            "--db", &db, "work", "list", "--tree", &uid, "--format", "csv",
        ],
    );
    let (header, rows) = records(&work);
    assert_eq!(rows.len(), 2, "the proposed pruning and the watering");
    let notes: Vec<&str> = rows.iter().map(|r| &r[column(&header, "notes")]).collect();
    assert!(notes.contains(&"'+SUM(A1)"), "{notes:?}");
    assert!(
        rows.iter()
            .all(|r| &r[column(&header, "caution")] == CAUTION)
    );
    let pruning = rows
        .iter()
        .find(|r| &r[column(&header, "task")] == "prune")
        .expect("proposed pruning");
    assert_eq!(
        &pruning[column(&header, "priority")],
        "2",
        "high rating → priority 2"
    );
    assert_eq!(&pruning[column(&header, "rating")], "high");
    for args in [
        vec!["care", "list", "--format", "table"],
        vec!["care", "history", uid.as_str()],
        vec!["work", "list"],
    ] {
        let mut full = vec!["--db", db.as_str()];
        full.extend(args.iter());
        assert!(ok(d, &full).contains(CAUTION), "{args:?}");
    }
    let help = ok(d, &["care", "assess", "--help"]);
    assert!(help.contains("FAILURE MODES"), "{help}");
    assert!(help.contains("--accept-work"));
}

#[test]
fn bad_input_names_the_field_exits_2_and_writes_nothing() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let db = demo(d);
    let (uid, _) = quiet_standing_tree(d, &db);
    let trees = ok(d, &["--db", &db, "export", "trees"]);
    let (header, rows) = records(&trees);
    let removed = rows
        .iter()
        .find(|r| &r[column(&header, "status")] == "removed")
        .map(|r| r[0].to_string())
        .expect("the demo has removed trees");
    let open = json(
        d,
        &[
            "--db", &db, "work", "list", "--status", "open", "--format", "json",
        ],
    );
    let open_id = open["orders"][0]["id"]
        .as_i64()
        .expect("an open order")
        .to_string();
    let audit = audit_rows(&db);
    let moderate = "part=trunk,occupancy=rare,failure=probable,impact=medium,consequences=severe";
    let cases: Vec<(Vec<&str>, &str)> = vec![
        (
            vec![
                "care",
                "assess",
                &uid,
                "--mode",
                "part=trunk,occupancy=rare,failure=likely,impact=low,consequences=minor",
            ],
            "--mode 1: failure: 'likely' is not one of",
        ),
        (
            vec![
                "care",
                "assess",
                &uid,
                "--mode",
                "part=trunk,occupancy=rare,failure=possible,impact=low",
            ],
            "--mode 1: consequences is required",
        ),
        (
            vec!["care", "assess", &removed, "--mode", moderate],
            "tree: the tree is removed, and only standing trees are assessed",
        ),
        (
            vec![
                "work",
                "add",
                &removed,
                "--task",
                "prune",
                "--priority",
                "3",
            ],
            "task: 'prune' does not fit a removed tree; allowed: stump, plant, other",
        ),
        (
            vec!["care", "assess", "no-such-tree", "--mode", moderate],
            "tree: no tree 'no-such-tree'",
        ),
        (
            vec![
                "care",
                "assess",
                &uid,
                "--mode",
                moderate,
                "--mitigation",
                "task=prune,residual=high",
            ],
            "mitigation 1 residual: 'high' is above the overall rating 'moderate'",
        ),
        (
            vec!["care", "assess", &uid, "--mode", moderate, "--accept-work"],
            "accept-work: the overall rating is moderate",
        ),
        (
            vec!["care", "assess", &uid, "--mode", moderate, "--level", "4"],
            "level: 4 must be 1",
        ),
        (
            vec![
                "care",
                "assess",
                &uid,
                "--mode",
                moderate,
                "--on",
                "2030-01-01",
                "--today",
                "2026-11-30",
            ],
            "on: 2030-01-01 is after today",
        ),
        (
            vec![
                "care",
                "assess",
                &uid,
                "--mode",
                moderate,
                "--on",
                "2026-13-01",
            ],
            "not an ISO 8601 date",
        ),
        (
            vec!["work", "add", &uid, "--task", "prune", "--priority", "5"],
            "priority: 5 must be a whole number from 1",
        ),
        (
            vec![
                "work",
                "add",
                &uid,
                "--task",
                "prune",
                "--priority",
                "2",
                "--cost",
                "-4",
            ],
            "cost: -4 must not be negative",
        ),
        (
            vec![
                "work",
                "add",
                &uid,
                "--task",
                "prune",
                "--priority",
                "2",
                "--assessment",
                "99999",
            ],
            "no assessment with id 99999",
        ),
        (
            vec!["work", "done", "99999", "--on", "2026-01-01"],
            "no work order with id 99999",
        ),
        (
            vec![
                "work",
                "schedule",
                &open_id,
                "--on",
                "2020-01-01",
                "--today",
                "2026-11-30",
            ],
            "is before today",
        ),
        (
            vec!["care", "cycle", "--until", "soon"],
            "not an ISO 8601 date",
        ),
    ];
    for (args, expected) in cases {
        let mut full = vec!["--db", db.as_str()];
        full.extend(args.iter());
        let output = run(d, &full);
        assert_eq!(
            output.status.code(),
            Some(2),
            "{args:?}: {}",
            stderr(&output)
        );
        assert!(
            stderr(&output).contains(expected),
            "{args:?}: {}",
            stderr(&output)
        );
    }
    // A done or cancelled order cannot be done again.
    let done_order = json(
        d,
        &[
            "--db", &db, "work", "list", "--status", "done", "--format", "json",
        ],
    );
    let done_id = done_order["orders"][0]["id"]
        .as_i64()
        .expect("a done order")
        .to_string();
    let output = run(
        d,
        &["--db", &db, "work", "done", &done_id, "--on", "2026-01-01"],
    );
    assert_eq!(output.status.code(), Some(2));
    let cancelled = json(
        d,
        &[
            "--db",
            &db,
            "work",
            "list",
            "--status",
            "cancelled",
            "--format",
            "json",
        ],
    );
    let cancelled_id = cancelled["orders"][0]["id"]
        .as_i64()
        .expect("a cancelled order")
        .to_string();
    let output = run(
        d,
        &[
            "--db",
            &db,
            "work",
            "schedule",
            &cancelled_id,
            "--on",
            "2030-01-01",
        ],
    );
    assert_eq!(output.status.code(), Some(2));
    assert!(
        stderr(&output).contains("cancelled orders are final"),
        "{}",
        stderr(&output)
    );
    assert_eq!(audit_rows(&db), audit, "nothing was written");
}

#[test]
fn a_work_order_is_added_edited_and_cancelled_with_json_for_scripts() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let db = demo(d);
    let (uid, _) = quiet_standing_tree(d, &db);
    let added = json(
        d,
        &[
            "--db",
            &db,
            "work",
            "add",
            &uid,
            "--task",
            "inspect",
            "--priority",
            "3",
            "--due",
            "2027-02-01",
            "--crew",
            "Forestry office",
            "--format",
            "json",
        ],
    );
    let id = added["work_order_id"].as_i64().expect("id").to_string();
    assert_eq!(added["order"]["status"], "open");
    assert_eq!(added["order"]["task"], "inspect");
    let edited = json(
        d,
        &[
            "--db",
            &db,
            "work",
            "edit",
            &id,
            "--priority",
            "2",
            "--cost",
            "80",
            "--format",
            "json",
        ],
    );
    assert_eq!(edited["order"]["priority"], 2);
    assert_eq!(edited["order"]["estimated_cost"], 80.0);
    assert_eq!(edited["order"]["crew"], "Forestry office");
    let unchanged = run(d, &["--db", &db, "work", "edit", &id]);
    assert_eq!(unchanged.status.code(), Some(2));
    assert!(stderr(&unchanged).contains("nothing to change"));
    let cancelled = json(
        d,
        &[
            "--db",
            &db,
            "work",
            "cancel",
            &id,
            "--reason",
            "duplicate of a resident report",
            "--format",
            "json",
        ],
    );
    assert_eq!(cancelled["order"]["status"], "cancelled");
    assert_eq!(
        cancelled["order"]["notes"],
        "cancelled: duplicate of a resident report"
    );
    assert_eq!(cancelled["tree_removed_on"], serde_json::Value::Null);
    let again = run(d, &["--db", &db, "work", "cancel", &id]);
    assert_eq!(again.status.code(), Some(2));
    let queue = json(
        d,
        &[
            "--db", &db, "work", "list", "--tree", &uid, "--all", "--format", "json",
        ],
    );
    assert_eq!(queue["count"], 1);
    assert_eq!(queue["by_status"]["cancelled"], 1);
    assert_eq!(
        queue["open_estimated_cost"], 0.0,
        "cancelled work is not open work"
    );
}
