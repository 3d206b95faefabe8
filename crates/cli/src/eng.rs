//! Engineering notation and fixed-point formatting for humans; never prints NaN.
//!
//! Every number the tool shows in a table or a plot label passes through here, so the
//! rules live in one place: SI prefixes from femto to tera in steps of 10³, a fixed
//! count of significant digits (so columns line up), `0` for zero, an exponent beyond
//! the prefix range, and the text `n/a` for a value that is not finite (which the
//! library promises never to return, but a formatter must not print `NaN` whatever it
//! is given).

/// The text shown for a value that is not a finite number.
pub const NOT_A_NUMBER: &str = "n/a";

/// SI prefixes from 10⁻¹⁵ to 10¹², indexed by `exponent / 3 + 5`.
const PREFIXES: [&str; 10] = ["f", "p", "n", "µ", "m", "", "k", "M", "G", "T"];
const LOWEST_EXPONENT: i32 = -15;
const HIGHEST_EXPONENT: i32 = 12;

/// `value` in engineering notation with four significant digits and `unit` appended:
/// `15.92 kHz`, `100.0 nF`, `-3.300 V`, `0 Hz`.
///
/// ```text
/// eng(15_915.5, "Hz") == "15.92 kHz"
/// ```
pub fn eng(value: f64, unit: &str) -> String {
    eng_digits(value, unit, 4)
}

/// `value` in engineering notation with `digits` significant digits (never fewer than
/// the digits before the decimal point).
pub fn eng_digits(value: f64, unit: &str, digits: usize) -> String {
    let digits = digits.max(1);
    if !value.is_finite() {
        return NOT_A_NUMBER.to_string();
    }
    if value == 0.0 {
        return join_unit("0", "", unit);
    }
    let (mantissa, exponent) = normalise(value, digits);
    if !(LOWEST_EXPONENT..=HIGHEST_EXPONENT).contains(&exponent) {
        let text = format!("{:.*e}", digits - 1, value);
        return join_unit(&text, "", unit);
    }
    let int_digits = integer_digits(mantissa);
    let decimals = digits.saturating_sub(int_digits);
    let text = format!("{mantissa:.decimals$}");
    let prefix = PREFIXES[((exponent - LOWEST_EXPONENT) / 3) as usize];
    join_unit(&text, prefix, unit)
}

/// Splits `value` into a mantissa in `±[1, 1000)` (after rounding to `digits`
/// significant digits) and an exponent that is a multiple of 3.
fn normalise(value: f64, digits: usize) -> (f64, i32) {
    let mut exponent = (value.abs().log10().floor() as i32).div_euclid(3) * 3;
    let mut mantissa = value / 10f64.powi(exponent);
    // Floating-point log10 can land one step off near powers of ten; fix both ways.
    if mantissa.abs() < 1.0 {
        exponent -= 3;
        mantissa = value / 10f64.powi(exponent);
    }
    let rounded = round_significant(mantissa, digits);
    if rounded.abs() >= 1000.0 {
        exponent += 3;
        mantissa = round_significant(value / 10f64.powi(exponent), digits);
        return (mantissa, exponent);
    }
    (rounded, exponent)
}

fn round_significant(x: f64, digits: usize) -> f64 {
    let decimals = digits.saturating_sub(integer_digits(x));
    let text = format!("{x:.decimals$}");
    text.parse().unwrap_or(x)
}

/// How many digits `x` (with `1 <= |x| < 1000`) has before the decimal point.
fn integer_digits(x: f64) -> usize {
    match x.abs() {
        a if a >= 100.0 => 3,
        a if a >= 10.0 => 2,
        _ => 1,
    }
}

fn join_unit(number: &str, prefix: &str, unit: &str) -> String {
    if prefix.is_empty() && unit.is_empty() {
        number.to_string()
    } else {
        format!("{number} {prefix}{unit}")
    }
}

/// `value` with a fixed number of decimals (`-3.01`), never `-0.00` and never `NaN`.
pub fn fixed(value: f64, decimals: usize) -> String {
    if !value.is_finite() {
        return NOT_A_NUMBER.to_string();
    }
    let text = format!("{value:.decimals$}");
    if text.starts_with('-') && text[1..].chars().all(|c| c == '0' || c == '.') {
        text[1..].to_string()
    } else {
        text
    }
}

/// `value` with a fixed number of decimals and a unit (`20.83 dB`, `-45.0 °`).
pub fn fixed_unit(value: f64, decimals: usize, unit: &str) -> String {
    if !value.is_finite() {
        return NOT_A_NUMBER.to_string();
    }
    let number = fixed(value, decimals);
    if unit == "°" {
        format!("{number}°")
    } else {
        format!("{number} {unit}")
    }
}

/// A plain machine-readable number for CSV: the shortest text that reads back as the
/// same `f64`, with an exponent for very large or small magnitudes; empty when the
/// value is not finite.
pub fn machine(value: f64) -> String {
    if !value.is_finite() {
        return String::new();
    }
    let magnitude = value.abs();
    if magnitude == 0.0 || (1e-4..1e15).contains(&magnitude) {
        format!("{value}")
    } else {
        format!("{value:e}")
    }
}

/// A value in a language unit, the way tables show it: engineering notation for SI
/// quantities (`632.8 Hz`, `53.62 kΩ`), two decimals for dB, one for degrees and
/// dB/decade, three significant decimals for plain numbers.
pub fn quantity(value: f64, unit: rolloff_netlist::Unit) -> String {
    use rolloff_netlist::Unit;
    match unit {
        Unit::Decibel => fixed_unit(value, 2, "dB"),
        Unit::Degree => fixed_unit(value, 1, "°"),
        Unit::DecibelPerDecade => fixed_unit(value, 1, "dB/dec"),
        Unit::Dimensionless => fixed(value, 3),
        other => eng(value, other.symbol()),
    }
}

/// Like [`quantity`] with an explicit sign (`+62.78 Hz`, `-0.12 dB`), for margins.
pub fn signed_quantity(value: f64, unit: rolloff_netlist::Unit) -> String {
    let text = quantity(value, unit);
    let non_zero = text.chars().any(|c| c.is_ascii_digit() && c != '0');
    if value > 0.0 && text != NOT_A_NUMBER && non_zero {
        format!("+{text}")
    } else {
        text
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    #[track_caller]
    fn check(value: f64, unit: &str, expected: &str) {
        assert_eq!(eng(value, unit), expected, "eng({value:e}, {unit:?})");
    }

    #[test]
    fn prefixes_follow_si() {
        // 1/(2π·10 kΩ·1 nF) = 15.915 kHz (the first-order RC corner, a published formula).
        check(
            1.0 / (2.0 * std::f64::consts::PI * 10e3 * 1e-9),
            "Hz",
            "15.92 kHz",
        );
        check(100e-9, "F", "100.0 nF");
        check(4.7e3, "Ω", "4.700 kΩ");
        check(1e-15, "F", "1.000 fF");
        check(2.2e-12, "F", "2.200 pF");
        check(0.47e-6, "F", "470.0 nF");
        check(1.5e-3, "H", "1.500 mH");
        check(3.3, "V", "3.300 V");
        check(1e6, "Hz", "1.000 MHz");
        check(2.5e9, "Hz", "2.500 GHz");
        check(1e12, "Ω", "1.000 TΩ");
        check(1e-6, "s", "1.000 µs");
    }

    #[test]
    fn rounding_carries_into_the_next_prefix() {
        check(999.96, "Hz", "1.000 kHz");
        check(999.94, "Hz", "999.9 Hz");
        check(0.999_999, "V", "1.000 V");
        check(999_999.0, "Hz", "1.000 MHz");
        check(9.9996, "Hz", "10.00 Hz");
        check(99.996e-9, "F", "100.0 nF");
    }

    #[test]
    fn powers_of_ten_land_on_the_right_prefix() {
        for exponent in -15..=12 {
            let text = eng(10f64.powi(exponent), "Hz");
            let expected_mantissa = ["1.000", "10.00", "100.0"][exponent.rem_euclid(3) as usize];
            assert!(
                text.starts_with(expected_mantissa),
                "10^{exponent} gave {text}"
            );
        }
    }

    #[test]
    fn sign_zero_and_no_unit() {
        check(-3.3e-3, "V", "-3.300 mV");
        check(0.0, "Hz", "0 Hz");
        check(-0.0, "V", "0 V");
        check(1234.0, "", "1.234 k");
        check(12.0, "", "12.00");
    }

    #[test]
    fn beyond_the_prefixes_uses_an_exponent() {
        check(1e-18, "F", "1.000e-18 F");
        check(2.5e15, "Ω", "2.500e15 Ω");
        check(1e300, "", "1.000e300");
    }

    #[test]
    fn never_prints_nan_or_infinity() {
        for value in [f64::NAN, f64::INFINITY, f64::NEG_INFINITY] {
            assert_eq!(eng(value, "Hz"), NOT_A_NUMBER);
            assert_eq!(fixed(value, 2), NOT_A_NUMBER);
            assert_eq!(fixed_unit(value, 2, "dB"), NOT_A_NUMBER);
            assert_eq!(machine(value), "");
        }
        for value in [f64::MIN_POSITIVE, 5e-324, f64::MAX, -f64::MAX] {
            let text = eng(value, "Hz");
            assert!(!text.contains("NaN") && !text.contains("inf"), "{text}");
        }
    }

    #[test]
    fn digits_are_configurable() {
        assert_eq!(eng_digits(15_915.494, "Hz", 3), "15.9 kHz");
        assert_eq!(eng_digits(15_915.494, "Hz", 6), "15.9155 kHz");
        // Fewer digits than the integer part keeps the integer part.
        assert_eq!(eng_digits(15_915.494, "Hz", 0), "16 kHz");
    }

    #[test]
    fn fixed_never_shows_negative_zero() {
        assert_eq!(fixed(-0.001, 2), "0.00");
        assert_eq!(fixed(-3.0103, 2), "-3.01");
        assert_eq!(fixed(45.0, 1), "45.0");
        assert_eq!(fixed_unit(-45.04, 1, "°"), "-45.0°");
        assert_eq!(fixed_unit(20.834, 2, "dB"), "20.83 dB");
    }

    #[test]
    fn quantities_follow_their_unit() {
        use rolloff_netlist::Unit;
        assert_eq!(quantity(632.8, Unit::Hertz), "632.8 Hz");
        assert_eq!(quantity(20.434, Unit::Decibel), "20.43 dB");
        assert_eq!(quantity(-54.83, Unit::Degree), "-54.8°");
        assert_eq!(quantity(-60.46, Unit::DecibelPerDecade), "-60.5 dB/dec");
        assert_eq!(quantity(53_624.0, Unit::Ohm), "53.62 kΩ");
        assert_eq!(quantity(0.018_2, Unit::Dimensionless), "0.018");
        assert_eq!(signed_quantity(62.78, Unit::Hertz), "+62.78 Hz");
        assert_eq!(signed_quantity(-0.12, Unit::Decibel), "-0.12 dB");
        assert_eq!(signed_quantity(0.0, Unit::Decibel), "0.00 dB");
        assert_eq!(signed_quantity(0.27, Unit::Decibel), "+0.27 dB");
        assert_eq!(signed_quantity(0.001, Unit::Decibel), "0.00 dB");
    }

    #[test]
    fn machine_numbers_read_back_exactly() {
        for value in [
            0.0,
            1.0,
            15_915.494_309_189_535,
            1e-9,
            2.2e-12,
            1e300,
            -3.0103,
            1e15,
        ] {
            let text = machine(value);
            assert_eq!(text.parse::<f64>().unwrap(), value, "{text}");
            assert!(text.len() < 30, "{text}");
        }
    }
}
