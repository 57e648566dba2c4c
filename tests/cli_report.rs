//! The year summary in every format, GeoJSON with benefits, GeoJSON tree import and zones.

mod common;

use common::{TREES_HEADER, empty_inventory, run, stderr, stdout};

fn write(dir: &std::path::Path, name: &str, text: &str) -> String {
    let path = dir.join(name);
    std::fs::write(&path, text).expect("write test file");
    path.to_string_lossy().into_owned()
}

fn demo(dir: &std::path::Path) -> String {
    let db = dir.join("demo.db");
    let output = run(dir, &["demo", "--out", db.to_str().expect("path")]);
    assert!(output.status.success(), "{}", stderr(&output));
    db.to_string_lossy().into_owned()
}

fn per_tree_sum(dir: &std::path::Path, db: &str, column: &str) -> f64 {
    let text = stdout(&run(dir, &["--db", db, "benefits"]));
    let mut reader = csv::Reader::from_reader(text.as_bytes());
    let index = reader
        .headers()
        .expect("header")
        .iter()
        .position(|h| h == column)
        .expect("column");
    reader
        .records()
        .map(|r| r.expect("row")[index].parse::<f64>().expect("number"))
        .sum()
}

/// Checks that the text is well-formed XML (the report is XHTML-compatible) with quick-xml.
fn assert_well_formed(html: &str) {
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

#[test]
fn html_report_is_self_contained_well_formed_escaped_and_sums_the_rows() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = demo(dir.path());
    // A hostile street name and note: user text must come out escaped.
    let hostile = write(
        dir.path(),
        "hostile.csv",
        &format!(
            "{TREES_HEADER}\nx1,Acer rubrum,-84.09,42.70,<script>alert(1)</script>,1,verge,,,2025-05-01,30,,12,3,8,8,5,,<script>alert(1)</script>\n"
        ),
    );
    assert!(
        run(dir.path(), &["--db", &db, "import", "trees", &hostile])
            .status
            .success()
    );
    let out = dir.path().join("report.html");
    let output = run(
        dir.path(),
        &[
            "--db",
            &db,
            "summary",
            "--format",
            "html",
            "--out",
            out.to_str().expect("path"),
        ],
    );
    assert!(output.status.success(), "{}", stderr(&output));
    let html = std::fs::read_to_string(&out).expect("report written");
    assert_well_formed(&html);
    assert!(html.matches("<svg").count() >= 6, "five charts and a map");
    for external in ["http://", "https://", " src=", " href=", "@import", "url("] {
        assert!(
            !html.contains(external),
            "no external reference ({external})"
        );
    }
    assert!(!html.contains("<script>"), "user text is escaped");
    assert!(html.contains("&lt;script&gt;alert(1)&lt;/script&gt;"));
    assert!(html.contains("@media print") && html.contains("page-break-before"));
    assert!(html.contains("qualified arborist"), "the caution");
    assert!(
        html.contains("Chojnacky, Heath &amp; Jenkins 2014"),
        "the methods appendix"
    );
    assert!(html.contains("Weather of 2026"));
    // The carbon card equals the sum of the per-tree rows (tonnes, one decimal).
    let carbon_t = per_tree_sum(dir.path(), &db, "carbon_kg") / 1000.0;
    let shown = format!("{:.1}", carbon_t);
    let grouped = if shown.len() > 5 {
        format!(
            "{},{}",
            &shown[..shown.len() - 5],
            &shown[shown.len() - 5..]
        )
    } else {
        shown
    };
    assert!(
        html.contains(&format!("Carbon stored<b>{grouped} t C</b>")),
        "carbon {grouped}"
    );
}

#[test]
fn summary_csv_is_spreadsheet_safe() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = demo(dir.path());
    let file = write(
        dir.path(),
        "f.csv",
        &format!(
            "{TREES_HEADER}\nf1,Acer rubrum,-84.09,42.70,=cmd(),1,verge,,,2025-05-01,30,,,,,,,,\n"
        ),
    );
    assert!(
        run(dir.path(), &["--db", &db, "import", "trees", &file])
            .status
            .success()
    );
    let text = stdout(&run(
        dir.path(),
        &["--db", &db, "summary", "--by", "street", "--format", "csv"],
    ));
    // OWASP CSV injection guidance: a cell starting with = is prefixed with '.
    assert!(text.lines().any(|l| l.starts_with("'=cmd(),")), "{text}");
    let export = stdout(&run(dir.path(), &["--db", &db, "export", "trees"]));
    assert!(export.contains(",'=cmd(),"), "the trees export too");
}

#[test]
fn summary_by_dbh_class_sums_to_the_total() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = demo(dir.path());
    let text = stdout(&run(
        dir.path(),
        &[
            "--db",
            &db,
            "summary",
            "--by",
            "dbh-class",
            "--format",
            "json",
        ],
    ));
    let json: serde_json::Value = serde_json::from_str(&text).expect("json");
    let groups = json["groups"].as_array().expect("groups");
    let labels: Vec<&str> = groups.iter().filter_map(|g| g["group"].as_str()).collect();
    assert_eq!(
        labels.first(),
        Some(&"< 15 cm"),
        "classes in size order: {labels:?}"
    );
    let trees: u64 = groups.iter().filter_map(|g| g["trees"].as_u64()).sum();
    assert_eq!(Some(trees), json["total"]["trees"].as_u64());
}

#[test]
fn geojson_with_benefits_round_trips_every_tree_field() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = demo(dir.path());
    let geo = dir.path().join("trees.geojson");
    let output = run(
        dir.path(),
        &[
            "--db",
            &db,
            "export",
            "trees",
            "--format",
            "geojson",
            "--with-benefits",
            "--out",
            geo.to_str().expect("p"),
        ],
    );
    assert!(output.status.success(), "{}", stderr(&output));
    let text = std::fs::read_to_string(&geo).expect("written");
    let parsed: geojson::GeoJson = text.parse().expect("valid GeoJSON");
    let geojson::GeoJson::FeatureCollection(collection) = parsed else {
        panic!("not a collection")
    };
    let first = collection.features[0]
        .properties
        .as_ref()
        .expect("properties");
    assert!(first["carbon_kg"].as_f64().is_some_and(|c| c > 0.0));
    assert_eq!(first["benefits_year"], 2026);

    let fresh = empty_inventory(dir.path());
    let output = run(
        dir.path(),
        &["--db", &fresh, "import", "trees", geo.to_str().expect("p")],
    );
    assert!(output.status.success(), "{}", stderr(&output));
    assert!(
        stderr(&output).contains("set aside: benefits_year"),
        "{}",
        stderr(&output)
    );
    let before = stdout(&run(dir.path(), &["--db", &db, "export", "trees"]));
    let after = stdout(&run(dir.path(), &["--db", &fresh, "export", "trees"]));
    assert_eq!(
        before, after,
        "CSV → store → GeoJSON → store → CSV keeps every field"
    );
}

#[test]
fn geojson_import_names_bad_features_and_writes_nothing() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = empty_inventory(dir.path());
    let file = write(
        dir.path(),
        "bad.geojson",
        r#"{"type":"FeatureCollection","features":[
 {"type":"Feature","geometry":{"type":"Point","coordinates":[-84.1,42.7]},"properties":{"species":"red maple","dbh_cm":30}},
 {"type":"Feature","geometry":{"type":"Point","coordinates":[-84.1,42.7]},"properties":{"species":"Acer rubrm","dbh_cm":30}},
 {"type":"Feature","geometry":{"type":"LineString","coordinates":[[0,0],[1,1]]},"properties":{"species":"red maple","dbh_cm":30}},
 {"type":"Feature","geometry":{"type":"Point","coordinates":[-84.1,42.7]},"properties":{"species":"red maple","dbh_cm":4000,"lat":10}}
]}"#,
    );
    let output = run(dir.path(), &["--db", &db, "import", "trees", &file]);
    assert_eq!(output.status.code(), Some(2));
    let err = stderr(&output);
    for expected in [
        "bad.geojson: feature 2: species: unknown species 'Acer rubrm' (did you mean 'Acer rubrum'?)",
        "bad.geojson: feature 3: geometry: a LineString is not a tree position",
        "bad.geojson: feature 4: dbh_cm: 4000 cm is not plausible",
        "bad.geojson: feature 4: lat: does not match the Point geometry",
        "nothing was written: 3 of 4 rows have errors",
    ] {
        assert!(err.contains(expected), "missing '{expected}':\n{err}");
    }
    assert_eq!(
        stdout(&run(dir.path(), &["--db", &db, "export", "trees"]))
            .lines()
            .count(),
        1
    );
    let rejects = dir.path().join("rejects.geojson");
    let output = run(
        dir.path(),
        &[
            "--db",
            &db,
            "import",
            "trees",
            &file,
            "--keep-good",
            "--rejects",
            rejects.to_str().expect("p"),
        ],
    );
    assert!(output.status.success(), "{}", stderr(&output));
    let rejected: geojson::GeoJson = std::fs::read_to_string(&rejects)
        .expect("rejects")
        .parse()
        .expect("GeoJSON");
    let geojson::GeoJson::FeatureCollection(rejected) = rejected else {
        panic!("not a collection")
    };
    assert_eq!(rejected.features.len(), 3);
    assert!(rejected.features.iter().all(|f| {
        f.properties
            .as_ref()
            .is_some_and(|p| p.contains_key("reason"))
    }));
    assert_eq!(
        stdout(&run(dir.path(), &["--db", &db, "export", "trees"]))
            .lines()
            .count(),
        2
    );
}

#[test]
fn zones_assign_hand_placed_trees() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = empty_inventory(dir.path());
    let trees = write(
        dir.path(),
        "t.csv",
        "uid,species,lon,lat,dbh_cm\nwest,Acer rubrum,0.5,0.5,20\neast,Acer rubrum,1.5,0.5,20\nout,Acer rubrum,5,5,20\n",
    );
    assert!(
        run(dir.path(), &["--db", &db, "import", "trees", &trees])
            .status
            .success()
    );
    let zones = write(
        dir.path(),
        "z.geojson",
        r#"{"type":"FeatureCollection","features":[
 {"type":"Feature","properties":{"name":"West Ward"},"geometry":{"type":"Polygon","coordinates":[[[0,0],[1,0],[1,1],[0,1],[0,0]]]}},
 {"type":"Feature","properties":{"name":"East Ward"},"geometry":{"type":"MultiPolygon","coordinates":[[[[1,0],[2,0],[2,1],[1,1],[1,0]]]]}}
]}"#,
    );
    let output = run(dir.path(), &["--db", &db, "import", "zones", &zones]);
    assert!(output.status.success(), "{}", stderr(&output));
    assert!(
        stderr(&output).contains("imported 2 zones; 2 trees changed zone"),
        "{}",
        stderr(&output)
    );
    let store = streetwood::store::Store::open_existing(std::path::Path::new(&db)).expect("open");
    let zone_of = |uid: &str| {
        let id = store.tree_id_by_uid(uid).expect("q").expect("tree");
        store
            .tree_detail(id)
            .expect("q")
            .expect("detail")
            .summary
            .zone
    };
    assert_eq!(zone_of("west").as_deref(), Some("West Ward"));
    assert_eq!(zone_of("east").as_deref(), Some("East Ward"));
    assert_eq!(zone_of("out"), None);
}
