//! The solver trait is enough to plug another solver in without touching the stamps.

use num_complex::Complex64;
use rolloff_mna::{Analyzer, DenseLu, FactorReport, LinearSolver, SolverError, System};
use rolloff_netlist::{Circuit, ProbeKind};

/// A solver that reads the stamp pattern (as a sparse solver would for its symbolic
/// analysis) and counts its factorisations, delegating the numerics to [`DenseLu`].
#[derive(Clone)]
struct Counting {
    inner: DenseLu,
    pattern_len: usize,
    factorisations: usize,
}

impl LinearSolver for Counting {
    fn for_system(system: &System) -> Self {
        Counting {
            inner: DenseLu::for_system(system),
            pattern_len: system.pattern().len(),
            factorisations: 0,
        }
    }

    fn factor(&mut self, system: &System, omega: f64) -> Result<FactorReport, SolverError> {
        self.factorisations += 1;
        self.inner.factor(system, omega)
    }

    fn solve_in_place(&mut self, rhs: &mut [Complex64]) {
        self.inner.solve_in_place(rhs);
    }

    fn condition_estimate(&mut self) -> f64 {
        self.inner.condition_estimate()
    }
}

#[test]
fn another_solver_plugs_in_and_factors_once_per_frequency() {
    let circuit = Circuit::builder()
        .vsrc("V1", "in", "gnd", 1.0)
        .resistor("R1", "in", "out", 1e3)
        .capacitor("C1", "out", "gnd", 1e-6)
        .build()
        .unwrap();
    let out = circuit.node("out").unwrap();
    let mut a: Analyzer<Counting> = Analyzer::with_solver(&circuit).unwrap();
    let mut dense = Analyzer::new(&circuit).unwrap();
    let probes = [
        ProbeKind::Node(out),
        ProbeKind::InputImpedance,
        ProbeKind::OutputImpedance(out),
    ];
    let mut values = [Complex64::new(0.0, 0.0); 3];
    a.transfer_many(&probes, 100.0, &mut values).unwrap();
    a.transfer_with_derivative(&probes[0], 100.0).unwrap();
    for (p, v) in probes.iter().zip(values) {
        assert_eq!(v, dense.transfer(p, 100.0).unwrap());
    }
    // One factorisation served the three probes and the derivative.
    assert_eq!(a.solver().factorisations, 1);
    a.transfer(&probes[0], 200.0).unwrap();
    assert_eq!(a.solver().factorisations, 2);
    // Unknowns in, out and the current of V1; positions: the R stamp's four, C's
    // (out, out) shared with R's, V1's (in, k) and (k, in).
    assert_eq!(a.system().dim(), 3);
    assert_eq!(a.solver().pattern_len, 6);
}

/// The sparse solver agrees with the dense one.
mod sparse {
    use num_complex::Complex64;
    use rolloff_mna::{Analyzer, MnaError, SparseLu};
    use rolloff_netlist::{Circuit, PartKind, ProbeKind};

    fn ladder(sections: usize) -> Circuit {
        let mut b = Circuit::builder().vsrc("V1", "n0", "gnd", 1.0);
        for k in 0..sections {
            b = b
                .resistor(
                    &format!("R{k}"),
                    &format!("n{k}"),
                    &format!("n{}", k + 1),
                    1e3,
                )
                .capacitor(&format!("C{k}"), &format!("n{}", k + 1), "gnd", 1e-9);
        }
        let (out, inp) = (b.node("out"), b.node(&format!("n{sections}")));
        b.part(
            "U1",
            PartKind::OpAmp {
                out,
                in_pos: inp,
                in_neg: out,
                gain: Some(1e5),
                gbw: Some(1e6),
                swing: None,
            },
        )
        .inductor("L1", "out", "load", 1e-3)
        .resistor("RL", "load", "gnd", 600.0)
        .build()
        .unwrap()
    }

    #[test]
    fn sparse_matches_dense_on_a_ladder() {
        let circuit = ladder(30);
        let probes = [
            ProbeKind::Node(circuit.node("load").unwrap()),
            ProbeKind::Current(circuit.part("C7").unwrap()),
            ProbeKind::InputImpedance,
            ProbeKind::OutputImpedance(circuit.node("n12").unwrap()),
        ];
        let mut dense = Analyzer::new(&circuit).unwrap();
        let original: Analyzer<SparseLu> = Analyzer::with_solver(&circuit).unwrap();
        // A clone gets its own scratch memory.
        let mut sparse = original.clone();
        for f in [0.0, 1.0, 1e3, 1.6e5, 1e7] {
            for p in &probes {
                match (
                    dense.transfer_with_derivative(p, f),
                    sparse.transfer_with_derivative(p, f),
                ) {
                    (Ok((d, dd)), Ok((s, ds))) => {
                        assert!((d - s).norm() <= 1e-10 * d.norm(), "{p:?} {f}: {d} {s}");
                        assert!((dd - ds).norm() <= 1e-8 * dd.norm(), "{p:?} {f}: {dd} {ds}");
                    }
                    // At DC the drive sees an open circuit (the op-amp input): both say so.
                    (Err(a), Err(b)) => {
                        assert!(matches!(a, MnaError::InfiniteImpedance { .. }), "{a}");
                        assert_eq!(a, b);
                    }
                    (a, b) => panic!("{p:?} {f}: {a:?} vs {b:?}"),
                }
            }
        }
        let kd = dense.condition_estimate(1e3).unwrap();
        let ks = sparse.condition_estimate(1e3).unwrap();
        assert!(ks > 0.0 && ks.is_finite() && kd > 0.0, "{kd} {ks}");
        let bias = sparse.bias().unwrap();
        assert_eq!(bias.node_voltages.len(), circuit.nodes.len());
    }

    #[test]
    fn sparse_reports_a_singular_tank() {
        let circuit = Circuit::builder()
            .isrc("I1", "gnd", "t", 1.0)
            .inductor("L1", "t", "gnd", 1.0)
            .capacitor("C1", "t", "gnd", 1.0)
            .build()
            .unwrap();
        let mut a: Analyzer<SparseLu> = Analyzer::with_solver(&circuit).unwrap();
        let r = a.transfer(
            &ProbeKind::Node(circuit.node("t").unwrap()),
            1.0 / (2.0 * std::f64::consts::PI),
        );
        assert!(
            matches!(
                r,
                Err(MnaError::Singular { .. } | MnaError::NotFinite { .. })
            ),
            "{r:?}"
        );
        let ok = a
            .transfer(&ProbeKind::Node(circuit.node("t").unwrap()), 1.0)
            .unwrap();
        assert!(ok.is_finite() && ok != Complex64::new(0.0, 0.0));
    }
}
