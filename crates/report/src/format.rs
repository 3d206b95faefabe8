//! Short human-readable numbers for messages: SI prefixes, four significant digits.
//!
//! These are for reasons and bounds in text; tables and machine formats are the CLI's.

use rolloff_netlist::Unit;

/// The default cutoff level, `20·log10(1/√2)` = −3.0103 dB.
pub const DEFAULT_LEVEL_DB: f64 = -3.010_299_956_639_812;

/// A value with an SI prefix and unit, four significant digits, trailing zeros trimmed:
/// `fmt_si(15915.49, "Hz")` is `15.92 kHz`.
pub fn fmt_si(value: f64, unit: &str) -> String {
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
    let (scale, prefix) = PREFIXES
        .iter()
        .copied()
        .find(|(scale, _)| magnitude >= *scale * (1.0 - 5e-5))
        .unwrap_or((1e-18, "a"));
    format!("{} {prefix}{unit}", fmt_sig(value / scale, 4))
}

/// A frequency in Hz with an SI prefix (`1 MHz`, `159.2 Hz`).
pub fn fmt_hz(freq_hz: f64) -> String {
    fmt_si(freq_hz, "Hz")
}

/// A dB value with two decimals at most, with a true minus sign (`−3.01 dB`).
pub fn fmt_db(db: f64) -> String {
    format!("{} dB", minus(&trim(&format!("{db:.2}"))))
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
        Unit::Degree => format!("{} deg", minus(&fmt_sig(value, 4))),
        Unit::DecibelPerDecade => format!("{} dB/dec", minus(&fmt_sig(value, 4))),
        Unit::Dimensionless => minus(&fmt_sig(value, 4)),
        Unit::Hertz | Unit::Ohm | Unit::Volt | Unit::Ampere | Unit::Second => {
            minus(&fmt_si(value, unit.symbol()))
        }
    }
}

/// `value` to `digits` significant digits without exponent, trailing zeros trimmed.
pub fn fmt_sig(value: f64, digits: i32) -> String {
    if value == 0.0 || !value.is_finite() {
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
        assert_eq!(fmt_hz(15_915.49), "15.92 kHz");
        assert_eq!(fmt_hz(0.5), "500 mHz");
        assert_eq!(fmt_hz(999.99), "1 kHz");
        assert_eq!(fmt_level(DEFAULT_LEVEL_DB), "−3 dB");
        assert_eq!(fmt_level(-6.0), "−6 dB");
        assert_eq!(fmt_db(-3.0103), "−3.01 dB");
        assert_eq!(fmt_value(-0.005, Unit::Volt), "−5 mV");
    }
}
