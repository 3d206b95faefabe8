//! Monte Carlo on closed-form models with known statistics.

use super::*;
use crate::testing::{FormulaModel, expectation, rc_cutoff};
use rolloff_netlist::{Circuit, Comparison, Metric, MetricKind, Unit};
use std::f64::consts::TAU;

const R: f64 = 10e3;
const C: f64 = 10e-9;

fn fc0() -> f64 {
    1.0 / (TAU * R * C)
}

fn rc_model(r_tol: Option<Tolerance>, c_tol: Option<Tolerance>, within: f64) -> FormulaModel {
    let mut b = Circuit::builder()
        .vsrc("V1", "in", "gnd", 1.0)
        .resistor("R1", "in", "out", R);
    if let Some(t) = r_tol {
        b = b.tol(t);
    }
    b = b.capacitor("C1", "out", "gnd", C);
    if let Some(t) = c_tol {
        b = b.tol(t);
    }
    let mut circuit = b.probe_node("out").build().unwrap();
    let e = expectation(
        &circuit,
        MetricKind::Cutoff,
        "out",
        Comparison::Within {
            low: fc0() * (1.0 - within),
            high: fc0() * (1.0 + within),
        },
        Unit::Hertz,
        "cutoff(out) within ...",
    );
    circuit.expectations.push(e);
    FormulaModel::new(circuit, rc_cutoff)
}

fn pool(threads: usize) -> rayon::ThreadPool {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap()
}

#[test]
fn reproducible_by_seed_across_one_and_two_threads() {
    let model = rc_model(
        Some(Tolerance::symmetric(0.01)),
        Some(Tolerance::symmetric(0.05)),
        0.02,
    );
    for distribution in [Distribution::Uniform, Distribution::Gaussian] {
        let options = MonteCarloOptions {
            runs: 2000,
            seed: 7,
            distribution,
            ..MonteCarloOptions::default()
        };
        let one = monte_carlo(&model, &options, Some(&pool(1))).unwrap();
        let two = monte_carlo(&model, &options, Some(&pool(2))).unwrap();
        let bits = |r: &MonteCarloReport| -> Vec<u64> {
            r.metrics[0]
                .samples
                .iter()
                .map(|v| v.unwrap().to_bits())
                .collect()
        };
        assert_eq!(bits(&one), bits(&two));
        // PartialEq on f64 fields: every statistic is equal, hence bit-identical here
        // (no NaN can occur).
        assert_eq!(one, two);
        let other = monte_carlo(&model, &MonteCarloOptions { seed: 8, ..options }, None).unwrap();
        assert_ne!(bits(&one), bits(&other));
    }
}

#[test]
fn rc_spread_matches_first_order_propagation() {
    // fc = 1/(2πRC): to first order the relative σ of fc is √(σ_R² + σ_C²), with
    // σ = t/√3 for a uniform ±t band (textbook propagation of uncertainty; the uniform
    // law's variance is (2t)²/12).
    let (tr, tc) = (0.01, 0.02);
    let model = rc_model(
        Some(Tolerance::symmetric(tr)),
        Some(Tolerance::symmetric(tc)),
        0.01,
    );
    let options = MonteCarloOptions {
        runs: 10_000,
        seed: 11,
        ..MonteCarloOptions::default()
    };
    let report = monte_carlo(&model, &options, None).unwrap();
    let s = report.metrics[0].summary.unwrap();
    let expected = ((tr * tr + tc * tc) / 3.0).sqrt();
    let measured = s.std_dev.unwrap() / s.mean;
    // Sampling error of σ over 10 000 runs is about 0.7 %; second-order terms are ~t².
    assert!(
        (measured / expected - 1.0).abs() < 0.03,
        "{measured} vs {expected}"
    );
    assert!((s.mean / fc0() - 1.0).abs() < 1e-3);
    // The extremes lie inside the corner values and near them.
    let (lo, hi) = (
        fc0() / ((1.0 + tr) * (1.0 + tc)),
        fc0() / ((1.0 - tr) * (1.0 - tc)),
    );
    assert!(s.min >= lo && s.max <= hi);
    assert!(s.p01 > s.min && s.p99 < s.max && s.p01 < s.p50 && s.p50 < s.p99);
    assert_eq!(report.metrics[0].nominal, Ok(fc0()));

    // Gaussian with t = 3σ: σ_fc/fc = √(t_R² + t_C²)/3, times 0.98658 for the
    // truncation at ±3σ (truncated-normal moments).
    let gauss = monte_carlo(
        &model,
        &MonteCarloOptions {
            distribution: Distribution::Gaussian,
            ..options
        },
        None,
    )
    .unwrap();
    let s = gauss.metrics[0].summary.unwrap();
    let expected = (tr * tr + tc * tc).sqrt() / 3.0 * 0.98658;
    let measured = s.std_dev.unwrap() / s.mean;
    assert!(
        (measured / expected - 1.0).abs() < 0.03,
        "{measured} vs {expected}"
    );
}

#[test]
fn yield_of_two_uniform_parts_is_the_triangular_law() {
    // δR + δC with δ ~ U(−t, t) is triangular on (−2t, 2t), so P(|δR + δC| ≤ t) = 3/4;
    // fc within ±t of nominal is that event to first order.
    let t = 0.01;
    let model = rc_model(
        Some(Tolerance::symmetric(t)),
        Some(Tolerance::symmetric(t)),
        t,
    );
    let options = MonteCarloOptions {
        runs: 20_000,
        seed: 3,
        ..MonteCarloOptions::default()
    };
    let report = monte_carlo(&model, &options, None).unwrap();
    let y = &report.expectations[0];
    assert!((y.yield_fraction - 0.75).abs() < 0.015, "{y:?}");
    assert_eq!(report.overall_yield, y.yield_fraction);
    assert_eq!(y.passed, (y.yield_fraction * 20_000.0).round() as usize);
    let h = report.metrics[0].histogram.as_ref().unwrap();
    assert_eq!(h.counts.len(), 30);
    assert_eq!(h.counts.iter().sum::<u64>(), 20_000);
}

#[test]
fn asymmetric_band_is_honoured() {
    // C uniform in −20 % .. +80 %: E[1/U(0.8, 1.8)] = ln(1.8/0.8) (integral of 1/x over
    // a unit-width interval), so mean fc = fc0 · 0.81093.
    let band = Tolerance {
        lower: -0.2,
        upper: 0.8,
    };
    let model = rc_model(None, Some(band), 0.1);
    let options = MonteCarloOptions {
        runs: 10_000,
        ..MonteCarloOptions::default()
    };
    let report = monte_carlo(&model, &options, None).unwrap();
    assert_eq!(report.parts.len(), 1);
    assert_eq!(report.parts[0].name, "C1");
    let s = report.metrics[0].summary.unwrap();
    assert!(
        (s.mean / fc0() - (1.8f64 / 0.8).ln()).abs() < 0.005,
        "{s:?}"
    );
    assert!(s.min >= fc0() / 1.8 && s.max <= fc0() / 0.8);
    assert!(s.min < fc0() / 1.79 && s.max > fc0() / 0.801);
}

#[test]
fn default_tolerance_covers_parts_without_tol() {
    let model = rc_model(Some(Tolerance::symmetric(0.01)), None, 0.1);
    let options = MonteCarloOptions {
        runs: 10,
        default_tolerance: Some(Tolerance::symmetric(0.1)),
        ..MonteCarloOptions::default()
    };
    let report = monte_carlo(&model, &options, None).unwrap();
    let bands: Vec<(String, f64, bool)> = report
        .parts
        .iter()
        .map(|p| (p.name.clone(), p.band.upper, p.default_band))
        .collect();
    assert_eq!(
        bands,
        [("R1".into(), 0.01, false), ("C1".into(), 0.1, true)]
    );
    let none = monte_carlo(
        &model,
        &MonteCarloOptions {
            runs: 10,
            ..MonteCarloOptions::default()
        },
        None,
    )
    .unwrap();
    assert_eq!(none.parts.len(), 1);
}

#[allow(clippy::unnecessary_wraps)]
fn ratio(values: &[f64], _metric: &Metric) -> Result<f64, String> {
    Ok(values[1] / values[2])
}

#[test]
fn each_block_instance_part_is_drawn_on_its_own() {
    // Two instances of one block: S1.R and S2.R come from the same line of text but are
    // separate parts. If they were drawn together the ratio would always be 1.
    let mut circuit = Circuit::builder()
        .vsrc("V1", "in", "gnd", 1.0)
        .resistor("S1.R", "in", "mid", R)
        .tol(Tolerance::symmetric(0.05))
        .resistor("S2.R", "mid", "gnd", R)
        .tol(Tolerance::symmetric(0.05))
        .build()
        .unwrap();
    let e = expectation(
        &circuit,
        MetricKind::Gain { freq: 1.0 },
        "mid",
        Comparison::Less(2.0),
        Unit::Dimensionless,
        "ratio",
    );
    circuit.expectations.push(e);
    let model = FormulaModel::new(circuit, ratio);
    let report = monte_carlo(
        &model,
        &MonteCarloOptions {
            runs: 20_000,
            ..MonteCarloOptions::default()
        },
        None,
    )
    .unwrap();
    let s = report.metrics[0].summary.unwrap();
    // Independent: relative σ of the ratio ≈ √2 · 0.05/√3.
    let expected = 2f64.sqrt() * 0.05 / 3f64.sqrt();
    assert!((s.std_dev.unwrap() / expected - 1.0).abs() < 0.03, "{s:?}");
}

fn fails_when_r_high(values: &[f64], metric: &Metric) -> Result<f64, String> {
    if values[1] > R {
        Err("no −3 dB crossing in the sweep".into())
    } else {
        rc_cutoff(values, metric)
    }
}

#[test]
fn failed_trials_are_counted_not_hidden() {
    let model = rc_model(Some(Tolerance::symmetric(0.01)), None, 1.0);
    let model = FormulaModel::new(model.circuit().clone(), fails_when_r_high);
    let report = monte_carlo(
        &model,
        &MonteCarloOptions {
            runs: 4000,
            ..MonteCarloOptions::default()
        },
        None,
    )
    .unwrap();
    let m = &report.metrics[0];
    assert!((m.failures as f64 / 4000.0 - 0.5).abs() < 0.05);
    assert_eq!(
        m.first_failure.as_deref(),
        Some("no −3 dB crossing in the sweep")
    );
    assert_eq!(m.summary.unwrap().count + m.failures, 4000);
    assert_eq!(report.expectations[0].passed, 4000 - m.failures);
    assert!(m.samples.iter().any(Option::is_none));
}

#[test]
fn bad_options_and_empty_circuits_are_errors() {
    let model = rc_model(Some(Tolerance::symmetric(0.01)), None, 0.1);
    let zero = MonteCarloOptions {
        runs: 0,
        ..MonteCarloOptions::default()
    };
    assert!(matches!(
        monte_carlo(&model, &zero, None),
        Err(ToleranceError::InvalidOption { option: "runs", .. })
    ));
    let huge = MonteCarloOptions {
        runs: usize::MAX,
        ..MonteCarloOptions::default()
    };
    assert!(matches!(
        monte_carlo(&model, &huge, None),
        Err(ToleranceError::InvalidOption { option: "runs", .. })
    ));
    let band = MonteCarloOptions {
        default_tolerance: Some(Tolerance {
            lower: -1.5,
            upper: 0.1,
        }),
        ..MonteCarloOptions::default()
    };
    assert!(matches!(
        monte_carlo(&model, &band, None),
        Err(ToleranceError::InvalidOption { .. })
    ));
    let mut bare = model.circuit().clone();
    bare.expectations.clear();
    let bare = FormulaModel::new(bare, rc_cutoff);
    assert_eq!(
        monte_carlo(&bare, &MonteCarloOptions::default(), None),
        Err(ToleranceError::NoMetrics)
    );
}
