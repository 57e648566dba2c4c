//! `streetwood check`: the inventory's health for follow-up — integrity, foreign keys, orphan rows and
//! implausible measurements — as text, JSON or CSV. Exit 0 when clean, 3 when there are findings
//! (1 and 2 keep their meaning: the check could not run / bad input), so a script can tell "healthy"
//! from "needs a look" from "broken" without reading the output.

use std::path::{Path, PathBuf};

use clap::ValueEnum;

use super::{CliError, csv_error, open_store, with_output};
use crate::io::csv_safe;
use crate::store::check::{Finding, FindingKind};

/// Output formats of `check`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum CheckFormat {
    Text,
    Json,
    Csv,
}

/// `streetwood check`.
pub fn check(inventory: &Path, format: CheckFormat, out: Option<&PathBuf>) -> Result<(), CliError> {
    let store = open_store(inventory)?;
    let findings = store.health_check()?;
    with_output(out.map(PathBuf::as_path), inventory, |sink| {
        match format {
            CheckFormat::Json => {
                serde_json::to_writer_pretty(
                    &mut *sink,
                    &serde_json::json!({
                        "file": inventory.display().to_string(),
                        "clean": findings.is_empty(),
                        "findings": findings,
                    }),
                )
                .map_err(anyhow::Error::from)?;
                writeln!(sink)?;
            }
            CheckFormat::Csv => {
                let mut writer = csv::Writer::from_writer(&mut *sink);
                writer
                    .write_record(["kind", "table", "row_id", "tree_id", "tree_uid", "message"])
                    .map_err(csv_error)?;
                for f in &findings {
                    writer.write_record(csv_cells(f)).map_err(csv_error)?;
                }
                writer.flush()?;
            }
            CheckFormat::Text => write_text(sink, inventory, &findings)?,
        }
        Ok(())
    })?;
    if findings.is_empty() {
        eprintln!("{}: no findings", inventory.display());
        Ok(())
    } else {
        Err(CliError::Findings(format!(
            "{}: {} for follow-up",
            inventory.display(),
            count_words(&findings)
        )))
    }
}

fn csv_cells(f: &Finding) -> [String; 6] {
    let number = |n: Option<i64>| n.map(|v| v.to_string()).unwrap_or_default();
    [
        f.kind.as_str().to_string(),
        f.table.clone(),
        number(f.row_id),
        number(f.tree_id),
        csv_safe(f.tree_uid.as_deref().unwrap_or_default()).into_owned(),
        csv_safe(&f.message).into_owned(),
    ]
}

fn write_text(
    sink: &mut dyn std::io::Write,
    inventory: &Path,
    findings: &[Finding],
) -> Result<(), CliError> {
    writeln!(sink, "Check of {}", inventory.display())?;
    let sections = [
        (FindingKind::Integrity, "Integrity (PRAGMA integrity_check)"),
        (FindingKind::ForeignKey, "Foreign keys"),
        (FindingKind::Orphan, "Orphan rows"),
        (
            FindingKind::Implausible,
            "Implausible measurements (check in the field)",
        ),
    ];
    for (kind, title) in sections {
        let of_kind: Vec<&Finding> = findings.iter().filter(|f| f.kind == kind).collect();
        if of_kind.is_empty() {
            writeln!(sink, "{title}: ok")?;
            continue;
        }
        writeln!(sink, "{title}: {}", of_kind.len())?;
        for f in of_kind {
            match (&f.tree_id, &f.tree_uid) {
                (Some(id), Some(uid)) => writeln!(sink, "  tree {id} ({uid}): {}", f.message)?,
                (Some(id), None) => writeln!(sink, "  tree {id}: {}", f.message)?,
                _ => writeln!(sink, "  {}", f.message)?,
            }
        }
    }
    Ok(())
}

fn count_words(findings: &[Finding]) -> String {
    let n = findings.len();
    format!("{n} finding{}", if n == 1 { "" } else { "s" })
}
