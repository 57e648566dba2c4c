//! Aboveground biomass, whole-tree biomass, carbon and CO2e (METHODS.md M2).
//!
//! AGB (kg, dry) = exp(β0 + β1 · ln d), d = DBH in cm at 1.37 m, for both published equation sets.

use serde::{Deserialize, Serialize};

use super::kinds::LeafHabit;

/// Open-grown urban trees hold 80 % of the biomass the forest equations predict
/// (Nowak 1994, Chicago's Urban Forest Ecosystem, USDA FS GTR NE-186) [from memory].
pub const URBAN_FACTOR: f64 = 0.8;
/// Root:shoot ratio 0.26 (Cairns, Brown, Helmer & Baumgardner 1997, Oecologia 111:1–11, global mean;
/// restated by Easdale et al. 2019) \[published\]. Whole tree = AGB × (1 + 0.26).
pub const ROOT_SHOOT_RATIO: f64 = 0.26;
/// Carbon fraction of dry biomass [common practice].
pub const CARBON_FRACTION: f64 = 0.5;
/// Standard atomic weight of carbon, 12.011 (IUPAC) \[published\].
pub const ATOMIC_WEIGHT_C: f64 = 12.011;
/// Molar mass of CO2 from IUPAC standard atomic weights, 12.011 + 2 × 15.999 = 44.009 \[published\].
pub const MOLAR_MASS_CO2: f64 = 44.009;
/// kg CO2e per kg C = 44.009 / 12.011 (IUPAC standard atomic weights) \[published\].
pub const CO2E_PER_C: f64 = MOLAR_MASS_CO2 / ATOMIC_WEIGHT_C;

/// Which published equation set gives AGB (setting `biomass_method`, default Chojnacky 2014).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default, Serialize, Deserialize)]
pub enum BiomassMethod {
    /// Chojnacky, Heath & Jenkins 2014, Forestry 87(1):129–151, Table 5 \[published\].
    #[default]
    #[serde(rename = "chojnacky2014")]
    Chojnacky2014,
    /// Jenkins, Chojnacky, Heath & Birdsey 2003, Forest Science 49(1):12–35 \[published\].
    #[serde(rename = "jenkins2003")]
    Jenkins2003,
}

impl BiomassMethod {
    /// The settings word: `chojnacky2014` or `jenkins2003`.
    pub fn as_str(self) -> &'static str {
        match self {
            Self::Chojnacky2014 => "chojnacky2014",
            Self::Jenkins2003 => "jenkins2003",
        }
    }

    /// Parses the settings word (case and blanks ignored).
    pub fn parse(text: &str) -> Option<Self> {
        match text.trim().to_ascii_lowercase().as_str() {
            "chojnacky2014" => Some(Self::Chojnacky2014),
            "jenkins2003" => Some(Self::Jenkins2003),
            _ => None,
        }
    }

    /// Citation of the equation set.
    pub fn citation(self) -> &'static str {
        match self {
            Self::Chojnacky2014 => {
                "Chojnacky, Heath & Jenkins 2014, Forestry 87(1):129-151, Table 5 [published]"
            }
            Self::Jenkins2003 => {
                "Jenkins, Chojnacky, Heath & Birdsey 2003, Forest Science 49(1):12-35 [published]"
            }
        }
    }
}

/// Coefficients of ln(AGB kg) = β0 + β1 ln(DBH cm).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Allometry {
    pub b0: f64,
    pub b1: f64,
}

impl Allometry {
    /// Aboveground dry biomass (kg) = exp(β0 + β1 ln d); 0 for d ≤ 0
    /// (Jenkins et al. 2003; Chojnacky et al. 2014) [published form].
    pub fn agb_kg(self, dbh_cm: f64) -> f64 {
        if dbh_cm.is_finite() && dbh_cm > 0.0 {
            (self.b0 + self.b1 * dbh_cm.ln()).exp()
        } else {
            0.0
        }
    }

    /// Whole-tree dry biomass (kg) of an urban tree: AGB × 0.8 (Nowak 1994) × (1 + 0.26) (Cairns et al.
    /// 1997) (METHODS.md M13 step 4) \[derived\].
    pub fn whole_tree_biomass_kg(self, dbh_cm: f64) -> f64 {
        whole_tree_biomass_kg(self.agb_kg(dbh_cm))
    }

    /// Stored carbon C(d) (kg) = 0.5 × whole-tree dry biomass [common practice] (METHODS.md M2).
    pub fn carbon_kg(self, dbh_cm: f64) -> f64 {
        carbon_kg(self.whole_tree_biomass_kg(dbh_cm))
    }
}

/// Whole-tree dry biomass (kg) from forest-grown AGB: AGB × 0.8 (Nowak 1994, GTR NE-186) [from memory]
/// × (1 + 0.26) (Cairns et al. 1997) \[published\].
pub fn whole_tree_biomass_kg(agb_kg: f64) -> f64 {
    agb_kg * URBAN_FACTOR * (1.0 + ROOT_SHOOT_RATIO)
}

/// Carbon (kg) = 0.5 × dry biomass [common practice].
pub fn carbon_kg(dry_biomass_kg: f64) -> f64 {
    dry_biomass_kg * CARBON_FRACTION
}

/// CO2e (kg) = C × 44.009 / 12.011 (IUPAC standard atomic weights) \[published\].
pub fn co2e_kg(carbon_kg: f64) -> f64 {
    carbon_kg * CO2E_PER_C
}

/// Jenkins et al. 2003 national species groups (ten), with the exact words of species-reference.csv.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(into = "String", try_from = "String")]
pub enum JenkinsGroup {
    CedarLarch,
    DouglasFir,
    TrueFirHemlock,
    Pine,
    Spruce,
    AspenAlderCottonwoodWillow,
    SoftMapleBirch,
    MixedHardwood,
    HardMapleOakHickoryBeech,
    Woodland,
}

impl JenkinsGroup {
    /// All ten groups.
    pub const ALL: [JenkinsGroup; 10] = [
        Self::CedarLarch,
        Self::DouglasFir,
        Self::TrueFirHemlock,
        Self::Pine,
        Self::Spruce,
        Self::AspenAlderCottonwoodWillow,
        Self::SoftMapleBirch,
        Self::MixedHardwood,
        Self::HardMapleOakHickoryBeech,
        Self::Woodland,
    ];

    /// The group's name as written in species-reference.csv.
    pub fn as_str(self) -> &'static str {
        match self {
            Self::CedarLarch => "cedar/larch",
            Self::DouglasFir => "Douglas-fir",
            Self::TrueFirHemlock => "true fir/hemlock",
            Self::Pine => "pine",
            Self::Spruce => "spruce",
            Self::AspenAlderCottonwoodWillow => "aspen/alder/cottonwood/willow",
            Self::SoftMapleBirch => "soft maple/birch",
            Self::MixedHardwood => "mixed hardwood",
            Self::HardMapleOakHickoryBeech => "hard maple/oak/hickory/beech",
            Self::Woodland => "woodland",
        }
    }

    /// Parses a group name (case, blanks and en dashes ignored).
    pub fn parse(text: &str) -> Option<Self> {
        let key = group_key(text);
        Self::ALL.into_iter().find(|g| group_key(g.as_str()) == key)
    }

    /// β0, β1 of Jenkins et al. 2003 Table 4 (identical in the US forest inventory's species
    /// reference table) \[published\].
    pub fn allometry(self) -> Allometry {
        let (b0, b1) = match self {
            Self::CedarLarch => (-2.0336, 2.2592),
            Self::DouglasFir => (-2.2304, 2.4435),
            Self::TrueFirHemlock => (-2.5384, 2.4814),
            Self::Pine => (-2.5356, 2.4349),
            Self::Spruce => (-2.0773, 2.3323),
            Self::AspenAlderCottonwoodWillow => (-2.2094, 2.3867),
            Self::SoftMapleBirch => (-1.9123, 2.3651),
            Self::MixedHardwood => (-2.4800, 2.4835),
            Self::HardMapleOakHickoryBeech => (-2.0127, 2.4342),
            Self::Woodland => (-0.7152, 1.7029),
        };
        Allometry { b0, b1 }
    }
}

impl From<JenkinsGroup> for String {
    fn from(g: JenkinsGroup) -> String {
        g.as_str().to_string()
    }
}

impl TryFrom<String> for JenkinsGroup {
    type Error = String;
    fn try_from(s: String) -> Result<Self, String> {
        Self::parse(&s).ok_or_else(|| format!("unknown Jenkins 2003 group '{s}'"))
    }
}

/// Chojnacky, Heath & Jenkins 2014 Table 5 taxon groups, one variant per specific-gravity class
/// (SG on green volume), with the exact words of species-reference.csv.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(into = "String", try_from = "String")]
pub enum ChojnackyGroup {
    AbiesLt035,
    AbiesGe035,
    CupressaceaeLt030,
    Cupressaceae030To039,
    CupressaceaeGe040,
    Larix,
    PiceaLt035,
    PiceaGe035,
    PinusLt045,
    PinusGe045,
    Pseudotsuga,
    TsugaLt040,
    TsugaGe040,
    AceraceaeLt050,
    AceraceaeGe050,
    BetulaceaeLt040,
    Betulaceae040To049,
    Betulaceae050To059,
    BetulaceaeGe060,
    /// Cornaceae, Ericaceae, Lauraceae, Platanaceae, Rosaceae, Ulmaceae (also the fallback).
    CornaceaeEtc,
    FabaceaeJuglandaceaeCarya,
    FabaceaeJuglandaceaeOther,
    FagaceaeDeciduous,
    FagaceaeEvergreen,
    Hamamelidaceae,
    HippocastanaceaeTiliaceae,
    Magnoliaceae,
    OleaceaeLt055,
    OleaceaeGe055,
    SalicaceaeLt035,
    SalicaceaeGe035,
}

impl ChojnackyGroup {
    /// Every row of Table 5 as used here.
    pub const ALL: [ChojnackyGroup; 31] = [
        Self::AbiesLt035,
        Self::AbiesGe035,
        Self::CupressaceaeLt030,
        Self::Cupressaceae030To039,
        Self::CupressaceaeGe040,
        Self::Larix,
        Self::PiceaLt035,
        Self::PiceaGe035,
        Self::PinusLt045,
        Self::PinusGe045,
        Self::Pseudotsuga,
        Self::TsugaLt040,
        Self::TsugaGe040,
        Self::AceraceaeLt050,
        Self::AceraceaeGe050,
        Self::BetulaceaeLt040,
        Self::Betulaceae040To049,
        Self::Betulaceae050To059,
        Self::BetulaceaeGe060,
        Self::CornaceaeEtc,
        Self::FabaceaeJuglandaceaeCarya,
        Self::FabaceaeJuglandaceaeOther,
        Self::FagaceaeDeciduous,
        Self::FagaceaeEvergreen,
        Self::Hamamelidaceae,
        Self::HippocastanaceaeTiliaceae,
        Self::Magnoliaceae,
        Self::OleaceaeLt055,
        Self::OleaceaeGe055,
        Self::SalicaceaeLt035,
        Self::SalicaceaeGe035,
    ];

    /// The group's words as written in species-reference.csv (`Aceraceae <0.50`, `Picea >=0.35`,
    /// `Betulaceae 0.40-0.49`, `Fabaceae/Juglandaceae other`, ...).
    pub fn as_str(self) -> &'static str {
        match self {
            Self::AbiesLt035 => "Abies <0.35",
            Self::AbiesGe035 => "Abies >=0.35",
            Self::CupressaceaeLt030 => "Cupressaceae <0.30",
            Self::Cupressaceae030To039 => "Cupressaceae 0.30-0.39",
            Self::CupressaceaeGe040 => "Cupressaceae >=0.40",
            Self::Larix => "Larix",
            Self::PiceaLt035 => "Picea <0.35",
            Self::PiceaGe035 => "Picea >=0.35",
            Self::PinusLt045 => "Pinus <0.45",
            Self::PinusGe045 => "Pinus >=0.45",
            Self::Pseudotsuga => "Pseudotsuga",
            Self::TsugaLt040 => "Tsuga <0.40",
            Self::TsugaGe040 => "Tsuga >=0.40",
            Self::AceraceaeLt050 => "Aceraceae <0.50",
            Self::AceraceaeGe050 => "Aceraceae >=0.50",
            Self::BetulaceaeLt040 => "Betulaceae <0.40",
            Self::Betulaceae040To049 => "Betulaceae 0.40-0.49",
            Self::Betulaceae050To059 => "Betulaceae 0.50-0.59",
            Self::BetulaceaeGe060 => "Betulaceae >=0.60",
            Self::CornaceaeEtc => "Cornaceae/Ericaceae/Lauraceae/Platanaceae/Rosaceae/Ulmaceae",
            Self::FabaceaeJuglandaceaeCarya => "Fabaceae/Juglandaceae Carya",
            Self::FabaceaeJuglandaceaeOther => "Fabaceae/Juglandaceae other",
            Self::FagaceaeDeciduous => "Fagaceae deciduous",
            Self::FagaceaeEvergreen => "Fagaceae evergreen",
            Self::Hamamelidaceae => "Hamamelidaceae",
            Self::HippocastanaceaeTiliaceae => "Hippocastanaceae/Tiliaceae",
            Self::Magnoliaceae => "Magnoliaceae",
            Self::OleaceaeLt055 => "Oleaceae <0.55",
            Self::OleaceaeGe055 => "Oleaceae >=0.55",
            Self::SalicaceaeLt035 => "Salicaceae <0.35",
            Self::SalicaceaeGe035 => "Salicaceae >=0.35",
        }
    }

    /// Parses a group's words; case, blanks, `≥` for `>=`, en dashes and commas between families are
    /// accepted.
    pub fn parse(text: &str) -> Option<Self> {
        let key = group_key(text);
        Self::ALL.into_iter().find(|g| group_key(g.as_str()) == key)
    }

    /// β0, β1 of Chojnacky, Heath & Jenkins 2014, Table 5 [published; METHODS.md M2 notes that the
    /// Betulaceae 0.50–0.59 β0 is −1.8096, one transcription printing a copied Cupressaceae value].
    pub fn allometry(self) -> Allometry {
        let (b0, b1) = match self {
            Self::AbiesLt035 => (-2.3123, 2.3482),
            Self::AbiesGe035 => (-3.1774, 2.6426),
            Self::CupressaceaeLt030 => (-1.9615, 2.1063),
            Self::Cupressaceae030To039 => (-2.7765, 2.4195),
            Self::CupressaceaeGe040 => (-2.6327, 2.4757),
            Self::Larix => (-2.3012, 2.3853),
            Self::PiceaLt035 => (-3.0300, 2.5567),
            Self::PiceaGe035 => (-2.1364, 2.3233),
            Self::PinusLt045 => (-2.6177, 2.4638),
            Self::PinusGe045 => (-3.0506, 2.6465),
            Self::Pseudotsuga => (-2.4623, 2.4852),
            Self::TsugaLt040 => (-2.3480, 2.3876),
            Self::TsugaGe040 => (-2.9208, 2.5697),
            Self::AceraceaeLt050 => (-2.0470, 2.3852),
            Self::AceraceaeGe050 => (-1.8011, 2.3852),
            Self::BetulaceaeLt040 => (-2.5932, 2.5349),
            Self::Betulaceae040To049 => (-2.2271, 2.4513),
            Self::Betulaceae050To059 => (-1.8096, 2.3480),
            Self::BetulaceaeGe060 => (-2.2652, 2.5349),
            Self::CornaceaeEtc => (-2.2118, 2.4133),
            Self::FabaceaeJuglandaceaeCarya => (-2.5095, 2.6175),
            Self::FabaceaeJuglandaceaeOther => (-2.5095, 2.5437),
            Self::FagaceaeDeciduous => (-2.0705, 2.4410),
            Self::FagaceaeEvergreen => (-2.2198, 2.4410),
            Self::Hamamelidaceae => (-2.6390, 2.5466),
            Self::HippocastanaceaeTiliaceae => (-2.4108, 2.4177),
            Self::Magnoliaceae => (-2.5497, 2.5011),
            Self::OleaceaeLt055 => (-2.0314, 2.3524),
            Self::OleaceaeGe055 => (-1.8384, 2.3524),
            Self::SalicaceaeLt035 => (-2.6863, 2.4561),
            Self::SalicaceaeGe035 => (-2.4441, 2.4561),
        };
        Allometry { b0, b1 }
    }
}

impl From<ChojnackyGroup> for String {
    fn from(g: ChojnackyGroup) -> String {
        g.as_str().to_string()
    }
}

impl TryFrom<String> for ChojnackyGroup {
    type Error = String;
    fn try_from(s: String) -> Result<Self, String> {
        Self::parse(&s).ok_or_else(|| format!("unknown Chojnacky 2014 group '{s}'"))
    }
}

/// Normalises a group's words for comparison: lower case, no blanks, `≥`→`>=`, dashes → `-`,
/// commas → `/`.
fn group_key(text: &str) -> String {
    text.trim()
        .to_lowercase()
        .replace('≥', ">=")
        .replace(['–', '—'], "-")
        .replace(',', "/")
        .chars()
        .filter(|c| !c.is_whitespace())
        .collect()
}

/// The Chojnacky 2014 group chosen for a species, and whether it was a fallback.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct GroupChoice {
    pub group: ChojnackyGroup,
    /// True when the taxon has no row of its own (or its SG was unknown) and a fallback was used
    /// [derived choice].
    pub fallback: bool,
}

/// Picks the Chojnacky 2014 Table 5 group of a species from its family (as grouped in Chojnacky
/// 2014), genus, wood specific gravity on green volume and leaf habit (for user-added species).
///
/// Conifer groups go by genus (Abies, Larix, Picea, Pinus, Pseudotsuga, Tsuga) or family
/// (Cupressaceae); hardwood groups by family, with Carya its own Juglandaceae row and Fagaceae split by
/// leaf habit [published grouping]. Genera whose APG family differs from the 2014 grouping are mapped
/// back (Acer → Aceraceae, Aesculus → Hippocastanaceae, Tilia → Tiliaceae, Liquidambar →
/// Hamamelidaceae) [derived choice]. Taxa without a group of their own (e.g. Ginkgo) use the
/// Cornaceae/Ericaceae/Lauraceae/Platanaceae/Rosaceae/Ulmaceae row, flagged as fallback [derived
/// choice, METHODS.md M2]. An unknown SG in an SG-classed group takes the lowest class, flagged
/// [derived choice].
pub fn choose_chojnacky_group(
    family: &str,
    genus: &str,
    sg_green: Option<f64>,
    leaf_habit: LeafHabit,
) -> GroupChoice {
    use ChojnackyGroup as G;
    let genus = genus.trim().to_ascii_lowercase();
    let family = match genus.as_str() {
        "acer" => "aceraceae".to_string(),
        "aesculus" => "hippocastanaceae".to_string(),
        "tilia" => "tiliaceae".to_string(),
        "liquidambar" => "hamamelidaceae".to_string(),
        _ => family.trim().to_ascii_lowercase(),
    };
    let sg = sg_green.filter(|s| s.is_finite() && *s > 0.0);
    // (lowest class, [(lower bound, group)] ascending) → class by SG.
    let by_sg = |classes: &[(f64, ChojnackyGroup)]| -> GroupChoice {
        match sg {
            Some(s) => GroupChoice {
                group: classes
                    .iter()
                    .rev()
                    .find(|(lower, _)| s >= *lower)
                    .map_or(classes[0].1, |(_, g)| *g),
                fallback: false,
            },
            None => GroupChoice {
                group: classes[0].1,
                fallback: true,
            },
        }
    };
    let fixed = |group| GroupChoice {
        group,
        fallback: false,
    };
    match genus.as_str() {
        "abies" => return by_sg(&[(0.0, G::AbiesLt035), (0.35, G::AbiesGe035)]),
        "larix" => return fixed(G::Larix),
        "picea" => return by_sg(&[(0.0, G::PiceaLt035), (0.35, G::PiceaGe035)]),
        "pinus" => return by_sg(&[(0.0, G::PinusLt045), (0.45, G::PinusGe045)]),
        "pseudotsuga" => return fixed(G::Pseudotsuga),
        "tsuga" => return by_sg(&[(0.0, G::TsugaLt040), (0.40, G::TsugaGe040)]),
        "carya" => return fixed(G::FabaceaeJuglandaceaeCarya),
        _ => {}
    }
    match family.as_str() {
        "cupressaceae" => by_sg(&[
            (0.0, G::CupressaceaeLt030),
            (0.30, G::Cupressaceae030To039),
            (0.40, G::CupressaceaeGe040),
        ]),
        "aceraceae" => by_sg(&[(0.0, G::AceraceaeLt050), (0.50, G::AceraceaeGe050)]),
        "betulaceae" => by_sg(&[
            (0.0, G::BetulaceaeLt040),
            (0.40, G::Betulaceae040To049),
            (0.50, G::Betulaceae050To059),
            (0.60, G::BetulaceaeGe060),
        ]),
        "cornaceae" | "ericaceae" | "lauraceae" | "platanaceae" | "rosaceae" | "ulmaceae" => {
            fixed(G::CornaceaeEtc)
        }
        "fabaceae" | "juglandaceae" => fixed(G::FabaceaeJuglandaceaeOther),
        "fagaceae" => fixed(match leaf_habit {
            LeafHabit::Deciduous => G::FagaceaeDeciduous,
            LeafHabit::Evergreen => G::FagaceaeEvergreen,
        }),
        "hamamelidaceae" => fixed(G::Hamamelidaceae),
        "hippocastanaceae" | "tiliaceae" => fixed(G::HippocastanaceaeTiliaceae),
        "magnoliaceae" => fixed(G::Magnoliaceae),
        "oleaceae" => by_sg(&[(0.0, G::OleaceaeLt055), (0.55, G::OleaceaeGe055)]),
        "salicaceae" => by_sg(&[(0.0, G::SalicaceaeLt035), (0.35, G::SalicaceaeGe035)]),
        _ => GroupChoice {
            group: G::CornaceaeEtc,
            fallback: true,
        },
    }
}

/// A species' two biomass groups; the setting `biomass_method` picks which one is used.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct BiomassGroups {
    pub jenkins: JenkinsGroup,
    pub chojnacky: ChojnackyGroup,
}

impl BiomassGroups {
    /// The allometry for the chosen method.
    pub fn allometry(self, method: BiomassMethod) -> Allometry {
        match method {
            BiomassMethod::Chojnacky2014 => self.chojnacky.allometry(),
            BiomassMethod::Jenkins2003 => self.jenkins.allometry(),
        }
    }

    /// The group's words for the chosen method (for the tree card).
    pub fn group_name(self, method: BiomassMethod) -> &'static str {
        match method {
            BiomassMethod::Chojnacky2014 => self.chojnacky.as_str(),
            BiomassMethod::Jenkins2003 => self.jenkins.as_str(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn agb(group: JenkinsGroup, d: f64) -> f64 {
        group.allometry().agb_kg(d)
    }

    // Outside check: METHODS.md M2 worked AGB values [derived from the published Jenkins 2003 β,
    // identical in the US forest inventory's species reference table], printed to 0.01 kg.
    #[test]
    fn jenkins_2003_worked_values() {
        use JenkinsGroup::*;
        let cases = [
            (MixedHardwood, [25.49, 390.28, 1387.85]),
            (HardMapleOakHickoryBeech, [36.32, 526.63, 1826.12]),
            (Pine, [21.56, 312.93, 1085.49]),
        ];
        for (group, expected) in cases {
            for (d, want) in [10.0, 30.0, 50.0].into_iter().zip(expected) {
                assert_relative_eq!(agb(group, d), want, max_relative = 2e-4);
            }
        }
    }

    // Outside check: METHODS.md M2, Chojnacky et al. 2014 Table 5 at 30 cm [derived from published β].
    #[test]
    fn chojnacky_2014_worked_values_at_30_cm() {
        let at30 = |g: ChojnackyGroup| g.allometry().agb_kg(30.0);
        assert_relative_eq!(
            at30(ChojnackyGroup::AceraceaeLt050),
            430.75,
            max_relative = 2e-4
        );
        assert_relative_eq!(
            at30(ChojnackyGroup::FagaceaeDeciduous),
            508.68,
            max_relative = 2e-4
        );
        assert_relative_eq!(
            at30(ChojnackyGroup::HippocastanaceaeTiliaceae),
            334.38,
            max_relative = 2e-4
        );
    }

    // Outside check: METHODS.md M2 chain, Jenkins mixed hardwood at 30 cm:
    // 390.28 × 0.8 × 1.26 × 0.5 = 196.70 kg C = 720.7 kg CO2e [derived].
    #[test]
    fn carbon_chain_jenkins_mixed_hardwood_30_cm() {
        let allometry = JenkinsGroup::MixedHardwood.allometry();
        assert_relative_eq!(allometry.carbon_kg(30.0), 196.70, max_relative = 1e-4);
        assert_relative_eq!(
            co2e_kg(allometry.carbon_kg(30.0)),
            720.7,
            max_relative = 1e-4
        );
        assert_relative_eq!(
            allometry.whole_tree_biomass_kg(30.0),
            393.40,
            max_relative = 1e-4
        );
    }

    // Outside check: IUPAC standard atomic weights C 12.011, O 15.999 → CO2 44.009; ratio 3.664.
    #[test]
    fn co2_per_carbon_from_iupac_weights() {
        assert_relative_eq!(MOLAR_MASS_CO2, 12.011 + 2.0 * 15.999, max_relative = 1e-12);
        assert_relative_eq!(CO2E_PER_C, 3.664, max_relative = 1e-4);
    }

    #[test]
    fn agb_is_zero_without_a_stem_and_increasing_in_dbh() {
        let a = ChojnackyGroup::CornaceaeEtc.allometry();
        assert_eq!(a.agb_kg(0.0), 0.0);
        assert_eq!(a.agb_kg(-1.0), 0.0);
        let mut last = 0.0;
        for d in 1..150 {
            let v = a.agb_kg(f64::from(d));
            assert!(v > last);
            last = v;
        }
    }

    // Check values: every group word in /work/shared/species-reference.csv parses (METHODS.md M2).
    #[test]
    fn parses_the_reference_table_words() {
        for word in [
            "soft maple/birch",
            "hard maple/oak/hickory/beech",
            "mixed hardwood",
            "pine",
            "spruce",
            "Douglas-fir",
        ] {
            assert!(JenkinsGroup::parse(word).is_some(), "{word}");
        }
        let table = [
            ("Aceraceae <0.50", ChojnackyGroup::AceraceaeLt050),
            ("Aceraceae >=0.50", ChojnackyGroup::AceraceaeGe050),
            ("Fagaceae deciduous", ChojnackyGroup::FagaceaeDeciduous),
            ("Fagaceae evergreen", ChojnackyGroup::FagaceaeEvergreen),
            (
                "Cornaceae/Ericaceae/Lauraceae/Platanaceae/Rosaceae/Ulmaceae",
                ChojnackyGroup::CornaceaeEtc,
            ),
            (
                "Hippocastanaceae/Tiliaceae",
                ChojnackyGroup::HippocastanaceaeTiliaceae,
            ),
            ("Oleaceae <0.55", ChojnackyGroup::OleaceaeLt055),
            ("Oleaceae >=0.55", ChojnackyGroup::OleaceaeGe055),
            (
                "Fabaceae/Juglandaceae other",
                ChojnackyGroup::FabaceaeJuglandaceaeOther,
            ),
            ("Hamamelidaceae", ChojnackyGroup::Hamamelidaceae),
            ("Pinus <0.45", ChojnackyGroup::PinusLt045),
            ("Picea >=0.35", ChojnackyGroup::PiceaGe035),
            ("Pseudotsuga", ChojnackyGroup::Pseudotsuga),
            ("picea ≥ 0.35", ChojnackyGroup::PiceaGe035),
            ("Betulaceae 0.40–0.49", ChojnackyGroup::Betulaceae040To049),
        ];
        for (word, group) in table {
            assert_eq!(ChojnackyGroup::parse(word), Some(group), "{word}");
        }
        assert_eq!(ChojnackyGroup::parse("Rosaceae"), None);
        for g in ChojnackyGroup::ALL {
            assert_eq!(ChojnackyGroup::parse(g.as_str()), Some(g));
        }
        for g in JenkinsGroup::ALL {
            assert_eq!(JenkinsGroup::parse(g.as_str()), Some(g));
        }
    }

    // Check values: the species-reference.csv assignments (family, sg_green, leaf habit → group).
    #[test]
    fn picks_the_reference_table_groups_for_user_species() {
        use ChojnackyGroup as G;
        use LeafHabit::*;
        let cases = [
            (
                "Aceraceae",
                "Acer",
                0.47,
                Deciduous,
                G::AceraceaeLt050,
                false,
            ),
            (
                "Sapindaceae",
                "Acer",
                0.56,
                Deciduous,
                G::AceraceaeGe050,
                false,
            ),
            (
                "Fagaceae",
                "Quercus",
                0.80,
                Evergreen,
                G::FagaceaeEvergreen,
                false,
            ),
            (
                "Fagaceae",
                "Quercus",
                0.56,
                Deciduous,
                G::FagaceaeDeciduous,
                false,
            ),
            (
                "Platanaceae",
                "Platanus",
                0.46,
                Deciduous,
                G::CornaceaeEtc,
                false,
            ),
            (
                "Malvaceae",
                "Tilia",
                0.32,
                Deciduous,
                G::HippocastanaceaeTiliaceae,
                false,
            ),
            (
                "Oleaceae",
                "Fraxinus",
                0.53,
                Deciduous,
                G::OleaceaeLt055,
                false,
            ),
            (
                "Oleaceae",
                "Fraxinus",
                0.55,
                Deciduous,
                G::OleaceaeGe055,
                false,
            ),
            (
                "Fabaceae",
                "Gleditsia",
                0.60,
                Deciduous,
                G::FabaceaeJuglandaceaeOther,
                false,
            ),
            (
                "Juglandaceae",
                "Carya",
                0.64,
                Deciduous,
                G::FabaceaeJuglandaceaeCarya,
                false,
            ),
            (
                "Hamamelidaceae",
                "Liquidambar",
                0.46,
                Deciduous,
                G::Hamamelidaceae,
                false,
            ),
            ("Pinaceae", "Pinus", 0.34, Evergreen, G::PinusLt045, false),
            ("Pinaceae", "Picea", 0.36, Evergreen, G::PiceaGe035, false),
            (
                "Pinaceae",
                "Pseudotsuga",
                0.45,
                Evergreen,
                G::Pseudotsuga,
                false,
            ),
            (
                "Betulaceae",
                "Betula",
                0.55,
                Deciduous,
                G::Betulaceae050To059,
                false,
            ),
            (
                "Ginkgoaceae",
                "Ginkgo",
                0.52,
                Deciduous,
                G::CornaceaeEtc,
                true,
            ),
        ];
        for (family, genus, sg, habit, want, fallback) in cases {
            let got = choose_chojnacky_group(family, genus, Some(sg), habit);
            assert_eq!(
                got,
                GroupChoice {
                    group: want,
                    fallback
                },
                "{genus}"
            );
        }
        let unknown_sg = choose_chojnacky_group("Aceraceae", "Acer", None, Deciduous);
        assert!(unknown_sg.fallback);
    }

    #[test]
    fn method_words_and_selection() {
        assert_eq!(
            BiomassMethod::parse("Jenkins2003"),
            Some(BiomassMethod::Jenkins2003)
        );
        assert_eq!(BiomassMethod::default(), BiomassMethod::Chojnacky2014);
        let groups = BiomassGroups {
            jenkins: JenkinsGroup::MixedHardwood,
            chojnacky: ChojnackyGroup::HippocastanaceaeTiliaceae,
        };
        assert_eq!(groups.allometry(BiomassMethod::Jenkins2003).b0, -2.48);
        assert_eq!(groups.allometry(BiomassMethod::Chojnacky2014).b0, -2.4108);
    }
}
