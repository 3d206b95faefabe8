//! The whole library pipeline on a generated long RC line: write a `.rol` text with a
//! `chain` of N sections, compile it, build the [`Analyzer`] (the automatic solver
//! choice goes sparse) and sweep 50 log-spaced frequencies, timing each stage.
//!
//! `cargo run --release --example chain_sweep -- 100000 [threads]`; with a thread
//! count above 1 the sweep runs on a local rayon pool of that size.
#![allow(clippy::unwrap_used, clippy::expect_used, missing_docs)]

use std::time::Instant;

use rolloff_mna::{Analyzer, SolverChoice};
use rolloff_netlist::{CompileOptions, ProbeKind, compile};

fn main() {
    let mut args = std::env::args().skip(1);
    let n: usize = args.next().and_then(|a| a.parse().ok()).unwrap_or(100_000);
    let threads: usize = args.next().and_then(|a| a.parse().ok()).unwrap_or(1);
    let t0 = Instant::now();
    let text = format!(
        "title \"generated RC line\"\n\
         block sec (a, b) r = 1k, c = 1n\n\
         \x20 resistor R (a, b) r\n\
         \x20 capacitor C (b, gnd) c\n\
         end\n\
         vsrc V1 (in, gnd) 1 V rs 1\n\
         chain {n} sec LAD (in, out)\n\
         probe out\n"
    );
    let compiled = compile(&text, &CompileOptions::default());
    drop(text);
    let circuit = compiled.circuit.expect("the generated text compiles");
    let out = circuit.node("out").unwrap();
    let t1 = Instant::now();
    let mut analyzer = Analyzer::from_circuit(circuit, SolverChoice::Auto).unwrap();
    let t2 = Instant::now();
    let freqs: Vec<f64> = (0..50)
        .map(|k| 10f64.powf(6.0 * f64::from(k) / 49.0))
        .collect();
    let probes = [ProbeKind::Node(out)];
    let values = if threads > 1 {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap();
        analyzer
            .sweep_parallel(&probes, &freqs, Some(&pool))
            .unwrap()
    } else {
        analyzer.sweep(&probes, &freqs).unwrap()
    };
    let t3 = Instant::now();
    println!(
        "sections {n}, unknowns {}, sparse {}, threads {threads}: compile {:.3} s, analyzer {:.3} s, sweep {:.3} s ({:.2} ms/point), total {:.3} s; |H(1 Hz)| = {:e}",
        analyzer.system().dim(),
        analyzer.solver().is_sparse(),
        (t1 - t0).as_secs_f64(),
        (t2 - t1).as_secs_f64(),
        (t3 - t2).as_secs_f64(),
        (t3 - t2).as_secs_f64() * 1e3 / freqs.len() as f64,
        (t3 - t0).as_secs_f64(),
        values[0][0].norm()
    );
}
