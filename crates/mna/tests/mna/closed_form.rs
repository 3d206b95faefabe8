//! Closed-form circuits; each check names the textbook formula it uses.

use std::f64::consts::{FRAC_1_SQRT_2, PI};

use num_complex::Complex64;
use rolloff_mna::Analyzer;
use rolloff_netlist::{Circuit, PartKind, ProbeKind};

use crate::{check, jw, opamp};

const VALUES_R: [f64; 5] = [1e-3, 1.0, 1e3, 1e6, 1e12];
const VALUES_C: [f64; 5] = [1e-15, 1e-12, 1e-9, 1e-3, 1.0];
const VALUES_L: [f64; 4] = [1e-9, 1e-6, 1e-3, 1e3];
const FREQS: [f64; 6] = [1e-3, 1.0, 50.0, 1e3, 1e6, 1e10];

fn rc(r: f64, c: f64, high_pass: bool) -> Circuit {
    let b = Circuit::builder().vsrc("V1", "in", "gnd", 1.0);
    let b = if high_pass {
        b.capacitor("C1", "in", "out", c)
            .resistor("R1", "out", "gnd", r)
    } else {
        b.resistor("R1", "in", "out", r)
            .capacitor("C1", "out", "gnd", c)
    };
    b.build().unwrap()
}

#[test]
fn rc_low_pass_over_the_value_range() {
    // First-order RC low-pass: H = 1 / (1 + jωRC), fc = 1/(2πRC) (any circuits textbook).
    for r in VALUES_R {
        for c in VALUES_C {
            let circuit = rc(r, c, false);
            let out = ProbeKind::Node(circuit.node("out").unwrap());
            let mut a = Analyzer::new(&circuit).unwrap();
            for f in FREQS {
                let want = 1.0 / (1.0 + jw(f) * r * c);
                check(a.transfer(&out, f).unwrap(), want, 1e-9);
            }
            let fc = 1.0 / (2.0 * PI * r * c);
            if fc.is_finite() && fc < 1e12 {
                let h = a.transfer(&out, fc).unwrap();
                assert!((h.norm() - FRAC_1_SQRT_2).abs() < 1e-9, "{r} {c}: {h}");
            }
            assert!(a.warnings().is_empty(), "{:?}", a.warnings());
        }
    }
}

#[test]
fn rc_high_pass_over_the_value_range() {
    // First-order RC high-pass: H = jωRC / (1 + jωRC), fc = 1/(2πRC) (any circuits textbook).
    for r in VALUES_R {
        for c in VALUES_C {
            let circuit = rc(r, c, true);
            let out = ProbeKind::Node(circuit.node("out").unwrap());
            let mut a = Analyzer::new(&circuit).unwrap();
            for f in FREQS {
                let s = jw(f) * r * c;
                check(a.transfer(&out, f).unwrap(), s / (1.0 + s), 1e-9);
            }
            let fc = 1.0 / (2.0 * PI * r * c);
            if fc < 1e12 {
                let h = a.transfer(&out, fc).unwrap();
                assert!((h.arg().to_degrees() - 45.0).abs() < 1e-7, "{h}");
            }
        }
    }
}

#[test]
fn loaded_divider_with_source_resistance() {
    // Voltage divider with a load: H = (R2‖RL) / (Rs + R1 + R2‖RL) (Ohm's law; the EMF
    // before rs is the reference, so the source loading is in the result).
    let (rs, r1, r2, rl) = (50.0, 10e3, 4.7e3, 22e3);
    let mut b = Circuit::builder();
    let (inp, neg) = (b.node("in"), b.node("gnd"));
    let circuit = b
        .part(
            "V1",
            PartKind::VoltageSource {
                pos: inp,
                neg,
                amplitude: Some(2.0),
                phase_deg: 30.0,
                bias: None,
                rs: Some(rs),
            },
        )
        .resistor("R1", "in", "out", r1)
        .resistor("R2", "out", "gnd", r2)
        .resistor("RL", "out", "gnd", rl)
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    let out = circuit.node("out").unwrap();
    let par = r2 * rl / (r2 + rl);
    let want = par / (rs + r1 + par);
    check(
        a.transfer(&ProbeKind::Node(out), 1e3).unwrap(),
        Complex64::new(want, 0.0),
        1e-12,
    );
    // The drive sees R1 + R2‖RL (its own rs excluded).
    check(
        a.transfer(&ProbeKind::InputImpedance, 1e3).unwrap(),
        Complex64::new(r1 + par, 0.0),
        1e-12,
    );
    // Thevenin output impedance at `out`: (Rs + R1)‖R2‖RL.
    let zo = 1.0 / (1.0 / (rs + r1) + 1.0 / r2 + 1.0 / rl);
    check(
        a.transfer(&ProbeKind::OutputImpedance(out), 1e3).unwrap(),
        Complex64::new(zo, 0.0),
        1e-12,
    );
    // Superposed: the absolute phasor, 2 V at 30°.
    check(
        a.superposed(&ProbeKind::Node(out), 1e3).unwrap(),
        Complex64::from_polar(2.0 * want, 30f64.to_radians()),
        1e-12,
    );
    // Current through R1 per volt of drive: 1 / (Rs + R1 + R2‖RL).
    let i1 = ProbeKind::Current(circuit.part("R1").unwrap());
    check(
        a.transfer(&i1, 1e3).unwrap(),
        Complex64::new(1.0 / (rs + r1 + par), 0.0),
        1e-12,
    );
    // The source's own branch current runs + to − inside it: minus the delivered current.
    let iv = ProbeKind::Current(circuit.part("V1").unwrap());
    check(
        a.transfer(&iv, 1e3).unwrap(),
        Complex64::new(-1.0 / (rs + r1 + par), 0.0),
        1e-12,
    );
    // Ratio and difference probes.
    let ratio = ProbeKind::Ratio { num: out, den: inp };
    check(
        a.transfer(&ratio, 1e3).unwrap(),
        Complex64::new(par / (r1 + par), 0.0),
        1e-12,
    );
    let diff = ProbeKind::Difference { pos: inp, neg: out };
    check(
        a.transfer(&diff, 1e3).unwrap(),
        Complex64::new(r1 / (rs + r1 + par), 0.0),
        1e-12,
    );
}

fn series_rlc(r: f64, l: f64, c: f64) -> Circuit {
    Circuit::builder()
        .vsrc("V1", "in", "gnd", 1.0)
        .resistor("R1", "in", "a", r)
        .inductor("L1", "a", "b", l)
        .capacitor("C1", "b", "gnd", c)
        .build()
        .unwrap()
}

#[test]
fn series_rlc_resonance_and_bandwidth() {
    // Series RLC: I = V / (R + jωL + 1/(jωC)); resonance f0 = 1/(2π√(LC)) where I = V/R;
    // the −3 dB points are f = (∓R/(2L) + √((R/(2L))² + 1/(LC)))/(2π), bandwidth
    // R/(2πL) (standard series resonance results).
    for l in VALUES_L {
        for c in [1e-12, 1e-9, 1e-6] {
            let r = 10.0 * (l / c).sqrt() / 7.0;
            let circuit = series_rlc(r, l, c);
            let i = ProbeKind::Current(circuit.part("L1").unwrap());
            let vc = ProbeKind::Node(circuit.node("b").unwrap());
            let mut a = Analyzer::new(&circuit).unwrap();
            let f0 = 1.0 / (2.0 * PI * (l * c).sqrt());
            check(
                a.transfer(&i, f0).unwrap(),
                Complex64::new(1.0 / r, 0.0),
                1e-9,
            );
            for f in [f0 / 10.0, f0 * 0.9, f0 * 3.0] {
                let s = jw(f);
                check(
                    a.transfer(&i, f).unwrap(),
                    1.0 / (r + s * l + 1.0 / (s * c)),
                    1e-9,
                );
                check(
                    a.transfer(&vc, f).unwrap(),
                    1.0 / (1.0 + s * r * c + s * s * l * c),
                    1e-9,
                );
            }
            let alpha = r / (2.0 * l);
            let root = (alpha * alpha + 1.0 / (l * c)).sqrt();
            let (f1, f2) = ((root - alpha) / (2.0 * PI), (root + alpha) / (2.0 * PI));
            assert!(((f2 - f1) - r / (2.0 * PI * l)).abs() <= 1e-9 * f2);
            for f in [f1, f2] {
                let m = a.transfer(&i, f).unwrap().norm() * r;
                assert!((m - FRAC_1_SQRT_2).abs() < 1e-9, "{m}");
            }
        }
    }
}

#[test]
fn parallel_rlc_resonance_and_bandwidth() {
    // Parallel RLC fed by a current source: Z = 1/(1/R + jωC + 1/(jωL)); Z(f0) = R at
    // f0 = 1/(2π√(LC)); −3 dB points f = (∓1/(2RC) + √((1/(2RC))² + 1/(LC)))/(2π),
    // bandwidth 1/(2πRC) (standard parallel resonance results).
    for l in VALUES_L {
        for c in [1e-12, 1e-9, 1e-6] {
            let r = 5.0 * (l / c).sqrt();
            let circuit = Circuit::builder()
                .isrc("I1", "gnd", "t", 1.0)
                .resistor("R1", "t", "gnd", r)
                .inductor("L1", "t", "gnd", l)
                .capacitor("C1", "t", "gnd", c)
                .build()
                .unwrap();
            let t = ProbeKind::Node(circuit.node("t").unwrap());
            let mut a = Analyzer::new(&circuit).unwrap();
            let f0 = 1.0 / (2.0 * PI * (l * c).sqrt());
            check(a.transfer(&t, f0).unwrap(), Complex64::new(r, 0.0), 1e-9);
            check(
                a.transfer(&ProbeKind::InputImpedance, f0).unwrap(),
                Complex64::new(r, 0.0),
                1e-9,
            );
            for f in [f0 / 7.0, f0 * 1.1, f0 * 20.0] {
                let s = jw(f);
                let z = 1.0 / (1.0 / r + s * c + 1.0 / (s * l));
                check(a.transfer(&t, f).unwrap(), z, 1e-9);
            }
            let a2 = 1.0 / (2.0 * r * c);
            let root = (a2 * a2 + 1.0 / (l * c)).sqrt();
            for f in [(root - a2) / (2.0 * PI), (root + a2) / (2.0 * PI)] {
                let m = a.transfer(&t, f).unwrap().norm() / r;
                assert!((m - FRAC_1_SQRT_2).abs() < 1e-9, "{m}");
            }
        }
    }
}

fn inverting(rf: f64, rg: f64, gain: Option<f64>, gbw: Option<f64>, swap: bool) -> Circuit {
    let mut b = Circuit::builder();
    let (out, fb, gnd) = (b.node("out"), b.node("fb"), b.node("gnd"));
    let (p, m) = if swap { (fb, gnd) } else { (gnd, fb) };
    b.vsrc("V1", "in", "gnd", 1.0)
        .resistor("RG", "in", "fb", rg)
        .resistor("RF", "fb", "out", rf)
        .part("U1", opamp(out, p, m, gain, gbw))
        .build()
        .unwrap()
}

fn non_inverting(rf: f64, rg: f64, gain: Option<f64>, gbw: Option<f64>) -> Circuit {
    let mut b = Circuit::builder();
    let (out, fb, inp) = (b.node("out"), b.node("fb"), b.node("in"));
    b.vsrc("V1", "in", "gnd", 1.0)
        .part("U1", opamp(out, inp, fb, gain, gbw))
        .resistor("RF", "out", "fb", rf)
        .resistor("RG", "fb", "gnd", rg)
        .build()
        .unwrap()
}

#[test]
fn inverting_stage() {
    // Ideal inverting amplifier: H = −RF/RG; with finite open-loop gain A,
    // H = −(RF/RG) · 1/(1 + (1 + RF/RG)/A) (standard op-amp feedback analysis).
    let (rf, rg) = (100e3, 4.7e3);
    let circuit = inverting(rf, rg, None, None, false);
    let out = ProbeKind::Node(circuit.node("out").unwrap());
    let mut a = Analyzer::new(&circuit).unwrap();
    assert!(a.warnings().is_empty(), "{:?}", a.warnings());
    for f in [0.0, 1.0, 1e5] {
        check(
            a.transfer(&out, f).unwrap(),
            Complex64::new(-rf / rg, 0.0),
            1e-12,
        );
    }
    // The virtual ground: the drive sees RG.
    check(
        a.transfer(&ProbeKind::InputImpedance, 1e3).unwrap(),
        Complex64::new(rg, 0.0),
        1e-12,
    );
    let big_a = 2e5;
    let circuit = inverting(rf, rg, Some(big_a), None, false);
    let mut a = Analyzer::new(&circuit).unwrap();
    let want = -(rf / rg) / (1.0 + (1.0 + rf / rg) / big_a);
    check(
        a.transfer(&out, 1e3).unwrap(),
        Complex64::new(want, 0.0),
        1e-12,
    );
}

#[test]
fn non_inverting_stage_ideal_finite_and_single_pole() {
    // Non-inverting amplifier: ideal H = 1 + RF/RG; with gain A(s),
    // H = A/(1 + Aβ), β = RG/(RF + RG) (standard op-amp feedback analysis); the
    // single-pole model A(s) = A0/(1 + s/ωp) with ωp = 2π·gbw/A0.
    let (rf, rg) = (47e3, 4.7e3);
    let beta = rg / (rf + rg);
    let circuit = non_inverting(rf, rg, None, None);
    let out = ProbeKind::Node(circuit.node("out").unwrap());
    let mut a = Analyzer::new(&circuit).unwrap();
    check(
        a.transfer(&out, 10.0).unwrap(),
        Complex64::new(1.0 + rf / rg, 0.0),
        1e-12,
    );
    // Zout of an ideal op-amp stage is 0.
    let zo = a
        .transfer(
            &ProbeKind::OutputImpedance(circuit.node("out").unwrap()),
            1e3,
        )
        .unwrap();
    assert!(zo.norm() < 1e-9, "{zo}");

    let (a0, gbw) = (1e5, 1e6);
    let circuit = non_inverting(rf, rg, Some(a0), Some(gbw));
    let mut a = Analyzer::new(&circuit).unwrap();
    let wp = 2.0 * PI * gbw / a0;
    for f in [1.0, 10.0, 1e3, 1e4, 1e5, 1e6] {
        let ga = a0 / (1.0 + jw(f) / wp);
        check(a.transfer(&out, f).unwrap(), ga / (1.0 + ga * beta), 1e-10);
    }
    // Closed-loop bandwidth ≈ gbw·β (gain-bandwidth trade; exact: (1 + A0β)·gbw/A0).
    let f3 = (1.0 + a0 * beta) * gbw / a0;
    let h0 = a.transfer(&out, 0.0).unwrap().norm();
    let h3 = a.transfer(&out, f3).unwrap().norm();
    assert!((h3 / h0 - FRAC_1_SQRT_2).abs() < 1e-9);
    assert_eq!(a.part_value(circuit.part("U1").unwrap()), Some(a0));
}

#[test]
fn vcvs_stage() {
    // A VCVS behind a divider: H = k · R2/(R1 + R2), independent of the load (ideal
    // controlled-source definition).
    let (r1, r2, k) = (1e3, 3e3, -2.5);
    let mut b = Circuit::builder();
    let (x, out, gnd) = (b.node("x"), b.node("out"), b.node("gnd"));
    let circuit = b
        .vsrc("V1", "in", "gnd", 1.0)
        .resistor("R1", "in", "x", r1)
        .resistor("R2", "x", "gnd", r2)
        .part(
            "E1",
            PartKind::Vcvs {
                out_pos: out,
                out_neg: gnd,
                in_pos: x,
                in_neg: gnd,
                gain: k,
            },
        )
        .resistor("RL", "out", "gnd", 100.0)
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    let want = Complex64::new(k * r2 / (r1 + r2), 0.0);
    check(a.transfer(&ProbeKind::Node(out), 1e3).unwrap(), want, 1e-12);
    // The VCVS branch current runs out+ to out− inside it: −v(out)/RL.
    let ie = ProbeKind::Current(circuit.part("E1").unwrap());
    check(a.transfer(&ie, 1e3).unwrap(), -want / 100.0, 1e-12);
}

#[test]
fn vccs_into_a_resistor() {
    // A VCCS pushes gm·v(in) into its second output node: v(out) = gm·R·v(in) when the
    // current is pushed into `out` (transconductance definition).
    let (gm, r) = (2e-3, 4.7e3);
    let mut b = Circuit::builder();
    let (inp, out, gnd) = (b.node("in"), b.node("out"), b.node("gnd"));
    let circuit = b
        .vsrc("V1", "in", "gnd", 1.0)
        .part(
            "G1",
            PartKind::Vccs {
                out_pos: gnd,
                out_neg: out,
                in_pos: inp,
                in_neg: gnd,
                gm,
            },
        )
        .resistor("RL", "out", "gnd", r)
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    check(
        a.transfer(&ProbeKind::Node(out), 1e3).unwrap(),
        Complex64::new(gm * r, 0.0),
        1e-12,
    );
}

#[test]
fn bias_divider_behind_a_coupling_capacitor() {
    // A DC bias divider behind a coupling capacitor: the capacitor blocks the source's
    // bias, so the node sits at VCC·R2/(R1 + R2) (common practice; divider formula).
    let mut b = Circuit::builder();
    let (sig, gnd, vcc) = (b.node("sig"), b.node("gnd"), b.node("vcc"));
    let circuit = b
        .part(
            "VS",
            PartKind::VoltageSource {
                pos: sig,
                neg: gnd,
                amplitude: Some(0.1),
                phase_deg: 0.0,
                bias: Some(3.0),
                rs: Some(600.0),
            },
        )
        .part(
            "VCC",
            PartKind::VoltageSource {
                pos: vcc,
                neg: gnd,
                amplitude: None,
                phase_deg: 0.0,
                bias: Some(12.0),
                rs: None,
            },
        )
        .capacitor("CC", "sig", "x", 1e-6)
        .resistor("R1", "vcc", "x", 100e3)
        .resistor("R2", "x", "gnd", 47e3)
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    let bias = a.bias().unwrap();
    let x = circuit.node("x").unwrap();
    let want = 12.0 * 47e3 / 147e3;
    assert!((bias.node_voltage(x) - want).abs() < 1e-12 * want);
    // The source's bias reaches `sig` undivided (no DC current through rs).
    assert!((bias.node_voltage(sig) - 3.0).abs() < 1e-12);
    let cc = circuit.part("CC").unwrap();
    assert!((bias.voltage_across(&circuit, cc).unwrap() - (3.0 - want)).abs() < 1e-12);
    assert_eq!(bias.part_current(cc), Some(0.0));
    let i1 = bias.part_current(circuit.part("R1").unwrap()).unwrap();
    assert!((i1 - 12.0 / 147e3).abs() < 1e-12 * i1);
    assert!(bias.warnings.is_empty());
    // At AC the VCC source is zeroed: the signal sees a high-pass into R1‖R2.
    let rp = 100e3 * 47e3 / 147e3;
    let f = 10.0;
    let s = jw(f);
    let zc = 1.0 / (s * 1e-6);
    check(
        a.transfer(&ProbeKind::Node(x), f).unwrap(),
        rp / (600.0 + zc + rp),
        1e-12,
    );
}

#[test]
fn frequency_zero_shorts_inductors_and_opens_capacitors() {
    // At 0 Hz an RL low-pass passes everything and an RC high-pass nothing.
    let circuit = Circuit::builder()
        .vsrc("V1", "in", "gnd", 1.0)
        .inductor("L1", "in", "a", 1e-3)
        .resistor("R1", "a", "gnd", 10.0)
        .capacitor("C1", "in", "b", 1e-6)
        .resistor("R2", "b", "gnd", 10.0)
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    let va = ProbeKind::Node(circuit.node("a").unwrap());
    let vb = ProbeKind::Node(circuit.node("b").unwrap());
    check(
        a.transfer(&va, 0.0).unwrap(),
        Complex64::new(1.0, 0.0),
        1e-15,
    );
    assert_eq!(a.transfer(&vb, 0.0).unwrap().norm(), 0.0);
}

#[test]
fn derivative_matches_the_closed_form() {
    // d/dω of 1/(1 + jωRC) is −jRC/(1 + jωRC)² (differentiation of the RC low-pass).
    let (r, c) = (1e3, 1e-7);
    let circuit = rc(r, c, false);
    let out = circuit.node("out").unwrap();
    let inp = circuit.node("in").unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    for f in [10.0, 1591.0, 1e5] {
        let s = jw(f);
        let (h, dh) = a
            .transfer_with_derivative(&ProbeKind::Node(out), f)
            .unwrap();
        check(h, 1.0 / (1.0 + s * r * c), 1e-12);
        let want = -Complex64::new(0.0, r * c) / ((1.0 + s * r * c) * (1.0 + s * r * c));
        check(dh, want, 1e-10);
        // Ratio out/in is the same function (v(in) = 1).
        let (_, dr) = a
            .transfer_with_derivative(&ProbeKind::Ratio { num: out, den: inp }, f)
            .unwrap();
        check(dr, want, 1e-10);
        // Capacitor current jωC·H: derivative jC·H + jωC·H'.
        let (_, di) = a
            .transfer_with_derivative(&ProbeKind::Current(circuit.part("C1").unwrap()), f)
            .unwrap();
        let h0 = 1.0 / (1.0 + s * r * c);
        check(di, Complex64::new(0.0, c) * h0 + s * c * want, 1e-10);
        // Zin = R + 1/(jωC): dZ/dω = −1/(jω²C) = j/(ω²C).
        let w = s.im;
        let (z, dz) = a
            .transfer_with_derivative(&ProbeKind::InputImpedance, f)
            .unwrap();
        check(z, r + 1.0 / (s * c), 1e-12);
        check(dz, Complex64::new(0.0, 1.0 / (w * w * c)), 1e-10);
        // Zout at `out` = R‖(1/(jωC)) = R/(1 + jωRC): derivative −jR²C/(1 + jωRC)².
        let (zo, dzo) = a
            .transfer_with_derivative(&ProbeKind::OutputImpedance(out), f)
            .unwrap();
        check(zo, r / (1.0 + s * r * c), 1e-12);
        check(dzo, want * r, 1e-10);
    }
}

#[test]
fn derivative_matches_a_finite_difference_on_a_resonator() {
    // Central difference of the solver's own response, as an independent check of the
    // dx/dω = −Y⁻¹(jC)x identity on a circuit with inductor branch currents.
    let circuit = series_rlc(30.0, 1e-3, 1e-6);
    let probe = ProbeKind::Node(circuit.node("b").unwrap());
    let mut a = Analyzer::new(&circuit).unwrap();
    for f in [500.0, 5033.0, 2e4] {
        let (_, d) = a.transfer_with_derivative(&probe, f).unwrap();
        let h = f * 1e-6;
        let up = a.transfer(&probe, f + h).unwrap();
        let down = a.transfer(&probe, f - h).unwrap();
        let fd = (up - down) / (2.0 * PI * 2.0 * h);
        check(d, fd, 1e-6);
    }
}

#[test]
fn set_part_value_changes_numbers_only() {
    let circuit = rc(1e3, 1e-6, false);
    let out = ProbeKind::Node(circuit.node("out").unwrap());
    let r1 = circuit.part("R1").unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    let before = a.system().entries().to_vec();
    assert_eq!(a.part_value(r1), Some(1e3));
    a.set_part_value(r1, 2e3).unwrap();
    assert_eq!(a.part_value(r1), Some(2e3));
    assert_eq!(a.system().entries(), before.as_slice());
    // Textbook RC low-pass with the new R.
    check(
        a.transfer(&out, 100.0).unwrap(),
        1.0 / (1.0 + jw(100.0) * 2e3 * 1e-6),
        1e-12,
    );
    let b = a.clone();
    assert!(matches!(
        b.circuit().parts[r1.index()].kind,
        PartKind::Resistor { value, .. } if value == 2e3
    ));
}

#[test]
fn sweep_matches_pointwise_transfers() {
    let circuit = series_rlc(10.0, 1e-3, 1e-6);
    let probes = [
        ProbeKind::Node(circuit.node("b").unwrap()),
        ProbeKind::Current(circuit.part("C1").unwrap()),
        ProbeKind::OutputImpedance(circuit.node("a").unwrap()),
    ];
    let freqs = rolloff_netlist::Sweep::Log {
        start: 10.0,
        stop: 1e6,
        per_decade: 10,
    }
    .frequencies();
    let mut a = Analyzer::new(&circuit).unwrap();
    let values = a.sweep(&probes, &freqs).unwrap();
    let mut fresh = Analyzer::new(&circuit).unwrap();
    for (p, probe) in probes.iter().enumerate() {
        for (i, &f) in freqs.iter().enumerate() {
            assert_eq!(values[p][i], fresh.transfer(probe, f).unwrap());
        }
    }
}

#[test]
fn analyzer_is_clone_and_send() {
    fn assert_send<T: Send + Clone>() {}
    assert_send::<Analyzer>();
}

#[test]
fn rl_low_pass_over_the_value_range() {
    // First-order RL low-pass: H = R / (R + jωL), fc = R/(2πL) (any circuits textbook).
    for r in VALUES_R {
        for l in [1e-9, 1e-6, 1e-3, 1.0, 1e3] {
            let circuit = Circuit::builder()
                .vsrc("V1", "in", "gnd", 1.0)
                .inductor("L1", "in", "out", l)
                .resistor("R1", "out", "gnd", r)
                .build()
                .unwrap();
            let out = ProbeKind::Node(circuit.node("out").unwrap());
            let i = ProbeKind::Current(circuit.part("L1").unwrap());
            let mut a = Analyzer::new(&circuit).unwrap();
            for f in FREQS {
                let want = r / (r + jw(f) * l);
                check(a.transfer(&out, f).unwrap(), want, 1e-9);
                check(a.transfer(&i, f).unwrap(), want / r, 1e-9);
            }
            assert!(a.warnings().is_empty(), "{:?}", a.warnings());
        }
    }
}

#[test]
fn series_rlc_at_extreme_values() {
    // Series RLC voltage across C: H = 1/(1 − ω²LC + jωRC) (standard second-order
    // result), with values at the ends of the supported ranges.
    for (r, l, c) in [
        (1e-3, 1e-9, 1e-15),
        (1e12, 1e3, 1.0),
        (1e-3, 1e3, 1e-15),
        (1e12, 1e-9, 1.0),
        (1.0, 1e3, 1.0),
    ] {
        let circuit = series_rlc(r, l, c);
        let vc = ProbeKind::Node(circuit.node("b").unwrap());
        let mut a = Analyzer::new(&circuit).unwrap();
        for f in FREQS {
            let s = jw(f);
            check(
                a.transfer(&vc, f).unwrap(),
                1.0 / (1.0 + s * r * c + s * s * l * c),
                1e-9,
            );
        }
    }
}

#[test]
fn sallen_key_low_pass_has_no_false_feedback_warning() {
    // Unity-gain Sallen–Key low-pass: H = 1 / (1 + s·C2·(R1 + R2) + s²·R1·R2·C1·C2),
    // C1 from the middle node to the output, C2 from the op-amp input to gnd (standard
    // active-filter result). Its positive feedback through C1 is weaker than the
    // follower's negative feedback, so no positive-feedback warning is due.
    let (r1, r2, c1, c2) = (10e3, 22e3, 10e-9, 4.7e-9);
    let mut b = Circuit::builder();
    let (out, p) = (b.node("out"), b.node("p"));
    let circuit = b
        .vsrc("V1", "in", "gnd", 1.0)
        .resistor("R1", "in", "m", r1)
        .resistor("R2", "m", "p", r2)
        .capacitor("C1", "m", "out", c1)
        .capacitor("C2", "p", "gnd", c2)
        .part("U1", opamp(out, p, out, None, None))
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    assert!(a.warnings().is_empty(), "{:?}", a.warnings());
    for f in [10.0, 500.0, 1e3, 2e3, 1e5] {
        let s = jw(f);
        let want = 1.0 / (1.0 + s * c2 * (r1 + r2) + s * s * r1 * r2 * c1 * c2);
        check(a.transfer(&ProbeKind::Node(out), f).unwrap(), want, 1e-12);
    }
}

#[test]
fn gbw_alone_is_an_integrator_model() {
    // A follower around A(s) = 2π·gbw/s: H = ωt/(s + ωt), −3 dB at gbw (single-pole
    // op-amp in the limit of infinite DC gain).
    let gbw = 1e6;
    let mut b = Circuit::builder();
    let (out, inp) = (b.node("out"), b.node("in"));
    let circuit = b
        .vsrc("V1", "in", "gnd", 1.0)
        .part("U1", opamp(out, inp, out, None, Some(gbw)))
        .resistor("RL", "out", "gnd", 1e3)
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    let wt = 2.0 * PI * gbw;
    for f in [0.0, 1e3, 1e6, 1e8] {
        check(
            a.transfer(&ProbeKind::Node(out), f).unwrap(),
            wt / (jw(f) + wt),
            1e-12,
        );
    }
    assert_eq!(a.part_value(circuit.part("U1").unwrap()), Some(gbw));
}

#[test]
fn isrc_with_parallel_resistance_and_its_current() {
    // A Norton source (1 A, rp = 1 kΩ) into 1 kΩ: v = 500 Ω per ampere (current
    // divider); the drive sees only the load (rp excluded), and the source's own part
    // current from→to is I + (v_from − v_to)/rp = 1 − 0.5.
    let mut b = Circuit::builder();
    let (gnd, t) = (b.node("gnd"), b.node("t"));
    let circuit = b
        .part(
            "I1",
            PartKind::CurrentSource {
                from: gnd,
                to: t,
                amplitude: Some(1.0),
                phase_deg: 0.0,
                bias: Some(2e-3),
                rp: Some(1e3),
            },
        )
        .resistor("RL", "t", "gnd", 1e3)
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    check(
        a.transfer(&ProbeKind::Node(t), 1.0).unwrap(),
        Complex64::new(500.0, 0.0),
        1e-12,
    );
    check(
        a.transfer(&ProbeKind::InputImpedance, 1.0).unwrap(),
        Complex64::new(1e3, 0.0),
        1e-12,
    );
    let i1 = circuit.part("I1").unwrap();
    check(
        a.transfer(&ProbeKind::Current(i1), 1.0).unwrap(),
        Complex64::new(0.5, 0.0),
        1e-12,
    );
    let bias = a.bias().unwrap();
    assert!((bias.node_voltage(t) - 1.0).abs() < 1e-12);
    assert!((bias.part_current(i1).unwrap() - 1e-3).abs() < 1e-15);
    assert_eq!(a.part_value(i1), Some(1e3));
}
