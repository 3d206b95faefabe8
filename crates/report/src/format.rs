//! Short human-readable numbers for messages: SI prefixes where a unit takes them, up to
//! nine significant digits with trailing zeros trimmed, so a number as written in an
//! `expect` line prints as written and a stored value prints faithfully.
//!
//! These are for reasons and bounds in text; tables and machine formats are the CLI's.

use rolloff_netlist::Unit;

/// The default cutoff level, `20·log10(1/√2)` = −3.0103 dB.
pub const DEFAULT_LEVEL_DB: f64 = -3.010_299_956_639_812;

/// Significant digits printed: enough for any number written by hand, and for a stored
/// value to within 5e-9 relative.
const DIGITS: i32 = 9;

/// Below this magnitude a number without SI prefix prints in exponent form (`1e-6 dB`),
/// so that it never reads as zero and stays short.
const EXPONENT_BELOW: f64 = 1e-4;

/// A value with an SI prefix and unit, up to nine significant digits, trailing zeros
/// trimmed: `fmt_si(15915.49, "Hz")` is `15.91549 kHz`.
pub fn fmt_si(value: f64, unit: &str) -> String {
    fmt_si_digits(value, unit, DIGITS)
}

/// A computed frequency for a note (a range the report chose, not a bound the user
/// wrote): four significant digits are enough to find it (`48.13 kHz`).
pub fn fmt_hz_approx(freq_hz: f64) -> String {
    fmt_si_digits(freq_hz, "Hz", 4)
}

fn fmt_si_digits(value: f64, unit: &str, digits: i32) -> String {
    const PREFIXES: [(f64, &str); 11] = [
        (1e12, "T"),
        (1e9, "G"),
        (1e6, "M"),
        (1e3, "k"),
        (1.0, ""),
        (1e-3, "m"),
        (1e-6, "µ"),
        (1e-9, "n"),
        (1e-12, "p"),
        (1e-15, "f"),
        (1e-18, "a"),
    ];
    if !value.is_finite() {
        return format!("{value} {unit}");
    }
    if value == 0.0 {
        return format!("0 {unit}");
    }
    let magnitude = value.abs();
    // A value that rounds up to the next step at these digits takes that step's prefix.
    let rounding = 0.5 * 10f64.powi(-digits);
    let (scale, prefix) = PREFIXES
        .iter()
        .copied()
        .find(|(scale, _)| magnitude >= *scale * (1.0 - rounding))
        .unwrap_or((1e-18, "a"));
    format!("{} {prefix}{unit}", fmt_sig(value / scale, digits))
}

/// A frequency in Hz with an SI prefix (`1 MHz`, `159.154943 Hz`).
pub fn fmt_hz(freq_hz: f64) -> String {
    fmt_si(freq_hz, "Hz")
}

/// A dB value, up to nine significant digits, with a true minus sign (`−3.0103 dB`,
/// `0.001 dB`, `1e-6 dB`).
pub fn fmt_db(db: f64) -> String {
    format!("{} dB", fmt_num(db))
}

/// A cutoff level: the default prints as `−3 dB`, others as `fmt_db` does.
pub fn fmt_level(level_db: f64) -> String {
    if (level_db - DEFAULT_LEVEL_DB).abs() < 1e-9 {
        "−3 dB".to_string()
    } else {
        fmt_db(level_db)
    }
}

/// A value in a language unit, for bounds and measured values in verdicts.
pub fn fmt_value(value: f64, unit: Unit) -> String {
    match unit {
        Unit::Decibel => fmt_db(value),
        Unit::Degree => format!("{} deg", fmt_num(value)),
        Unit::DecibelPerDecade => format!("{} dB/dec", fmt_num(value)),
        Unit::Dimensionless => fmt_num(value),
        Unit::Hertz | Unit::Ohm | Unit::Volt | Unit::Ampere | Unit::Second => {
            minus(&fmt_si(value, unit.symbol()))
        }
    }
}

/// A plain number with a true minus sign: up to nine significant digits, trailing zeros
/// trimmed, in exponent form below 1e-4 (`−3.0103`, `0.001`, `2.5e-14`).
pub fn fmt_num(value: f64) -> String {
    let magnitude = value.abs();
    if value.is_finite() && magnitude > 0.0 && magnitude < EXPONENT_BELOW {
        let precision = (DIGITS - 1) as usize;
        let text = format!("{value:.precision$e}");
        let (mantissa, exponent) = text.split_once('e').unwrap_or((&text, "0"));
        return format!("{}e{exponent}", minus(&trim(mantissa)));
    }
    minus(&fmt_sig(value, DIGITS))
}

/// `value` to `digits` significant digits without exponent, trailing zeros trimmed.
pub fn fmt_sig(value: f64, digits: i32) -> String {
    if value == 0.0 {
        return "0".into();
    }
    if !value.is_finite() {
        return format!("{value}");
    }
    let exponent = value.abs().log10().floor() as i32;
    let decimals = (digits - 1 - exponent).max(0) as usize;
    trim(&format!("{value:.decimals$}"))
}

fn trim(text: &str) -> String {
    if text.contains('.') {
        let t = text.trim_end_matches('0').trim_end_matches('.');
        if t == "-0" { "0".into() } else { t.into() }
    } else {
        text.to_string()
    }
}

fn minus(text: &str) -> String {
    text.replacen('-', "−", 1)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn si_prefixes() {
        assert_eq!(fmt_hz(10.0), "10 Hz");
        assert_eq!(fmt_hz(1e6), "1 MHz");
        assert_eq!(fmt_hz(15_915.49), "15.91549 kHz");
        assert_eq!(fmt_hz(0.5), "500 mHz");
        assert_eq!(fmt_hz(999.99), "999.99 Hz");
        // A rounding below a prefix step still reads as the step.
        assert_eq!(fmt_hz(999.999_999_999_9), "1 kHz");
        assert_eq!(fmt_level(DEFAULT_LEVEL_DB), "−3 dB");
        assert_eq!(fmt_level(-6.0), "−6 dB");
        assert_eq!(fmt_value(-0.005, Unit::Volt), "−5 mV");
    }

    /// Numbers as written in an `expect` line print as written, in every unit; a stored
    /// value with more digits prints to nine significant digits; nothing small rounds
    /// to zero.
    #[test]
    fn computed_ranges_print_short() {
        assert_eq!(fmt_hz_approx(48_125.441_2), "48.13 kHz");
        assert_eq!(fmt_hz_approx(0.014_983_656), "14.98 mHz");
        // 999.96 Hz rounds to four digits as the next prefix step.
        assert_eq!(fmt_hz_approx(999.96), "1 kHz");
    }

    #[test]
    fn numbers_print_as_written() {
        assert_eq!(fmt_db(-3.0103), "−3.0103 dB");
        assert_eq!(fmt_db(0.001), "0.001 dB");
        assert_eq!(fmt_db(0.1 + 0.2), "0.3 dB");
        assert_eq!(fmt_db(-6.120_599_913_279_625), "−6.12059991 dB");
        assert_eq!(fmt_db(1e-6), "1e-6 dB");
        assert_eq!(fmt_db(-2.5e-14), "−2.5e-14 dB");
        assert_eq!(fmt_level(-0.1), "−0.1 dB");
        assert_eq!(fmt_hz(1.591_549_430_918_953_7e3), "1.59154943 kHz");
        assert_eq!(fmt_hz(11_347.180_020_503_873), "11.34718 kHz");
        assert_eq!(fmt_hz(3_090.169_943_747_826), "3.09016994 kHz");
        assert_eq!(fmt_value(45.0125, Unit::Degree), "45.0125 deg");
        assert_eq!(fmt_value(1e-5, Unit::Degree), "1e-5 deg");
        assert_eq!(fmt_value(-100.25, Unit::DecibelPerDecade), "−100.25 dB/dec");
        assert_eq!(
            fmt_value(std::f64::consts::FRAC_1_SQRT_2, Unit::Dimensionless),
            "0.707106781"
        );
        assert_eq!(fmt_value(1.234_5e-6, Unit::Second), "1.2345 µs");
        assert_eq!(fmt_value(10_012.5, Unit::Ohm), "10.0125 kΩ");
        assert_eq!(fmt_value(4.999_75, Unit::Volt), "4.99975 V");
        assert_eq!(fmt_value(1e-21, Unit::Volt), "0.001 aV");
        assert_eq!(fmt_num(-0.0), "0");
        assert_eq!(fmt_num(123_456_789_012.0), "123456789012");
    }
}
