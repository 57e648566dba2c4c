//! End-to-end tests of `benefits`, `summary`, `explain` and `import weather` on the demo inventory.

mod common;

use common::{run, stderr, stdout};

fn demo(dir: &std::path::Path) -> String {
    let db = dir.join("demo.db");
    let output = run(dir, &["demo", "--out", db.to_str().expect("path")]);
    assert!(output.status.success(), "{}", stderr(&output));
    db.to_string_lossy().into_owned()
}

fn rows(text: &str) -> Vec<csv::StringRecord> {
    csv::Reader::from_reader(text.as_bytes())
        .records()
        .map(|r| r.expect("valid csv row"))
        .collect()
}

fn column(header: &csv::StringRecord, name: &str) -> usize {
    header
        .iter()
        .position(|h| h == name)
        .unwrap_or_else(|| panic!("no column {name}"))
}

#[test]
fn benefits_has_the_design_columns_and_summaries_sum_the_rows() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = demo(dir.path());
    let output = run(dir.path(), &["--db", &db, "benefits", "--format", "csv"]);
    assert!(output.status.success(), "{}", stderr(&output));
    let text = stdout(&output);
    // DESIGN.md's `benefits --format csv` columns, in order, plus `estimated` (issue 3).
    assert_eq!(
        text.lines().next(),
        Some(
            "tree_id,uid,species,dbh_cm,height_m,crown_width_m,leaf_area_m2,biomass_kg,carbon_kg,co2e_kg,co2e_seq_kg_yr,interception_m3_yr,transpiration_m3_yr,cooling_kwh_yr,value,estimated"
        )
    );
    assert!(
        stderr(&output).contains("year 2026"),
        "the basis line states the year and prices"
    );
    assert!(
        stderr(&output).contains("USD 214.00/t CO2e"),
        "{}",
        stderr(&output)
    );
    let mut reader = csv::Reader::from_reader(text.as_bytes());
    let header = reader.headers().expect("header").clone();
    let trees = rows(&text);
    assert!(trees.len() > 2000);
    let sum = |name: &str| -> f64 {
        let i = column(&header, name);
        trees
            .iter()
            .map(|r| r[i].parse::<f64>().expect("number"))
            .sum()
    };

    for by in ["species", "street", "zone", "condition", "none"] {
        let output = run(
            dir.path(),
            &["--db", &db, "summary", "--by", by, "--format", "csv"],
        );
        assert!(output.status.success(), "{}", stderr(&output));
        let text = stdout(&output);
        let mut reader = csv::Reader::from_reader(text.as_bytes());
        let sheader = reader.headers().expect("header").clone();
        let groups = rows(&text);
        let total = groups.last().expect("a total row");
        assert_eq!(&total[0], "total");
        let groups = &groups[..groups.len() - 1];
        for name in [
            "carbon_kg",
            "co2e_seq_kg_yr",
            "interception_m3_yr",
            "cooling_kwh_yr",
            "value",
        ] {
            let i = column(&sheader, name);
            let total_value: f64 = total[i].parse().expect("number");
            // The total equals the sum of the per-tree rows (six significant digits printed).
            assert!(
                (total_value - sum(name)).abs() <= 1e-4 * total_value.abs(),
                "{by} {name}: {total_value} vs {}",
                sum(name)
            );
            if !groups.is_empty() {
                let by_groups: f64 = groups
                    .iter()
                    .map(|g| g[i].parse::<f64>().expect("number"))
                    .sum();
                assert!(
                    (by_groups - total_value).abs() <= 1e-4 * total_value.abs(),
                    "{by} {name}"
                );
            }
        }
        let trees_column = column(&sheader, "trees");
        assert_eq!(total[trees_column].parse::<usize>().ok(), Some(trees.len()));
    }

    let output = run(
        dir.path(),
        &["--db", &db, "summary", "--by", "none", "--format", "json"],
    );
    let json: serde_json::Value = serde_json::from_str(&stdout(&output)).expect("json");
    let carbon = json["total"]["carbon_kg"].as_f64().expect("carbon");
    assert!((carbon - sum("carbon_kg")).abs() <= 1e-4 * carbon);
    assert_eq!(json["prices"]["year"], 2026);

    let output = run(
        dir.path(),
        &["--db", &db, "summary", "--by", "species", "--format", "md"],
    );
    let md = stdout(&output);
    assert!(md.contains("| species | trees |"), "{md}");
    assert!(md.contains("| **total** | "), "{md}");
    assert!(
        md.contains("qualified arborist"),
        "the caution travels with the summary"
    );
}

/// Plausibility bounds of METHODS.md: Nowak, Greenfield, Hoehn & Lapoint 2013 (Environ. Pollut.
/// 178:229–236) — US urban trees store 7.69 kg C per m² of tree cover and sequester 0.28 kg C/m²/yr; a
/// street population's totals per m² of crown projection must lie within 0.3×–3× of these. Interception:
/// isolated urban trees intercept 15–27 % of gross rain (Xiao et al. 2000; Xiao & McPherson), so the
/// demo's annual fraction must fall in 10–35 % (METHODS.md M5).
#[test]
fn demo_totals_are_within_published_urban_bounds() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = demo(dir.path());
    let output = run(
        dir.path(),
        &["--db", &db, "summary", "--by", "none", "--format", "json"],
    );
    assert!(output.status.success(), "{}", stderr(&output));
    let json: serde_json::Value = serde_json::from_str(&stdout(&output)).expect("json");
    let total = &json["total"];
    let cpa = total["crown_projection_m2"].as_f64().expect("cpa");
    let carbon_per_m2 = total["carbon_kg"].as_f64().expect("carbon") / cpa;
    let co2_to_c = 12.011 / 44.009;
    let seq_per_m2 = total["co2e_seq_kg_yr"].as_f64().expect("seq") * co2_to_c / cpa;
    assert!(
        (0.3 * 7.69..=3.0 * 7.69).contains(&carbon_per_m2),
        "stored {carbon_per_m2} kg C/m²"
    );
    assert!(
        (0.3 * 0.28..=3.0 * 0.28).contains(&seq_per_m2),
        "sequestered {seq_per_m2} kg C/m²/yr"
    );

    // Gross rain of the year computed (the demo holds 2025 and 2026; the latest is the default).
    let weather = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/demo-inventory/weather.csv"
    ))
    .expect("weather");
    let year = json["prices"]["year"].as_i64().expect("year").to_string();
    let rain_mm: f64 = rows(&weather)
        .iter()
        .filter(|r| r[0].starts_with(&year))
        .filter_map(|r| r[1].parse::<f64>().ok())
        .sum();
    let fraction =
        total["interception_m3_yr"].as_f64().expect("interception") * 1000.0 / cpa / rain_mm;
    assert!(
        (0.10..=0.35).contains(&fraction),
        "interception fraction {fraction}"
    );
}

#[test]
fn explain_shows_the_chain_for_a_multi_stem_tree_with_an_estimated_height() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = demo(dir.path());
    let benefits = stdout(&run(dir.path(), &["--db", &db, "benefits"]));
    let history = stdout(&run(dir.path(), &["--db", &db, "export", "trees"]));
    let multi: std::collections::HashSet<String> = rows(&history)
        .iter()
        .filter(|r| !r[11].is_empty())
        .map(|r| r[0].to_string())
        .collect();
    let tree = rows(&benefits)
        .into_iter()
        .find(|r| multi.contains(&r[1]) && r[15].contains("height_m"))
        .expect("the demo has a multi-stem tree with an estimated height");
    let output = run(dir.path(), &["--db", &db, "explain", &tree[1]]);
    assert!(output.status.success(), "{}", stderr(&output));
    let text = stdout(&output);
    for expected in [
        "Estimated inputs: height_m",
        "stem(s)",
        "Height (estimated",
        "Aboveground biomass, group",
        "Chojnacky, Heath & Jenkins 2014",
        "Stored carbon",
        "DBH growth",
        "Leaf area",
        "Effective leaf area index",
        "Canopy cover c",
        "Canopy storage S",
        "P'g",
        "Leaf-on days",
        "Reference ET0",
        "Landscape coefficient KL",
        "Latent heat",
        "qualified arborist",
    ] {
        assert!(text.contains(expected), "missing '{expected}' in:\n{text}");
    }
    let unknown = run(dir.path(), &["--db", &db, "explain", "no-such-tree"]);
    assert_eq!(unknown.status.code(), Some(2));
}

#[test]
fn a_year_without_weather_names_the_stations_and_years_held() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = demo(dir.path());
    let output = run(dir.path(), &["--db", &db, "benefits", "--year", "2019"]);
    assert_eq!(output.status.code(), Some(2));
    let err = stderr(&output);
    assert!(err.contains("no weather for 2019"), "{err}");
    assert!(
        err.contains("'Wendlemoor Waterworks': 2026 (365 days), 2025 (365 days)"),
        "{err}"
    );
}

#[test]
fn weather_import_rejects_bad_rows_with_line_and_reason_and_writes_nothing() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = common::empty_inventory(dir.path());
    let none = run(dir.path(), &["--db", &db, "benefits"]);
    assert_eq!(none.status.code(), Some(2));
    assert!(
        stderr(&none).contains("holds no weather"),
        "{}",
        stderr(&none)
    );

    let path = dir.path().join("w.csv");
    std::fs::write(
        &path,
        "date,precip_mm,tmin_c,tmax_c,rh_mean_pct,wind_2m_ms,solar_mj_m2\n2025-06-01,3,12,24,70,2,20\n2025-06-02,-1,12,24,70,2,20\n2025-06-03,0,30,24,70,2,20\n",
    )
    .expect("write");
    let file = path.to_str().expect("path");
    let args = [
        "--db",
        &db,
        "import",
        "weather",
        file,
        "--station",
        "Test",
        "--lat",
        "42.7",
        "--elevation",
        "260",
    ];
    let output = run(dir.path(), &args);
    assert_eq!(output.status.code(), Some(2));
    let err = stderr(&output);
    assert!(
        err.contains("w.csv:3: precip_mm: -1 is outside 0 to 2000"),
        "{err}"
    );
    assert!(
        err.contains("w.csv:4: tmin_c: 30 is above tmax_c 24"),
        "{err}"
    );
    assert!(err.contains("nothing was written"), "{err}");
    let still_none = run(dir.path(), &["--db", &db, "benefits"]);
    assert!(stderr(&still_none).contains("holds no weather"));

    std::fs::write(&path, "date,precip_mm,tmin_c,tmax_c\n2025-06-01,3,12,24\n").expect("write");
    let output = run(dir.path(), &args);
    assert!(output.status.success(), "{}", stderr(&output));
    assert!(stderr(&output).contains("imported 1 days for station 'Test'"));
}

#[test]
fn settings_are_checked_before_they_are_stored() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = demo(dir.path());
    let bad = run(
        dir.path(),
        &[
            "--db",
            &db,
            "settings",
            "set",
            "water_price_per_m3",
            "cheap",
        ],
    );
    assert_eq!(bad.status.code(), Some(2), "{}", stderr(&bad));
    let unknown = run(
        dir.path(),
        &["--db", &db, "settings", "set", "water_prise", "3"],
    );
    assert_eq!(unknown.status.code(), Some(2));
    assert!(stderr(&unknown).contains("unknown setting 'water_prise'"));
    let before = stdout(&run(
        dir.path(),
        &["--db", &db, "summary", "--by", "none", "--format", "json"],
    ));
    let ok = run(
        dir.path(),
        &["--db", &db, "settings", "set", "water_price_per_m3", "4.72"],
    );
    assert!(ok.status.success(), "{}", stderr(&ok));
    let after = stdout(&run(
        dir.path(),
        &["--db", &db, "summary", "--by", "none", "--format", "json"],
    ));
    let value = |text: &str, key: &str| -> f64 {
        let json: serde_json::Value = serde_json::from_str(text).expect("json");
        json["total"][key].as_f64().expect("number")
    };
    // Doubling the water price adds exactly the stormwater value once more (M13 step 10).
    let stormwater_before = value(&before, "interception_m3_yr") * 2.36;
    let expected = value(&before, "value") + stormwater_before;
    assert!(
        (value(&after, "value") - expected).abs() < 1e-6 * expected,
        "{} vs {expected}",
        value(&after, "value")
    );
    let listed = stdout(&run(dir.path(), &["--db", &db, "settings", "list"]));
    assert!(listed.contains("water_price_per_m3 = 4.72"));
}
