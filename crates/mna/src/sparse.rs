//! The sparse path: the stamp pattern in compressed columns, and a sparse complex LU
//! whose ordering, symbolic analysis and pivot sequence are computed once per
//! [`System`], with only the numeric factorisation repeated per frequency.
//!
//! # Method
//! [`SparseLu::for_system`] asks faer (0.24, `sparse-linalg`) for a COLAMD
//! fill-reducing column order and a simplicial partial-pivoting LU of the
//! equilibrated `Y(jω_ref)`, at a reference frequency where `G` and `ωC` have the same
//! overall size. The row pivots and the patterns of `L` and `U` from that
//! factorisation are kept. Every later factorisation is a left-looking
//! (Gilbert–Peierls) refactorisation over those fixed patterns with the same pivots:
//! no graph search, no pivot search, no allocation. Each pivot is checked against the
//! largest candidate below it in its column (threshold [`PIVOT_THRESHOLD`], the
//! threshold partial pivoting of the sparse direct literature, e.g. Davis, *Direct
//! Methods for Sparse Linear Systems*, SIAM 2006, §6); when it fails (a DC point
//! where capacitors vanish, say), that one frequency is factorised afresh by faer with
//! full partial pivoting, and the kept reference is left untouched. So the result at
//! a frequency depends on that frequency alone, whichever order or thread the
//! frequencies are solved in.
//!
//! Why faer: it is pure Rust, already an approved dependency, has complex LU with a
//! COLAMD ordering and an exposed simplicial factor (the patterns this module reuses),
//! and it needs no C library or BLAS. Its own "numeric" refactorisation redoes the
//! sparse reach and the pivot search for every matrix; the static refactorisation
//! here removes that work, which is most of the cost on ladder-like circuits.
//!
//! Equilibration is the dense path's: rows, then columns, by powers of two (exact),
//! so the pivot ratio, the pivot growth and the condition estimate mean the same on
//! both paths. Memory is linear in the number of stamp entries and of factor entries.

use faer::dyn_stack::{MemBuffer, MemStack};
use faer::sparse::linalg::SupernodalThreshold;
use faer::sparse::linalg::lu::{LuSymbolicParams, SymbolicLu, factorize_symbolic_lu, simplicial};
use faer::sparse::{SparseColMatRef, SymbolicSparseColMatRef};
use num_complex::Complex64;

use crate::solver::{DenseLu, FactorReport, LinearSolver, SolverError, inverse_pow2, norm1};
use crate::system::{Coef, Matrix, Parameter, StampEntry, System};

const ZERO: Complex64 = Complex64::new(0.0, 0.0);

/// A kept pivot is accepted when `|pivot| ≥ PIVOT_THRESHOLD · max |candidate|` over
/// the entries below it in its column (`|re| + |im|` magnitudes).
pub const PIVOT_THRESHOLD: f64 = 0.1;

/// A borrowed compressed-column `Y(jω) = G + jωC`: the pattern (row indices sorted
/// within each column) with `G` and `C` at each position.
#[derive(Debug, Clone, Copy)]
pub(crate) struct CscView<'a> {
    dim: usize,
    col_ptr: &'a [usize],
    row_idx: &'a [usize],
    g: &'a [f64],
    c: &'a [f64],
}

impl<'a> CscView<'a> {
    /// The system's pattern and values.
    pub(crate) fn of(system: &'a System) -> CscView<'a> {
        let (col_ptr, row_idx) = system.csc_pattern();
        CscView {
            dim: system.dim(),
            col_ptr,
            row_idx,
            g: system.g_values(),
            c: system.c_values(),
        }
    }

    fn dim(&self) -> usize {
        self.dim
    }

    fn nnz(&self) -> usize {
        self.row_idx.len()
    }

    fn col_ptr(&self) -> &'a [usize] {
        self.col_ptr
    }

    fn row_idx(&self) -> &'a [usize] {
        self.row_idx
    }

    fn g_values(&self) -> &'a [f64] {
        self.g
    }

    fn c_values(&self) -> &'a [f64] {
        self.c
    }
}

/// An owned compressed-column pattern with values, for a matrix other than the
/// system's own (the op-amp feedback test).
#[derive(Debug, Clone, Default)]
pub(crate) struct CscValues {
    dim: usize,
    col_ptr: Vec<usize>,
    row_idx: Vec<usize>,
    g: Vec<f64>,
    c: Vec<f64>,
}

impl CscValues {
    /// The compressed pattern of `entries` with their values summed per position.
    pub(crate) fn new(dim: usize, entries: &[StampEntry], params: &[Parameter]) -> CscValues {
        let mut counts = vec![0usize; dim + 1];
        let mut pos: Vec<(usize, usize)> = entries.iter().map(|e| (e.col, e.row)).collect();
        pos.sort_unstable();
        pos.dedup();
        for &(c, _) in &pos {
            counts[c + 1] += 1;
        }
        for k in 0..dim {
            counts[k + 1] += counts[k];
        }
        let row_idx: Vec<usize> = pos.iter().map(|&(_, r)| r).collect();
        let nnz = row_idx.len();
        let (mut g, mut c) = (vec![0.0; nnz], vec![0.0; nnz]);
        for e in entries {
            let (lo, hi) = (counts[e.col], counts[e.col + 1]);
            let s = lo + row_idx[lo..hi].partition_point(|&r| r < e.row);
            let v = match e.coef {
                Coef::Const(v) => v,
                Coef::Param { index, scale } => scale * params[index].value,
                Coef::Reciprocal { index, scale } => scale / params[index].value,
            };
            match e.matrix {
                Matrix::G => g[s] += v,
                Matrix::C => c[s] += v,
            }
        }
        CscValues {
            dim,
            col_ptr: counts,
            row_idx,
            g,
            c,
        }
    }

    fn view(&self) -> CscView<'_> {
        CscView {
            dim: self.dim,
            col_ptr: &self.col_ptr,
            row_idx: &self.row_idx,
            g: &self.g,
            c: &self.c,
        }
    }
}

/// `L` and `U` of `P A Q = L U` over fixed patterns, in the index spaces the solves
/// need: `L`'s rows are original row numbers, `U`'s are pivot positions (ascending
/// within a column, the diagonal kept apart).
#[derive(Debug, Clone, Default)]
struct Factors {
    n: usize,
    /// Pivot position → original row.
    row_perm: Vec<usize>,
    /// Pivot position → original column.
    col_perm: Vec<usize>,
    l_ptr: Vec<usize>,
    l_row: Vec<usize>,
    l_val: Vec<Complex64>,
    u_ptr: Vec<usize>,
    u_pos: Vec<usize>,
    u_row: Vec<usize>,
    u_val: Vec<Complex64>,
    diag: Vec<Complex64>,
    inv_diag: Vec<Complex64>,
    /// Cycles of the map `row_perm[j] → col_perm[j]`, flattened, each of length ≥ 2,
    /// with their start offsets in `cycle_ptr`.
    cycles: Vec<usize>,
    cycle_ptr: Vec<usize>,
    /// Scratch for [`Factors::load`] (kept so a reload allocates nothing).
    scratch_col: Vec<(usize, Complex64)>,
    scratch_target: Vec<usize>,
    scratch_seen: Vec<bool>,
}

impl Factors {
    /// Takes over faer's simplicial factors (reusing this value's storage).
    fn load(
        &mut self,
        lu: &simplicial::SimplicialLu<usize, Complex64>,
        row_perm: &[usize],
        col_perm: &[usize],
    ) {
        let n = row_perm.len();
        self.n = n;
        self.row_perm.clear();
        self.row_perm.extend_from_slice(row_perm);
        self.col_perm.clear();
        self.col_perm.extend_from_slice(col_perm);
        let l = lu.l_factor_unsorted();
        let u = lu.u_factor_unsorted();
        self.l_ptr.clear();
        self.l_row.clear();
        self.l_val.clear();
        self.u_ptr.clear();
        self.u_pos.clear();
        self.u_row.clear();
        self.u_val.clear();
        self.diag.clear();
        self.inv_diag.clear();
        self.l_ptr.push(0);
        self.u_ptr.push(0);
        let mut col = std::mem::take(&mut self.scratch_col);
        for j in 0..n {
            // L: pivot positions ≥ j, the unit diagonal first; stored without it.
            for (p, &v) in l.row_idx_of_col(j).zip(l.val_of_col(j)) {
                if p != j {
                    self.l_row.push(row_perm[p]);
                    self.l_val.push(v);
                }
            }
            self.l_ptr.push(self.l_row.len());
            col.clear();
            let mut d = ZERO;
            for (p, &v) in u.row_idx_of_col(j).zip(u.val_of_col(j)) {
                if p == j {
                    d = v;
                } else {
                    col.push((p, v));
                }
            }
            col.sort_unstable_by_key(|&(p, _)| p);
            for &(p, v) in &col {
                self.u_pos.push(p);
                self.u_row.push(row_perm[p]);
                self.u_val.push(v);
            }
            self.u_ptr.push(self.u_pos.len());
            self.diag.push(d);
            self.inv_diag.push(if d == ZERO { ZERO } else { d.inv() });
        }
        // The cycles of the final permutation (position row_perm[j] → col_perm[j]).
        self.scratch_col = col;
        let mut target = std::mem::take(&mut self.scratch_target);
        target.clear();
        target.resize(n, 0);
        for j in 0..n {
            target[row_perm[j]] = col_perm[j];
        }
        let mut seen = std::mem::take(&mut self.scratch_seen);
        seen.clear();
        seen.resize(n, false);
        self.cycles.clear();
        self.cycle_ptr.clear();
        self.cycle_ptr.push(0);
        for start in 0..n {
            if seen[start] || target[start] == start {
                continue;
            }
            let mut a = start;
            while !seen[a] {
                seen[a] = true;
                self.cycles.push(a);
                a = target[a];
            }
            self.cycle_ptr.push(self.cycles.len());
        }
        self.scratch_target = target;
        self.scratch_seen = seen;
    }

    /// Refactorises `Y(jω)` over the kept patterns and pivots, equilibrating on the
    /// fly: rows by `row_scale` (made before), each column by the power of two that
    /// brings its largest row-scaled entry to `[1, 2)` (written to `col_scale`), so the
    /// values are read once and never stored. `x` is a zeroed work vector of length
    /// `n`, left zeroed. Returns the report and the scaled matrix's 1-norm, or the
    /// pivot position whose pivot is zero or below the threshold.
    fn refactor(
        &mut self,
        csc: &CscView<'_>,
        omega: f64,
        row_scale: &[f64],
        col_scale: &mut [f64],
        x: &mut [Complex64],
    ) -> Result<(FactorReport, f64), usize> {
        let (col_ptr, row_idx, gv, cv) =
            (csc.col_ptr(), csc.row_idx(), csc.g_values(), csc.c_values());
        let (mut dmin, mut dmax, mut at, mut umax) = (f64::INFINITY, 0.0f64, 0, 0.0f64);
        let mut norm = 0.0f64;
        for j in 0..self.n {
            let q = self.col_perm[j];
            let (lo, hi) = (col_ptr[q], col_ptr[q + 1]);
            let mut m = 0.0f64;
            for s in lo..hi {
                let r = row_scale[row_idx[s]];
                m = m.max(r * (gv[s].abs() + (omega * cv[s]).abs()));
            }
            let cs = if m > 0.0 { inverse_pow2(m) } else { 1.0 };
            col_scale[q] = cs;
            let mut sum = 0.0;
            for s in lo..hi {
                let i = row_idx[s];
                let z = Complex64::new(gv[s], omega * cv[s]) * (row_scale[i] * cs);
                sum += norm1(z);
                x[i] = z;
            }
            norm = norm.max(sum);
            for t in self.u_ptr[j]..self.u_ptr[j + 1] {
                let r = self.u_row[t];
                let ukj = x[r];
                x[r] = ZERO;
                self.u_val[t] = ukj;
                umax = umax.max(norm1(ukj));
                if ukj != ZERO {
                    let k = self.u_pos[t];
                    for l in self.l_ptr[k]..self.l_ptr[k + 1] {
                        x[self.l_row[l]] -= self.l_val[l] * ukj;
                    }
                }
            }
            let r = self.row_perm[j];
            let piv = x[r];
            x[r] = ZERO;
            let (lo, hi) = (self.l_ptr[j], self.l_ptr[j + 1]);
            let mut m = 0.0f64;
            for &i in &self.l_row[lo..hi] {
                m = m.max(norm1(x[i]));
            }
            let p = norm1(piv);
            if !(p > 0.0 && p.is_finite() && p >= PIVOT_THRESHOLD * m) {
                x.fill(ZERO);
                return Err(j);
            }
            if p < dmin {
                dmin = p;
                at = q;
            }
            dmax = dmax.max(p);
            let inv = piv.inv();
            self.diag[j] = piv;
            self.inv_diag[j] = inv;
            for l in lo..hi {
                let i = self.l_row[l];
                self.l_val[l] = x[i] * inv;
                x[i] = ZERO;
            }
        }
        let report = FactorReport {
            pivot_ratio: if self.n == 0 { 1.0 } else { dmin / dmax },
            growth: umax.max(dmax),
            smallest_pivot_unknown: at,
        };
        Ok((report, norm))
    }

    /// Pivot ratio, growth and smallest pivot of the current values; a zero or
    /// non-finite pivot is an error at its column's unknown.
    fn report(&self) -> Result<FactorReport, SolverError> {
        let (mut dmin, mut dmax, mut at) = (f64::INFINITY, 0.0f64, 0);
        for (j, &d) in self.diag.iter().enumerate() {
            let v = norm1(d);
            if !(v > 0.0 && v.is_finite()) {
                return Err(SolverError::ZeroPivot {
                    unknown: self.col_perm[j],
                });
            }
            if v < dmin {
                dmin = v;
                at = self.col_perm[j];
            }
            dmax = dmax.max(v);
        }
        let umax = self.u_val.iter().fold(dmax, |m, &z| m.max(norm1(z)));
        Ok(FactorReport {
            pivot_ratio: if self.n == 0 { 1.0 } else { dmin / dmax },
            growth: umax,
            smallest_pivot_unknown: at,
        })
    }

    /// Solves `A_s x = b` in place (`b` by original row in, `x` by original column out).
    fn solve(&self, b: &mut [Complex64]) {
        for j in 0..self.n {
            let t = b[self.row_perm[j]];
            if t != ZERO {
                for l in self.l_ptr[j]..self.l_ptr[j + 1] {
                    b[self.l_row[l]] -= self.l_val[l] * t;
                }
            }
        }
        for j in (0..self.n).rev() {
            let r = self.row_perm[j];
            let t = b[r] * self.inv_diag[j];
            b[r] = t;
            if t != ZERO {
                for u in self.u_ptr[j]..self.u_ptr[j + 1] {
                    b[self.u_row[u]] -= self.u_val[u] * t;
                }
            }
        }
        for w in self.cycle_ptr.windows(2) {
            let cyc = &self.cycles[w[0]..w[1]];
            // The value at cyc[k] belongs at cyc[k + 1] (and the last at cyc[0]).
            let last = b[cyc[cyc.len() - 1]];
            for k in (1..cyc.len()).rev() {
                b[cyc[k]] = b[cyc[k - 1]];
            }
            b[cyc[0]] = last;
        }
    }

    /// Solves `A_sᴴ y = z` (`z` by original column, `y` out by original row); `w` is
    /// a work vector of length `n`.
    fn solve_adjoint(&self, z: &mut [Complex64], w: &mut [Complex64]) {
        for (j, wj) in w.iter_mut().enumerate() {
            *wj = z[self.col_perm[j]];
        }
        // Uᴴ v = w (lower triangular, by columns of U as rows of Uᴴ).
        for j in 0..self.n {
            let mut s = w[j];
            for t in self.u_ptr[j]..self.u_ptr[j + 1] {
                s -= self.u_val[t].conj() * w[self.u_pos[t]];
            }
            w[j] = s * self.inv_diag[j].conj();
        }
        // Lᴴ y = v, y kept by original row.
        for j in (0..self.n).rev() {
            let mut s = w[j];
            for l in self.l_ptr[j]..self.l_ptr[j + 1] {
                s -= self.l_val[l].conj() * z[self.l_row[l]];
            }
            z[self.row_perm[j]] = s;
        }
    }

    fn nnz(&self) -> usize {
        self.l_row.len() + self.u_pos.len() + self.n
    }
}

/// Which factors answer the solves.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Active {
    None,
    Kept,
    Fresh,
}

/// Sparse complex LU with a symbolic analysis and pivot order computed once per
/// system, power-of-two equilibration, and a fresh pivoting factorisation for the rare
/// frequency where a kept pivot fails (see the module documentation).
///
/// ```
/// use rolloff_mna::{Analyzer, SparseLu};
/// use rolloff_netlist::{Circuit, ProbeKind};
///
/// let circuit = Circuit::builder()
///     .vsrc("V1", "in", "gnd", 1.0)
///     .resistor("R1", "in", "out", 1e3)
///     .capacitor("C1", "out", "gnd", 1e-6)
///     .build()
///     .unwrap();
/// let out = circuit.node("out").unwrap();
/// let mut analyzer = Analyzer::<SparseLu>::with_solver(&circuit).unwrap();
/// let fc = 1.0 / (2.0 * std::f64::consts::PI * 1e-3);
/// let h = analyzer.transfer(&ProbeKind::Node(out), fc).unwrap();
/// assert!((h.norm() - std::f64::consts::FRAC_1_SQRT_2).abs() < 1e-12);
/// ```
#[derive(Debug, Clone)]
pub struct SparseLu {
    n: usize,
    symbolic: Option<SymbolicLu<usize>>,
    kept: Option<Factors>,
    fresh: Factors,
    faer_lu: simplicial::SimplicialLu<usize, Complex64>,
    row_perm: Vec<usize>,
    row_perm_inv: Vec<usize>,
    col_perm: Vec<usize>,
    mem: Scratch,
    active: Active,
    vals: Vec<Complex64>,
    row_scale: Vec<f64>,
    col_scale: Vec<f64>,
    x: Vec<Complex64>,
    est_x: Vec<Complex64>,
    est_s: Vec<Complex64>,
    norm1: f64,
}

impl SparseLu {
    /// Number of entries of `L + U` of the kept factorisation (`None` when the
    /// reference factorisation failed).
    pub fn factor_nnz(&self) -> Option<usize> {
        self.kept.as_ref().map(Factors::nnz)
    }

    /// Whether the last factorisation used the kept pivots (false when it needed a
    /// fresh pivoting factorisation).
    pub fn last_used_kept_pivots(&self) -> bool {
        self.active == Active::Kept
    }

    /// Fills `vals` with the equilibrated `Y(jω)` and records the scales.
    /// The row scales of `Y(jω)`: each row by the power of two that brings its
    /// largest entry (`|re| + |im|`) to `[1, 2)`.
    fn row_scales(&mut self, csc: &CscView<'_>, omega: f64) -> Result<(), SolverError> {
        let rmax = &mut self.row_scale;
        rmax.fill(0.0);
        for ((&r, &g), &c) in csc.row_idx().iter().zip(csc.g_values()).zip(csc.c_values()) {
            rmax[r] = rmax[r].max(g.abs() + (omega * c).abs());
        }
        for (row, r) in rmax.iter_mut().enumerate() {
            if !(*r > 0.0 && r.is_finite()) {
                return Err(SolverError::ZeroRow { row });
            }
            *r = inverse_pow2(*r);
        }
        Ok(())
    }

    /// The equilibrated values of `Y(jω)` into `vals` (row scales made before), for
    /// a fresh factorisation.
    fn fill_scaled(&mut self, csc: &CscView<'_>, omega: f64) {
        let (col_ptr, row_idx) = (csc.col_ptr(), csc.row_idx());
        let rmax = &self.row_scale;
        for ((v, &g), &c) in self.vals.iter_mut().zip(csc.g_values()).zip(csc.c_values()) {
            *v = Complex64::new(g, omega * c);
        }
        let mut norm = 0.0f64;
        for col in 0..self.n {
            let (lo, hi) = (col_ptr[col], col_ptr[col + 1]);
            let mut m = 0.0f64;
            for s in lo..hi {
                let z = self.vals[s] * rmax[row_idx[s]];
                self.vals[s] = z;
                m = m.max(norm1(z));
            }
            let cs = if m > 0.0 { inverse_pow2(m) } else { 1.0 };
            self.col_scale[col] = cs;
            let mut sum = 0.0;
            for z in &mut self.vals[lo..hi] {
                *z *= cs;
                sum += norm1(*z);
            }
            norm = norm.max(sum);
        }
        self.norm1 = norm;
    }

    /// A fresh partial-pivoting factorisation of the scaled values (faer, with the
    /// kept column order) into `fresh`.
    fn factor_fresh(&mut self, csc: &CscView<'_>) -> Result<FactorReport, SolverError> {
        self.active = Active::None;
        let Some(symbolic) = &self.symbolic else {
            return Err(SolverError::ZeroPivot { unknown: 0 });
        };
        let n = self.n;
        let pattern =
            SymbolicSparseColMatRef::new_checked(n, n, csc.col_ptr(), None, csc.row_idx());
        let a = SparseColMatRef::new(pattern, &self.vals);
        let Some(mem) = self.mem.0.as_mut() else {
            return Err(SolverError::ZeroPivot { unknown: 0 });
        };
        let col_perm = symbolic.col_perm();
        match simplicial::factorize_simplicial_numeric_lu(
            &mut self.row_perm,
            &mut self.row_perm_inv,
            &mut self.faer_lu,
            a,
            col_perm,
            MemStack::new(mem),
        ) {
            Ok(()) => {}
            Err(faer::sparse::linalg::LuError::SymbolicSingular { index }) => {
                return Err(SolverError::ZeroPivot {
                    unknown: col_perm.arrays().0.get(index).copied().unwrap_or(0),
                });
            }
            Err(_) => return Err(SolverError::ZeroPivot { unknown: 0 }),
        }
        self.fresh
            .load(&self.faer_lu, &self.row_perm, &self.col_perm);
        let report = self.fresh.report()?;
        self.active = Active::Fresh;
        Ok(report)
    }
}

/// faer's work memory; a clone gets its own buffer of the same size.
struct Scratch(Option<MemBuffer>, faer::dyn_stack::StackReq);

impl Scratch {
    fn new(req: faer::dyn_stack::StackReq) -> Scratch {
        Scratch(MemBuffer::try_new(req).ok(), req)
    }
}

impl std::fmt::Debug for Scratch {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_tuple("Scratch").field(&self.1).finish()
    }
}

impl Clone for Scratch {
    fn clone(&self) -> Scratch {
        Scratch::new(self.1)
    }
}

/// The frequency (rad/s) at which `G` and `ωC` have the same total size: where the
/// kept pivot order is made.
fn reference_omega(csc: &CscView<'_>) -> f64 {
    let g: f64 = csc.g_values().iter().map(|v| v.abs()).sum();
    let c: f64 = csc.c_values().iter().map(|v| v.abs()).sum();
    if c > 0.0 && g > 0.0 && (g / c).is_finite() {
        g / c
    } else {
        1.0
    }
}

impl SparseLu {
    /// The solver for a compressed pattern (as [`LinearSolver::for_system`]).
    pub(crate) fn for_csc(csc: &CscView<'_>) -> SparseLu {
        let n = csc.dim();
        let mut lu = SparseLu {
            n,
            symbolic: None,
            kept: None,
            fresh: Factors::default(),
            faer_lu: simplicial::SimplicialLu::new(),
            row_perm: vec![0; n],
            row_perm_inv: vec![0; n],
            col_perm: Vec::new(),
            mem: Scratch::new(simplicial::factorize_simplicial_numeric_lu_scratch::<
                usize,
                Complex64,
            >(n, n)),
            active: Active::None,
            vals: vec![ZERO; csc.nnz()],
            row_scale: vec![1.0; n],
            col_scale: vec![1.0; n],
            x: vec![ZERO; n],
            est_x: vec![ZERO; n],
            est_s: vec![ZERO; n],
            norm1: 0.0,
        };
        let pattern =
            SymbolicSparseColMatRef::new_checked(n, n, csc.col_ptr(), None, csc.row_idx());
        let params = LuSymbolicParams {
            supernodal_flop_ratio_threshold: SupernodalThreshold::FORCE_SIMPLICIAL,
            ..LuSymbolicParams::default()
        };
        lu.symbolic = factorize_symbolic_lu(pattern, params).ok();
        if let Some(s) = &lu.symbolic {
            lu.col_perm = s.col_perm().arrays().0.to_vec();
        }
        // The kept pivots: from the first reference frequency that factorises.
        let w = reference_omega(csc);
        for omega in [w, w * 1e3, w * 1e-3, 1.0] {
            if lu.row_scales(csc, omega).is_ok() && {
                lu.fill_scaled(csc, omega);
                lu.factor_fresh(csc).is_ok()
            } {
                lu.kept = Some(lu.fresh.clone());
                break;
            }
        }
        lu.active = Active::None;
        lu
    }

    /// Factorises `Y(jω)` of a compressed pattern (as [`LinearSolver::factor`]).
    ///
    /// # Errors
    /// [`SolverError`] when the matrix is exactly singular.
    pub(crate) fn factor_csc(
        &mut self,
        csc: &CscView<'_>,
        omega: f64,
    ) -> Result<FactorReport, SolverError> {
        self.active = Active::None;
        self.row_scales(csc, omega)?;
        if let Some(kept) = &mut self.kept
            && let Ok((report, norm)) = kept.refactor(
                csc,
                omega,
                &self.row_scale,
                &mut self.col_scale,
                &mut self.x,
            )
        {
            self.norm1 = norm;
            self.active = Active::Kept;
            return Ok(report);
        }
        self.fill_scaled(csc, omega);
        self.factor_fresh(csc)
    }
}

impl LinearSolver for SparseLu {
    fn for_system(system: &System) -> Self {
        SparseLu::for_csc(&CscView::of(system))
    }

    fn factor(&mut self, system: &System, omega: f64) -> Result<FactorReport, SolverError> {
        self.factor_csc(&CscView::of(system), omega)
    }

    fn solve_in_place(&mut self, rhs: &mut [Complex64]) {
        let f = match self.active {
            Active::Kept => self.kept.as_ref(),
            Active::Fresh => Some(&self.fresh),
            Active::None => None,
        };
        let Some(f) = f else {
            return;
        };
        for (b, &r) in rhs.iter_mut().zip(&self.row_scale) {
            *b *= r;
        }
        f.solve(rhs);
        for (b, &c) in rhs.iter_mut().zip(&self.col_scale) {
            *b *= c;
        }
    }

    fn condition_estimate(&mut self) -> f64 {
        let norm = self.norm1;
        let f = match self.active {
            Active::Kept => self.kept.as_ref(),
            Active::Fresh => Some(&self.fresh),
            Active::None => None,
        };
        let Some(f) = f else {
            return f64::INFINITY;
        };
        norm * inverse_norm1_estimate(f, &mut self.est_x, &mut self.est_s, &mut self.x)
    }
}

/// Hager/Higham estimate of `‖A_s⁻¹‖₁` from the factors, by the dense path's estimator.
fn inverse_norm1_estimate(
    f: &Factors,
    x: &mut [Complex64],
    s: &mut [Complex64],
    w: &mut [Complex64],
) -> f64 {
    let est = crate::solver::hager(f.n, x, s, |v, adjoint| {
        if adjoint {
            f.solve_adjoint(v, w);
        } else {
            f.solve(v);
        }
    });
    w.fill(ZERO);
    est
}

/// How [`AutoLu`] picks its kernel.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum SolverChoice {
    /// By size and fill (see [`AutoLu`]).
    #[default]
    Auto,
    /// Always the dense LU.
    Dense,
    /// Always the sparse LU.
    Sparse,
}

/// Up to this many unknowns the dense LU is used without looking at the pattern
/// (measured crossover on ladder-like networks, see `docs/performance.md`).
pub const DENSE_ALWAYS_MAX: usize = 8;

/// Above this many unknowns the sparse LU is always used.
pub const DENSE_NEVER_ABOVE: usize = 200;

/// The solver the [`crate::Analyzer`] uses by default: the dense LU for small systems,
/// the sparse LU for large ones, chosen once per system.
///
/// With [`SolverChoice::Auto`], systems of at most [`DENSE_ALWAYS_MAX`] unknowns go
/// dense and those above [`DENSE_NEVER_ABOVE`] go sparse; in between, the sparse
/// symbolic analysis is made and the dense LU is kept only when `L + U` would hold more
/// than a quarter of `n²` entries (little sparsity left to exploit).
#[derive(Debug, Clone)]
pub struct AutoLu {
    inner: AutoInner,
}

#[derive(Debug, Clone)]
enum AutoInner {
    Dense(DenseLu),
    Sparse(Box<SparseLu>),
}

impl AutoLu {
    /// The solver for a system, with the kernel chosen as `choice` says.
    pub fn with_choice(system: &System, choice: SolverChoice) -> AutoLu {
        let n = system.dim();
        let inner = match choice {
            SolverChoice::Dense => AutoInner::Dense(DenseLu::with_dim(n)),
            SolverChoice::Sparse => AutoInner::Sparse(Box::new(SparseLu::for_system(system))),
            SolverChoice::Auto if n <= DENSE_ALWAYS_MAX => AutoInner::Dense(DenseLu::with_dim(n)),
            SolverChoice::Auto => {
                let sparse = SparseLu::for_system(system);
                let dense_fill = sparse.factor_nnz().is_some_and(|k| 4 * k > n * n);
                if n <= DENSE_NEVER_ABOVE && dense_fill {
                    AutoInner::Dense(DenseLu::with_dim(n))
                } else {
                    AutoInner::Sparse(Box::new(sparse))
                }
            }
        };
        AutoLu { inner }
    }

    /// Whether the sparse kernel was chosen.
    pub fn is_sparse(&self) -> bool {
        matches!(self.inner, AutoInner::Sparse(_))
    }
}

impl LinearSolver for AutoLu {
    fn for_system(system: &System) -> Self {
        AutoLu::with_choice(system, SolverChoice::Auto)
    }

    fn factor(&mut self, system: &System, omega: f64) -> Result<FactorReport, SolverError> {
        match &mut self.inner {
            AutoInner::Dense(d) => d.factor(system, omega),
            AutoInner::Sparse(s) => s.factor(system, omega),
        }
    }

    fn solve_in_place(&mut self, rhs: &mut [Complex64]) {
        match &mut self.inner {
            AutoInner::Dense(d) => d.solve_in_place(rhs),
            AutoInner::Sparse(s) => s.solve_in_place(rhs),
        }
    }

    fn condition_estimate(&mut self) -> f64 {
        match &mut self.inner {
            AutoInner::Dense(d) => d.condition_estimate(),
            AutoInner::Sparse(s) => s.condition_estimate(),
        }
    }
}

/// `Y(jω)` with one equation row replaced by `x[col] = …` (a unit entry at `col`),
/// solved for a unit right-hand side in that row: the op-amp feedback test. Dense for
/// small systems, sparse (memory linear in the circuit) for large ones.
pub(crate) enum RowReplaced {
    Dense {
        lu: DenseLu,
        row: usize,
        col: usize,
    },
    Sparse {
        csc: CscValues,
        lu: Box<SparseLu>,
        row: usize,
    },
}

impl RowReplaced {
    pub(crate) fn new(system: &System, row: usize, col: usize) -> RowReplaced {
        let n = system.dim();
        if n <= DENSE_NEVER_ABOVE {
            return RowReplaced::Dense {
                lu: DenseLu::with_dim(n),
                row,
                col,
            };
        }
        let entries: Vec<StampEntry> = system
            .entries()
            .iter()
            .filter(|e| e.row != row)
            .copied()
            .chain(std::iter::once(StampEntry {
                row,
                col,
                matrix: Matrix::G,
                coef: Coef::Const(1.0),
            }))
            .collect();
        let csc = CscValues::new(n, &entries, system.params());
        let lu = Box::new(SparseLu::for_csc(&csc.view()));
        RowReplaced::Sparse { csc, lu, row }
    }

    /// Solves at `omega` into `rhs` (resized to `dim`); false when singular there.
    pub(crate) fn solve(&mut self, system: &System, omega: f64, rhs: &mut Vec<Complex64>) -> bool {
        let n = system.dim();
        rhs.clear();
        rhs.resize(n, ZERO);
        match self {
            RowReplaced::Dense { lu, row, col } => {
                system.fill_dense(omega, lu.buffer_mut());
                let buf = lu.buffer_mut();
                for c in buf.chunks_exact_mut(n) {
                    c[*row] = ZERO;
                }
                buf[*col * n + *row] = Complex64::new(1.0, 0.0);
                if lu.factor_buffer().is_err() {
                    return false;
                }
                rhs[*row] = Complex64::new(1.0, 0.0);
                lu.solve_in_place(rhs);
            }
            RowReplaced::Sparse { csc, lu, row } => {
                if lu.factor_csc(&csc.view(), omega).is_err() {
                    return false;
                }
                rhs[*row] = Complex64::new(1.0, 0.0);
                lu.solve_in_place(rhs);
            }
        }
        true
    }
}
