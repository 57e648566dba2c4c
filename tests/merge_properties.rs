//! Merge of field copies (issue 10): property tests over random edit scripts on two and three copies of
//! a small inventory — nothing is lost, a second merge changes nothing, A into B and B into A give the
//! same rows, conflicts are reported exactly where both copies changed a field differently, and a merge
//! that fails midway leaves the target as it was.

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};

use chrono::{NaiveDate, TimeZone, Utc};
use proptest::prelude::*;
use streetwood::care::work::{NewWorkOrder, Priority, WorkChange, WorkTask};
use streetwood::model::{TreeRecord, TreeStatus};
use streetwood::store::merge::{ConflictKey, MergeChoices, MergeReport};
use streetwood::store::trees::TreeImportRow;
use streetwood::store::{Store, StoreError};
use streetwood::sync::Side;

const SPECIES: &str = "Acer platanoides";
const STREETS: [&str; 3] = ["Elm Row", "Mill Lane", "Quarry Road"];
const NOTES: [&str; 3] = ["leans", "cavity", "fine"];

fn now() -> chrono::DateTime<Utc> {
    Utc.with_ymd_and_hms(2026, 6, 1, 9, 0, 0)
        .single()
        .expect("valid time")
}

fn day(d: u32) -> NaiveDate {
    NaiveDate::from_ymd_opt(2026, 5, d).expect("date")
}

fn record(uid: &str, on: NaiveDate, dbh: f64) -> TreeRecord {
    TreeRecord {
        uid: Some(uid.to_string()),
        species: SPECIES.to_string(),
        lon: None,
        lat: None,
        street: None,
        house_number: None,
        site_kind: None,
        planted_on: None,
        status: None,
        measured_on: on,
        stems_cm: vec![dbh],
        multi_stem: false,
        height_m: None,
        crown_base_m: None,
        crown_width_m: None,
        crown_width2_m: None,
        dieback_pct: None,
        condition: None,
        notes: None,
        measured_by: None,
    }
}

fn import(store: &mut Store, record: TreeRecord, actor: &str) {
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

/// The base inventory: three trees on Elm Row, each with a measurement and an open pruning order.
fn base(path: &Path) {
    let mut store = Store::open_or_create(path).expect("create");
    for i in 0..3 {
        let mut r = record(&format!("base-{i}"), day(1), 20.0 + f64::from(i));
        r.street = Some("Elm Row".to_string());
        import(&mut store, r, "office");
        let tree_id = store
            .tree_id_by_uid(&format!("base-{i}"))
            .expect("lookup")
            .expect("tree");
        store
            .add_work_order(&prune(tree_id), "office", now())
            .expect("order");
    }
}

fn prune(tree_id: i64) -> NewWorkOrder {
    NewWorkOrder {
        tree_id,
        task: WorkTask::Prune,
        priority: Priority::ROUTINE,
        due_on: None,
        crew: None,
        estimated_cost: None,
        notes: None,
        assessment_id: None,
        cycle: None,
    }
}

/// One crew's edit.
#[derive(Debug, Clone)]
enum Edit {
    AddTree { street: usize },
    Remeasure { tree: usize, dbh: u8 },
    SetStreet { tree: usize, street: usize },
    SetNotes { tree: usize, notes: usize },
    SetStatus { tree: usize, planned: bool },
    AddOrder { tree: usize },
    CloseOrder { order: usize, on: u32 },
}

fn edit() -> impl Strategy<Value = Edit> {
    prop_oneof![
        (0..3usize).prop_map(|street| Edit::AddTree { street }),
        (0..3usize, 5..60u8).prop_map(|(tree, dbh)| Edit::Remeasure { tree, dbh }),
        (0..3usize, 0..3usize).prop_map(|(tree, street)| Edit::SetStreet { tree, street }),
        (0..3usize, 0..3usize).prop_map(|(tree, notes)| Edit::SetNotes { tree, notes }),
        (0..3usize, any::<bool>()).prop_map(|(tree, planned)| Edit::SetStatus { tree, planned }),
        (0..3usize).prop_map(|tree| Edit::AddOrder { tree }),
        (0..3usize, 10..12u32).prop_map(|(order, on)| Edit::CloseOrder { order, on }),
    ]
}

/// What a crew's script changed, for the expected conflicts: (table, uid, field) → final value.
type Touched = BTreeMap<(String, String, String), String>;

fn apply(store: &mut Store, crew: &str, edits: &[Edit]) -> Touched {
    let mut touched = Touched::new();
    let mut added = 0;
    // The copy's current value of each field: an edit to the value a field already has changes
    // nothing (no audit row), so it is no edit for the merge either.
    let mut current: BTreeMap<(String, String), String> = BTreeMap::new();
    let mut changed = |touched: &mut Touched, uid: &str, field: &str, value: &str| {
        let base = match field {
            "street" => "Elm Row",
            "status" => "standing",
            _ => "",
        };
        let key = (uid.to_string(), field.to_string());
        let now = current.get(&key).map_or(base, String::as_str);
        if now != value {
            current.insert(key, value.to_string());
            touched.insert(
                ("trees".into(), uid.to_string(), field.to_string()),
                value.to_string(),
            );
        }
    };
    for edit in edits {
        match edit {
            Edit::AddTree { street } => {
                let uid = format!("{crew}-new-{added}");
                added += 1;
                let mut r = record(&uid, day(5), 12.0);
                r.street = Some(STREETS[*street].to_string());
                import(store, r, crew);
            }
            Edit::Remeasure { tree, dbh } => {
                let mut r = record(&format!("base-{tree}"), day(6), f64::from(*dbh));
                r.measured_by = Some(crew.to_string());
                import(store, r, crew);
            }
            Edit::SetStreet { tree, street } => {
                let uid = format!("base-{tree}");
                let mut r = record(&uid, day(1), 20.0 + *tree as f64);
                r.street = Some(STREETS[*street].to_string());
                import(store, r, crew);
                changed(&mut touched, &uid, "street", STREETS[*street]);
            }
            Edit::SetNotes { tree, notes } => {
                let uid = format!("base-{tree}");
                let mut r = record(&uid, day(1), 20.0 + *tree as f64);
                r.notes = Some(NOTES[*notes].to_string());
                import(store, r, crew);
                changed(&mut touched, &uid, "notes", NOTES[*notes]);
            }
            Edit::SetStatus { tree, planned } => {
                let uid = format!("base-{tree}");
                let mut r = record(&uid, day(1), 20.0 + *tree as f64);
                let status = if *planned {
                    TreeStatus::Planned
                } else {
                    TreeStatus::Standing
                };
                r.status = Some(status);
                import(store, r, crew);
                changed(&mut touched, &uid, "status", status.as_str());
            }
            Edit::AddOrder { tree } => {
                let tree_id = store
                    .tree_id_by_uid(&format!("base-{tree}"))
                    .expect("lookup")
                    .expect("tree");
                // A planned tree takes no pruning: the refusal is part of the script.
                let _ = store.add_work_order(&prune(tree_id), crew, now());
            }
            Edit::CloseOrder { order, on } => {
                let id = *order as i64 + 1;
                let done = WorkChange::Done {
                    on: Some(day(*on)),
                    actual_cost: None,
                    notes: None,
                };
                if store
                    .change_work_order(id, &done, day(20), crew, now())
                    .is_ok()
                {
                    let uid = uid_of_order(store, id);
                    touched.insert(
                        ("work_orders".into(), uid.clone(), "done_on".into()),
                        day(*on).to_string(),
                    );
                }
            }
        }
    }
    touched
}

fn uid_of_order(store: &Store, id: i64) -> String {
    store
        .conn()
        .query_row(
            "SELECT coalesce(uid, (SELECT file_id FROM sync_identity) || ':' || id) FROM work_orders WHERE id = ?1",
            [id],
            |r| r.get(0),
        )
        .expect("order uid")
}

/// The rows of a file by identity and values (no local ids, no `updated_at`).
fn snapshot(store: &Store) -> BTreeMap<String, BTreeSet<String>> {
    let queries = [
        (
            "trees",
            "SELECT t.uid || '|' || s.scientific_name || '|' || coalesce(t.street, '') || '|' || t.status || '|' || coalesce(t.notes, '') || '|' || t.created_at
             FROM trees t JOIN species s ON s.id = t.species_id",
        ),
        (
            "measurements",
            "SELECT coalesce(m.uid, f.file_id || ':' || m.id) || '|' || t.uid || '|' || m.measured_on || '|' || m.dbh_cm || '|' || coalesce(m.measured_by, '')
             FROM measurements m JOIN trees t ON t.id = m.tree_id, sync_identity f",
        ),
        (
            "work_orders",
            "SELECT coalesce(w.uid, f.file_id || ':' || w.id) || '|' || t.uid || '|' || w.task || '|' || w.status || '|' || coalesce(w.done_on, '') || '|' || coalesce(w.notes, '')
             FROM work_orders w JOIN trees t ON t.id = w.tree_id, sync_identity f",
        ),
    ];
    let mut out = BTreeMap::new();
    for (table, sql) in queries {
        let mut stmt = store.conn().prepare(sql).expect("prepare");
        let rows: BTreeSet<String> = stmt
            .query_map([], |r| r.get(0))
            .expect("query")
            .collect::<Result<_, _>>()
            .expect("rows");
        out.insert(table.to_string(), rows);
    }
    out
}

fn uids(snapshot: &BTreeMap<String, BTreeSet<String>>) -> BTreeSet<(String, String)> {
    snapshot
        .iter()
        .flat_map(|(table, rows)| {
            rows.iter().map(move |r| {
                (
                    table.clone(),
                    r.split('|').next().unwrap_or_default().to_string(),
                )
            })
        })
        .collect()
}

fn conflicts(report: &MergeReport) -> BTreeSet<(String, String, String)> {
    report
        .conflicts
        .iter()
        .map(|c| (c.table.clone(), c.uid.clone(), c.field.field.clone()))
        .collect()
}

struct World {
    _dir: tempfile::TempDir,
    office: PathBuf,
    copies: Vec<PathBuf>,
    touched: Vec<Touched>,
}

/// The office file and one copy per script, each edited by its crew.
fn world(scripts: &[Vec<Edit>]) -> World {
    let dir = tempfile::tempdir().expect("temp dir");
    let office = dir.path().join("office.db");
    base(&office);
    let mut copies = Vec::new();
    let mut touched = Vec::new();
    {
        let mut store = Store::open_existing(&office).expect("office");
        for i in 0..scripts.len() {
            let path = dir.path().join(format!("crew{i}.db"));
            store
                .make_copy(&path, &format!("crew {i}"), now())
                .expect("copy");
            copies.push(path);
        }
    }
    for (i, script) in scripts.iter().enumerate() {
        let mut store = Store::open_existing(&copies[i]).expect("copy opens");
        touched.push(apply(&mut store, &format!("crew{i}"), script));
    }
    World {
        _dir: dir,
        office,
        copies,
        touched,
    }
}

fn duplicate(path: &Path, name: &str) -> PathBuf {
    let to = path.with_file_name(name);
    std::fs::copy(path, &to).expect("copy the file");
    to
}

fn expected_conflicts(a: &Touched, b: &Touched) -> BTreeSet<(String, String, String)> {
    a.iter()
        .filter(|(k, v)| b.get(*k).is_some_and(|w| w != *v))
        .map(|(k, _)| k.clone())
        .collect()
}

/// Three crews into the office, in either order: the same rows, every crew's rows kept, and a merge
/// back into a crew's copy brings it the others' work.
fn three_copies_converge(a: Vec<Edit>, b: Vec<Edit>, c: Vec<Edit>) -> Result<(), TestCaseError> {
    let w = world(&[a, b, c]);
    let office2 = duplicate(&w.office, "office2.db");
    let mut office = Store::open_existing(&w.office).expect("office");
    for copy in &w.copies {
        office.merge_from(copy, false, now()).expect("merge");
    }
    let mut other_order = Store::open_existing(&office2).expect("office2");
    for copy in w.copies.iter().rev() {
        other_order.merge_from(copy, false, now()).expect("merge");
    }
    let merged = snapshot(&office);
    prop_assert_eq!(snapshot(&other_order), merged.clone());
    for copy in &w.copies {
        let theirs = snapshot(&Store::open_existing(copy).expect("copy"));
        prop_assert!(uids(&theirs).is_subset(&uids(&merged)));
    }
    drop(office);
    let mut back = Store::open_existing(&w.copies[0]).expect("crew 0");
    back.merge_from(&w.office, false, now())
        .expect("office into crew 0");
    prop_assert_eq!(snapshot(&back), merged);
    Ok(())
}

/// Issue 10: one crew edits a street A→B→A, another A→B. Merged in the order (A→B→A, A→B) the first
/// merge used to write nothing (equal values), so the A→B crew won; in the other order A won.
#[test]
fn regression_a_field_edited_there_and_back_converges_in_any_order() {
    three_copies_converge(
        vec![],
        vec![Edit::SetStreet { tree: 0, street: 1 }],
        vec![
            Edit::SetStreet { tree: 0, street: 1 },
            Edit::SetStreet { tree: 0, street: 0 },
        ],
    )
    .expect("the office converges whatever the order");
}

/// Crew 0 sets tree base-0's notes to "leans", then crew 1 to "cavity" (the later change); crew 0's
/// copy is the target, so the rule keeps the copy's "cavity" and a hand choice of this file keeps "leans".
fn notes_conflict() -> World {
    world(&[
        vec![Edit::SetNotes { tree: 0, notes: 0 }],
        vec![Edit::SetNotes { tree: 0, notes: 1 }],
    ])
}

fn notes_of(store: &Store, uid: &str) -> String {
    store
        .conn()
        .query_row("SELECT notes FROM trees WHERE uid = ?1", [uid], |r| {
            r.get(0)
        })
        .expect("notes")
}

fn notes_key() -> ConflictKey {
    ConflictKey {
        table: "trees".to_string(),
        uid: "base-0".to_string(),
        field: "notes".to_string(),
    }
}

#[test]
fn a_conflict_chosen_by_hand_keeps_the_chosen_side_and_the_report_says_so() {
    let w = notes_conflict();
    let mut target = Store::open_existing(&w.copies[0]).expect("crew 0");
    let plan = target.merge_plan(&w.copies[1], now()).expect("plan");
    assert_eq!(plan.conflicts.len(), 1, "{}", plan.to_text());
    let planned = &plan.conflicts[0].field;
    assert_eq!(
        (planned.winner, planned.default_winner, planned.by_hand),
        (Side::Other, Side::Other, false)
    );
    assert_eq!(
        notes_of(&target, "base-0"),
        "leans",
        "the plan writes nothing"
    );

    let choices = MergeChoices::for_plan(&plan, [(notes_key(), Side::Target)].into());
    let report = target
        .merge_from_with(&w.copies[1], now(), &choices)
        .expect("merge");
    assert_eq!(notes_of(&target, "base-0"), "leans");
    let c = &report.conflicts[0].field;
    assert_eq!(
        (c.winner, c.default_winner, c.by_hand),
        (Side::Target, Side::Other, true)
    );
    let text = report.to_text();
    assert!(text.contains("conflicts: 1 (1 decided by hand)"), "{text}");
    assert!(
        text.contains(
            "kept this file (chosen by hand; the rule's choice was the copy, the later change)"
        ),
        "{text}"
    );
    assert!(
        text.contains("\"cavity\""),
        "the losing value is listed: {text}"
    );
    // The choice holds: a second merge has nothing to decide.
    let again = target
        .merge_from(&w.copies[1], false, now())
        .expect("again");
    assert_eq!(again.rows_changed(), 0, "{}", again.to_text());
    assert!(again.conflicts.is_empty());
    assert_eq!(notes_of(&target, "base-0"), "leans");
}

#[test]
fn taking_the_copy_s_value_by_hand_keeps_this_file_s_value_in_the_audit_log() {
    let w = notes_conflict();
    // Crew 1's copy is the target now: its own "cavity" is the later change, the rule keeps it.
    let mut target = Store::open_existing(&w.copies[1]).expect("crew 1");
    let plan = target.merge_plan(&w.copies[0], now()).expect("plan");
    assert_eq!(plan.conflicts[0].field.default_winner, Side::Target);
    let choices = MergeChoices::for_plan(&plan, [(notes_key(), Side::Other)].into());
    let report = target
        .merge_from_with(&w.copies[0], now(), &choices)
        .expect("merge");
    assert_eq!(notes_of(&target, "base-0"), "leans");
    assert!(report.conflicts[0].field.by_hand);
    assert_eq!(
        report
            .tables
            .iter()
            .find(|t| t.table == "trees")
            .map(|t| t.updated),
        Some(1)
    );
    let kept: i64 = target
        .conn()
        .query_row(
            "SELECT count(*) FROM audit_log WHERE actor = 'merge' AND table_name = 'trees'
             AND json_extract(before_json, '$.notes') = 'cavity' AND json_extract(after_json, '$.notes') = 'leans'",
            [],
            |r| r.get(0),
        )
        .expect("audit");
    assert_eq!(kept, 1, "the value this file lost is in its audit log");
}

#[test]
fn choices_that_no_longer_fit_the_files_are_refused_and_nothing_is_written() {
    let w = notes_conflict();
    let mut target = Store::open_existing(&w.copies[0]).expect("crew 0");
    let audit = |s: &Store| -> i64 {
        s.conn()
            .query_row("SELECT count(*) FROM audit_log", [], |r| r.get(0))
            .expect("count")
    };
    let before = (snapshot(&target), audit(&target));
    let plan = target.merge_plan(&w.copies[1], now()).expect("plan");

    // A pick for a field that is not in conflict.
    let mut stray = notes_key();
    stray.field = "street".to_string();
    let wrong = MergeChoices::for_plan(&plan, [(stray, Side::Other)].into());
    let error = target
        .merge_from_with(&w.copies[1], now(), &wrong)
        .expect_err("refused");
    assert!(
        error
            .to_string()
            .contains("changed since the conflicts were listed"),
        "{error}"
    );

    // The copy changes after the plan: its conflict is no longer the one shown.
    {
        let mut copy = Store::open_existing(&w.copies[1]).expect("crew 1");
        apply(&mut copy, "crew1", &[Edit::SetNotes { tree: 0, notes: 2 }]);
    }
    let stale = MergeChoices::for_plan(&plan, [(notes_key(), Side::Target)].into());
    let error = target
        .merge_from_with(&w.copies[1], now(), &stale)
        .expect_err("refused");
    assert!(error.to_string().contains("nothing was merged"), "{error}");
    assert_eq!((snapshot(&target), audit(&target)), before);
    let peers: i64 = target
        .conn()
        .query_row(
            "SELECT count(*) FROM sync_peers WHERE relation = 'merged'",
            [],
            |r| r.get(0),
        )
        .expect("peers");
    assert_eq!(peers, 0);
}

/// Cases per property: `PROPTEST_CASES` when set (issue 10 was checked with 2,000 per property),
/// otherwise 32, since every case builds three or four inventories on disk.
fn cases() -> u32 {
    std::env::var("PROPTEST_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(32)
}

proptest! {
    // Random seeds: every run tries new edit scripts; a failure is saved in
    // merge_properties.proptest-regressions and replayed first from then on.
    #![proptest_config(ProptestConfig {
        cases: cases(),
        ..ProptestConfig::default()
    })]

    /// Two copies: nothing lost, conflicts exactly where both changed a field differently, the
    /// second merge changes nothing, and A into B equals B into A.
    #[test]
    fn two_copies_merge_losslessly_idempotently_and_commutatively(
        a in prop::collection::vec(edit(), 0..7),
        b in prop::collection::vec(edit(), 0..7),
    ) {
        let w = world(&[a, b]);
        let (pa, pb) = (&w.copies[0], &w.copies[1]);
        let (pa2, pb2) = (duplicate(pa, "a2.db"), duplicate(pb, "b2.db"));
        let before_a = snapshot(&Store::open_existing(pa).expect("a"));
        let before_b = snapshot(&Store::open_existing(pb).expect("b"));

        let mut into_a = Store::open_existing(pa).expect("a");
        let report = into_a.merge_from(pb, false, now()).expect("merge b into a");
        prop_assert_eq!(conflicts(&report), expected_conflicts(&w.touched[0], &w.touched[1]));
        prop_assert!(report.rejected.is_empty(), "{:?}", report.rejected);
        let merged_a = snapshot(&into_a);
        let all = uids(&merged_a);
        prop_assert!(uids(&before_a).is_subset(&all), "a row of A was lost");
        prop_assert!(uids(&before_b).is_subset(&all), "a row of B was lost");

        let again = into_a.merge_from(pb, false, now()).expect("merge again");
        prop_assert_eq!(again.rows_changed(), 0, "{}", again.to_text());
        prop_assert!(again.conflicts.is_empty());
        prop_assert_eq!(snapshot(&into_a), merged_a.clone());

        let mut into_b = Store::open_existing(&pb2).expect("b2");
        let reverse = into_b.merge_from(&pa2, false, now()).expect("merge a into b");
        prop_assert_eq!(conflicts(&reverse), conflicts(&report));
        prop_assert_eq!(snapshot(&into_b), merged_a);
    }

    /// Three crews into the office, in either order: the same rows, every crew's rows kept, and a
    /// merge back into a crew's copy brings it the others' work.
    #[test]
    fn three_copies_converge_in_any_order(
        a in prop::collection::vec(edit(), 0..5),
        b in prop::collection::vec(edit(), 0..5),
        c in prop::collection::vec(edit(), 0..5),
    ) {
        three_copies_converge(a, b, c)?;
    }

    /// A merge that fails midway (the audit log refuses a write after `after` of its 3 rows) changes nothing.
    #[test]
    fn a_merge_failing_midway_leaves_the_target_unchanged(
        a in prop::collection::vec(edit(), 1..6),
        after in 0..3u32,
    ) {
        let w = world(&[a, vec![Edit::AddTree { street: 2 }, Edit::Remeasure { tree: 0, dbh: 33 }]]);
        let mut target = Store::open_existing(&w.copies[0]).expect("a");
        let before = snapshot(&target);
        let audit_rows: i64 = target.conn().query_row("SELECT count(*) FROM audit_log", [], |r| r.get(0)).expect("count");
        target.conn().execute_batch(&format!(
            "CREATE TEMP TABLE writes (n INTEGER); INSERT INTO writes VALUES (0);
             CREATE TEMP TRIGGER boom BEFORE INSERT ON main.audit_log BEGIN
                 UPDATE writes SET n = n + 1;
                 SELECT RAISE(ABORT, 'injected failure') WHERE (SELECT n FROM writes) > {after};
             END;"
        )).expect("inject");
        let result = target.merge_from(&w.copies[1], false, now());
        prop_assert!(matches!(result, Err(StoreError::Sql(_))), "{:?}", result.map(|r| r.to_text()));
        prop_assert_eq!(snapshot(&target), before);
        let after_rows: i64 = target.conn().query_row("SELECT count(*) FROM audit_log", [], |r| r.get(0)).expect("count");
        prop_assert_eq!(after_rows, audit_rows);
        let peers: i64 = target.conn().query_row("SELECT count(*) FROM sync_peers WHERE relation = 'merged'", [], |r| r.get(0)).expect("peers");
        prop_assert_eq!(peers, 0);
    }
}
