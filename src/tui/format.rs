//! Numbers as the views print them: thousands separators, a fixed number of decimals, never "-0".

/// `x` with thousands separators and `decimals` decimals ("–" when not finite).
pub fn num(x: f64, decimals: usize) -> String {
    if !x.is_finite() {
        return "–".to_string();
    }
    let text = format!("{:.decimals$}", x.abs());
    let (whole, fraction) = match text.split_once('.') {
        Some((w, f)) => (w, Some(f)),
        None => (text.as_str(), None),
    };
    let mut grouped = String::new();
    for (i, c) in whole.chars().enumerate() {
        if i > 0 && (whole.len() - i) % 3 == 0 {
            grouped.push(',');
        }
        grouped.push(c);
    }
    let negative = x < 0.0 && text.chars().any(|c| c.is_ascii_digit() && c != '0');
    let sign = if negative { "-" } else { "" };
    match fraction {
        Some(f) => format!("{sign}{grouped}.{f}"),
        None => format!("{sign}{grouped}"),
    }
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
