//! The per-frequency loop allocates nothing: counted with an instrumented global
//! allocator. The binary runs without the test harness (`harness = false`), so no
//! other thread allocates while the region is measured.
#![allow(clippy::unwrap_used, clippy::expect_used)]

use std::alloc::System;

use num_complex::Complex64;
use rolloff_mna::Analyzer;
use rolloff_netlist::{Circuit, PartKind, ProbeKind};
use stats_alloc::{INSTRUMENTED_SYSTEM, Region, StatsAlloc};

#[global_allocator]
static GLOBAL: &StatsAlloc<System> = &INSTRUMENTED_SYSTEM;

fn main() {
    per_frequency_solves_allocate_nothing::<rolloff_mna::DenseLu>();
    println!("test per_frequency_solves_allocate_nothing (dense) ... ok");
    // The sparse path, kept pivots and fresh factorisations alike (this circuit needs
    // some of the latter), and the automatic choice.
    per_frequency_solves_allocate_nothing::<rolloff_mna::SparseLu>();
    println!("test per_frequency_solves_allocate_nothing (sparse) ... ok");
    per_frequency_solves_allocate_nothing::<rolloff_mna::AutoLu>();
    println!("test per_frequency_solves_allocate_nothing (auto) ... ok");
}

fn per_frequency_solves_allocate_nothing<S: rolloff_mna::LinearSolver>() {
    // A 10-section RC ladder with an op-amp buffer and an inductor, so every kind of
    // branch unknown is in the loop.
    let mut b = Circuit::builder().vsrc("V1", "n0", "gnd", 1.0);
    for k in 0..10 {
        b = b
            .resistor(
                &format!("R{k}"),
                &format!("n{k}"),
                &format!("n{}", k + 1),
                1e3,
            )
            .capacitor(&format!("C{k}"), &format!("n{}", k + 1), "gnd", 1e-9);
    }
    let (out, inp) = (b.node("out"), b.node("n10"));
    let circuit = b
        .part(
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
        .unwrap();
    let probes = [
        ProbeKind::Node(circuit.node("load").unwrap()),
        ProbeKind::Ratio {
            num: circuit.node("n5").unwrap(),
            den: circuit.node("n1").unwrap(),
        },
        ProbeKind::Current(circuit.part("C3").unwrap()),
        ProbeKind::InputImpedance,
        ProbeKind::OutputImpedance(circuit.node("n7").unwrap()),
    ];
    let freqs: Vec<f64> = (0..200).map(|i| 10f64.powf(f64::from(i) / 40.0)).collect();
    let mut analyzer: Analyzer<S> = Analyzer::with_solver(&circuit).unwrap();
    let mut out = [Complex64::new(0.0, 0.0); 5];
    analyzer.transfer_many(&probes, 1.0, &mut out).unwrap();

    let region = Region::new(GLOBAL);
    let mut checksum = 0.0;
    for &f in &freqs {
        analyzer.transfer_many(&probes, f, &mut out).unwrap();
        checksum += out[0].norm();
        let (v, d) = analyzer
            .transfer_with_derivative(&probes[1], f * 1.01)
            .unwrap();
        checksum += v.norm() + d.norm();
        checksum += analyzer.superposed(&probes[0], f).unwrap().norm();
        checksum += analyzer.transfer(&probes[4], f * 1.02).unwrap().norm();
    }
    let stats = region.change();
    assert!(checksum.is_finite() && checksum > 0.0);
    assert_eq!(stats.allocations, 0, "{stats:?}");
    assert_eq!(stats.reallocations, 0, "{stats:?}");
    assert!(analyzer.warnings().is_empty(), "{:?}", analyzer.warnings());
}
