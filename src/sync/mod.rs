//! The decisions of a merge of two copies of an inventory, as pure functions of plain values (the store
//! gathers the facts from both files' audit logs, `store/merge.rs` applies the outcome).
//!
//! For one field of one row present in both files, each side brings its value, the time of the change
//! that gave the field that value (`changed_at`, ISO 8601 UTC, the audit log's `at` or, for a value a
//! merge brought in, the time of the original change), and whether that change is *news* to the other
//! side (made after the other side last saw this side's changes).
//!
//! The rule, symmetric in the two sides (so A into B and B into A give the same values):
//! - equal values: nothing to write; but when the other side's change is news and later than this
//!   side's, this side takes over its time and records it as a change of its own (a *confirmation*), so
//!   a third copy merged later meets the value with the time and news it has in the other file (without
//!   it, a copy that edited A→B→A merged before one that edited A→B lost to it; in the other order it
//!   won);
//! - only one side's change is news: that side wins (the other side's value is what both had before);
//! - both are news (a **conflict**: both changed the field differently since they last agreed), or
//!   neither is (one-way merges left them apart): the later change wins; on a tie of times, the value
//!   whose JSON text sorts last wins.

use std::cmp::Ordering;
use std::collections::BTreeMap;

use serde::Serialize;
use serde_json::Value;

/// One side's view of one field.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FieldSide {
    pub value: Value,
    /// When the change that gave the field its value was made ("" when unknown: older than anything).
    pub changed_at: String,
    /// Who made that change (the audit log's actor; "" when unknown).
    pub changed_by: String,
    /// The change was made after the other side last saw this side's changes.
    pub news: bool,
}

/// Which file a value came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Side {
    /// The inventory merged into (this file).
    Target,
    /// The copy being merged.
    Other,
}

/// Why a side won.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Rule {
    /// The values are equal.
    Equal,
    /// Only this side changed the field since the two last agreed.
    OnlyChange,
    /// This side's change is the later one.
    LaterChange,
    /// Both changes have the same time; this value's JSON text sorts last.
    TieLargerValue,
}

impl Rule {
    /// The rule in words, for reports.
    pub fn describe(self) -> &'static str {
        match self {
            Rule::Equal => "equal values",
            Rule::OnlyChange => "the only change since the copies last agreed",
            Rule::LaterChange => "the later change",
            Rule::TieLargerValue => "same time: the value that sorts last",
        }
    }
}

/// The decision for one field.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct FieldDecision {
    pub winner: Side,
    pub conflict: bool,
    pub rule: Rule,
}

/// Equal values, the other side's change is news and later: the target records the other side's time
/// for the field as a change of its own (see the module documentation).
pub fn confirms(target: &FieldSide, other: &FieldSide) -> bool {
    same_value(&target.value, &other.value) && other.news && other.changed_at > target.changed_at
}

/// The canonical text of a value (how ties are broken).
pub fn value_text(value: &Value) -> String {
    value.to_string()
}

/// Decides one field (see the module documentation).
pub fn decide(target: &FieldSide, other: &FieldSide) -> FieldDecision {
    if same_value(&target.value, &other.value) {
        return FieldDecision {
            winner: Side::Target,
            conflict: false,
            rule: Rule::Equal,
        };
    }
    match (target.news, other.news) {
        (true, false) => FieldDecision {
            winner: Side::Target,
            conflict: false,
            rule: Rule::OnlyChange,
        },
        (false, true) => FieldDecision {
            winner: Side::Other,
            conflict: false,
            rule: Rule::OnlyChange,
        },
        (both, _) => {
            let (winner, rule) = match target.changed_at.cmp(&other.changed_at) {
                Ordering::Greater => (Side::Target, Rule::LaterChange),
                Ordering::Less => (Side::Other, Rule::LaterChange),
                Ordering::Equal => {
                    if value_text(&target.value) >= value_text(&other.value) {
                        (Side::Target, Rule::TieLargerValue)
                    } else {
                        (Side::Other, Rule::TieLargerValue)
                    }
                }
            };
            FieldDecision {
                winner,
                conflict: both,
                rule,
            }
        }
    }
}

/// Equal as stored values (numbers compare as numbers: 10 and 10.0 are equal).
pub fn same_value(a: &Value, b: &Value) -> bool {
    match (a, b) {
        (Value::Number(x), Value::Number(y)) => match (x.as_f64(), y.as_f64()) {
            (Some(x), Some(y)) => x == y,
            _ => x == y,
        },
        _ => a == b,
    }
}

/// A field the other side's value wins: written into the target with its original change time.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FieldWrite {
    pub field: String,
    pub value: Value,
    pub changed_at: String,
}

/// Both sides changed a field differently since they last agreed.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FieldConflict {
    pub field: String,
    pub target_value: Value,
    pub target_changed_at: String,
    pub other_value: Value,
    pub other_changed_at: String,
    pub target_changed_by: String,
    pub other_changed_by: String,
    /// The side whose value the merge keeps.
    pub winner: Side,
    /// Why the rule picks `default_winner` (the rule's reason, also when a person chose).
    pub rule: Rule,
    /// The side the rule picks (the later change); `winner` differs only when chosen by hand.
    pub default_winner: Side,
    /// A person chose the side (`streetwood merge --interactive`).
    pub by_hand: bool,
}

/// What a merge does to one row present in both files.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct RowMerge {
    /// Fields to set in the target (the other side won).
    pub writes: Vec<FieldWrite>,
    /// Fields whose value is equal on both sides but whose time the target takes over ([`confirms`]).
    pub confirmations: Vec<FieldWrite>,
    pub conflicts: Vec<FieldConflict>,
}

/// Merges one row field by field. Fields missing on one side are left alone.
pub fn merge_row(
    target: &BTreeMap<String, FieldSide>,
    other: &BTreeMap<String, FieldSide>,
) -> RowMerge {
    merge_row_with(target, other, |_| None)
}

/// [`merge_row`] where `choose(field)` may pick the side of a conflict by hand (`None`: the rule's
/// choice). Choices for fields that are not in conflict are not asked for.
pub fn merge_row_with(
    target: &BTreeMap<String, FieldSide>,
    other: &BTreeMap<String, FieldSide>,
    choose: impl Fn(&str) -> Option<Side>,
) -> RowMerge {
    let mut out = RowMerge::default();
    for (field, t) in target {
        let Some(o) = other.get(field) else { continue };
        let mut decision = decide(t, o);
        if decision.rule == Rule::Equal {
            if confirms(t, o) {
                out.confirmations.push(FieldWrite {
                    field: field.clone(),
                    value: o.value.clone(),
                    changed_at: o.changed_at.clone(),
                });
            }
            continue;
        }
        if decision.conflict {
            let default_winner = decision.winner;
            let chosen = choose(field);
            if let Some(side) = chosen {
                decision.winner = side;
            }
            out.conflicts.push(FieldConflict {
                field: field.clone(),
                target_value: t.value.clone(),
                target_changed_at: t.changed_at.clone(),
                other_value: o.value.clone(),
                other_changed_at: o.changed_at.clone(),
                target_changed_by: t.changed_by.clone(),
                other_changed_by: o.changed_by.clone(),
                winner: decision.winner,
                rule: decision.rule,
                default_winner,
                by_hand: chosen.is_some(),
            });
        }
        if decision.winner == Side::Other {
            out.writes.push(FieldWrite {
                field: field.clone(),
                value: o.value.clone(),
                changed_at: o.changed_at.clone(),
            });
        }
    }
    out
}

/// The later of two change times (`updated_at` after a merge).
pub fn later<'a>(a: &'a str, b: &'a str) -> &'a str {
    if a >= b { a } else { b }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn side(value: Value, at: &str, news: bool) -> FieldSide {
        FieldSide {
            value,
            changed_at: at.to_string(),
            changed_by: "crew".to_string(),
            news,
        }
    }

    #[test]
    fn only_the_side_that_changed_wins_without_a_conflict() {
        let old = side(Value::from("Elm Row"), "2026-01-01T00:00:00.000Z", false);
        let new = side(Value::from("Oak Lane"), "2025-01-01T00:00:00.000Z", true);
        let d = decide(&old, &new);
        assert_eq!(
            (d.winner, d.conflict, d.rule),
            (Side::Other, false, Rule::OnlyChange)
        );
        let d = decide(&new, &old);
        assert_eq!((d.winner, d.conflict), (Side::Target, false));
    }

    #[test]
    fn both_changed_is_a_conflict_won_by_the_later_change_then_the_larger_value() {
        let a = side(Value::from("done"), "2026-06-02T10:00:00.000Z", true);
        let b = side(Value::from("open"), "2026-06-02T09:00:00.000Z", true);
        let d = decide(&a, &b);
        assert_eq!(
            (d.winner, d.conflict, d.rule),
            (Side::Target, true, Rule::LaterChange)
        );
        let tie = side(Value::from("open"), "2026-06-02T10:00:00.000Z", true);
        let d = decide(&a, &tie);
        assert_eq!((d.winner, d.rule), (Side::Other, Rule::TieLargerValue));
    }

    #[test]
    fn equal_values_never_conflict_and_numbers_compare_as_numbers() {
        let a = side(serde_json::json!(10), "2026-01-01", true);
        let b = side(serde_json::json!(10.0), "2026-02-01", true);
        assert_eq!(decide(&a, &b).rule, Rule::Equal);
        assert!(!decide(&a, &b).conflict);
    }

    #[test]
    fn an_equal_value_changed_later_on_the_other_side_is_confirmed() {
        let mine = side(Value::from("Elm Row"), "", false);
        let back = side(Value::from("Elm Row"), "2026-06-02T10:00:00.000Z", true);
        assert!(confirms(&mine, &back));
        // Not news, not later, or not equal: nothing to confirm.
        assert!(!confirms(
            &mine,
            &side(Value::from("Elm Row"), "2026-06-02", false)
        ));
        assert!(!confirms(&back, &back.clone()));
        assert!(!confirms(
            &mine,
            &side(Value::from("Mill Lane"), "2026-06-02", true)
        ));
        let target = BTreeMap::from([("street".to_string(), mine)]);
        let other = BTreeMap::from([("street".to_string(), back)]);
        let row = merge_row(&target, &other);
        assert!(row.writes.is_empty() && row.conflicts.is_empty());
        assert_eq!(row.confirmations.len(), 1);
        assert_eq!(row.confirmations[0].changed_at, "2026-06-02T10:00:00.000Z");
    }

    #[test]
    fn a_conflict_chosen_by_hand_keeps_the_chosen_side_and_the_rule_s_default() {
        let target = BTreeMap::from([(
            "notes".to_string(),
            side(Value::from("cavity"), "2026-06-02T10:00:00.000Z", true),
        )]);
        let other = BTreeMap::from([(
            "notes".to_string(),
            side(Value::from("leans"), "2026-06-01T10:00:00.000Z", true),
        )]);
        let auto = merge_row(&target, &other);
        assert!(auto.writes.is_empty());
        assert_eq!(auto.conflicts[0].winner, Side::Target);
        assert!(!auto.conflicts[0].by_hand);
        let chosen = merge_row_with(&target, &other, |f| (f == "notes").then_some(Side::Other));
        assert_eq!(chosen.writes.len(), 1);
        assert_eq!(chosen.writes[0].value, Value::from("leans"));
        let c = &chosen.conflicts[0];
        assert_eq!(
            (c.winner, c.default_winner, c.by_hand),
            (Side::Other, Side::Target, true)
        );
        assert_eq!(c.rule, Rule::LaterChange);
    }

    fn any_side() -> impl Strategy<Value = FieldSide> {
        (
            prop_oneof![
                Just(Value::Null),
                (0i64..4).prop_map(Value::from),
                "[a-c]{0,2}".prop_map(Value::from)
            ],
            "2026-0[1-3]",
            any::<bool>(),
        )
            .prop_map(|(value, changed_at, news)| FieldSide {
                value,
                changed_at,
                changed_by: String::new(),
                news,
            })
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(256))]

        /// Swapping the sides picks the same value and the same conflict flag (commutativity).
        #[test]
        fn the_decision_is_symmetric(a in any_side(), b in any_side()) {
            let ab = decide(&a, &b);
            let ba = decide(&b, &a);
            let pick = |d: FieldDecision, t: &FieldSide, o: &FieldSide| match d.winner {
                Side::Target => t.value.clone(),
                Side::Other => o.value.clone(),
            };
            prop_assert!(same_value(&pick(ab, &a, &b), &pick(ba, &b, &a)));
            prop_assert_eq!(ab.conflict, ba.conflict);
            prop_assert_eq!(ab.conflict, a.news && b.news && !same_value(&a.value, &b.value));
        }

        /// Deciding again between the result and the same other side changes nothing (idempotence).
        #[test]
        fn deciding_twice_changes_nothing(a in any_side(), b in any_side()) {
            let first = decide(&a, &b);
            let merged = match first.winner {
                Side::Target => a.clone(),
                Side::Other => b.clone(),
            };
            let second = decide(&merged, &b);
            prop_assert!(second.winner == Side::Target || same_value(&merged.value, &b.value));
        }
    }
}
