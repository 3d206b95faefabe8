//! Every diagnosis of a singular system, with its message, and the warnings.

use rolloff_mna::{Analyzer, BiasWarning, MnaError, MnaWarning};
use rolloff_netlist::{Circuit, DriveError, PartKind, ProbeKind};

use crate::opamp;

#[track_caller]
fn new_err(circuit: &Circuit) -> MnaError {
    match Analyzer::new(circuit) {
        Ok(_) => panic!("expected an error"),
        Err(e) => e,
    }
}

#[test]
fn floating_node_at_all() {
    // `b` hangs off a VCVS input only: nothing defines its voltage.
    let mut bld = Circuit::builder();
    let (out, gnd, x) = (bld.node("out"), bld.node("gnd"), bld.node("b"));
    let circuit = bld
        .vsrc("V1", "in", "gnd", 1.0)
        .resistor("R1", "in", "out", 1e3)
        .part(
            "E1",
            PartKind::Vcvs {
                out_pos: out,
                out_neg: gnd,
                in_pos: x,
                in_neg: gnd,
                gain: 2.0,
            },
        )
        .build()
        .unwrap();
    let e = new_err(&circuit);
    assert_eq!(
        e,
        MnaError::FloatingNode {
            node: "b".into(),
            dc_only: false
        }
    );
    assert_eq!(e.to_string(), "node `b` has no path to gnd");
}

#[test]
fn floating_node_between_two_coupling_capacitors_only_at_dc() {
    let circuit = Circuit::builder()
        .vsrc("V1", "in", "gnd", 1.0)
        .capacitor("C1", "in", "mid", 1e-6)
        .capacitor("C2", "mid", "out", 1e-6)
        .resistor("R1", "out", "gnd", 1e3)
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    let out = ProbeKind::Node(circuit.node("out").unwrap());
    assert!(a.transfer(&out, 100.0).is_ok());
    let e = a.bias().unwrap_err();
    assert_eq!(
        e.to_string(),
        "node `mid` has no DC path to gnd: its only paths run through capacitors"
    );
    // The DC point of a linear sweep gets the same diagnosis.
    assert_eq!(a.transfer(&out, 0.0).unwrap_err(), e);
}

#[test]
fn loop_of_voltage_sources() {
    let circuit = Circuit::builder()
        .vsrc("V1", "a", "gnd", 1.0)
        .vsrc("V2", "a", "gnd", 2.0)
        .resistor("R1", "a", "gnd", 1e3)
        .drive("V1")
        .build()
        .unwrap();
    let e = new_err(&circuit);
    assert_eq!(
        e,
        MnaError::SourceLoop {
            parts: vec!["V1".into(), "V2".into()],
            dc_only: false
        }
    );
    assert_eq!(
        e.to_string(),
        "`V1`, `V2` form a loop of voltage sources: the loop's voltages are over-determined"
    );
}

#[test]
fn loop_of_a_source_and_inductors_at_dc() {
    let circuit = Circuit::builder()
        .vsrc("V1", "a", "gnd", 1.0)
        .inductor("L1", "a", "b", 1e-3)
        .inductor("L2", "b", "gnd", 1e-3)
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    assert!(
        a.transfer(&ProbeKind::Node(circuit.node("b").unwrap()), 1e3)
            .is_ok()
    );
    let e = a.bias().unwrap_err();
    assert_eq!(
        e.to_string(),
        "`V1`, `L1`, `L2` form a loop of voltage sources and inductors: the loop's voltages are over-determined at DC"
    );
}

#[test]
fn cut_set_of_current_sources() {
    // `a` is fed by I1 and drained by nothing else.
    let circuit = Circuit::builder()
        .isrc("I1", "gnd", "a", 1e-3)
        .resistor("R1", "b", "gnd", 1e3)
        .isrc("I2", "a", "b", 1e-3)
        .drive("I1")
        .build()
        .unwrap();
    let e = new_err(&circuit);
    assert_eq!(
        e.to_string(),
        "node `a` is connected to the rest of the circuit only through the current sources `I1`, `I2`"
    );
}

#[test]
fn cut_set_of_a_current_source_into_a_capacitor_at_dc() {
    let circuit = Circuit::builder()
        .isrc("I1", "gnd", "a", 1e-3)
        .capacitor("C1", "a", "gnd", 1e-6)
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    let e = a.bias().unwrap_err();
    assert!(matches!(e, MnaError::CurrentCutSet { dc_only: true, .. }));
    assert_eq!(
        e.to_string(),
        "node `a` is connected to the rest of the circuit only through the current source `I1` at DC (capacitors open)"
    );
}

#[test]
fn opamp_without_feedback() {
    let mut bld = Circuit::builder();
    let (out, inp, gnd) = (bld.node("out"), bld.node("in"), bld.node("gnd"));
    let circuit = bld
        .vsrc("V1", "in", "gnd", 1.0)
        .part("U1", opamp(out, inp, gnd, None, None))
        .resistor("RL", "out", "gnd", 1e3)
        .build()
        .unwrap();
    let e = new_err(&circuit);
    assert_eq!(e, MnaError::OpAmpNoFeedback { part: "U1".into() });
    assert_eq!(
        e.to_string(),
        "op-amp `U1` has no feedback path from its output to its inputs; an ideal op-amp needs one (give it a finite `gain` for open-loop use)"
    );
    // With a finite gain it is a valid open-loop amplifier.
    let mut bld = Circuit::builder();
    let (out, inp, gnd) = (bld.node("out"), bld.node("in"), bld.node("gnd"));
    let circuit = bld
        .vsrc("V1", "in", "gnd", 1.0)
        .part("U1", opamp(out, inp, gnd, Some(1e3), None))
        .resistor("RL", "out", "gnd", 1e3)
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    let h = a.transfer(&ProbeKind::Node(out), 1.0).unwrap();
    assert!((h.re - 1e3).abs() < 1e-9);
}

#[test]
fn integrator_has_no_dc_feedback() {
    let mut bld = Circuit::builder();
    let (out, fb, gnd) = (bld.node("out"), bld.node("fb"), bld.node("gnd"));
    let circuit = bld
        .vsrc("V1", "in", "gnd", 1.0)
        .resistor("R1", "in", "fb", 10e3)
        .capacitor("C1", "fb", "out", 100e-9)
        .part("U1", opamp(out, gnd, fb, None, None))
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    // Ideal integrator: H = −1/(jωRC) (textbook).
    let h = a.transfer(&ProbeKind::Node(out), 100.0).unwrap();
    let want = -1.0 / crate::jw(100.0) / (10e3 * 100e-9);
    crate::check(h, want, 1e-12);
    let e = a.bias().unwrap_err();
    assert_eq!(
        e.to_string(),
        "op-amp `U1` has no DC feedback path (its feedback runs only through capacitors), so it has no DC operating point"
    );
}

#[test]
fn singular_at_a_frequency_names_it() {
    // A lossless tank fed by a current source: Y = jωC + 1/(jωL) vanishes at ω = 1/√(LC).
    let circuit = Circuit::builder()
        .isrc("I1", "gnd", "t", 1.0)
        .inductor("L1", "t", "gnd", 1.0)
        .capacitor("C1", "t", "gnd", 1.0)
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    let f0 = 1.0 / (2.0 * std::f64::consts::PI);
    let e = a
        .transfer(&ProbeKind::Node(circuit.node("t").unwrap()), f0)
        .unwrap_err();
    let MnaError::Singular { freq_hz, .. } = &e else {
        panic!("{e:?}")
    };
    assert_eq!(*freq_hz, f0);
    // Elimination breaks down in the inductor's branch equation (the pivot rounds to
    // exactly zero here; a pivot that merely comes out tiny is caught by the condition
    // estimate and reported with it instead).
    assert_eq!(
        e.to_string(),
        format!(
            "the system is singular at {f0} Hz near the current of `L1` (a zero pivot: the equations are dependent)"
        )
    );
    // Away from resonance it solves.
    assert!(
        a.transfer(&ProbeKind::Node(circuit.node("t").unwrap()), 1.0)
            .is_ok()
    );
}

#[test]
fn near_singular_gives_a_condition_warning() {
    // Two nodes tied by 1 mΩ, each to ground by 1 GΩ: the differential mode is
    // about 1e12 times stiffer than the common mode.
    let circuit = Circuit::builder()
        .isrc("I1", "gnd", "a", 1.0)
        .resistor("R1", "a", "b", 1e-3)
        .resistor("R2", "a", "gnd", 1e9)
        .resistor("R3", "b", "gnd", 1e9)
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    let v = a
        .transfer(&ProbeKind::Node(circuit.node("a").unwrap()), 1.0)
        .unwrap();
    // Two 1 GΩ in parallel (R1 negligible): 5e8 Ω, to the digits the conditioning leaves.
    assert!((v.re - 5e8).abs() < 1e-3 * 5e8, "{v}");
    let k = a.condition_estimate(1.0).unwrap();
    assert!(k > 1e12, "{k}");
    assert!(matches!(
        a.warnings(),
        [MnaWarning::IllConditioned { count: 1, .. }]
    ));
    assert!(
        a.warnings()[0]
            .to_string()
            .starts_with("the system is ill-conditioned at 1 Hz near ")
    );
}

#[test]
fn positive_feedback_is_warned() {
    // An inverting stage with its inputs swapped: the ideal model gives the same
    // −RF/RG, so only the finite-gain sign test can see it.
    let mut bld = Circuit::builder();
    let (out, fb, gnd) = (bld.node("out"), bld.node("fb"), bld.node("gnd"));
    let circuit = bld
        .vsrc("V1", "in", "gnd", 1.0)
        .resistor("RG", "in", "fb", 1e3)
        .resistor("RF", "fb", "out", 10e3)
        .part("U1", opamp(out, fb, gnd, None, None))
        .build()
        .unwrap();
    let a = Analyzer::new(&circuit).unwrap();
    let [w] = a.warnings() else {
        panic!("{:?}", a.warnings())
    };
    assert!(matches!(w, MnaWarning::PositiveFeedback { part, .. } if part == "U1"));
    // β = RG/(RG + RF) = 1/11 at DC.
    assert_eq!(
        w.to_string(),
        "op-amp `U1` has positive feedback (loop gain 0.091 at 0 Hz): are its inputs swapped?"
    );
}

#[test]
fn drive_errors_are_passed_on() {
    let circuit = Circuit::builder()
        .vsrc("V1", "a", "gnd", 1.0)
        .vsrc("V2", "b", "gnd", 1.0)
        .resistor("R1", "a", "b", 1e3)
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    let e = a
        .transfer(&ProbeKind::Node(circuit.node("a").unwrap()), 1.0)
        .unwrap_err();
    assert_eq!(
        e,
        MnaError::Drive(DriveError::Ambiguous(vec!["V1".into(), "V2".into()]))
    );
    // Zout needs no drive; superposed adds both.
    let zo = a
        .transfer(&ProbeKind::OutputImpedance(circuit.node("a").unwrap()), 1.0)
        .unwrap();
    assert_eq!(zo.norm(), 0.0);
    let i = a
        .superposed(&ProbeKind::Current(circuit.part("R1").unwrap()), 1.0)
        .unwrap();
    assert_eq!(i.norm(), 0.0);
}

#[test]
fn infinite_impedance_and_zero_denominator_are_errors() {
    let circuit = Circuit::builder()
        .vsrc("V1", "in", "gnd", 1.0)
        .capacitor("C1", "in", "out", 1e-6)
        .resistor("R1", "out", "gnd", 1e3)
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    assert_eq!(
        a.transfer(&ProbeKind::InputImpedance, 0.0)
            .unwrap_err()
            .to_string(),
        "the input impedance is infinite at 0 Hz (an open circuit)"
    );
    let out = circuit.node("out").unwrap();
    let gnd = circuit.node("gnd").unwrap();
    assert_eq!(
        a.transfer(&ProbeKind::Ratio { num: out, den: gnd }, 1.0)
            .unwrap_err()
            .to_string(),
        "the ratio's denominator, node `gnd`, is zero at 1 Hz"
    );
    assert_eq!(
        a.transfer(&ProbeKind::Node(out), -1.0)
            .unwrap_err()
            .to_string(),
        "frequency -1 Hz is not a finite, non-negative number"
    );
    assert!(matches!(
        a.transfer(&ProbeKind::Node(out), f64::NAN),
        Err(MnaError::BadFrequency { .. })
    ));
}

#[test]
fn bad_values_are_rejected() {
    let circuit = Circuit::builder()
        .vsrc("V1", "in", "gnd", 1.0)
        .resistor("R1", "in", "gnd", 1e3)
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    let r1 = circuit.part("R1").unwrap();
    assert_eq!(
        a.set_part_value(r1, -5.0).unwrap_err().to_string(),
        "`-5` is not a valid value for part `R1` (it must be finite and positive)"
    );
    assert_eq!(
        a.set_part_value(circuit.part("V1").unwrap(), 5.0)
            .unwrap_err()
            .to_string(),
        "part `V1` has no value to set"
    );
    let mut bld = Circuit::builder();
    let (out, fb) = (bld.node("out"), bld.node("fb"));
    let circuit = bld
        .resistor("R1", "out", "fb", 1e3)
        .part("U1", opamp(out, fb, out, Some(0.0), None))
        .build()
        .unwrap();
    assert_eq!(
        new_err(&circuit).to_string(),
        "`0` is not a valid value for part `U1` (it must be finite and positive)"
    );
}

#[test]
fn bias_warnings_name_part_voltage_and_rating() {
    let mut bld = Circuit::builder();
    let (hv, gnd, x, out, fb) = (
        bld.node("hv"),
        bld.node("gnd"),
        bld.node("x"),
        bld.node("out"),
        bld.node("fb"),
    );
    let circuit = bld
        .part(
            "VH",
            PartKind::VoltageSource {
                pos: hv,
                neg: gnd,
                amplitude: Some(1.0),
                phase_deg: 0.0,
                bias: Some(30.0),
                rs: None,
            },
        )
        .part(
            "C1",
            PartKind::Capacitor {
                a: hv,
                b: gnd,
                value: 1e-6,
                tol: None,
                fit: None,
                rated: Some(25.0),
                polar: false,
            },
        )
        .part(
            "C2",
            PartKind::Capacitor {
                a: x,
                b: hv,
                value: 1e-6,
                tol: None,
                fit: None,
                rated: None,
                polar: true,
            },
        )
        .resistor("RX", "x", "gnd", 1e3)
        .part(
            "U1",
            PartKind::OpAmp {
                out,
                in_pos: hv,
                in_neg: fb,
                gain: None,
                gbw: None,
                swing: Some((-12.0, 12.0)),
            },
        )
        .resistor("RF", "out", "fb", 1e3)
        .resistor("RG", "fb", "gnd", 1e3)
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    let bias = a.bias().unwrap();
    let texts: Vec<String> = bias.warnings.iter().map(ToString::to_string).collect();
    assert_eq!(
        texts,
        [
            "capacitor `C1` has 30 V across it at bias, beyond its 25 V rating",
            "polar capacitor `C2` is reverse-biased (-30 V, first node minus second)",
            "op-amp `U1` output sits at 60 V at bias, outside its swing -12 .. 12 V",
        ]
    );
    assert!(matches!(bias.warnings[0], BiasWarning::OverRated { .. }));
}

#[test]
fn hopeless_conditioning_is_an_error_with_the_estimate() {
    // The same lossless tank with values whose resonance leaves a tiny, non-zero pivot.
    let (l, c) = (3e-3, 7e-7);
    let circuit = Circuit::builder()
        .isrc("I1", "gnd", "t", 1.0)
        .inductor("L1", "t", "gnd", l)
        .capacitor("C1", "t", "gnd", c)
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    let f0 = 1.0 / (2.0 * std::f64::consts::PI * (l * c).sqrt());
    let e = a
        .transfer(&ProbeKind::Node(circuit.node("t").unwrap()), f0)
        .unwrap_err();
    let MnaError::Singular { condition, .. } = &e else {
        panic!("{e:?}")
    };
    let k = condition.unwrap();
    assert!(k > 1.0 / f64::EPSILON, "{e}");
    assert_eq!(
        e.to_string(),
        format!(
            "the system is singular at {f0} Hz near the current of `L1` (condition estimate {k:.3e}: no correct digit is left)"
        )
    );
}

#[test]
fn ids_outside_the_circuit_are_errors_not_panics() {
    let circuit = Circuit::builder()
        .vsrc("V1", "a", "gnd", 1.0)
        .part(
            "R1",
            PartKind::Resistor {
                a: rolloff_netlist::NodeId(1),
                b: rolloff_netlist::NodeId(7),
                value: 1.0,
                tol: None,
                fit: None,
            },
        )
        .build()
        .unwrap();
    assert_eq!(new_err(&circuit).to_string(), "no node with index 7");
    let mut circuit = Circuit::builder()
        .vsrc("V1", "a", "gnd", 1.0)
        .resistor("R1", "a", "gnd", 1.0)
        .build()
        .unwrap();
    circuit.drive = Some(rolloff_netlist::PartId(9));
    assert_eq!(new_err(&circuit).to_string(), "no part with index 9");
    circuit.drive = Some(rolloff_netlist::PartId(1));
    // A resistor as the drive: transfers say there is no AC source to drive with.
    let mut a = Analyzer::new(&circuit).unwrap();
    assert!(matches!(
        a.transfer(&ProbeKind::InputImpedance, 1.0),
        Err(MnaError::Drive(DriveError::NoAcSource))
    ));
    assert!(matches!(
        a.transfer(&ProbeKind::Current(rolloff_netlist::PartId(5)), 1.0),
        Err(MnaError::UnknownPart(5))
    ));
}

#[test]
fn an_open_circuit_seen_through_roundoff_is_an_infinite_impedance() {
    // At DC an RC ladder into an op-amp input draws no current; roundoff leaves a
    // current of a few ulps, which must not turn into a huge finite impedance.
    let mut b = Circuit::builder().vsrc("V1", "n0", "gnd", 1.0);
    for k in 0..30 {
        b = b
            .resistor(
                &format!("R{k}"),
                &format!("n{k}"),
                &format!("n{}", k + 1),
                1e3,
            )
            .capacitor(&format!("C{k}"), &format!("n{}", k + 1), "gnd", 1e-9);
    }
    let (out, inp) = (b.node("out"), b.node("n30"));
    let circuit = b
        .part("U1", opamp(out, inp, out, None, None))
        .resistor("RL", "out", "gnd", 600.0)
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    assert!(matches!(
        a.transfer(&ProbeKind::InputImpedance, 0.0),
        Err(MnaError::InfiniteImpedance { .. })
    ));
    // At 1 kHz it is finite and about R0 + (the rest), dominated by the first sections.
    let z = a.transfer(&ProbeKind::InputImpedance, 1e3).unwrap();
    assert!(z.re > 1e3 && z.norm() < 1e7, "{z}");
}

#[test]
fn gbw_only_opamp_open_loop_has_no_dc_point() {
    // A(s) = 2π·gbw/s open loop: finite at AC, infinite gain at DC.
    let mut bld = Circuit::builder();
    let (out, inp, gnd) = (bld.node("out"), bld.node("in"), bld.node("gnd"));
    let circuit = bld
        .vsrc("V1", "in", "gnd", 1.0)
        .part("U1", opamp(out, inp, gnd, None, Some(1e6)))
        .resistor("RL", "out", "gnd", 1e3)
        .build()
        .unwrap();
    let mut a = Analyzer::new(&circuit).unwrap();
    let h = a.transfer(&ProbeKind::Node(out), 1e3).unwrap();
    crate::check(h, num_complex::Complex64::new(0.0, -1e3), 1e-12);
    assert_eq!(
        a.bias().unwrap_err(),
        MnaError::OpAmpNoDcFeedback { part: "U1".into() }
    );
}
