//! Finding a species by what a person typed: botanical or common name, any case, with a "did you
//! mean" suggestion when nothing matches.

use std::collections::HashMap;

use crate::model::Species;

/// Lookup table over the species list.
#[derive(Debug, Clone, Default)]
pub struct SpeciesLookup {
    /// lower-case botanical or common name → botanical name as stored
    by_name: HashMap<String, String>,
    /// (lower-case name, botanical name) for suggestions
    names: Vec<(String, String)>,
}

impl SpeciesLookup {
    /// Builds the lookup; a common name shared by two species resolves to neither (ambiguous).
    pub fn new(species: &[Species]) -> Self {
        let mut by_name = HashMap::new();
        let mut names = Vec::new();
        let mut ambiguous = Vec::new();
        for s in species {
            let botanical = s.scientific_name.to_lowercase();
            by_name.insert(botanical.clone(), s.scientific_name.clone());
            names.push((botanical, s.scientific_name.clone()));
        }
        for s in species {
            let common = s.common_name.trim().to_lowercase();
            if common.is_empty() {
                continue;
            }
            names.push((common.clone(), s.scientific_name.clone()));
            match by_name.get(&common) {
                Some(existing) if existing != &s.scientific_name => ambiguous.push(common),
                Some(_) => {}
                None => {
                    by_name.insert(common, s.scientific_name.clone());
                }
            }
        }
        for name in ambiguous {
            by_name.remove(&name);
        }
        SpeciesLookup { by_name, names }
    }

    /// The botanical name for a botanical or common name (case and repeated blanks ignored).
    pub fn resolve(&self, typed: &str) -> Result<&str, String> {
        let key = normalise(typed);
        if key.is_empty() {
            return Err("species is required".to_string());
        }
        match self.by_name.get(&key) {
            Some(name) => Ok(name.as_str()),
            None => Err(match self.suggest(&key) {
                Some(best) => format!(
                    "unknown species '{}' (did you mean '{best}'?)",
                    typed.trim()
                ),
                None => format!(
                    "unknown species '{}' (not in the species list; see `streetwood species`)",
                    typed.trim()
                ),
            }),
        }
    }

    /// The closest known name, when it is close enough to be a likely typo.
    fn suggest(&self, key: &str) -> Option<String> {
        self.names
            .iter()
            .map(|(name, botanical)| (strsim::jaro_winkler(key, name), name, botanical))
            .filter(|(score, _, _)| *score >= 0.85)
            .max_by(|a, b| a.0.total_cmp(&b.0))
            .map(|(_, name, botanical)| {
                if name == &botanical.to_lowercase() {
                    botanical.clone()
                } else {
                    format!("{botanical} ({name})")
                }
            })
    }
}

fn normalise(text: &str) -> String {
    text.split_whitespace()
        .collect::<Vec<_>>()
        .join(" ")
        .to_lowercase()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{LeafHabit, WaterUse};

    fn species(botanical: &str, common: &str) -> Species {
        Species {
            id: 0,
            scientific_name: botanical.to_string(),
            common_name: common.to_string(),
            genus: botanical.split(' ').next().unwrap_or_default().to_string(),
            family: String::new(),
            leaf_habit: LeafHabit::Deciduous,
            sg_green: 0.5,
            jenkins_group: String::new(),
            chojnacky_group: String::new(),
            growth_cm_per_yr: 0.78,
            growth_source: String::new(),
            water_use: WaterUse::Moderate,
            lai: 4.0,
            max_height_m: None,
            builtin: true,
            source: String::new(),
        }
    }

    #[test]
    fn resolves_botanical_and_common_names_in_any_case() {
        let lookup = SpeciesLookup::new(&[
            species("Acer rubrum", "red maple"),
            species("Tilia cordata", "littleleaf linden"),
        ]);
        assert_eq!(lookup.resolve("acer RUBRUM"), Ok("Acer rubrum"));
        assert_eq!(lookup.resolve("  Red   Maple "), Ok("Acer rubrum"));
        assert_eq!(lookup.resolve("LITTLELEAF LINDEN"), Ok("Tilia cordata"));
    }

    #[test]
    fn unknown_names_get_a_did_you_mean() {
        let lookup = SpeciesLookup::new(&[species("Acer rubrum", "red maple")]);
        let message = lookup.resolve("Acer rubrm").err().unwrap_or_default();
        assert!(message.contains("did you mean 'Acer rubrum'"), "{message}");
        let message = lookup.resolve("red mapel").err().unwrap_or_default();
        assert!(
            message.contains("did you mean 'Acer rubrum (red maple)'"),
            "{message}"
        );
        let message = lookup.resolve("Sequoia").err().unwrap_or_default();
        assert!(!message.contains("did you mean"), "{message}");
    }
}
