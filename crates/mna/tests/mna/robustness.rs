//! Whatever the circuit, the analyzer neither panics nor returns NaN or infinity: it
//! answers with a value or an error.

use proptest::prelude::*;
use rolloff_mna::Analyzer;
use rolloff_netlist::{Circuit, NodeId, PartId, PartKind, ProbeKind};

fn value() -> impl Strategy<Value = f64> {
    prop_oneof![
        (-15.0f64..12.0).prop_map(|e| 10f64.powf(e)),
        Just(1.0),
        Just(1e-300),
        Just(1e300),
    ]
}

fn part(nodes: u32) -> impl Strategy<Value = PartKind> {
    let n = move || (0..nodes).prop_map(NodeId);
    prop_oneof![
        (n(), n(), value()).prop_map(|(a, b, value)| PartKind::Resistor {
            a,
            b,
            value,
            tol: None,
            fit: None
        }),
        (n(), n(), value()).prop_map(|(a, b, value)| PartKind::Capacitor {
            a,
            b,
            value,
            tol: None,
            fit: None,
            rated: Some(5.0),
            polar: true
        }),
        (n(), n(), value()).prop_map(|(a, b, value)| PartKind::Inductor {
            a,
            b,
            value,
            tol: None,
            fit: None
        }),
        (
            n(),
            n(),
            prop::option::of(value()),
            prop::option::of(value()),
            prop::option::of(-10.0f64..10.0)
        )
            .prop_map(|(pos, neg, amplitude, rs, bias)| PartKind::VoltageSource {
                pos,
                neg,
                amplitude,
                phase_deg: 30.0,
                bias,
                rs
            }),
        (
            n(),
            n(),
            prop::option::of(value()),
            prop::option::of(value())
        )
            .prop_map(|(from, to, amplitude, rp)| PartKind::CurrentSource {
                from,
                to,
                amplitude,
                phase_deg: -60.0,
                bias: Some(1e-3),
                rp
            }),
        (n(), n(), n(), n(), -1e3f64..1e3).prop_map(|(out_pos, out_neg, in_pos, in_neg, gain)| {
            PartKind::Vcvs {
                out_pos,
                out_neg,
                in_pos,
                in_neg,
                gain,
            }
        }),
        (n(), n(), n(), n(), -1.0f64..1.0).prop_map(|(out_pos, out_neg, in_pos, in_neg, gm)| {
            PartKind::Vccs {
                out_pos,
                out_neg,
                in_pos,
                in_neg,
                gm,
            }
        }),
        (
            n(),
            n(),
            n(),
            prop::option::of(value()),
            prop::option::of(value())
        )
            .prop_map(|(out, in_pos, in_neg, gain, gbw)| PartKind::OpAmp {
                out,
                in_pos,
                in_neg,
                gain,
                gbw,
                swing: Some((-1.0, 1.0))
            }),
    ]
}

fn circuit() -> impl Strategy<Value = Circuit> {
    (2u32..6).prop_flat_map(|nodes| {
        let shunts = prop::option::of(prop::collection::vec(value(), nodes as usize));
        (prop::collection::vec(part(nodes), 1..9), shunts).prop_map(move |(parts, shunts)| {
            let mut b = Circuit::builder();
            for k in 1..nodes {
                b.node(&format!("n{k}"));
            }
            // Half the circuits get a resistor from every node to gnd, so that more of
            // them pass the structural checks and reach the numerics.
            for (k, r) in shunts.into_iter().flatten().enumerate().skip(1) {
                b = b.resistor(&format!("RS{k}"), &format!("n{k}"), "gnd", r);
            }
            for (i, kind) in parts.into_iter().enumerate() {
                b = b.part(&format!("P{i}"), kind);
            }
            let mut c = b.build().unwrap();
            c.drive = c.ac_sources().first().copied();
            c
        })
    })
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 256, ..ProptestConfig::default() })]

    #[test]
    fn values_are_finite_or_errors(c in circuit(), lf in -3.0f64..10.0) {
        let Ok(mut a) = Analyzer::new(&c) else { return Ok(()) };
        let f = 10f64.powf(lf);
        let mut probes = vec![ProbeKind::InputImpedance];
        for n in 0..c.nodes.len() as u32 {
            probes.push(ProbeKind::Node(NodeId(n)));
            probes.push(ProbeKind::OutputImpedance(NodeId(n)));
            probes.push(ProbeKind::Ratio { num: NodeId(n), den: NodeId(1) });
        }
        for p in 0..c.parts.len() as u32 {
            probes.push(ProbeKind::Current(PartId(p)));
        }
        for probe in &probes {
            for freq in [f, 0.0] {
                if let Ok(v) = a.transfer(probe, freq) {
                    prop_assert!(v.is_finite(), "{probe:?} at {freq}: {v}");
                }
                if let Ok((v, d)) = a.transfer_with_derivative(probe, freq) {
                    prop_assert!(v.is_finite() && d.is_finite());
                }
                if let Ok(v) = a.superposed(probe, freq) {
                    prop_assert!(v.is_finite());
                }
            }
        }
        if let Ok(bias) = a.bias() {
            prop_assert!(bias.node_voltages.iter().all(|v| v.is_finite()));
            prop_assert!(bias.part_currents.iter().all(|i| i.is_some_and(f64::is_finite)));
        }
        for w in a.warnings() {
            prop_assert!(!w.to_string().is_empty());
        }
    }
}
