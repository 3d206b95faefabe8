//! Metric costs of rolloff-report on a solver-backed response: a cutoff (sweep, bracket
//! and Brent refinement), a whole per-probe summary, and a spot gain (no sweep), on an
//! N-section RC ladder (R = 1 kΩ, C = 1 nF per section, as in the performance
//! baselines) over the language's default sweep (1 Hz to 100 MHz, 50 per decade, 351
//! points).
#![allow(clippy::unwrap_used, clippy::expect_used, missing_docs)]

use std::hint::black_box;

use criterion::{Criterion, criterion_group, criterion_main};
use rolloff_mna::Analyzer;
use rolloff_netlist::{Circuit, Metric, MetricKind, MetricOptions, Target};
use rolloff_report::{analyze_probe, measure, sweep_frequencies};

fn ladder(sections: usize) -> Circuit {
    let mut b = Circuit::builder().vsrc("V1", "n0", "gnd", 1.0);
    for k in 0..sections {
        let (a, c) = (format!("n{k}"), format!("n{}", k + 1));
        b = b
            .resistor(&format!("R{k}"), &a, &c, 1e3)
            .capacitor(&format!("C{k}"), &c, "gnd", 1e-9);
    }
    b.probe_node(&format!("n{sections}")).build().unwrap()
}

fn metrics(c: &mut Criterion) {
    let mut group = c.benchmark_group("report");
    for n in [2usize, 10] {
        let circuit = ladder(n);
        let freqs = sweep_frequencies(&circuit);
        let target = Target::Node(circuit.node(&format!("n{n}")).unwrap());
        let metric = |kind| Metric {
            kind,
            target,
            options: MetricOptions::default(),
        };
        let mut analyzer = Analyzer::new(&circuit).unwrap();
        let cutoff = metric(MetricKind::Cutoff);
        group.bench_function(format!("cutoff_ladder_{n}"), |b| {
            b.iter(|| black_box(measure(&mut analyzer, &cutoff, &freqs).unwrap()));
        });
        group.bench_function(format!("summary_ladder_{n}"), |b| {
            b.iter(|| {
                black_box(
                    analyze_probe(&mut analyzer, rolloff_netlist::ProbeId(0), &freqs).unwrap(),
                )
            });
        });
        let gain = metric(MetricKind::Gain { freq: 1e3 });
        group.bench_function(format!("spot_gain_ladder_{n}"), |b| {
            b.iter(|| black_box(measure(&mut analyzer, &gain, &freqs).unwrap()));
        });
    }
    group.finish();
}

criterion_group!(benches, metrics);
criterion_main!(benches);
