//! The analyses on real circuits: text compiled by `rolloff-netlist`, solved by
//! `rolloff-mna`, measured by `rolloff-report`.

#![allow(clippy::unwrap_used, clippy::expect_used)]

use rolloff_netlist::{Circuit, CompileOptions, PartId, compile};
use rolloff_tolerance::{
    CircuitModel, Distribution, FitOptions, Model, MonteCarloOptions, SensitivityOptions, Series,
    WorstCaseOptions, fit, monte_carlo, sensitivity, worst_case,
};
use std::f64::consts::TAU;

#[track_caller]
fn circuit(text: &str) -> Circuit {
    let compiled = compile(text, &CompileOptions::default());
    let messages: Vec<&str> = compiled
        .diagnostics
        .iter()
        .map(|d| d.message.as_str())
        .collect();
    compiled.circuit.unwrap_or_else(|| panic!("{messages:?}"))
}

fn model(text: &str) -> CircuitModel {
    CircuitModel::new(&circuit(text)).unwrap()
}

fn pool(threads: usize) -> rayon::ThreadPool {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap()
}

fn part(model: &CircuitModel, name: &str) -> PartId {
    model.circuit().part(name).unwrap()
}

/// A first-order RC low-pass; the passband reference far below the corner so the
/// −3 dB point is the textbook one to better than 1e-12.
const RC: &str = "\
vsrc      V1 (in, gnd) 1 V
resistor  R1 (in, out) 10k  tol 1%
capacitor C1 (out, gnd) 10 nF  tol 2%
sweep 1 Hz to 10 MHz per_decade 20
probe out ref 1 mHz
expect cutoff(out) within 1.55 .. 1.63 kHz
";

#[test]
fn single_rc_fits_to_the_closed_form() {
    let m = model(
        "vsrc V1 (in, gnd) 1 V\n\
         resistor R1 (in, out) ? in 1k .. 1M\n\
         capacitor C1 (out, gnd) 10 nF\n\
         probe out ref 1 mHz\n\
         expect cutoff(out) = 2 kHz\n",
    );
    let report = fit(&m, &FitOptions::default()).unwrap();
    // fc = 1/(2πRC) for a first-order RC low-pass, so R = 1/(2π·f·C).
    let expected = 1.0 / (TAU * 2e3 * 10e-9);
    assert!(
        (report.exact / expected - 1.0).abs() < 1e-9,
        "{} vs {expected}",
        report.exact
    );
    assert_eq!(report.series, Series::E24);
    let standard: Vec<f64> = report.standard.iter().map(|c| c.value.value).collect();
    assert_eq!(standard, [7500.0, 8200.0]);
}

/// Two RC sections, the second loading the first. H(s) = 1/(a·s² + b·s + 1) with
/// a = R1·C1·R2·C2 and b = R1·C1 + R2·C2 + R1·C2 (nodal analysis of the ladder), so
/// |H(jω)|² = 1/2 is (1 − aω²)² + b²ω² = 2, a quadratic in R2:
/// (p² + q²)·R2² + 2(rq − p)·R2 − 1 + r² = 0 with p = R1C1C2ω², q = C2ω,
/// r = R1(C1 + C2)ω.
fn ladder_r2_for(fc: f64, r1: f64, c1: f64, c2: f64) -> f64 {
    let w = TAU * fc;
    let (p, q, r) = (r1 * c1 * c2 * w * w, c2 * w, r1 * (c1 + c2) * w);
    let (a, b, c) = (p * p + q * q, 2.0 * (r * q - p), r * r - 1.0);
    (-b + (b * b - 4.0 * a * c).sqrt()) / (2.0 * a)
}

#[test]
fn loaded_two_stage_ladder_fits_to_the_closed_form_root() {
    let m = model(
        "vsrc V1 (in, gnd) 1 V\n\
         resistor  R1 (in, mid) 4.7k\n\
         capacitor C1 (mid, gnd) 22 nF\n\
         resistor  R2 (mid, out) ? in 100 .. 10M\n\
         capacitor C2 (out, gnd) 4.7 nF\n\
         probe out ref 1 mHz\n\
         expect cutoff(out) = 1 kHz\n",
    );
    let report = fit(&m, &FitOptions::default()).unwrap();
    let expected = ladder_r2_for(1e3, 4.7e3, 22e-9, 4.7e-9);
    assert!(
        (report.exact / expected - 1.0).abs() < 1e-9,
        "{} vs {expected}",
        report.exact
    );
    // The one-stage formula 1/(2π·f·C2) would be far off here: that is the point of
    // fitting on the real circuit.
    let one_stage = 1.0 / (TAU * 1e3 * 4.7e-9);
    assert!((one_stage / expected - 1.0).abs() > 0.1);
    // Every candidate reports the cutoff it gives.
    for c in &report.standard {
        assert!(
            c.metric.is_ok() && c.relative_error.unwrap().abs() < 0.1,
            "{c:?}"
        );
    }
    let pair = report.best_pair.unwrap();
    assert!(pair.relative_error.unwrap().abs() < 0.01, "{pair:?}");
}

#[test]
fn monte_carlo_is_reproducible_across_one_and_two_threads() {
    let m = model(RC);
    for distribution in [Distribution::Uniform, Distribution::Gaussian] {
        let options = MonteCarloOptions {
            runs: 300,
            seed: 2026,
            distribution,
            ..MonteCarloOptions::default()
        };
        let one = monte_carlo(&m, &options, Some(&pool(1))).unwrap();
        let two = monte_carlo(&m, &options, Some(&pool(2))).unwrap();
        let bits = |r: &rolloff_tolerance::MonteCarloReport| -> Vec<u64> {
            r.metrics[0]
                .samples
                .iter()
                .map(|v| v.unwrap().to_bits())
                .collect()
        };
        assert_eq!(bits(&one), bits(&two));
        let (s1, s2) = (
            one.metrics[0].summary.unwrap(),
            two.metrics[0].summary.unwrap(),
        );
        assert_eq!(s1.mean.to_bits(), s2.mean.to_bits());
        assert_eq!(s1.std_dev.unwrap().to_bits(), s2.std_dev.unwrap().to_bits());
        assert_eq!(s1.p01.to_bits(), s2.p01.to_bits());
        assert_eq!(one.expectations[0].passed, two.expectations[0].passed);
    }
}

#[test]
fn rc_cutoff_spread_matches_first_order_propagation() {
    // Relative σ of fc = 1/(2πRC) is √(σ_R² + σ_C²) to first order, σ = t/√3 for a
    // uniform ±t band (propagation of uncertainty; variance of a uniform law).
    let m = model(RC);
    let options = MonteCarloOptions {
        runs: 3000,
        seed: 5,
        ..MonteCarloOptions::default()
    };
    let report = monte_carlo(&m, &options, None).unwrap();
    let s = report.metrics[0].summary.unwrap();
    let expected = ((0.01f64.powi(2) + 0.02f64.powi(2)) / 3.0).sqrt();
    let measured = s.std_dev.unwrap() / s.mean;
    // Sampling error of σ over 3000 runs is about 1.3 %.
    assert!(
        (measured / expected - 1.0).abs() < 0.05,
        "{measured} vs {expected}"
    );
    let fc0 = 1.0 / (TAU * 10e3 * 10e-9);
    assert!((report.metrics[0].nominal.clone().unwrap() / fc0 - 1.0).abs() < 1e-9);
    // 1.55 .. 1.63 kHz around 1.5915 kHz: −2.6 % .. +2.4 %, wider than most draws.
    assert!(report.expectations[0].yield_fraction > 0.9);
}

#[test]
fn block_instances_and_asymmetric_bands_are_varied_part_by_part() {
    let m = model(
        "block rc (a, b)\n\
           resistor  R (a, b) 10k tol 5%\n\
           capacitor C (b, gnd) 10 nF tol -20% .. +80%\n\
         end\n\
         vsrc V1 (in, gnd) 1 V\n\
         chain 2 rc LAD (in, out)\n\
         probe out ref 1 mHz\n\
         expect cutoff(out) within 100 Hz .. 10 kHz\n",
    );
    let report = monte_carlo(
        &m,
        &MonteCarloOptions {
            runs: 200,
            ..MonteCarloOptions::default()
        },
        None,
    )
    .unwrap();
    let names: Vec<&str> = report.parts.iter().map(|p| p.name.as_str()).collect();
    assert_eq!(names.len(), 4, "{names:?}");
    assert!(names.iter().all(|n| n.starts_with("LAD.")));
    let c = report.parts.iter().find(|p| p.name == "LAD.s1.C").unwrap();
    assert_eq!((c.band.lower, c.band.upper), (-0.2, 0.8));
    assert_eq!(report.metrics[0].failures, 0);
}

#[test]
fn worst_case_equals_the_exhaustive_corners_on_a_ladder() {
    let m = model(
        "vsrc V1 (in, gnd) 1 V\n\
         resistor  R1 (in, mid) 4.7k tol 1%\n\
         capacitor C1 (mid, gnd) 22 nF tol 5%\n\
         resistor  R2 (mid, out) 10k tol 1%\n\
         capacitor C2 (out, gnd) 4.7 nF tol -10% .. +20%\n\
         probe out ref 1 mHz\n\
         expect cutoff(out) within 500 .. 2000 Hz\n\
         expect gain(out, 1 kHz) >= -10 dB\n",
    );
    let report = worst_case(&m, &WorstCaseOptions::default(), None).unwrap();
    assert!(report.exhaustive);
    assert_eq!(report.parts.len(), 4);
    for metric in &report.metrics {
        assert_eq!(metric.signs_confirmed(), Some(true), "{metric:?}");
        assert!(metric.min().unwrap().value < metric.nominal);
        assert!(metric.max().unwrap().value > metric.nominal);
    }
    // Every part raising an RC product lowers the cutoff: the minimum is all-high.
    let fc = &report.metrics[0];
    assert!(
        fc.min()
            .unwrap()
            .corner
            .iter()
            .all(|c| *c == rolloff_tolerance::worstcase::Corner::High)
    );
}

#[test]
fn rc_cutoff_sensitivity_is_minus_one() {
    // fc = 1/(2πRC): (∂fc/fc)/(∂R/R) = (∂fc/fc)/(∂C/C) = −1 (analytic).
    let m = model(RC);
    let report = sensitivity(&m, &SensitivityOptions::default(), None).unwrap();
    let entries = &report.metrics[0].parts;
    assert_eq!(entries.len(), 2);
    for e in entries {
        assert!((e.normalized.unwrap() + 1.0).abs() < 1e-5, "{e:?}");
    }
    let r = entries.iter().find(|e| e.part == part(&m, "R1")).unwrap();
    // ∂fc/∂R = −fc/R.
    let fc = report.metrics[0].nominal;
    assert!((r.derivative.unwrap() / (-fc / 10e3) - 1.0).abs() < 1e-5);
}

#[test]
fn measuring_together_gives_the_same_values_as_one_by_one() {
    let text = "\
vsrc      V1 (in, gnd) 1 V bias 5 V
resistor  R1 (in, mid) 4.7k tol 1%
capacitor C1 (mid, gnd) 22 nF tol 5%
resistor  R2 (mid, out) 10k tol 1%
capacitor C2 (out, gnd) 4.7 nF
probe out ref 1 mHz
probe mid
expect cutoff(out) within 500 .. 2000 Hz
expect gain(out, 1 kHz) >= -10 dB
expect cutoff(mid) within 100 Hz .. 10 kHz
expect phase(out, 1 kHz) within -180 .. 0 deg
expect bias(out) within 4 .. 6 V
";
    let mut together = model(text);
    let mut alone = together.clone();
    let metrics: Vec<_> = together
        .circuit()
        .expectations
        .iter()
        .map(|e| e.metric)
        .collect();
    let many = together.measure_many(&metrics);
    let single: Vec<_> = metrics.iter().map(|m| alone.measure(m)).collect();
    assert_eq!(many, single);
    assert!(many.iter().all(Result::is_ok), "{many:?}");
    // With no load on the DC path the bias of `out` is the source's 5 V.
    assert!((many[4].clone().unwrap() - 5.0).abs() < 1e-9);
}

#[test]
fn a_fitted_design_goes_on_to_monte_carlo() {
    let text = "vsrc V1 (in, gnd) 1 V\n\
                resistor R1 (in, out) ? in 1k .. 1M tol 1%\n\
                capacitor C1 (out, gnd) 10 nF tol 5%\n\
                probe out ref 1 mHz\n\
                expect cutoff(out) = 2 kHz\n";
    let open = model(text);
    let options = MonteCarloOptions {
        runs: 50,
        ..MonteCarloOptions::default()
    };
    assert_eq!(
        monte_carlo(&open, &options, None).unwrap_err(),
        rolloff_tolerance::ToleranceError::UnfittedParts(vec!["R1".into()])
    );
    let fitted = fit(&open, &FitOptions::default()).unwrap();
    let rounded = fitted
        .standard
        .iter()
        .find(|c| c.nearest)
        .unwrap()
        .value
        .value;
    let design =
        rolloff_tolerance::model::with_part_value(open.circuit(), fitted.part, rounded).unwrap();
    let report = monte_carlo(&CircuitModel::new(&design).unwrap(), &options, None).unwrap();
    let nominal = report.metrics[0].nominal.clone().unwrap();
    let expected = fitted
        .standard
        .iter()
        .find(|c| c.nearest)
        .unwrap()
        .metric
        .clone()
        .unwrap();
    assert!((nominal / expected - 1.0).abs() < 1e-12);
    assert_eq!(report.parts.len(), 2);
}

#[test]
fn two_unknowns_fit_a_cutoff_and_an_input_impedance() {
    // Unloaded RC low-pass: fc = 1/(2πRC) and Zin = R + 1/(jωC), so |Zin(f)| =
    // R·√(1 + (fc/f)²); fc = 1 kHz with |Zin(10 kHz)| = 10 kΩ gives R = 10 kΩ/√1.01.
    let m = model(
        "vsrc V1 (in, gnd) 1 V\n\
         resistor R1 (in, out) ? in 100 .. 1M\n\
         capacitor C1 (out, gnd) ? in 1 pF .. 1 mF\n\
         probe out ref 1 mHz\n\
         probe zin\n\
         expect cutoff(out) = 1 kHz\n\
         expect impedance(zin, 10 kHz) = 10 kΩ\n",
    );
    let reports = rolloff_tolerance::fit_all(&m, &FitOptions::default()).unwrap();
    let r = 10e3 / 1.01f64.sqrt();
    let c = 1.0 / (TAU * 1e3 * r);
    assert!(
        (reports[0].exact / r - 1.0).abs() < 1e-8,
        "{:?}",
        reports[0].exact
    );
    assert!(
        (reports[1].exact / c - 1.0).abs() < 1e-8,
        "{:?}",
        reports[1].exact
    );
}
