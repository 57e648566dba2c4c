//! Weather stations and their daily records.

use chrono::NaiveDate;
use rusqlite::{OptionalExtension, params};

use super::{Store, StoreError};
use crate::model::{StationInfo, WeatherRecord};

/// What a weather import did.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, serde::Serialize)]
pub struct WeatherOutcome {
    pub days_written: usize,
}

impl Store {
    /// Creates the station (or updates its position) and writes its days; a day already held is
    /// replaced. All or nothing.
    pub fn import_weather(
        &mut self,
        station: &StationInfo,
        days: &[(u64, WeatherRecord)],
        actor: &str,
        dry_run: bool,
    ) -> Result<WeatherOutcome, StoreError> {
        let work = |tx: &rusqlite::Transaction<'_>| {
            tx.execute(
                "INSERT INTO weather_stations (name, lat, lon, elevation_m, coastal) VALUES (?1, ?2, ?3, ?4, ?5)
                 ON CONFLICT (name) DO UPDATE SET lat = excluded.lat, lon = excluded.lon,
                     elevation_m = excluded.elevation_m, coastal = excluded.coastal
                 WHERE lat IS NOT excluded.lat OR lon IS NOT excluded.lon
                     OR elevation_m IS NOT excluded.elevation_m OR coastal IS NOT excluded.coastal",
                params![station.name, station.lat, station.lon, station.elevation_m, station.coastal],
            )?;
            let station_id: i64 = tx.query_row(
                "SELECT id FROM weather_stations WHERE name = ?1",
                [&station.name],
                |r| r.get(0),
            )?;
            let mut upsert = tx.prepare_cached(
                "INSERT INTO weather_days (station_id, date, precip_mm, tmin_c, tmax_c, rh_mean_pct, wind_2m_ms,
                                           solar_mj_m2, tdew_c, sunshine_h)
                 VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10)
                 ON CONFLICT (station_id, date) DO UPDATE SET precip_mm = excluded.precip_mm,
                     tmin_c = excluded.tmin_c, tmax_c = excluded.tmax_c, rh_mean_pct = excluded.rh_mean_pct,
                     wind_2m_ms = excluded.wind_2m_ms, solar_mj_m2 = excluded.solar_mj_m2,
                     tdew_c = excluded.tdew_c, sunshine_h = excluded.sunshine_h",
            )?;
            for (line, day) in days {
                upsert
                    .execute(params![
                        station_id,
                        day.date.to_string(),
                        day.precip_mm,
                        day.tmin_c,
                        day.tmax_c,
                        day.rh_mean_pct,
                        day.wind_2m_ms,
                        day.solar_mj_m2,
                        day.tdew_c,
                        day.sunshine_h,
                    ])
                    .map_err(|e| StoreError::Row {
                        line: *line,
                        message: e.to_string(),
                    })?;
            }
            Ok(WeatherOutcome {
                days_written: days.len(),
            })
        };
        if dry_run {
            self.dry_run(actor, work)
        } else {
            self.write(actor, work)
        }
    }

    /// The stations held.
    pub fn stations(&self) -> Result<Vec<StationInfo>, StoreError> {
        let mut stmt = self.conn.prepare(
            "SELECT name, lat, lon, elevation_m, coastal FROM weather_stations ORDER BY name",
        )?;
        let rows = stmt
            .query_map([], |r| {
                Ok(StationInfo {
                    name: r.get(0)?,
                    lat: r.get(1)?,
                    lon: r.get(2)?,
                    elevation_m: r.get(3)?,
                    coastal: r.get(4)?,
                })
            })?
            .collect::<Result<Vec<_>, _>>()?;
        Ok(rows)
    }

    /// The days of one station in one calendar year, in date order.
    pub fn weather_year(&self, station: &str, year: i32) -> Result<Vec<WeatherRecord>, StoreError> {
        let mut stmt = self.conn.prepare(
            "SELECT d.date, d.precip_mm, d.tmin_c, d.tmax_c, d.rh_mean_pct, d.wind_2m_ms, d.solar_mj_m2,
                    d.tdew_c, d.sunshine_h
             FROM weather_days d JOIN weather_stations s ON s.id = d.station_id
             WHERE s.name = ?1 AND d.date >= ?2 AND d.date <= ?3 ORDER BY d.date",
        )?;
        let rows = stmt
            .query_map(
                params![
                    station,
                    format!("{year:04}-01-01"),
                    format!("{year:04}-12-31")
                ],
                |r| {
                    let text: String = r.get(0)?;
                    let date = text.parse::<NaiveDate>().map_err(|e| {
                        rusqlite::Error::FromSqlConversionFailure(
                            0,
                            rusqlite::types::Type::Text,
                            Box::new(e),
                        )
                    })?;
                    Ok(WeatherRecord {
                        date,
                        precip_mm: r.get(1)?,
                        tmin_c: r.get(2)?,
                        tmax_c: r.get(3)?,
                        rh_mean_pct: r.get(4)?,
                        wind_2m_ms: r.get(5)?,
                        solar_mj_m2: r.get(6)?,
                        tdew_c: r.get(7)?,
                        sunshine_h: r.get(8)?,
                    })
                },
            )?
            .collect::<Result<Vec<_>, _>>()?;
        Ok(rows)
    }

    /// The years that have weather for a station, latest first, with their day counts.
    pub fn weather_years(&self, station: &str) -> Result<Vec<(i32, i64)>, StoreError> {
        let mut stmt = self.conn.prepare(
            "SELECT CAST(substr(d.date, 1, 4) AS INTEGER) AS year, count(*)
             FROM weather_days d JOIN weather_stations s ON s.id = d.station_id
             WHERE s.name = ?1 GROUP BY year ORDER BY year DESC",
        )?;
        let rows = stmt
            .query_map([station], |r| Ok((r.get(0)?, r.get(1)?)))?
            .collect::<Result<Vec<_>, _>>()?;
        Ok(rows)
    }

    /// The station named by the `default_station` setting, or the only station when the setting is empty.
    pub fn default_station(&self) -> Result<Option<StationInfo>, StoreError> {
        let wanted = self.setting("default_station")?.unwrap_or_default();
        let stations = self.stations()?;
        if wanted.trim().is_empty() {
            return Ok(if stations.len() == 1 {
                stations.into_iter().next()
            } else {
                None
            });
        }
        Ok(stations.into_iter().find(|s| s.name == wanted))
    }

    /// The id of a station by name.
    pub fn station_id(&self, name: &str) -> Result<Option<i64>, StoreError> {
        Ok(self
            .conn
            .query_row(
                "SELECT id FROM weather_stations WHERE name = ?1",
                [name],
                |r| r.get(0),
            )
            .optional()?)
    }
}
