//! Number formatting shared by the text reports.

/// `value` with `digits` significant digits and no trailing zeros: 200 → "200", 0.05 → "0.05",
/// 4.2 → "4.2". Keeps printed parameters readable whatever their scale.
pub fn sig(value: f64, digits: usize) -> String {
    if value == 0.0 || !value.is_finite() {
        return format!("{value}");
    }
    let magnitude = value.abs().log10().floor() as i64;
    let decimals = (digits as i64 - 1 - magnitude).max(0) as usize;
    let text = format!("{value:.decimals$}");
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    }
}

/// A duration in the unit a person would use for it.
pub fn duration(seconds: f64) -> String {
    if seconds < 120.0 {
        format!("{seconds:.0} s")
    } else if seconds < 7200.0 {
        format!("{:.1} min", seconds / 60.0)
    } else {
        format!("{:.2} h", seconds / 3600.0)
    }
}

/// `numerator / denominator` as a percentage, or "n/a" when the denominator is zero.
pub fn percent(numerator: f64, denominator: f64) -> String {
    if denominator > 0.0 {
        format!("{:.1} %", 100.0 * numerator / denominator)
    } else {
        "n/a".to_string()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn significant_digits_trim_zeros() {
        assert_eq!(sig(200.0, 4), "200");
        assert_eq!(sig(0.05, 4), "0.05");
        assert_eq!(sig(4.2, 4), "4.2");
        assert_eq!(sig(1.23456, 3), "1.23");
        assert_eq!(sig(-12.345, 3), "-12.3");
        assert_eq!(sig(0.0, 3), "0");
    }

    #[test]
    fn durations_pick_a_unit() {
        assert_eq!(duration(30.0), "30 s");
        assert_eq!(duration(5400.0), "90.0 min");
        assert_eq!(duration(36_000.0), "10.00 h");
    }
}
