//! Unit conversions at the edges. Inside Streetwood everything is SI (DBH in cm, lengths in m).
//!
//! Exact conversion factors from NIST Special Publication 811 (2008), Guide for the Use of the
//! International System of Units, Appendix B.8: 1 in = 2.54 cm exactly, 1 ft = 0.3048 m exactly.

/// Centimetres per inch, exact by definition (NIST SP 811, B.8).
pub const CM_PER_INCH: f64 = 2.54;
/// Metres per foot, exact by definition (NIST SP 811, B.8).
pub const M_PER_FOOT: f64 = 0.3048;
/// Litres per US gallon, exact by definition (NIST SP 811, B.8: 1 gal = 3.785 411 784 L).
pub const L_PER_US_GALLON: f64 = 3.785_411_784;

/// Inches to centimetres.
pub fn inches_to_cm(inches: f64) -> f64 {
    inches * CM_PER_INCH
}

/// Centimetres to inches.
pub fn cm_to_inches(cm: f64) -> f64 {
    cm / CM_PER_INCH
}

/// Feet to metres.
pub fn feet_to_m(feet: f64) -> f64 {
    feet * M_PER_FOOT
}

/// Metres to feet.
pub fn m_to_feet(m: f64) -> f64 {
    m / M_PER_FOOT
}

/// Equivalent DBH of a multi-stem tree, d_eq = √(Σ dᵢ²) (METHODS.md M1) [common practice]: the
/// diameter of one stem with the summed basal area of all stems. A single stem gives itself.
pub fn equivalent_dbh_cm(stems_cm: &[f64]) -> f64 {
    stems_cm.iter().map(|d| d * d).sum::<f64>().sqrt()
}

/// A length unit a person may type after a number.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LengthUnit {
    Cm,
    M,
    Inch,
    Foot,
}

impl LengthUnit {
    /// Centimetres in one of this unit (exact, NIST SP 811).
    fn cm(self) -> f64 {
        match self {
            LengthUnit::Cm => 1.0,
            LengthUnit::M => 100.0,
            LengthUnit::Inch => CM_PER_INCH,
            LengthUnit::Foot => M_PER_FOOT * 100.0,
        }
    }
}

/// Reads a length as typed in the field — `30`, `30 cm`, `12 in`, `12"`, `40 ft`, `40'`, `1.5 m` — and
/// returns it in `target` units. A bare number is in `default`. Exact NIST SP 811 factors.
pub fn parse_length(text: &str, default: LengthUnit, target: LengthUnit) -> Result<f64, String> {
    let trimmed = text.trim();
    let split = trimmed
        .find(|c: char| !(c.is_ascii_digit() || c == '.' || c == '-' || c == '+'))
        .unwrap_or(trimmed.len());
    let (number, unit) = trimmed.split_at(split);
    let value: f64 = number
        .trim()
        .parse()
        .ok()
        .filter(|v: &f64| v.is_finite())
        .ok_or_else(|| format!("'{trimmed}' is not a number (e.g. 30, 30 cm, 12 in, 40 ft)"))?;
    let unit = match unit.trim().to_ascii_lowercase().as_str() {
        "" => default,
        "cm" => LengthUnit::Cm,
        "m" => LengthUnit::M,
        "in" | "inch" | "inches" | "\"" => LengthUnit::Inch,
        "ft" | "foot" | "feet" | "'" => LengthUnit::Foot,
        other => return Err(format!("unknown unit '{other}' (use cm, m, in or ft)")),
    };
    // A finite number can still overflow in the conversion (1.7e308 ft in cm): refused, never
    // returned as infinity (found by tests/fuzz_inputs.rs).
    Some(value * unit.cm() / target.cm())
        .filter(|converted| converted.is_finite())
        .ok_or_else(|| format!("'{trimmed}' is too large"))
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    // Outside check: NIST SP 811 (2008) Appendix B.8 defines 1 in = 2.54 cm and 1 ft = 0.3048 m exactly.
    #[test]
    fn nist_sp811_exact_factors() {
        assert_eq!(inches_to_cm(1.0), 2.54);
        assert_eq!(feet_to_m(1.0), 0.3048);
        assert_relative_eq!(inches_to_cm(12.0), 30.48, max_relative = 1e-15);
        // 12 in = 1 ft, both routes agree (NIST SP 811 B.8).
        assert_relative_eq!(
            inches_to_cm(12.0) / 100.0,
            feet_to_m(1.0),
            max_relative = 1e-15
        );
        assert_relative_eq!(cm_to_inches(inches_to_cm(17.3)), 17.3, max_relative = 1e-15);
        assert_relative_eq!(m_to_feet(feet_to_m(40.0)), 40.0, max_relative = 1e-15);
    }

    // Check: √(22² + 18² + 9²) = √889 = 29.8161… (hand arithmetic on METHODS.md M1's formula).
    #[test]
    fn equivalent_dbh_sums_basal_areas() {
        assert_relative_eq!(
            equivalent_dbh_cm(&[22.0, 18.0, 9.0]),
            889f64.sqrt(),
            max_relative = 1e-15
        );
        assert_relative_eq!(equivalent_dbh_cm(&[31.5]), 31.5, max_relative = 1e-15);
        // 3-4-5 triangle: two stems of 30 and 40 cm equal one of 50 cm.
        assert_relative_eq!(equivalent_dbh_cm(&[30.0, 40.0]), 50.0, max_relative = 1e-15);
    }

    // Regression (tests/fuzz_inputs.rs): the largest finite f64 in feet overflows in centimetres.
    #[test]
    fn lengths_that_overflow_in_conversion_are_refused() {
        let huge = format!("{} ft", f64::MAX);
        let error = parse_length(&huge, LengthUnit::Cm, LengthUnit::Cm).expect_err("refused");
        assert!(error.contains("too large"), "{error}");
        assert_eq!(
            parse_length(&format!("{} cm", f64::MAX), LengthUnit::Cm, LengthUnit::Cm),
            Ok(f64::MAX)
        );
    }

    // NIST SP 811 B.8 factors: 12 in = 30.48 cm, 40 ft = 12.192 m.
    #[test]
    fn typed_lengths_with_units() {
        use LengthUnit::*;
        assert_eq!(parse_length("30", Cm, Cm), Ok(30.0));
        assert_eq!(parse_length(" 30 cm", Cm, Cm), Ok(30.0));
        assert_relative_eq!(
            parse_length("12 in", Cm, Cm).unwrap_or(0.0),
            30.48,
            max_relative = 1e-15
        );
        assert_relative_eq!(
            parse_length("12\"", Cm, Cm).unwrap_or(0.0),
            30.48,
            max_relative = 1e-15
        );
        assert_relative_eq!(
            parse_length("40 ft", M, M).unwrap_or(0.0),
            12.192,
            max_relative = 1e-15
        );
        assert_relative_eq!(
            parse_length("40'", M, M).unwrap_or(0.0),
            12.192,
            max_relative = 1e-15
        );
        assert_relative_eq!(
            parse_length("1.5m", Cm, Cm).unwrap_or(0.0),
            150.0,
            max_relative = 1e-15
        );
        assert_relative_eq!(
            parse_length("10", Inch, Cm).unwrap_or(0.0),
            25.4,
            max_relative = 1e-15
        );
        assert!(parse_length("thirty", Cm, Cm).is_err());
        assert!(parse_length("30 yards", Cm, Cm).is_err());
        assert!(parse_length("", Cm, Cm).is_err());
    }
}
