//! A tree risk assessment: failure modes rated by the two matrices, the overall rating, the next
//! inspection, mitigation options with their residual risk, and the work order a high or extreme rating
//! proposes (METHODS.md M9, after the ISA Tree Risk Assessment BMP, Smiley, Matheny & Lilly 2017).

use chrono::NaiveDate;
use serde::Serialize;

use super::risk::{
    self, Consequences, Likelihood, LikelihoodOfFailure, LikelihoodOfImpact, Occupancy, RiskRating,
    TreePart,
};
use super::work::{NewWorkOrder, Priority, WorkTask};
use super::{InputError, clean_text};
use crate::model::TreeStatus;

/// Assessment level (ISA BMP; METHODS.md M9): 1 limited visual, 2 basic, 3 advanced.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(into = "u8")]
pub enum AssessmentLevel {
    Limited = 1,
    Basic = 2,
    Advanced = 3,
}

impl AssessmentLevel {
    /// The level of a number 1, 2 or 3.
    pub fn new(value: i64) -> Result<Self, InputError> {
        match value {
            1 => Ok(AssessmentLevel::Limited),
            2 => Ok(AssessmentLevel::Basic),
            3 => Ok(AssessmentLevel::Advanced),
            _ => Err(InputError::new(
                "level",
                format!("{value} must be 1 (limited visual), 2 (basic) or 3 (advanced)"),
            )),
        }
    }

    /// 1, 2 or 3.
    pub fn number(self) -> u8 {
        self as u8
    }

    /// The level's name.
    pub fn name(self) -> &'static str {
        match self {
            AssessmentLevel::Limited => "limited visual",
            AssessmentLevel::Basic => "basic",
            AssessmentLevel::Advanced => "advanced",
        }
    }
}

impl From<AssessmentLevel> for u8 {
    fn from(level: AssessmentLevel) -> u8 {
        level.number()
    }
}

/// One failure mode as the assessor records it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FailureMode {
    pub part: TreePart,
    /// Diameter of the part, cm.
    pub part_size_cm: Option<f64>,
    pub target: Option<String>,
    pub occupancy: Occupancy,
    pub likelihood_of_failure: LikelihoodOfFailure,
    pub likelihood_of_impact: LikelihoodOfImpact,
    pub consequences: Consequences,
}

/// A failure mode with its two matrix results.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RatedMode {
    #[serde(flatten)]
    pub mode: FailureMode,
    /// Matrix 1: likelihood of failure and impact.
    pub likelihood: Likelihood,
    /// Matrix 2: the mode's risk rating.
    pub rating: RiskRating,
}

/// A mitigation option with the risk expected once it is done.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MitigationOption {
    /// The work it takes (what a proposed work order asks for).
    pub task: WorkTask,
    pub description: Option<String>,
    pub residual_rating: RiskRating,
}

/// What the assessor enters.
#[derive(Debug, Clone, PartialEq)]
pub struct AssessmentInput {
    pub assessed_on: NaiveDate,
    pub assessor: Option<String>,
    pub level: AssessmentLevel,
    /// The period the assessment speaks for, years (ISA BMP "time frame").
    pub time_frame_years: Option<f64>,
    pub modes: Vec<FailureMode>,
    pub mitigations: Vec<MitigationOption>,
    pub notes: Option<String>,
}

/// An assessment rated and dated, ready to store.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Assessment {
    pub assessed_on: NaiveDate,
    pub assessor: Option<String>,
    pub level: AssessmentLevel,
    pub time_frame_years: Option<f64>,
    pub modes: Vec<RatedMode>,
    pub mitigations: Vec<MitigationOption>,
    pub notes: Option<String>,
    /// The highest rating over the failure modes.
    pub overall: RiskRating,
    /// Months until the next inspection at the overall rating (settings `reinspect_months_*`).
    pub reinspect_months: u32,
    pub next_due_on: NaiveDate,
}

/// Months until the next inspection of each rating, as the settings hold them; a rating missing from
/// the list falls back to [`risk::default_reinspection_months`].
pub fn months_for(intervals: &[(RiskRating, u32)], rating: RiskRating) -> u32 {
    intervals
        .iter()
        .find(|(r, _)| *r == rating)
        .map(|(_, months)| *months)
        .unwrap_or_else(|| risk::default_reinspection_months(rating))
}

/// Only a standing tree is assessed (a removed tree stands no more; a planned one not yet).
pub fn check_tree(status: TreeStatus) -> Result<(), InputError> {
    match status {
        TreeStatus::Standing => Ok(()),
        other => Err(InputError::new(
            "tree",
            format!("the tree is {other}, and only standing trees are assessed"),
        )),
    }
}

/// Rates every failure mode by Matrix 1 and 2 (ISA BMP 2017, METHODS.md M9), takes the highest as the
/// overall rating [published] and dates the next inspection from the rating's interval. Checks the
/// input: at least one mode; part sizes in (0, 1000] cm; a time frame above 0; no assessment after
/// `today`; no mitigation whose residual rating is above the overall rating.
pub fn evaluate(
    input: AssessmentInput,
    intervals: &[(RiskRating, u32)],
    today: NaiveDate,
) -> Result<Assessment, InputError> {
    if input.modes.is_empty() {
        return Err(InputError::new(
            "mode",
            "give at least one failure mode (--mode part=…,occupancy=…,failure=…,impact=…,consequences=…)",
        ));
    }
    if input.assessed_on > today {
        return Err(InputError::new(
            "on",
            format!(
                "{} is after today ({today}); an assessment records what was seen",
                input.assessed_on
            ),
        ));
    }
    if let Some(years) = input.time_frame_years
        && !(years.is_finite() && years > 0.0)
    {
        return Err(InputError::new(
            "time_frame",
            format!("{years} must be a number of years above 0"),
        ));
    }
    let mut modes = Vec::with_capacity(input.modes.len());
    for (index, mut mode) in input.modes.into_iter().enumerate() {
        if let Some(size) = mode.part_size_cm
            && !(size.is_finite() && size > 0.0 && size <= 1000.0)
        {
            return Err(InputError::new(
                format!("mode {} size", index + 1),
                format!("{size} cm must be above 0 and at most 1000"),
            ));
        }
        mode.target = clean_text(mode.target.as_deref());
        let likelihood = risk::likelihood(mode.likelihood_of_failure, mode.likelihood_of_impact);
        let rating = risk::rating(likelihood, mode.consequences);
        modes.push(RatedMode {
            mode,
            likelihood,
            rating,
        });
    }
    let overall = risk::overall_rating(modes.iter().map(|m| m.rating)).unwrap_or(RiskRating::Low);
    let mut mitigations = input.mitigations;
    for (index, option) in mitigations.iter_mut().enumerate() {
        if option.residual_rating > overall {
            return Err(InputError::new(
                format!("mitigation {} residual", index + 1),
                format!(
                    "'{}' is above the overall rating '{overall}'; a mitigation cannot raise the risk",
                    option.residual_rating
                ),
            ));
        }
        option.description = clean_text(option.description.as_deref());
    }
    let reinspect_months = months_for(intervals, overall);
    Ok(Assessment {
        assessed_on: input.assessed_on,
        assessor: clean_text(input.assessor.as_deref()),
        level: input.level,
        time_frame_years: input.time_frame_years,
        modes,
        mitigations,
        notes: clean_text(input.notes.as_deref()),
        overall,
        reinspect_months,
        next_due_on: risk::next_inspection(input.assessed_on, reinspect_months),
    })
}

/// The work order an assessment proposes, with where its task came from.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WorkProposal {
    pub task: WorkTask,
    pub priority: Priority,
    pub due_on: NaiveDate,
    /// Why this task: the mitigation option it follows, or the failing part.
    pub reason: String,
}

/// An extreme rating proposes a priority-1 order and a high rating a priority-2 order (METHODS.md M9:
/// extreme → mitigate now, priority 1; high → priority 2 per issue 5); moderate and low propose none.
///
/// The task is that of the mitigation option leaving the lowest residual rating (the first listed on a
/// tie). Without options it follows the highest-rated mode's part: a branch or the crown is pruned, a
/// trunk, the roots or the whole tree calls for removal [common practice, no source]; the user confirms
/// or edits the proposal. It is due by the next inspection date (for extreme, the day of assessment:
/// `reinspect_months_extreme` = 0) [derived from M9].
pub fn propose_work(assessment: &Assessment) -> Option<WorkProposal> {
    let priority = match assessment.overall {
        RiskRating::Extreme => Priority::URGENT,
        RiskRating::High => Priority::HIGH,
        RiskRating::Moderate | RiskRating::Low => return None,
    };
    let best = assessment
        .mitigations
        .iter()
        .enumerate()
        .min_by_key(|(index, option)| (option.residual_rating, *index));
    let (task, reason) = match best {
        Some((index, option)) => (
            option.task,
            format!(
                "mitigation {}{} (residual {})",
                index + 1,
                option
                    .description
                    .as_deref()
                    .map(|d| format!(": {d}"))
                    .unwrap_or_default(),
                option.residual_rating
            ),
        ),
        None => {
            let worst = assessment
                .modes
                .iter()
                .max_by_key(|m| m.rating)
                .map(|m| m.mode.part)
                .unwrap_or(TreePart::WholeTree);
            let task = match worst {
                TreePart::Branch | TreePart::Crown => WorkTask::Prune,
                TreePart::Trunk | TreePart::Roots | TreePart::WholeTree => WorkTask::Remove,
            };
            (
                task,
                format!("no mitigation given; the failing part is the {worst}"),
            )
        }
    };
    Some(WorkProposal {
        task,
        priority,
        due_on: assessment.next_due_on,
        reason,
    })
}

/// The user's changes to a proposal before accepting it (`None` keeps the proposed value).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ProposalEdits {
    pub task: Option<WorkTask>,
    pub priority: Option<Priority>,
    pub due_on: Option<NaiveDate>,
    pub crew: Option<String>,
    pub estimated_cost: Option<f64>,
}

/// The order to create from a proposal and the user's edits, for `tree_id`; the assessment id is filled
/// in when the assessment is stored.
pub fn order_from_proposal(
    tree_id: i64,
    assessment: &Assessment,
    proposal: &WorkProposal,
    edits: &ProposalEdits,
) -> NewWorkOrder {
    NewWorkOrder {
        tree_id,
        task: edits.task.unwrap_or(proposal.task),
        priority: edits.priority.unwrap_or(proposal.priority),
        due_on: Some(edits.due_on.unwrap_or(proposal.due_on)),
        crew: edits.crew.clone(),
        estimated_cost: edits.estimated_cost,
        notes: Some(format!(
            "{} risk assessed {}; {}",
            assessment.overall, assessment.assessed_on, proposal.reason
        )),
        assessment_id: None,
        cycle: None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn date(text: &str) -> NaiveDate {
        text.parse().expect("date")
    }

    fn mode(
        part: TreePart,
        failure: LikelihoodOfFailure,
        impact: LikelihoodOfImpact,
        consequences: Consequences,
    ) -> FailureMode {
        FailureMode {
            part,
            part_size_cm: Some(40.0),
            target: Some(" bus stop ".to_string()),
            occupancy: Occupancy::Constant,
            likelihood_of_failure: failure,
            likelihood_of_impact: impact,
            consequences,
        }
    }

    fn input(modes: Vec<FailureMode>, mitigations: Vec<MitigationOption>) -> AssessmentInput {
        AssessmentInput {
            assessed_on: date("2026-05-14"),
            assessor: Some("K. Lee".to_string()),
            level: AssessmentLevel::Basic,
            time_frame_years: Some(1.0),
            modes,
            mitigations,
            notes: None,
        }
    }

    fn defaults() -> Vec<(RiskRating, u32)> {
        RiskRating::ALL
            .iter()
            .map(|r| (*r, risk::default_reinspection_months(*r)))
            .collect()
    }

    use Consequences as C;
    use LikelihoodOfFailure as F;
    use LikelihoodOfImpact as I;

    // "Done when" of issue 5: a leaning tree over a bus stop. Imminent failure × high impact is very
    // likely (Matrix 1), very likely × severe is extreme (Matrix 2), ISA BMP 2017 as METHODS.md M9 prints it.
    #[test]
    fn a_leaning_tree_over_a_bus_stop_is_extreme_and_proposes_urgent_removal() {
        let assessment = evaluate(
            input(
                vec![mode(TreePart::WholeTree, F::Imminent, I::High, C::Severe)],
                vec![
                    MitigationOption {
                        task: WorkTask::Prune,
                        description: Some("reduce the lean".to_string()),
                        residual_rating: RiskRating::Moderate,
                    },
                    MitigationOption {
                        task: WorkTask::Remove,
                        description: Some("remove the tree".to_string()),
                        residual_rating: RiskRating::Low,
                    },
                ],
            ),
            &defaults(),
            date("2026-05-14"),
        )
        .expect("valid");
        assert_eq!(assessment.modes[0].likelihood, Likelihood::VeryLikely);
        assert_eq!(assessment.overall, RiskRating::Extreme);
        assert_eq!(assessment.modes[0].mode.target.as_deref(), Some("bus stop"));
        // M9: extreme → mitigate now; re-inspection interval 0 months.
        assert_eq!(assessment.next_due_on, date("2026-05-14"));
        let proposal = propose_work(&assessment).expect("extreme proposes work");
        assert_eq!(proposal.priority, Priority::URGENT);
        assert_eq!(proposal.task, WorkTask::Remove, "lowest residual wins");
        assert_eq!(proposal.due_on, date("2026-05-14"));
        assert!(
            proposal.reason.contains("mitigation 2"),
            "{}",
            proposal.reason
        );
        let order = order_from_proposal(9, &assessment, &proposal, &ProposalEdits::default());
        assert_eq!(order.tree_id, 9);
        assert_eq!(order.task, WorkTask::Remove);
        assert_eq!(order.priority, Priority::URGENT);
        let edited = order_from_proposal(
            9,
            &assessment,
            &proposal,
            &ProposalEdits {
                task: Some(WorkTask::Prune),
                priority: Some(Priority::HIGH),
                due_on: Some(date("2026-06-01")),
                crew: Some("Kestrel crew".to_string()),
                estimated_cost: Some(800.0),
            },
        );
        assert_eq!(edited.task, WorkTask::Prune);
        assert_eq!(edited.priority, Priority::HIGH);
        assert_eq!(edited.due_on, Some(date("2026-06-01")));
    }

    // ISA BMP 2017 [published]: the overall rating is the highest over the failure modes.
    #[test]
    fn overall_is_the_highest_mode_and_high_proposes_priority_two() {
        let assessment = evaluate(
            input(
                vec![
                    // possible × high = somewhat likely; × minor = low
                    mode(TreePart::Trunk, F::Possible, I::High, C::Minor),
                    // probable × high = likely; × significant = high
                    mode(TreePart::Branch, F::Probable, I::High, C::Significant),
                    // imminent × medium = likely; × minor = moderate
                    mode(TreePart::Roots, F::Imminent, I::Medium, C::Minor),
                ],
                vec![],
            ),
            &defaults(),
            date("2026-05-14"),
        )
        .expect("valid");
        let ratings: Vec<RiskRating> = assessment.modes.iter().map(|m| m.rating).collect();
        assert_eq!(
            ratings,
            [RiskRating::Low, RiskRating::High, RiskRating::Moderate]
        );
        assert_eq!(assessment.overall, RiskRating::High);
        // M9: high → re-inspect within 6 months (setting reinspect_months_high).
        assert_eq!(assessment.next_due_on, date("2026-11-14"));
        let proposal = propose_work(&assessment).expect("high proposes work");
        assert_eq!(proposal.priority, Priority::HIGH);
        assert_eq!(proposal.task, WorkTask::Prune, "the high mode is a branch");
    }

    // METHODS.md M9 re-inspection settings: extreme 0, high 6, moderate 24, low 60 months; the settings
    // decide (here a changed high interval of 3 months).
    #[test]
    fn the_next_inspection_follows_the_rating_and_the_settings() {
        let cases = [
            (
                mode(TreePart::Trunk, F::Imminent, I::High, C::Severe),
                "2026-05-14",
                RiskRating::Extreme,
            ),
            (
                mode(TreePart::Trunk, F::Imminent, I::High, C::Significant),
                "2026-11-14",
                RiskRating::High,
            ),
            (
                mode(TreePart::Trunk, F::Probable, I::Medium, C::Severe),
                "2028-05-14",
                RiskRating::Moderate,
            ),
            (
                mode(TreePart::Trunk, F::Improbable, I::High, C::Severe),
                "2031-05-14",
                RiskRating::Low,
            ),
        ];
        for (m, due, rating) in cases {
            let a =
                evaluate(input(vec![m], vec![]), &defaults(), date("2026-05-14")).expect("valid");
            assert_eq!(a.overall, rating);
            assert_eq!(a.next_due_on, date(due), "{rating}");
            assert_eq!(
                propose_work(&a).is_some(),
                rating >= RiskRating::High,
                "{rating}"
            );
        }
        let mut settings = defaults();
        settings[2].1 = 3;
        let a = evaluate(
            input(
                vec![mode(TreePart::Trunk, F::Imminent, I::High, C::Significant)],
                vec![],
            ),
            &settings,
            date("2026-05-14"),
        )
        .expect("valid");
        assert_eq!(a.next_due_on, date("2026-08-14"));
        // A month end: 31 August + 6 months is the last day of February (chrono's calendar months).
        let mut late = input(
            vec![mode(TreePart::Trunk, F::Imminent, I::High, C::Significant)],
            vec![],
        );
        late.assessed_on = date("2025-08-31");
        let a = evaluate(late, &defaults(), date("2026-05-14")).expect("valid");
        assert_eq!(a.next_due_on, date("2026-02-28"));
    }

    #[test]
    fn bad_input_names_the_field() {
        let today = date("2026-05-14");
        let none = evaluate(input(vec![], vec![]), &defaults(), today).expect_err("no modes");
        assert_eq!(none.field, "mode");
        let mut future = input(
            vec![mode(TreePart::Trunk, F::Possible, I::Low, C::Minor)],
            vec![],
        );
        future.assessed_on = date("2026-06-01");
        assert_eq!(
            evaluate(future, &defaults(), today)
                .expect_err("future")
                .field,
            "on"
        );
        let mut big = mode(TreePart::Trunk, F::Possible, I::Low, C::Minor);
        big.part_size_cm = Some(0.0);
        let error = evaluate(input(vec![big], vec![]), &defaults(), today).expect_err("size");
        assert_eq!(error.field, "mode 1 size");
        let mut frame = input(
            vec![mode(TreePart::Trunk, F::Possible, I::Low, C::Minor)],
            vec![],
        );
        frame.time_frame_years = Some(0.0);
        assert_eq!(
            evaluate(frame, &defaults(), today)
                .expect_err("frame")
                .field,
            "time_frame"
        );
        let raising = input(
            vec![mode(TreePart::Trunk, F::Possible, I::Low, C::Minor)],
            vec![MitigationOption {
                task: WorkTask::Prune,
                description: None,
                residual_rating: RiskRating::High,
            }],
        );
        let error = evaluate(raising, &defaults(), today).expect_err("residual above");
        assert_eq!(error.field, "mitigation 1 residual");
        assert!(AssessmentLevel::new(4).is_err());
        assert_eq!(
            AssessmentLevel::new(3).map(AssessmentLevel::name),
            Ok("advanced")
        );
        assert!(check_tree(TreeStatus::Removed).is_err());
        assert!(check_tree(TreeStatus::Standing).is_ok());
    }
}
