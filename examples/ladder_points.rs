//! Per-point cost of rolloff's dense and sparse kernels on the N-section RC ladder
//! (R = 1 kΩ, C = 1 nF, 1 V through Rs = 1 Ω), for `benches/compare/compare.py`.
//!
//! `cargo run --release --example ladder_points -- dense:100:200 sparse:100000:50`
//! prints one JSON object per `kind:sections:points` argument with the median
//! microseconds per frequency point over 5 repetitions (each at least 0.1 s) and
//! the sum of |v(n1)| over one sweep as a cross-check.
#![allow(clippy::unwrap_used, clippy::expect_used, missing_docs)]

use std::f64::consts::PI;
use std::time::Instant;

use num_complex::Complex64;
use rolloff_mna::{DenseLu, LinearSolver, SparseLu, System};
use rolloff_netlist::{Circuit, PartKind};

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

fn time_sweep<S: LinearSolver>(mut lu: S, system: &System, freqs: &[f64]) -> (f64, f64) {
    let dim = system.dim();
    let mut rhs = vec![Complex64::new(0.0, 0.0); dim];
    let mut checksum = 0.0;
    let mut sweep = |checksum: &mut f64| {
        for &f in freqs {
            lu.factor(system, 2.0 * PI * f).unwrap();
            rhs.fill(Complex64::new(0.0, 0.0));
            for &(r, v) in &system.sources()[0].rhs {
                rhs[r] += v;
            }
            lu.solve_in_place(&mut rhs);
            // Node n1 (unknown 1): an interior node, never subnormal.
            *checksum += rhs[1].norm();
        }
    };
    sweep(&mut checksum);
    let first = checksum;
    let mut reps = Vec::new();
    for _ in 0..5 {
        let start = Instant::now();
        let mut sweeps = 0;
        while start.elapsed().as_secs_f64() < 0.1 || sweeps == 0 {
            sweep(&mut checksum);
            sweeps += 1;
        }
        reps.push(start.elapsed().as_secs_f64() * 1e6 / (sweeps * freqs.len()) as f64);
    }
    reps.sort_by(f64::total_cmp);
    (reps[2], first)
}

fn main() {
    for arg in std::env::args().skip(1) {
        let parts: Vec<&str> = arg.split(':').collect();
        let (kind, n, points) = (
            parts[0],
            parts[1].parse::<usize>().unwrap(),
            parts[2].parse::<usize>().unwrap(),
        );
        let freqs: Vec<f64> = (0..points)
            .map(|k| 10f64.powf(6.0 * k as f64 / (points.max(2) - 1) as f64))
            .collect();
        let system = System::new(&ladder(n));
        let (us, checksum) = if kind == "dense" {
            time_sweep(DenseLu::for_system(&system), &system, &freqs)
        } else {
            {
                let mut lu = SparseLu::for_system(&system);
                let kept = freqs
                    .iter()
                    .filter(|&&f| {
                        lu.factor(&system, 2.0 * PI * f).is_ok() && lu.last_used_kept_pivots()
                    })
                    .count();
                eprintln!(
                    "{n} sections: L+U holds {:?} entries; kept pivots at {kept} of {} points",
                    lu.factor_nnz(),
                    freqs.len()
                );
                time_sweep(lu, &system, &freqs)
            }
        };
        println!(
            "{{\"kind\": \"{kind}\", \"sections\": {n}, \"points\": {points}, \"us_per_point\": {us}, \"checksum_n1\": {checksum}}}"
        );
    }
}
