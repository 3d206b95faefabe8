//! Worst case on closed-form models: sign corners against exhaustive corners.

use super::*;
use crate::testing::{FormulaModel, expectation};
use rolloff_netlist::{Circuit, Comparison, Metric, MetricKind, Unit};
use std::f64::consts::TAU;

/// Parts: V1, R1 (in, mid), R2 (mid, gnd), C1 (mid, gnd).
fn three_part_circuit(bands: [Tolerance; 3]) -> Circuit {
    let mut circuit = Circuit::builder()
        .vsrc("V1", "in", "gnd", 1.0)
        .resistor("R1", "in", "mid", 10e3)
        .tol(bands[0])
        .resistor("R2", "mid", "gnd", 22e3)
        .tol(bands[1])
        .capacitor("C1", "mid", "gnd", 4.7e-9)
        .tol(bands[2])
        .build()
        .unwrap();
    for (kind, text) in [
        (MetricKind::Cutoff, "cutoff(mid)"),
        (MetricKind::PassbandGain, "passband_gain(mid)"),
    ] {
        let e = expectation(
            &circuit,
            kind,
            "mid",
            Comparison::Greater(0.0),
            Unit::Hertz,
            text,
        );
        circuit.expectations.push(e);
    }
    circuit
}

/// The loaded RC divider: fc = 1/(2π·(R1‖R2)·C) and the DC gain R2/(R1 + R2)
/// (first-order RC with a Thevenin source).
#[allow(clippy::unnecessary_wraps)]
fn divider(values: &[f64], metric: &Metric) -> Result<f64, String> {
    let (r1, r2, c) = (values[1], values[2], values[3]);
    Ok(match metric.kind {
        MetricKind::Cutoff => (r1 + r2) / (TAU * r1 * r2 * c),
        _ => r2 / (r1 + r2),
    })
}

#[test]
fn sign_corners_equal_the_exhaustive_corners() {
    let bands = [
        Tolerance::symmetric(0.01),
        Tolerance::symmetric(0.05),
        Tolerance {
            lower: -0.2,
            upper: 0.8,
        },
    ];
    let model = FormulaModel::new(three_part_circuit(bands), divider);
    let report = worst_case(&model, &WorstCaseOptions::default(), None).unwrap();
    assert!(report.exhaustive);
    assert_eq!(report.parts.len(), 3);
    for m in &report.metrics {
        assert_eq!(m.signs_confirmed(), Some(true), "{m:?}");
        assert_eq!(m.corner_failures, 0);
    }
    // Hand corners: fc is largest with every part low, smallest with every part high.
    let fc = &report.metrics[0];
    let (lo, hi) = (fc.min().unwrap(), fc.max().unwrap());
    assert_eq!(hi.corner, [Corner::Low, Corner::Low, Corner::Low]);
    assert_eq!(lo.corner, [Corner::High, Corner::High, Corner::High]);
    let expected_max = divider(&[0.0, 9.9e3, 20.9e3, 4.7e-9 * 0.8], &fc.entry.metric).unwrap();
    assert!((hi.value / expected_max - 1.0).abs() < 1e-12);
    // The gain R2/(R1+R2) rises with R2 and falls with R1; C does not matter (its
    // corner is then arbitrary, so only the two resistors are checked).
    let gain = &report.metrics[1];
    let max = gain.max().unwrap();
    assert_eq!(&max.corner[..2], [Corner::Low, Corner::High]);
    assert!((max.value - 23.1e3 / (23.1e3 + 9.9e3)).abs() < 1e-12);
    assert!((gain.nominal - 22.0 / 32.0).abs() < 1e-12);
}

/// `ln(R1/R1₀) · ln(C1/C1₀)`: flat at nominal in each part, so the signs pick the
/// all-high and all-low corners, yet the minimum is at a mixed corner.
#[allow(clippy::unnecessary_wraps)]
fn saddle(values: &[f64], _metric: &Metric) -> Result<f64, String> {
    Ok((values[1] / 10e3).ln() * (values[3] / 4.7e-9).ln())
}

#[test]
fn exhaustive_corners_correct_a_misleading_sign_rule() {
    let half = Tolerance::symmetric(0.5);
    let mut circuit = three_part_circuit([half, Tolerance::symmetric(0.0), half]);
    circuit.expectations.truncate(1);
    let report = worst_case(
        &FormulaModel::new(circuit.clone(), saddle),
        &WorstCaseOptions::default(),
        None,
    )
    .unwrap();
    assert_eq!(report.parts.len(), 2, "a zero band is not varied");
    let m = &report.metrics[0];
    assert_eq!(m.signs_confirmed(), Some(false));
    let min = m.min().unwrap();
    assert!((min.value - 1.5f64.ln() * 0.5f64.ln()).abs() < 1e-12);
    assert_ne!(min.corner[0], min.corner[1]);
    assert!((m.max().unwrap().value - 0.5f64.ln().powi(2)).abs() < 1e-12);

    // Above the exhaustive limit only the sign corners are evaluated.
    let options = WorstCaseOptions {
        exhaustive_limit: 1,
        ..WorstCaseOptions::default()
    };
    let report = worst_case(&FormulaModel::new(circuit, saddle), &options, None).unwrap();
    assert!(!report.exhaustive);
    let m = &report.metrics[0];
    assert!(m.corners_min.is_none() && m.signs_confirmed().is_none());
    assert_eq!(m.min(), m.sign_min.as_ref());
}

#[test]
fn limits_are_checked() {
    let model = FormulaModel::new(three_part_circuit([Tolerance::symmetric(0.1); 3]), divider);
    let options = WorstCaseOptions {
        exhaustive_limit: 21,
        ..WorstCaseOptions::default()
    };
    assert!(matches!(
        worst_case(&model, &options, None),
        Err(ToleranceError::InvalidOption { .. })
    ));
}
