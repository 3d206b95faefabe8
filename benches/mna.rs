//! Solver kernels of rolloff-mna: the per-frequency cost of an N-section RC ladder next
//! to a bare nalgebra LU of the same matrix size, and a 1000-point sweep.
//!
//! The ladder follows the project's performance baselines: R = 1 kΩ and C = 1 nF per
//! section, driven by 1 V through Rs = 1 Ω. It is made with the builder.
// FIXME(lead): switch the 10-section sweep to a parsed fixture file once the parser lands.
#![allow(clippy::unwrap_used, clippy::expect_used, missing_docs)]

use std::hint::black_box;

use criterion::{Criterion, criterion_group, criterion_main};
use nalgebra::{DMatrix, DVector};
use num_complex::Complex64;
use rolloff_mna::Analyzer;
use rolloff_netlist::{Circuit, PartKind, ProbeKind, Sweep};

fn ladder(sections: usize) -> Circuit {
    let mut b = Circuit::builder();
    let (pos, neg) = (b.node("n0"), b.node("gnd"));
    b = b.part(
        "V1",
        PartKind::VoltageSource {
            pos,
            neg,
            amplitude: Some(1.0),
            phase_deg: 0.0,
            bias: None,
            rs: Some(1.0),
        },
    );
    for k in 0..sections {
        let (a, c) = (format!("n{k}"), format!("n{}", k + 1));
        b = b
            .resistor(&format!("R{k}"), &a, &c, 1e3)
            .capacitor(&format!("C{k}"), &c, "gnd", 1e-9);
    }
    b.build().unwrap()
}

fn freqs() -> Vec<f64> {
    Sweep::Log {
        start: 1.0,
        stop: 1e6,
        per_decade: 166,
    }
    .frequencies()
    .into_iter()
    .take(1000)
    .collect()
}

fn per_point(c: &mut Criterion) {
    let freqs = freqs();
    let mut group = c.benchmark_group("mna_point");
    for n in [2usize, 5, 10, 20, 50, 100] {
        let circuit = ladder(n);
        let probe = [ProbeKind::Node(circuit.node(&format!("n{n}")).unwrap())];
        let mut analyzer = Analyzer::new(&circuit).unwrap();
        let dim = analyzer.system().dim();
        let mut out = [Complex64::new(0.0, 0.0)];
        let mut i = 0;
        group.bench_function(format!("solve_ladder_{n}"), |b| {
            b.iter(|| {
                // A new frequency every call, so the factors are never reused.
                i = (i + 1) % freqs.len();
                analyzer
                    .transfer_many(&probe, black_box(freqs[i]), &mut out)
                    .unwrap();
                black_box(out[0])
            });
        });

        let system = analyzer.system().clone();
        let mut y = DMatrix::<Complex64>::zeros(dim, dim);
        let mut rhs = DVector::<Complex64>::zeros(dim);
        let branch = dim - 1;
        let mut j = 0;
        group.bench_function(format!("nalgebra_lu_dim_{dim}"), |b| {
            b.iter(|| {
                j = (j + 1) % freqs.len();
                let omega = 2.0 * std::f64::consts::PI * black_box(freqs[j]);
                system.fill_dense(omega, y.as_mut_slice());
                rhs.fill(Complex64::new(0.0, 0.0));
                rhs[branch] = Complex64::new(1.0, 0.0);
                let lu = y.clone().lu();
                lu.solve_mut(&mut rhs);
                black_box(rhs[n])
            });
        });
    }
    group.finish();
}

/// The sparse LU on the larger ladders.
fn per_point_sparse(c: &mut Criterion) {
    let freqs = freqs();
    let mut group = c.benchmark_group("mna_point_sparse");
    for n in [10usize, 20, 50, 100] {
        let circuit = ladder(n);
        let probe = [ProbeKind::Node(circuit.node(&format!("n{n}")).unwrap())];
        let mut analyzer: Analyzer<rolloff_mna::SparseLu> =
            Analyzer::with_solver(&circuit).unwrap();
        let mut out = [Complex64::new(0.0, 0.0)];
        let mut i = 0;
        group.bench_function(format!("solve_ladder_{n}"), |b| {
            b.iter(|| {
                i = (i + 1) % freqs.len();
                analyzer
                    .transfer_many(&probe, black_box(freqs[i]), &mut out)
                    .unwrap();
                black_box(out[0])
            });
        });
    }
    group.finish();
}

fn sweep(c: &mut Criterion) {
    let freqs = freqs();
    let circuit = ladder(10);
    let probe = [ProbeKind::Node(circuit.node("n10").unwrap())];
    let mut analyzer = Analyzer::new(&circuit).unwrap();
    c.bench_function("sweep_ladder_10_1000_points", |b| {
        b.iter(|| black_box(analyzer.sweep(&probe, &freqs).unwrap()));
    });
}

criterion_group!(benches, per_point, per_point_sparse, sweep);
criterion_main!(benches);
