//! The trees exchange format (DESIGN.md "Trees CSV"): one row per tree with one measurement; SI headers,
//! or US customary `_in` / `_ft` headers converted exactly (NIST SP 811); species by botanical or common
//! name. Validation is shared with other tree sources (GeoJSON) through [`validate_tree_fields`].

use std::io::{Read, Write};

use chrono::NaiveDate;

use super::species_lookup::SpeciesLookup;
use super::{FileError, RowError, csv_safe, csv_unsafe, format_stems, parse_number, parse_stems};
use crate::model::{SiteKind, TreeRecord, TreeStatus};
use crate::science::condition::ConditionWord;
use crate::science::units::{CM_PER_INCH, M_PER_FOOT};

/// Largest DBH accepted, cm. The widest trunks measured are around 10–11 m across (from memory); a
/// street tree above this is a typing error (common practice, no source).
pub const MAX_DBH_CM: f64 = 1000.0;
/// Tallest tree height accepted, m (the tallest measured trees are about 116 m; from memory).
pub const MAX_HEIGHT_M: f64 = 130.0;
/// Widest crown spread accepted, m (common practice, no source).
pub const MAX_CROWN_WIDTH_M: f64 = 80.0;
/// Tolerance between a given `dbh_cm` and the equivalent DBH of given stems, cm (exports round to 0.01).
const DBH_STEMS_TOLERANCE_CM: f64 = 0.05;

/// The columns of the trees format, in export order.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Column {
    Uid,
    Species,
    Lon,
    Lat,
    Street,
    HouseNumber,
    SiteKind,
    PlantedOn,
    Status,
    MeasuredOn,
    Dbh,
    Stems,
    Height,
    CrownBase,
    CrownWidth,
    CrownWidth2,
    DiebackPct,
    Condition,
    Notes,
}

impl Column {
    /// Every column in export order.
    pub const ALL: [Column; 19] = [
        Column::Uid,
        Column::Species,
        Column::Lon,
        Column::Lat,
        Column::Street,
        Column::HouseNumber,
        Column::SiteKind,
        Column::PlantedOn,
        Column::Status,
        Column::MeasuredOn,
        Column::Dbh,
        Column::Stems,
        Column::Height,
        Column::CrownBase,
        Column::CrownWidth,
        Column::CrownWidth2,
        Column::DiebackPct,
        Column::Condition,
        Column::Notes,
    ];

    /// The SI header name.
    pub fn name(self) -> &'static str {
        match self {
            Column::Uid => "uid",
            Column::Species => "species",
            Column::Lon => "lon",
            Column::Lat => "lat",
            Column::Street => "street",
            Column::HouseNumber => "house_number",
            Column::SiteKind => "site_kind",
            Column::PlantedOn => "planted_on",
            Column::Status => "status",
            Column::MeasuredOn => "measured_on",
            Column::Dbh => "dbh_cm",
            Column::Stems => "stems_cm",
            Column::Height => "height_m",
            Column::CrownBase => "crown_base_m",
            Column::CrownWidth => "crown_width_m",
            Column::CrownWidth2 => "crown_width2_m",
            Column::DiebackPct => "dieback_pct",
            Column::Condition => "condition",
            Column::Notes => "notes",
        }
    }

    /// The US customary header accepted instead, and the exact factor to SI (NIST SP 811).
    pub fn us_alternative(self) -> Option<(&'static str, f64)> {
        match self {
            Column::Dbh => Some(("dbh_in", CM_PER_INCH)),
            Column::Stems => Some(("stems_in", CM_PER_INCH)),
            Column::Height => Some(("height_ft", M_PER_FOOT)),
            Column::CrownBase => Some(("crown_base_ft", M_PER_FOOT)),
            Column::CrownWidth => Some(("crown_width_ft", M_PER_FOOT)),
            Column::CrownWidth2 => Some(("crown_width2_ft", M_PER_FOOT)),
            _ => None,
        }
    }

    /// The column a header names, and the factor its values take to SI (1 for SI headers).
    pub fn from_header(header: &str) -> Option<(Column, f64)> {
        let header = header
            .trim()
            .trim_start_matches('\u{feff}')
            .to_ascii_lowercase();
        Column::ALL.iter().find_map(|&column| {
            if column.name() == header {
                Some((column, 1.0))
            } else {
                column
                    .us_alternative()
                    .filter(|(name, _)| *name == header)
                    .map(|(_, factor)| (column, factor))
            }
        })
    }
}

/// One field as a source gives it: the name the source used, the text, and the factor to SI.
#[derive(Debug, Clone, Copy)]
pub struct FieldValue<'a> {
    pub field: &'a str,
    pub text: &'a str,
    pub to_si: f64,
}

/// What validation needs besides the row: the species list and today's date (no clock in here).
#[derive(Debug, Clone, Copy)]
pub struct ValidationContext<'a> {
    pub species: &'a SpeciesLookup,
    pub today: NaiveDate,
}

/// Validates one tree's fields into a record, or lists every field that is wrong and why.
/// `get` returns the non-empty field of a column, if the source has it.
pub fn validate_tree_fields<'a>(
    get: impl Fn(Column) -> Option<FieldValue<'a>>,
    ctx: ValidationContext<'_>,
) -> Result<TreeRecord, Vec<(String, String)>> {
    let mut errors: Vec<(String, String)> = Vec::new();
    let mut fail = |field: &str, reason: String| errors.push((field.to_string(), reason));

    let text = |column: Column| get(column).map(|v| csv_unsafe(v.text.trim()).to_string());
    let number = |column: Column, fail: &mut dyn FnMut(&str, String)| -> Option<f64> {
        let value = get(column)?;
        match parse_number(value.text) {
            Ok(n) => Some(n * value.to_si),
            Err(reason) => {
                fail(value.field, reason);
                None
            }
        }
    };
    let field_name = |column: Column| {
        get(column)
            .map(|v| v.field.to_string())
            .unwrap_or_else(|| column.name().to_string())
    };

    let uid = text(Column::Uid);
    if let Some(uid) = &uid
        && (uid.len() > 100 || uid.chars().any(char::is_control))
    {
        fail(
            "uid",
            "must be at most 100 characters with no control characters".to_string(),
        );
    }

    let species = match get(Column::Species) {
        None => {
            fail("species", "species is required".to_string());
            String::new()
        }
        Some(value) => match ctx.species.resolve(value.text) {
            Ok(name) => name.to_string(),
            Err(reason) => {
                fail(value.field, reason);
                String::new()
            }
        },
    };

    let lon = number(Column::Lon, &mut fail);
    let lat = number(Column::Lat, &mut fail);
    if let Some(lon) = lon
        && !(-180.0..=180.0).contains(&lon)
    {
        fail(
            "lon",
            format!("{lon} is out of range (-180 to 180 degrees)"),
        );
    }
    if let Some(lat) = lat
        && !(-90.0..=90.0).contains(&lat)
    {
        fail("lat", format!("{lat} is out of range (-90 to 90 degrees)"));
    }
    match (get(Column::Lon).is_some(), get(Column::Lat).is_some()) {
        (true, false) => fail(
            "lat",
            "lon is given without lat; give both or neither".to_string(),
        ),
        (false, true) => fail(
            "lon",
            "lat is given without lon; give both or neither".to_string(),
        ),
        _ => {}
    }

    let site_kind = word(get(Column::SiteKind), SiteKind::parse, &mut fail);
    let status = word(get(Column::Status), TreeStatus::parse, &mut fail);
    let planted_on = date(get(Column::PlantedOn), &mut fail);
    if let Some(planted) = planted_on
        && planted > ctx.today
        && status != Some(TreeStatus::Planned)
    {
        fail(
            "planted_on",
            format!(
                "{planted} is in the future (only a planned tree may have a future planting date)"
            ),
        );
    }
    let measured_on = date(get(Column::MeasuredOn), &mut fail);
    if let Some(measured) = measured_on
        && measured > ctx.today
    {
        fail(
            &field_name(Column::MeasuredOn),
            format!("{measured} is in the future"),
        );
    }

    let dbh = number(Column::Dbh, &mut fail);
    if let Some(dbh) = dbh {
        check_range(
            &field_name(Column::Dbh),
            dbh,
            0.0,
            MAX_DBH_CM,
            "cm",
            &mut fail,
        );
    }
    let stems = get(Column::Stems).and_then(|value| match parse_stems(value.text) {
        Ok(stems) => {
            let stems: Vec<f64> = stems.iter().map(|d| d * value.to_si).collect();
            if stems.len() > 50 {
                fail(
                    value.field,
                    format!("{} stems; at most 50 are accepted", stems.len()),
                );
            }
            for stem in &stems {
                check_range(value.field, *stem, 0.0, MAX_DBH_CM, "cm", &mut fail);
            }
            Some(stems)
        }
        Err(reason) => {
            fail(value.field, reason);
            None
        }
    });
    let (stems_cm, multi_stem) = match (dbh, stems) {
        (_, Some(stems)) => {
            if let Some(dbh) = dbh {
                let equivalent = crate::science::units::equivalent_dbh_cm(&stems);
                if (equivalent - dbh).abs() > DBH_STEMS_TOLERANCE_CM {
                    fail(
                        &field_name(Column::Dbh),
                        format!(
                            "{dbh} cm does not match the stems (equivalent DBH √Σd² = {equivalent:.2} cm); give one or make them agree"
                        ),
                    );
                }
            }
            (stems, true)
        }
        (Some(dbh), None) => (vec![dbh], false),
        (None, None) => {
            if get(Column::Dbh).is_none() && get(Column::Stems).is_none() {
                fail("dbh_cm", "dbh_cm (or stems_cm) is required".to_string());
            }
            (Vec::new(), false)
        }
    };

    let height = number(Column::Height, &mut fail);
    if let Some(height) = height {
        check_range(
            &field_name(Column::Height),
            height,
            0.0,
            MAX_HEIGHT_M,
            "m",
            &mut fail,
        );
    }
    let crown_base = number(Column::CrownBase, &mut fail);
    if let Some(base) = crown_base {
        if base < 0.0 {
            fail(
                &field_name(Column::CrownBase),
                format!("{base} m must not be negative"),
            );
        } else if let Some(height) = height
            && base >= height
        {
            fail(
                &field_name(Column::CrownBase),
                format!("{base} m must be below the tree height ({height} m)"),
            );
        }
    }
    let crown_width = number(Column::CrownWidth, &mut fail);
    let crown_width2 = number(Column::CrownWidth2, &mut fail);
    for (column, value) in [
        (Column::CrownWidth, crown_width),
        (Column::CrownWidth2, crown_width2),
    ] {
        if let Some(width) = value
            && !(0.0..=MAX_CROWN_WIDTH_M).contains(&width)
        {
            fail(
                &field_name(column),
                format!("{width} m is not a plausible crown spread (0 to {MAX_CROWN_WIDTH_M} m)"),
            );
        }
    }
    let dieback = number(Column::DiebackPct, &mut fail);
    if let Some(dieback) = dieback
        && !(0.0..=100.0).contains(&dieback)
    {
        fail(
            "dieback_pct",
            format!("{dieback} must be between 0 and 100"),
        );
    }
    let condition = get(Column::Condition).and_then(|value| {
        let parsed = ConditionWord::parse(value.text);
        if parsed.is_none() {
            fail(
                value.field,
                format!("'{}' is not one of: good fair poor dead", value.text.trim()),
            );
        }
        parsed
    });

    if !errors.is_empty() {
        return Err(errors);
    }
    Ok(TreeRecord {
        uid,
        species,
        lon,
        lat,
        street: text(Column::Street),
        house_number: text(Column::HouseNumber),
        site_kind,
        planted_on,
        status,
        measured_on: measured_on.unwrap_or(ctx.today),
        stems_cm,
        multi_stem,
        height_m: height,
        crown_base_m: crown_base,
        crown_width_m: crown_width,
        crown_width2_m: crown_width2,
        dieback_pct: dieback,
        condition,
        notes: text(Column::Notes),
        measured_by: None,
    })
}

fn check_range(
    field: &str,
    value: f64,
    above: f64,
    max: f64,
    unit: &str,
    fail: &mut dyn FnMut(&str, String),
) {
    if value <= above || value > max {
        fail(
            field,
            format!(
                "{value} {unit} is not plausible (must be more than {above} and at most {max} {unit})"
            ),
        );
    }
}

fn word<T>(
    value: Option<FieldValue<'_>>,
    parse: impl Fn(&str) -> Result<T, crate::model::BadWord>,
    fail: &mut dyn FnMut(&str, String),
) -> Option<T> {
    let value = value?;
    match parse(value.text) {
        Ok(parsed) => Some(parsed),
        Err(e) => {
            fail(value.field, e.to_string());
            None
        }
    }
}

fn date(value: Option<FieldValue<'_>>, fail: &mut dyn FnMut(&str, String)) -> Option<NaiveDate> {
    let value = value?;
    if let Some(date) = plain_iso_date(value.text) {
        return Some(date);
    }
    match NaiveDate::parse_from_str(value.text.trim(), "%Y-%m-%d") {
        Ok(date) => Some(date),
        Err(_) => {
            fail(
                value.field,
                format!(
                    "'{}' is not an ISO 8601 date (YYYY-MM-DD)",
                    value.text.trim()
                ),
            );
            None
        }
    }
}

/// A date written exactly `YYYY-MM-DD` (what nearly every file has), read without the general parser;
/// anything else (blanks, other widths, impossible dates) is left to `NaiveDate::parse_from_str`.
fn plain_iso_date(text: &str) -> Option<NaiveDate> {
    let b = text.as_bytes();
    if b.len() != 10 || b[4] != b'-' || b[7] != b'-' {
        return None;
    }
    let number = |range: std::ops::Range<usize>| {
        b[range].iter().try_fold(0u32, |n, &d| {
            d.is_ascii_digit().then(|| n * 10 + u32::from(d - b'0'))
        })
    };
    let year = i32::try_from(number(0..4)?).ok()?;
    NaiveDate::from_ymd_opt(year, number(5..7)?, number(8..10)?)
}

/// A row that failed validation: where it was, its raw fields and every reason.
#[derive(Debug, Clone, PartialEq)]
pub struct BadRow {
    pub line: u64,
    pub raw: Vec<String>,
    pub errors: Vec<RowError>,
}

/// Result of reading a trees file: header as given, the good rows with their lines, the bad rows.
#[derive(Debug, Clone, Default)]
pub struct ParsedTrees {
    pub headers: Vec<String>,
    pub good: Vec<(u64, TreeRecord)>,
    pub bad: Vec<BadRow>,
}

/// Reads a trees CSV. A bad header is a [`FileError`]; bad rows are collected, never fatal.
pub fn read_trees_csv(
    input: impl Read,
    ctx: ValidationContext<'_>,
) -> Result<ParsedTrees, FileError> {
    let mut rows = TreeCsvRows::new(input, ctx)?;
    let mut parsed = ParsedTrees {
        headers: rows.headers().to_vec(),
        ..ParsedTrees::default()
    };
    for (line, row) in &mut rows {
        match row {
            Ok(tree) => parsed.good.push((line, tree)),
            Err(bad) => parsed.bad.push(bad),
        }
    }
    Ok(parsed)
}

/// The rows of a trees CSV, validated one at a time (a million-row file never sits in memory). One
/// record buffer is reused for every row; a row's fields are copied out only when it is bad.
pub struct TreeCsvRows<'a, R: Read> {
    reader: csv::Reader<R>,
    record: csv::StringRecord,
    headers: Vec<String>,
    /// Per column (in [`Column::ALL`] order): its index in the file and its factor to SI.
    by_column: [Option<(usize, f64)>; Column::ALL.len()],
    ctx: ValidationContext<'a>,
}

impl<'a, R: Read> TreeCsvRows<'a, R> {
    /// Reads and checks the header.
    pub fn new(input: R, ctx: ValidationContext<'a>) -> Result<Self, FileError> {
        let mut reader = csv::ReaderBuilder::new().flexible(true).from_reader(input);
        let headers: Vec<String> = reader
            .headers()
            .map_err(|e| FileError {
                line: 1,
                reason: e.to_string(),
            })?
            .iter()
            .map(str::to_string)
            .collect();
        let mut by_column = [None; Column::ALL.len()];
        for (column, index, factor) in map_headers(&headers)? {
            by_column[column as usize] = Some((index, factor));
        }
        Ok(TreeCsvRows {
            reader,
            record: csv::StringRecord::new(),
            headers,
            by_column,
            ctx,
        })
    }

    /// The header as the file gives it.
    pub fn headers(&self) -> &[String] {
        &self.headers
    }

    fn row(&self) -> (u64, Result<TreeRecord, BadRow>) {
        let record = &self.record;
        let line = record.position().map(|p| p.line()).unwrap_or(0);
        let raw = || record.iter().map(str::to_string).collect::<Vec<String>>();
        if record.len() != self.headers.len() {
            let reason = format!(
                "{} fields, but the header has {}",
                record.len(),
                self.headers.len()
            );
            let errors = vec![RowError {
                line,
                field: "(row)".to_string(),
                reason,
            }];
            return (
                line,
                Err(BadRow {
                    line,
                    errors,
                    raw: raw(),
                }),
            );
        }
        let get = |column: Column| {
            let (index, factor) = self.by_column[column as usize]?;
            let text = record.get(index)?;
            (!text.trim().is_empty()).then(|| FieldValue {
                field: self.headers[index].as_str(),
                text,
                to_si: factor,
            })
        };
        match validate_tree_fields(get, self.ctx) {
            Ok(tree) => (line, Ok(tree)),
            Err(errors) => {
                let errors = errors
                    .into_iter()
                    .map(|(field, reason)| RowError {
                        line,
                        field,
                        reason,
                    })
                    .collect();
                (
                    line,
                    Err(BadRow {
                        line,
                        errors,
                        raw: raw(),
                    }),
                )
            }
        }
    }
}

impl<R: Read> Iterator for TreeCsvRows<'_, R> {
    type Item = (u64, Result<TreeRecord, BadRow>);

    fn next(&mut self) -> Option<Self::Item> {
        match self.reader.read_record(&mut self.record) {
            Ok(true) => Some(self.row()),
            Ok(false) => None,
            Err(e) => {
                let line = e.position().map(|p| p.line()).unwrap_or(0);
                let errors = vec![RowError {
                    line,
                    field: "(row)".to_string(),
                    reason: e.to_string(),
                }];
                Some((
                    line,
                    Err(BadRow {
                        line,
                        raw: Vec::new(),
                        errors,
                    }),
                ))
            }
        }
    }
}

/// Maps header cells to columns: unknown or repeated columns and a missing `species` or DBH column
/// are file errors (a typo in a header would otherwise drop a whole column silently).
fn map_headers(headers: &[String]) -> Result<Vec<(Column, usize, f64)>, FileError> {
    let mut columns: Vec<(Column, usize, f64)> = Vec::new();
    for (index, header) in headers.iter().enumerate() {
        let Some((column, factor)) = Column::from_header(header) else {
            let known: Vec<&str> = Column::ALL.iter().map(|c| c.name()).collect();
            return Err(FileError {
                line: 1,
                reason: format!(
                    "unknown column '{}'; the trees format has: {} (or _in/_ft for dbh, stems, height, crown_base, crown_width, crown_width2)",
                    header.trim(),
                    known.join(",")
                ),
            });
        };
        if let Some((_, first, _)) = columns.iter().find(|(c, _, _)| *c == column) {
            return Err(FileError {
                line: 1,
                reason: format!(
                    "columns '{}' and '{}' give the same field twice",
                    headers[*first].trim(),
                    header.trim()
                ),
            });
        }
        columns.push((column, index, factor));
    }
    let has = |column: Column| columns.iter().any(|(c, _, _)| *c == column);
    if !has(Column::Species) {
        return Err(FileError {
            line: 1,
            reason: "the header has no 'species' column".to_string(),
        });
    }
    if !has(Column::Dbh) && !has(Column::Stems) {
        return Err(FileError {
            line: 1,
            reason: "the header has neither 'dbh_cm' nor 'stems_cm' (or 'dbh_in' / 'stems_in')"
                .to_string(),
        });
    }
    Ok(columns)
}

/// The header row the writer produces (all columns, SI).
pub fn export_header() -> Vec<&'static str> {
    Column::ALL.iter().map(|c| c.name()).collect()
}

/// The cells of one record in export order (text cells made spreadsheet-safe).
pub fn export_cells(uid: &str, tree: &TreeRecord) -> Vec<String> {
    let num = |v: Option<f64>| v.map(|x| x.to_string()).unwrap_or_default();
    let txt = |v: &Option<String>| {
        v.as_deref()
            .map(|t| csv_safe(t).into_owned())
            .unwrap_or_default()
    };
    let dbh = if tree.multi_stem {
        // Derived: rounded to 0.01 cm so exports stay readable; import accepts it within 0.05 cm.
        format!("{}", (tree.dbh_cm() * 100.0).round() / 100.0)
    } else {
        num(tree.stems_cm.first().copied())
    };
    vec![
        csv_safe(uid).into_owned(),
        csv_safe(&tree.species).into_owned(),
        num(tree.lon),
        num(tree.lat),
        txt(&tree.street),
        txt(&tree.house_number),
        tree.site_kind
            .map(|s| s.as_str().to_string())
            .unwrap_or_default(),
        tree.planted_on.map(|d| d.to_string()).unwrap_or_default(),
        tree.status
            .map(|s| s.as_str().to_string())
            .unwrap_or_default(),
        tree.measured_on.to_string(),
        dbh,
        if tree.multi_stem {
            format_stems(&tree.stems_cm)
        } else {
            String::new()
        },
        num(tree.height_m),
        num(tree.crown_base_m),
        num(tree.crown_width_m),
        num(tree.crown_width2_m),
        num(tree.dieback_pct),
        tree.condition
            .map(|c| c.as_str().to_string())
            .unwrap_or_default(),
        txt(&tree.notes),
    ]
}

/// Writes trees CSV rows to any writer.
pub struct TreesCsvWriter<W: Write> {
    writer: csv::Writer<W>,
}

impl<W: Write> TreesCsvWriter<W> {
    /// Starts the file with its header row.
    pub fn new(output: W) -> csv::Result<Self> {
        let mut writer = csv::Writer::from_writer(output);
        writer.write_record(export_header())?;
        Ok(TreesCsvWriter { writer })
    }

    /// Writes one tree.
    pub fn write(&mut self, uid: &str, tree: &TreeRecord) -> csv::Result<()> {
        self.writer.write_record(export_cells(uid, tree))
    }

    /// Flushes and returns the inner writer.
    pub fn finish(self) -> Result<W, std::io::Error> {
        self.writer.into_inner().map_err(|e| e.into_error())
    }
}

/// Writes the rejects file of `--keep-good`: the original header plus `reason`, one row per bad row.
pub fn write_rejects(output: impl Write, headers: &[String], bad: &[BadRow]) -> csv::Result<()> {
    let mut writer = csv::WriterBuilder::new().flexible(true).from_writer(output);
    let mut header: Vec<String> = headers.to_vec();
    header.push("reason".to_string());
    writer.write_record(&header)?;
    for row in bad {
        let mut cells: Vec<String> = row.raw.clone();
        cells.resize(headers.len(), String::new());
        let reasons: Vec<String> = row
            .errors
            .iter()
            .map(|e| format!("{}: {}", e.field, e.reason))
            .collect();
        cells.push(csv_safe(&reasons.join("; ")).into_owned());
        writer.write_record(&cells)?;
    }
    writer.flush()?;
    Ok(())
}
