//! The sparse path against the dense path, against the closed form of a uniform
//! ladder, its singular-system diagnostics, and parallel sweeps against serial ones.
#![allow(clippy::unwrap_used, clippy::expect_used, missing_docs)]

use std::f64::consts::PI;
use std::path::{Path, PathBuf};

use num_complex::Complex64;
use proptest::prelude::*;
use rolloff_mna::{Analyzer, MnaError, SolverChoice};
use rolloff_netlist::{Circuit, CompileOptions, NodeId, ProbeKind, compile};

/// `‖a − b‖∞ / ‖b‖∞` over all node voltages.
fn rel_diff(a: &[Complex64], b: &[Complex64]) -> f64 {
    let scale = b.iter().fold(0.0f64, |m, z| m.max(z.norm()));
    let err = a
        .iter()
        .zip(b)
        .fold(0.0f64, |m, (x, y)| m.max((x - y).norm()));
    if scale > 0.0 { err / scale } else { err }
}

/// An N-section RC ladder: series `r` from `n{k}` to `n{k+1}`, shunt `c` at `n{k+1}`,
/// driven at `n0` by an ideal 1 V source, output open.
fn ladder(n: usize, r: f64, c: f64) -> Circuit {
    let mut b = Circuit::builder().vsrc("V1", "n0", "gnd", 1.0);
    for k in 0..n {
        let (a, z) = (format!("n{k}"), format!("n{}", k + 1));
        b = b
            .resistor(&format!("R{k}"), &a, &z, r)
            .capacitor(&format!("C{k}"), &z, "gnd", c);
    }
    b.build().unwrap()
}

/// All node probes of a circuit (every node but `gnd`).
fn node_probes(circuit: &Circuit) -> Vec<ProbeKind> {
    (1..circuit.nodes.len())
        .map(|i| ProbeKind::Node(NodeId(i as u32)))
        .collect()
}

/// A random RLC network on `nodes` nodes: a resistor spine to `gnd` (so no node
/// floats), then random R, L and C between random nodes, driven by a source with a
/// series resistance at node 1. Values span two decades each (R 100 Ω–10 kΩ,
/// C 1–100 nF, L 1–100 mH) and the test frequencies 100 Hz–100 kHz: filter-like,
/// well-conditioned networks, where two backward-stable LUs agree to rounding.
#[derive(Debug, Clone)]
struct Net {
    spine: Vec<f64>,
    extra: Vec<(u8, usize, usize, f64)>,
}

fn net() -> impl Strategy<Value = Net> {
    (13usize..40).prop_flat_map(|nodes| {
        let spine = prop::collection::vec(2.0f64..4.0, nodes);
        let extra =
            prop::collection::vec((0u8..3, 0..=nodes, 0..=nodes, 0.0f64..1.0), 0..3 * nodes);
        (spine, extra).prop_map(|(spine, extra)| Net { spine, extra })
    })
}

impl Net {
    fn circuit(&self) -> Circuit {
        let name = |k: usize| {
            if k == 0 {
                "gnd".to_string()
            } else {
                format!("x{k}")
            }
        };
        let mut b = Circuit::builder()
            .vsrc("V1", "src", "gnd", 1.0)
            .resistor("RS", "src", "x1", 50.0);
        for (k, &lr) in self.spine.iter().enumerate() {
            b = b.resistor(&format!("S{k}"), &name(k + 1), &name(k), 10f64.powf(lr));
        }
        for (i, &(kind, a, z, u)) in self.extra.iter().enumerate() {
            if a == z {
                continue;
            }
            let (a, z) = (name(a), name(z));
            b = match kind {
                0 => b.resistor(&format!("R{i}"), &a, &z, 10f64.powf(2.0 + 2.0 * u)),
                1 => b.capacitor(&format!("C{i}"), &a, &z, 10f64.powf(-9.0 + 2.0 * u)),
                _ => b.inductor(&format!("L{i}"), &a, &z, 10f64.powf(-3.0 + 2.0 * u)),
            };
        }
        b.build().unwrap()
    }
}

/// `values[probe][freq]`.
type Sweep = Vec<Vec<Complex64>>;

/// Every node voltage at `f` from the dense and the sparse path.
fn both_paths(circuit: &Circuit, freqs: &[f64]) -> Option<(Sweep, Sweep)> {
    let probes = node_probes(circuit);
    let mut dense = Analyzer::with_choice(circuit, SolverChoice::Dense).ok()?;
    let mut sparse = Analyzer::with_choice(circuit, SolverChoice::Sparse).unwrap();
    let d = dense.sweep(&probes, freqs).ok()?;
    let s = sparse.sweep(&probes, freqs).unwrap();
    Some((d, s))
}

fn max_rel_diff(d: &[Vec<Complex64>], s: &[Vec<Complex64>], nf: usize) -> f64 {
    (0..nf)
        .map(|fi| {
            let dv: Vec<Complex64> = d.iter().map(|row| row[fi]).collect();
            let sv: Vec<Complex64> = s.iter().map(|row| row[fi]).collect();
            rel_diff(&sv, &dv)
        })
        .fold(0.0, f64::max)
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 64, ..ProptestConfig::default() })]

    #[test]
    fn dense_and_sparse_agree_on_random_rlc_networks(net in net(), lf in 2.0f64..5.0) {
        let circuit = net.circuit();
        let freqs = [10f64.powf(lf), 10f64.powf(lf) * 3.7, 0.0];
        // A network may be legitimately singular at DC (an inductor loop): compare
        // wherever the dense path solves.
        let probes = node_probes(&circuit);
        let mut dense = Analyzer::with_choice(&circuit, SolverChoice::Dense).unwrap();
        let mut sparse = Analyzer::with_choice(&circuit, SolverChoice::Sparse).unwrap();
        for &f in &freqs {
            let mut d = vec![Complex64::new(0.0, 0.0); probes.len()];
            let mut s = d.clone();
            let rd = dense.transfer_many(&probes, f, &mut d);
            let rs = sparse.transfer_many(&probes, f, &mut s);
            prop_assert_eq!(rd.is_ok(), rs.is_ok(), "{:?} vs {:?}", rd, rs);
            if rd.is_ok() {
                // Two backward-stable LUs agree to about κ·ε (Higham, *Accuracy and
                // Stability of Numerical Algorithms*, 2nd ed., §9.3): 1e-12 for these
                // networks, or a few ε per unit of the equilibrated condition number
                // for the rare one that is worse conditioned than 2500.
                let kappa = dense.condition_estimate(f).unwrap();
                let tol = 1e-12f64.max(4e-16 * kappa);
                let e = rel_diff(&s, &d);
                prop_assert!(e <= tol, "relative difference {:e} at {} Hz (κ ≈ {:e})", e, f, kappa);
            }
        }
    }
}

fn rol_files(dir: &Path, out: &mut Vec<PathBuf>) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    for e in entries.flatten() {
        let p = e.path();
        if p.is_dir() {
            rol_files(&p, out);
        } else if p.extension().is_some_and(|x| x == "rol") {
            out.push(p);
        }
    }
}

/// Circuits of our own invention written in the language, beside whatever the
/// repository's fixture folders hold.
const INLINE: &[&str] = &[
    "title \"two-stage coupling network\"\n\
     vsrc V1 (in, gnd) 1 V\n\
     capacitor C1 (in, a) 100n\n\
     resistor R1 (a, gnd) 10k\n\
     resistor R2 (a, b) 4.7k\n\
     capacitor C2 (b, gnd) 3.3n\n\
     inductor L1 (b, out) 10m\n\
     resistor RL (out, gnd) 600\n\
     probe out\n\
     sweep 10 Hz to 1 MHz per_decade 10\n",
    "title \"anti-alias stage\"\n\
     block sec (a, b) r = 1k, c = 10n\n\
       resistor R (a, b) r\n\
       capacitor C (b, gnd) c\n\
     end\n\
     vsrc V1 (in, gnd) 1 V\n\
     chain 20 sec LAD (in, out) r = 2.2k\n\
     probe out\n\
     sweep 10 Hz to 1 MHz per_decade 10\n",
];

#[test]
fn dense_and_sparse_agree_on_every_fixture_that_parses() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("../..");
    let mut files = Vec::new();
    rol_files(&root.join("fixtures"), &mut files);
    rol_files(&root.join("crates/netlist/fixtures"), &mut files);
    rol_files(&root.join("examples"), &mut files);
    let mut sources: Vec<(String, String)> = files
        .iter()
        .filter_map(|p| Some((p.display().to_string(), std::fs::read_to_string(p).ok()?)))
        .collect();
    sources.extend(
        INLINE
            .iter()
            .enumerate()
            .map(|(i, s)| (format!("inline {i}"), (*s).to_string())),
    );
    let mut compared = 0;
    for (name, text) in &sources {
        let Some(circuit) = compile(text, &CompileOptions::default()).circuit else {
            continue;
        };
        let freqs = [1.0, 1e2, 1.234e4, 1e6];
        let Some((d, s)) = both_paths(&circuit, &freqs) else {
            continue;
        };
        let e = max_rel_diff(&d, &s, freqs.len());
        assert!(e <= 1e-12, "{name}: relative difference {e:e}");
        compared += 1;
    }
    // The inline circuits alone must have been compared.
    assert!(compared >= INLINE.len(), "compared {compared}");
}

/// `U_0 … U_n` of the Chebyshev polynomials of the second kind at `t` (recurrence
/// `U_{k+1} = 2t·U_k − U_{k−1}`, `U_{−1} = 0`, `U_0 = 1`).
fn chebyshev_u(t: Complex64, n: usize) -> Vec<Complex64> {
    let mut u = vec![Complex64::new(1.0, 0.0), 2.0 * t];
    while u.len() <= n {
        let k = u.len();
        let next = 2.0 * t * u[k - 1] - u[k - 2];
        u.push(next);
    }
    u.truncate(n + 1);
    u
}

#[test]
fn ten_thousand_section_ladder_matches_the_chebyshev_closed_form() {
    // A uniform ladder of N sections, each a series Z then a shunt Y, has the chain
    // matrix M^N with M = [[1 + ZY, Z], [Y, 1]], det M = 1. For a unimodular 2×2
    // matrix, M^k = U_{k−1}(t)·M − U_{k−2}(t)·I with t = tr(M)/2 = 1 + ZY/2 and U the
    // Chebyshev polynomials of the second kind (Cayley–Hamilton; the standard result
    // for cascades of identical two-ports, e.g. Born & Wolf, *Principles of Optics*,
    // §1.6.5, and the image-parameter treatment of uniform ladders where
    // cosh γ = 1 + ZY/2). With the output open, V_in = A_N·V_out where
    // A_k = U_{k−1}(t)(1 + ZY) − U_{k−2}(t); the junction after k sections has
    // V_k = A_{N−k}·V_out, so V_k / V_in = A_{N−k} / A_N.
    let n = 10_000;
    let (r, c) = (1.0, 1e-9);
    let circuit = ladder(n, r, c);
    let mut a = Analyzer::with_choice(&circuit, SolverChoice::Sparse).unwrap();
    // Frequencies where the response stays far above the subnormal range (the
    // ladder's corner is near 1/(2π·N²·RC) ≈ 1.6 Hz).
    for f in [0.05, 0.5, 2.0, 7.5] {
        let zy = Complex64::new(r, 0.0) * Complex64::new(0.0, 2.0 * PI * f * c);
        let t = Complex64::new(1.0, 0.0) + zy / 2.0;
        let u = chebyshev_u(t, n);
        let a_k = |k: usize| -> Complex64 {
            if k == 0 {
                return Complex64::new(1.0, 0.0);
            }
            let u2 = if k >= 2 {
                u[k - 2]
            } else {
                Complex64::new(0.0, 0.0)
            };
            u[k - 1] * (Complex64::new(1.0, 0.0) + zy) - u2
        };
        for k in [1, 17, n / 2, n - 3, n] {
            let want = a_k(n - k) / a_k(n);
            let got = a
                .transfer(&ProbeKind::Node(circuit.node(&format!("n{k}")).unwrap()), f)
                .unwrap();
            let err = (got - want).norm() / want.norm();
            assert!(err < 1e-9, "f = {f}, k = {k}: {got} vs {want} ({err:e})");
        }
    }
}

/// A long ladder beside a lossless tank `LT ∥ CT` on its own node `t`.
fn ladder_with_tank(n: usize, l: f64, cap: f64) -> Circuit {
    let mut b = Circuit::builder().vsrc("V1", "n0", "gnd", 1.0);
    for k in 0..n {
        let (a, z) = (format!("n{k}"), format!("n{}", k + 1));
        b = b
            .resistor(&format!("R{k}"), &a, &z, 1e3)
            .capacitor(&format!("C{k}"), &z, "gnd", 1e-9);
    }
    b.inductor("LT", "t", "gnd", l)
        .capacitor("CT", "t", "gnd", cap)
        .build()
        .unwrap()
}

#[test]
fn sparse_path_names_a_singular_frequency() {
    // Y of the tank, jωC + 1/(jωL), vanishes at ω = 1/√(LC) (textbook LC resonance):
    // the whole system is singular there.
    let circuit = ladder_with_tank(2_000, 1.0, 1.0);
    let mut a = Analyzer::new(&circuit).unwrap();
    let out = ProbeKind::Node(circuit.node("n2000").unwrap());
    let f0 = 1.0 / (2.0 * PI);
    let e = a.transfer(&out, f0).unwrap_err();
    let MnaError::Singular { freq_hz, near, .. } = &e else {
        panic!("{e:?}")
    };
    assert_eq!(*freq_hz, f0);
    assert!(near.contains("`t`") || near.contains("`LT`"), "{e}");
    assert!(a.transfer(&out, 2.0 * f0).is_ok());
}

#[test]
fn sparse_path_reports_hopeless_conditioning_with_the_estimate() {
    // Off resonance by a relative 1e-17 the tank's admittance is lost in rounding.
    let (l, cap) = (1e-3, 1e-6);
    let circuit = ladder_with_tank(2_000, l, cap);
    let mut a = Analyzer::new(&circuit).unwrap();
    let out = ProbeKind::Node(circuit.node("n2000").unwrap());
    let f0 = 1.0 / (2.0 * PI * (l * cap).sqrt());
    match a.transfer(&out, f0) {
        Err(MnaError::Singular { freq_hz, .. }) => assert_eq!(freq_hz, f0),
        other => panic!("{other:?}"),
    }
}

#[test]
fn sparse_path_names_a_floating_node() {
    let mut b = Circuit::builder().vsrc("V1", "n0", "gnd", 1.0);
    for k in 0..3_000 {
        b = b
            .resistor(
                &format!("R{k}"),
                &format!("n{k}"),
                &format!("n{}", k + 1),
                1e3,
            )
            .capacitor(&format!("C{k}"), &format!("n{}", k + 1), "gnd", 1e-9);
    }
    let circuit = b
        .resistor("RX", "island_a", "island_b", 1e3)
        .build()
        .unwrap();
    match Analyzer::with_choice(&circuit, SolverChoice::Sparse) {
        Err(MnaError::FloatingNode { node, .. }) => assert!(node.starts_with("island_"), "{node}"),
        other => panic!("{:?}", other.map(|_| ())),
    }
}

#[test]
fn automatic_choice_goes_sparse_for_a_long_ladder_and_dense_for_a_short_one() {
    let long = Analyzer::new(&ladder(1_000, 1e3, 1e-9)).unwrap();
    assert!(long.solver().is_sparse());
    let short = Analyzer::new(&ladder(3, 1e3, 1e-9)).unwrap();
    assert!(!short.solver().is_sparse());
}

#[test]
fn parallel_sweep_is_bit_identical_to_the_serial_one() {
    let circuit = ladder(3_000, 1e3, 1e-9);
    let probes = [
        ProbeKind::Node(circuit.node("n3000").unwrap()),
        ProbeKind::Node(circuit.node("n10").unwrap()),
        ProbeKind::Current(circuit.part("R0").unwrap()),
    ];
    // Log-spaced with a DC point in the middle (a fresh factorisation there).
    let mut freqs: Vec<f64> = (0..37).map(|k| 10f64.powf(f64::from(k) / 6.0)).collect();
    freqs.insert(11, 0.0);
    let mut a = Analyzer::new(&circuit).unwrap();
    let serial = a.sweep(&probes, &freqs).unwrap();
    for threads in [2, 3] {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap();
        let mut b = Analyzer::new(&circuit).unwrap();
        let parallel = b.sweep_parallel(&probes, &freqs, Some(&pool)).unwrap();
        assert!(serial == parallel, "{threads} threads differ");
    }
    // The first error in frequency order, as the serial sweep reports it.
    let bad = [1.0, 2.0, -1.0, 3.0, f64::NAN];
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(2)
        .build()
        .unwrap();
    let e_par = a.sweep_parallel(&probes, &bad, Some(&pool)).unwrap_err();
    let e_ser = a.sweep(&probes, &bad).unwrap_err();
    assert_eq!(e_par.to_string(), e_ser.to_string());
}
