//! One test (or a few) per grammar rule: numbers, units, value codes, expressions and
//! every statement.

use super::{ok, plain, resistance};
use crate::{
    Comparison, Deviation, FitRange, MetricKind, NodeId, PartKind, ProbeKind, Sweep, Target,
    Tolerance, Unit,
};

#[track_caller]
fn close(a: f64, b: f64) {
    assert!((a - b).abs() <= 1e-12 * a.abs().max(b.abs()), "{a} != {b}");
}

#[test]
fn numbers_and_exponents() {
    assert_eq!(resistance("10"), 10.0);
    assert_eq!(resistance("0.47"), 0.47);
    assert_eq!(resistance("1e3"), 1000.0);
    assert_eq!(resistance("2.5E-3"), 0.0025);
    assert_eq!(resistance("1e+2"), 100.0);
}

#[test]
fn si_prefixes_glued_and_spaced() {
    assert_eq!(resistance("10k"), 10e3);
    assert_eq!(resistance("10 kΩ"), 10e3);
    assert_eq!(resistance("10kohm"), 10e3);
    assert_eq!(resistance("10 kohm"), 10e3);
    assert_eq!(resistance("2.2MΩ"), 2.2e6);
    assert_eq!(resistance("1G"), 1e9);
    assert_eq!(resistance("1T"), 1e12);
    assert_eq!(resistance("100m"), 0.1, "m is milli, as SI says");
    // Both ohm signs: U+03A9 and U+2126.
    assert_eq!(resistance("1 k\u{3a9}"), 1e3);
    assert_eq!(resistance("1 k\u{2126}"), 1e3);
}

#[test]
fn every_prefix_scales_by_its_power_of_ten() {
    // SI prefixes (BIPM SI Brochure, 9th edition, table 7).
    for (prefix, exponent) in [
        ("f", -15),
        ("p", -12),
        ("n", -9),
        ("u", -6),
        ("\u{b5}", -6),
        ("\u{3bc}", -6),
        ("m", -3),
        ("k", 3),
        ("M", 6),
        ("G", 9),
        ("T", 12),
    ] {
        let expected: f64 = format!("3e{exponent}").parse().unwrap();
        assert_eq!(
            resistance(&format!("3{prefix}")),
            expected,
            "prefix {prefix}"
        );
    }
}

#[test]
fn iec_60062_value_codes() {
    // IEC 60062 (letter and digit code for resistance and capacitance values): the
    // letter takes the place of the decimal point and gives the multiplier; examples
    // recalled from memory: 4R7 = 4.7 Ω, 47R = 47 Ω, 0R47 = 0.47 Ω (the standard
    // writes R47; this language asks for the leading 0), 4k7 = 4.7 kΩ (the standard's
    // resistor code uses K; this language uses the SI `k`), 4M7 = 4.7 MΩ, 2n2 = 2.2 nF,
    // 4p7 = 4.7 pF, 4µ7 = 4.7 µF.
    assert_eq!(resistance("4R7"), 4.7);
    assert_eq!(resistance("47R"), 47.0);
    assert_eq!(resistance("0R47"), 0.47);
    assert_eq!(resistance("1R5"), 1.5);
    assert_eq!(resistance("4k7"), 4700.0);
    assert_eq!(resistance("3k3"), 3300.0);
    assert_eq!(resistance("4M7"), 4.7e6);
    assert_eq!(resistance("1G5"), 1.5e9);
    let c = ok(
        "vsrc V (a, gnd) 1 V\ncapacitor C1 (a, gnd) 2n2\ncapacitor C2 (a, gnd) 4p7\ncapacitor C3 (a, gnd) 4µ7\ncapacitor C4 (a, gnd) 4u7\n",
    );
    let values: Vec<f64> = c.parts[1..]
        .iter()
        .map(|p| p.kind.passive_value().unwrap().0)
        .collect();
    assert_eq!(values, [2.2e-9, 4.7e-12, 4.7e-6, 4.7e-6]);
}

#[test]
fn value_codes_equal_decimal_forms_exactly() {
    assert_eq!(resistance("4k7"), resistance("4.7k"));
    assert_eq!(resistance("4.7k"), resistance("4700"));
    assert_eq!(resistance("0R47"), resistance("470m"));
}

#[test]
fn r_code_means_ohms() {
    let d = super::diagnostics("vsrc V (a, gnd) 1 V\ncapacitor C (a, gnd) 0R47\n");
    assert!(d[0].message.contains("capacitance"), "{d:?}");
    assert_eq!(
        d[0].expected.as_deref(),
        Some("expected a capacitance (F), found Ω")
    );
}

#[test]
fn units_of_every_kind() {
    let c = ok("vsrc V (a, gnd) 100 mV bias 2 V rs 50 Ω\n\
                isrc I (gnd, a) 2 mA bias 1 mA rp 1 MΩ\n\
                capacitor C (a, gnd) 100 nF rated 25 V\n\
                inductor L (a, gnd) 1.5 mH\n\
                vccs G (b, gnd) from (a, gnd) gm 40 mS\n\
                resistor RB (b, gnd) 1k\n\
                opamp U (o) from (a, o) gain 1e5 gbw 1 MHz swing -12 V .. 12 V\n");
    assert!(
        matches!(c.parts[0].kind, PartKind::VoltageSource { amplitude: Some(a), bias: Some(2.0), rs: Some(50.0), .. } if a == 0.1)
    );
    assert!(
        matches!(c.parts[1].kind, PartKind::CurrentSource { amplitude: Some(a), rp: Some(r), .. } if a == 2e-3 && r == 1e6)
    );
    assert!(
        matches!(c.parts[2].kind, PartKind::Capacitor { value, rated: Some(25.0), polar: false, .. } if value == 100e-9)
    );
    assert!(matches!(c.parts[3].kind, PartKind::Inductor { value, .. } if value == 1.5e-3));
    assert!(matches!(c.parts[4].kind, PartKind::Vccs { gm, .. } if gm == 40e-3));
    assert!(
        matches!(c.parts[6].kind, PartKind::OpAmp { gain: Some(g), gbw: Some(f), swing: Some((-12.0, 12.0)), .. } if g == 1e5 && f == 1e6)
    );
}

#[test]
fn percent_degree_and_decibel_units() {
    let c = ok(
        "vsrc V (a, gnd) 1 V phase 45°\nvsrc W (b, gnd) 1 V phase 30 deg\nresistor R (a, b) 1k tol 5 %\ndrive V\n",
    );
    assert!(matches!(
        c.parts[0].kind,
        PartKind::VoltageSource {
            phase_deg: 45.0,
            ..
        }
    ));
    assert!(matches!(
        c.parts[1].kind,
        PartKind::VoltageSource {
            phase_deg: 30.0,
            ..
        }
    ));
    assert!(
        matches!(c.parts[2].kind, PartKind::Resistor { tol: Some(t), .. } if t == Tolerance::symmetric(0.05))
    );
}

#[test]
fn typographic_minus() {
    let c =
        ok("vsrc V (a, gnd) 1 V bias \u{2212}5 V\nresistor R (a, gnd) 1k tol \u{2212}5% .. +10%\n");
    assert!(matches!(
        c.parts[0].kind,
        PartKind::VoltageSource {
            bias: Some(-5.0),
            ..
        }
    ));
    assert!(matches!(
        c.parts[1].kind,
        PartKind::Resistor {
            tol: Some(Tolerance {
                lower: -0.05,
                upper: 0.1
            }),
            ..
        }
    ));
    assert_eq!(plain("2 \u{2212} 3"), -1.0);
}

#[test]
fn expressions_precedence_and_functions() {
    assert_eq!(plain("1 + 2 * 3"), 7.0);
    assert_eq!(plain("(1 + 2) * 3"), 9.0);
    assert_eq!(plain("2 ^ 3 ^ 2"), 512.0, "power is right-associative");
    assert_eq!(plain("-2 ^ 2"), -4.0, "power binds tighter than the sign");
    assert_eq!(plain("2 ^ -1"), 0.5);
    assert_eq!(plain("10 / 4 / 5"), 0.5, "division is left-associative");
    assert_eq!(plain("8 - 2 - 1"), 5.0);
    close(plain("pi"), std::f64::consts::PI);
    assert_eq!(plain("sqrt(16)"), 4.0);
    close(plain("exp(1)"), std::f64::consts::E);
    close(plain("ln(exp(2))"), 2.0);
    assert_eq!(plain("log10(1000)"), 3.0);
    assert_eq!(plain("abs(-3)"), 3.0);
    assert_eq!(plain("min(3, 2)"), 2.0);
    assert_eq!(plain("max(3, 2 * 2)"), 4.0);
}

#[test]
fn dimensions_through_expressions() {
    // Ω·F = s and 1/(2π·Ω·Hz) = F (the time constant and cutoff of an RC section).
    let c = ok(
        "let r_in = 100 kΩ\nlet f_lo = 12 Hz\nlet c_in = 1 / (2 * pi * r_in * f_lo)\n\
                vsrc V (a, gnd) 1 V\ncapacitor C (a, b) c_in\nresistor R (b, gnd) r_in\n",
    );
    let c_in = c.parts[1].kind.passive_value().unwrap().0;
    close(c_in, 1.0 / (2.0 * std::f64::consts::PI * 100e3 * 12.0));
    // sqrt halves exponents: sqrt(H / F) is Ω.
    let c = ok("let z = sqrt(1 mH / 10 nF)\nvsrc V (a, gnd) 1 V\nresistor R (a, gnd) z\n");
    close(
        c.parts[1].kind.passive_value().unwrap().0,
        (1e-3f64 / 10e-9).sqrt(),
    );
    // A bare literal is unknown and unchecked; the product with one is unknown too.
    ok("let r = 10k\nlet x = r * 2 Hz\nvsrc V (a, gnd) 1 V\nresistor R (a, gnd) x\n");
    // Ω = V / A.
    ok("vsrc V (a, gnd) 1 V\nresistor R (a, gnd) (5 V / 1 mA)\n");
}

#[test]
fn let_values_reach_parts() {
    let c = ok("let r = 22k\nvsrc V (a, gnd) 1 V\nresistor R (a, gnd) (2 * r) tol 1%\n");
    assert_eq!(c.parts[1].kind.passive_value().unwrap().0, 44e3);
}

#[test]
fn overrides_replace_lets() {
    let options = crate::CompileOptions {
        overrides: vec![("r".into(), "47k".into())],
    };
    let c = crate::compile(
        "let r = 22k\nvsrc V (a, gnd) 1 V\nresistor R (a, gnd) r\n",
        &options,
    )
    .circuit
    .unwrap();
    assert_eq!(c.parts[1].kind.passive_value().unwrap().0, 47e3);
}

#[test]
fn tolerances_symmetric_and_asymmetric() {
    let c = ok(
        "vsrc V (a, gnd) 1 V\nresistor R (a, gnd) 1k tol 1%\ncapacitor C (a, gnd) 1u tol -20% .. +80%\ninductor L (a, gnd) 1m tol 0.1\n",
    );
    assert!(
        matches!(c.parts[1].kind, PartKind::Resistor { tol: Some(t), .. } if t == Tolerance::symmetric(0.01))
    );
    assert!(matches!(
        c.parts[2].kind,
        PartKind::Capacitor {
            tol: Some(Tolerance {
                lower: -0.2,
                upper: 0.8
            }),
            ..
        }
    ));
    assert!(
        matches!(c.parts[3].kind, PartKind::Inductor { tol: Some(t), .. } if t == Tolerance::symmetric(0.1))
    );
}

#[test]
fn polar_and_rated() {
    let c = ok("vsrc V (a, gnd) 1 V\ncapacitor C (a, gnd) 10u rated 25 V polar\n");
    assert!(matches!(
        c.parts[1].kind,
        PartKind::Capacitor {
            rated: Some(25.0),
            polar: true,
            ..
        }
    ));
}

#[test]
fn sources_with_and_without_amplitude() {
    let c = ok(
        "vsrc V (a, gnd) bias 11 V\nvsrc W (b, gnd) phase 90 deg\nisrc I (a, b) 1 mA\nresistor R (a, gnd) 1k\nresistor R2 (b, gnd) 1k\n",
    );
    assert!(matches!(
        c.parts[0].kind,
        PartKind::VoltageSource {
            amplitude: None,
            bias: Some(11.0),
            ..
        }
    ));
    assert!(matches!(
        c.parts[1].kind,
        PartKind::VoltageSource {
            amplitude: None,
            phase_deg: 90.0,
            ..
        }
    ));
    assert!(c.parts[2].kind.is_ac_source());
    assert_eq!(c.drive_source().unwrap().index(), 2);
}

#[test]
fn controlled_sources_and_opamps() {
    let c = ok(
        "vsrc V (a, gnd) 1 V\nresistor R (a, gnd) 1k\nvcvs E (b, gnd) from (a, gnd) gain -2\nresistor RB (b, gnd) 1k\n\
                opamp U1 (o) from (a, o)\nopamp U2 (p) from (a, p) gain 1e5\n",
    );
    assert!(matches!(c.parts[2].kind, PartKind::Vcvs { gain: -2.0, .. }));
    assert!(matches!(
        c.parts[4].kind,
        PartKind::OpAmp {
            gain: None,
            gbw: None,
            swing: None,
            ..
        }
    ));
    assert!(
        matches!(c.parts[5].kind, PartKind::OpAmp { gain: Some(g), gbw: None, .. } if g == 1e5)
    );
}

#[test]
fn drive_and_title() {
    let c = ok(
        "title \"a \\\"quoted\\\" title # not a comment\"\nvsrc V (a, gnd) 1 V\nvsrc W (b, gnd) 1 V\nresistor R (a, b) 1k\ndrive W\n",
    );
    assert_eq!(
        c.title.as_deref(),
        Some("a \"quoted\" title # not a comment")
    );
    assert_eq!(c.drive.unwrap().index(), 1);
}

#[test]
fn comments_and_blank_lines() {
    let c = ok(
        "# header\n\n   \nvsrc V (a, gnd) 1 V   # the source\r\nresistor R (a, gnd) 1k\t# tab\n",
    );
    assert_eq!(c.parts.len(), 2);
}

#[test]
fn blocks_with_pins_and_defaults() {
    let c = ok(
        "block hp_stage (a, b)  c_hp = 10n, r_hp = 10k\n  capacitor C (a, b) c_hp\n  resistor  R (b, gnd) r_hp\nend\n\
                vsrc V (in, gnd) 1 V\nuse hp_stage S1 (in, n1)\nuse hp_stage S2 (n1, out) r_hp = 22k\n",
    );
    let names: Vec<&str> = c.parts.iter().map(|p| p.name.as_str()).collect();
    assert_eq!(names, ["V", "S1.C", "S1.R", "S2.C", "S2.R"]);
    assert_eq!(c.parts[2].kind.passive_value().unwrap().0, 10e3);
    assert_eq!(c.parts[4].kind.passive_value().unwrap().0, 22e3);
    assert_eq!(c.nodes, ["gnd", "in", "n1", "out"]);
}

#[test]
fn blocks_use_blocks_with_qualified_names() {
    let c = ok(
        "block rc (a, b)\n  resistor R (a, m) 1k\n  capacitor C (m, b) 1n\nend\n\
                block two (x, y)\n  use rc s (x, k)\n  use rc t (k, y)\nend\n\
                vsrc V (in, gnd) 1 V\nuse two T (in, gnd)\n",
    );
    let names: Vec<&str> = c.parts.iter().map(|p| p.name.as_str()).collect();
    assert_eq!(names, ["V", "T.s.R", "T.s.C", "T.t.R", "T.t.C"]);
    assert!(c.node("T.s.m").is_some() && c.node("T.k").is_some());
}

#[test]
fn chains_make_stages_and_junctions() {
    let c = ok(
        "block hp (a, b) r = 10k\n  capacitor C (a, b) 10n\n  resistor R (b, gnd) r\nend\n\
                vsrc V (in, gnd) 1 V\nchain 4 hp LAD (in, out) r = 47k\n",
    );
    assert_eq!(c.parts.len(), 9);
    assert_eq!(c.parts[3].name, "LAD.s2.C");
    assert_eq!(c.parts[4].name, "LAD.s2.R");
    assert!(
        matches!(c.parts[3].kind, PartKind::Capacitor { a, b, .. } if c.node_name(a) == "LAD.j1" && c.node_name(b) == "LAD.j2")
    );
    assert!(matches!(c.parts[7].kind, PartKind::Capacitor { b, .. } if c.node_name(b) == "out"));
    assert_eq!(c.parts[8].kind.passive_value().unwrap().0, 47e3);
    assert!(c.node("LAD.j3").is_some() && c.node("LAD.j4").is_none());
}

#[test]
fn sweeps_of_all_three_kinds() {
    let base = "vsrc V (a, gnd) 1 V\nresistor R (a, gnd) 1k\n";
    let c = ok(&format!("{base}sweep 10 Hz to 1 MHz per_decade 40\n"));
    assert_eq!(
        c.sweep,
        Some(Sweep::Log {
            start: 10.0,
            stop: 1e6,
            per_decade: 40
        })
    );
    let c = ok(&format!("{base}sweep 0 Hz to 20 kHz every 100 Hz\n"));
    assert_eq!(
        c.sweep,
        Some(Sweep::Linear {
            start: 0.0,
            stop: 20e3,
            step: 100.0
        })
    );
    let c = ok(&format!("{base}sweep at 50 Hz, 1 kHz, 20 kHz\n"));
    assert_eq!(c.sweep, Some(Sweep::List(vec![50.0, 1e3, 20e3])));
}

#[test]
fn probes_of_every_kind() {
    let c = ok(
        "vsrc V (tip, gnd) 1 V\nresistor R1 (tip, mid) 1k\nresistor R2 (mid, out) 1k\nresistor R3 (out, gnd) 1k\n\
                probe out ref 1 kHz\nprobe g = out / tip\nprobe d = out - mid\nprobe i1 = current R1\nprobe zin\nprobe zo = zout out\n",
    );
    let kinds: Vec<&ProbeKind> = c.probes.iter().map(|p| &p.kind).collect();
    let n = |s: &str| c.node(s).unwrap();
    assert_eq!(
        kinds,
        [
            &ProbeKind::Node(n("out")),
            &ProbeKind::Ratio {
                num: n("out"),
                den: n("tip")
            },
            &ProbeKind::Difference {
                pos: n("out"),
                neg: n("mid")
            },
            &ProbeKind::Current(c.part("R1").unwrap()),
            &ProbeKind::InputImpedance,
            &ProbeKind::OutputImpedance(n("out")),
        ]
    );
    let names: Vec<&str> = c.probes.iter().map(|p| p.name.as_str()).collect();
    assert_eq!(names, ["out", "g", "d", "i1", "zin", "zo"]);
    assert_eq!(c.probes[0].reference, Some(1e3));
}

#[test]
fn expectations_of_every_metric_and_comparison() {
    let c = ok(
        "vsrc V (tip, gnd) 1 V\nresistor R1 (tip, out) 1k\ncapacitor C1 (out, gnd) 1u\nprobe out\nprobe g = out / tip\nprobe zin\n\
        expect cutoff(out) within 14 .. 18 Hz\n\
        expect cutoff(out, level -6 dB) = 2.5 kHz ± 2 %\n\
        expect gain(g, 1 kHz) >= 20 dB\n\
        expect phase(out, 16 Hz) = 45 deg +- 3 deg\n\
        expect slope(out, 1 Hz, 4 Hz) = 20 dB/dec ± 1.5\n\
        expect slope(out, 1 kHz, 4 kHz) < -6 dB/oct\n\
        expect impedance(zin, 1 kHz) >= 10 kΩ\n\
        expect bias(out) within -5 .. 5 mV\n\
        expect bias(C1) <= 20 V\n\
        expect cutoff_low(out, ref 1 kHz) > 1 Hz\n\
        expect cutoff_high(out) < 1 MHz\n\
        expect bandwidth(out) > 1 Hz\n\
        expect passband_gain(out) = 0 dB ± 0.1 dB\n\
        expect resonance(out) > 1 Hz\n\
        expect q(out) < 0.8\n\
        expect peak_gain(out) < 1 dB\n\
        expect peak_freq(out) < 1 Hz\n\
        expect peaking(out) < 0.5 dB\n\
        expect notch_freq(out) > 1 Hz\n\
        expect notch_depth(out) > 20 dB\n\
        expect group_delay(out, 100 Hz) < 2 ms\n\
        expect gain(current R1, 1 kHz) < 0 dB\n\
        expect bias(tip) > 0 V\n",
    );
    let e = &c.expectations;
    assert_eq!(e.len(), 23);
    assert_eq!(
        e[0].comparison,
        Comparison::Within {
            low: 14.0,
            high: 18.0
        }
    );
    assert_eq!(e[0].unit, Unit::Hertz);
    assert_eq!(e[0].metric.target, Target::Probe(crate::ProbeId(0)));
    assert_eq!(e[1].metric.options.level_db, Some(-6.0));
    assert_eq!(
        e[1].comparison,
        Comparison::Equal {
            value: 2500.0,
            deviation: Deviation::Relative(0.02)
        }
    );
    assert_eq!(e[2].metric.kind, MetricKind::Gain { freq: 1e3 });
    assert_eq!(e[2].comparison, Comparison::GreaterEqual(20.0));
    assert_eq!(
        e[3].comparison,
        Comparison::Equal {
            value: 45.0,
            deviation: Deviation::Absolute(3.0)
        }
    );
    assert_eq!(e[4].metric.kind, MetricKind::Slope { f1: 1.0, f2: 4.0 });
    assert_eq!(
        e[4].comparison,
        Comparison::Equal {
            value: 20.0,
            deviation: Deviation::Absolute(1.5)
        }
    );
    // 1 dB/oct = log2(10) dB/dec ≈ 3.3219 dB/dec (10 = 2^3.3219…).
    assert!(
        matches!(e[5].comparison, Comparison::Less(v) if (v + 6.0 * 10f64.log2()).abs() < 1e-12)
    );
    assert_eq!(e[5].unit, Unit::DecibelPerDecade);
    assert_eq!(e[6].unit, Unit::Ohm);
    assert_eq!(
        e[7].comparison,
        Comparison::Within {
            low: -5e-3,
            high: 5e-3
        }
    );
    assert_eq!(e[8].metric.target, Target::Part(c.part("C1").unwrap()));
    assert_eq!(e[9].metric.options.reference, Some(1e3));
    assert_eq!(e[14].unit, Unit::Dimensionless);
    assert_eq!(e[20].unit, Unit::Second);
    assert_eq!(e[21].metric.target, Target::Current(c.part("R1").unwrap()));
    assert_eq!(e[22].metric.target, Target::Node(c.node("tip").unwrap()));
    assert_eq!(e[0].text, "cutoff(out) within 14 Hz .. 18 Hz");
}

#[test]
fn fit_values() {
    let c = ok(
        "vsrc V (a, gnd) 1 V\nresistor R (a, b) ? in 1k .. 100k\ncapacitor C (b, gnd) ?\ninductor L (a, gnd) ?\nresistor R2 (b, gnd) ?\n\
                probe b\nexpect cutoff(b) = 1 kHz\n",
    );
    assert!(
        matches!(c.parts[1].kind, PartKind::Resistor { value, fit: Some(FitRange { low: 1e3, high: 1e5 }), .. } if (value - 1e4).abs() < 1e-6)
    );
    assert!(matches!(
        c.parts[2].kind,
        PartKind::Capacitor {
            fit: Some(FitRange {
                low: 1e-15,
                high: 1.0
            }),
            ..
        }
    ));
    assert!(matches!(
        c.parts[3].kind,
        PartKind::Inductor {
            fit: Some(FitRange {
                low: 1e-9,
                high: 1e3
            }),
            ..
        }
    ));
    assert!(matches!(
        c.parts[4].kind,
        PartKind::Resistor {
            fit: Some(FitRange {
                low: 1.0,
                high: 1e9
            }),
            ..
        }
    ));
    assert_eq!(
        c.expectations[0].comparison,
        Comparison::Equal {
            value: 1e3,
            deviation: Deviation::Relative(0.0)
        }
    );
}

#[test]
fn qualified_names_in_flat_text() {
    let c = ok(
        "vsrc V (in, gnd) 1 V\nresistor S1.R (in, S1.b) 1k\ncapacitor S1.C (S1.b, gnd) 1n\nprobe S1.b\nprobe i = current S1.R\ndrive V\nexpect bias(S1.C) < 1 V\n",
    );
    assert_eq!(c.nodes[2], "S1.b");
    assert_eq!(c.probes[1].kind, ProbeKind::Current(crate::PartId(1)));
}

#[test]
fn ground_is_node_zero() {
    let c = ok("vsrc V (a, gnd) 1 V\nresistor R (a, gnd) 1k\n");
    assert!(matches!(
        c.parts[1].kind,
        PartKind::Resistor { b: NodeId::GND, .. }
    ));
}

#[test]
fn spans_point_at_lines() {
    let source = "vsrc V (a, gnd) 1 V\n  resistor R (a, gnd) 1k  # comment\nprobe a\n";
    let c = ok(source);
    assert_eq!(
        &source[c.parts[1].span.start..c.parts[1].span.end],
        "resistor R (a, gnd) 1k"
    );
    assert_eq!(
        &source[c.probes[0].span.start..c.probes[0].span.end],
        "probe a"
    );
}
