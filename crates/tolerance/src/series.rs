//! The IEC 60063 preferred-number series (E3 … E192): tables, rounding to a standard
//! value on a logarithmic scale, and two-part series and parallel combinations.
//!
//! The tables are the standard's, not the rounded geometric sequence `10^(i/n)`: the
//! E3–E24 values are historical (2.7, 3.3, 3.9, 4.7 and 8.2 lie off the geometric
//! rounding) and E192 has 9.20 where the rounding gives 9.19. Values are formed from
//! the integer significand and a power of ten, so `4.7 kΩ` comes out as the same `f64`
//! as the literal `4700.0` and `2.2 nF` as `2.2e-9`.

use std::fmt;
use std::str::FromStr;

/// One of the IEC 60063 series.
///
/// ```
/// use rolloff_tolerance::series::Series;
/// let v = Series::E12.nearest(5000.0).unwrap();
/// assert_eq!(v.value, 4700.0);
/// assert_eq!(Series::E24.next_up(5000.0).unwrap().value, 5100.0);
/// assert_eq!(Series::E24.next_down(5000.0).unwrap().value, 4700.0);
/// ```
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Series {
    /// 3 values a decade (tolerance wider than ±20 %).
    E3,
    /// 6 values a decade (±20 %).
    E6,
    /// 12 values a decade (±10 %).
    E12,
    /// 24 values a decade (±5 %).
    E24,
    /// 48 values a decade (±2 %), three significant digits.
    E48,
    /// 96 values a decade (±1 %).
    E96,
    /// 192 values a decade (±0.5 % and tighter).
    E192,
}

/// A value of a series: `significand × 10^exponent`, e.g. 4.7 kΩ is `47 × 10^2`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StandardValue {
    /// The table entry (two digits for E3–E24, three for E48–E192).
    pub significand: u16,
    /// The power of ten the significand is multiplied by.
    pub exponent: i32,
    /// `significand × 10^exponent` as an `f64` (correctly rounded).
    pub value: f64,
}

impl StandardValue {
    /// The value as an IEC 60062 letter code, the multiplier letter standing for the
    /// decimal point: `4k7` (4.7 k), `100R` (100), `2n2` (2.2 n), `4u7` (4.7 µ), `1M5`,
    /// `470m` (0.47). The letters are the SI prefixes `f p n u m k M G T` and `R` for
    /// none; the language reads every code this gives. `None` outside 1e-15 .. 1e15.
    ///
    /// ```
    /// use rolloff_tolerance::series::Series;
    /// let code = |x: f64| Series::E24.nearest(x).unwrap().code().unwrap();
    /// assert_eq!(code(4700.0), "4k7");
    /// assert_eq!(code(2.2e-9), "2n2");
    /// assert_eq!(code(100.0), "100R");
    /// assert_eq!(code(10e3), "10k");
    /// ```
    pub fn code(&self) -> Option<String> {
        const LETTERS: [char; 10] = ['f', 'p', 'n', 'u', 'm', 'R', 'k', 'M', 'G', 'T'];
        let digits = self.significand.to_string();
        let n_digits = digits.len() as i32;
        let lead = self.exponent + n_digits - 1;
        let group = lead.div_euclid(3) * 3;
        let letter = *LETTERS.get(usize::try_from(group / 3 + 5).ok()?)?;
        // The digit string shifted so that the group's unit sits at the letter.
        let shift = self.exponent - group;
        if shift >= 0 {
            return Some(format!("{digits}{}{letter}", "0".repeat(shift as usize)));
        }
        let split = n_digits + shift;
        let (int, frac) = if split > 0 {
            let (i, f) = digits.split_at(split as usize);
            (i.to_string(), f.to_string())
        } else {
            (
                "0".to_string(),
                format!("{}{digits}", "0".repeat((-split) as usize)),
            )
        };
        let frac = frac.trim_end_matches('0');
        Some(format!("{int}{letter}{frac}"))
    }
}

/// How two parts are joined in a [`Combination`].
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Joining {
    /// `a + b` (resistors and inductors in series, capacitors in parallel).
    Sum,
    /// `a·b / (a + b)` (resistors and inductors in parallel, capacitors in series).
    Reciprocal,
}

/// Two standard values whose combination approximates a target.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Combination {
    /// How `a` and `b` are joined.
    pub joining: Joining,
    /// The larger part for [`Joining::Sum`], the smaller for [`Joining::Reciprocal`].
    pub a: StandardValue,
    /// The other part.
    pub b: StandardValue,
    /// The combined value.
    pub value: f64,
    /// `(value − target) / target`.
    pub relative_error: f64,
}

/// The error of [`Series::from_str`]: the text names no series.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("`{0}` is not a standard value series (E3, E6, E12, E24, E48, E96 or E192)")]
pub struct UnknownSeries(pub String);

// IEC 60063, from memory. E3–E24 two significant digits, E48–E192 three.
const E3: [u16; 3] = [10, 22, 47];
const E6: [u16; 6] = [10, 15, 22, 33, 47, 68];
const E12: [u16; 12] = [10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82];
const E24: [u16; 24] = [
    10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91,
];
const E48: [u16; 48] = [
    100, 105, 110, 115, 121, 127, 133, 140, 147, 154, 162, 169, 178, 187, 196, 205, 215, 226, 237,
    249, 261, 274, 287, 301, 316, 332, 348, 365, 383, 402, 422, 442, 464, 487, 511, 536, 562, 590,
    619, 649, 681, 715, 750, 787, 825, 866, 909, 953,
];
const E96: [u16; 96] = [
    100, 102, 105, 107, 110, 113, 115, 118, 121, 124, 127, 130, 133, 137, 140, 143, 147, 150, 154,
    158, 162, 165, 169, 174, 178, 182, 187, 191, 196, 200, 205, 210, 215, 221, 226, 232, 237, 243,
    249, 255, 261, 267, 274, 280, 287, 294, 301, 309, 316, 324, 332, 340, 348, 357, 365, 374, 383,
    392, 402, 412, 422, 432, 442, 453, 464, 475, 487, 499, 511, 523, 536, 549, 562, 576, 590, 604,
    619, 634, 649, 665, 681, 698, 715, 732, 750, 768, 787, 806, 825, 845, 866, 887, 909, 931, 953,
    976,
];
const E192: [u16; 192] = [
    100, 101, 102, 104, 105, 106, 107, 109, 110, 111, 113, 114, 115, 117, 118, 120, 121, 123, 124,
    126, 127, 129, 130, 132, 133, 135, 137, 138, 140, 142, 143, 145, 147, 149, 150, 152, 154, 156,
    158, 160, 162, 164, 165, 167, 169, 172, 174, 176, 178, 180, 182, 184, 187, 189, 191, 193, 196,
    198, 200, 203, 205, 208, 210, 213, 215, 218, 221, 223, 226, 229, 232, 234, 237, 240, 243, 246,
    249, 252, 255, 258, 261, 264, 267, 271, 274, 277, 280, 284, 287, 291, 294, 298, 301, 305, 309,
    312, 316, 320, 324, 328, 332, 336, 340, 344, 348, 352, 357, 361, 365, 370, 374, 379, 383, 388,
    392, 397, 402, 407, 412, 417, 422, 427, 432, 437, 442, 448, 453, 459, 464, 470, 475, 481, 487,
    493, 499, 505, 511, 517, 523, 530, 536, 542, 549, 556, 562, 569, 576, 583, 590, 597, 604, 612,
    619, 626, 634, 642, 649, 657, 665, 673, 681, 690, 698, 706, 715, 723, 732, 741, 750, 759, 768,
    777, 787, 796, 806, 816, 825, 835, 845, 856, 866, 876, 887, 898, 909, 920, 931, 942, 953, 965,
    976, 988,
];

/// Two numbers closer than this (relative) are taken as equal when a value is compared
/// with a table entry, so that `4.7e3` computed as `4.7 * 1000.0` still counts as 4.7 kΩ.
const SAME_VALUE: f64 = 1e-9;

/// The largest ratio of the two parts of a [`Combination`]: beyond it the second part
/// is a trim rather than half of a pair (and the search would be unbounded for a target
/// that is itself a standard value).
pub const MAX_PART_RATIO: f64 = 1000.0;

/// The largest decade exponent handled (values between about 1e-290 and 1e290).
const MAX_DECADE: i32 = 290;

impl Series {
    /// Every series, coarsest first.
    pub const ALL: [Series; 7] = [
        Series::E3,
        Series::E6,
        Series::E12,
        Series::E24,
        Series::E48,
        Series::E96,
        Series::E192,
    ];

    /// The name as written (`"E12"`).
    pub fn name(self) -> &'static str {
        match self {
            Series::E3 => "E3",
            Series::E6 => "E6",
            Series::E12 => "E12",
            Series::E24 => "E24",
            Series::E48 => "E48",
            Series::E96 => "E96",
            Series::E192 => "E192",
        }
    }

    /// The table of significands of one decade, ascending (`[10, 12, 15, …, 82]` for
    /// E12, `[100, 102, …, 976]` for E96).
    pub fn significands(self) -> &'static [u16] {
        match self {
            Series::E3 => &E3,
            Series::E6 => &E6,
            Series::E12 => &E12,
            Series::E24 => &E24,
            Series::E48 => &E48,
            Series::E96 => &E96,
            Series::E192 => &E192,
        }
    }

    /// The number of values per decade.
    pub fn len(self) -> usize {
        self.significands().len()
    }

    /// Always `false`: every series has values. (Present for the `len` convention.)
    pub fn is_empty(self) -> bool {
        false
    }

    /// Significant digits of the table: 2 for E3–E24, 3 for E48–E192.
    pub fn digits(self) -> u32 {
        if self.significands()[0] >= 100 { 3 } else { 2 }
    }

    /// The tolerance the series is usually paired with, as a fraction (`0.05` for E24);
    /// `None` for E3, whose parts are wider than ±20 %. (Common practice.)
    pub fn usual_tolerance(self) -> Option<f64> {
        match self {
            Series::E3 => None,
            Series::E6 => Some(0.20),
            Series::E12 => Some(0.10),
            Series::E24 => Some(0.05),
            Series::E48 => Some(0.02),
            Series::E96 => Some(0.01),
            Series::E192 => Some(0.005),
        }
    }

    /// The values of the decade `[1, 10)` as `f64` (`1.0, 1.2, …, 8.2` for E12).
    pub fn decade(self) -> Vec<f64> {
        let shift = 1 - self.digits() as i32;
        self.significands()
            .iter()
            .map(|&s| scaled(s, shift))
            .collect()
    }

    /// The standard value nearest to `x` on a logarithmic scale, across decade edges
    /// (`9.5` rounds to `10` in E12, since `√(8.2·10) ≈ 9.06`). At the exact geometric
    /// midpoint the upper value is chosen. `None` unless `x` is finite and positive
    /// (and within about 1e±290).
    ///
    /// ```
    /// use rolloff_tolerance::series::Series;
    /// assert_eq!(Series::E12.nearest(9.5).unwrap().value, 10.0);
    /// assert_eq!(Series::E12.nearest(9.0).unwrap().value, 8.2);
    /// assert_eq!(Series::E24.nearest(2.2e-9).unwrap().value, 2.2e-9);
    /// ```
    pub fn nearest(self, x: f64) -> Option<StandardValue> {
        let (below, above) = self.neighbours(x)?;
        // Compare x² with below·above: log-distance to each side, without logarithms.
        if x * x >= below.value * above.value {
            Some(above)
        } else {
            Some(below)
        }
    }

    /// The smallest standard value at or above `x` (`x`'s own value when it is one).
    ///
    /// ```
    /// use rolloff_tolerance::series::Series;
    /// assert_eq!(Series::E12.next_up(8.3).unwrap().value, 10.0);
    /// assert_eq!(Series::E12.next_up(8.2).unwrap().value, 8.2);
    /// ```
    pub fn next_up(self, x: f64) -> Option<StandardValue> {
        self.neighbours(x).map(|(_, above)| above)
    }

    /// The largest standard value at or below `x` (`x`'s own value when it is one).
    ///
    /// ```
    /// use rolloff_tolerance::series::Series;
    /// assert_eq!(Series::E12.next_down(0.99).unwrap().value, 0.82);
    /// assert_eq!(Series::E12.next_down(1.0).unwrap().value, 1.0);
    /// ```
    pub fn next_down(self, x: f64) -> Option<StandardValue> {
        self.neighbours(x).map(|(below, _)| below)
    }

    /// The standard value strictly above `x` (one step up from a standard value).
    pub fn step_up(self, x: f64) -> Option<StandardValue> {
        let above = self.next_up(x)?;
        if same(above.value, x) {
            self.next_up(above.value * (1.0 + 1e3 * SAME_VALUE))
        } else {
            Some(above)
        }
    }

    /// The standard value strictly below `x` (one step down from a standard value).
    pub fn step_down(self, x: f64) -> Option<StandardValue> {
        let below = self.next_down(x)?;
        if same(below.value, x) {
            self.next_down(below.value * (1.0 - 1e3 * SAME_VALUE))
        } else {
            Some(below)
        }
    }

    /// Every standard value in `low ..= high`, ascending (empty when the range is
    /// empty or not finite and positive).
    ///
    /// ```
    /// use rolloff_tolerance::series::Series;
    /// let v: Vec<f64> = Series::E6.values_between(50.0, 250.0).iter().map(|s| s.value).collect();
    /// assert_eq!(v, [68.0, 100.0, 150.0, 220.0]);
    /// ```
    pub fn values_between(self, low: f64, high: f64) -> Vec<StandardValue> {
        let mut out = Vec::new();
        let Some(mut current) = self.next_up(low) else {
            return out;
        };
        while current.value <= high * (1.0 + SAME_VALUE) {
            out.push(current);
            match self.step_up(current.value) {
                Some(next) => current = next,
                None => break,
            }
        }
        out
    }

    /// The best pair `a + b` (a ≥ b, both standard and both below `target`, so that
    /// each part contributes, and `a / b` at most [`MAX_PART_RATIO`]) for `target`, or `None` for a target that is not finite
    /// and positive. Ties go to the pair with the larger `a`.
    ///
    /// ```
    /// use rolloff_tolerance::series::Series;
    /// // 7.5 kΩ from E12: 6.8 kΩ + 680 Ω = 7.48 kΩ, 0.27 % low.
    /// let c = Series::E12.best_sum(7500.0).unwrap();
    /// assert_eq!((c.a.value, c.b.value), (6800.0, 680.0));
    /// assert!((c.relative_error + 20.0 / 7500.0).abs() < 1e-12);
    /// ```
    pub fn best_sum(self, target: f64) -> Option<Combination> {
        self.best_pair(target, Joining::Sum)
    }

    /// The best pair `a·b/(a+b)` (a ≤ b, both standard and both above `target`, and
    /// `b / a` at most [`MAX_PART_RATIO`]) for
    /// `target`, or `None` for a target that is not finite and positive. Ties go to
    /// the pair with the larger `a`.
    ///
    /// ```
    /// use rolloff_tolerance::series::Series;
    /// // 7.5 kΩ from E12: 15 kΩ ‖ 15 kΩ, exact.
    /// let c = Series::E12.best_reciprocal(7500.0).unwrap();
    /// assert_eq!((c.a.value, c.b.value), (15e3, 15e3));
    /// assert!(c.relative_error.abs() < 1e-15);
    /// ```
    pub fn best_reciprocal(self, target: f64) -> Option<Combination> {
        self.best_pair(target, Joining::Reciprocal)
    }

    /// The better of [`Series::best_sum`] and [`Series::best_reciprocal`] (the sum on a tie).
    pub fn best_combination(self, target: f64) -> Option<Combination> {
        let sum = self.best_sum(target)?;
        let reciprocal = self.best_reciprocal(target)?;
        if reciprocal.relative_error.abs() < sum.relative_error.abs() {
            Some(reciprocal)
        } else {
            Some(sum)
        }
    }

    /// The standard values just below and just above `x` (both `x` when it is one).
    fn neighbours(self, x: f64) -> Option<(StandardValue, StandardValue)> {
        if !(x.is_finite() && x > 0.0) {
            return None;
        }
        let decade = x.log10().floor() as i32;
        if decade.abs() > MAX_DECADE {
            return None;
        }
        // Candidates from the decade below to the first value of the decade above, so
        // that a rounding error in `log10` near a decade edge cannot lose the answer.
        let mut below: Option<StandardValue> = None;
        let mut above: Option<StandardValue> = None;
        for d in decade - 1..=decade + 1 {
            for value in self.decade_values(d) {
                if same(value.value, x) {
                    return Some((value, value));
                }
                if value.value < x {
                    below = Some(value);
                } else if above.is_none() {
                    above = Some(value);
                }
            }
        }
        Some((below?, above?))
    }

    /// The values of the decade `[10^d, 10^(d+1))`, ascending.
    fn decade_values(self, d: i32) -> impl Iterator<Item = StandardValue> {
        let exponent = d + 1 - self.digits() as i32;
        self.significands().iter().map(move |&s| StandardValue {
            significand: s,
            exponent,
            value: scaled(s, exponent),
        })
    }

    fn best_pair(self, target: f64, joining: Joining) -> Option<Combination> {
        if !(target.is_finite() && target > 0.0) {
            return None;
        }
        // For a sum with a ≥ b, a lies in [target/2, target); for a reciprocal pair with
        // a ≤ b, a lies in (target, 2·target]. One step beyond each end covers pairs
        // whose combination misses the target on the far side.
        let (low, high) = match joining {
            Joining::Sum => (self.step_down(target / 2.0)?.value, target),
            Joining::Reciprocal => (target, self.step_up(2.0 * target)?.value),
        };
        let mut best: Option<Combination> = None;
        for a in self.values_between(low, high).into_iter().rev() {
            let ideal_b = match joining {
                Joining::Sum => target - a.value,
                Joining::Reciprocal => a.value * target / (a.value - target),
            };
            if !(ideal_b.is_finite() && ideal_b > 0.0) {
                continue;
            }
            // The error is monotonic in b, so the best b is a neighbour of the ideal one,
            // or the end of the allowed ratio when the ideal lies beyond it.
            let (limit, candidates) = match joining {
                Joining::Sum => {
                    let limit = a.value / MAX_PART_RATIO;
                    (
                        limit,
                        [
                            self.next_up(limit),
                            self.next_down(ideal_b),
                            self.next_up(ideal_b),
                        ],
                    )
                }
                Joining::Reciprocal => {
                    let limit = a.value * MAX_PART_RATIO;
                    (
                        limit,
                        [
                            self.next_down(limit),
                            self.next_down(ideal_b),
                            self.next_up(ideal_b),
                        ],
                    )
                }
            };
            for b in candidates.into_iter().flatten() {
                let contributes = match joining {
                    Joining::Sum => b.value < target && b.value >= limit * (1.0 - SAME_VALUE),
                    Joining::Reciprocal => {
                        b.value > target && b.value <= limit * (1.0 + SAME_VALUE)
                    }
                };
                if !contributes {
                    continue;
                }
                let candidate = combine(joining, a, b, target);
                if best.is_none_or(|c| candidate.relative_error.abs() < c.relative_error.abs()) {
                    best = Some(candidate);
                }
            }
        }
        best
    }
}

fn combine(joining: Joining, a: StandardValue, b: StandardValue, target: f64) -> Combination {
    let value = match joining {
        Joining::Sum => a.value + b.value,
        Joining::Reciprocal => a.value * b.value / (a.value + b.value),
    };
    // Keep the documented order: larger first for a sum, smaller first for a reciprocal.
    let (a, b) = match joining {
        Joining::Sum if b.value > a.value => (b, a),
        Joining::Reciprocal if b.value < a.value => (b, a),
        _ => (a, b),
    };
    Combination {
        joining,
        a,
        b,
        value,
        relative_error: (value - target) / target,
    }
}

/// `significand × 10^exponent`, correctly rounded: powers of ten up to 1e22 are exact
/// in `f64`, so one multiplication or division rounds once.
fn scaled(significand: u16, exponent: i32) -> f64 {
    let s = f64::from(significand);
    if exponent >= 0 {
        s * 10f64.powi(exponent)
    } else {
        s / 10f64.powi(-exponent)
    }
}

fn same(a: f64, b: f64) -> bool {
    (a - b).abs() <= SAME_VALUE * a.abs().max(b.abs())
}

impl fmt::Display for Series {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for Series {
    type Err = UnknownSeries;

    /// Parses `E12` or `e12`.
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        Series::ALL
            .into_iter()
            .find(|series| series.name().eq_ignore_ascii_case(s.trim()))
            .ok_or_else(|| UnknownSeries(s.to_string()))
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::expect_used)]
mod tests;
