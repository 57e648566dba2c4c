//! The settings registry: every key the `settings` table holds, with its default. Science defaults come
//! from METHODS.md (via [`crate::science`]); the others are Streetwood's own.

/// Rolling daily backups kept by default.
pub const DEFAULT_BACKUP_KEEP: usize = 7;
/// Most rolling daily backups that may be kept.
pub const MAX_BACKUP_KEEP: usize = 366;

/// Every setting with its default value, as stored (text).
pub fn default_pairs() -> Vec<(&'static str, String)> {
    let mut pairs: Vec<(&'static str, String)> = vec![
        // Display units at the edges: metric or us (customary). Inside everything is SI.
        ("units", "metric".to_string()),
        // The weather station whose days feed the benefits (name in weather_stations); empty = the only one.
        ("default_station", String::new()),
        // Rolling daily backups the TUI keeps of the file it opens (0 = none).
        ("backup_keep", DEFAULT_BACKUP_KEEP.to_string()),
    ];
    for rating in crate::care::risk::RiskRating::ALL {
        pairs.push((
            reinspect_key(*rating),
            crate::care::risk::default_reinspection_months(*rating).to_string(),
        ));
    }
    // Maintenance cycle lengths (METHODS.md M10): `care cycle` reads them.
    pairs.extend(crate::care::cycles::default_setting_pairs());
    pairs.extend(science_pairs());
    // Removal studies (METHODS.md M11, M12; discount rate and carbon decay share: see
    // `study::settings::StudySettings`).
    pairs.extend(crate::study::settings::StudySettings::default_pairs());
    pairs
}

fn science_pairs() -> Vec<(&'static str, String)> {
    crate::science::settings::ScienceSettings::default_pairs()
}

/// Checks a value before it is stored: science settings as the engine reads them, re-inspection
/// intervals as whole months, units as metric or us.
pub fn validate(key: &str, value: &str) -> Result<(), String> {
    if !default_pairs().iter().any(|(k, _)| *k == key) {
        let known: Vec<&str> = default_pairs().iter().map(|(k, _)| *k).collect();
        return Err(format!(
            "unknown setting '{key}'; known: {}",
            known.join(", ")
        ));
    }
    if crate::science::settings::KEYS.contains(&key) {
        let mut science = crate::science::settings::ScienceSettings::default();
        return science
            .apply(key, value)
            .map(|_| ())
            .map_err(|e| format!("{key} = '{value}': {}", e.reason));
    }
    if crate::study::settings::KEYS.contains(&key) {
        let mut study = crate::study::settings::StudySettings::default();
        return study
            .apply(key, value)
            .map(|_| ())
            .map_err(|e| format!("{key} = '{value}': {}", e.reason));
    }
    if key.starts_with("reinspect_months_") {
        return value
            .trim()
            .parse::<u32>()
            .map(|_| ())
            .map_err(|_| format!("{key} = '{value}': must be a whole number of months"));
    }
    if key.starts_with("cycle_") {
        return crate::care::cycles::validate_setting(key, value).map_err(|e| e.to_string());
    }
    if key == "backup_keep" {
        return parse_backup_keep(value).map(|_| ());
    }
    if key == "units" && !matches!(value, "metric" | "us") {
        return Err(format!("units = '{value}': must be metric or us"));
    }
    Ok(())
}

/// Reads `backup_keep`: a whole number of daily backups, 0 (none) to [`MAX_BACKUP_KEEP`].
pub fn parse_backup_keep(value: &str) -> Result<usize, String> {
    value
        .trim()
        .parse::<usize>()
        .ok()
        .filter(|n| *n <= MAX_BACKUP_KEEP)
        .ok_or_else(|| {
            format!(
                "backup_keep = '{value}': must be a whole number of daily backups from 0 (none) to {MAX_BACKUP_KEEP}"
            )
        })
}

/// The settings key holding the re-inspection interval (months) of a risk rating.
pub fn reinspect_key(rating: crate::care::risk::RiskRating) -> &'static str {
    use crate::care::risk::RiskRating;
    match rating {
        RiskRating::Low => "reinspect_months_low",
        RiskRating::Moderate => "reinspect_months_moderate",
        RiskRating::High => "reinspect_months_high",
        RiskRating::Extreme => "reinspect_months_extreme",
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn keys_are_unique_and_the_science_defaults_read_back() {
        let pairs = default_pairs();
        let mut keys: Vec<&str> = pairs.iter().map(|(k, _)| *k).collect();
        keys.sort_unstable();
        let before = keys.len();
        keys.dedup();
        assert_eq!(before, keys.len(), "duplicate settings keys");
        let science = crate::science::settings::ScienceSettings::from_pairs(
            pairs
                .iter()
                .filter(|(k, _)| crate::science::settings::KEYS.contains(k))
                .cloned(),
        );
        assert_eq!(
            science.ok(),
            Some(crate::science::settings::ScienceSettings::default())
        );
    }

    #[test]
    fn backup_keep_is_a_bounded_whole_number() {
        assert_eq!(validate("backup_keep", "7"), Ok(()));
        assert_eq!(validate("backup_keep", "0"), Ok(()));
        assert_eq!(parse_backup_keep(" 30 "), Ok(30));
        for bad in ["-1", "2.5", "seven", "", "367"] {
            let error = validate("backup_keep", bad).expect_err(bad);
            assert!(error.contains("whole number of daily backups"), "{error}");
        }
    }
}
