//! Care rules: tree risk rating (METHODS.md M9), assessments and the work they call for, work-order
//! life cycle, maintenance cycles (M10) and the watchlist and work queue. Pure: no SQL, no clock, no
//! files; dates such as "today" are passed in.

pub mod assessment;
pub mod cycles;
pub mod queue;
pub mod risk;
pub mod work;

/// Bad input to a care rule: which field, and why. Shown to users as `field: reason`.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("{field}: {reason}")]
pub struct InputError {
    pub field: String,
    pub reason: String,
}

impl InputError {
    /// An error about `field`.
    pub fn new(field: impl Into<String>, reason: impl Into<String>) -> Self {
        InputError {
            field: field.into(),
            reason: reason.into(),
        }
    }
}

/// Checks an optional amount of money: finite and not negative.
pub fn check_cost(field: &str, cost: Option<f64>) -> Result<Option<f64>, InputError> {
    match cost {
        Some(value) if !value.is_finite() => Err(InputError::new(field, "must be a number")),
        Some(value) if value < 0.0 => Err(InputError::new(
            field,
            format!("{value} must not be negative"),
        )),
        other => Ok(other),
    }
}

/// Trims optional free text; blank text counts as none.
pub fn clean_text(text: Option<&str>) -> Option<String> {
    text.map(str::trim)
        .filter(|t| !t.is_empty())
        .map(str::to_string)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn costs_must_be_finite_and_not_negative() {
        assert_eq!(check_cost("cost", Some(12.5)), Ok(Some(12.5)));
        assert_eq!(check_cost("cost", None), Ok(None));
        let error = check_cost("cost", Some(-1.0)).expect_err("negative");
        assert_eq!(error.to_string(), "cost: -1 must not be negative");
        assert!(check_cost("cost", Some(f64::NAN)).is_err());
        assert_eq!(clean_text(Some("  ")), None);
        assert_eq!(clean_text(Some(" crew ")), Some("crew".to_string()));
    }
}
