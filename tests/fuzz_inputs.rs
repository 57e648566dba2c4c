//! Hostile input: property-based fuzzing (proptest) of every reader of user files and of the
//! number-with-unit parser. Arbitrary bytes, and inputs that look right but are wrong, must never
//! panic: each reader either parses or returns its errors. (`cargo fuzz` needs a nightly toolchain,
//! which this project does not use; proptest runs on stable and in `cargo test`.)
//!
//! `cargo test` runs 2,000 cases per target. For a long local run:
//! `STREETWOOD_FUZZ_CASES=1000000 cargo test --release --test fuzz_inputs`.

use std::sync::OnceLock;

use chrono::NaiveDate;
use proptest::prelude::*;
use serde_json::{Value, json};
use streetwood::io::species_lookup::SpeciesLookup;
use streetwood::io::trees_csv::{ValidationContext, read_trees_csv};
use streetwood::io::{parse_number, parse_stems, trees_geojson, weather_csv, zones_geojson};
use streetwood::science::units::{LengthUnit, parse_length};
use streetwood::store::Store;

fn cases() -> u32 {
    std::env::var("STREETWOOD_FUZZ_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(2_000)
}

fn config() -> ProptestConfig {
    ProptestConfig {
        cases: cases(),
        // Every finding becomes a named regression test at the end of this file instead of a
        // proptest-regressions file.
        failure_persistence: None,
        max_shrink_iters: 10_000,
        ..ProptestConfig::default()
    }
}

fn species() -> &'static SpeciesLookup {
    static LOOKUP: OnceLock<SpeciesLookup> = OnceLock::new();
    LOOKUP.get_or_init(|| {
        let store = Store::open_in_memory().expect("store");
        SpeciesLookup::new(&store.species().expect("species"))
    })
}

fn ctx() -> ValidationContext<'static> {
    ValidationContext {
        species: species(),
        today: NaiveDate::from_ymd_opt(2026, 6, 1).expect("date"),
    }
}

/// Cells that have broken parsers elsewhere: empty, blanks, signs, huge and tiny numbers, NaN and
/// infinities in their spellings, decimal commas, full-width digits, byte-order marks, quotes,
/// formula starts, control characters, impossible dates, long texts, SQL.
const TRICKY: &[&str] = &[
    "",
    " ",
    "0",
    "-0",
    "+1",
    "-1",
    "1e308",
    "1e309",
    "-1e309",
    "4.9e-324",
    "NaN",
    "nan",
    "inf",
    "-inf",
    "Infinity",
    "3,5",
    "１２",
    "1_000",
    "0x1f",
    ".",
    "-",
    "+",
    "e5",
    "22;18;9",
    "22;;9",
    ";",
    "1;-1",
    "30 cm",
    "12 in",
    "40'",
    "12\"",
    "\u{feff}30",
    "\u{0}",
    "\r",
    "\n",
    "\t=cmd()",
    "=HYPERLINK(\"x\")",
    "'=1",
    "@SUM(A1)",
    "2025-02-30",
    "2025-13-01",
    "0000-00-00",
    "99999-01-01",
    "2026-06-02",
    "1800-01-01",
    "Acer rubrum",
    "acer RUBRUM",
    "Red maple",
    "Acer",
    "x'); DROP TABLE trees;--",
    "verge",
    "pit",
    "standing",
    "planned",
    "removed",
    "good",
    "dead",
    "GOOD",
    "101",
    "100",
    "1000",
    "1000.0001",
    "130",
    "130.1",
    "80",
    "-180",
    "180.0000001",
    "90",
    "-90.5",
    "é",
    "🌳🌳🌳",
    "\"quoted\"",
    "a\"b",
    "long long long long long long long long long long long long long long text",
];

fn tricky_cell() -> impl Strategy<Value = String> {
    prop_oneof![
        4 => proptest::sample::select(TRICKY).prop_map(str::to_string),
        1 => any::<f64>().prop_map(|f| f.to_string()),
        1 => any::<i64>().prop_map(|i| i.to_string()),
        1 => "\\PC{0,12}",
        1 => proptest::collection::vec(any::<char>(), 0..8).prop_map(|c| c.into_iter().collect()),
    ]
}

const TREE_HEADERS: &[&str] = &[
    "uid",
    "species",
    "lon",
    "lat",
    "street",
    "house_number",
    "site_kind",
    "planted_on",
    "status",
    "measured_on",
    "dbh_cm",
    "stems_cm",
    "height_m",
    "crown_base_m",
    "crown_width_m",
    "crown_width2_m",
    "dieback_pct",
    "condition",
    "notes",
    "dbh_in",
    "stems_in",
    "height_ft",
    "crown_base_ft",
    "crown_width_ft",
    "crown_width2_ft",
    "SPECIES",
    " dbh_cm ",
    "\u{feff}uid",
    "unknown",
    "",
];

const WEATHER_HEADERS: &[&str] = &[
    "date",
    "precip_mm",
    "tmin_c",
    "tmax_c",
    "rh_mean_pct",
    "wind_2m_ms",
    "solar_mj_m2",
    "tdew_c",
    "sunshine_h",
    "wind_m_s",
    "wind_height_m",
    "DATE",
    "\u{feff}date",
    "rain",
    "",
];

/// A CSV text with a header drawn from `headers` (repeats allowed: they must be refused, not
/// crash), rows of tricky cells, sometimes with too few or too many cells, sometimes quoted.
fn csv_text(headers: &'static [&'static str]) -> impl Strategy<Value = String> {
    (
        proptest::collection::vec(proptest::sample::select(headers), 1..12),
        proptest::collection::vec(proptest::collection::vec(tricky_cell(), 0..14), 0..8),
        any::<bool>(),
        prop_oneof![Just("\n"), Just("\r\n"), Just("\r")],
    )
        .prop_map(|(header, rows, quote, newline)| {
            let cell = |c: &str| {
                if quote || c.contains([',', '"', '\n', '\r']) {
                    format!("\"{}\"", c.replace('"', "\"\""))
                } else {
                    c.to_string()
                }
            };
            let mut text = header.join(",");
            for row in rows {
                text.push_str(newline);
                text.push_str(&row.iter().map(|c| cell(c)).collect::<Vec<_>>().join(","));
            }
            text
        })
}

/// Any JSON value, a few levels deep, with tricky strings and extreme numbers.
fn json_value() -> impl Strategy<Value = Value> {
    let leaf = prop_oneof![
        Just(Value::Null),
        any::<bool>().prop_map(Value::Bool),
        any::<i64>().prop_map(Value::from),
        any::<f64>()
            .prop_map(|f| serde_json::Number::from_f64(f).map_or(Value::Null, Value::Number)),
        tricky_cell().prop_map(Value::String),
    ];
    leaf.prop_recursive(4, 32, 6, |inner| {
        prop_oneof![
            proptest::collection::vec(inner.clone(), 0..6).prop_map(Value::Array),
            proptest::collection::btree_map(tricky_cell(), inner, 0..5)
                .prop_map(|m| Value::Object(m.into_iter().collect())),
        ]
    })
}

fn coordinate() -> impl Strategy<Value = Value> {
    prop_oneof![
        (any::<f64>(), any::<f64>()).prop_map(|(a, b)| json!([a, b])),
        (-200.0..200.0f64, -100.0..100.0f64).prop_map(|(a, b)| json!([a, b])),
        Just(json!([])),
        Just(json!([1.0])),
        Just(json!([1.0, 2.0, 3.0, 4.0])),
        json_value(),
    ]
}

/// Geometry objects of every GeoJSON type, with right and wrong coordinate shapes.
fn geometry() -> impl Strategy<Value = Value> {
    let ring = proptest::collection::vec(coordinate(), 0..6)
        .prop_map(Value::Array)
        .boxed();
    let polygon = proptest::collection::vec(ring.clone(), 0..3)
        .prop_map(Value::Array)
        .boxed();
    prop_oneof![
        coordinate().prop_map(|c| json!({"type": "Point", "coordinates": c})),
        ring.clone()
            .prop_map(|r| json!({"type": "LineString", "coordinates": r})),
        ring.prop_map(|r| json!({"type": "MultiPoint", "coordinates": r})),
        polygon
            .clone()
            .prop_map(|p| json!({"type": "Polygon", "coordinates": p})),
        proptest::collection::vec(polygon, 0..3)
            .prop_map(|m| json!({"type": "MultiPolygon", "coordinates": m})),
        Just(json!({"type": "GeometryCollection", "geometries": []})),
        Just(Value::Null),
        json_value(),
    ]
}

fn properties(names: &'static [&'static str]) -> impl Strategy<Value = Value> {
    prop_oneof![
        proptest::collection::btree_map(
            proptest::sample::select(names).prop_map(str::to_string),
            prop_oneof![tricky_cell().prop_map(Value::String), json_value()],
            0..10,
        )
        .prop_map(|m| Value::Object(m.into_iter().collect())),
        Just(Value::Null),
        json_value(),
    ]
}

/// FeatureCollections (and near misses) whose features carry `names` as properties.
fn feature_collection(names: &'static [&'static str]) -> impl Strategy<Value = Value> {
    let feature = (geometry(), properties(names), any::<bool>())
        .prop_map(|(g, p, typed)| {
            if typed {
                json!({"type": "Feature", "geometry": g, "properties": p})
            } else {
                json!({"type": "Feture", "geometry": g, "properties": p})
            }
        })
        .boxed();
    prop_oneof![
        8 => proptest::collection::vec(feature.clone(), 0..6)
            .prop_map(|f| json!({"type": "FeatureCollection", "features": f})),
        1 => feature,
        1 => json_value(),
    ]
}

const ZONE_NAMES: &[&str] = &["name", "Name", "id", "ward"];

fn length_text() -> impl Strategy<Value = String> {
    (
        tricky_cell(),
        prop_oneof![Just(""), Just(" "), Just("  ")],
        proptest::sample::select(
            &[
                "", "cm", "m", "in", "inch", "inches", "\"", "ft", "foot", "feet", "'", "CM", "Ft",
                "mm", "km", "ｃｍ", "m m", "İN", "ß",
            ][..],
        ),
    )
        .prop_map(|(number, gap, unit)| format!("{number}{gap}{unit}"))
}

fn unit() -> impl Strategy<Value = LengthUnit> {
    proptest::sample::select(
        &[
            LengthUnit::Cm,
            LengthUnit::M,
            LengthUnit::Inch,
            LengthUnit::Foot,
        ][..],
    )
}

proptest! {
    #![proptest_config(config())]

    #[test]
    fn trees_csv_arbitrary_bytes(bytes in proptest::collection::vec(any::<u8>(), 0..600)) {
        let _ = read_trees_csv(bytes.as_slice(), ctx());
    }

    #[test]
    fn trees_csv_structured(text in csv_text(TREE_HEADERS)) {
        if let Ok(parsed) = read_trees_csv(text.as_bytes(), ctx()) {
            // Every good record is within the ranges the schema's CHECK constraints enforce.
            for (_, tree) in &parsed.good {
                prop_assert!(tree.stems_cm.iter().all(|d| d.is_finite() && *d > 0.0 && *d <= 1000.0));
                prop_assert!(tree.lon.is_none_or(|v| (-180.0..=180.0).contains(&v)));
                prop_assert!(tree.lat.is_none_or(|v| (-90.0..=90.0).contains(&v)));
                prop_assert!(tree.height_m.is_none_or(|v| v > 0.0 && v <= 130.0));
                prop_assert!(tree.dieback_pct.is_none_or(|v| (0.0..=100.0).contains(&v)));
            }
            for bad in &parsed.bad {
                prop_assert!(!bad.errors.is_empty());
                prop_assert!(bad.errors.iter().all(|e| !e.reason.is_empty() && !e.field.is_empty()));
            }
        }
    }

    #[test]
    fn trees_geojson_arbitrary_text(text in "\\PC{0,400}") {
        let _ = trees_geojson::read_trees_geojson(&text, ctx());
    }

    #[test]
    fn trees_geojson_structured(value in feature_collection(TREE_HEADERS)) {
        let text = value.to_string();
        if let Ok(parsed) = trees_geojson::read_trees_geojson(&text, ctx()) {
            for (_, tree) in &parsed.trees.good {
                prop_assert!(tree.stems_cm.iter().all(|d| d.is_finite() && *d > 0.0));
                prop_assert!(tree.lon.is_none_or(|v| (-180.0..=180.0).contains(&v)));
            }
            let mut rejects = Vec::new();
            prop_assert!(trees_geojson::write_rejects(&mut rejects, &parsed.trees.bad).is_ok());
        }
    }

    #[test]
    fn weather_csv_arbitrary_bytes(bytes in proptest::collection::vec(any::<u8>(), 0..600)) {
        let _ = weather_csv::read_weather_csv(bytes.as_slice());
    }

    #[test]
    fn weather_csv_structured(text in csv_text(WEATHER_HEADERS)) {
        if let Ok(parsed) = weather_csv::read_weather_csv(text.as_bytes()) {
            for (_, day) in &parsed.good {
                prop_assert!(day.wind_2m_ms.is_none_or(f64::is_finite));
                prop_assert!(day.precip_mm.is_none_or(|p| (0.0..=2000.0).contains(&p)));
            }
        }
    }

    #[test]
    fn zones_geojson_arbitrary_text(text in "\\PC{0,400}") {
        let _ = zones_geojson::read_zones(&text);
    }

    #[test]
    fn zones_geojson_structured(value in feature_collection(ZONE_NAMES)) {
        let _ = zones_geojson::read_zones(&value.to_string());
    }

    #[test]
    fn parse_length_any_text(text in prop_oneof![length_text(), "\\PC{0,24}".boxed()], from in unit(), to in unit()) {
        if let Ok(value) = parse_length(&text, from, to) {
            prop_assert!(value.is_finite(), "{text:?} gave {value}");
        }
    }

    #[test]
    fn numbers_and_stems_any_text(text in prop_oneof![tricky_cell(), "[0-9;. +-]{0,20}".boxed()]) {
        if let Ok(value) = parse_number(&text) {
            prop_assert!(value.is_finite());
        }
        if let Ok(stems) = parse_stems(&text) {
            prop_assert!(!stems.is_empty() && stems.iter().all(|d| d.is_finite() && *d > 0.0));
        }
    }
}

// Regression tests: each finding of the fuzzing above, kept as a plain test.

/// Found by `zones_geojson_structured`: a polygon position with fewer than two numbers panicked in
/// the geometry conversion (index out of bounds); now it is a row error naming the zone.
#[test]
fn regression_zone_position_with_fewer_than_two_numbers() {
    for position in [json!([]), json!([5.0])] {
        let text = json!({"type": "FeatureCollection", "features": [{
            "type": "Feature", "properties": {"name": "Ward 1"},
            "geometry": {"type": "Polygon", "coordinates": [[[0.0, 0.0], [1.0, 0.0], position, [0.0, 0.0]]]}
        }, {
            "type": "Feature", "properties": {"name": "Ward 2"},
            "geometry": {"type": "MultiPolygon", "coordinates": [[[[0.0, 0.0], position, [0.0, 0.0]]]]}
        }]})
        .to_string();
        let (zones, errors) = zones_geojson::read_zones(&text).expect("a FeatureCollection");
        assert!(zones.is_empty());
        assert_eq!(errors.len(), 2, "{errors:?}");
        assert!(errors[0].reason.contains("Ward 1") && errors[0].reason.contains("needs two"));
        assert_eq!(errors[1].field, "geometry");
    }
}

/// Found by `parse_length_any_text`: a finite number that overflows in the unit conversion (the
/// largest f64, in feet, to centimetres) came back as infinity; now it is an error.
#[test]
fn regression_length_overflowing_in_conversion() {
    let text = format!("{} ft", f64::MAX);
    let result = parse_length(&text, LengthUnit::Cm, LengthUnit::Cm);
    assert!(
        result.as_ref().is_err_and(|e| e.contains("too large")),
        "{result:?}"
    );
}
