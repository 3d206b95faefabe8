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

    fn solve_in_place(&self, rhs: &mut [Complex64]) {
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
