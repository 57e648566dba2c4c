//! The weather exchange format (DESIGN.md "Weather CSV"): one row per day,
//! `date,precip_mm,tmin_c,tmax_c,rh_mean_pct,wind_2m_ms,solar_mj_m2`, optional `tdew_c`, `sunshine_h`,
//! and `wind_m_s` + `wind_height_m` for wind measured at another height (converted to 2 m by FAO-56
//! eq. 47 at import). Empty cells are gaps, filled later by the FAO-56 rules (METHODS.md M6).

use std::collections::HashSet;
use std::io::Read;

use chrono::NaiveDate;

use super::trees_csv::BadRow;
use super::{FileError, RowError, parse_number};
use crate::model::WeatherRecord;

const COLUMNS: [&str; 11] = [
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
];

/// Plausible range of each numeric column (inclusive), for catching unit and typing errors
/// (common practice, no source; the extremes are beyond recorded world records).
fn range(column: &str) -> (f64, f64) {
    match column {
        "precip_mm" => (0.0, 2000.0),
        "tmin_c" | "tmax_c" => (-90.0, 60.0),
        "tdew_c" => (-90.0, 40.0),
        "rh_mean_pct" => (0.0, 100.0),
        "wind_2m_ms" | "wind_m_s" => (0.0, 100.0),
        "solar_mj_m2" => (0.0, 50.0),
        "sunshine_h" => (0.0, 24.0),
        "wind_height_m" => (0.5, 200.0),
        _ => (f64::MIN, f64::MAX),
    }
}

/// Wind speed at 2 m from a speed measured at `height_m` (FAO-56 eq. 47: u2 = uz · 4.87 / ln(67.8 z − 5.42)).
pub fn wind_at_2m(speed_ms: f64, height_m: f64) -> f64 {
    speed_ms * 4.87 / (67.8 * height_m - 5.42).ln()
}

/// Result of reading a weather file.
#[derive(Debug, Clone, Default)]
pub struct ParsedWeather {
    pub headers: Vec<String>,
    pub good: Vec<(u64, WeatherRecord)>,
    pub bad: Vec<BadRow>,
}

/// Reads a weather CSV; bad rows are collected with line and reason.
pub fn read_weather_csv(input: impl Read) -> Result<ParsedWeather, FileError> {
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
        if !COLUMNS.contains(&header.as_str()) {
            return Err(FileError {
                line: 1,
                reason: format!(
                    "unknown column '{header}'; the weather format has: {}",
                    COLUMNS.join(",")
                ),
            });
        }
    }
    if !headers.iter().any(|h| h == "date") {
        return Err(FileError {
            line: 1,
            reason: "the header has no 'date' column".to_string(),
        });
    }
    let has = |name: &str| headers.iter().any(|h| h == name);
    if has("wind_m_s") != has("wind_height_m") {
        return Err(FileError {
            line: 1,
            reason: "'wind_m_s' needs 'wind_height_m' (and the other way round)".to_string(),
        });
    }
    let mut parsed = ParsedWeather {
        headers: headers.clone(),
        ..ParsedWeather::default()
    };
    let mut seen = HashSet::new();
    for result in reader.records() {
        let record = match result {
            Ok(record) => record,
            Err(e) => {
                let line = e.position().map(|p| p.line()).unwrap_or(0);
                parsed.bad.push(BadRow {
                    line,
                    raw: Vec::new(),
                    errors: vec![RowError {
                        line,
                        field: "(row)".into(),
                        reason: e.to_string(),
                    }],
                });
                continue;
            }
        };
        let line = record.position().map(|p| p.line()).unwrap_or(0);
        let raw: Vec<String> = record.iter().map(str::to_string).collect();
        let mut errors = Vec::new();
        let cell = |name: &str| -> Option<&str> {
            let index = headers.iter().position(|h| h == name)?;
            raw.get(index).map(|s| s.trim()).filter(|s| !s.is_empty())
        };
        let number = |name: &str, errors: &mut Vec<RowError>| -> Option<f64> {
            let text = cell(name)?;
            match parse_number(text) {
                Ok(value) => {
                    let (low, high) = range(name);
                    if value < low || value > high {
                        errors.push(RowError {
                            line,
                            field: name.into(),
                            reason: format!("{value} is outside {low} to {high}"),
                        });
                        None
                    } else {
                        Some(value)
                    }
                }
                Err(reason) => {
                    errors.push(RowError {
                        line,
                        field: name.into(),
                        reason,
                    });
                    None
                }
            }
        };
        let date = match cell("date") {
            None => {
                errors.push(RowError {
                    line,
                    field: "date".into(),
                    reason: "date is required".into(),
                });
                None
            }
            Some(text) => match NaiveDate::parse_from_str(text, "%Y-%m-%d") {
                Ok(date) => {
                    if !seen.insert(date) {
                        errors.push(RowError {
                            line,
                            field: "date".into(),
                            reason: format!("{date} appears twice"),
                        });
                    }
                    Some(date)
                }
                Err(_) => {
                    errors.push(RowError {
                        line,
                        field: "date".into(),
                        reason: format!("'{text}' is not an ISO 8601 date (YYYY-MM-DD)"),
                    });
                    None
                }
            },
        };
        let precip_mm = number("precip_mm", &mut errors);
        let tmin_c = number("tmin_c", &mut errors);
        let tmax_c = number("tmax_c", &mut errors);
        let rh_mean_pct = number("rh_mean_pct", &mut errors);
        let wind_2m = number("wind_2m_ms", &mut errors);
        let solar_mj_m2 = number("solar_mj_m2", &mut errors);
        let tdew_c = number("tdew_c", &mut errors);
        let sunshine_h = number("sunshine_h", &mut errors);
        let wind_z = number("wind_m_s", &mut errors);
        let wind_height = number("wind_height_m", &mut errors);
        if let (Some(low), Some(high)) = (tmin_c, tmax_c)
            && low > high
        {
            errors.push(RowError {
                line,
                field: "tmin_c".into(),
                reason: format!("{low} is above tmax_c {high}"),
            });
        }
        if wind_z.is_some() != wind_height.is_some()
            && cell("wind_m_s").is_some() != cell("wind_height_m").is_some()
        {
            errors.push(RowError {
                line,
                field: "wind_height_m".into(),
                reason: "wind_m_s and wind_height_m go together".into(),
            });
        }
        let wind_2m_ms = wind_2m.or(match (wind_z, wind_height) {
            (Some(speed), Some(height)) => Some(wind_at_2m(speed, height)),
            _ => None,
        });
        match (date, errors.is_empty()) {
            (Some(date), true) => parsed.good.push((
                line,
                WeatherRecord {
                    date,
                    precip_mm,
                    tmin_c,
                    tmax_c,
                    rh_mean_pct,
                    wind_2m_ms,
                    solar_mj_m2,
                    tdew_c,
                    sunshine_h,
                },
            )),
            _ => parsed.bad.push(BadRow { line, raw, errors }),
        }
    }
    Ok(parsed)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    // FAO-56 Example 14: 3.2 m/s measured at 10 m is 2.4 m/s at 2 m (Allen et al. 1998).
    #[test]
    fn fao56_example_14_wind_height_conversion() {
        assert_relative_eq!(wind_at_2m(3.2, 10.0), 2.4, epsilon = 0.01);
    }

    #[test]
    fn bad_rows_are_named_with_line_and_field() {
        let text = "date,precip_mm,tmin_c,tmax_c\n2025-01-01,1.0,-3,2\n2025-01-02,abc,-3,2\n2025-13-01,0,1,2\n2025-01-01,0,5,2\n";
        let parsed = read_weather_csv(text.as_bytes()).ok().unwrap_or_default();
        assert_eq!(parsed.good.len(), 1);
        let errors: Vec<String> = parsed
            .bad
            .iter()
            .flat_map(|b| b.errors.iter().map(|e| e.to_string()))
            .collect();
        assert!(
            errors.contains(&"3: precip_mm: 'abc' is not a number".to_string()),
            "{errors:?}"
        );
        assert!(
            errors.iter().any(|e| e.starts_with("4: date:")),
            "{errors:?}"
        );
        assert!(
            errors
                .iter()
                .any(|e| e.starts_with("5: date:") && e.contains("twice")),
            "{errors:?}"
        );
        assert!(
            errors.iter().any(|e| e.starts_with("5: tmin_c:")),
            "{errors:?}"
        );
    }

    #[test]
    fn unknown_header_is_a_file_error() {
        let error = read_weather_csv("date,rain\n".as_bytes()).err();
        assert!(error.is_some_and(|e| e.reason.contains("unknown column 'rain'")));
    }
}
