//! Tests of the IEC 60063 tables, rounding and combinations.

use super::*;
use proptest::prelude::*;

/// IEC 60063, E12, from memory.
const IEC_E12: [f64; 12] = [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2];

/// IEC 60063, E24, from memory.
const IEC_E24: [f64; 24] = [
    1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6,
    6.2, 6.8, 7.5, 8.2, 9.1,
];

/// IEC 60063, E96, from memory.
const IEC_E96: [f64; 96] = [
    1.00, 1.02, 1.05, 1.07, 1.10, 1.13, 1.15, 1.18, 1.21, 1.24, 1.27, 1.30, 1.33, 1.37, 1.40, 1.43,
    1.47, 1.50, 1.54, 1.58, 1.62, 1.65, 1.69, 1.74, 1.78, 1.82, 1.87, 1.91, 1.96, 2.00, 2.05, 2.10,
    2.15, 2.21, 2.26, 2.32, 2.37, 2.43, 2.49, 2.55, 2.61, 2.67, 2.74, 2.80, 2.87, 2.94, 3.01, 3.09,
    3.16, 3.24, 3.32, 3.40, 3.48, 3.57, 3.65, 3.74, 3.83, 3.92, 4.02, 4.12, 4.22, 4.32, 4.42, 4.53,
    4.64, 4.75, 4.87, 4.99, 5.11, 5.23, 5.36, 5.49, 5.62, 5.76, 5.90, 6.04, 6.19, 6.34, 6.49, 6.65,
    6.81, 6.98, 7.15, 7.32, 7.50, 7.68, 7.87, 8.06, 8.25, 8.45, 8.66, 8.87, 9.09, 9.31, 9.53, 9.76,
];

#[test]
fn e12_e24_e96_match_iec_60063() {
    assert_eq!(Series::E12.decade(), IEC_E12);
    assert_eq!(Series::E24.decade(), IEC_E24);
    assert_eq!(Series::E96.decade(), IEC_E96);
}

#[test]
fn coarser_series_are_every_other_value_of_the_finer() {
    // IEC 60063 builds E6 from E12, E12 from E24 (and E3 from E6); E48 and E96 are
    // every other value of E96 and E192.
    let pairs = [
        (Series::E3, Series::E6),
        (Series::E6, Series::E12),
        (Series::E12, Series::E24),
        (Series::E48, Series::E96),
        (Series::E96, Series::E192),
    ];
    for (coarse, fine) in pairs {
        let every_other: Vec<u16> = fine.significands().iter().step_by(2).copied().collect();
        assert_eq!(coarse.significands(), every_other, "{coarse} from {fine}");
        assert_eq!(fine.len(), 2 * coarse.len());
    }
}

/// Indices where the standard departs from `round(10^(i/n))` at the table's digits:
/// the historical E24 values 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2 and E192's 9.20
/// (IEC 60063, from memory).
#[test]
fn departures_from_the_geometric_rounding_are_exactly_the_historical_ones() {
    let departures = |series: Series| -> Vec<u16> {
        let n = series.len() as f64;
        let scale = 10f64.powi(series.digits() as i32 - 1);
        series
            .significands()
            .iter()
            .enumerate()
            .filter(|&(i, &s)| (scale * 10f64.powf(i as f64 / n)).round() as u16 != s)
            .map(|(_, &s)| s)
            .collect()
    };
    assert_eq!(departures(Series::E24), [27, 30, 33, 36, 39, 43, 47, 82]);
    assert_eq!(departures(Series::E12), [27, 33, 39, 47, 82]);
    assert_eq!(departures(Series::E6), [33, 47]);
    assert_eq!(departures(Series::E3), [47]);
    assert!(departures(Series::E48).is_empty());
    assert!(departures(Series::E96).is_empty());
    assert_eq!(departures(Series::E192), [920]);
}

#[test]
fn values_are_the_correctly_rounded_decimals() {
    // The parser of `f64` rounds a decimal literal correctly; our values must agree.
    for series in Series::ALL {
        for d in -13..=7 {
            for s in series.values_between(10f64.powi(d), 9.99 * 10f64.powi(d)) {
                let literal: f64 = format!("{}e{}", s.significand, s.exponent).parse().unwrap();
                assert_eq!(s.value, literal, "{series} {s:?}");
            }
        }
    }
    assert_eq!(Series::E12.nearest(4.7e3).unwrap().value, 4700.0);
    assert_eq!(Series::E12.nearest(2.2e-9).unwrap().value, 2.2e-9);
    assert_eq!(Series::E24.nearest(3.3e-12).unwrap().value, 3.3e-12);
}

#[track_caller]
fn check_nearest(series: Series, x: f64, expected: f64) {
    assert_eq!(
        series.nearest(x).unwrap().value,
        expected,
        "{series} nearest {x}"
    );
}

#[test]
fn nearest_on_a_log_scale_across_decade_edges() {
    // Between 8.2 and 10 the log midpoint is √82 = 9.0554.
    check_nearest(Series::E12, 9.05, 8.2);
    check_nearest(Series::E12, 9.06, 10.0);
    check_nearest(Series::E12, 9.5, 10.0);
    check_nearest(Series::E12, 9.06e-9, 1e-8);
    check_nearest(Series::E12, 0.905, 0.82);
    check_nearest(Series::E12, 0.906, 1.0);
    // Between 1.0 and 1.2: √1.2 = 1.0954 (a linear midpoint would say 1.1).
    check_nearest(Series::E12, 1.09, 1.0);
    check_nearest(Series::E12, 1.1, 1.2);
    // E24: between 9.1 and 10, √91 = 9.539.
    check_nearest(Series::E24, 9.53, 9.1);
    check_nearest(Series::E24, 9.55, 10.0);
    // E96 / E192 near the top of a decade: √(976·1000) = 987.9, √(988·1000) = 993.98.
    check_nearest(Series::E96, 987.0, 976.0);
    check_nearest(Series::E96, 988.5, 1000.0);
    check_nearest(Series::E192, 993.9, 988.0);
    check_nearest(Series::E192, 994.1, 1000.0);
    check_nearest(Series::E3, 0.5, 0.47);
    check_nearest(Series::E3, 7.0, 10.0);
    // Exact values map to themselves, also when computed with rounding error.
    check_nearest(Series::E12, 4.7 * 1000.0, 4700.0);
    check_nearest(Series::E12, 0.1 * 3.0 * 11.0, 3.3);
}

#[test]
fn next_up_and_down_cross_decades() {
    let up = |s: Series, x: f64| s.next_up(x).unwrap().value;
    let down = |s: Series, x: f64| s.next_down(x).unwrap().value;
    assert_eq!(up(Series::E12, 8.3), 10.0);
    assert_eq!(up(Series::E12, 8.2), 8.2);
    assert_eq!(up(Series::E12, 0.0999), 0.1);
    assert_eq!(down(Series::E12, 0.99), 0.82);
    assert_eq!(down(Series::E12, 1.0), 1.0);
    assert_eq!(down(Series::E96, 1000.0 * 0.999), 976.0);
    assert_eq!(up(Series::E96, 977.0), 1000.0);
    assert_eq!(Series::E12.step_up(8.2).unwrap().value, 10.0);
    assert_eq!(Series::E12.step_down(10.0).unwrap().value, 8.2);
    assert_eq!(Series::E24.step_down(1e-9).unwrap().value, 9.1e-10);
}

#[test]
fn invalid_inputs_give_none() {
    for x in [0.0, -1.0, f64::NAN, f64::INFINITY, 1e-300, 1e300] {
        assert!(Series::E12.nearest(x).is_none(), "{x}");
        assert!(Series::E12.best_combination(x).is_none(), "{x}");
    }
}

#[test]
fn parse_and_print_names() {
    for series in Series::ALL {
        assert_eq!(series.name().parse::<Series>().unwrap(), series);
        assert_eq!(series.to_string(), series.name());
    }
    assert_eq!("e96".parse::<Series>().unwrap(), Series::E96);
    assert_eq!("E7".parse::<Series>(), Err(UnknownSeries("E7".into())));
}

#[test]
fn combinations_hand_computed() {
    // 7.5 kΩ from E12 in series: a ∈ {3.9k, 4.7k, 5.6k, 6.8k}; the best is
    // 6.8k + 680 = 7480 Ω (−20/7500); 15k ‖ 15k = 7.5k exactly.
    let sum = Series::E12.best_sum(7500.0).unwrap();
    assert_eq!(
        (sum.a.value, sum.b.value, sum.value),
        (6800.0, 680.0, 7480.0)
    );
    assert!((sum.relative_error - (-20.0 / 7500.0)).abs() < 1e-15);
    let par = Series::E12.best_reciprocal(7500.0).unwrap();
    assert_eq!((par.a.value, par.b.value), (15000.0, 15000.0));
    assert_eq!(
        Series::E12.best_combination(7500.0).unwrap().joining,
        Joining::Reciprocal
    );

    // 40 Ω from E6: 68 ‖ 100 = 6800/168 = 40.476 Ω (+1/84); 33 + 6.8 = 39.8 Ω (−0.5 %).
    let par = Series::E6.best_reciprocal(40.0).unwrap();
    assert_eq!((par.a.value, par.b.value), (68.0, 100.0));
    assert!((par.relative_error - 1.0 / 84.0).abs() < 1e-15);
    let sum = Series::E6.best_sum(40.0).unwrap();
    assert_eq!((sum.a.value, sum.b.value), (33.0, 6.8));
    assert!((sum.relative_error + 0.005).abs() < 1e-14);
    assert_eq!(Series::E6.best_combination(40.0).unwrap(), sum);

    // 50 Ω from E6 in series: 47 + 3.3 = 50.3 Ω (+0.6 %).
    let sum = Series::E6.best_sum(50.0).unwrap();
    assert_eq!((sum.a.value, sum.b.value), (47.0, 3.3));
}

/// The best error over every pair of values in the ten decades around the target, each
/// part below the target for a sum and above it for a reciprocal pair, and no more than
/// `MAX_PART_RATIO` apart.
fn brute_force(series: Series, target: f64, joining: Joining) -> f64 {
    let values = series.values_between(target * 1e-5, target * 1e5);
    let mut best = f64::INFINITY;
    for a in &values {
        for b in &values {
            if a.value.max(b.value) > MAX_PART_RATIO * a.value.min(b.value) * (1.0 + 1e-9) {
                continue;
            }
            let v = match joining {
                Joining::Sum if a.value < target && b.value < target => a.value + b.value,
                Joining::Reciprocal if a.value > target && b.value > target => {
                    a.value * b.value / (a.value + b.value)
                }
                _ => continue,
            };
            best = best.min(((v - target) / target).abs());
        }
    }
    best
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 64, .. ProptestConfig::default() })]

    #[test]
    fn combinations_match_brute_force(exp in -9.0f64..7.0, which in 0usize..4) {
        let series = [Series::E6, Series::E12, Series::E24, Series::E48][which];
        let target = 10f64.powf(exp);
        for joining in [Joining::Sum, Joining::Reciprocal] {
            let found = series.best_pair(target, joining).unwrap();
            let expected = brute_force(series, target, joining);
            prop_assert!((found.relative_error.abs() - expected).abs() <= 1e-12,
                "{series} {target} {joining:?}: {found:?} vs {expected}");
        }
    }

    #[test]
    fn nearest_is_one_of_the_neighbours_and_closest(exp in -12.0f64..9.0, which in 0usize..7) {
        let series = Series::ALL[which];
        let x = 10f64.powf(exp);
        let near = series.nearest(x).unwrap().value;
        let down = series.next_down(x).unwrap().value;
        let up = series.next_up(x).unwrap().value;
        prop_assert!(down <= x && x <= up);
        prop_assert!(near == down || near == up);
        prop_assert!((near / x).ln().abs() <= (down / x).ln().abs() + 1e-12);
        prop_assert!((near / x).ln().abs() <= (up / x).ln().abs() + 1e-12);
    }
}

#[test]
fn value_codes_read_back_through_the_language() {
    // IEC 60062 letter codes; the language's parser is the reader (netlist-language.md).
    let cases = [
        (4700.0, "4k7"),
        (100.0, "100R"),
        (47.0, "47R"),
        (1.0, "1R"),
        (1.5, "1R5"),
        (0.47, "470m"),
        (10e3, "10k"),
        (1.5e6, "1M5"),
        (2.2e-9, "2n2"),
        (100e-9, "100n"),
        (4.7e-6, "4u7"),
        (1e-12, "1p"),
    ];
    for (value, code) in cases {
        assert_eq!(
            Series::E24.nearest(value).unwrap().code().unwrap(),
            code,
            "{value}"
        );
    }
    assert_eq!(Series::E96.nearest(10.2e3).unwrap().code().unwrap(), "10k2");
    assert_eq!(Series::E192.nearest(1.01).unwrap().code().unwrap(), "1R01");
    for series in [Series::E12, Series::E96] {
        for s in series.values_between(1e-12, 1e9) {
            let code = s.code().unwrap();
            let text = format!("vsrc V1 (in, gnd) 1 V\nresistor R1 (in, gnd) {code}\n");
            let compiled =
                rolloff_netlist::compile(&text, &rolloff_netlist::CompileOptions::default());
            let parsed = compiled
                .circuit
                .map(|c| c.parts[1].kind.passive_value().unwrap().0);
            let parsed = parsed.unwrap_or_else(|| panic!("{code}: {:?}", compiled.diagnostics));
            assert!(
                (parsed / s.value - 1.0).abs() < 1e-15,
                "{code} read as {parsed}, not {}",
                s.value
            );
        }
    }
}
