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
}
