//! The year summary report assembled from a computed year and a few counts: tables, charts (plotters
//! SVG), the map and the weather lines, written by [`super::report_html`]. Pure: the caller (CLI or
//! TUI) loads the inputs from the store.

use super::charts::bar_chart;
use super::report_html::{MapPoint, Report, ReportTable, grouped, write_html};
use crate::science::condition::ConditionBand;
use crate::science::inventory::{DBH_CLASSES, GroupBy, summarize, top_and_other};
use crate::science::weather::LeafOnRule;
use crate::store::benefits::YearRun;

fn table(run: &YearRun, by: GroupBy, title: &str, header: &str, top: Option<usize>) -> ReportTable {
    let (groups, _) = summarize(&run.rows, by);
    let rows = match top {
        Some(n) => top_and_other(&groups, n),
        None => groups,
    };
    ReportTable {
        title: title.to_string(),
        group_header: header.to_string(),
        rows,
    }
}

fn chart(title: &str, bars: Vec<(String, f64)>, unit: &str) -> Result<String, String> {
    let svg = bar_chart(title, &bars, unit).map_err(|e| format!("chart '{title}': {e}"))?;
    // Inline SVG in HTML needs no namespace declaration; dropping it keeps the file free of URLs.
    Ok(svg.replace(" xmlns=\"http://www.w3.org/2000/svg\"", ""))
}

/// What the report needs besides the computed year.
#[derive(Debug, Clone)]
pub struct ReportInputs {
    /// Standing trees per latest risk rating.
    pub risk: Vec<(String, i64)>,
    /// Open work per priority: (priority, orders, estimated cost).
    pub work: Vec<(i64, i64, f64)>,
    /// Every tree's position: (id, lon, lat).
    pub positions: Vec<(i64, f64, f64)>,
    /// The inventory's name (its file).
    pub inventory: String,
    /// Species shown one by one.
    pub top: usize,
    pub today: chrono::NaiveDate,
}

/// Builds the report of a computed year.
pub fn build(run: &YearRun, inputs: ReportInputs) -> Result<String, String> {
    let ReportInputs {
        risk,
        work,
        positions,
        inventory,
        top,
        today,
    } = inputs;
    let (_, total) = summarize(&run.rows, GroupBy::None);
    let species = table(
        run,
        GroupBy::Species,
        &format!("By species (top {top} and the rest)"),
        "species",
        Some(top),
    );
    let zone = table(run, GroupBy::Zone, "By zone", "zone", None);
    let street = table(run, GroupBy::Street, "By street", "street", None);
    let dbh = table(run, GroupBy::DbhClass, "By DBH class", "DBH class", None);
    let condition = table(
        run,
        GroupBy::Condition,
        "By condition band",
        "condition",
        None,
    );
    let currency = run.prices.currency.clone();

    let mut charts = Vec::new();
    let (mut by_count, _) = summarize(&run.rows, GroupBy::Species);
    by_count.sort_by(|a, b| b.trees.cmp(&a.trees).then(a.group.cmp(&b.group)));
    let composition: Vec<(String, f64)> = top_and_other(&by_count, top)
        .iter()
        .map(|r| (r.group.clone(), r.trees as f64))
        .collect();
    charts.push((
        format!(
            "Species composition: standing trees of the {top} commonest species, the rest together"
        ),
        chart("Trees by species", composition, "trees")?,
    ));
    let dbh_bars: Vec<(String, f64)> = DBH_CLASSES
        .iter()
        .map(|(label, _)| {
            let trees = dbh
                .rows
                .iter()
                .find(|r| r.group == *label)
                .map_or(0, |r| r.trees);
            ((*label).to_string(), trees as f64)
        })
        .collect();
    charts.push((
        "Size structure: standing trees per DBH class".to_string(),
        chart("Trees by DBH class", dbh_bars, "trees")?,
    ));
    charts.push((
        format!("Value of the year's flows by zone ({currency})"),
        chart(
            "Benefits by zone",
            zone.rows
                .iter()
                .map(|r| (r.group.clone(), r.value))
                .collect(),
            &format!("{currency} per year"),
        )?,
    ));
    charts.push((
        "Standing trees by their latest risk rating (trees never assessed are not shown)"
            .to_string(),
        chart(
            "Risk ratings",
            risk.iter().map(|(r, n)| (r.clone(), *n as f64)).collect(),
            "trees",
        )?,
    ));
    charts.push((
        format!("Open work by priority: estimated cost ({currency}); 1 is urgent, 4 routine"),
        chart(
            "Open work by priority",
            work.iter()
                .map(|(p, n, _)| (format!("priority {p} ({n} orders)"), 0.0_f64.max(*n as f64)))
                .zip(work.iter())
                .map(|((label, _), (_, _, cost))| (label, *cost))
                .collect(),
            &format!("estimated cost, {currency}"),
        )?,
    ));

    let band_of: std::collections::HashMap<i64, ConditionBand> =
        run.rows.iter().map(|r| (r.tree_id, r.condition)).collect();
    let map: Vec<MapPoint> = positions
        .iter()
        .filter_map(|(id, lon, lat)| {
            let band = band_of.get(id)?;
            let class = ConditionBand::ALL.iter().position(|b| b == band)?;
            Some(MapPoint {
                lon: *lon,
                lat: *lat,
                class,
            })
        })
        .collect();

    let w = &run.weather;
    let weather = vec![
        (
            "Station".to_string(),
            format!(
                "{} ({:.4}°, {} m)",
                run.station.name, run.station.lat, run.station.elevation_m
            ),
        ),
        (
            "Days held".to_string(),
            format!("{} of {}", run.days_held, w.days.len()),
        ),
        (
            "Precipitation".to_string(),
            format!(
                "{} mm on {} rain days",
                grouped(w.precip_mm, 1),
                w.rain_days.len()
            ),
        ),
        (
            "Reference evapotranspiration (FAO-56)".to_string(),
            format!("{} mm", grouped(w.et0_all_mm, 1)),
        ),
        (
            "Leaf-on season of deciduous trees".to_string(),
            format!(
                "{} days ({})",
                w.frost_free_days,
                match w.leaf_on_rule {
                    LeafOnRule::FrostFree => "between the last spring and the first autumn frost",
                    LeafOnRule::CalendarFallback => "no temperatures: 1 April – 31 October",
                }
            ),
        ),
        (
            "Gaps filled (FAO-56)".to_string(),
            format!(
                "solar radiation {} days, humidity {} days, wind {} days; no ET0 on {} days",
                w.solar_filled_days, w.humidity_filled_days, w.wind_filled_days, w.et0_gap_days
            ),
        ),
    ];
    let report = Report {
        title: format!("Street-tree benefits {}", run.year),
        inventory,
        year: run.year,
        generated_on: today.to_string(),
        basis: run.basis_line(),
        currency,
        total: total.clone(),
        tables: vec![species, zone, street, dbh, condition],
        risk,
        open_work: work,
        map_title: "Where the trees stand, by condition band".to_string(),
        map_legend: ConditionBand::ALL.iter().map(|b| b.as_str().to_string()).collect(),
        map,
        weather,
        methods: crate::science::SOURCES.iter().map(|(m, s)| ((*m).to_string(), (*s).to_string())).collect(),
        cautions: vec![
            crate::care::risk::CAUTION.to_string(),
            "Benefit figures are estimates from published models of average trees, not measurements of these trees.".to_string(),
        ],
    };
    Ok(write_html(&report, &charts))
}
