//! `streetwood care assess|list|history|cycle`: risk assessments, the watchlist and maintenance-cycle
//! work, over [`crate::care`] (the rules) and [`crate::store`]. Every risk output carries
//! [`crate::care::risk::CAUTION`].

use std::io::Write;
use std::path::{Path, PathBuf};

use chrono::{DateTime, NaiveDate, Utc};
use clap::{Args, Subcommand, ValueEnum};
use serde_json::json;

use super::{CliError, csv_error, open_store, with_output};
use crate::care::InputError;
use crate::care::assessment::{
    self, AssessmentInput, AssessmentLevel, FailureMode, MitigationOption, ProposalEdits,
};
use crate::care::queue::{WatchFilter, watchlist};
use crate::care::risk::{
    CAUTION, Consequences, LikelihoodOfFailure, LikelihoodOfImpact, Occupancy, RiskRating, TreePart,
};
use crate::care::work::{Priority, WorkTask};
use crate::io::csv_safe;
use crate::store::Store;
use crate::store::care::TreeBrief;

/// The audit actor of care commands.
const ACTOR: &str = "care";

const ASSESS_HELP: &str = "\
FAILURE MODES (--mode, one per failure mode, repeat for more):
  comma-separated key=value pairs (ISA Tree Risk Assessment BMP categories, METHODS.md M9):
    part=trunk|branch|roots|crown|whole_tree          (required)
    occupancy=rare|occasional|frequent|constant       (required)
    failure=improbable|possible|probable|imminent     (required; likelihood of failure)
    impact=very_low|low|medium|high                   (required; likelihood of impact)
    consequences=negligible|minor|significant|severe  (required)
    size=CM                                           (diameter of the part, cm)
    target=TEXT                                       (what it would hit)
  Long names work too (likelihood_of_failure, likelihood_of_impact, part_size_cm); words take '-' or
  ' ' for '_'. A comma not followed by key= stays in the value (target=bus stop, north side).

MITIGATION OPTIONS (--mitigation, repeat for more):
    task=prune|remove|inspect|other|…  residual=low|moderate|high|extreme  note=TEXT
  residual is the rating expected once the option is done; it cannot exceed the overall rating.

WORK ORDER PROPOSAL:
  An extreme rating proposes a priority-1 work order, a high rating a priority-2 one, due by the next
  inspection date. Its task is that of the mitigation with the lowest residual rating (without
  mitigations: prune for a branch or the crown, remove for a trunk, roots or the whole tree). Nothing
  is created unless you pass --accept-work; --work-task, --work-priority, --work-due, --work-crew and
  --work-cost change the proposal first.

EXAMPLE:
  streetwood care assess 1234 --level 2 --time-frame 1 --assessor 'K. Lee' \\
    --mode 'part=whole_tree,size=62,target=bus stop,occupancy=constant,failure=imminent,impact=high,consequences=severe' \\
    --mitigation 'task=remove,residual=low,note=remove the tree' --accept-work";

/// `streetwood care …`.
#[derive(Debug, Subcommand)]
pub enum CareCommand {
    /// Record a risk assessment of a tree: failure modes rated by the ISA matrices, the overall rating,
    /// the next inspection, and the work order a high or extreme rating proposes.
    #[command(after_long_help = ASSESS_HELP)]
    Assess(Box<AssessArgs>),
    /// The watchlist: standing trees by their latest risk rating, overdue re-inspections first.
    List(ListArgs),
    /// Every assessment of one tree, newest first (re-assessing keeps the history).
    History {
        /// The tree: its id, uid, or a unique uid prefix (6+ characters).
        tree: String,
        /// Output format.
        #[arg(long, value_enum, default_value = "text")]
        format: TextFormat,
    },
    /// Generate the maintenance-cycle work due on or before a date (routine pruning, young-tree
    /// training, stake removal; METHODS.md M10, lengths in the `cycle_*` settings). Running it again
    /// creates nothing new.
    Cycle {
        /// Generate work due on or before this date (YYYY-MM-DD).
        #[arg(long, value_parser = parse_date, value_name = "DATE")]
        until: NaiveDate,
        /// Show what would be created, create nothing.
        #[arg(long)]
        dry_run: bool,
        /// Output format.
        #[arg(long, value_enum, default_value = "text")]
        format: TextFormat,
    },
}

/// Arguments of `care assess`.
#[derive(Debug, Args)]
pub struct AssessArgs {
    /// The tree: its id, uid, or a unique uid prefix (6+ characters).
    pub tree: String,
    /// A failure mode: `part=…,occupancy=…,failure=…,impact=…,consequences=…[,size=CM][,target=TEXT]`
    /// (repeat for more; see below).
    #[arg(long = "mode", value_name = "SPEC", required = true)]
    pub modes: Vec<String>,
    /// A mitigation option: `task=…,residual=…[,note=TEXT]` (repeat for more).
    #[arg(long = "mitigation", value_name = "SPEC")]
    pub mitigations: Vec<String>,
    /// Assessment level: 1 limited visual, 2 basic, 3 advanced.
    #[arg(long, default_value_t = 2)]
    pub level: i64,
    /// The time frame the assessment speaks for, years.
    #[arg(long, value_name = "YEARS")]
    pub time_frame: Option<f64>,
    /// The date of the assessment (default: today).
    #[arg(long, value_parser = parse_date, value_name = "DATE")]
    pub on: Option<NaiveDate>,
    /// Who assessed the tree.
    #[arg(long)]
    pub assessor: Option<String>,
    /// Notes on the assessment.
    #[arg(long)]
    pub notes: Option<String>,
    /// Create the proposed work order (with any --work-* changes).
    #[arg(long)]
    pub accept_work: bool,
    /// Change the proposed order's task.
    #[arg(long, value_parser = parse_task, value_name = "TASK")]
    pub work_task: Option<WorkTask>,
    /// Change the proposed order's priority (1 urgent … 4 routine).
    #[arg(long, value_name = "1-4")]
    pub work_priority: Option<i64>,
    /// Change the proposed order's due date.
    #[arg(long, value_parser = parse_date, value_name = "DATE")]
    pub work_due: Option<NaiveDate>,
    /// Crew for the proposed order.
    #[arg(long, value_name = "CREW")]
    pub work_crew: Option<String>,
    /// Estimated cost of the proposed order.
    #[arg(long, value_name = "AMOUNT", allow_hyphen_values = true)]
    pub work_cost: Option<f64>,
    /// Today's date (default: the clock), for checks such as "not in the future".
    #[arg(long, value_parser = parse_date, value_name = "DATE")]
    pub today: Option<NaiveDate>,
    /// Output format.
    #[arg(long, value_enum, default_value = "text")]
    pub format: TextFormat,
}

/// Arguments of `care list`.
#[derive(Debug, Args)]
pub struct ListArgs {
    /// Only trees whose re-inspection is overdue (next inspection date before today).
    #[arg(long)]
    pub overdue: bool,
    /// Only trees with this rating (repeat for several).
    #[arg(long, value_parser = parse_rating, value_name = "RATING")]
    pub rating: Vec<RiskRating>,
    /// Only trees with this rating or higher.
    #[arg(long, value_parser = parse_rating, value_name = "RATING")]
    pub min_rating: Option<RiskRating>,
    /// Only trees on this street (any case).
    #[arg(long)]
    pub street: Option<String>,
    /// Only trees in this zone (any case).
    #[arg(long)]
    pub zone: Option<String>,
    /// The date "overdue" is measured against (default: today by the clock).
    #[arg(long, value_parser = parse_date, value_name = "DATE")]
    pub today: Option<NaiveDate>,
    /// Output format.
    #[arg(long, value_enum, default_value = "table")]
    pub format: ListFormat,
    /// Output file (default: standard output).
    #[arg(long, value_name = "FILE")]
    pub out: Option<PathBuf>,
}

/// Output formats of lists.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ListFormat {
    Table,
    Csv,
    Json,
}

/// Output formats of single records.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum TextFormat {
    Text,
    Json,
}

/// Runs a `care` subcommand.
pub fn run(inventory: &Path, command: &CareCommand, now: DateTime<Utc>) -> Result<(), CliError> {
    match command {
        CareCommand::Assess(args) => assess(inventory, args, now),
        CareCommand::List(args) => list(inventory, args, now),
        CareCommand::History { tree, format } => history(inventory, tree, *format),
        CareCommand::Cycle {
            until,
            dry_run,
            format,
        } => cycle(inventory, *until, *dry_run, *format, now),
    }
}

/// Today's date: the one given, else the clock's local date (the clock is read only here, at the edge).
pub fn today(given: Option<NaiveDate>, now: DateTime<Utc>) -> NaiveDate {
    given.unwrap_or_else(|| now.with_timezone(&chrono::Local).date_naive())
}

/// Parses an ISO 8601 date (clap value parser).
pub fn parse_date(text: &str) -> Result<NaiveDate, String> {
    NaiveDate::parse_from_str(text.trim(), "%Y-%m-%d")
        .map_err(|_| format!("'{text}' is not an ISO 8601 date (YYYY-MM-DD)"))
}

/// Parses a risk rating word (clap value parser).
pub fn parse_rating(text: &str) -> Result<RiskRating, String> {
    RiskRating::parse(text).map_err(|e| e.to_string())
}

/// Parses a work task word (clap value parser).
pub fn parse_task(text: &str) -> Result<WorkTask, String> {
    WorkTask::parse(text).map_err(|e| e.to_string())
}

/// A care rule's complaint as bad input (exit 2), prefixed with where it came from.
pub fn input(context: &str, error: InputError) -> CliError {
    if context.is_empty() {
        CliError::Input(error.to_string())
    } else {
        CliError::Input(format!("{context}: {error}"))
    }
}

/// Finds a tree by id, uid or unique uid prefix, or says how to name one.
pub fn find_tree(store: &Store, reference: &str) -> Result<TreeBrief, CliError> {
    let id = store.find_tree(reference)?.ok_or_else(|| {
        CliError::Input(format!(
            "tree: no tree '{reference}' (give its id, uid or a unique uid prefix of 6+ characters)"
        ))
    })?;
    store
        .tree_brief(id)?
        .ok_or_else(|| CliError::Input(format!("tree: no tree with id {id}")))
}

/// Splits `key=value,key=value` into pairs. A comma not followed by `key=` stays in the value, so
/// free text may hold commas.
pub fn split_spec(spec: &str) -> Result<Vec<(String, String)>, String> {
    let mut pairs: Vec<(String, String)> = Vec::new();
    for piece in spec.split(',') {
        match piece.split_once('=') {
            Some((key, value))
                if !key.trim().is_empty()
                    && key
                        .trim()
                        .chars()
                        .all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-') =>
            {
                let key = key.trim().to_ascii_lowercase().replace('-', "_");
                if pairs.iter().any(|(k, _)| *k == key) {
                    return Err(format!("'{key}' is given twice"));
                }
                pairs.push((key, value.trim().to_string()));
            }
            _ => match pairs.last_mut() {
                Some((_, value)) => {
                    value.push(',');
                    value.push_str(piece);
                }
                None if piece.trim().is_empty() => {}
                None => return Err(format!("'{}' is not key=value", piece.trim())),
            },
        }
    }
    for (_, value) in &mut pairs {
        *value = value.trim().to_string();
    }
    Ok(pairs)
}

fn spec_error(flag: &str, index: usize, reason: impl std::fmt::Display) -> CliError {
    CliError::Input(format!("--{flag} {index}: {reason}"))
}

fn take<'a>(pairs: &'a [(String, String)], names: &[&str]) -> Option<&'a str> {
    pairs
        .iter()
        .find(|(k, _)| names.contains(&k.as_str()))
        .map(|(_, v)| v.as_str())
        .filter(|v| !v.is_empty())
}

/// Reads one `--mode` spec (the `index`-th, from 1, for messages).
pub fn parse_mode(spec: &str, index: usize) -> Result<FailureMode, CliError> {
    const KEYS: [(&str, &[&str]); 7] = [
        ("part", &["part"]),
        ("size", &["size", "size_cm", "part_size_cm"]),
        ("target", &["target"]),
        ("occupancy", &["occupancy"]),
        ("failure", &["failure", "likelihood_of_failure", "lof"]),
        ("impact", &["impact", "likelihood_of_impact", "loi"]),
        ("consequences", &["consequences"]),
    ];
    let pairs = split_spec(spec).map_err(|e| spec_error("mode", index, e))?;
    for (key, _) in &pairs {
        if !KEYS.iter().any(|(_, names)| names.contains(&key.as_str())) {
            return Err(spec_error(
                "mode",
                index,
                format!(
                    "unknown key '{key}'; keys: {}",
                    KEYS.iter().map(|(k, _)| *k).collect::<Vec<_>>().join(", ")
                ),
            ));
        }
    }
    fn word<T>(
        pairs: &[(String, String)],
        index: usize,
        (name, names): (&str, &[&str]),
        parse: impl Fn(&str) -> Result<T, crate::model::BadWord>,
    ) -> Result<T, CliError> {
        let text = take(pairs, names)
            .ok_or_else(|| spec_error("mode", index, format!("{name} is required")))?;
        parse(text).map_err(|e| spec_error("mode", index, format!("{name}: {e}")))
    }
    let part_size_cm = match take(&pairs, KEYS[1].1) {
        Some(text) => Some(
            crate::io::parse_number(text)
                .map_err(|e| spec_error("mode", index, format!("size: {e}")))?,
        ),
        None => None,
    };
    Ok(FailureMode {
        part: word(&pairs, index, KEYS[0], TreePart::parse)?,
        part_size_cm,
        target: take(&pairs, KEYS[2].1).map(str::to_string),
        occupancy: word(&pairs, index, KEYS[3], Occupancy::parse)?,
        likelihood_of_failure: word(&pairs, index, KEYS[4], LikelihoodOfFailure::parse)?,
        likelihood_of_impact: word(&pairs, index, KEYS[5], LikelihoodOfImpact::parse)?,
        consequences: word(&pairs, index, KEYS[6], Consequences::parse)?,
    })
}

/// Reads one `--mitigation` spec.
pub fn parse_mitigation(spec: &str, index: usize) -> Result<MitigationOption, CliError> {
    let pairs = split_spec(spec).map_err(|e| spec_error("mitigation", index, e))?;
    let known = ["task", "residual", "residual_rating", "note", "description"];
    if let Some((key, _)) = pairs.iter().find(|(k, _)| !known.contains(&k.as_str())) {
        return Err(spec_error(
            "mitigation",
            index,
            format!("unknown key '{key}'; keys: task, residual, note"),
        ));
    }
    let task = take(&pairs, &["task"])
        .ok_or_else(|| spec_error("mitigation", index, "task is required"))?;
    let residual = take(&pairs, &["residual", "residual_rating"])
        .ok_or_else(|| spec_error("mitigation", index, "residual is required"))?;
    Ok(MitigationOption {
        task: WorkTask::parse(task)
            .map_err(|e| spec_error("mitigation", index, format!("task: {e}")))?,
        description: take(&pairs, &["note", "description"]).map(str::to_string),
        residual_rating: RiskRating::parse(residual)
            .map_err(|e| spec_error("mitigation", index, format!("residual: {e}")))?,
    })
}

fn assess(inventory: &Path, args: &AssessArgs, now: DateTime<Utc>) -> Result<(), CliError> {
    let today = today(args.today, now);
    let mut store = open_store(inventory)?;
    let tree = find_tree(&store, &args.tree)?;
    assessment::check_tree(tree.status).map_err(|e| input("", e))?;
    let modes = args
        .modes
        .iter()
        .enumerate()
        .map(|(i, spec)| parse_mode(spec, i + 1))
        .collect::<Result<Vec<_>, _>>()?;
    let mitigations = args
        .mitigations
        .iter()
        .enumerate()
        .map(|(i, spec)| parse_mitigation(spec, i + 1))
        .collect::<Result<Vec<_>, _>>()?;
    let level = AssessmentLevel::new(args.level).map_err(|e| input("", e))?;
    let intervals = store.reinspection_intervals()?;
    let evaluated = assessment::evaluate(
        AssessmentInput {
            assessed_on: args.on.unwrap_or(today),
            assessor: args.assessor.clone(),
            level,
            time_frame_years: args.time_frame,
            modes,
            mitigations,
            notes: args.notes.clone(),
        },
        &intervals,
        today,
    )
    .map_err(|e| input("", e))?;
    let edits = ProposalEdits {
        task: args.work_task,
        priority: args
            .work_priority
            .map(Priority::new)
            .transpose()
            .map_err(|e| input("work", e))?,
        due_on: args.work_due,
        crew: args.work_crew.clone(),
        estimated_cost: crate::care::check_cost("work cost", args.work_cost)
            .map_err(|e| input("", e))?,
    };
    let proposal = assessment::propose_work(&evaluated);
    let order = proposal
        .as_ref()
        .map(|p| assessment::order_from_proposal(tree.id, &evaluated, p, &edits));
    if let Some(order) = &order {
        crate::care::work::task_allowed(order.task, tree.status).map_err(|e| input("work", e))?;
    }
    let to_create = match (&order, args.accept_work) {
        (Some(order), true) => Some(order),
        (None, true) => {
            return Err(CliError::Input(format!(
                "accept-work: the overall rating is {}, which proposes no work order; store the assessment without --accept-work and add work with `streetwood work add {} --task TASK --priority N --assessment ID`",
                evaluated.overall, tree.id
            )));
        }
        (_, false) => None,
    };
    let recorded = store.record_assessment(tree.id, &evaluated, to_create, ACTOR, now)?;
    let months_key = crate::settings::reinspect_key(evaluated.overall);
    with_output(None, inventory, |out| match args.format {
        TextFormat::Json => {
            let document = json!({
                "assessment_id": recorded.assessment_id,
                "tree": tree,
                "assessment": evaluated,
                "proposal": proposal,
                "proposed_order": order,
                "work_order_id": recorded.work_order_id,
                "caution": CAUTION,
            });
            serde_json::to_writer_pretty(&mut *out, &document).map_err(anyhow::Error::from)?;
            writeln!(out)?;
            Ok(())
        }
        TextFormat::Text => {
            writeln!(
                out,
                "Assessment {} of tree {} ({}, {}, uid {}) on {}: level {} ({}){}{}",
                recorded.assessment_id,
                tree.id,
                tree.species,
                tree.address(),
                tree.uid,
                evaluated.assessed_on,
                evaluated.level.number(),
                evaluated.level.name(),
                evaluated
                    .assessor
                    .as_deref()
                    .map(|a| format!(", by {a}"))
                    .unwrap_or_default(),
                evaluated
                    .time_frame_years
                    .map(|y| format!(", time frame {y} year{}", if y == 1.0 { "" } else { "s" }))
                    .unwrap_or_default(),
            )?;
            writeln!(out)?;
            let rows: Vec<Vec<String>> = evaluated
                .modes
                .iter()
                .enumerate()
                .map(|(i, m)| {
                    vec![
                        (i + 1).to_string(),
                        m.mode.part.to_string(),
                        m.mode
                            .part_size_cm
                            .map(|s| format!("{s} cm"))
                            .unwrap_or_default(),
                        m.mode.target.clone().unwrap_or_default(),
                        m.mode.occupancy.to_string(),
                        m.mode.likelihood_of_failure.to_string(),
                        m.mode.likelihood_of_impact.to_string(),
                        m.likelihood.to_string(),
                        m.mode.consequences.to_string(),
                        m.rating.to_string(),
                    ]
                })
                .collect();
            write_table(
                out,
                &[
                    "mode",
                    "part",
                    "size",
                    "target",
                    "occupancy",
                    "failure",
                    "impact",
                    "failure+impact",
                    "consequences",
                    "rating",
                ],
                &rows,
            )?;
            writeln!(
                out,
                "\nOverall rating: {} (the highest of {} failure mode{}). Next inspection due {} ({months_key} = {}).",
                evaluated.overall,
                evaluated.modes.len(),
                if evaluated.modes.len() == 1 { "" } else { "s" },
                evaluated.next_due_on,
                evaluated.reinspect_months
            )?;
            if !evaluated.mitigations.is_empty() {
                writeln!(out, "\nMitigation options:")?;
                for (i, m) in evaluated.mitigations.iter().enumerate() {
                    writeln!(
                        out,
                        "  {}. {}{} → residual rating {}",
                        i + 1,
                        m.task,
                        m.description
                            .as_deref()
                            .map(|d| format!(" ({d})"))
                            .unwrap_or_default(),
                        m.residual_rating
                    )?;
                }
            }
            match (&proposal, &order) {
                (Some(p), Some(o)) => {
                    writeln!(
                        out,
                        "\nProposed work order: {}, priority {} ({}), due {}{}{} — {}.",
                        o.task,
                        o.priority,
                        o.priority.label(),
                        o.due_on.map(|d| d.to_string()).unwrap_or_default(),
                        o.crew
                            .as_deref()
                            .map(|c| format!(", crew {c}"))
                            .unwrap_or_default(),
                        o.estimated_cost
                            .map(|c| format!(", estimated {c:.2}"))
                            .unwrap_or_default(),
                        p.reason
                    )?;
                    match recorded.work_order_id {
                        Some(id) => writeln!(
                            out,
                            "Created work order {id} (schedule it with `streetwood work schedule {id} --on DATE --crew NAME`)."
                        )?,
                        None => writeln!(
                            out,
                            "Not created: add --accept-work to create it (change it first with --work-task, --work-priority, --work-due, --work-crew, --work-cost)."
                        )?,
                    }
                }
                _ => writeln!(
                    out,
                    "\nNo work order proposed at a {} rating.",
                    evaluated.overall
                )?,
            }
            writeln!(out, "\n{CAUTION}")?;
            Ok(())
        }
    })
}

/// The CSV columns of `care list`.
pub const WATCHLIST_COLUMNS: [&str; 15] = [
    "tree_id",
    "uid",
    "species",
    "street",
    "house_number",
    "zone",
    "rating",
    "assessed_on",
    "assessment_id",
    "level",
    "assessor",
    "next_due_on",
    "overdue_days",
    "pending_work",
    "caution",
];

fn list(inventory: &Path, args: &ListArgs, now: DateTime<Utc>) -> Result<(), CliError> {
    let today = today(args.today, now);
    let store = open_store(inventory)?;
    let filter = WatchFilter {
        overdue_only: args.overdue,
        ratings: args.rating.clone(),
        min_rating: args.min_rating,
        street: args.street.clone(),
        zone: args.zone.clone(),
    };
    let list = watchlist(store.watch_items()?, &filter, today);
    let summary = format!(
        "{} tree{} on the watchlist, {} with an overdue re-inspection as of {today}; {}",
        list.entries.len(),
        if list.entries.len() == 1 { "" } else { "s" },
        list.overdue,
        list.by_rating
            .iter()
            .rev()
            .map(|(r, n)| format!("{r} {n}"))
            .collect::<Vec<_>>()
            .join(", ")
    );
    let text = |t: &Option<String>| t.clone().unwrap_or_default();
    let date = |d: Option<NaiveDate>| d.map(|d| d.to_string()).unwrap_or_default();
    with_output(args.out.as_deref(), inventory, |out| match args.format {
        ListFormat::Csv => {
            eprintln!("{summary}");
            let mut writer = csv::Writer::from_writer(out);
            writer.write_record(WATCHLIST_COLUMNS).map_err(csv_error)?;
            for e in &list.entries {
                let i = &e.item;
                writer
                    .write_record([
                        i.tree_id.to_string(),
                        csv_safe(&i.uid).into_owned(),
                        csv_safe(&i.species).into_owned(),
                        csv_safe(&text(&i.street)).into_owned(),
                        csv_safe(&text(&i.house_number)).into_owned(),
                        csv_safe(&text(&i.zone)).into_owned(),
                        i.rating.to_string(),
                        i.assessed_on.to_string(),
                        i.assessment_id.to_string(),
                        i.level.to_string(),
                        csv_safe(&text(&i.assessor)).into_owned(),
                        date(i.next_due_on),
                        e.overdue_days.map(|d| d.to_string()).unwrap_or_default(),
                        i.pending_work.to_string(),
                        CAUTION.to_string(),
                    ])
                    .map_err(csv_error)?;
            }
            writer.flush()?;
            Ok(())
        }
        ListFormat::Json => {
            let by_rating: serde_json::Map<String, serde_json::Value> = list
                .by_rating
                .iter()
                .map(|(r, n)| (r.to_string(), json!(n)))
                .collect();
            let document = json!({
                "today": today,
                "count": list.entries.len(),
                "overdue": list.overdue,
                "by_rating": by_rating,
                "trees": list.entries,
                "caution": CAUTION,
            });
            serde_json::to_writer_pretty(&mut *out, &document).map_err(anyhow::Error::from)?;
            writeln!(out)?;
            Ok(())
        }
        ListFormat::Table => {
            let rows: Vec<Vec<String>> = list
                .entries
                .iter()
                .map(|e| {
                    let i = &e.item;
                    vec![
                        i.tree_id.to_string(),
                        short_uid(&i.uid),
                        i.species.clone(),
                        address(&i.house_number, &i.street),
                        text(&i.zone),
                        i.rating.to_string(),
                        i.assessed_on.to_string(),
                        date(i.next_due_on),
                        e.overdue_days
                            .map(|d| format!("{d} days"))
                            .unwrap_or_default(),
                        i.pending_work.to_string(),
                    ]
                })
                .collect();
            write_table(
                out,
                &[
                    "tree",
                    "uid",
                    "species",
                    "address",
                    "zone",
                    "rating",
                    "assessed",
                    "next due",
                    "overdue",
                    "open work",
                ],
                &rows,
            )?;
            writeln!(out, "\n{summary}.\n{CAUTION}")?;
            Ok(())
        }
    })
}

fn history(inventory: &Path, reference: &str, format: TextFormat) -> Result<(), CliError> {
    let store = open_store(inventory)?;
    let tree = find_tree(&store, reference)?;
    let assessments = store.assessments_of_tree(tree.id)?;
    with_output(None, inventory, |out| match format {
        TextFormat::Json => {
            let document = json!({
                "tree": tree,
                "assessments": assessments,
                "caution": CAUTION,
            });
            serde_json::to_writer_pretty(&mut *out, &document).map_err(anyhow::Error::from)?;
            writeln!(out)?;
            Ok(())
        }
        TextFormat::Text => {
            writeln!(
                out,
                "Tree {} ({}, {}, uid {}), {}{}: {} assessment{}, newest first",
                tree.id,
                tree.species,
                tree.address(),
                tree.uid,
                tree.status,
                tree.removed_on
                    .map(|d| format!(" on {d}"))
                    .unwrap_or_default(),
                assessments.len(),
                if assessments.len() == 1 { "" } else { "s" }
            )?;
            for a in &assessments {
                writeln!(
                    out,
                    "\nAssessment {} on {}: {} (level {}{}), next inspection {}{}",
                    a.id,
                    a.assessed_on,
                    a.rating,
                    a.level,
                    a.assessor
                        .as_deref()
                        .map(|s| format!(", by {s}"))
                        .unwrap_or_default(),
                    a.next_due_on
                        .map(|d| d.to_string())
                        .unwrap_or_else(|| "not set".to_string()),
                    if a.work_order_ids.is_empty() {
                        String::new()
                    } else {
                        format!(
                            "; work orders {}",
                            a.work_order_ids
                                .iter()
                                .map(|i| i.to_string())
                                .collect::<Vec<_>>()
                                .join(", ")
                        )
                    }
                )?;
                for m in &a.modes {
                    writeln!(
                        out,
                        "  {}{}{}: {} occupancy, failure {}, impact {}, consequences {} → {}{}",
                        m.part,
                        m.part_size_cm
                            .map(|s| format!(" {s} cm"))
                            .unwrap_or_default(),
                        m.target
                            .as_deref()
                            .map(|t| format!(" over {t}"))
                            .unwrap_or_default(),
                        m.occupancy,
                        m.likelihood_of_failure,
                        m.likelihood_of_impact,
                        m.consequences,
                        m.rating,
                        m.mitigation
                            .as_deref()
                            .map(|t| format!(" (mitigation: {t})"))
                            .unwrap_or_default(),
                    )?;
                }
                for (i, m) in a.mitigations.iter().enumerate() {
                    writeln!(
                        out,
                        "  mitigation {}: {}{} → residual {}",
                        i + 1,
                        m.task,
                        m.description
                            .as_deref()
                            .map(|d| format!(" ({d})"))
                            .unwrap_or_default(),
                        m.residual_rating
                    )?;
                }
                if let Some(notes) = &a.notes {
                    writeln!(out, "  notes: {notes}")?;
                }
            }
            writeln!(out, "\n{CAUTION}")?;
            Ok(())
        }
    })
}

fn cycle(
    inventory: &Path,
    until: NaiveDate,
    dry_run: bool,
    format: TextFormat,
    now: DateTime<Utc>,
) -> Result<(), CliError> {
    let mut store = open_store(inventory)?;
    let rules = store.cycle_rules()?;
    let generated = store.generate_cycle_work(until, dry_run, ACTOR, now)?;
    let count = |kind: crate::care::cycles::CycleKind| {
        generated.iter().filter(|g| g.work.kind == kind).count()
    };
    let verb = if dry_run { "would create" } else { "created" };
    let summary = format!(
        "{verb} {} cycle work order{} due on or before {until}: {}",
        generated.len(),
        if generated.len() == 1 { "" } else { "s" },
        crate::care::cycles::CycleKind::ALL
            .iter()
            .map(|k| format!("{k} {}", count(*k)))
            .collect::<Vec<_>>()
            .join(", ")
    );
    with_output(None, inventory, |out| match format {
        TextFormat::Json => {
            let document = json!({
                "until": until,
                "dry_run": dry_run,
                "rules": rules,
                "count": generated.len(),
                "orders": generated,
            });
            serde_json::to_writer_pretty(&mut *out, &document).map_err(anyhow::Error::from)?;
            writeln!(out)?;
            Ok(())
        }
        TextFormat::Text => {
            let rows: Vec<Vec<String>> = generated
                .iter()
                .map(|g| {
                    vec![
                        g.order_id.map(|i| i.to_string()).unwrap_or_default(),
                        g.work.tree_id.to_string(),
                        g.work.kind.to_string(),
                        g.work.task.to_string(),
                        g.work.priority.to_string(),
                        g.work.due_on.to_string(),
                        g.work.notes.clone(),
                    ]
                })
                .collect();
            if !rows.is_empty() {
                write_table(
                    out,
                    &["order", "tree", "cycle", "task", "priority", "due", "why"],
                    &rows,
                )?;
                writeln!(out)?;
            }
            writeln!(
                out,
                "{summary}.\nCycles: routine pruning every {} years, young-tree training every {} years below {} cm DBH, stakes out {} months after planting (settings cycle_*; METHODS.md M10).",
                rules.prune_years,
                rules.training_years,
                rules.training_max_dbh_cm,
                rules.stake_removal_months
            )?;
            Ok(())
        }
    })
}

/// The first 8 characters of a uid, for tables.
pub fn short_uid(uid: &str) -> String {
    uid.chars().take(8).collect()
}

/// "12 Foundry Street", the street alone, or empty.
pub fn address(house_number: &Option<String>, street: &Option<String>) -> String {
    match (house_number, street) {
        (Some(n), Some(s)) => format!("{n} {s}"),
        (None, Some(s)) => s.clone(),
        _ => String::new(),
    }
}

/// Writes a plain text table: a header, a rule, and left-aligned columns as wide as their widest cell.
pub fn write_table(
    out: &mut dyn Write,
    headers: &[&str],
    rows: &[Vec<String>],
) -> Result<(), CliError> {
    let clean = |s: &str| s.replace(['\n', '\r', '\t'], " ");
    let mut widths: Vec<usize> = headers.iter().map(|h| h.chars().count()).collect();
    for row in rows {
        for (w, cell) in widths.iter_mut().zip(row) {
            *w = (*w).max(clean(cell).chars().count());
        }
    }
    let line = |cells: Vec<String>| -> String {
        let mut text = String::new();
        for (i, (cell, w)) in cells.iter().zip(&widths).enumerate() {
            if i > 0 {
                text.push_str("  ");
            }
            text.push_str(cell);
            if i + 1 < cells.len() {
                text.push_str(&" ".repeat(w.saturating_sub(cell.chars().count())));
            }
        }
        text.trim_end().to_string()
    };
    writeln!(
        out,
        "{}",
        line(headers.iter().map(|h| h.to_string()).collect())
    )?;
    writeln!(
        out,
        "{}",
        line(widths.iter().map(|w| "-".repeat(*w)).collect())
    )?;
    for row in rows {
        writeln!(out, "{}", line(row.iter().map(|c| clean(c)).collect()))?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn specs_split_on_commas_before_keys_only() {
        assert_eq!(
            split_spec("part=branch, target=bus stop, north side ,size=30").expect("valid"),
            vec![
                ("part".to_string(), "branch".to_string()),
                ("target".to_string(), "bus stop, north side".to_string()),
                ("size".to_string(), "30".to_string()),
            ]
        );
        assert!(split_spec("part=branch,part=trunk").is_err());
        assert!(split_spec("branch").is_err());
    }

    #[test]
    fn a_mode_spec_reads_every_category() {
        let mode = parse_mode(
            "part=whole tree,size=62,target=bus stop,occupancy=constant,failure=imminent,impact=high,consequences=severe",
            1,
        )
        .expect("valid");
        assert_eq!(mode.part, TreePart::WholeTree);
        assert_eq!(mode.part_size_cm, Some(62.0));
        assert_eq!(mode.target.as_deref(), Some("bus stop"));
        assert_eq!(mode.likelihood_of_impact, LikelihoodOfImpact::High);
        let long = parse_mode(
            "part=branch,occupancy=rare,likelihood_of_failure=possible,likelihood_of_impact=very-low,consequences=minor",
            2,
        )
        .expect("long names");
        assert_eq!(long.likelihood_of_impact, LikelihoodOfImpact::VeryLow);
        let missing = parse_mode("part=branch,occupancy=rare,failure=possible,impact=low", 2)
            .expect_err("no consequences");
        assert_eq!(missing.to_string(), "--mode 2: consequences is required");
        let bad = parse_mode(
            "part=branch,occupancy=rare,failure=likely,impact=low,consequences=minor",
            1,
        )
        .expect_err("bad word");
        assert!(
            bad.to_string()
                .starts_with("--mode 1: failure: 'likely' is not one of: improbable possible"),
            "{bad}"
        );
        let unknown = parse_mode("part=branch,colour=red", 1).expect_err("unknown key");
        assert!(unknown.to_string().contains("unknown key 'colour'"));
        let size = parse_mode(
            "part=branch,size=big,occupancy=rare,failure=possible,impact=low,consequences=minor",
            1,
        )
        .expect_err("size");
        assert!(size.to_string().starts_with("--mode 1: size:"), "{size}");
    }

    #[test]
    fn a_mitigation_spec_needs_task_and_residual() {
        let m = parse_mitigation("task=prune,residual=moderate,note=reduce, then cable", 1)
            .expect("valid");
        assert_eq!(m.task, WorkTask::Prune);
        assert_eq!(m.residual_rating, RiskRating::Moderate);
        assert_eq!(m.description.as_deref(), Some("reduce, then cable"));
        assert!(parse_mitigation("task=prune", 1).is_err());
        assert!(parse_mitigation("task=chop,residual=low", 1).is_err());
    }

    #[test]
    fn tables_align_columns() {
        let mut out = Vec::new();
        write_table(
            &mut out,
            &["a", "bb"],
            &[vec!["xyz".to_string(), "1".to_string()]],
        )
        .expect("write");
        assert_eq!(
            String::from_utf8(out).expect("utf-8"),
            "a    bb\n---  --\nxyz  1\n"
        );
    }
}
