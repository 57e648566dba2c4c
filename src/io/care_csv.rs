//! Assessments and work orders as CSV (used to load the demo town and for scripted imports):
//! `tree_uid,assessed_on,assessor,level,part,part_size_cm,target,occupancy,likelihood_of_failure,likelihood_of_impact,consequences,mitigation,notes`
//! (one failure mode per row) and `tree_uid,task,priority,status,due_on,done_on,crew,cost,notes`.

use std::io::Read;

use chrono::NaiveDate;

use super::trees_csv::BadRow;
use super::{FileError, RowError, csv_unsafe, parse_number};
use crate::care::risk::{
    Consequences, LikelihoodOfFailure, LikelihoodOfImpact, Occupancy, TreePart,
};

/// One assessed failure mode of one tree.
#[derive(Debug, Clone, PartialEq)]
pub struct AssessmentRow {
    pub tree_uid: String,
    pub assessed_on: NaiveDate,
    pub assessor: Option<String>,
    pub level: u8,
    pub part: TreePart,
    pub part_size_cm: Option<f64>,
    pub target: Option<String>,
    pub occupancy: Occupancy,
    pub likelihood_of_failure: LikelihoodOfFailure,
    pub likelihood_of_impact: LikelihoodOfImpact,
    pub consequences: Consequences,
    pub mitigation: Option<String>,
    pub notes: Option<String>,
}

/// Work order tasks (DESIGN.md data model).
pub const TASKS: [&str; 8] = [
    "prune", "remove", "plant", "stake", "water", "inspect", "stump", "other",
];
/// Work order statuses.
pub const WORK_STATUSES: [&str; 4] = ["open", "scheduled", "done", "cancelled"];

/// One work order of one tree.
#[derive(Debug, Clone, PartialEq)]
pub struct WorkOrderRow {
    pub tree_uid: String,
    pub task: String,
    pub priority: u8,
    pub status: String,
    pub due_on: Option<NaiveDate>,
    pub done_on: Option<NaiveDate>,
    pub crew: Option<String>,
    pub estimated_cost: Option<f64>,
    pub notes: Option<String>,
}

/// Rows read from a file: the good ones with their lines, and the bad ones.
pub type ReadRows<T> = Result<(Vec<(u64, T)>, Vec<BadRow>), FileError>;

struct Cells<'a> {
    headers: &'a [String],
    raw: &'a [String],
    line: u64,
    errors: Vec<RowError>,
}

impl Cells<'_> {
    fn text(&self, name: &str) -> Option<String> {
        let index = self.headers.iter().position(|h| h == name)?;
        let cell = self.raw.get(index)?.trim();
        (!cell.is_empty()).then(|| csv_unsafe(cell).to_string())
    }
    fn fail(&mut self, field: &str, reason: String) {
        self.errors.push(RowError {
            line: self.line,
            field: field.to_string(),
            reason,
        });
    }
    fn required(&mut self, name: &str) -> Option<String> {
        let value = self.text(name);
        if value.is_none() {
            self.fail(name, format!("{name} is required"));
        }
        value
    }
    fn date(&mut self, name: &str, required: bool) -> Option<NaiveDate> {
        let text = if required {
            self.required(name)?
        } else {
            self.text(name)?
        };
        match NaiveDate::parse_from_str(&text, "%Y-%m-%d") {
            Ok(date) => Some(date),
            Err(_) => {
                self.fail(
                    name,
                    format!("'{text}' is not an ISO 8601 date (YYYY-MM-DD)"),
                );
                None
            }
        }
    }
    fn number(&mut self, name: &str) -> Option<f64> {
        let text = self.text(name)?;
        match parse_number(&text) {
            Ok(value) if value >= 0.0 => Some(value),
            Ok(value) => {
                self.fail(name, format!("{value} must not be negative"));
                None
            }
            Err(reason) => {
                self.fail(name, reason);
                None
            }
        }
    }
    fn word<T>(
        &mut self,
        name: &str,
        parse: impl Fn(&str) -> Result<T, crate::model::BadWord>,
    ) -> Option<T> {
        let text = self.required(name)?;
        match parse(&text) {
            Ok(value) => Some(value),
            Err(e) => {
                self.fail(name, e.to_string());
                None
            }
        }
    }
    fn one_of(&mut self, name: &str, allowed: &[&str]) -> Option<String> {
        let text = self.required(name)?.to_ascii_lowercase();
        if allowed.contains(&text.as_str()) {
            Some(text)
        } else {
            self.fail(
                name,
                format!("'{text}' is not one of: {}", allowed.join(" ")),
            );
            None
        }
    }
    fn integer(&mut self, name: &str, low: u8, high: u8) -> Option<u8> {
        let text = self.required(name)?;
        match text.parse::<u8>() {
            Ok(value) if (low..=high).contains(&value) => Some(value),
            _ => {
                self.fail(
                    name,
                    format!("'{text}' must be a whole number from {low} to {high}"),
                );
                None
            }
        }
    }
}

fn read_rows<T>(
    input: impl Read,
    required_headers: &[&str],
    mut build: impl FnMut(&mut Cells<'_>) -> Option<T>,
) -> ReadRows<T> {
    let mut reader = csv::ReaderBuilder::new().flexible(true).from_reader(input);
    let headers: Vec<String> = reader
        .headers()
        .map_err(|e| FileError {
            line: 1,
            reason: e.to_string(),
        })?
        .iter()
        .map(|h| h.trim().trim_start_matches('\u{feff}').to_ascii_lowercase())
        .collect();
    for header in &headers {
        if !required_headers.contains(&header.as_str()) {
            return Err(FileError {
                line: 1,
                reason: format!(
                    "unknown column '{header}'; expected: {}",
                    required_headers.join(",")
                ),
            });
        }
    }
    let mut good = Vec::new();
    let mut bad = Vec::new();
    for result in reader.records() {
        let record = result.map_err(|e| FileError {
            line: e.position().map(|p| p.line()).unwrap_or(0),
            reason: e.to_string(),
        })?;
        let line = record.position().map(|p| p.line()).unwrap_or(0);
        let raw: Vec<String> = record.iter().map(str::to_string).collect();
        let mut cells = Cells {
            headers: &headers,
            raw: &raw,
            line,
            errors: Vec::new(),
        };
        let built = build(&mut cells);
        match (built, cells.errors.is_empty()) {
            (Some(value), true) => good.push((line, value)),
            _ => {
                let errors = cells.errors;
                bad.push(BadRow { line, raw, errors });
            }
        }
    }
    Ok((good, bad))
}

/// Reads assessments (one failure mode per row).
pub fn read_assessments(input: impl Read) -> ReadRows<AssessmentRow> {
    let headers = [
        "tree_uid",
        "assessed_on",
        "assessor",
        "level",
        "part",
        "part_size_cm",
        "target",
        "occupancy",
        "likelihood_of_failure",
        "likelihood_of_impact",
        "consequences",
        "mitigation",
        "notes",
    ];
    read_rows(input, &headers, |c| {
        let tree_uid = c.required("tree_uid");
        let assessed_on = c.date("assessed_on", true);
        let level = c.integer("level", 1, 3);
        let part = c.word("part", TreePart::parse);
        let part_size_cm = c.number("part_size_cm");
        let occupancy = c.word("occupancy", Occupancy::parse);
        let likelihood_of_failure = c.word("likelihood_of_failure", LikelihoodOfFailure::parse);
        let likelihood_of_impact = c.word("likelihood_of_impact", LikelihoodOfImpact::parse);
        let consequences = c.word("consequences", Consequences::parse);
        Some(AssessmentRow {
            tree_uid: tree_uid?,
            assessed_on: assessed_on?,
            assessor: c.text("assessor"),
            level: level?,
            part: part?,
            part_size_cm,
            target: c.text("target"),
            occupancy: occupancy?,
            likelihood_of_failure: likelihood_of_failure?,
            likelihood_of_impact: likelihood_of_impact?,
            consequences: consequences?,
            mitigation: c.text("mitigation"),
            notes: c.text("notes"),
        })
    })
}

/// Reads work orders.
pub fn read_work_orders(input: impl Read) -> ReadRows<WorkOrderRow> {
    let headers = [
        "tree_uid", "task", "priority", "status", "due_on", "done_on", "crew", "cost", "notes",
    ];
    read_rows(input, &headers, |c| {
        let tree_uid = c.required("tree_uid");
        let task = c.one_of("task", &TASKS);
        let priority = c.integer("priority", 1, 4);
        let status = c.one_of("status", &WORK_STATUSES);
        let due_on = c.date("due_on", false);
        let done_on = c.date("done_on", false);
        let estimated_cost = c.number("cost");
        if status.as_deref() == Some("done") && done_on.is_none() {
            c.fail(
                "done_on",
                "a done work order needs its done_on date".to_string(),
            );
        }
        Some(WorkOrderRow {
            tree_uid: tree_uid?,
            task: task?,
            priority: priority?,
            status: status?,
            due_on,
            done_on,
            crew: c.text("crew"),
            estimated_cost,
            notes: c.text("notes"),
        })
    })
}
