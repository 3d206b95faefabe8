//! Metrics, verdicts and snapshots on real circuits solved by `rolloff-mna`, checked
//! against closed forms (named beside each check).

#![allow(clippy::unwrap_used, clippy::expect_used)]

use crate::*;
use num_complex::Complex64;
use rolloff_mna::Analyzer;
use rolloff_netlist::{
    Circuit, CompileOptions, Metric, MetricKind, MetricOptions, ProbeKind, Sweep, Target, compile,
};
use std::f64::consts::{FRAC_1_SQRT_2, PI};

fn rel(a: f64, b: f64) -> f64 {
    (a / b - 1.0).abs()
}

fn circuit_from(text: &str) -> Circuit {
    let compiled = compile(text, &CompileOptions::default());
    let errors: Vec<String> = compiled
        .diagnostics
        .iter()
        .map(|d| rolloff_netlist::render_diagnostic(d, "test.rol", text))
        .collect();
    compiled
        .circuit
        .unwrap_or_else(|| panic!("{}", errors.join("\n")))
}

fn metric(circuit: &Circuit, kind: MetricKind, node: &str, reference: Option<f64>) -> Metric {
    Metric {
        kind,
        target: Target::Node(circuit.node(node).unwrap()),
        options: MetricOptions {
            reference,
            level_db: None,
        },
    }
}

const RC_HIGH_PASS: &str = r#"
title "first-order high-pass, fc = 1/(2πRC) = 159.15 Hz"
vsrc      V1 (in, gnd) 1 V  bias 5 V
capacitor C1 (in, out) 100 nF
resistor  R1 (out, gnd) 10k
sweep 1 Hz to 100 kHz per_decade 40
probe out
probe zin
expect cutoff(out) = 159.15 Hz ± 0.1 %
expect phase(out, 159.155 Hz) = 45 deg ± 0.01 deg
expect slope(out, 1.59155 Hz, 15.9155 Hz) = 20 dB/dec ± 0.1
expect passband_gain(out) = 0 dB ± 0.001 dB
expect impedance(zin, 1 kHz) >= 10 kΩ
expect bias(C1) within 4.9 .. 5.1 V
expect bias(out) within -1 .. 1 mV
expect cutoff(out, level -6 dB) < 100 Hz
"#;

#[test]
fn high_pass_from_text_meets_its_expectations() {
    let circuit = circuit_from(RC_HIGH_PASS);
    let mut analyzer = Analyzer::new(&circuit).unwrap();
    let freqs = sweep_frequencies(&circuit);
    let verdicts = check(&mut analyzer, &freqs);
    assert_eq!(verdicts.len(), 8);
    for v in &verdicts {
        assert!(v.pass, "{v}");
        assert!(v.margin.unwrap() >= 0.0);
    }
    // fc = 1/(2πRC) (first-order section, textbook): margin of the ±0.1 % band.
    let fc = 1.0 / (2.0 * PI * 10e3 * 100e-9);
    let cutoff = *verdicts[0].measured.as_ref().unwrap();
    assert!(rel(cutoff, fc) < 1e-5);
    assert_eq!(verdicts[0].bound, "= 159.15 Hz ± 0.1 %");
    // |Zin| = |R + 1/(jωC)| at 1 kHz (series RC, textbook).
    let z = Complex64::new(10e3, -1.0 / (2.0 * PI * 1e3 * 100e-9)).norm();
    assert!(rel(*verdicts[4].measured.as_ref().unwrap(), z) < 1e-12);
    // The whole bias sits across the coupling capacitor.
    assert!((verdicts[5].measured.as_ref().unwrap() - 5.0).abs() < 1e-12);
    // |H|² = x²/(1 + x²) = a with a = 10^(−6/10) at x = ωτ = √(a/(1 − a)) (first-order
    // high-pass); the reference, 1e-5 dB under the asymptote, moves it by ~1e-6.
    let a = 10f64.powf(-0.6);
    let f6 = *verdicts[7].measured.as_ref().unwrap();
    assert!(rel(f6, fc * (a / (1.0 - a)).sqrt()) < 1e-5);

    let summary = analyze_probe(&mut analyzer, rolloff_netlist::ProbeId(0), &freqs).unwrap();
    assert_eq!(summary.shape, Shape::HighPass);
    // The gain at the cutoff is 1/√2 of the passband (−3 dB, common practice).
    let mut source = ProbeSource::new(&mut analyzer, ProbeKind::Node(circuit.node("out").unwrap()));
    let ratio = source.eval(summary.cutoffs[0].freq_hz).unwrap().norm()
        / source.eval(summary.reference.freq_hz).unwrap().norm();
    assert!((ratio - FRAC_1_SQRT_2).abs() < 1e-10);
    assert!((summary.phase_at_cutoffs_deg[0].unwrap() - 45.0).abs() < 1e-3);
    // Stopband slope over fc/100 .. fc/10: +20 dB/decade (common practice).
    assert!((summary.stopband[0].near.unwrap().db_per_decade - 20.0).abs() < 0.1);
    assert_eq!(summary.stopband[0].order, Some(1));
}

#[test]
fn failing_and_unmeasurable_expectations_say_why() {
    let text = r"
vsrc      V1 (in, gnd) 1 V
capacitor C1 (in, out) 100 nF
resistor  R1 (out, gnd) 10k
sweep 10 Hz to 1 MHz per_decade 20
probe out
expect cutoff(out) within 10 .. 100 Hz
expect cutoff_high(out) < 1 kHz
expect impedance(out, 1 kHz) >= 1 kΩ
expect phase(out, 159.155 Hz) = 405 deg ± 1 deg
expect phase(out, 159.155 Hz) > 50 deg
expect gain(out, 1 Hz) > -100 dB
expect bias(out) within -1 .. 1 V
";
    let circuit = circuit_from(text);
    let mut analyzer = Analyzer::new(&circuit).unwrap();
    let verdicts = check(&mut analyzer, &sweep_frequencies(&circuit));
    let v = &verdicts[0];
    assert!(!v.pass);
    assert!(v.margin.unwrap() < -59.0 && v.margin.unwrap() > -60.0);
    assert_eq!(
        v.to_string(),
        "FAIL: cutoff(out) within 10 Hz .. 100 Hz (measured 159.154939 Hz, bound within 10 Hz .. 100 Hz)"
    );
    assert_eq!(
        verdicts[1].to_string(),
        "FAIL: cutoff_high(out) < 1 kHz (a high-pass response has no upper −3 dB point: the passband reaches up to 1 MHz; use cutoff)"
    );
    assert_eq!(verdicts[1].margin, None);
    assert_eq!(
        verdicts[2].measured.as_ref().unwrap_err().to_string(),
        "impedance() needs a zin or zout probe; `out` is not one"
    );
    // On the circle 405° is 45°: passes. Unwrapped, 45° is not above 50°.
    assert!(verdicts[3].pass, "{}", verdicts[3]);
    assert!(!verdicts[4].pass);
    // Outside the sweep a spot metric is still evaluated on the solver.
    assert!(verdicts[5].pass, "{}", verdicts[5]);
    // The output reaches gnd through R1 at DC, but `in` to `out` only through C1: the
    // bias solve still works (V1 fixes `in`).
    assert!(verdicts[6].pass, "{}", verdicts[6]);
}

#[test]
fn bias_failure_names_the_node() {
    // Two coupling capacitors in series: node `mid` has no DC path to gnd.
    let circuit = Circuit::builder()
        .vsrc("V1", "in", "gnd", 1.0)
        .capacitor("C1", "in", "mid", 1e-6)
        .capacitor("C2", "mid", "out", 1e-6)
        .resistor("R1", "out", "gnd", 1e3)
        .build()
        .unwrap();
    let mut analyzer = Analyzer::new(&circuit).unwrap();
    let m = Metric {
        kind: MetricKind::Bias,
        target: Target::Node(circuit.node("mid").unwrap()),
        options: MetricOptions::default(),
    };
    let e = measure(&mut analyzer, &m, &[1.0, 10.0]).unwrap_err();
    assert!(e.to_string().starts_with("the bias solve failed: "), "{e}");
    assert!(e.to_string().contains("`mid`"), "{e}");
}

/// C1 (in→n1), R1 (n1→gnd), C2 (n1→out), R2 (out→gnd), all R and C equal.
fn two_hp_stages(r: f64, c: f64) -> Circuit {
    Circuit::builder()
        .vsrc("V1", "in", "gnd", 1.0)
        .capacitor("C1", "in", "n1", c)
        .resistor("R1", "n1", "gnd", r)
        .capacitor("C2", "n1", "out", c)
        .resistor("R2", "out", "gnd", r)
        .probe_node("out")
        .sweep(Sweep::Log {
            start: 1.0,
            stop: 1e6,
            per_decade: 40,
        })
        .build()
        .unwrap()
}

#[test]
fn two_loaded_rc_stages_against_the_closed_form() {
    let (r, c) = (10e3, 100e-9);
    let tau = r * c;
    let f_rc = 1.0 / (2.0 * PI * tau);
    let circuit = two_hp_stages(r, c);
    let mut analyzer = Analyzer::new(&circuit).unwrap();
    let freqs = sweep_frequencies(&circuit);
    let out = circuit.node("out").unwrap();
    // s²τ²/(s²τ² + 3sτ + 1): two cascaded identical CR sections, the second loading the
    // first (textbook result).
    let closed = |f: f64| {
        let s = Complex64::new(0.0, 2.0 * PI * f);
        s * s * tau * tau / (s * s * tau * tau + 3.0 * s * tau + 1.0)
    };
    for &f in &freqs {
        let h = analyzer.transfer(&ProbeKind::Node(out), f).unwrap();
        assert!(
            (h - closed(f)).norm() <= 1e-12 * closed(f).norm() + 1e-15,
            "{f}"
        );
    }
    // |H|² = 1/2 at x⁴ − 7x² − 1 = 0, x = ωτ: the corner moves up by 2.67×.
    let x = f64::midpoint(53f64.sqrt(), 7.0).sqrt();
    let fc = measure(
        &mut analyzer,
        &metric(&circuit, MetricKind::Cutoff, "out", Some(1e9)),
        &freqs,
    )
    .unwrap();
    assert!(rel(fc, x * f_rc) < 1e-9, "{fc}");
    assert!(rel(fc, f_rc) > 1.0);
    // At 1/(2πRC) the gain is 20·log10(1/3) = −9.54 dB, not −6 dB.
    let g = measure(
        &mut analyzer,
        &metric(&circuit, MetricKind::Gain { freq: f_rc }, "out", None),
        &freqs,
    )
    .unwrap();
    assert!((g - 20.0 * (1.0f64 / 3.0).log10()).abs() < 1e-9);
    let summary = analyze_probe(&mut analyzer, rolloff_netlist::ProbeId(0), &freqs).unwrap();
    assert_eq!(summary.stopband[0].order, Some(2));
}

#[test]
fn rlc_band_pass_and_notch_on_the_solver() {
    let (r, l, c): (f64, f64, f64) = (100.0, 10e-3, 100e-9);
    // Series RLC, output across R: f0 = 1/(2π√(LC)), BW = R/(2πL), Q = √(L/C)/R
    // (textbook second-order band-pass).
    let circuit = Circuit::builder()
        .vsrc("V1", "in", "gnd", 1.0)
        .inductor("L1", "in", "a", l)
        .capacitor("C1", "a", "out", c)
        .resistor("R1", "out", "gnd", r)
        .probe_node("out")
        .build()
        .unwrap();
    let mut analyzer = Analyzer::new(&circuit).unwrap();
    let freqs = Sweep::Log {
        start: 10.0,
        stop: 1e6,
        per_decade: 40,
    }
    .frequencies();
    let f0 = 1.0 / (2.0 * PI * (l * c).sqrt());
    let mut m = |kind| measure(&mut analyzer, &metric(&circuit, kind, "out", None), &freqs);
    assert!(rel(m(MetricKind::Resonance).unwrap(), f0) < 1e-9);
    assert!(rel(m(MetricKind::Bandwidth).unwrap(), r / (2.0 * PI * l)) < 1e-9);
    assert!(rel(m(MetricKind::Q).unwrap(), (l / c).sqrt() / r) < 1e-9);

    // Notch: R from in to out, L–C in series from out to gnd, zero at f0 exactly, and
    // |H(f0)| = r/(R + r) with a loss r in series (textbook second-order notch).
    let (big_r, loss) = (1e3, 1.0);
    let circuit = Circuit::builder()
        .vsrc("V1", "in", "gnd", 1.0)
        .resistor("R1", "in", "out", big_r)
        .inductor("L1", "out", "m", l)
        .capacitor("C1", "m", "k", c)
        .resistor("RL", "k", "gnd", loss)
        .probe_node("out")
        .build()
        .unwrap();
    let mut analyzer = Analyzer::new(&circuit).unwrap();
    let mut m = |kind| {
        measure(
            &mut analyzer,
            &metric(&circuit, kind, "out", Some(1e-3)),
            &freqs,
        )
    };
    assert!(rel(m(MetricKind::NotchFreq).unwrap(), f0) < 1e-9);
    let depth = 20.0 * ((big_r + loss) / loss).log10();
    assert!((m(MetricKind::NotchDepth).unwrap() - depth).abs() < 1e-6);
}

#[test]
fn group_delay_on_the_solver_is_exact() {
    // RC low-pass: τg = τ/(1 + (ωτ)²) (textbook), from the solver's exact derivative.
    let (r, c) = (1e3, 1e-6);
    let tau = r * c;
    let circuit = Circuit::builder()
        .vsrc("V1", "in", "gnd", 1.0)
        .resistor("R1", "in", "out", r)
        .capacitor("C1", "out", "gnd", c)
        .probe_node("out")
        .build()
        .unwrap();
    let mut analyzer = Analyzer::new(&circuit).unwrap();
    let freqs = sweep_frequencies(&circuit);
    for f in [1.0, 100.0, 159.154_943_091_895_35, 1e4] {
        let w = 2.0 * PI * f;
        let g = measure(
            &mut analyzer,
            &metric(&circuit, MetricKind::GroupDelay { freq: f }, "out", None),
            &freqs,
        )
        .unwrap();
        assert!(rel(g, tau / (1.0 + (w * tau).powi(2))) < 1e-9, "{f}");
    }
}

#[test]
fn summaries_for_every_probe() {
    let circuit = circuit_from(RC_HIGH_PASS);
    let mut analyzer = Analyzer::new(&circuit).unwrap();
    let all = analyze_circuit(&mut analyzer, &sweep_frequencies(&circuit));
    assert_eq!(all.len(), 2);
    assert_eq!(all[0].0, "out");
    assert_eq!(all[0].1.as_ref().unwrap().shape, Shape::HighPass);
    // |Zin| = |R + 1/(jωC)| falls to R at high frequency: read as a low-pass of impedance.
    let zin = all[1].1.as_ref().unwrap();
    assert_eq!(zin.shape, Shape::LowPass);
    assert!(zin.group_delay_s.is_some());
}

#[test]
fn snapshot_round_trip_and_a_one_percent_change_is_caught() {
    let circuit = circuit_from(RC_HIGH_PASS);
    let mut analyzer = Analyzer::new(&circuit).unwrap();
    let freqs = sweep_frequencies(&circuit);
    let snapshot = take_snapshot(&mut analyzer, &freqs, Some("abc123".into()));
    assert_eq!(snapshot.source_hash.as_deref(), Some("abc123"));
    assert_eq!(snapshot.tool_version, env!("CARGO_PKG_VERSION"));
    assert_eq!(snapshot.probes.len(), 2);
    assert!(
        snapshot.probes[0]
            .metrics
            .iter()
            .any(|m| m.name == "cutoff")
    );
    let json = snapshot.to_json().unwrap();
    assert!(!json.contains("NaN"));
    let back = Snapshot::from_json(&json).unwrap();
    assert_eq!(back, snapshot);

    // Metrics on the stored curves, as on measured data: the cutoff interpolated between
    // samples 1/40 decade apart lies within 0.1 % of the solver's.
    let mut stored = back.response("out").unwrap();
    let summary = analyze(&mut stored, &freqs, None).unwrap();
    let solved = snapshot.probes[0]
        .metrics
        .iter()
        .find(|m| m.name == "cutoff")
        .unwrap();
    assert!(rel(summary.cutoffs[0].freq_hz, solved.value) < 1e-3);
    assert_eq!(
        back.response("nope").unwrap_err().to_string(),
        "the snapshot has no probe `nope`"
    );

    // The same circuit compares clean.
    let same = compare(&mut analyzer, &back, &Thresholds::default());
    assert!(same.pass(), "{:?}", same.failures().collect::<Vec<_>>());

    // R1 up by 1 %: the cutoff moves by 1 % and the gain near it by ~0.04 dB.
    let r1 = circuit.part("R1").unwrap();
    let value = analyzer.part_value(r1).unwrap();
    analyzer.set_part_value(r1, value * 1.01).unwrap();
    let changed = compare(&mut analyzer, &back, &Thresholds::default());
    assert!(!changed.pass());
    let failures: Vec<&Finding> = changed.failures().collect();
    assert!(
        failures
            .iter()
            .any(|f| f.probe == "out" && f.quantity == "cutoff")
    );
    let cutoff = failures.iter().find(|f| f.quantity == "cutoff").unwrap();
    assert!((cutoff.deviation.unwrap() - 1.0 / 101.0).abs() < 1e-4);
    let worst = changed.worst().unwrap();
    assert!(worst.exceeded);
    // The worst gain deviation is where the slope is: in the stopband, 20·log10(1.01).
    let gain = failures
        .iter()
        .find(|f| f.probe == "out" && f.quantity == "gain")
        .unwrap();
    assert!((gain.deviation.unwrap() - 20.0 * 1.01f64.log10()).abs() < 1e-3);
    assert!(gain.at_hz.unwrap() < 2.0);
    assert!(gain.to_string().starts_with("out gain at 1 Hz: "));

    // Another sweep or another set of probes is a failure by itself.
    let mut other = back.clone();
    other.frequencies_hz.pop();
    other.probes.pop();
    let now = take_snapshot(&mut analyzer, &freqs, None);
    let report = compare_snapshots(&other, &now, &Thresholds::default());
    let text: Vec<String> = report.failures().map(ToString::to_string).collect();
    assert!(
        text.contains(&"sweep frequencies differ".to_string()),
        "{text:?}"
    );
    assert!(
        text.contains(&"zin probe not in the snapshot".to_string()),
        "{text:?}"
    );
}

#[test]
fn snapshot_rejects_bad_json() {
    let e = Snapshot::from_json("{\"format\": 1}").unwrap_err();
    assert!(
        e.to_string().starts_with("bad snapshot: missing field"),
        "{e}"
    );
    let e = Snapshot::from_json(
        r#"{"format": 9, "tool_version": "x", "source_hash": null, "title": null, "frequencies_hz": [], "probes": []}"#,
    )
    .unwrap_err();
    assert_eq!(
        e.to_string(),
        "bad snapshot: snapshot format 9 is not the supported format 1"
    );
}

#[test]
fn target_unit_and_solver_failures_are_reasons() {
    // No AC source: every AC metric fails with the solver's reason.
    let circuit = Circuit::builder()
        .resistor("R1", "a", "gnd", 1e3)
        .isrc("I1", "gnd", "a", 1.0)
        .build()
        .unwrap();
    let mut analyzer = Analyzer::new(&circuit).unwrap();
    let cutoff = metric(&circuit, MetricKind::Cutoff, "a", None);
    let mut dc = circuit.clone();
    dc.parts[1].kind = rolloff_netlist::PartKind::CurrentSource {
        from: rolloff_netlist::NodeId::GND,
        to: circuit.node("a").unwrap(),
        amplitude: None,
        phase_deg: 0.0,
        bias: Some(1e-3),
        rp: None,
    };
    let mut dc_analyzer = Analyzer::new(&dc).unwrap();
    let e = measure(&mut dc_analyzer, &cutoff, &[1.0, 10.0]).unwrap_err();
    assert_eq!(
        e.to_string(),
        "the circuit has no AC source (a vsrc or isrc with an amplitude) to drive it"
    );
    // 1 mA into 1 kΩ: 1 V of bias.
    let v = bias(&mut dc_analyzer, Target::Node(dc.node("a").unwrap())).unwrap();
    assert!((v - 1.0).abs() < 1e-12);
    // An AC metric on a part target.
    let on_part = Metric {
        target: Target::Part(circuit.part("R1").unwrap()),
        ..cutoff
    };
    assert_eq!(
        measure(&mut analyzer, &on_part, &[1.0, 10.0])
            .unwrap_err()
            .to_string(),
        "`R1` is a part; AC metrics are measured on a node, a probe or `current R1`"
    );
    // A unit that does not fit the metric fails the verdict.
    let expectation = rolloff_netlist::Expectation {
        metric: cutoff,
        comparison: rolloff_netlist::Comparison::Less(3.0),
        unit: rolloff_netlist::Unit::Decibel,
        text: "cutoff(a) < 3 dB".into(),
        span: rolloff_netlist::Span::default(),
    };
    let v = judge(&expectation, Ok(100.0), rolloff_netlist::Unit::Hertz);
    assert!(!v.pass);
    assert_eq!(
        v.to_string(),
        "FAIL: cutoff(a) < 3 dB (cutoff is measured in Hz, but the expectation is written in dB)"
    );
}

#[test]
fn verdicts_carry_the_reference_warnings() {
    // The sweep ends at 6.3·fc, where the high-pass still rises by 0.49 dB/decade.
    let text = "vsrc V1 (in, gnd) 1 V\ncapacitor C1 (in, out) 100 nF\nresistor R1 (out, gnd) 10k\n\
                sweep 1 Hz to 1 kHz per_decade 40\nprobe out\n\
                expect cutoff(out) within 150 .. 170 Hz\nexpect gain(out, 1 kHz) > -1 dB\n";
    let circuit = circuit_from(text);
    let mut analyzer = Analyzer::new(&circuit).unwrap();
    let verdicts = check(&mut analyzer, &sweep_frequencies(&circuit));
    assert!(verdicts[0].pass, "{}", verdicts[0]);
    assert!(matches!(
        verdicts[0].warnings[0],
        ReportWarning::StillChanging {
            end: SweepEnd::End,
            ..
        }
    ));
    assert!(matches!(
        verdicts[0].warnings[1],
        ReportWarning::ReferenceBeyondSweep { .. }
    ));
    assert!(verdicts[1].warnings.is_empty());
}

proptest::proptest! {
    #![proptest_config(proptest::prelude::ProptestConfig::with_cases(64))]
    /// First-order RC low-pass across the decades of R and C: fc = 1/(2πRC), the phase
    /// there −45° and the group delay τ/2 (textbook first-order section).
    #[test]
    fn solver_cutoff_phase_and_delay_across_decades(r_exp in 1.0f64..6.0, c_exp in -12.0f64..-6.0) {
        let (r, c) = (10f64.powf(r_exp), 10f64.powf(c_exp));
        let tau = r * c;
        let fc = 1.0 / (2.0 * PI * tau);
        let circuit = Circuit::builder()
            .vsrc("V1", "in", "gnd", 1.0)
            .resistor("R1", "in", "out", r)
            .capacitor("C1", "out", "gnd", c)
            .build()
            .unwrap();
        let mut analyzer = Analyzer::new(&circuit).unwrap();
        let freqs = Sweep::Log { start: fc / 100.0, stop: fc * 100.0, per_decade: 20 }.frequencies();
        let m = |kind, reference| metric(&circuit, kind, "out", reference);
        let f = measure(&mut analyzer, &m(MetricKind::Cutoff, Some(fc * 1e-6)), &freqs).unwrap();
        proptest::prop_assert!(rel(f, fc) < 1e-9);
        let p = measure(&mut analyzer, &m(MetricKind::Phase { freq: fc }, None), &freqs).unwrap();
        proptest::prop_assert!((p + 45.0).abs() < 1e-9);
        let g = measure(&mut analyzer, &m(MetricKind::GroupDelay { freq: fc }, None), &freqs).unwrap();
        proptest::prop_assert!(rel(g, tau / 2.0) < 1e-9);
    }
}

/// Series R–L, C to ground, output across C: H = 1/(s²LC + sRC + 1), Q = √(L/C)/R
/// (textbook second-order low-pass). With Q = 2 it peaks 20·log10(Q/√(1 − 1/(4Q²)))
/// = 6.30 dB above DC, and |H|² = 1/2 at x² = (b + √(b² + 4))/2, b = 2 − 1/Q², x = ω√(LC).
#[test]
fn probe_reference_measures_a_peaking_low_pass_from_its_flat_region() {
    let (r, l, c): (f64, f64, f64) = (50.0, 10e-3, 1e-6);
    let q = (l / c).sqrt() / r;
    assert!((q - 2.0).abs() < 1e-12);
    let f0 = 1.0 / (2.0 * PI * (l * c).sqrt());
    let b = 2.0 - 1.0 / (q * q);
    let fc = f0 * f64::midpoint(b, (b * b + 4.0).sqrt()).sqrt();
    let peaking = 20.0 * (q / (1.0 - 1.0 / (4.0 * q * q)).sqrt()).log10();
    let text = format!(
        "vsrc V1 (in, gnd) 1 V\nresistor R1 (in, m) 50\ninductor L1 (m, out) 10 mH\n\
         capacitor C1 (out, gnd) 1 uF\nsweep 1 Hz to 100 kHz per_decade 40\nprobe out ref 1 Hz\n\
         expect cutoff(out) = {fc} Hz ± 0.001 %\nexpect peaking(out) = {peaking} dB ± 0.001 dB\n\
         expect passband_gain(out) = 0 dB ± 0.001 dB\n"
    );
    let circuit = circuit_from(&text);
    let mut analyzer = Analyzer::new(&circuit).unwrap();
    let freqs = sweep_frequencies(&circuit);
    for v in check(&mut analyzer, &freqs) {
        assert!(v.pass, "{v}");
        assert!(v.warnings.is_empty(), "{:?}", v.warnings);
    }
    // Without the `ref`, the reference is the peak: against it the response reads as a
    // band-pass, and the summary says why.
    let mut source = ProbeSource::new(&mut analyzer, ProbeKind::Node(circuit.node("out").unwrap()));
    let s = analyze(&mut source, &freqs, None).unwrap();
    assert_eq!(s.shape, Shape::BandPass);
    // Against the flat region at 1 Hz, which lies 7e-6 dB above the DC gain.
    assert!((s.peaking_db.unwrap() - peaking).abs() < 1e-4);
    assert!(
        s.warnings
            .iter()
            .any(|w| matches!(w, ReportWarning::PeaksAboveFlat { .. }))
    );
}

/// The reference case `lc_chebyshev_0p1db_n5`: a Chebyshev 0.1 dB, n = 5 ladder, doubly
/// terminated in 50 Ω, scaled to f0 = 10 kHz (g-values from the closed form of Matthaei,
/// Young & Jones). Its power gain is `|H|² = 1/(1 + ε²·T5(f/f0)²)` relative to the ripple
/// peaks, `ε² = 10^(0.1/10) − 1`, with `T5(cos θ) = cos 5θ` (Chebyshev polynomial,
/// textbook): the ripple minima, where `T5² = 1`, lie at `f0·cos(kπ/5)` = 3.09 kHz,
/// 8.09 kHz and 10 kHz, all exactly 0.1 dB below the peaks (`T5 = 0`, e.g. at
/// `f0·cos(π/10)`, the probe's `ref`).
const CHEBYSHEV_0P1DB_N5: &str = r"
let r0 = 50 Ω
let f0 = 10 kHz
let w0 = 2 * pi * f0
let g1 = 1.1468130672714618
let g2 = 1.3712125512670543
let g3 = 1.9750031575003777
let g4 = 1.3712125512670543
let g5 = 1.1468130672714618
vsrc      VS (p1, gnd) 1 V rs 50 Ω
capacitor C1 (p1, gnd) (g1 / (r0 * w0))
inductor  L2 (p1, p2) (g2 * r0 / w0)
capacitor C3 (p2, gnd) (g3 / (r0 * w0))
inductor  L4 (p2, out) (g4 * r0 / w0)
capacitor C5 (out, gnd) (g5 / (r0 * w0))
resistor  RL (out, gnd) r0
sweep 10 Hz to 10 MHz per_decade 20
probe out ref 9510.565162951536 Hz
";

fn chebyshev_cutoff(level_db: f64, extra_hz: &[f64]) -> Result<f64, MetricError> {
    let circuit = circuit_from(CHEBYSHEV_0P1DB_N5);
    let mut analyzer = Analyzer::new(&circuit).unwrap();
    let mut freqs = sweep_frequencies(&circuit);
    freqs.extend_from_slice(extra_hz);
    let mut m = metric(
        &circuit,
        MetricKind::Cutoff,
        "out",
        Some(9_510.565_162_951_536),
    );
    m.options.level_db = Some(level_db);
    measure(&mut analyzer, &m, &freqs)
}

#[test]
fn equiripple_minima_touching_the_level_are_not_crossings() {
    // At the ripple depth the level only touches the two inner minima: the one crossing
    // is the ripple edge f0 (Chebyshev type I, textbook: |T5(1)| = 1, rising beyond).
    let f = chebyshev_cutoff(-0.1, &[]).unwrap();
    assert!(rel(f, 10e3) < 1e-9, "{f}");
    // The same with sweep points on the minima, where a sample may fall a rounding
    // below the level and give two sign changes in a row.
    let minima = [10e3 * (PI / 5.0).cos(), 10e3 * (2.0 * PI / 5.0).cos()];
    let f = chebyshev_cutoff(-0.1, &minima).unwrap();
    assert!(rel(f, 10e3) < 1e-9, "{f}");
    // A level a little above the ripple depth is crossed for real in both minima and at
    // the edge: |T5(cos θ)| = t with t² = (10^0.009 − 1)/ε², ε² = 10^0.01 − 1, i.e.
    // θ = (kπ ± φ)/5 with φ = acos t, around the minima k = 1, 2 and the edge k = 0.
    let e = chebyshev_cutoff(-0.09, &[]).unwrap_err();
    let MetricError::ManyCrossings { freqs_hz, .. } = e else {
        panic!("{e}")
    };
    let eps2 = 10f64.powf(0.01) - 1.0;
    let phi = ((10f64.powf(0.009) - 1.0) / eps2).sqrt().acos();
    let mut expected: Vec<f64> = [2.0 * PI + phi, 2.0 * PI - phi, PI + phi, PI - phi, phi]
        .iter()
        .map(|x| 10e3 * (x / 5.0).cos())
        .collect();
    expected.sort_by(f64::total_cmp);
    assert_eq!(freqs_hz.len(), 5, "{freqs_hz:?}");
    for (got, want) in freqs_hz.iter().zip(&expected) {
        assert!(rel(*got, *want) < 1e-8, "{got} vs {want}");
    }
}

/// A bound prints as written: `20·log10(1/√2)` = −3.0103 dB at fc = 1/(2πRC) of a
/// first-order low-pass (textbook), R = 1 kΩ, C = 100 nF, fc = 1.5915494309189537 kHz;
/// the reference at 1 Hz lies 1.7e-6 dB under DC, moving the cutoff by 4e-7 relative.
#[test]
fn bounds_print_as_written() {
    let text = "vsrc V1 (in, gnd) 1 V\nresistor R1 (in, out) 1k\ncapacitor C1 (out, gnd) 100 nF\n\
                sweep 1 Hz to 1 MHz per_decade 20\nprobe out\n\
                expect gain(out, 1.5915494309189537 kHz) = -3.0103 dB +- 0.001 dB\n\
                expect phase(out, 1.5915494309189537 kHz) = -45 deg +- 0.0001 deg\n\
                expect cutoff(out) = 1.5915494309189537 kHz +- 0.001 %\n\
                expect cutoff(out) within 1591.5 Hz .. 1591.6 Hz\n";
    let circuit = circuit_from(text);
    let mut analyzer = Analyzer::new(&circuit).unwrap();
    let freqs = sweep_frequencies(&circuit);
    let verdicts = check(&mut analyzer, &freqs);
    let bounds: Vec<&str> = verdicts.iter().map(|v| v.bound.as_str()).collect();
    assert_eq!(
        bounds,
        [
            "= −3.0103 dB ± 0.001 dB",
            "= −45 deg ± 0.0001 deg",
            "= 1.59154943 kHz ± 0.001 %",
            "within 1.5915 kHz .. 1.5916 kHz",
        ]
    );
    for v in &verdicts {
        assert!(v.pass, "{v}");
    }
    assert!(
        verdicts[0]
            .to_string()
            .contains("(measured −3.01029996 dB, bound = −3.0103 dB ± 0.001 dB)"),
        "{}",
        verdicts[0]
    );
}

/// `check` solves each probe once per frequency within a call; its verdicts are exactly
/// those of measuring every expectation on its own (bit for bit), here on the RC
/// high-pass (two probes, bias) and on the Chebyshev ladder (the cutoff family at two
/// levels, spot metrics, and a repeated expectation).
#[test]
fn check_reuses_solves_without_changing_results() {
    let chebyshev = format!(
        "{CHEBYSHEV_0P1DB_N5}\
         expect cutoff(out) = 11347.180020503873 Hz ± 1e-5 %\n\
         expect cutoff(out, level -0.1 dB) = 10 kHz ± 1e-7 %\n\
         expect cutoff(out, level -0.09 dB) > 1 Hz\n\
         expect gain(out, 10 kHz) = -6.120599913279625 dB ± 1e-6 dB\n\
         expect phase(out, 5 kHz) < 0 deg\n\
         expect group_delay(out, 5 kHz) > 0 s\n\
         expect passband_gain(out) > -7 dB\n\
         expect cutoff(out) = 11347.180020503873 Hz ± 1e-5 %\n"
    );
    for text in [RC_HIGH_PASS, chebyshev.as_str()] {
        let circuit = circuit_from(text);
        let mut analyzer = Analyzer::new(&circuit).unwrap();
        let freqs = sweep_frequencies(&circuit);
        let verdicts = check(&mut analyzer, &freqs);
        let one_by_one: Vec<Verdict> = circuit
            .expectations
            .iter()
            .map(|e| {
                let unit = measured_unit(&circuit, &e.metric);
                let (measured, warnings) = measure_with_warnings(&mut analyzer, &e.metric, &freqs);
                Verdict {
                    warnings,
                    ..judge(e, measured, unit)
                }
            })
            .collect();
        assert_eq!(verdicts.len(), circuit.expectations.len());
        assert_eq!(verdicts, one_by_one);
    }
    // The Chebyshev expectations all hold except the one with five crossings.
    let circuit = circuit_from(&chebyshev);
    let mut analyzer = Analyzer::new(&circuit).unwrap();
    let verdicts = check(&mut analyzer, &sweep_frequencies(&circuit));
    let failing: Vec<usize> = (0..verdicts.len()).filter(|&i| !verdicts[i].pass).collect();
    assert_eq!(failing, [2], "{verdicts:?}");
    assert_eq!(verdicts[0].measured, verdicts[7].measured);
    assert_eq!(verdicts[0].margin, verdicts[7].margin);
}
