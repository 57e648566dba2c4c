//! Numbers as the views print them: thousands separators, a fixed number of decimals, never "-0".

/// `x` with thousands separators and `decimals` decimals ("–" when not finite, never "-0").
pub fn num(x: f64, decimals: usize) -> String {
    crate::io::report_html::grouped(x, decimals)
}

/// A number with as many decimals as make sense for its size (3 significant digits below 100).
pub fn num_auto(x: f64) -> String {
    let a = x.abs();
    let decimals = if a >= 100.0 || a == 0.0 {
        0
    } else if a >= 10.0 {
        1
    } else if a >= 1.0 {
        2
    } else {
        3
    };
    num(x, decimals)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_group_thousands_and_drop_negative_zero() {
        assert_eq!(num(1_234_567.891, 2), "1,234,567.89");
        assert_eq!(num(-1234.4, 0), "-1,234");
        assert_eq!(num(-0.001, 0), "0");
        assert_eq!(num(999.0, 0), "999");
        assert_eq!(num(f64::NAN, 1), "–");
        assert_eq!(num_auto(12.345), "12.3");
        assert_eq!(num_auto(0.12345), "0.123");
        assert_eq!(num_auto(4321.0), "4,321");
    }
}
