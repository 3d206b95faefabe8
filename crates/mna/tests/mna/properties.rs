//! Invariants of linear passive networks on random RLC networks (network theory:
//! reciprocity, impedance and frequency scaling, passivity, superposition).

use num_complex::Complex64;
use proptest::prelude::*;
use rolloff_mna::Analyzer;
use rolloff_netlist::{Circuit, NodeId, PartKind, ProbeKind};

/// A random passive network: `nodes` nodes, each with a resistor to `gnd` (so every
/// node is lossy and the system is regular at every ω > 0), a random spanning tree of
/// R, L or C between nodes, and a few extra R/L/C branches.
#[derive(Debug, Clone)]
struct Network {
    nodes: usize,
    /// (kind 0=R 1=L 2=C, a, b, value exponent in decades relative to the kind's base)
    branches: Vec<(u8, usize, usize, f64)>,
    shunts: Vec<f64>,
}

fn network() -> impl Strategy<Value = Network> {
    (2usize..7).prop_flat_map(|nodes| {
        let tree = (1..nodes)
            .map(|k| (0u8..3, 0..k, -2.0f64..2.0).prop_map(move |(t, a, e)| (t, a, k, e)))
            .collect::<Vec<_>>();
        let extra = prop::collection::vec((0u8..3, 0..nodes, 0..nodes, -2.0f64..2.0), 0..4);
        let shunts = prop::collection::vec(-1.0f64..3.0, nodes);
        (tree, extra, shunts).prop_map(move |(tree, extra, shunts)| Network {
            nodes,
            branches: tree
                .into_iter()
                .chain(extra.into_iter().filter(|b| b.1 != b.2))
                .collect(),
            shunts,
        })
    })
}

fn name(k: usize) -> String {
    format!("n{k}")
}

impl Network {
    /// The circuit, with AC current sources into `n{drive_a}` and `n{drive_b}` and a
    /// voltage source `VS` behind 1 kΩ into node 0, the drive chosen by `drive`.
    fn circuit(&self, drive: &str, sources: (usize, usize)) -> Circuit {
        let mut b = Circuit::builder();
        for k in 0..self.nodes {
            b.node(&name(k));
        }
        for (k, &e) in self.shunts.iter().enumerate() {
            b = b.resistor(&format!("RS{k}"), &name(k), "gnd", 1e3 * 10f64.powf(e));
        }
        for (i, &(t, a, c, e)) in self.branches.iter().enumerate() {
            let scale = 10f64.powf(e);
            let (na, nc) = (name(a), name(c));
            b = match t {
                0 => b.resistor(&format!("R{i}"), &na, &nc, 1e3 * scale),
                1 => b.inductor(&format!("L{i}"), &na, &nc, 1e-3 * scale),
                _ => b.capacitor(&format!("C{i}"), &na, &nc, 1e-7 * scale),
            };
        }
        let vin = b.node("vin");
        let gnd = b.node("gnd");
        b.part(
            "VS",
            PartKind::VoltageSource {
                pos: vin,
                neg: gnd,
                amplitude: Some(1.0),
                phase_deg: 0.0,
                bias: None,
                rs: None,
            },
        )
        .resistor("RIN", "vin", &name(0), 1e3)
        .part(
            "IA",
            PartKind::CurrentSource {
                from: gnd,
                to: NodeId(sources.0 as u32 + 1),
                amplitude: Some(2.0),
                phase_deg: 40.0,
                bias: None,
                rp: None,
            },
        )
        .part(
            "IB",
            PartKind::CurrentSource {
                from: gnd,
                to: NodeId(sources.1 as u32 + 1),
                amplitude: Some(0.5),
                phase_deg: -110.0,
                bias: None,
                rp: None,
            },
        )
        .drive(drive)
        .build()
        .unwrap()
    }
}

fn node(k: usize) -> ProbeKind {
    ProbeKind::Node(NodeId(k as u32 + 1))
}

#[track_caller]
fn close(a: Complex64, b: Complex64, scale: f64, tol: f64) -> Result<(), TestCaseError> {
    let err = (a - b).norm();
    let bound = tol * (a.norm().max(b.norm()) + scale);
    prop_assert!(err <= bound, "{a} vs {b}: {err:e} > {bound:e}");
    Ok(())
}

fn config() -> ProptestConfig {
    ProptestConfig {
        cases: 96,
        ..ProptestConfig::default()
    }
}

proptest! {
    #![proptest_config(config())]

    #[test]
    fn reciprocity(net in network(), i in 0usize..7, j in 0usize..7, lf in 0.0f64..6.0) {
        // Z_ij = Z_ji for a reciprocal (RLC) network (reciprocity theorem).
        let (i, j) = (i % net.nodes, j % net.nodes);
        let f = 10f64.powf(lf);
        let ci = net.circuit("IA", (i, j));
        let cj = net.circuit("IB", (i, j));
        let mut ai = Analyzer::new(&ci).unwrap();
        let mut aj = Analyzer::new(&cj).unwrap();
        let zji = ai.transfer(&node(j), f).unwrap();
        let zij = aj.transfer(&node(i), f).unwrap();
        let scale = (ai.transfer(&node(i), f).unwrap().norm() * aj.transfer(&node(j), f).unwrap().norm()).sqrt();
        close(zij, zji, scale, 1e-9)?;
    }

    #[test]
    fn impedance_scaling_keeps_voltage_ratios(net in network(), k in 0usize..7, lk in -3.0f64..3.0, lf in 0.0f64..6.0) {
        // R·s, L·s, C/s multiply every impedance by s and leave voltage ratios alone
        // (impedance scaling of filter networks).
        let (k, s, f) = (k % net.nodes, 10f64.powf(lk), 10f64.powf(lf));
        let circuit = net.circuit("VS", (0, 0));
        let mut a = Analyzer::new(&circuit).unwrap();
        let before = a.transfer(&node(k), f).unwrap();
        let mut scaled = a.clone();
        for (id, part) in circuit.parts.iter().enumerate() {
            let id = rolloff_netlist::PartId(id as u32);
            let v = a.part_value(id);
            match (&part.kind, v) {
                (PartKind::Resistor { .. } | PartKind::Inductor { .. }, Some(v)) => scaled.set_part_value(id, v * s).unwrap(),
                (PartKind::Capacitor { .. }, Some(v)) => scaled.set_part_value(id, v / s).unwrap(),
                _ => {}
            }
        }
        let after = scaled.transfer(&node(k), f).unwrap();
        close(before, after, 1e-12, 1e-9)?;
        let z0 = a.transfer(&ProbeKind::InputImpedance, f).unwrap();
        let z1 = scaled.transfer(&ProbeKind::InputImpedance, f).unwrap();
        close(z0 * s, z1, 0.0, 1e-9)?;
    }

    #[test]
    fn frequency_scaling_moves_the_response(net in network(), k in 0usize..7, lk in -3.0f64..3.0, lf in 0.0f64..6.0) {
        // L/s and C/s move the whole response to s·f (frequency scaling).
        let (k, s, f) = (k % net.nodes, 10f64.powf(lk), 10f64.powf(lf));
        let circuit = net.circuit("VS", (0, 0));
        let mut a = Analyzer::new(&circuit).unwrap();
        let before = a.transfer(&node(k), f).unwrap();
        for (id, part) in circuit.parts.iter().enumerate() {
            let id = rolloff_netlist::PartId(id as u32);
            if let (PartKind::Inductor { .. } | PartKind::Capacitor { .. }, Some(v)) = (&part.kind, a.part_value(id)) {
                a.set_part_value(id, v / s).unwrap();
            }
        }
        let after = a.transfer(&node(k), f * s).unwrap();
        close(before, after, 1e-12, 1e-9)?;
    }

    #[test]
    fn input_impedance_is_passive(net in network(), i in 0usize..7, lf in -3.0f64..9.0) {
        // Re Z_in ≥ 0 for a passive network (positive-real impedance).
        let f = 10f64.powf(lf);
        let circuit = net.circuit("IA", (i % net.nodes, 0));
        let mut a = Analyzer::new(&circuit).unwrap();
        let z = a.transfer(&ProbeKind::InputImpedance, f).unwrap();
        prop_assert!(z.re >= -1e-12 * z.norm(), "{z}");
        // Driven by a current source, Zin is the node's voltage per ampere.
        close(z, a.transfer(&node(i % net.nodes), f).unwrap(), 0.0, 1e-12)?;
    }

    #[test]
    fn superposition_of_two_sources(net in network(), i in 0usize..7, j in 0usize..7, k in 0usize..7, lf in 0.0f64..6.0) {
        // The response to IA and IB together is the phasor sum of each alone
        // (superposition theorem), with the voltage source at VS zeroed in all three.
        let (i, j, k) = (i % net.nodes, j % net.nodes, k % net.nodes);
        let f = 10f64.powf(lf);
        let mut a = Analyzer::new(&net.circuit("IA", (i, j))).unwrap();
        let mut b = Analyzer::new(&net.circuit("IB", (i, j))).unwrap();
        let ta = a.transfer(&node(k), f).unwrap();
        let tb = b.transfer(&node(k), f).unwrap();
        let va = Complex64::from_polar(2.0, 40f64.to_radians());
        let vb = Complex64::from_polar(0.5, (-110f64).to_radians());
        // `superposed` also includes VS (1 V, 0°); add its own transfer.
        let mut v = Analyzer::new(&net.circuit("VS", (i, j))).unwrap();
        let tvs = v.transfer(&node(k), f).unwrap();
        let sum = a.superposed(&node(k), f).unwrap();
        let want = va * ta + vb * tb + tvs;
        close(sum, want, ta.norm() + tb.norm() + tvs.norm(), 1e-10)?;
    }
}
