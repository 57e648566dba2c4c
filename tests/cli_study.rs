//! End-to-end tests of `streetwood study` on the demo inventory (issue 6): the trees along one
//! street within 15 m of a works centreline made from that street's tree positions, two replanting
//! plans (1:1 with a small species, 2:1 with a large one), runs in both modes, the planner's Markdown
//! and a comparison; and bad input refused with exit code 2 and nothing written.

mod common;

use std::collections::BTreeSet;
use std::path::Path;

use common::{run, stderr, stdout};
use geo::{Distance, Geodesic, Point};

const STREET: &str = "Foundry Street";
const STUDY: &str = "Foundry works";

fn demo(dir: &Path) -> String {
    let db = dir.join("demo.db");
    let output = run(dir, &["demo", "--out", db.to_str().expect("path")]);
    assert!(output.status.success(), "{}", stderr(&output));
    db.to_string_lossy().into_owned()
}

fn ok(dir: &Path, args: &[&str]) -> String {
    let output = run(dir, args);
    assert!(
        output.status.success(),
        "{args:?} failed: {}",
        stderr(&output)
    );
    stdout(&output)
}

fn refused(dir: &Path, args: &[&str], needle: &str) {
    let output = run(dir, args);
    assert_eq!(
        output.status.code(),
        Some(2),
        "{args:?}: {}",
        stderr(&output)
    );
    assert!(
        stderr(&output).contains(needle),
        "{args:?}: expected '{needle}' in: {}",
        stderr(&output)
    );
}

/// (uid, lon, lat, street, status) of every tree, from the trees export.
fn trees(dir: &Path, db: &str) -> Vec<(String, f64, f64, String, String)> {
    let text = ok(dir, &["--db", db, "export", "trees", "--format", "csv"]);
    let mut reader = csv::Reader::from_reader(text.as_bytes());
    let header = reader.headers().expect("header").clone();
    let col = |name: &str| header.iter().position(|h| h == name).expect(name);
    let (uid, lon, lat, street, status) = (
        col("uid"),
        col("lon"),
        col("lat"),
        col("street"),
        col("status"),
    );
    reader
        .records()
        .map(|r| r.expect("row"))
        .filter(|r| !r[lon].is_empty())
        .map(|r| {
            (
                r[uid].to_string(),
                r[lon].parse().expect("lon"),
                r[lat].parse().expect("lat"),
                r[street].to_string(),
                r[status].to_string(),
            )
        })
        .collect()
}

fn study_json(dir: &Path, db: &str, name: &str) -> serde_json::Value {
    serde_json::from_str(&ok(
        dir,
        &["--db", db, "study", "show", name, "--format", "json"],
    ))
    .expect("json")
}

// The demo street, a centreline along it built from its own trees, the trees within 15 m of that
// line checked against an independent geodesic computation, two plans, and the reports.
#[test]
fn street_works_study_with_two_plans_on_the_demo() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let db = demo(d);
    let all = trees(d, &db);

    // The centreline: at the mean latitude of the street's trees, from the westmost to the eastmost
    // standing tree of the street between two cross streets (longitude −84.0960 to −84.0930).
    let street: Vec<_> = all.iter().filter(|t| t.3 == STREET).collect();
    let lat = street.iter().map(|t| t.2).sum::<f64>() / street.len() as f64;
    let stretch: Vec<f64> = street
        .iter()
        .filter(|t| t.4 == "standing" && (-84.0960..=-84.0930).contains(&t.1))
        .map(|t| t.1)
        .collect();
    let lon0 = stretch.iter().copied().fold(f64::INFINITY, f64::min);
    let lon1 = stretch.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let line = serde_json::json!({
        "type": "FeatureCollection",
        "features": [{"type": "Feature", "properties": {"name": "works centreline"},
            "geometry": {"type": "LineString", "coordinates": [[lon0, lat], [lon1, lat]]}}]
    });
    let line_file = d.join("works.geojson");
    std::fs::write(&line_file, line.to_string()).expect("write line");

    // Expected selection, computed independently: the line is a parallel of latitude, so a tree whose
    // longitude lies within its span is at the meridian distance from it, and any other tree at the
    // distance to the nearer end (WGS 84 geodesics, Karney 2013 as implemented in `geo`).
    let distance = |lon: f64, tlat: f64| {
        let p = Point::new(lon, tlat);
        if (lon0..=lon1).contains(&lon) {
            Geodesic.distance(p, Point::new(lon, lat))
        } else {
            Geodesic
                .distance(p, Point::new(lon0, lat))
                .min(Geodesic.distance(p, Point::new(lon1, lat)))
        }
    };
    let expected: BTreeSet<String> = all
        .iter()
        .filter(|t| t.4 == "standing" && distance(t.1, t.2) <= 15.0)
        .map(|t| t.0.clone())
        .collect();
    assert!(expected.len() >= 20, "{}", expected.len());

    ok(
        d,
        &[
            "--db",
            &db,
            "study",
            "new",
            STUDY,
            "--start-year",
            "2026",
            "--horizon",
            "80",
            "--seed",
            "20260417",
            "--runs",
            "200",
        ],
    );
    let line_arg = line_file.to_string_lossy().into_owned();
    let added = ok(
        d,
        &[
            "--db", &db, "study", "add", STUDY, "--line", &line_arg, "--within", "15",
        ],
    );
    assert!(
        added.contains(&format!("added {} trees", expected.len())),
        "{added}"
    );
    let shown = study_json(d, &db, STUDY);
    let chosen = shown["trees"].as_array().expect("trees");
    let uids: BTreeSet<String> = chosen
        .iter()
        .map(|t| t["uid"].as_str().expect("uid").to_string())
        .collect();
    assert_eq!(uids, expected);
    for t in chosen {
        assert_eq!(
            t["street"], STREET,
            "every tree within 15 m is on the street"
        );
        let dist = t["line_distance_m"].as_f64().expect("distance");
        assert!(dist <= 15.0);
    }
    // Adding again adds nothing new.
    let again = ok(
        d,
        &[
            "--db", &db, "study", "add", STUDY, "--street", STREET, "--line", &line_arg,
            "--within", "15",
        ],
    );
    assert!(again.contains("added 0 trees"), "{again}");

    // Two plans: 1:1 with a small species, 2:1 with a large one, planted the year after the removal.
    let n = expected.len().to_string();
    let n2 = (2 * expected.len()).to_string();
    ok(
        d,
        &[
            "--db",
            &db,
            "study",
            "plan",
            STUDY,
            "1:1 cherry",
            "--species",
            "Japanese flowering cherry",
            "--count",
            &n,
            "--dbh",
            "5",
            "--year",
            "2027",
        ],
    );
    ok(
        d,
        &[
            "--db",
            &db,
            "study",
            "plan",
            STUDY,
            "2:1 oak",
            "--species",
            "Quercus rubra",
            "--count",
            &n2,
            "--dbh",
            "5",
            "--year",
            "2027",
        ],
    );
    let shown = study_json(d, &db, STUDY);
    assert_eq!(shown["plantings"].as_array().map(Vec::len), Some(2));

    // The planner's report.
    let md = ok(d, &["--db", &db, "study", "run", STUDY, "--format", "md"]);
    for needle in [
        "# Removal study: Foundry works",
        "## What the removal takes",
        "appraised replacement value",
        "released as CO2 within 10 years",
        "## Plan \"1:1 cherry\"",
        "## Plan \"2:1 oak\"",
        "### Payback years",
        "### Cumulative deficit",
        "| 2026 |",
        "| 2031 |",
        "| 2101 |",
        "| 2105 |",
        "qualified arborist",
    ] {
        assert!(md.contains(needle), "missing '{needle}' in:\n{md}");
    }
    // Year rows come at 5-year steps (2026, 2031, …) plus the last year: 2027 is not a row.
    assert!(!md.contains("| 2027 |"));

    // The JSON says the same as the Markdown: payback years per benefit, per plan.
    let json: serde_json::Value = serde_json::from_str(&ok(
        d,
        &["--db", &db, "study", "run", STUDY, "--format", "json"],
    ))
    .expect("json");
    let plans = json["outcome"]["plans"].as_array().expect("plans");
    let payback = |plan: &str, benefit: &str| -> Option<i64> {
        plans
            .iter()
            .find(|p| p["plan"]["name"] == plan)
            .and_then(|p| p["paybacks"].as_array())
            .and_then(|list| list.iter().find(|b| b["benefit"] == benefit))
            .and_then(|b| b["year"].as_i64())
    };
    let oak_co2 =
        payback("2:1 oak", "co2e_sequestered").expect("the oaks pay back CO2e within 80 years");
    assert!((2027..=2105).contains(&oak_co2));
    assert!(
        md.contains(&format!("| CO2e sequestered | {oak_co2} |")),
        "{md}"
    );
    // The small trees, one for one, never catch up with the kept trees' sequestration.
    assert_eq!(payback("1:1 cherry", "co2e_sequestered"), None);
    let cherry_section = md
        .split("## Plan \"1:1 cherry\"")
        .nth(1)
        .expect("cherry section");
    assert!(cherry_section.contains("| CO2e sequestered | not within horizon |"));
    // The deficit of the last year is the difference of the horizon totals.
    let oak = plans
        .iter()
        .find(|p| p["plan"]["name"] == "2:1 oak")
        .expect("oak plan");
    let last = oak["deficit"]
        .as_array()
        .and_then(|d| d.last())
        .expect("deficit");
    let kept_total = json["outcome"]["kept"]["totals"]["value"]
        .as_f64()
        .expect("kept");
    let plan_total = oak["planted"]["totals"]["value"].as_f64().expect("plan");
    let cum = last["value_cum"].as_f64().expect("cumulative");
    assert!((cum - (kept_total - plan_total)).abs() < 1e-6 * kept_total.abs().max(1.0));

    // The pessimistic scenario (METHODS.md M11: 3.2 % a year for established trees) leaves fewer
    // kept trees standing at the end than the central one (2.5 %): n × 0.968^79 vs n × 0.975^79.
    let grim: serde_json::Value = serde_json::from_str(&ok(
        d,
        &[
            "--db",
            &db,
            "study",
            "run",
            STUDY,
            "--format",
            "json",
            "--scenario",
            "pessimistic",
        ],
    ))
    .expect("json");
    assert_eq!(grim["outcome"]["scenario"], "pessimistic");
    let end = |v: &serde_json::Value| {
        v["outcome"]["kept"]["totals"]["trees_end"]
            .as_f64()
            .expect("trees")
    };
    let count = expected.len() as f64;
    assert!((end(&json) - count * 0.975f64.powi(79)).abs() < 1e-9);
    assert!((end(&grim) - count * 0.968f64.powi(79)).abs() < 1e-9);

    // Monte Carlo: the stored seed makes the rerun identical, to the byte.
    let mc1 = ok(
        d,
        &[
            "--db",
            &db,
            "study",
            "run",
            STUDY,
            "--mode",
            "monte-carlo",
            "--format",
            "csv",
        ],
    );
    let mc2 = ok(
        d,
        &[
            "--db",
            &db,
            "study",
            "run",
            STUDY,
            "--mode",
            "monte-carlo",
            "--format",
            "csv",
        ],
    );
    assert_eq!(mc1, mc2);
    assert!(mc1.starts_with("study,plan,population,statistic,year,trees,carbon_kg"));
    for statistic in [",mean,", ",p10,", ",p50,", ",p90,"] {
        assert!(mc1.contains(statistic), "{statistic}");
    }
    let mc_md = ok(
        d,
        &[
            "--db",
            &db,
            "study",
            "run",
            STUDY,
            "--mode",
            "monte-carlo",
            "--plan",
            "2:1 oak",
        ],
    );
    assert!(mc_md.contains("of runs within the horizon"), "{mc_md}");
    assert!(!mc_md.contains("1:1 cherry"));

    // Side by side.
    let cmp = ok(d, &["--db", &db, "study", "compare", STUDY]);
    assert!(
        cmp.contains("| | Foundry works: 1:1 cherry | Foundry works: 2:1 oak |"),
        "{cmp}"
    );
    assert!(cmp.contains("payback year: CO2e sequestered"));
    assert!(cmp.contains("## Cumulative value deficit"));
    let cmp_csv = ok(
        d,
        &[
            "--db",
            &db,
            "study",
            "compare",
            "Foundry works:2:1 oak",
            "Foundry works:1:1 cherry",
            "--format",
            "csv",
        ],
    );
    let mut reader = csv::Reader::from_reader(cmp_csv.as_bytes());
    let rows: Vec<_> = reader.records().map(|r| r.expect("row")).collect();
    assert_eq!(rows.len(), 2);
    assert_eq!(&rows[0][1], "2:1 oak");
    assert_eq!(&rows[0][20], oak_co2.to_string().as_str());
    assert_eq!(&rows[1][20], "");

    let list = ok(d, &["--db", &db, "study", "list"]);
    assert!(
        list.contains("Foundry works") && list.contains("2 plans"),
        "{list}"
    );
}

// Selection by polygon and zone, combined with a street, on the demo.
#[test]
fn polygon_and_zone_selection_on_the_demo() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let db = demo(d);
    let all = trees(d, &db);
    ok(
        d,
        &[
            "--db",
            &db,
            "study",
            "new",
            "square",
            "--start-year",
            "2026",
        ],
    );
    // A lon/lat box (RFC 7946 straight edges): membership is a plain comparison.
    let (w, e, s, n) = (-84.0960, -84.0930, 42.6995, 42.7030);
    let polygon = serde_json::json!({"type": "Polygon",
        "coordinates": [[[w, s], [e, s], [e, n], [w, n], [w, s]]]});
    let file = d.join("box.geojson");
    std::fs::write(&file, polygon.to_string()).expect("write");
    let inside: BTreeSet<String> = all
        .iter()
        .filter(|t| t.4 == "standing" && (w..=e).contains(&t.1) && (s..=n).contains(&t.2))
        .map(|t| t.0.clone())
        .collect();
    let file_arg = file.to_string_lossy().into_owned();
    ok(
        d,
        &[
            "--db",
            &db,
            "study",
            "add",
            "square",
            "--polygon",
            &file_arg,
        ],
    );
    let shown = study_json(d, &db, "square");
    let uids: BTreeSet<String> = shown["trees"]
        .as_array()
        .expect("trees")
        .iter()
        .map(|t| t["uid"].as_str().expect("uid").to_string())
        .collect();
    assert_eq!(uids, inside);

    ok(
        d,
        &["--db", &db, "study", "new", "zone", "--start-year", "2026"],
    );
    let added = ok(
        d,
        &[
            "--db",
            &db,
            "study",
            "add",
            "zone",
            "--zone",
            "riverbend",
            "--street",
            "Riverbend Drive",
        ],
    );
    assert!(added.contains("added"), "{added}");
    let shown = study_json(d, &db, "zone");
    assert!(
        shown["trees"]
            .as_array()
            .expect("trees")
            .iter()
            .all(|t| t["street"] == "Riverbend Drive")
    );
}

#[test]
fn bad_input_exits_2_and_writes_nothing() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let db = demo(d);
    ok(
        d,
        &["--db", &db, "study", "new", STUDY, "--start-year", "2026"],
    );
    refused(d, &["--db", &db, "study", "new", STUDY], "exists already");
    refused(d, &["--db", &db, "study", "new", "a:b"], "contains ':'");
    refused(
        d,
        &["--db", &db, "study", "new", "x", "--weather-year", "1990"],
        "--weather-year: station",
    );
    refused(
        d,
        &["--db", &db, "study", "new", "x", "--functional", "1.5"],
        "--functional",
    );
    refused(
        d,
        &["--db", &db, "study", "run", "nope"],
        "no study named 'nope'",
    );
    refused(d, &["--db", &db, "study", "run", STUDY], "has no trees");
    refused(
        d,
        &["--db", &db, "study", "add", STUDY, "--ids", "1,2,99999"],
        "--ids: no tree with id 99999",
    );
    refused(
        d,
        &["--db", &db, "study", "add", STUDY, "--ids", "1,x"],
        "'x' is not a tree id",
    );
    refused(
        d,
        &[
            "--db",
            &db,
            "study",
            "add",
            STUDY,
            "--street",
            "Nowhere Lane",
        ],
        "no standing tree matches",
    );
    let point = d.join("point.geojson");
    std::fs::write(&point, r#"{"type":"Point","coordinates":[-84.09,42.70]}"#).expect("write");
    let point_arg = point.to_string_lossy().into_owned();
    refused(
        d,
        &["--db", &db, "study", "add", STUDY, "--polygon", &point_arg],
        "feature 1 is a Point",
    );
    refused(
        d,
        &[
            "--db",
            &db,
            "study",
            "add",
            STUDY,
            "--line",
            "missing.geojson",
            "--within",
            "10",
        ],
        "--line missing.geojson: cannot read it",
    );
    refused(
        d,
        &[
            "--db",
            &db,
            "study",
            "plan",
            STUDY,
            "p",
            "--species",
            "Quercus rubra",
            "--count",
            "3",
            "--dbh",
            "60",
            "--year",
            "2027",
        ],
        "--dbh: 60 cm",
    );
    refused(
        d,
        &[
            "--db",
            &db,
            "study",
            "plan",
            STUDY,
            "p",
            "--species",
            "Quercus rubra",
            "--count",
            "3",
            "--dbh",
            "5",
            "--year",
            "2080",
        ],
        "--year: 2080 is outside the study's years 2026–2065",
    );
    refused(
        d,
        &[
            "--db",
            &db,
            "study",
            "plan",
            STUDY,
            "p",
            "--species",
            "Quercus rubbra",
            "--count",
            "3",
            "--dbh",
            "5",
            "--year",
            "2027",
        ],
        "--species: unknown species",
    );
    refused(
        d,
        &["--db", &db, "settings", "set", "survival_scenario", "grim"],
        "survival_scenario",
    );
    // Nothing was written by any of the refused commands.
    let shown = study_json(d, &db, STUDY);
    assert_eq!(shown["trees"].as_array().map(Vec::len), Some(0));
    assert_eq!(shown["plantings"].as_array().map(Vec::len), Some(0));
    let list = ok(d, &["--db", &db, "study", "list", "--format", "json"]);
    let studies: serde_json::Value = serde_json::from_str(&list).expect("json");
    assert_eq!(studies.as_array().map(Vec::len), Some(1));
    // The study settings are registered and can be changed.
    ok(
        d,
        &["--db", &db, "settings", "set", "discount_rate", "0.03"],
    );
}

// Consistency with the engine: in the start year the kept trees are the `benefits` rows of the same
// trees (same weather year, measured in or before it), so stored carbon, interception and cooling
// agree to the six significant digits `benefits` prints. (Sequestration may differ: a study grows
// every tree at the M3 model rate, where `benefits` uses a tree's own observed increment when it has
// one.)
#[test]
fn first_projected_year_matches_benefits_for_the_same_trees() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let db = demo(d);
    ok(
        d,
        &[
            "--db",
            &db,
            "study",
            "new",
            "whole street",
            "--start-year",
            "2025",
            "--horizon",
            "3",
        ],
    );
    ok(
        d,
        &[
            "--db",
            &db,
            "study",
            "add",
            "whole street",
            "--street",
            "Foundry Street",
        ],
    );
    // The trees of the street measured in or before 2025 (later measurements would be newer than the
    // year's `benefits` rows) and with a measured crown (an imputed crown depends on which
    // measurements build the imputer: `benefits` uses those up to its year, a study all of them), in a
    // study of their own.
    let shown = study_json(d, &db, "whole street");
    let early: BTreeSet<i64> = shown["trees"]
        .as_array()
        .expect("trees")
        .iter()
        .filter(|t| t["measured_on"].as_str().is_some_and(|m| m <= "2025-12-31"))
        .map(|t| t["tree_id"].as_i64().expect("id"))
        .collect();
    let text = ok(
        d,
        &["--db", &db, "benefits", "--year", "2025", "--format", "csv"],
    );
    let mut reader = csv::Reader::from_reader(text.as_bytes());
    let header = reader.headers().expect("header").clone();
    let col = |name: &str| header.iter().position(|h| h == name).expect(name);
    let rows: Vec<_> = reader
        .records()
        .map(|r| r.expect("row"))
        .filter(|r| early.contains(&r[col("tree_id")].parse::<i64>().expect("id")))
        .filter(|r| {
            !r[col("estimated")].contains("crown_width_m")
                && !r[col("estimated")].contains("no_crown")
        })
        .collect();
    let ids: BTreeSet<i64> = rows
        .iter()
        .map(|r| r[col("tree_id")].parse::<i64>().expect("id"))
        .collect();
    assert!(ids.len() >= 10, "{}", ids.len());
    let id_list = ids.iter().map(i64::to_string).collect::<Vec<_>>().join(",");
    ok(
        d,
        &[
            "--db",
            &db,
            "study",
            "new",
            "measured by 2025",
            "--start-year",
            "2025",
            "--weather-year",
            "2025",
            "--horizon",
            "3",
        ],
    );
    ok(
        d,
        &[
            "--db",
            &db,
            "study",
            "add",
            "measured by 2025",
            "--ids",
            &id_list,
        ],
    );
    let run_json: serde_json::Value = serde_json::from_str(&ok(
        d,
        &[
            "--db",
            &db,
            "study",
            "run",
            "measured by 2025",
            "--format",
            "json",
        ],
    ))
    .expect("json");
    let first = &run_json["outcome"]["kept"]["central"][0];
    assert_eq!(first["trees"].as_f64(), Some(ids.len() as f64));
    for name in ["carbon_kg", "interception_m3_yr", "cooling_kwh_yr"] {
        let sum: f64 = rows
            .iter()
            .map(|r| r[col(name)].parse::<f64>().expect("number"))
            .sum();
        let got = first[name].as_f64().expect("number");
        assert!(
            (got - sum).abs() <= 1e-5 * sum.abs(),
            "{name}: study {got} vs benefits {sum}"
        );
    }
}
