//! Sweeps split across threads (rayon): each worker has its own clone of the analyzer
//! (its own solver workspace), takes a contiguous block of the frequencies, and writes
//! into preallocated slots by index. A frequency's result depends on that frequency
//! alone (the solvers keep no history that changes numbers), so the values are
//! bit-identical to [`Analyzer::sweep`]'s, in frequency order.

use num_complex::Complex64;
use rayon::prelude::*;
use rolloff_netlist::ProbeKind;

use super::{Analyzer, ZERO};
use crate::error::{MnaError, MnaWarning};
use crate::solver::LinearSolver;

impl<S: LinearSolver> Analyzer<S> {
    /// As [`Analyzer::sweep`], with the frequencies split into contiguous blocks across
    /// the threads of `pool` (or of rayon's current pool when `None`; the library never
    /// configures the global pool). `values[probe][freq]`, bit-identical to the serial
    /// sweep; warnings found by the workers are merged into this analyzer's as the
    /// serial sweep would have recorded them.
    ///
    /// ```
    /// use rolloff_mna::Analyzer;
    /// use rolloff_netlist::{Circuit, ProbeKind};
    ///
    /// let circuit = Circuit::builder()
    ///     .vsrc("V1", "in", "gnd", 1.0)
    ///     .resistor("R1", "in", "out", 1e3)
    ///     .capacitor("C1", "out", "gnd", 1e-6)
    ///     .build()
    ///     .unwrap();
    /// let probes = [ProbeKind::Node(circuit.node("out").unwrap())];
    /// let freqs: Vec<f64> = (0..40).map(|k| 10f64.powf(k as f64 / 8.0)).collect();
    /// let mut analyzer = Analyzer::new(&circuit).unwrap();
    /// let pool = rayon::ThreadPoolBuilder::new().num_threads(2).build().unwrap();
    /// let parallel = analyzer.sweep_parallel(&probes, &freqs, Some(&pool)).unwrap();
    /// assert_eq!(parallel, analyzer.sweep(&probes, &freqs).unwrap());
    /// ```
    ///
    /// # Errors
    /// The error the serial sweep would return: the first in frequency order.
    pub fn sweep_parallel(
        &mut self,
        probes: &[ProbeKind],
        freqs: &[f64],
        pool: Option<&rayon::ThreadPool>,
    ) -> Result<Vec<Vec<Complex64>>, MnaError> {
        let threads = pool.map_or_else(
            rayon::current_num_threads,
            rayon::ThreadPool::current_num_threads,
        );
        let blocks = threads.min(freqs.len());
        if blocks <= 1 || probes.is_empty() {
            return self.sweep(probes, freqs);
        }
        let np = probes.len();
        let block = freqs.len().div_ceil(blocks);
        let mut flat = vec![ZERO; freqs.len() * np];
        // This analyzer solves the first block itself; the others get clones (a clone
        // copies the circuit and the system: the parallel sweep's fixed cost).
        let base = self.ill_count();
        let mut clones: Vec<Analyzer<S>> = (1..freqs.len().div_ceil(block))
            .map(|_| self.clone())
            .collect();
        let outcomes = {
            let mut workers: Vec<&mut Analyzer<S>> = std::iter::once(&mut *self)
                .chain(clones.iter_mut())
                .collect();
            let mut run = || {
                workers
                    .par_iter_mut()
                    .zip(flat.par_chunks_mut(block * np))
                    .zip(freqs.par_chunks(block))
                    .map(|((worker, out), fs)| {
                        for (f, slot) in fs.iter().zip(out.chunks_exact_mut(np)) {
                            worker.transfer_many(probes, *f, slot)?;
                        }
                        Ok(())
                    })
                    .collect::<Vec<Result<(), MnaError>>>()
            };
            match pool {
                Some(p) => p.install(run),
                None => run(),
            }
        };
        self.merge_warnings(&clones, base);
        // The worker that solved the last block leaves its factors as the serial sweep
        // would have left them.
        if let Some(last) = clones.pop() {
            self.solver = last.solver;
            self.factored = last.factored;
            self.drive_solved = last.drive_solved;
            self.derivative_solved = last.derivative_solved;
            self.x = last.x;
            self.dx = last.dx;
        }
        for outcome in outcomes {
            if let Err(e) = outcome {
                self.invalidate();
                return Err(e);
            }
        }
        let mut values = vec![vec![ZERO; freqs.len()]; np];
        for (fi, point) in flat.chunks_exact(np).enumerate() {
            for (row, &v) in values.iter_mut().zip(point) {
                row[fi] = v;
            }
        }
        Ok(values)
    }

    /// The count of the ill-conditioning record (0 without one).
    fn ill_count(&self) -> usize {
        match self.ill_warning.and_then(|i| self.warnings.get(i)) {
            Some(MnaWarning::IllConditioned { count, .. }) => *count,
            _ => 0,
        }
    }

    /// Folds the workers' ill-conditioning records into this analyzer's, in block
    /// order: counts add, and the worst frequency is the first with the largest
    /// estimate, as a serial sweep records it.
    fn merge_warnings(&mut self, workers: &[Analyzer<S>], base: usize) {
        for w in workers {
            let Some(MnaWarning::IllConditioned {
                freq_hz,
                condition,
                near,
                count,
            }) = w.ill_warning.and_then(|i| w.warnings.get(i))
            else {
                continue;
            };
            let added = count.saturating_sub(base);
            if added == 0 {
                continue;
            }
            if let Some(MnaWarning::IllConditioned {
                freq_hz: f,
                condition: k,
                near: n,
                count: c,
            }) = self.ill_warning.and_then(|i| self.warnings.get_mut(i))
            {
                *c += added;
                if *condition > *k {
                    *k = *condition;
                    *f = *freq_hz;
                    n.clone_from(near);
                }
            } else {
                self.ill_warning = Some(self.warnings.len());
                self.warnings.push(MnaWarning::IllConditioned {
                    freq_hz: *freq_hz,
                    condition: *condition,
                    near: near.clone(),
                    count: added,
                });
            }
        }
    }
}
