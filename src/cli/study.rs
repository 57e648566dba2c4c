//! `streetwood study new|add|plan|run|compare|list|show`: removal studies over [`crate::study`] (the
//! projection and comparison) and [`crate::store`] (studies, their trees and replanting plans).
//! Every report carries [`CAUTION`].

use std::collections::HashMap;
use std::io::Write;
use std::path::{Path, PathBuf};

use chrono::{DateTime, Datelike, Utc};
use clap::{ArgGroup, Args, Subcommand, ValueEnum};
use serde_json::json;

use super::{CliError, csv_error, open_store, with_output};
use crate::care::risk::CAUTION;
use crate::io::csv_safe;
use crate::io::species_lookup::SpeciesLookup;
use crate::store::Store;
use crate::store::studies::{NewPlanting, NewStudy, StudyRunData};
use crate::study::outcome::{
    Benefit, Deficit, Payback, PlanOutcome, PlanSummary, Population, StudyOutcome, YearSpread,
};
use crate::study::projection::{Band, FlowBands, Flows};
use crate::study::select::{self, Criterion, SelectError};
use crate::study::settings::SurvivalScenario;
use crate::study::{Mode, StudyEnv, run_study};

/// The audit actor of study commands.
const ACTOR: &str = "study";

/// Largest planting DBH the inventory stores (migration 0001: `study_plantings.dbh_cm` ≤ 50 cm).
const MAX_PLANTING_DBH_CM: f64 = 50.0;

const ADD_HELP: &str = "\
Every rule given must hold (they combine with AND). Only standing trees are added; trees already in the
study are left as they are. Distances are WGS 84 geodesics (Karney 2013) from each tree to the nearest
point of the line; GeoJSON lines and polygon edges are straight in longitude/latitude (RFC 7946).

EXAMPLES:
  streetwood study add 'Foundry works' --street 'Foundry Street' --line works.geojson --within 15
  streetwood study add 'Foundry works' --ids 101,102,117
  streetwood study add 'Ward 3 sweep' --polygon ward3.geojson";

/// `streetwood study …`.
#[derive(Debug, Subcommand)]
pub enum StudyCommand {
    /// Create a removal study (its seed is stored, so every rerun is identical).
    New(NewArgs),
    /// Add standing trees to a study: by ids, street, zone, a polygon, or a distance from a works line.
    #[command(after_long_help = ADD_HELP)]
    Add(AddArgs),
    /// Add a row (species, count, planting DBH, planting year) to a replanting plan of a study; run it
    /// again for more rows, or with --replace to start the plan over.
    Plan(PlanArgs),
    /// Project the removed trees kept against every replanting plan: yearly benefits, cumulative
    /// deficits, payback years, totals, the carbon released and the appraised value.
    Run(RunArgs),
    /// Two or more studies or plans side by side (NAME for all its plans, NAME:PLAN for one).
    Compare(CompareArgs),
    /// List the studies.
    List {
        /// Output format.
        #[arg(long, value_enum, default_value = "table")]
        format: ShowFormat,
    },
    /// Show one study: its settings, trees and replanting plans.
    Show {
        /// The study's name.
        name: String,
        /// Output format.
        #[arg(long, value_enum, default_value = "table")]
        format: ShowFormat,
    },
}

/// Arguments of `study new`.
#[derive(Debug, Args)]
pub struct NewArgs {
    /// The study's name (unique; no ':', which `study compare` uses to name a plan).
    pub name: String,
    /// Years projected, from the start year on.
    #[arg(long, default_value_t = 40, value_parser = clap::value_parser!(u32).range(1..=200))]
    pub horizon: u32,
    /// Random seed of the Monte Carlo runs (default: derived from the name); stored with the study.
    #[arg(long)]
    pub seed: Option<u64>,
    /// Monte Carlo runs.
    #[arg(long, default_value_t = 1000, value_parser = clap::value_parser!(u32).range(1..=1_000_000))]
    pub runs: u32,
    /// The year of weather used for every projected year (default: the latest year held, fixed now).
    #[arg(long, value_name = "YEAR")]
    pub weather_year: Option<i32>,
    /// The year of the removal, the first projected year (default: this year).
    #[arg(long, value_name = "YEAR")]
    pub start_year: Option<i32>,
    /// Functional limitation factor of the appraisal (0–1, METHODS.md M12).
    #[arg(long, default_value_t = 1.0, value_name = "FACTOR")]
    pub functional: f64,
    /// External limitation factor of the appraisal (0–1, METHODS.md M12).
    #[arg(long, default_value_t = 1.0, value_name = "FACTOR")]
    pub external: f64,
    /// A note on what the study is for.
    #[arg(long)]
    pub description: Option<String>,
}

/// Arguments of `study add`.
#[derive(Debug, Args)]
#[command(group(ArgGroup::new("rule").required(true).multiple(true)
    .args(["ids", "street", "zone", "polygon", "line"])))]
pub struct AddArgs {
    /// The study's name.
    pub name: String,
    /// Tree ids, comma-separated (each must exist and be standing).
    #[arg(long, value_name = "ID,ID,…")]
    pub ids: Option<String>,
    /// Trees on this street (any case).
    #[arg(long)]
    pub street: Option<String>,
    /// Trees in this zone (any case).
    #[arg(long)]
    pub zone: Option<String>,
    /// Trees inside the Polygon/MultiPolygon features of a GeoJSON file (edges count as inside).
    #[arg(long, value_name = "FILE")]
    pub polygon: Option<PathBuf>,
    /// A works centreline: the LineString/MultiLineString features of a GeoJSON file (needs --within).
    #[arg(long, value_name = "FILE", requires = "within")]
    pub line: Option<PathBuf>,
    /// With --line: trees at most this many metres from the line.
    #[arg(long, value_name = "METRES", requires = "line")]
    pub within: Option<f64>,
    /// List the trees that would be added; add nothing.
    #[arg(long)]
    pub dry_run: bool,
}

/// Arguments of `study plan`.
#[derive(Debug, Args)]
pub struct PlanArgs {
    /// The study's name.
    pub name: String,
    /// The plan's name (a study can hold several plans).
    pub plan: String,
    /// Species to plant: botanical or common name.
    #[arg(long)]
    pub species: String,
    /// How many trees.
    #[arg(long, value_parser = clap::value_parser!(u32).range(1..=100_000))]
    pub count: u32,
    /// Planting DBH (nursery caliper measured at 1.37 m), cm; above 0 and at most 50.
    #[arg(long, value_name = "CM")]
    pub dbh: f64,
    /// Planting year (within the study's years).
    #[arg(long, value_name = "YEAR")]
    pub year: i32,
    /// Replace the plan's rows with this one instead of adding to them.
    #[arg(long)]
    pub replace: bool,
}

/// Arguments of `study run`.
#[derive(Debug, Args)]
pub struct RunArgs {
    /// The study's name.
    pub name: String,
    /// Expected values, or seeded Monte Carlo runs with P10/P50/P90.
    #[arg(long, value_enum, default_value = "expected")]
    pub mode: ModeArg,
    /// Output format (md is the planner's report).
    #[arg(long, value_enum, default_value = "md")]
    pub format: OutFormat,
    /// Only this plan (default: every plan of the study).
    #[arg(long)]
    pub plan: Option<String>,
    /// Survival scenario (default: the `survival_scenario` setting).
    #[arg(long, value_enum)]
    pub scenario: Option<ScenarioArg>,
    /// Output file (default: standard output).
    #[arg(long, value_name = "FILE")]
    pub out: Option<PathBuf>,
}

/// Arguments of `study compare`.
#[derive(Debug, Args)]
pub struct CompareArgs {
    /// Studies (every plan) or STUDY:PLAN (one plan); at least two plans in all.
    #[arg(required = true, num_args = 1.., value_name = "NAME[:PLAN]")]
    pub items: Vec<String>,
    /// Expected values, or seeded Monte Carlo runs.
    #[arg(long, value_enum, default_value = "expected")]
    pub mode: ModeArg,
    /// Output format.
    #[arg(long, value_enum, default_value = "md")]
    pub format: OutFormat,
    /// Survival scenario (default: the `survival_scenario` setting).
    #[arg(long, value_enum)]
    pub scenario: Option<ScenarioArg>,
    /// Output file (default: standard output).
    #[arg(long, value_name = "FILE")]
    pub out: Option<PathBuf>,
}

/// `--mode`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ModeArg {
    Expected,
    MonteCarlo,
}

impl From<ModeArg> for Mode {
    fn from(mode: ModeArg) -> Mode {
        match mode {
            ModeArg::Expected => Mode::Expected,
            ModeArg::MonteCarlo => Mode::MonteCarlo,
        }
    }
}

/// `--scenario`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ScenarioArg {
    Central,
    Pessimistic,
    Optimistic,
}

impl From<ScenarioArg> for SurvivalScenario {
    fn from(s: ScenarioArg) -> SurvivalScenario {
        match s {
            ScenarioArg::Central => SurvivalScenario::Central,
            ScenarioArg::Pessimistic => SurvivalScenario::Pessimistic,
            ScenarioArg::Optimistic => SurvivalScenario::Optimistic,
        }
    }
}

/// Output formats of `run` and `compare`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum OutFormat {
    Csv,
    Json,
    Md,
}

/// Output formats of `list` and `show`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ShowFormat {
    Table,
    Json,
}

/// Runs a `study` subcommand.
pub fn run(inventory: &Path, command: &StudyCommand, now: DateTime<Utc>) -> Result<(), CliError> {
    match command {
        StudyCommand::New(args) => new_study(inventory, args, now),
        StudyCommand::Add(args) => add(inventory, args),
        StudyCommand::Plan(args) => plan(inventory, args),
        StudyCommand::Run(args) => run_one(inventory, args),
        StudyCommand::Compare(args) => compare(inventory, args),
        StudyCommand::List { format } => list(inventory, *format),
        StudyCommand::Show { name, format } => show(inventory, name, *format),
    }
}

fn check_name(field: &str, name: &str) -> Result<String, CliError> {
    let name = name.trim();
    if name.is_empty() {
        return Err(CliError::Input(format!("{field}: must not be empty")));
    }
    if name.chars().count() > 100 {
        return Err(CliError::Input(format!("{field}: at most 100 characters")));
    }
    Ok(name.to_string())
}

fn new_study(inventory: &Path, args: &NewArgs, now: DateTime<Utc>) -> Result<(), CliError> {
    let name = check_name("name", &args.name)?;
    if name.contains(':') {
        return Err(CliError::Input(format!(
            "name: '{name}' contains ':', which `study compare` uses to separate a study from a plan"
        )));
    }
    let seed = args
        .seed
        .unwrap_or_else(|| crate::study::seed_from_name(&name));
    if i64::try_from(seed).is_err() {
        return Err(CliError::Input(format!(
            "--seed: {seed} is too large (at most {})",
            i64::MAX
        )));
    }
    for (flag, f) in [
        ("--functional", args.functional),
        ("--external", args.external),
    ] {
        if !(f.is_finite() && (0.0..=1.0).contains(&f)) {
            return Err(CliError::Input(format!(
                "{flag}: {f} is outside 0–1 (a limitation factor of the trunk formula, METHODS.md M12)"
            )));
        }
    }
    let start_year = args.start_year.unwrap_or(now.year());
    if !(1800..=2300).contains(&start_year) {
        return Err(CliError::Input(format!(
            "--start-year: {start_year} is outside 1800–2300"
        )));
    }
    let mut store = open_store(inventory)?;
    let weather_year = match args.weather_year {
        Some(year) => {
            let station = store.default_station()?.ok_or_else(|| {
                CliError::Input(
                    "--weather-year: the inventory holds no weather; import a year first"
                        .to_string(),
                )
            })?;
            let held = store.weather_years(&station.name)?;
            if !held.iter().any(|(y, _)| *y == year) {
                let list: Vec<String> = held.iter().map(|(y, _)| y.to_string()).collect();
                return Err(CliError::Input(format!(
                    "--weather-year: station '{}' holds no weather for {year} (held: {})",
                    station.name,
                    if list.is_empty() {
                        "none".to_string()
                    } else {
                        list.join(", ")
                    }
                )));
            }
            Some(year)
        }
        None => store.latest_weather_year()?,
    };
    store.create_study(
        &NewStudy {
            name: name.clone(),
            description: args.description.clone().filter(|d| !d.trim().is_empty()),
            horizon_years: args.horizon,
            seed,
            runs: args.runs,
            weather_year,
            start_year,
            functional_limitation: args.functional,
            external_limitation: args.external,
        },
        now,
        ACTOR,
    )?;
    let end = start_year + args.horizon as i32 - 1;
    say(
        inventory,
        &[
            format!(
                "created study '{name}': removal in {start_year}, projected {start_year}–{end}, seed {seed}, {} Monte Carlo runs, weather of {}",
                args.runs,
                weather_year.map_or("the latest year held when run".to_string(), |y| y
                    .to_string())
            ),
            format!(
                "next: streetwood study add '{name}' --street NAME (or --ids, --zone, --polygon, --line … --within M)"
            ),
        ],
    )
}

/// Prints lines to standard output (a closed pipe ends quietly).
fn say(inventory: &Path, lines: &[String]) -> Result<(), CliError> {
    with_output(None, inventory, |out| {
        for line in lines {
            writeln!(out, "{line}")?;
        }
        Ok(())
    })
}

fn read_text(flag: &str, path: &Path) -> Result<String, CliError> {
    std::fs::read_to_string(path)
        .map_err(|e| CliError::Input(format!("{flag} {}: cannot read it: {e}", path.display())))
}

fn parse_ids(text: &str) -> Result<Vec<i64>, CliError> {
    let mut ids = Vec::new();
    for part in text.split(',').map(str::trim).filter(|p| !p.is_empty()) {
        let id: i64 = part.parse().map_err(|_| {
            CliError::Input(format!("--ids: '{part}' is not a tree id (whole number)"))
        })?;
        if !ids.contains(&id) {
            ids.push(id);
        }
    }
    if ids.is_empty() {
        return Err(CliError::Input(
            "--ids: give at least one tree id, e.g. --ids 12,15,40".to_string(),
        ));
    }
    Ok(ids)
}

fn add(inventory: &Path, args: &AddArgs) -> Result<(), CliError> {
    let mut criteria = Vec::new();
    let mut described = Vec::new();
    if let Some(text) = &args.ids {
        let ids = parse_ids(text)?;
        described.push(format!("ids={}", ids.len()));
        criteria.push(Criterion::Ids(ids));
    }
    if let Some(street) = &args.street {
        let street = check_name("--street", street)?;
        described.push(format!("street={street}"));
        criteria.push(Criterion::Street(street));
    }
    if let Some(zone) = &args.zone {
        let zone = check_name("--zone", zone)?;
        described.push(format!("zone={zone}"));
        criteria.push(Criterion::Zone(zone));
    }
    if let Some(path) = &args.polygon {
        let area = select::parse_area_geojson(&read_text("--polygon", path)?)
            .map_err(|e| CliError::Input(format!("--polygon {}: {e}", path.display())))?;
        described.push(format!("polygon={}", file_label(path)));
        criteria.push(Criterion::Within(area));
    }
    if let (Some(path), Some(within)) = (&args.line, args.within) {
        if !(within.is_finite() && (0.0..=10_000.0).contains(&within)) {
            return Err(CliError::Input(format!(
                "--within: {within} m is outside 0–10000 m"
            )));
        }
        let lines = select::parse_lines_geojson(&read_text("--line", path)?)
            .map_err(|e| CliError::Input(format!("--line {}: {e}", path.display())))?;
        described.push(format!("line={} within {within} m", file_label(path)));
        criteria.push(Criterion::NearLine {
            lines,
            within_m: within,
        });
    }
    let selected_by = described.join("; ");
    let mut store = open_store(inventory)?;
    let study = store.require_study(&args.name)?;
    let candidates = store.study_candidates()?;
    let chosen = select::select(&candidates, &criteria).map_err(|e| match e {
        SelectError::UnknownIds(_) | SelectError::NotStanding(_) => {
            CliError::Input(format!("--ids: {e}; nothing was added"))
        }
        SelectError::Invalid(_) => CliError::Input(e.to_string()),
    })?;
    if chosen.is_empty() {
        return Err(CliError::Input(format!(
            "no standing tree matches {selected_by}; nothing was added"
        )));
    }
    if args.dry_run {
        let mut lines = vec![format!("would add {} trees ({selected_by}):", chosen.len())];
        lines.extend(chosen.iter().map(|tree| match tree.distance_m {
            Some(d) => format!("  tree {} ({d:.1} m from the line)", tree.tree_id),
            None => format!("  tree {}", tree.tree_id),
        }));
        return say(inventory, &lines);
    }
    let (added, already) = store.add_study_trees(study.id, &chosen, &selected_by, ACTOR)?;
    let total = store.study_tree_rows(study.id)?.len();
    say(
        inventory,
        &[format!(
            "added {added} trees to study '{}' ({selected_by}){}; it now has {total} trees",
            study.name,
            if already > 0 {
                format!(", {already} were in it already")
            } else {
                String::new()
            }
        )],
    )
}

fn file_label(path: &Path) -> String {
    path.file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| path.display().to_string())
}

fn plan(inventory: &Path, args: &PlanArgs) -> Result<(), CliError> {
    let plan = check_name("plan", &args.plan)?;
    if !(args.dbh.is_finite() && args.dbh > 0.0 && args.dbh <= MAX_PLANTING_DBH_CM) {
        return Err(CliError::Input(format!(
            "--dbh: {} cm is outside the planting sizes the inventory holds (above 0, at most {MAX_PLANTING_DBH_CM} cm)",
            args.dbh
        )));
    }
    let mut store = open_store(inventory)?;
    let study = store.require_study(&args.name)?;
    let end = study.start_year + study.horizon_years as i32 - 1;
    if args.year < study.start_year || args.year > end {
        return Err(CliError::Input(format!(
            "--year: {} is outside the study's years {}–{end}",
            args.year, study.start_year
        )));
    }
    let species = store.species()?;
    let lookup = SpeciesLookup::new(&species);
    let botanical = lookup
        .resolve(&args.species)
        .map_err(|e| CliError::Input(format!("--species: {e}")))?
        .to_string();
    let species_id = species
        .iter()
        .find(|s| s.scientific_name == botanical)
        .map(|s| s.id)
        .ok_or_else(|| {
            CliError::Input(format!(
                "--species: '{botanical}' is not in the species list"
            ))
        })?;
    let rows = store.set_plan_rows(
        study.id,
        &plan,
        &[NewPlanting {
            species_id,
            count: args.count,
            dbh_cm: args.dbh,
            year: args.year,
        }],
        args.replace,
        ACTOR,
    )?;
    say(
        inventory,
        &[format!(
            "plan '{plan}' of study '{}': {} {} {botanical} at {} cm DBH in {}; the plan has {rows} row{}",
            study.name,
            if args.replace { "now" } else { "added" },
            args.count,
            args.dbh,
            args.year,
            if rows == 1 { "" } else { "s" }
        )],
    )
}

/// Runs one study: loads, projects, compares.
fn outcome_of(
    store: &Store,
    name: &str,
    mode: Mode,
    scenario: Option<ScenarioArg>,
) -> Result<(StudyOutcome, StudyRunData), CliError> {
    let data = store.study_run_data(name)?;
    let scenario = scenario.map_or(data.settings.survival_scenario, SurvivalScenario::from);
    let env = StudyEnv {
        species: &data.params,
        imputer: &data.imputer,
        weather: &data.weather,
        science: &data.science,
        settings: &data.settings,
        scenario,
    };
    let outcome = run_study(&data.input, &env, mode)
        .map_err(|e| CliError::Input(format!("study '{name}': {e}")))?;
    Ok((outcome, data))
}

fn basis(outcome: &StudyOutcome, data: &StudyRunData) -> String {
    let s = &outcome.survival;
    let mode = match outcome.mode {
        Mode::Expected => {
            "expected values (each tree weighted by its probability of being alive)".to_string()
        }
        Mode::MonteCarlo => format!(
            "Monte Carlo, {} runs, seed {} (ranges are P10–P90 of the runs)",
            outcome.runs.unwrap_or(0),
            outcome.seed
        ),
    };
    format!(
        "Removal in {start}; projected {start}–{end} ({h} years). Mode: {mode}. Survival: {scenario} scenario, \
         {qe:.1} % a year in the first 5 years after planting and {qp:.1} % after (METHODS.md M11). \
         Weather: {wy} at station '{station}' ({days} days held), used for every year. Growth: METHODS.md M3 \
         model rate × condition factor. Money in {cur}: each year's flows at that year's prices (METHODS.md \
         M8; CO2e at the EPA 2023 social cost of carbon, cooling share {share}), discounted at {dr:.1} % a \
         year to {start}.",
        start = outcome.start_year,
        end = outcome.end_year,
        h = outcome.horizon_years,
        scenario = outcome.scenario,
        qe = s.q_establishment * 100.0,
        qp = s.q_post * 100.0,
        wy = outcome.weather_year,
        station = data.station.name,
        days = data.weather_days_held,
        cur = outcome.currency,
        share = data.science.cooling_value_share,
        dr = outcome.discount_rate * 100.0,
    )
}

fn run_one(inventory: &Path, args: &RunArgs) -> Result<(), CliError> {
    let store = open_store(inventory)?;
    let (mut outcome, data) = outcome_of(&store, &args.name, args.mode.into(), args.scenario)?;
    if let Some(plan) = &args.plan {
        if !outcome.plans.iter().any(|p| &p.plan.name == plan) {
            let names: Vec<&str> = outcome.plans.iter().map(|p| p.plan.name.as_str()).collect();
            return Err(CliError::Input(format!(
                "--plan: study '{}' has no plan '{plan}' (plans: {})",
                outcome.study,
                if names.is_empty() {
                    "none".to_string()
                } else {
                    names.join(", ")
                }
            )));
        }
        outcome.plans.retain(|p| &p.plan.name == plan);
    }
    if outcome.plans.is_empty() {
        eprintln!(
            "note: study '{}' has no replanting plan yet; add one with `streetwood study plan '{}' PLAN --species S --count N --dbh CM --year Y`",
            outcome.study, outcome.study
        );
    }
    let basis = basis(&outcome, &data);
    if args.format != OutFormat::Md {
        eprintln!("{basis}");
        for p in &outcome.plans {
            eprintln!("plan '{}': {}", p.plan.name, payback_sentence(&p.paybacks));
        }
    }
    with_output(args.out.as_deref(), inventory, |sink| match args.format {
        OutFormat::Csv => write_run_csv(sink, &outcome),
        OutFormat::Json => {
            let document = json!({
                "basis": basis,
                "station": data.station.name,
                "caution": CAUTION,
                "outcome": outcome,
            });
            serde_json::to_writer_pretty(&mut *sink, &document).map_err(anyhow::Error::from)?;
            writeln!(sink)?;
            Ok(())
        }
        OutFormat::Md => write_run_md(sink, &outcome, &basis),
    })
}

fn payback_sentence(paybacks: &[Payback]) -> String {
    paybacks
        .iter()
        .map(|p| format!("{} {}", p.benefit.label(), year_text(p.year)))
        .collect::<Vec<_>>()
        .join(", ")
}

/// A payback year, or "not within horizon".
fn year_text(year: Option<i32>) -> String {
    year.map_or("not within horizon".to_string(), |y| y.to_string())
}

fn spread_text(spread: &YearSpread) -> String {
    let share = spread.share_within_horizon * 100.0;
    if spread.p10.is_none() {
        return format!("{share:.0} % of runs within the horizon");
    }
    format!(
        "P10 {} – P90 {}; {share:.0} % of runs within the horizon",
        year_text(spread.p10),
        year_text(spread.p90),
    )
}

/// A number with thousands separators and `decimals` decimals.
fn fmt_num(x: f64, decimals: usize) -> String {
    if !x.is_finite() {
        return "–".to_string();
    }
    let text = format!("{:.decimals$}", x.abs());
    let (whole, fraction) = match text.split_once('.') {
        Some((w, f)) => (w.to_string(), Some(f.to_string())),
        None => (text.clone(), None),
    };
    let mut grouped = String::new();
    for (i, c) in whole.chars().enumerate() {
        if i > 0 && (whole.len() - i) % 3 == 0 {
            grouped.push(',');
        }
        grouped.push(c);
    }
    let negative = x < 0.0 && text.chars().any(|c| c.is_ascii_digit() && c != '0');
    let sign = if negative { "-" } else { "" };
    match fraction {
        Some(f) => format!("{sign}{grouped}.{f}"),
        None => format!("{sign}{grouped}"),
    }
}

fn md_cell(text: &str) -> String {
    text.replace('|', "\\|").replace(['\n', '\r'], " ")
}

/// The indices of the report years: every 5 years from the start, and the last year.
fn report_indices(n: usize) -> Vec<usize> {
    let mut idx: Vec<usize> = (0..n).step_by(5).collect();
    if n > 0 && idx.last() != Some(&(n - 1)) {
        idx.push(n - 1);
    }
    idx
}

fn plan_rows_text(p: &PlanOutcome) -> String {
    p.plan
        .rows
        .iter()
        .map(|r| {
            format!(
                "{} × {} at {} cm in {}",
                r.count, r.species, r.dbh_cm, r.year
            )
        })
        .collect::<Vec<_>>()
        .join("; ")
}

fn payback_cell(p: &Payback) -> String {
    match &p.payback_spread {
        Some(s) => format!("{} ({})", year_text(p.year), spread_text(s)),
        None => year_text(p.year),
    }
}

fn break_even_cell(p: &Payback) -> String {
    if p.benefit == Benefit::CarbonStored {
        return "–".to_string();
    }
    match &p.break_even_spread {
        Some(s) => format!("{} ({})", year_text(p.break_even_year), spread_text(s)),
        None => year_text(p.break_even_year),
    }
}

/// A year's value with its P10–P90 range in Monte Carlo mode.
fn cell(central: f64, band: Option<Band>, scale: f64, decimals: usize) -> String {
    match band {
        Some(b) => format!(
            "{} ({}–{})",
            fmt_num(central * scale, decimals),
            fmt_num(b.p10 * scale, decimals),
            fmt_num(b.p90 * scale, decimals)
        ),
        None => fmt_num(central * scale, decimals),
    }
}

fn write_run_md(sink: &mut dyn Write, o: &StudyOutcome, basis: &str) -> Result<(), CliError> {
    let cur = &o.currency;
    writeln!(sink, "# Removal study: {}\n", md_cell(&o.study))?;
    writeln!(sink, "{}\n", md_cell(basis))?;
    let r = &o.removal;
    writeln!(sink, "## What the removal takes\n")?;
    writeln!(sink, "| | |\n|---|---:|")?;
    writeln!(sink, "| trees removed | {} |", r.trees)?;
    writeln!(
        sink,
        "| carbon stored in them ({}) | {} t C = {} t CO2e |",
        o.start_year,
        fmt_num(r.stored_carbon_kg / 1000.0, 2),
        fmt_num(r.stored_co2e_kg / 1000.0, 2)
    )?;
    writeln!(
        sink,
        "| released as CO2 within 10 years ({:.0} %, setting `removal_carbon_decay_share`) | {} t CO2e |",
        r.decay_share * 100.0,
        fmt_num(r.released_co2e_kg_10y / 1000.0, 2)
    )?;
    writeln!(
        sink,
        "| kept in wood products | {} t CO2e |",
        fmt_num(r.retained_co2e_kg / 1000.0, 2)
    )?;
    writeln!(
        sink,
        "| appraised replacement value (trunk formula, METHODS.md M12: {cur} {}/cm², functional {:.2}, external {:.2}) | {cur} {} |",
        r.appraisal_unit_cost_per_cm2,
        r.functional_limitation,
        r.external_limitation,
        fmt_num(r.appraisal_total, 0)
    )?;
    let f = &r.first_year;
    writeln!(
        sink,
        "| benefits forgone in {}: CO2e sequestered | {} kg |",
        o.start_year,
        fmt_num(f.co2e_seq_kg_yr, 0)
    )?;
    writeln!(
        sink,
        "| rain intercepted | {} m³ |",
        fmt_num(f.interception_m3_yr, 1)
    )?;
    writeln!(
        sink,
        "| cooling (latent heat of transpiration) | {} kWh |",
        fmt_num(f.cooling_kwh_yr, 0)
    )?;
    writeln!(
        sink,
        "| money value of the year's flows | {cur} {} |\n",
        fmt_num(f.value, 0)
    )?;

    if o.plans.is_empty() {
        writeln!(
            sink,
            "No replanting plan yet: add one with `streetwood study plan`.\n"
        )?;
    } else {
        writeln!(sink, "## Plans at a glance\n")?;
        let mut header = "| plan | trees planted |".to_string();
        let mut rule = "|---|---:|".to_string();
        for b in Benefit::ALL {
            header.push_str(&format!(" payback: {} |", b.label()));
            rule.push_str("---|");
        }
        header.push_str(&format!(
            " value break-even | discounted value deficit ({cur}) |"
        ));
        rule.push_str("---|---:|");
        writeln!(sink, "{header}\n{rule}")?;
        for p in &o.plans {
            let mut line = format!("| {} | {} |", md_cell(&p.plan.name), p.trees_planted);
            for pb in &p.paybacks {
                line.push_str(&format!(" {} |", year_text(pb.year)));
            }
            let value = p.paybacks.iter().find(|pb| pb.benefit == Benefit::Value);
            line.push_str(&format!(
                " {} | {} |",
                value.map_or("–".to_string(), |v| year_text(v.break_even_year)),
                fmt_num(p.totals_deficit.value_discounted, 0)
            ));
            writeln!(sink, "{line}")?;
        }
        writeln!(
            sink,
            "\nPayback year: the first year the plan's annual benefit (for carbon stored: its stock) reaches \
             that of the removed trees had they been kept. Break-even year: the first year the cumulative \
             deficit is paid off.\n"
        )?;
    }
    for p in &o.plans {
        write_plan_md(sink, o, p)?;
    }
    writeln!(
        sink,
        "Notes: one weather year stands for every year; growth is the linear M3 model with no size limit, \
         crowns scale with DBH; removed trees that die in the projection leave the stock (their carbon is not \
         followed further). Cooling is a latent-heat equivalence, not metered savings.\n"
    )?;
    writeln!(sink, "_{CAUTION}_")?;
    Ok(())
}

fn write_plan_md(sink: &mut dyn Write, o: &StudyOutcome, p: &PlanOutcome) -> Result<(), CliError> {
    let cur = &o.currency;
    writeln!(sink, "## Plan \"{}\"\n", md_cell(&p.plan.name))?;
    writeln!(sink, "Planting: {}.\n", md_cell(&plan_rows_text(p)))?;
    writeln!(sink, "### Payback years\n")?;
    if o.mode == Mode::MonteCarlo {
        writeln!(
            sink,
            "Each year is the median over the runs, with the P10–P90 range and the share of runs that \
             pay back within the horizon; it can differ from the payback of the mean curves below.\n"
        )?;
    }
    writeln!(
        sink,
        "| benefit | payback year | break-even year (cumulative deficit paid off) |\n|---|---|---|"
    )?;
    for pb in &p.paybacks {
        writeln!(
            sink,
            "| {} | {} | {} |",
            pb.benefit.label(),
            payback_cell(pb),
            break_even_cell(pb)
        )?;
    }
    if let Some((year, amount)) = p.peak_value_deficit {
        writeln!(
            sink,
            "\nThe cumulative value deficit peaks in {year} at {cur} {}.",
            fmt_num(amount, 0)
        )?;
    }
    let (k, pl, d) = (&o.kept.totals, &p.planted.totals, &p.totals_deficit);
    writeln!(
        sink,
        "\n### Totals over {}–{}\n\n| | removed trees kept | plan | deficit (kept − plan) |\n|---|---:|---:|---:|",
        o.start_year, o.end_year
    )?;
    for (label, a, b, c, scale, dec) in [
        (
            "CO2e sequestered, t",
            k.co2e_seq_kg,
            pl.co2e_seq_kg,
            d.co2e_seq_kg,
            0.001,
            2,
        ),
        (
            "rain intercepted, m³",
            k.interception_m3,
            pl.interception_m3,
            d.interception_m3,
            1.0,
            0,
        ),
        (
            "cooling, MWh",
            k.cooling_kwh,
            pl.cooling_kwh,
            d.cooling_kwh,
            0.001,
            1,
        ),
        (
            "money value of the flows",
            k.value,
            pl.value,
            d.value,
            1.0,
            0,
        ),
        (
            "money value discounted",
            k.value_discounted,
            pl.value_discounted,
            d.value_discounted,
            1.0,
            0,
        ),
        (
            "living trees in the last year",
            k.trees_end,
            pl.trees_end,
            d.trees_end,
            1.0,
            1,
        ),
        (
            "carbon stored in the last year, t C",
            k.carbon_end_kg,
            pl.carbon_end_kg,
            d.carbon_end_kg,
            0.001,
            2,
        ),
    ] {
        let label = if label.starts_with("money") {
            format!("{label}, {cur}")
        } else {
            label.to_string()
        };
        writeln!(
            sink,
            "| {label} | {} | {} | {} |",
            fmt_num(a * scale, dec),
            fmt_num(b * scale, dec),
            fmt_num(c * scale, dec)
        )?;
    }

    let idx = report_indices(o.kept.years.len());
    let kb = |i: usize| o.kept.bands.as_ref().and_then(|b| b.get(i).copied());
    let pb = |i: usize| p.planted.bands.as_ref().and_then(|b| b.get(i).copied());
    let mc = o.mode == Mode::MonteCarlo;
    writeln!(
        sink,
        "\n### Year by year (every 5 years{})\n",
        if mc {
            "; mean (P10–P90) of the runs"
        } else {
            ""
        }
    )?;
    writeln!(
        sink,
        "| year | living trees kept | living trees planted | CO2e sequestered kept (kg/yr) | planted (kg/yr) | rain intercepted kept (m³/yr) | planted (m³/yr) | cooling kept (kWh/yr) | planted (kWh/yr) | value kept ({cur}/yr) | planted ({cur}/yr) |\n|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|"
    )?;
    for &i in &idx {
        let (k, q) = (&o.kept.central[i], &p.planted.central[i]);
        let band = |b: Option<FlowBands>, get: fn(&FlowBands) -> Band| b.map(|b| get(&b));
        writeln!(
            sink,
            "| {} | {} | {} | {} | {} | {} | {} | {} | {} | {} | {} |",
            o.kept.years[i],
            cell(k.trees, band(kb(i), |b| b.trees), 1.0, 1),
            cell(q.trees, band(pb(i), |b| b.trees), 1.0, 1),
            cell(k.co2e_seq_kg_yr, band(kb(i), |b| b.co2e_seq_kg_yr), 1.0, 0),
            cell(q.co2e_seq_kg_yr, band(pb(i), |b| b.co2e_seq_kg_yr), 1.0, 0),
            cell(
                k.interception_m3_yr,
                band(kb(i), |b| b.interception_m3_yr),
                1.0,
                1
            ),
            cell(
                q.interception_m3_yr,
                band(pb(i), |b| b.interception_m3_yr),
                1.0,
                1
            ),
            cell(k.cooling_kwh_yr, band(kb(i), |b| b.cooling_kwh_yr), 1.0, 0),
            cell(q.cooling_kwh_yr, band(pb(i), |b| b.cooling_kwh_yr), 1.0, 0),
            cell(k.value, band(kb(i), |b| b.value), 1.0, 0),
            cell(q.value, band(pb(i), |b| b.value), 1.0, 0),
        )?;
    }
    writeln!(
        sink,
        "\n### Cumulative deficit (kept − plan; positive = benefits still owed by the plan{})\n",
        if mc { "; mean (P10–P90)" } else { "" }
    )?;
    writeln!(
        sink,
        "| year | carbon stored gap (t C) | CO2e (t) | rain intercepted (m³) | cooling (MWh) | value ({cur}) | value discounted ({cur}) |\n|---:|---:|---:|---:|---:|---:|---:|"
    )?;
    for &i in &idx {
        let d = &p.deficit[i];
        let b = p.deficit_bands.as_ref().and_then(|b| b.get(i).copied());
        writeln!(
            sink,
            "| {} | {} | {} | {} | {} | {} | {} |",
            d.year,
            cell(d.carbon_gap_kg, b.map(|b| b.carbon_gap_kg), 0.001, 2),
            cell(d.co2e_seq_cum_kg, b.map(|b| b.co2e_seq_cum_kg), 0.001, 2),
            cell(
                d.interception_cum_m3,
                b.map(|b| b.interception_cum_m3),
                1.0,
                0
            ),
            cell(d.cooling_cum_kwh, b.map(|b| b.cooling_cum_kwh), 0.001, 1),
            cell(d.value_cum, b.map(|b| b.value_cum), 1.0, 0),
            cell(
                d.value_discounted_cum,
                b.map(|b| b.value_discounted_cum),
                1.0,
                0
            ),
        )?;
    }
    writeln!(sink)?;
    Ok(())
}

/// Columns of `study run --format csv`.
pub const RUN_COLUMNS: [&str; 18] = [
    "study",
    "plan",
    "population",
    "statistic",
    "year",
    "trees",
    "carbon_kg",
    "co2e_seq_kg_yr",
    "interception_m3_yr",
    "cooling_kwh_yr",
    "value",
    "value_discounted",
    "carbon_gap_kg",
    "co2e_seq_cum_deficit_kg",
    "interception_cum_deficit_m3",
    "cooling_cum_deficit_kwh",
    "value_cum_deficit",
    "value_discounted_cum_deficit",
];

fn num(x: f64) -> String {
    super::benefits::number(x)
}

/// The statistics written per year: `expected`, or `mean`, `p10`, `p50`, `p90`.
fn statistics(mode: Mode) -> &'static [&'static str] {
    match mode {
        Mode::Expected => &["expected"],
        Mode::MonteCarlo => &["mean", "p10", "p50", "p90"],
    }
}

fn pick(b: &Band, statistic: &str) -> f64 {
    match statistic {
        "p10" => b.p10,
        "p50" => b.p50,
        "p90" => b.p90,
        _ => b.mean,
    }
}

fn population_values(pop: &Population, i: usize, statistic: &str) -> Vec<String> {
    match (&pop.bands, statistic) {
        (Some(bands), s) if s != "expected" => bands[i]
            .by_metric()
            .iter()
            .map(|b| num(pick(b, s)))
            .collect(),
        _ => Flows::METRICS
            .iter()
            .map(|(_, get)| num(get(&pop.central[i])))
            .collect(),
    }
}

fn deficit_values(p: &PlanOutcome, i: usize, statistic: &str) -> Vec<String> {
    match (&p.deficit_bands, statistic) {
        (Some(bands), s) if s != "expected" => {
            let b = &bands[i];
            [
                b.carbon_gap_kg,
                b.co2e_seq_cum_kg,
                b.interception_cum_m3,
                b.cooling_cum_kwh,
                b.value_cum,
                b.value_discounted_cum,
            ]
            .iter()
            .map(|band| num(pick(band, s)))
            .collect()
        }
        _ => Deficit::METRICS
            .iter()
            .skip(1) // trees_gap: the trees columns hold both counts
            .map(|(_, get)| num(get(&p.deficit[i])))
            .collect(),
    }
}

fn write_run_csv(sink: &mut dyn Write, o: &StudyOutcome) -> Result<(), CliError> {
    let mut w = csv::Writer::from_writer(sink);
    w.write_record(RUN_COLUMNS).map_err(csv_error)?;
    let study = csv_safe(&o.study).into_owned();
    for statistic in statistics(o.mode) {
        for (i, year) in o.kept.years.iter().enumerate() {
            let mut row = vec![
                study.clone(),
                String::new(),
                "kept".to_string(),
                statistic.to_string(),
                year.to_string(),
            ];
            row.extend(population_values(&o.kept, i, statistic));
            row.extend(std::iter::repeat_n(String::new(), 6));
            w.write_record(&row).map_err(csv_error)?;
        }
    }
    for p in &o.plans {
        let plan = csv_safe(&p.plan.name).into_owned();
        for statistic in statistics(o.mode) {
            for (i, year) in p.planted.years.iter().enumerate() {
                let mut row = vec![
                    study.clone(),
                    plan.clone(),
                    "planted".to_string(),
                    statistic.to_string(),
                    year.to_string(),
                ];
                row.extend(population_values(&p.planted, i, statistic));
                row.extend(deficit_values(p, i, statistic));
                w.write_record(&row).map_err(csv_error)?;
            }
        }
    }
    w.flush()?;
    Ok(())
}

/// Splits `NAME[:PLAN]`: a whole string that names a study means all its plans.
fn split_item(store: &Store, item: &str) -> Result<(String, Option<String>), CliError> {
    if store.study(item)?.is_some() {
        return Ok((item.to_string(), None));
    }
    match item.split_once(':') {
        Some((study, plan)) if !plan.trim().is_empty() => {
            Ok((study.to_string(), Some(plan.to_string())))
        }
        _ => {
            store.require_study(item)?;
            Ok((item.to_string(), None))
        }
    }
}

fn compare(inventory: &Path, args: &CompareArgs) -> Result<(), CliError> {
    let store = open_store(inventory)?;
    let mode: Mode = args.mode.into();
    let mut outcomes: HashMap<String, StudyOutcome> = HashMap::new();
    let mut columns: Vec<(PlanSummary, Vec<Deficit>)> = Vec::new();
    for item in &args.items {
        let (study, plan) = split_item(&store, item)?;
        if !outcomes.contains_key(&study) {
            let (outcome, _) = outcome_of(&store, &study, mode, args.scenario)?;
            outcomes.insert(study.clone(), outcome);
        }
        let Some(outcome) = outcomes.get(&study) else {
            continue;
        };
        let summaries = outcome.summaries(plan.as_deref());
        if summaries.is_empty() {
            let names: Vec<&str> = outcome.plans.iter().map(|p| p.plan.name.as_str()).collect();
            return Err(CliError::Input(format!(
                "'{item}': study '{study}' has {} (plans: {})",
                plan.map_or("no replanting plan".to_string(), |p| format!(
                    "no plan '{p}'"
                )),
                if names.is_empty() {
                    "none".to_string()
                } else {
                    names.join(", ")
                }
            )));
        }
        for summary in summaries {
            let deficit = outcome
                .plans
                .iter()
                .find(|p| p.plan.name == summary.plan)
                .map(|p| p.deficit.clone())
                .unwrap_or_default();
            if !columns
                .iter()
                .any(|(s, _)| s.study == summary.study && s.plan == summary.plan)
            {
                columns.push((summary, deficit));
            }
        }
    }
    if columns.len() < 2 {
        return Err(CliError::Input(
            "compare needs at least two plans in all (give two studies, or STUDY:PLAN twice)"
                .to_string(),
        ));
    }
    with_output(args.out.as_deref(), inventory, |sink| match args.format {
        OutFormat::Csv => write_compare_csv(sink, &columns),
        OutFormat::Json => {
            let items: Vec<_> = columns
                .iter()
                .map(|(s, d)| json!({ "summary": s, "deficit": d }))
                .collect();
            let document = json!({ "mode": mode, "items": items, "caution": CAUTION });
            serde_json::to_writer_pretty(&mut *sink, &document).map_err(anyhow::Error::from)?;
            writeln!(sink)?;
            Ok(())
        }
        OutFormat::Md => write_compare_md(sink, &columns, &outcomes),
    })
}

/// Columns of `study compare --format csv` (payback and break-even years empty when not within the
/// horizon).
pub const COMPARE_COLUMNS: [&str; 25] = [
    "study",
    "plan",
    "mode",
    "start_year",
    "end_year",
    "trees_removed",
    "trees_planted",
    "stored_co2e_kg",
    "released_co2e_kg_10y",
    "appraisal_total",
    "kept_co2e_seq_kg",
    "planted_co2e_seq_kg",
    "kept_value",
    "planted_value",
    "kept_value_discounted",
    "planted_value_discounted",
    "deficit_value_discounted",
    "peak_value_deficit_year",
    "peak_value_deficit",
    "payback_carbon_stored",
    "payback_co2e_sequestered",
    "payback_interception",
    "payback_cooling",
    "payback_value",
    "break_even_value",
];

fn opt_year(y: Option<i32>) -> String {
    y.map(|y| y.to_string()).unwrap_or_default()
}

fn payback_of(s: &PlanSummary, b: Benefit) -> Option<&Payback> {
    s.paybacks.iter().find(|p| p.benefit == b)
}

fn write_compare_csv(
    sink: &mut dyn Write,
    columns: &[(PlanSummary, Vec<Deficit>)],
) -> Result<(), CliError> {
    let mut w = csv::Writer::from_writer(sink);
    w.write_record(COMPARE_COLUMNS).map_err(csv_error)?;
    for (s, _) in columns {
        let mut row = vec![
            csv_safe(&s.study).into_owned(),
            csv_safe(&s.plan).into_owned(),
            s.mode.as_str().to_string(),
            s.start_year.to_string(),
            s.end_year.to_string(),
            s.trees_removed.to_string(),
            s.trees_planted.to_string(),
            num(s.stored_co2e_kg),
            num(s.released_co2e_kg_10y),
            num(s.appraisal_total),
            num(s.kept.co2e_seq_kg),
            num(s.planted.co2e_seq_kg),
            num(s.kept.value),
            num(s.planted.value),
            num(s.kept.value_discounted),
            num(s.planted.value_discounted),
            num(s.deficit.value_discounted),
            opt_year(s.peak_value_deficit.map(|(y, _)| y)),
            s.peak_value_deficit
                .map(|(_, v)| num(v))
                .unwrap_or_default(),
        ];
        for b in Benefit::ALL {
            row.push(opt_year(payback_of(s, b).and_then(|p| p.year)));
        }
        row.push(opt_year(
            payback_of(s, Benefit::Value).and_then(|p| p.break_even_year),
        ));
        w.write_record(&row).map_err(csv_error)?;
    }
    w.flush()?;
    Ok(())
}

fn write_compare_md(
    sink: &mut dyn Write,
    columns: &[(PlanSummary, Vec<Deficit>)],
    outcomes: &HashMap<String, StudyOutcome>,
) -> Result<(), CliError> {
    let currency = outcomes
        .values()
        .next()
        .map_or("USD".to_string(), |o| o.currency.clone());
    writeln!(sink, "# Removal studies compared\n")?;
    let mut header = "| |".to_string();
    let mut rule = "|---|".to_string();
    for (s, _) in columns {
        header.push_str(&format!(" {}: {} |", md_cell(&s.study), md_cell(&s.plan)));
        rule.push_str("---:|");
    }
    writeln!(sink, "{header}\n{rule}")?;
    let row = |label: &str, cells: Vec<String>| -> String {
        format!("| {label} | {} |", cells.join(" | "))
    };
    let each = |f: &dyn Fn(&PlanSummary) -> String| -> Vec<String> {
        columns.iter().map(|(s, _)| f(s)).collect()
    };
    let lines = [
        row(
            "years",
            each(&|s| format!("{}–{}", s.start_year, s.end_year)),
        ),
        row("mode", each(&|s| s.mode.as_str().to_string())),
        row("trees removed", each(&|s| s.trees_removed.to_string())),
        row("trees planted", each(&|s| s.trees_planted.to_string())),
        row(
            "stored CO2e of the removed trees (t)",
            each(&|s| fmt_num(s.stored_co2e_kg / 1000.0, 2)),
        ),
        row(
            "released within 10 years (t CO2e)",
            each(&|s| fmt_num(s.released_co2e_kg_10y / 1000.0, 2)),
        ),
        row(
            &format!("appraised replacement value ({currency})"),
            each(&|s| fmt_num(s.appraisal_total, 0)),
        ),
        row(
            "CO2e sequestered, kept / planted (t)",
            each(&|s| {
                format!(
                    "{} / {}",
                    fmt_num(s.kept.co2e_seq_kg / 1000.0, 1),
                    fmt_num(s.planted.co2e_seq_kg / 1000.0, 1)
                )
            }),
        ),
        row(
            &format!("value discounted, kept / planted ({currency})"),
            each(&|s| {
                format!(
                    "{} / {}",
                    fmt_num(s.kept.value_discounted, 0),
                    fmt_num(s.planted.value_discounted, 0)
                )
            }),
        ),
        row(
            &format!("discounted value deficit ({currency})"),
            each(&|s| fmt_num(s.deficit.value_discounted, 0)),
        ),
        row(
            &format!("peak cumulative value deficit ({currency})"),
            each(&|s| {
                s.peak_value_deficit.map_or("none".to_string(), |(y, v)| {
                    format!("{} in {y}", fmt_num(v, 0))
                })
            }),
        ),
    ];
    for line in lines {
        writeln!(sink, "{line}")?;
    }
    for b in Benefit::ALL {
        writeln!(
            sink,
            "{}",
            row(
                &format!("payback year: {}", b.label()),
                each(&|s| year_text(payback_of(s, b).and_then(|p| p.year)))
            )
        )?;
    }
    writeln!(
        sink,
        "{}",
        row(
            "break-even year: value",
            each(&|s| year_text(payback_of(s, Benefit::Value).and_then(|p| p.break_even_year)))
        )
    )?;

    // The cumulative value deficit curves, at 5-year steps from each column's start.
    writeln!(
        sink,
        "\n## Cumulative value deficit ({currency}; kept − plan, positive = still owed)\n"
    )?;
    let mut indices: Vec<usize> = columns
        .iter()
        .flat_map(|(_, d)| report_indices(d.len()))
        .collect();
    indices.sort_unstable();
    indices.dedup();
    let mut head = "| year from start |".to_string();
    let mut rule = "|---:|".to_string();
    for (s, _) in columns {
        head.push_str(&format!(" {}: {} |", md_cell(&s.study), md_cell(&s.plan)));
        rule.push_str("---:|");
    }
    writeln!(sink, "{head}\n{rule}")?;
    for i in indices {
        let mut line = format!("| {i} |");
        for (_, d) in columns {
            line.push_str(&match d.get(i) {
                Some(d) => format!(" {} ({}) |", fmt_num(d.value_cum, 0), d.year),
                None => " – |".to_string(),
            });
        }
        writeln!(sink, "{line}")?;
    }
    writeln!(
        sink,
        "\nPayback year: the first year the plan's annual benefit (for carbon stored: its stock) reaches that \
         of the removed trees had they been kept; \"not within horizon\" when it never does.\n"
    )?;
    writeln!(sink, "_{CAUTION}_")?;
    Ok(())
}

fn list(inventory: &Path, format: ShowFormat) -> Result<(), CliError> {
    let store = open_store(inventory)?;
    let studies = store.studies()?;
    with_output(None, inventory, |out| {
        match format {
            ShowFormat::Json => {
                serde_json::to_writer_pretty(&mut *out, &studies).map_err(anyhow::Error::from)?;
                writeln!(out)?;
            }
            ShowFormat::Table => {
                if studies.is_empty() {
                    writeln!(
                        out,
                        "no studies yet; create one with `streetwood study new NAME`"
                    )?;
                }
                for s in &studies {
                    writeln!(
                        out,
                        "{:<30} removal {}  {} years  {:>4} trees  {} plan{}",
                        s.name,
                        s.start_year,
                        s.horizon_years,
                        s.trees,
                        s.plans,
                        if s.plans == 1 { "" } else { "s" }
                    )?;
                }
            }
        }
        Ok(())
    })
}

fn show(inventory: &Path, name: &str, format: ShowFormat) -> Result<(), CliError> {
    let store = open_store(inventory)?;
    let study = store.require_study(name)?;
    let trees = store.study_tree_rows(study.id)?;
    let plantings = store.study_plantings(study.id)?;
    with_output(None, inventory, |out| {
        match format {
            ShowFormat::Json => {
                let document = json!({ "study": study, "trees": trees, "plantings": plantings });
                serde_json::to_writer_pretty(&mut *out, &document).map_err(anyhow::Error::from)?;
                writeln!(out)?;
            }
            ShowFormat::Table => {
                writeln!(out, "Study '{}'", study.name)?;
                if let Some(d) = &study.description {
                    writeln!(out, "  {d}")?;
                }
                writeln!(
                    out,
                    "  removal in {}, projected {}–{} ({} years); seed {}, {} Monte Carlo runs; weather {}",
                    study.start_year,
                    study.start_year,
                    study.start_year + study.horizon_years as i32 - 1,
                    study.horizon_years,
                    study.seed,
                    study.runs,
                    study
                        .weather_year
                        .map_or("the latest year held".to_string(), |y| y.to_string())
                )?;
                writeln!(
                    out,
                    "  appraisal limitations: functional {:.2}, external {:.2}; created {}",
                    study.functional_limitation, study.external_limitation, study.created_at
                )?;
                writeln!(out, "\nTrees ({}):", trees.len())?;
                for t in &trees {
                    writeln!(
                        out,
                        "  {:>6}  {:<24} {:<28} {:>6} cm ({})  {}{}{}",
                        t.tree_id,
                        t.species,
                        format!(
                            "{} {}",
                            t.house_number.as_deref().unwrap_or(""),
                            t.street.as_deref().unwrap_or("")
                        )
                        .trim(),
                        t.dbh_cm.map_or("?".to_string(), |d| format!("{d:.1}")),
                        t.measured_on.as_deref().unwrap_or("not measured"),
                        t.selected_by.as_deref().unwrap_or(""),
                        t.line_distance_m
                            .map_or(String::new(), |d| format!(" ({d:.1} m from the line)")),
                        if t.status == "standing" {
                            String::new()
                        } else {
                            format!(" [{}]", t.status)
                        }
                    )?;
                }
                writeln!(out, "\nReplanting plans:")?;
                if plantings.is_empty() {
                    writeln!(out, "  none yet (streetwood study plan …)")?;
                }
                let mut last = "";
                for p in &plantings {
                    if p.plan != last {
                        writeln!(out, "  {}:", p.plan)?;
                        last = &p.plan;
                    }
                    writeln!(
                        out,
                        "    {} × {} at {} cm DBH in {}",
                        p.count, p.species, p.dbh_cm, p.year
                    )?;
                }
            }
        }
        Ok(())
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_and_report_years_read_well() {
        assert_eq!(fmt_num(1234567.891, 2), "1,234,567.89");
        assert_eq!(fmt_num(-1234.4, 0), "-1,234");
        assert_eq!(fmt_num(-0.001, 0), "0");
        assert_eq!(fmt_num(12.0, 1), "12.0");
        assert_eq!(report_indices(12), vec![0, 5, 10, 11]);
        assert_eq!(report_indices(11), vec![0, 5, 10]);
        assert_eq!(crate::study::seed_from_name("a") >> 63, 0);
    }
}
