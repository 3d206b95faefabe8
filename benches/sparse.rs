//! The sparse path of rolloff-mna against its yardsticks, on the N-section RC ladder
//! of the performance baselines (R = 1 kΩ, C = 1 nF per section, 1 V through
//! Rs = 1 Ω), log-spaced frequencies from 1 Hz to 1 MHz.
//!
//! - `dense_vs_nalgebra/N`: the dense kernel (fill, equilibrate, factor, solve) next to
//!   a bare nalgebra LU (`clone().lu()` + `solve_mut`) of the same `Y(jω)`.
//! - `sparse_vs_thomas/N`: one frequency point of the sparse kernel next to a Thomas
//!   (tridiagonal) solve of the same ladder, the Thomas reference living only here.
//! - `crossover/{dense,sparse}/N`: per-point cost of both kernels on small ladders and
//!   on square RC grids (more entries per row), for the automatic choice.
//! - `parallel/{serial,2 threads}`: a 50-point sweep of a 10⁵-section ladder.
#![allow(clippy::unwrap_used, clippy::expect_used, missing_docs)]

use std::f64::consts::PI;
use std::hint::black_box;

use criterion::{BenchmarkId, Criterion, criterion_group, criterion_main};
use nalgebra::{DMatrix, DVector};
use num_complex::Complex64;
use rolloff_mna::{Analyzer, DenseLu, LinearSolver, SolverChoice, SparseLu, System};
use rolloff_netlist::{Circuit, PartKind, ProbeKind};

const R: f64 = 1e3;
const C: f64 = 1e-9;
const RS: f64 = 1.0;

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
            rs: Some(RS),
        },
    );
    for k in 0..sections {
        let (a, c) = (format!("n{k}"), format!("n{}", k + 1));
        b = b
            .resistor(&format!("R{k}"), &a, &c, R)
            .capacitor(&format!("C{k}"), &c, "gnd", C);
    }
    b.build().unwrap()
}

/// A `side × side` grid of nodes joined by 1 kΩ, each with 1 nF to `gnd`, driven at a
/// corner: up to five entries per row and fill under elimination.
fn grid(side: usize) -> Circuit {
    let name = |i: usize, j: usize| format!("g{i}_{j}");
    let mut b =
        Circuit::builder()
            .vsrc("V1", "src", "gnd", 1.0)
            .resistor("RS", "src", &name(0, 0), RS);
    for i in 0..side {
        for j in 0..side {
            b = b.capacitor(&format!("C{i}_{j}"), &name(i, j), "gnd", C);
            if i + 1 < side {
                b = b.resistor(&format!("RV{i}_{j}"), &name(i, j), &name(i + 1, j), R);
            }
            if j + 1 < side {
                b = b.resistor(&format!("RH{i}_{j}"), &name(i, j), &name(i, j + 1), R);
            }
        }
    }
    b.build().unwrap()
}

fn freqs(n: usize) -> Vec<f64> {
    (0..n)
        .map(|k| 10f64.powf(6.0 * k as f64 / (n - 1) as f64))
        .collect()
}

/// One solve of `Y x = b` through a solver (factor + solve), the drive as the RHS.
fn point<S: LinearSolver>(solver: &mut S, system: &System, omega: f64, rhs: &mut [Complex64]) {
    solver.factor(system, omega).unwrap();
    rhs.fill(Complex64::new(0.0, 0.0));
    for &(r, v) in &system.sources()[0].rhs {
        rhs[r] += v;
    }
    solver.solve_in_place(rhs);
}

/// Thomas algorithm on the node block of the ladder with the source folded in as a
/// Norton equivalent (the project's baseline yardstick): `n` unknowns v1 … vN.
struct Thomas {
    cp: Vec<Complex64>,
    dp: Vec<Complex64>,
}

impl Thomas {
    fn solve(&mut self, n: usize, omega: f64) -> Complex64 {
        let g = 1.0 / R;
        let jwc = Complex64::new(0.0, omega * C);
        let off = Complex64::new(-g, 0.0);
        // Row 0 is the node n1 after folding n0 (Rs then R in series).
        let gs = 1.0 / (RS + R);
        let mut prev_c = Complex64::new(0.0, 0.0);
        let mut prev_d = Complex64::new(0.0, 0.0);
        for i in 0..n {
            let left = if i == 0 { gs } else { g };
            let right = if i + 1 < n { g } else { 0.0 };
            let diag = Complex64::new(left + right, 0.0) + jwc;
            let a = if i == 0 {
                Complex64::new(0.0, 0.0)
            } else {
                off
            };
            let b = if i == 0 {
                Complex64::new(gs, 0.0)
            } else {
                Complex64::new(0.0, 0.0)
            };
            let m = (diag - a * prev_c).inv();
            prev_c = off * m;
            prev_d = (b - a * prev_d) * m;
            self.cp[i] = prev_c;
            self.dp[i] = prev_d;
        }
        let mut x = self.dp[n - 1];
        for i in (0..n - 1).rev() {
            x = self.dp[i] - self.cp[i] * x;
            self.dp[i] = x;
        }
        self.dp[n - 1]
    }
}

fn dense_vs_nalgebra(c: &mut Criterion) {
    let fs = freqs(64);
    let mut group = c.benchmark_group("dense_vs_nalgebra");
    for n in [5usize, 10, 20, 50, 98] {
        let circuit = ladder(n);
        let system = System::new(&circuit);
        let dim = system.dim();
        let mut rhs = vec![Complex64::new(0.0, 0.0); dim];
        let mut lu = DenseLu::for_system(&system);
        let mut k = 0;
        group.bench_function(BenchmarkId::new("rolloff_dense", dim), |b| {
            b.iter(|| {
                k = (k + 1) % fs.len();
                point(&mut lu, &system, 2.0 * PI * fs[k], &mut rhs);
                black_box(rhs[dim - 1])
            });
        });
        let mut y = DMatrix::<Complex64>::zeros(dim, dim);
        let mut buf = vec![Complex64::new(0.0, 0.0); dim * dim];
        let mut bvec = DVector::<Complex64>::zeros(dim);
        group.bench_function(BenchmarkId::new("nalgebra_lu", dim), |b| {
            b.iter(|| {
                k = (k + 1) % fs.len();
                system.fill_dense(2.0 * PI * fs[k], &mut buf);
                y.as_mut_slice().copy_from_slice(&buf);
                bvec.fill(Complex64::new(0.0, 0.0));
                for &(r, v) in &system.sources()[0].rhs {
                    bvec[r] += v;
                }
                let lu = y.clone().lu();
                lu.solve_mut(&mut bvec);
                black_box(bvec[dim - 1])
            });
        });
    }
    group.finish();
}

fn sparse_vs_thomas(c: &mut Criterion) {
    let fs = freqs(50);
    let mut group = c.benchmark_group("sparse_vs_thomas");
    group.sample_size(10);
    for n in [10_000usize, 100_000, 1_000_000] {
        let circuit = ladder(n);
        let system = System::new(&circuit);
        let dim = system.dim();
        let mut rhs = vec![Complex64::new(0.0, 0.0); dim];
        let mut lu = SparseLu::for_system(&system);
        let mut k = 0;
        group.bench_function(BenchmarkId::new("rolloff_sparse", n), |b| {
            b.iter(|| {
                k = (k + 1) % fs.len();
                point(&mut lu, &system, 2.0 * PI * fs[k], &mut rhs);
                black_box(rhs[dim - 1])
            });
        });
        let mut th = Thomas {
            cp: vec![Complex64::new(0.0, 0.0); n],
            dp: vec![Complex64::new(0.0, 0.0); n],
        };
        group.bench_function(BenchmarkId::new("thomas", n), |b| {
            b.iter(|| {
                k = (k + 1) % fs.len();
                black_box(th.solve(n, 2.0 * PI * fs[k]))
            });
        });
        // The two agree (checked once, on an interior node, away from subnormals).
        let omega = 2.0 * PI * 1e3;
        point(&mut lu, &system, omega, &mut rhs);
        th.solve(n, omega);
        let v1 = rhs[circuit.node("n1").unwrap().index() - 1];
        assert!(
            (v1 - th.dp[0]).norm() <= 1e-9 * v1.norm(),
            "{v1} vs {}",
            th.dp[0]
        );
    }
    group.finish();
}

fn crossover(c: &mut Criterion) {
    let fs = freqs(64);
    let mut group = c.benchmark_group("crossover");
    let cases: Vec<(String, Circuit)> = [4usize, 8, 12, 16, 24, 32, 64]
        .iter()
        .map(|&n| (format!("ladder{n}"), ladder(n)))
        .chain(
            [2usize, 3, 4, 5, 6, 8]
                .iter()
                .map(|&s| (format!("grid{s}x{s}"), grid(s))),
        )
        .collect();
    for (name, circuit) in &cases {
        let system = System::new(circuit);
        let dim = system.dim();
        let mut rhs = vec![Complex64::new(0.0, 0.0); dim];
        let mut dense = DenseLu::for_system(&system);
        let mut sparse = SparseLu::for_system(&system);
        let mut k = 0;
        let label = format!("{name}_dim{dim}");
        group.bench_function(BenchmarkId::new("dense", &label), |b| {
            b.iter(|| {
                k = (k + 1) % fs.len();
                point(&mut dense, &system, 2.0 * PI * fs[k], &mut rhs);
                black_box(rhs[0])
            });
        });
        group.bench_function(BenchmarkId::new("sparse", &label), |b| {
            b.iter(|| {
                k = (k + 1) % fs.len();
                point(&mut sparse, &system, 2.0 * PI * fs[k], &mut rhs);
                black_box(rhs[0])
            });
        });
    }
    group.finish();
}

fn parallel(c: &mut Criterion) {
    let n = 100_000;
    let circuit = ladder(n);
    let probes = [ProbeKind::Node(circuit.node(&format!("n{n}")).unwrap())];
    let fs = freqs(50);
    let mut a = Analyzer::with_choice(&circuit, SolverChoice::Auto).unwrap();
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(2)
        .build()
        .unwrap();
    let mut group = c.benchmark_group("parallel");
    group.sample_size(10);
    group.bench_function("serial_50pt_1e5", |b| {
        b.iter(|| black_box(a.sweep(&probes, &fs).unwrap()));
    });
    group.bench_function("two_threads_50pt_1e5", |b| {
        b.iter(|| black_box(a.sweep_parallel(&probes, &fs, Some(&pool)).unwrap()));
    });
    group.finish();
}

criterion_group!(
    benches,
    dense_vs_nalgebra,
    sparse_vs_thomas,
    crossover,
    parallel
);
criterion_main!(benches);
