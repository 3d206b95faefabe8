//! Units, SI prefixes and dimensions: what a number literal means and how
//! dimensions combine through expressions.

use std::fmt;

/// Exponents of kg, m, s, A.
pub(crate) type Exponents = [i8; 4];

pub(crate) const DIMENSIONLESS: Exponents = [0, 0, 0, 0];
pub(crate) const VOLT: Exponents = [1, 2, -3, -1];
pub(crate) const AMPERE: Exponents = [0, 0, 0, 1];
pub(crate) const OHM: Exponents = [1, 2, -3, -2];
pub(crate) const FARAD: Exponents = [-1, -2, 4, 2];
pub(crate) const HENRY: Exponents = [1, 2, -2, -2];
pub(crate) const SIEMENS: Exponents = [-1, -2, 3, 2];
pub(crate) const HERTZ: Exponents = [0, 0, -1, 0];
pub(crate) const SECOND: Exponents = [0, 0, 1, 0];

/// The dimension of a value.
///
/// `Unknown` is a bare literal (or anything computed only from bare literals): it is
/// not checked. The level-like units (dB, dB/dec, degrees) are kept apart from the SI
/// dimensions because they are not products of kg, m, s, A; `Percent` is a
/// dimensionless fraction that remembers it was written with `%`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Dim {
    Unknown,
    Si(Exponents),
    Percent,
    Degree,
    Decibel,
    DbPerDecade,
}

impl Dim {
    /// Whether the value is a plain number (bare, dimensionless or a percentage).
    pub(crate) fn is_plain(self) -> bool {
        matches!(self, Dim::Unknown | Dim::Si(DIMENSIONLESS) | Dim::Percent)
    }

    /// Whether the value is a level-like quantity (dB, dB/dec, degrees).
    fn is_special(self) -> bool {
        matches!(self, Dim::Degree | Dim::Decibel | Dim::DbPerDecade)
    }

    /// Whether a value of this dimension may stand where `expected` is wanted.
    pub(crate) fn fits(self, expected: Dim) -> bool {
        match (self, expected) {
            (Dim::Unknown, _)
            | (Dim::Percent, Dim::Si(DIMENSIONLESS))
            | (Dim::Si(DIMENSIONLESS), Dim::Percent) => true,
            (a, b) => a == b,
        }
    }

    /// The SI exponents, treating a percentage as dimensionless.
    fn exponents(self) -> Option<Exponents> {
        match self {
            Dim::Si(e) => Some(e),
            Dim::Percent => Some(DIMENSIONLESS),
            _ => None,
        }
    }

    /// The dimension of `a + b` (also `min`, `max`); `None` when they differ.
    pub(crate) fn add(a: Dim, b: Dim) -> Option<Dim> {
        match (a, b) {
            (Dim::Unknown, x) | (x, Dim::Unknown) => Some(x),
            (x, y) if x.fits(y) => Some(if x == Dim::Percent { y } else { x }),
            _ => None,
        }
    }

    /// The dimension of `a * b`, or of `a / b` when `divide`; `None` for a product of two
    /// level-like quantities.
    pub(crate) fn mul(a: Dim, b: Dim, divide: bool) -> Option<Dim> {
        match (a, b) {
            // A bare literal may stand for any quantity, so a product with one is unknown.
            (_, Dim::Unknown) | (Dim::Unknown, _) => Some(Dim::Unknown),
            (x, y) if x.is_special() && y.is_plain() => Some(x),
            (x, y) if y.is_special() && x.is_plain() && !divide => Some(y),
            (x, y) => {
                let (ex, ey) = (x.exponents()?, y.exponents()?);
                let sign = if divide { -1 } else { 1 };
                let mut out = [0i8; 4];
                for k in 0..4 {
                    out[k] = ex[k].checked_add(ey[k].checked_mul(sign)?)?;
                }
                Some(Dim::Si(out))
            }
        }
    }

    /// The dimension of `a ^ n` for an integer `n`.
    pub(crate) fn powi(self, n: i32) -> Option<Dim> {
        match self {
            Dim::Unknown => Some(Dim::Unknown),
            Dim::Si(e) => {
                let n8 = i8::try_from(n).ok()?;
                let mut out = [0i8; 4];
                for k in 0..4 {
                    out[k] = e[k].checked_mul(n8)?;
                }
                Some(Dim::Si(out))
            }
            Dim::Percent => Some(Dim::Si(DIMENSIONLESS)),
            _ if n == 1 => Some(self),
            _ => None,
        }
    }

    /// The dimension of `sqrt(a)`; `None` when an exponent is odd.
    pub(crate) fn sqrt(self) -> Option<Dim> {
        match self {
            Dim::Unknown => Some(Dim::Unknown),
            Dim::Si(e) if e.iter().all(|x| x % 2 == 0) => Some(Dim::Si(scale_half(e))),
            Dim::Percent => Some(Dim::Si(DIMENSIONLESS)),
            _ => None,
        }
    }

    /// A phrase naming the quantity: `a capacitance (F)`.
    pub(crate) fn describe(self) -> String {
        let name = match self {
            Dim::Unknown => return "a bare number".into(),
            Dim::Percent => return "a percentage (%)".into(),
            Dim::Degree => return "an angle (deg)".into(),
            Dim::Decibel => return "a level (dB)".into(),
            Dim::DbPerDecade => return "a slope (dB/dec)".into(),
            Dim::Si(e) => match e {
                DIMENSIONLESS => return "a plain number".into(),
                OHM => "a resistance",
                FARAD => "a capacitance",
                HENRY => "an inductance",
                VOLT => "a voltage",
                AMPERE => "a current",
                SIEMENS => "a conductance",
                HERTZ => "a frequency",
                SECOND => "a time",
                _ => return format!("a quantity in {self}"),
            },
        };
        format!("{name} ({self})")
    }
}

fn scale_half(e: Exponents) -> Exponents {
    e.map(|x| x / 2)
}

impl fmt::Display for Dim {
    /// The unit symbol (`F`, `Hz`), or a product of base units (`kg·m²·s⁻³`).
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let e = match *self {
            Dim::Unknown => return f.write_str("no unit"),
            Dim::Percent => return f.write_str("%"),
            Dim::Degree => return f.write_str("deg"),
            Dim::Decibel => return f.write_str("dB"),
            Dim::DbPerDecade => return f.write_str("dB/dec"),
            Dim::Si(e) => e,
        };
        let symbol = match e {
            DIMENSIONLESS => "no unit",
            OHM => "Ω",
            FARAD => "F",
            HENRY => "H",
            VOLT => "V",
            AMPERE => "A",
            SIEMENS => "S",
            HERTZ => "Hz",
            SECOND => "s",
            _ => "",
        };
        if !symbol.is_empty() {
            return f.write_str(symbol);
        }
        let mut parts = Vec::new();
        for (base, &n) in ["kg", "m", "s", "A"].iter().zip(e.iter()) {
            if n == 1 {
                parts.push((*base).to_string());
            } else if n != 0 {
                parts.push(format!("{base}{}", superscript(n)));
            }
        }
        f.write_str(&parts.join("·"))
    }
}

fn superscript(n: i8) -> String {
    const DIGITS: [char; 10] = ['⁰', '¹', '²', '³', '⁴', '⁵', '⁶', '⁷', '⁸', '⁹'];
    let mut out = String::new();
    if n < 0 {
        out.push('⁻');
    }
    for c in n.unsigned_abs().to_string().chars() {
        out.push(DIGITS[c.to_digit(10).unwrap_or(0) as usize]);
    }
    out
}

/// A unit symbol of the language.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum UnitSym {
    Ohm,
    Farad,
    Henry,
    Volt,
    Ampere,
    Siemens,
    Hertz,
    Second,
    Percent,
    Degree,
    Decibel,
    DbPerDecade,
    DbPerOctave,
}

impl UnitSym {
    /// The unit named by the whole of `word`, if any.
    pub(crate) fn from_word(word: &str) -> Option<UnitSym> {
        Some(match word {
            "Ω" | "\u{2126}" | "ohm" => UnitSym::Ohm,
            "F" => UnitSym::Farad,
            "H" => UnitSym::Henry,
            "V" => UnitSym::Volt,
            "A" => UnitSym::Ampere,
            "S" => UnitSym::Siemens,
            "Hz" => UnitSym::Hertz,
            "s" => UnitSym::Second,
            "%" => UnitSym::Percent,
            "deg" | "°" => UnitSym::Degree,
            "dB" => UnitSym::Decibel,
            "dB/dec" => UnitSym::DbPerDecade,
            "dB/oct" => UnitSym::DbPerOctave,
            _ => return None,
        })
    }

    /// Whether an SI prefix may be put in front.
    pub(crate) fn takes_prefix(self) -> bool {
        !matches!(
            self,
            UnitSym::Percent
                | UnitSym::Degree
                | UnitSym::Decibel
                | UnitSym::DbPerDecade
                | UnitSym::DbPerOctave
        )
    }

    /// The dimension of a value written with this unit.
    pub(crate) fn dim(self) -> Dim {
        match self {
            UnitSym::Ohm => Dim::Si(OHM),
            UnitSym::Farad => Dim::Si(FARAD),
            UnitSym::Henry => Dim::Si(HENRY),
            UnitSym::Volt => Dim::Si(VOLT),
            UnitSym::Ampere => Dim::Si(AMPERE),
            UnitSym::Siemens => Dim::Si(SIEMENS),
            UnitSym::Hertz => Dim::Si(HERTZ),
            UnitSym::Second => Dim::Si(SECOND),
            UnitSym::Percent => Dim::Percent,
            UnitSym::Degree => Dim::Degree,
            UnitSym::Decibel => Dim::Decibel,
            UnitSym::DbPerDecade | UnitSym::DbPerOctave => Dim::DbPerDecade,
        }
    }
}

/// The decimal exponent of an SI prefix character.
pub(crate) fn prefix_exponent(c: char) -> Option<i64> {
    Some(match c {
        'f' => -15,
        'p' => -12,
        'n' => -9,
        'u' | 'µ' | 'μ' => -6,
        'm' => -3,
        'k' => 3,
        'M' => 6,
        'G' => 9,
        'T' => 12,
        _ => return None,
    })
}

/// A number literal as written: `digits × 10^exponent`, an optional SI prefix and an
/// optional unit. Kept apart so a range's trailing unit can be given to a bare lower end.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Literal<'s> {
    /// Sign (`-`, or the typographic minus).
    pub negative: bool,
    /// The mantissa's integer digits.
    pub int: &'s str,
    /// The mantissa's fraction digits (after the point or the value-code letter).
    pub frac: &'s str,
    /// The decimal exponent that places the point (from the fraction and `e…`).
    pub exponent: i64,
    /// The SI prefix exponent, if a prefix was written (or implied by a value code).
    pub prefix: Option<i64>,
    /// The unit, if written (`R` codes imply Ω).
    pub unit: Option<UnitSym>,
    /// The value, once computed by [`Literal::cache`].
    pub cached: Option<f64>,
}

/// Why a literal has no finite value.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum LiteralError {
    /// Too large for a 64-bit float.
    Overflow,
    /// Nonzero but too small for a 64-bit float.
    Underflow,
}

impl Literal<'_> {
    /// The value in SI units (a percentage as a fraction, dB/oct as dB/dec), rounded
    /// once from the decimal text, so `4k7`, `4.7k` and `4700` are the same number.
    pub(crate) fn value(&self) -> Result<f64, LiteralError> {
        if let Some(v) = self.cached {
            return Ok(v);
        }
        self.compute()
    }

    /// Stores the value, so later reads need no parsing.
    pub(crate) fn cache(&mut self) -> Result<f64, LiteralError> {
        self.cached = None;
        let v = self.compute()?;
        self.cached = Some(v);
        Ok(v)
    }

    fn compute(&self) -> Result<f64, LiteralError> {
        let mut exponent = self.exponent.saturating_add(self.prefix.unwrap_or(0));
        if self.unit == Some(UnitSym::Percent) {
            exponent = exponent.saturating_sub(2);
        }
        let sign = if self.negative { "-" } else { "" };
        let mut value = parse_decimal(sign, self.int, self.frac, exponent)?;
        if self.unit == Some(UnitSym::DbPerOctave) {
            value *= std::f64::consts::LOG2_10;
        }
        if !value.is_finite() {
            return Err(LiteralError::Overflow);
        }
        if value == 0.0 && self.int.bytes().chain(self.frac.bytes()).any(|b| b != b'0') {
            return Err(LiteralError::Underflow);
        }
        Ok(value)
    }

    /// The dimension the unit gives (`Unknown` when none was written).
    pub(crate) fn dim(&self) -> Dim {
        self.unit.map_or(Dim::Unknown, UnitSym::dim)
    }
}

/// Reads `sign digits e exponent` as a correctly rounded float, without allocating
/// for the usual short literals.
fn parse_decimal(sign: &str, int: &str, frac: &str, exponent: i64) -> Result<f64, LiteralError> {
    use std::io::Write as _;
    if let Some(v) = fast_decimal(int, frac, exponent) {
        return Ok(if sign.is_empty() { v } else { -v });
    }
    let mut buffer = [0u8; 64];
    let mut cursor = std::io::Cursor::new(&mut buffer[..]);
    if write!(cursor, "{sign}{int}{frac}e{exponent}").is_ok() {
        let len = cursor.position() as usize;
        if let Ok(text) = std::str::from_utf8(&buffer[..len]) {
            return text.parse().map_err(|_| LiteralError::Overflow);
        }
    }
    format!("{sign}{int}{frac}e{exponent}")
        .parse()
        .map_err(|_| LiteralError::Overflow)
}

/// The exact-arithmetic shortcut for short literals (Clinger's fast path, W. D.
/// Clinger, "How to Read Floating Point Numbers Accurately", PLDI 1990): a mantissa
/// below 2^53 and a power of ten up to 10^22 are both exact in a 64-bit float, so one
/// multiplication or division rounds once, giving the correctly rounded value, the
/// same as parsing the text. `None` when the literal is outside that range.
fn fast_decimal(int: &str, frac: &str, exponent: i64) -> Option<f64> {
    const POWERS: [f64; 23] = [
        1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
        1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
    ];
    let mut mantissa: u64 = 0;
    let mut significant = 0;
    for b in int.bytes().chain(frac.bytes()) {
        let digit = b.wrapping_sub(b'0');
        if digit > 9 {
            return None;
        }
        if mantissa != 0 || digit != 0 {
            significant += 1;
            if significant > 15 {
                return None;
            }
        }
        mantissa = mantissa * 10 + u64::from(digit);
    }
    let m = mantissa as f64;
    let power = POWERS.get(usize::try_from(exponent.unsigned_abs()).ok()?)?;
    Some(if exponent >= 0 { m * power } else { m / power })
}

/// Formats `value` as the shortest decimal text that reads back to exactly the same
/// float (`4700`, `1e-9`, `0.47`).
pub(crate) fn format_number(value: f64) -> String {
    if value == 0.0 {
        return "0".into();
    }
    let magnitude = value.abs();
    if (1e-4..1e15).contains(&magnitude) {
        format!("{value}")
    } else {
        format!("{value:e}")
    }
}

/// Formats `value` with an SI prefix (`4.7k`, `100n`), moving the decimal point of its
/// shortest exact text, so it reads back to exactly the same float. Returns the
/// number and the prefix text.
pub(crate) fn format_prefixed(value: f64) -> (String, &'static str) {
    if value == 0.0 || !value.is_finite() {
        return (format_number(value), "");
    }
    let sci = format!("{:e}", value.abs());
    let Some((mantissa, exp)) = sci.split_once('e') else {
        return (format_number(value), "");
    };
    let Ok(exp) = exp.parse::<i32>() else {
        return (format_number(value), "");
    };
    let exp3 = exp.div_euclid(3) * 3;
    let prefix = match exp3 {
        -15 => "f",
        -12 => "p",
        -9 => "n",
        -6 => "u",
        -3 => "m",
        0 => "",
        3 => "k",
        6 => "M",
        9 => "G",
        _ => return (format_number(value), ""),
    };
    let digits: String = mantissa.chars().filter(char::is_ascii_digit).collect();
    let point = 1 + (exp - exp3) as usize;
    let mut text = if digits.len() > point {
        format!("{}.{}", &digits[..point], &digits[point..])
    } else {
        format!("{digits}{}", "0".repeat(point - digits.len()))
    };
    if value < 0.0 {
        text.insert(0, '-');
    }
    (text, prefix)
}

#[cfg(test)]
mod tests {
    use super::fast_decimal;
    use proptest::prelude::*;

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(256))]

        /// The exact shortcut agrees bit for bit with the standard library's correctly
        /// rounded text parser wherever it applies.
        #[test]
        fn fast_path_matches_text_parse(
            int in "[0-9]{1,12}",
            frac in "[0-9]{0,6}",
            exponent in -30i64..30,
        ) {
            let text = format!("{int}{frac}e{exponent}");
            let expected: f64 = text.parse().unwrap_or(f64::NAN);
            if let Some(v) = fast_decimal(&int, &frac, exponent) {
                prop_assert_eq!(v.to_bits(), expected.to_bits(), "{}", text);
            }
        }
    }

    #[test]
    fn fast_path_bounds() {
        assert_eq!(fast_decimal("47", "", -1), Some(4.7));
        assert_eq!(fast_decimal("1", "", 22), Some(1e22));
        assert_eq!(fast_decimal("1", "", 23), None);
        assert_eq!(fast_decimal("1234567890123456", "", 0), None);
        assert_eq!(fast_decimal("000000000000000000001", "5", -1), Some(1.5));
    }
}
