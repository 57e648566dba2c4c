//! Store tests of removal studies: migration 0004, the study settings seeded, every study write audited
//! under the `study` actor and undoable, plans replaced all or nothing, and the run data loaded.

use chrono::{NaiveDate, TimeZone, Utc};
use streetwood::model::TreeRecord;
use streetwood::store::studies::{NewPlanting, NewStudy};
use streetwood::store::trees::TreeImportRow;
use streetwood::store::{Store, audit};
use streetwood::study::select::Selected;
use streetwood::study::settings::{StudySettings, SurvivalScenario};

fn now() -> chrono::DateTime<Utc> {
    Utc.with_ymd_and_hms(2026, 6, 1, 9, 0, 0)
        .single()
        .expect("valid time")
}

fn tree(uid: &str, dbh: f64) -> TreeImportRow {
    TreeImportRow {
        line: 1,
        record: TreeRecord {
            uid: Some(uid.to_string()),
            species: "Acer rubrum".to_string(),
            lon: Some(-84.1),
            lat: Some(42.7),
            street: Some("Elm Row".to_string()),
            house_number: None,
            site_kind: None,
            planted_on: None,
            status: None,
            measured_on: NaiveDate::from_ymd_opt(2025, 5, 1).expect("date"),
            stems_cm: vec![dbh],
            multi_stem: false,
            height_m: Some(10.0),
            crown_base_m: None,
            crown_width_m: Some(8.0),
            crown_width2_m: None,
            dieback_pct: Some(5.0),
            condition: None,
            notes: None,
            measured_by: None,
        },
        zone_id: None,
    }
}

fn study(name: &str) -> NewStudy {
    NewStudy {
        name: name.to_string(),
        description: None,
        horizon_years: 40,
        seed: 99,
        runs: 100,
        weather_year: None,
        start_year: 2026,
        functional_limitation: 1.0,
        external_limitation: 0.8,
    }
}

#[test]
fn study_writes_are_audited_undoable_and_all_or_nothing() {
    let mut store = Store::open_in_memory().expect("store");
    // Migration 0004 columns and the registered settings with their defaults.
    let conn = store.conn();
    for (table, column) in [
        ("studies", "start_year"),
        ("study_trees", "selected_by"),
        ("study_trees", "line_distance_m"),
    ] {
        let n: i64 = conn
            .query_row(
                "SELECT count(*) FROM pragma_table_info(?1) WHERE name = ?2",
                [table, column],
                |r| r.get(0),
            )
            .expect("pragma");
        assert_eq!(n, 1, "{table}.{column}");
    }
    assert_eq!(
        store.study_settings().expect("settings"),
        StudySettings::default()
    );
    assert_eq!(
        StudySettings::default().survival_scenario,
        SurvivalScenario::Central
    );

    store
        .import_trees(&[tree("a", 30.0), tree("b", 40.0)], "test", now(), false)
        .expect("import");
    let id = store
        .create_study(&study("works"), now(), "study")
        .expect("create");
    assert!(
        store.create_study(&study("works"), now(), "study").is_err(),
        "a name is used once"
    );
    let record = store.require_study("works").expect("stored");
    assert_eq!((record.seed, record.start_year), (99, 2026));
    let ids = store.tree_ids().expect("ids");
    let chosen: Vec<Selected> = ids
        .iter()
        .map(|&tree_id| Selected {
            tree_id,
            distance_m: Some(3.5),
        })
        .collect();
    assert_eq!(
        store
            .add_study_trees(id, &chosen, "street=Elm Row", "study")
            .expect("add"),
        (2, 0)
    );
    assert_eq!(
        store
            .add_study_trees(id, &chosen, "street=Elm Row", "study")
            .expect("again"),
        (0, 2)
    );
    let species_id = store
        .species()
        .expect("species")
        .iter()
        .find(|s| s.scientific_name == "Quercus rubra")
        .map(|s| s.id)
        .expect("oak");
    let row = |count| NewPlanting {
        species_id,
        count,
        dbh_cm: 5.0,
        year: 2027,
    };
    assert_eq!(
        store
            .set_plan_rows(id, "oaks", &[row(4)], false, "study")
            .expect("plan"),
        1
    );
    assert_eq!(
        store
            .set_plan_rows(id, "oaks", &[row(6)], false, "study")
            .expect("plan"),
        2
    );
    // A replacement that fails (DBH above the schema's 50 cm) changes nothing.
    let bad = NewPlanting {
        dbh_cm: 80.0,
        ..row(1)
    };
    assert!(
        store
            .set_plan_rows(id, "oaks", &[bad], true, "study")
            .is_err()
    );
    assert_eq!(store.study_plantings(id).expect("rows").len(), 2);
    assert_eq!(
        store
            .set_plan_rows(id, "oaks", &[row(8)], true, "study")
            .expect("replace"),
        1
    );

    for table in ["studies", "study_trees", "study_plantings"] {
        assert!(
            audit::count(store.conn(), table, "insert").expect("count") > 0,
            "{table}"
        );
    }
    assert_eq!(
        audit::count(store.conn(), "study_plantings", "delete").expect("count"),
        2
    );
    let latest = audit::latest(store.conn()).expect("latest").expect("a row");
    assert_eq!(latest.actor, "study");

    // The replacement is one change: undo brings the two earlier rows back.
    store.undo_last("test").expect("undo").expect("a change");
    let rows = store.study_plantings(id).expect("rows");
    assert_eq!(rows.iter().map(|r| r.count).collect::<Vec<_>>(), vec![4, 6]);

    let list = store.studies().expect("list");
    assert_eq!((list[0].trees, list[0].plans), (2, 1));
    // No weather held: a run says what to import.
    let err = store.study_run_data("works").err().expect("no weather");
    assert!(err.to_string().contains("import"), "{err}");
}

// The study's imputer is built from a streamed scan (a city's inventory is never held in memory); it
// must equal the one built from the whole inventory in memory, the straightforward reference.
#[test]
fn the_streamed_study_imputer_equals_the_in_memory_one() {
    let mut store = Store::open_in_memory().expect("store");
    streetwood::cli::demo::load_demo(&mut store).expect("demo");
    store
        .create_study(&study("imputer"), now(), "study")
        .expect("study");
    let data = store.study_run_data("imputer").expect("run data");
    let (species, inventory) = store.inventory_for_year(9999).expect("inventory");
    let params: Vec<_> = species
        .iter()
        .map(streetwood::science::inventory::species_params)
        .collect::<Result<_, _>>()
        .expect("params");
    let reference = streetwood::science::inventory::build_imputer(&inventory, &params, 9999);
    assert_eq!(data.imputer, reference);
    assert_ne!(reference, Default::default(), "the demo has measured trees");
}
