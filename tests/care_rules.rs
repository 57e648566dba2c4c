//! Care rules against their sources: the two risk matrices of the ISA Tree Risk Assessment BMP (Smiley,
//! Matheny & Lilly 2017) cell by cell as METHODS.md M9 prints them (copied verbatim below), the
//! re-inspection intervals of M9 and the cycle lengths of M10 as seeded settings.

use streetwood::care::cycles::CycleRules;
use streetwood::care::risk::{
    self, Consequences, Likelihood, LikelihoodOfFailure, LikelihoodOfImpact, RiskRating,
};

/// METHODS.md M9, Matrix 1 (ISA BMP 2017) [published], verbatim.
const MATRIX_1: &str = "\
| failure \\ impact | very low | low | medium | high |
|---|---|---|---|---|
| imminent | unlikely | somewhat likely | likely | very likely |
| probable | unlikely | unlikely | somewhat likely | likely |
| possible | unlikely | unlikely | unlikely | somewhat likely |
| improbable | unlikely | unlikely | unlikely | unlikely |";

/// METHODS.md M9, Matrix 2 (ISA BMP 2017; cell counts published, layout from memory), verbatim.
const MATRIX_2: &str = "\
| likelihood \\ consequences | negligible | minor | significant | severe |
|---|---|---|---|---|
| very likely | low | moderate | high | extreme |
| likely | low | moderate | high | high |
| somewhat likely | low | low | moderate | moderate |
| unlikely | low | low | low | low |";

/// A markdown table as (row label, column label, cell) triples.
fn cells(table: &str) -> Vec<(String, String, String)> {
    let split = |line: &str| -> Vec<String> {
        line.trim()
            .trim_matches('|')
            .split('|')
            .map(|c| c.trim().to_string())
            .collect()
    };
    let mut lines = table.lines();
    let header = split(lines.next().expect("header"));
    lines.next();
    let mut out = Vec::new();
    for line in lines {
        let row = split(line);
        for (column, cell) in header.iter().zip(&row).skip(1) {
            out.push((row[0].clone(), column.clone(), cell.clone()));
        }
    }
    out
}

#[test]
fn matrix_one_matches_methods_m9_in_all_16_cells() {
    let cells = cells(MATRIX_1);
    assert_eq!(cells.len(), 16);
    for (failure, impact, expected) in cells {
        let f = LikelihoodOfFailure::parse(&failure).expect("failure word");
        let i = LikelihoodOfImpact::parse(&impact).expect("impact word");
        let e = Likelihood::parse(&expected).expect("likelihood word");
        assert_eq!(
            risk::likelihood(f, i),
            e,
            "ISA BMP Matrix 1: {failure} × {impact}"
        );
    }
}

#[test]
fn matrix_two_matches_methods_m9_in_all_16_cells() {
    let cells = cells(MATRIX_2);
    assert_eq!(cells.len(), 16);
    for (likelihood, consequences, expected) in cells {
        let l = Likelihood::parse(&likelihood).expect("likelihood word");
        let c = Consequences::parse(&consequences).expect("consequences word");
        let e = RiskRating::parse(&expected).expect("rating word");
        assert_eq!(
            risk::rating(l, c),
            e,
            "ISA BMP Matrix 2: {likelihood} × {consequences}"
        );
    }
}

/// The chain through both matrices for all 64 combinations equals the two printed tables composed.
#[test]
fn every_failure_mode_goes_through_both_matrices() {
    let one = cells(MATRIX_1);
    let two = cells(MATRIX_2);
    let lookup = |table: &[(String, String, String)], row: &str, column: &str| -> String {
        table
            .iter()
            .find(|(r, c, _)| r == row && c == column)
            .map(|(_, _, cell)| cell.clone())
            .expect("cell")
    };
    let word = |text: &str| text.replace('_', " ");
    for f in LikelihoodOfFailure::ALL {
        for i in LikelihoodOfImpact::ALL {
            for c in Consequences::ALL {
                let likely = lookup(&one, &word(f.as_str()), &word(i.as_str()));
                let expected = lookup(&two, &likely, &word(c.as_str()));
                assert_eq!(
                    risk::failure_mode_rating(*f, *i, *c).as_str(),
                    expected,
                    "{f} × {i} × {c}"
                );
            }
        }
    }
    // ISA BMP [published]: the overall rating is the highest over the modes.
    assert_eq!(
        risk::overall_rating([RiskRating::Moderate, RiskRating::Extreme, RiskRating::Low]),
        Some(RiskRating::Extreme)
    );
}

/// METHODS.md M9 re-inspection settings (extreme 0 = mitigate now, high 6, moderate 24, low 60 months) and
/// M10 cycle lengths (pruning 5 years, training 3 years below 15 cm DBH, stakes out after 1 year) are
/// the seeded defaults.
#[test]
fn seeded_settings_carry_the_m9_intervals_and_m10_cycles() {
    let store = streetwood::store::Store::open_in_memory().expect("store");
    let settings = store.settings().expect("settings");
    let value = |key: &str| {
        settings
            .iter()
            .find(|(k, _)| k == key)
            .map(|(_, v)| v.clone())
            .unwrap_or_else(|| panic!("no setting {key}"))
    };
    assert_eq!(value("reinspect_months_extreme"), "0");
    assert_eq!(value("reinspect_months_high"), "6");
    assert_eq!(value("reinspect_months_moderate"), "24");
    assert_eq!(value("reinspect_months_low"), "60");
    assert_eq!(value("cycle_prune_years"), "5");
    assert_eq!(value("cycle_training_years"), "3");
    assert_eq!(value("cycle_training_max_dbh_cm"), "15");
    assert_eq!(value("cycle_stake_removal_months"), "12");
    let rules = store.cycle_rules().expect("rules");
    assert_eq!(rules, CycleRules::default());
    assert!(streetwood::settings::validate("cycle_prune_years", "7").is_ok());
    let bad = streetwood::settings::validate("cycle_prune_years", "0").expect_err("zero years");
    assert!(bad.contains("cycle_prune_years"), "{bad}");
}
