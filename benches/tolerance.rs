//! Tolerance runs: Monte Carlo of a four-section RC ladder (each trial measures the
//! cutoff, refined on the solver's response by `rolloff-report`).

#![allow(clippy::unwrap_used, clippy::expect_used, missing_docs)]

use criterion::{Criterion, criterion_group, criterion_main};
use rolloff_netlist::{CompileOptions, compile};
use rolloff_tolerance::{CircuitModel, MonteCarloOptions, monte_carlo};
use std::hint::black_box;

/// Four equal RC sections in cascade, 1 % resistors and 5 % capacitors, swept over
/// 1 Hz .. 1 MHz at 20 points per decade.
const LADDER_4: &str = "\
block rc (a, b)
  resistor  R (a, b) 10k tol 1%
  capacitor C (b, gnd) 10 nF tol 5%
end
vsrc V1 (in, gnd) 1 V
chain 4 rc LAD (in, out)
sweep 1 Hz to 1 MHz per_decade 20
probe out ref 1 mHz
expect cutoff(out) within 170 .. 210 Hz
";

fn monte_carlo_ladder(c: &mut Criterion) {
    let circuit = compile(LADDER_4, &CompileOptions::default())
        .circuit
        .unwrap();
    let model = CircuitModel::new(&circuit).unwrap();
    let options = MonteCarloOptions {
        runs: 10_000,
        seed: 1,
        ..MonteCarloOptions::default()
    };
    let mut group = c.benchmark_group("tolerance");
    group.sample_size(10);
    group.bench_function("monte_carlo_ladder_4_runs_10000", |b| {
        b.iter(|| black_box(monte_carlo(&model, &options, None).unwrap()));
    });
    group.finish();
}

criterion_group!(benches, monte_carlo_ladder);
criterion_main!(benches);
