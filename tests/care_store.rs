//! Care in the store: assessments keep their history, a work order's life cycle (removal done → the tree
//! is removed, kept, and every change is in the audit log), cycle work generated once, and failed
//! changes that write nothing.

use chrono::{NaiveDate, TimeZone, Utc};
use streetwood::care::assessment::{
    self, AssessmentInput, AssessmentLevel, FailureMode, MitigationOption,
};
use streetwood::care::risk::{
    Consequences, LikelihoodOfFailure, LikelihoodOfImpact, Occupancy, RiskRating, TreePart,
};
use streetwood::care::work::{NewWorkOrder, Priority, WorkChange, WorkStatus, WorkTask};
use streetwood::model::{TreeRecord, TreeStatus};
use streetwood::store::trees::TreeImportRow;
use streetwood::store::{Store, audit};

fn now() -> chrono::DateTime<Utc> {
    Utc.with_ymd_and_hms(2026, 6, 1, 9, 0, 0)
        .single()
        .expect("valid time")
}

fn date(text: &str) -> NaiveDate {
    text.parse().expect("date")
}

fn tree(uid: &str, dbh: f64, planted_on: Option<&str>) -> TreeImportRow {
    TreeImportRow {
        line: 2,
        record: TreeRecord {
            uid: Some(uid.to_string()),
            species: "Tilia cordata".to_string(),
            lon: Some(-84.1),
            lat: Some(42.7),
            street: Some("Elm Row".to_string()),
            house_number: Some("4".to_string()),
            site_kind: None,
            planted_on: planted_on.map(date),
            status: None,
            measured_on: date("2020-05-01"),
            stems_cm: vec![dbh],
            multi_stem: false,
            height_m: Some(10.0),
            crown_base_m: None,
            crown_width_m: None,
            crown_width2_m: None,
            dieback_pct: None,
            condition: None,
            notes: None,
            measured_by: None,
        },
        zone_id: None,
    }
}

/// A store with three trees: a large one (id 1), a young staked one (id 2) and another large one (id 3).
fn store() -> Store {
    let mut store = Store::open_in_memory().expect("store");
    let rows = [
        tree("tree-large", 48.0, Some("1998-04-01")),
        tree("tree-young", 6.0, Some("2025-04-10")),
        tree("tree-other", 35.0, None),
    ];
    store
        .import_trees(&rows, "test", now(), false)
        .expect("import");
    store
}

fn leaning_over_bus_stop(on: &str) -> AssessmentInput {
    AssessmentInput {
        assessed_on: date(on),
        assessor: Some("K. Lee".to_string()),
        level: AssessmentLevel::Basic,
        time_frame_years: Some(1.0),
        modes: vec![FailureMode {
            part: TreePart::WholeTree,
            part_size_cm: Some(48.0),
            target: Some("bus stop".to_string()),
            occupancy: Occupancy::Constant,
            likelihood_of_failure: LikelihoodOfFailure::Imminent,
            likelihood_of_impact: LikelihoodOfImpact::High,
            consequences: Consequences::Severe,
        }],
        mitigations: vec![MitigationOption {
            task: WorkTask::Remove,
            description: Some("remove the tree".to_string()),
            residual_rating: RiskRating::Low,
        }],
        notes: None,
    }
}

fn count(store: &Store, sql: &str) -> i64 {
    store
        .conn()
        .query_row(sql, [], |r| r.get(0))
        .expect("count")
}

#[test]
fn a_removal_done_removes_the_tree_keeps_its_history_and_is_audited() {
    let mut store = store();
    let intervals = store.reinspection_intervals().expect("intervals");
    let assessed = assessment::evaluate(
        leaning_over_bus_stop("2026-05-14"),
        &intervals,
        date("2026-06-01"),
    )
    .expect("valid");
    assert_eq!(assessed.overall, RiskRating::Extreme);
    let proposal = assessment::propose_work(&assessed).expect("proposal");
    assert_eq!(proposal.priority, Priority::URGENT);
    let order = assessment::order_from_proposal(1, &assessed, &proposal, &Default::default());
    let recorded = store
        .record_assessment(1, &assessed, Some(&order), "arborist", now())
        .expect("recorded");
    let order_id = recorded.work_order_id.expect("order created");
    // Other pending work of the tree: pruning (ends with the tree) and stump grinding (does not).
    let add = |store: &mut Store, task: WorkTask| {
        store
            .add_work_order(
                &NewWorkOrder {
                    tree_id: 1,
                    task,
                    priority: Priority::ROUTINE,
                    due_on: Some(date("2026-09-01")),
                    crew: None,
                    estimated_cost: Some(100.0),
                    notes: None,
                    assessment_id: None,
                    cycle: None,
                },
                "office",
                now(),
            )
            .expect("added")
    };
    let prune = add(&mut store, WorkTask::Prune);
    let stump = add(&mut store, WorkTask::Stump);

    let today = date("2026-06-01");
    let scheduled = store
        .change_work_order(
            order_id,
            &WorkChange::Schedule {
                on: date("2026-06-03"),
                crew: Some("Kestrel crew".to_string()),
                estimated_cost: Some(1800.0),
            },
            today,
            "office",
            now(),
        )
        .expect("scheduled");
    assert_eq!(scheduled.order.status, WorkStatus::Scheduled);
    assert_eq!(scheduled.tree_removed_on, None);
    let done = store
        .change_work_order(
            order_id,
            &WorkChange::Done {
                on: Some(date("2026-06-03")),
                actual_cost: Some(1920.0),
                notes: None,
            },
            date("2026-06-04"),
            "crew",
            now(),
        )
        .expect("done");
    assert_eq!(done.tree_removed_on, Some(date("2026-06-03")));
    assert_eq!(done.cancelled_with_tree, vec![prune]);

    let brief = store.tree_brief(1).expect("read").expect("tree kept");
    assert_eq!(brief.status, TreeStatus::Removed);
    assert_eq!(brief.removed_on, Some(date("2026-06-03")));
    assert_eq!(store.tree_count().expect("count"), 3, "never deleted");
    let history = store.assessments_of_tree(1).expect("history");
    assert_eq!(history.len(), 1);
    assert_eq!(history[0].work_order_ids, vec![order_id]);
    assert_eq!(history[0].mitigations.len(), 1);
    assert_eq!(
        store.work_order(stump).expect("read").map(|o| o.status),
        Some(WorkStatus::Open),
        "stump grinding stays"
    );
    // The removed tree leaves the watchlist.
    assert!(store.watch_items().expect("watch").is_empty());

    // Audit: the order's insert and both updates, the tree's update with before and after, the modes and
    // mitigation options of the assessment; each attributed to who made the change.
    let order_audit = audit::entries_for_row(store.conn(), "work_orders", order_id).expect("audit");
    let actions: Vec<(&str, &str)> = order_audit
        .iter()
        .map(|e| (e.action.as_str(), e.actor.as_str()))
        .collect();
    assert_eq!(
        actions,
        [
            ("insert", "arborist"),
            ("update", "office"),
            ("update", "crew")
        ]
    );
    let tree_audit = audit::entries_for_row(store.conn(), "trees", 1).expect("audit");
    let last = tree_audit.last().expect("tree update");
    assert_eq!(last.action, "update");
    assert_eq!(last.actor, "crew");
    let before: serde_json::Value =
        serde_json::from_str(last.before_json.as_deref().expect("before")).expect("json");
    let after: serde_json::Value =
        serde_json::from_str(last.after_json.as_deref().expect("after")).expect("json");
    assert_eq!(before["status"], "standing");
    assert_eq!(after["status"], "removed");
    assert_eq!(after["removed_on"], "2026-06-03");
    assert_eq!(
        audit::count(store.conn(), "mitigation_options", "insert").expect("n"),
        1
    );
    assert_eq!(
        audit::count(store.conn(), "failure_modes", "insert").expect("n"),
        1
    );
    assert_eq!(
        audit::count(store.conn(), "assessments", "insert").expect("n"),
        1
    );

    // Done is final, and a failed change writes nothing.
    let audit_rows = count(&store, "SELECT count(*) FROM audit_log");
    let again = store.change_work_order(
        order_id,
        &WorkChange::Cancel { reason: None },
        today,
        "office",
        now(),
    );
    let message = again.expect_err("final").to_string();
    assert!(message.contains("work order"), "{message}");
    assert!(message.contains("final"), "{message}");
    assert_eq!(count(&store, "SELECT count(*) FROM audit_log"), audit_rows);
    // Pruning a removed tree is refused.
    let refused = store.add_work_order(
        &NewWorkOrder {
            tree_id: 1,
            task: WorkTask::Prune,
            priority: Priority::ROUTINE,
            due_on: None,
            crew: None,
            estimated_cost: None,
            notes: None,
            assessment_id: None,
            cycle: None,
        },
        "office",
        now(),
    );
    assert!(
        refused
            .expect_err("removed tree")
            .to_string()
            .contains("task")
    );
    assert_eq!(count(&store, "SELECT count(*) FROM audit_log"), audit_rows);
}

#[test]
fn reassessing_adds_a_row_and_the_watchlist_shows_the_latest() {
    let mut store = store();
    let intervals = store.reinspection_intervals().expect("intervals");
    let today = date("2026-06-01");
    let first = assessment::evaluate(leaning_over_bus_stop("2025-05-14"), &intervals, today)
        .expect("valid");
    store
        .record_assessment(3, &first, None, "arborist", now())
        .expect("first");
    let mut calmer = leaning_over_bus_stop("2026-05-20");
    calmer.modes[0].likelihood_of_failure = LikelihoodOfFailure::Possible;
    calmer.mitigations.clear();
    let second = assessment::evaluate(calmer, &intervals, today).expect("valid");
    // possible × high = somewhat likely; × severe = moderate (M9) → next inspection 24 months on.
    assert_eq!(second.overall, RiskRating::Moderate);
    store
        .record_assessment(3, &second, None, "arborist", now())
        .expect("second");
    let history = store.assessments_of_tree(3).expect("history");
    assert_eq!(history.len(), 2, "re-assessing keeps the first");
    assert_eq!(history[0].assessed_on, date("2026-05-20"));
    assert_eq!(history[1].rating, RiskRating::Extreme);
    let watch = store.watch_items().expect("watch");
    assert_eq!(watch.len(), 1);
    assert_eq!(watch[0].rating, RiskRating::Moderate);
    assert_eq!(watch[0].next_due_on, Some(date("2028-05-20")));
    assert_eq!(count(&store, "SELECT count(*) FROM work_orders"), 0);
}

#[test]
fn an_assessment_whose_work_order_is_refused_writes_nothing() {
    let mut store = store();
    let intervals = store.reinspection_intervals().expect("intervals");
    let assessed = assessment::evaluate(
        leaning_over_bus_stop("2026-05-14"),
        &intervals,
        date("2026-06-01"),
    )
    .expect("valid");
    let proposal = assessment::propose_work(&assessed).expect("proposal");
    let mut order = assessment::order_from_proposal(1, &assessed, &proposal, &Default::default());
    order.estimated_cost = Some(-5.0);
    let audit_rows = count(&store, "SELECT count(*) FROM audit_log");
    let error = store
        .record_assessment(1, &assessed, Some(&order), "arborist", now())
        .expect_err("negative cost");
    assert!(error.to_string().contains("cost"), "{error}");
    assert_eq!(count(&store, "SELECT count(*) FROM assessments"), 0);
    assert_eq!(count(&store, "SELECT count(*) FROM failure_modes"), 0);
    assert_eq!(count(&store, "SELECT count(*) FROM mitigation_options"), 0);
    assert_eq!(count(&store, "SELECT count(*) FROM audit_log"), audit_rows);
}

#[test]
fn cycle_work_is_generated_once() {
    let mut store = store();
    // The young tree was staked when planted (M10: stakes out a year later).
    store
        .add_work_order(
            &NewWorkOrder {
                tree_id: 2,
                task: WorkTask::Stake,
                priority: Priority::new(3).expect("priority"),
                due_on: Some(date("2025-04-10")),
                crew: None,
                estimated_cost: None,
                notes: None,
                assessment_id: None,
                cycle: None,
            },
            "nursery",
            now(),
        )
        .expect("stake");
    store
        .change_work_order(
            1,
            &WorkChange::Done {
                on: Some(date("2025-04-10")),
                actual_cost: Some(45.0),
                notes: None,
            },
            date("2026-06-01"),
            "nursery",
            now(),
        )
        .expect("staked");
    let until = date("2026-12-31");
    let preview = store
        .generate_cycle_work(until, true, "cycle", now())
        .expect("dry run");
    assert_eq!(
        count(&store, "SELECT count(*) FROM work_orders"),
        1,
        "dry run writes nothing"
    );
    let first = store
        .generate_cycle_work(until, false, "cycle", now())
        .expect("generate");
    assert_eq!(first.len(), preview.len());
    let kinds: Vec<(i64, &str, NaiveDate)> = first
        .iter()
        .map(|g| (g.work.tree_id, g.work.kind.as_str(), g.work.due_on))
        .collect();
    assert_eq!(
        kinds,
        [
            // planted 1998-04-01, never pruned: 5-year cycle from planting
            (1, "routine_prune", date("2003-04-01")),
            // stakes out 12 months after planting
            (2, "stake_removal", date("2026-04-10")),
            // no planting date: from the first measurement (2020-05-01)
            (3, "routine_prune", date("2025-05-01")),
        ]
    );
    assert!(first.iter().all(|g| g.order_id.is_some()));
    let second = store
        .generate_cycle_work(until, false, "cycle", now())
        .expect("again");
    assert!(second.is_empty(), "idempotent: {second:?}");
    // Done pruning moves the cycle on: the next round is five years after the done date.
    let prune_id = first[0].order_id.expect("id");
    store
        .change_work_order(
            prune_id,
            &WorkChange::Done {
                on: Some(date("2026-05-30")),
                actual_cost: None,
                notes: None,
            },
            date("2026-06-01"),
            "crew",
            now(),
        )
        .expect("pruned");
    assert!(
        store
            .generate_cycle_work(until, false, "cycle", now())
            .expect("again")
            .is_empty()
    );
    let later = store
        .generate_cycle_work(date("2031-05-30"), true, "cycle", now())
        .expect("later");
    assert!(
        later
            .iter()
            .any(|g| g.work.tree_id == 1 && g.work.due_on == date("2031-05-30"))
    );
    // The unique index refuses a duplicate occurrence even from another path.
    let duplicate = store.conn().execute(
        "INSERT INTO work_orders (tree_id, task, priority, status, due_on, cycle, created_at, updated_at)
         VALUES (3, 'prune', 4, 'open', '2025-05-01', 'routine_prune', 'x', 'x')",
        [],
    );
    assert!(duplicate.is_err());
}
