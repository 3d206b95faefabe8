//! Fit: root finder, bracketing and part fits on closed-form models.

use super::*;
use crate::testing::{FormulaModel, expectation, rc_cutoff};
use rolloff_netlist::{Circuit, MetricKind};
use std::f64::consts::TAU;

#[test]
fn brent_finds_textbook_roots() {
    // x³ − 2x − 5 = 0 has the root 2.0945514815423265 (Wallis' equation, a
    // classical test of root finders).
    let mut f = |x: f64| Ok::<_, String>(x * x * x - 2.0 * x - 5.0);
    let (fa, fb) = (f(2.0).unwrap(), f(3.0).unwrap());
    let root = brent(&mut f, (2.0, fa), (3.0, fb), 1e-15, 100).unwrap();
    assert!((root - 2.094_551_481_542_326_5).abs() < 1e-14);
    // cos x = x: 0.7390851332151607 (the Dottie number).
    let mut g = |x: f64| Ok::<_, String>(x.cos() - x);
    let root = brent(&mut g, (0.0, 1.0), (1.0, 1f64.cos() - 1.0), 1e-15, 100).unwrap();
    assert!((root - 0.739_085_133_215_160_7).abs() < 1e-14);
}

#[test]
fn bracket_prefers_the_sign_change_nearest_the_start() {
    // sin has roots at π and 2π in [2, 7]; start near 6 picks 2π.
    let mut f = |u: f64| Ok::<_, String>(u.sin());
    let (a, _, b, _) = bracket(&mut f, 2.0, 7.0, 6.0, 20).unwrap();
    assert!(a <= std::f64::consts::TAU && std::f64::consts::TAU <= b);
    let (a, _, b, _) = bracket(&mut f, 2.0, 7.0, 2.5, 20).unwrap();
    assert!(a <= std::f64::consts::PI && std::f64::consts::PI <= b);
    let mut never = |_u: f64| Ok::<_, String>(1.0);
    let err = bracket(&mut never, 0.0, 1.0, 0.5, 4).unwrap_err();
    assert!(err.contains("between 1.000000e0 and 1.000000e0"), "{err}");
}

const C: f64 = 10e-9;

/// `V1 → R1 → out`, `C1` to ground, R1 = `?` in `low .. high`, and the expectations
/// `cutoff(out) = f` for each `f` of `targets` (zero deviation).
fn rc_fit_model(low: f64, high: f64, targets: &[f64]) -> FormulaModel {
    let mut circuit = Circuit::builder()
        .vsrc("V1", "in", "gnd", 1.0)
        .resistor("R1", "in", "out", 1e4)
        .capacitor("C1", "out", "gnd", C)
        .build()
        .unwrap();
    if let PartKind::Resistor { fit, .. } = &mut circuit.parts[1].kind {
        *fit = Some(FitRange { low, high });
    }
    for &f in targets {
        let e = expectation(
            &circuit,
            MetricKind::Cutoff,
            "out",
            Comparison::Equal {
                value: f,
                deviation: Deviation::Relative(0.0),
            },
            Unit::Hertz,
            "cutoff(out) = 2 kHz",
        );
        circuit.expectations.push(e);
    }
    FormulaModel::new(circuit, rc_cutoff)
}

#[test]
fn single_rc_fits_the_closed_form() {
    // fc = 1/(2πRC) (first-order RC low-pass), so R = 1/(2π·f·C).
    let model = rc_fit_model(1e3, 1e6, &[2000.0]);
    let report = fit(&model, &FitOptions::default()).unwrap();
    let expected = 1.0 / (TAU * 2000.0 * C);
    assert!((report.exact / expected - 1.0).abs() < 1e-9, "{report:?}");
    assert!((report.achieved / 2000.0 - 1.0).abs() < 1e-9);
    assert_eq!((report.name.as_str(), report.kind), ("R1", "resistor"));
    assert_eq!(report.target.label, "cutoff(out)");
    // 7957.7 Ω lies between E24's 7.5 kΩ and 8.2 kΩ; √(7.5·8.2) = 7.842 kΩ, so 8.2 kΩ
    // is the nearest. fc ∝ 1/R gives the metric errors.
    let values: Vec<f64> = report.standard.iter().map(|c| c.value.value).collect();
    assert_eq!(values, [7500.0, 8200.0]);
    assert!(!report.standard[0].nearest && report.standard[1].nearest);
    for c in &report.standard {
        let expected_error = expected / c.value.value - 1.0;
        assert!((c.relative_error.unwrap() - expected_error).abs() < 1e-9);
    }
    let pair = report.best_pair.unwrap();
    let reference = Series::E24.best_combination(expected).unwrap();
    assert_eq!(
        (pair.combination.a, pair.combination.b),
        (reference.a, reference.b)
    );
    let wiring = match pair.combination.joining {
        Joining::Sum => Connection::Series,
        Joining::Reciprocal => Connection::Parallel,
    };
    assert_eq!(pair.connection, wiring);
    assert!(
        (pair.relative_error.unwrap() - (expected / pair.combination.value - 1.0)).abs() < 1e-9
    );
}

#[test]
fn capacitor_pairs_are_wired_the_other_way() {
    let mut circuit = rc_fit_model(1e3, 1e6, &[2000.0]).circuit().clone();
    circuit.parts[1].kind = PartKind::Resistor {
        a: rolloff_netlist::NodeId(1),
        b: rolloff_netlist::NodeId(2),
        value: 1e4,
        tol: None,
        fit: None,
    };
    if let PartKind::Capacitor { fit, .. } = &mut circuit.parts[2].kind {
        *fit = Some(FitRange {
            low: 1e-12,
            high: 1e-3,
        });
    }
    let report = fit(
        &FormulaModel::new(circuit, rc_cutoff),
        &FitOptions::default(),
    )
    .unwrap();
    let expected = 1.0 / (TAU * 2000.0 * 1e4);
    assert!((report.exact / expected - 1.0).abs() < 1e-9);
    let pair = report.best_pair.unwrap();
    let wiring = match pair.combination.joining {
        Joining::Sum => Connection::Parallel,
        Joining::Reciprocal => Connection::Series,
    };
    assert_eq!(pair.connection, wiring);
}

#[test]
fn what_a_fit_needs_is_reported() {
    let unreachable = rc_fit_model(1.0, 10.0, &[2000.0]);
    match fit(&unreachable, &FitOptions::default()) {
        Err(ToleranceError::NoBracket {
            part, low, high, ..
        }) => {
            assert_eq!((part.as_str(), low, high), ("R1", 1.0, 10.0));
        }
        other => panic!("{other:?}"),
    }
    let two = rc_fit_model(1e3, 1e6, &[2000.0, 3000.0]);
    assert!(matches!(
        fit(&two, &FitOptions::default()),
        Err(ToleranceError::AmbiguousFitTarget { .. })
    ));
    let none = rc_fit_model(1e3, 1e6, &[]);
    assert!(matches!(
        fit(&none, &FitOptions::default()),
        Err(ToleranceError::NoFitTarget { .. })
    ));
    let mut circuit = rc_fit_model(1e3, 1e6, &[2000.0]).circuit().clone();
    if let PartKind::Resistor { fit: f, .. } = &mut circuit.parts[1].kind {
        *f = None;
    }
    assert_eq!(
        fit(
            &FormulaModel::new(circuit, rc_cutoff),
            &FitOptions::default()
        )
        .unwrap_err(),
        ToleranceError::NothingToFit
    );
}

#[allow(clippy::unnecessary_wraps)]
fn rc_cutoff_and_impedance(
    values: &[f64],
    metric: &rolloff_netlist::Metric,
) -> Result<f64, String> {
    let (r, c) = (values[1], values[2]);
    Ok(match metric.kind {
        MetricKind::Impedance { freq } => (r * r + (1.0 / (TAU * freq * c)).powi(2)).sqrt(),
        _ => 1.0 / (TAU * r * c),
    })
}

#[test]
fn two_parts_meet_two_targets() {
    // fc = 1/(2πRC) and |Z(f)| = √(R² + (1/2πfC)²) = R·√(1 + (fc/f)²) (series RC), so
    // fc = 1 kHz with |Z(10 kHz)| = 10 kΩ gives R = 10 kΩ/√1.01, C = 1/(2π·1 kHz·R).
    let mut model = rc_fit_model(100.0, 1e6, &[1000.0]);
    let mut circuit = model.circuit().clone();
    if let PartKind::Capacitor { fit, .. } = &mut circuit.parts[2].kind {
        *fit = Some(FitRange {
            low: 1e-12,
            high: 1e-3,
        });
    }
    let z = expectation(
        &circuit,
        MetricKind::Impedance { freq: 10e3 },
        "in",
        Comparison::Equal {
            value: 10e3,
            deviation: Deviation::Relative(0.0),
        },
        Unit::Ohm,
        "impedance(zin, 10 kHz) = 10 kΩ",
    );
    circuit.expectations.push(z);
    model = FormulaModel::new(circuit, rc_cutoff_and_impedance);
    let reports = fit_all(&model, &FitOptions::default()).unwrap();
    let r = 10e3 / 1.01f64.sqrt();
    let c = 1.0 / (TAU * 1e3 * r);
    assert_eq!(reports.len(), 2);
    assert!(
        (reports[0].exact / r - 1.0).abs() < 1e-9,
        "{:?}",
        reports[0]
    );
    assert!(
        (reports[1].exact / c - 1.0).abs() < 1e-9,
        "{:?}",
        reports[1]
    );
    assert!((reports[0].achieved / 1e3 - 1.0).abs() < 1e-9);
    assert!((reports[1].achieved / 10e3 - 1.0).abs() < 1e-9);
    assert_eq!(
        fit(&model, &FitOptions::default()).unwrap_err(),
        ToleranceError::SeveralFitParts(vec!["R1".into(), "C1".into()])
    );
    // One target for two parts cannot be solved.
    let mut short = model.circuit().clone();
    short.expectations.pop();
    let err = fit_all(
        &FormulaModel::new(short, rc_cutoff_and_impedance),
        &FitOptions::default(),
    )
    .unwrap_err();
    assert!(
        matches!(err, ToleranceError::FitCountMismatch { .. }),
        "{err:?}"
    );
}

#[test]
fn dense_solver_solves_and_refuses_singular_systems() {
    let x = solve_dense(vec![vec![2.0, 1.0], vec![1.0, 3.0]], vec![3.0, 5.0]).unwrap();
    assert!((x[0] - 0.8).abs() < 1e-15 && (x[1] - 1.4).abs() < 1e-15);
    assert!(solve_dense(vec![vec![1.0, 2.0], vec![2.0, 4.0]], vec![1.0, 2.0]).is_none());
}
