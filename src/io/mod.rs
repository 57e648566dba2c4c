//! Exchange formats: parsers and writers that return rows and row-level errors. Nothing here touches
//! the store.

pub mod care_csv;
pub mod charts;
pub mod geojson_out;
pub mod report_html;
pub mod species_lookup;
pub mod trees_csv;
pub mod trees_geojson;
pub mod weather_csv;
pub mod year_report;
pub mod zones_geojson;

use std::fmt;

/// A problem with one field of one row of an input file.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct RowError {
    /// 1-based line of the file where the row starts (the header is line 1).
    pub line: u64,
    /// The field (column name as the file spells it).
    pub field: String,
    pub reason: String,
}

impl fmt::Display for RowError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}: {}: {}", self.line, self.field, self.reason)
    }
}

/// A problem with a whole file (unreadable, bad header) rather than with a row.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("line {line}: {reason}")]
pub struct FileError {
    pub line: u64,
    pub reason: String,
}

/// Writes stems as the exchange format does: `22;18;9`.
pub fn format_stems(stems_cm: &[f64]) -> String {
    stems_cm
        .iter()
        .map(|d| d.to_string())
        .collect::<Vec<_>>()
        .join(";")
}

/// Reads `22;18;9` (blanks around values allowed) into stem diameters; every value must be a finite
/// number greater than 0.
pub fn parse_stems(text: &str) -> Result<Vec<f64>, String> {
    let mut stems = Vec::new();
    for part in text.split(';') {
        let value =
            parse_number(part).map_err(|reason| format!("stem '{}': {reason}", part.trim()))?;
        if value <= 0.0 {
            return Err(format!("stem '{}' must be greater than 0", part.trim()));
        }
        stems.push(value);
    }
    if stems.is_empty() {
        return Err("no stems given".to_string());
    }
    Ok(stems)
}

/// Parses a plain decimal number (`.` as the decimal mark); refuses NaN and infinities.
pub fn parse_number(text: &str) -> Result<f64, String> {
    let trimmed = text.trim();
    if trimmed.is_empty() {
        return Err("empty".to_string());
    }
    match trimmed.parse::<f64>() {
        Ok(value) if value.is_finite() => Ok(value),
        _ => Err(format!("'{trimmed}' is not a number")),
    }
}

/// Characters that make a spreadsheet read a cell as a formula (OWASP CSV injection guidance).
const FORMULA_STARTS: [char; 6] = ['=', '+', '-', '@', '\t', '\r'];

/// Makes an exported text cell safe for spreadsheets: a cell starting with `=`, `+`, `-`, `@`, tab or
/// CR is prefixed with `'` (DESIGN.md "CSV safety", after the OWASP CSV injection guidance).
pub fn csv_safe(text: &str) -> std::borrow::Cow<'_, str> {
    if text.starts_with(FORMULA_STARTS) {
        std::borrow::Cow::Owned(format!("'{text}"))
    } else {
        std::borrow::Cow::Borrowed(text)
    }
}

/// Undoes [`csv_safe`] on import, so that export → import keeps text as it was.
pub fn csv_unsafe(text: &str) -> &str {
    match text.strip_prefix('\'') {
        Some(rest) if rest.starts_with(FORMULA_STARTS) => rest,
        _ => text,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn stems_round_trip_and_reject_bad_values() {
        assert_eq!(parse_stems("22;18;9"), Ok(vec![22.0, 18.0, 9.0]));
        assert_eq!(parse_stems(" 22.5 ; 18 "), Ok(vec![22.5, 18.0]));
        assert_eq!(format_stems(&[22.0, 18.5, 9.0]), "22;18.5;9");
        assert!(parse_stems("22;;9").is_err());
        assert!(parse_stems("22;-1").is_err());
        assert!(parse_stems("22;abc").is_err());
    }

    #[test]
    fn numbers_refuse_nan_and_infinity() {
        assert_eq!(parse_number(" 3.5 "), Ok(3.5));
        assert!(parse_number("NaN").is_err());
        assert!(parse_number("inf").is_err());
        assert!(parse_number("3,5").is_err());
    }

    // OWASP CSV injection guidance: cells starting with = + - @ tab CR are neutralised with a quote.
    #[test]
    fn csv_safety_prefixes_formula_starts_and_import_undoes_it() {
        assert_eq!(csv_safe("=cmd()"), "'=cmd()");
        assert_eq!(csv_safe("+1"), "'+1");
        assert_eq!(csv_safe("-1"), "'-1");
        assert_eq!(csv_safe("@SUM(A1)"), "'@SUM(A1)");
        assert_eq!(csv_safe("\tx"), "'\tx");
        assert_eq!(csv_safe("Elm Row"), "Elm Row");
        assert_eq!(csv_unsafe("'=cmd()"), "=cmd()");
        assert_eq!(csv_unsafe("'quoted'"), "'quoted'");
    }
}
