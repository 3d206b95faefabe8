//! A sparse complex LU (faer) with the symbolic factorisation done once per system
//! and reused at every frequency; only with the `sparse` feature.

use faer::dyn_stack::{MemBuffer, MemStack, StackReq};
use faer::sparse::linalg::LuError;
use faer::sparse::linalg::lu::{
    LuRef, LuSymbolicParams, NumericLu, SymbolicLu, factorize_symbolic_lu,
};
use faer::sparse::{SparseColMatRef, SymbolicSparseColMatRef};
use faer::{Conj, MatMut, Par, Spec};
use num_complex::Complex64;

use crate::solver::{FactorReport, LinearSolver, SolverError, inverse_pow2, norm1};
use crate::system::System;

/// Sparse LU on the system's compressed-column pattern, with the same power-of-two
/// equilibration as [`crate::DenseLu`]. The fill-reducing ordering and symbolic
/// factorisation are computed once in [`LinearSolver::for_system`]; each frequency
/// only refills the values and refactorises numerically into preallocated storage.
///
/// FIXME: faer does not expose its pivots cheaply, so this solver reports no pivot
/// ratio and the analyzer does not estimate the condition number automatically;
/// [`LinearSolver::condition_estimate`] works when asked, and non-finite results are
/// still caught as errors.
pub struct SparseLu {
    n: usize,
    col_ptr: Vec<usize>,
    row_idx: Vec<usize>,
    values: Vec<Complex64>,
    symbolic: Option<SymbolicLu<usize>>,
    numeric: NumericLu<usize, Complex64>,
    factored: bool,
    req: StackReq,
    mem: MemBuffer,
    row_scale: Vec<f64>,
    col_scale: Vec<f64>,
    norm1: f64,
    work: Vec<Complex64>,
    sign: Vec<Complex64>,
}

impl std::fmt::Debug for SparseLu {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("SparseLu")
            .field("n", &self.n)
            .field("nnz", &self.row_idx.len())
            .field("factored", &self.factored)
            .finish_non_exhaustive()
    }
}

impl Clone for SparseLu {
    fn clone(&self) -> Self {
        SparseLu {
            n: self.n,
            col_ptr: self.col_ptr.clone(),
            row_idx: self.row_idx.clone(),
            values: self.values.clone(),
            symbolic: self.symbolic.clone(),
            numeric: self.numeric.clone(),
            factored: self.factored,
            req: self.req,
            mem: MemBuffer::new(self.req),
            row_scale: self.row_scale.clone(),
            col_scale: self.col_scale.clone(),
            norm1: self.norm1,
            work: self.work.clone(),
            sign: self.sign.clone(),
        }
    }
}

impl SparseLu {
    fn equilibrate(&mut self) -> Result<(), SolverError> {
        let rmax = &mut self.row_scale;
        rmax.fill(0.0);
        for (&i, &z) in self.row_idx.iter().zip(&self.values) {
            rmax[i] = rmax[i].max(norm1(z));
        }
        for (row, r) in rmax.iter_mut().enumerate() {
            if !(*r > 0.0 && r.is_finite()) {
                return Err(SolverError::ZeroRow { row });
            }
            *r = inverse_pow2(*r);
        }
        let mut norm = 0.0f64;
        for j in 0..self.n {
            let range = self.col_ptr[j]..self.col_ptr[j + 1];
            let mut m = 0.0f64;
            for k in range.clone() {
                self.values[k] *= rmax[self.row_idx[k]];
                m = m.max(norm1(self.values[k]));
            }
            let cs = if m > 0.0 { inverse_pow2(m) } else { 1.0 };
            self.col_scale[j] = cs;
            let mut sum = 0.0;
            for k in range {
                self.values[k] *= cs;
                sum += norm1(self.values[k]);
            }
            norm = norm.max(sum);
        }
        self.norm1 = norm;
        Ok(())
    }

    fn solve_scaled(&mut self, rhs: &mut [Complex64], adjoint: bool) {
        let Some(symbolic) = &self.symbolic else {
            return;
        };
        if !self.factored || self.n == 0 {
            return;
        }
        let lu = LuRef::new_unchecked(symbolic, &self.numeric);
        let stack = MemStack::new(&mut self.mem);
        let rhs = MatMut::from_column_major_slice_mut(rhs, self.n, 1);
        if adjoint {
            lu.solve_transpose_in_place_with_conj(Conj::Yes, rhs, Par::Seq, stack);
        } else {
            lu.solve_in_place_with_conj(Conj::No, rhs, Par::Seq, stack);
        }
    }
}

impl LinearSolver for SparseLu {
    fn for_system(system: &System) -> Self {
        let n = system.dim();
        let (col_ptr, row_idx) = system.csc_pattern();
        let (col_ptr, row_idx) = (col_ptr.to_vec(), row_idx.to_vec());
        let symbolic = if n == 0 {
            None
        } else {
            let pattern = SymbolicSparseColMatRef::new_checked(n, n, &col_ptr, None, &row_idx);
            factorize_symbolic_lu(pattern, LuSymbolicParams::default()).ok()
        };
        let req = symbolic.as_ref().map_or(StackReq::EMPTY, |s| {
            StackReq::any_of(&[
                s.factorize_numeric_lu_scratch::<Complex64>(Par::Seq, Spec::default()),
                s.solve_in_place_scratch::<Complex64>(1, Par::Seq),
                s.solve_transpose_in_place_scratch::<Complex64>(1, Par::Seq),
            ])
        });
        SparseLu {
            n,
            values: vec![Complex64::new(0.0, 0.0); row_idx.len()],
            col_ptr,
            row_idx,
            symbolic,
            numeric: NumericLu::new(),
            factored: false,
            req,
            mem: MemBuffer::new(req),
            row_scale: vec![1.0; n],
            col_scale: vec![1.0; n],
            norm1: 0.0,
            work: vec![Complex64::new(0.0, 0.0); n],
            sign: vec![Complex64::new(0.0, 0.0); n],
        }
    }

    fn factor(&mut self, system: &System, omega: f64) -> Result<FactorReport, SolverError> {
        self.factored = false;
        let report = FactorReport {
            pivot_ratio: 1.0,
            growth: 1.0,
            smallest_pivot_unknown: 0,
        };
        if self.n == 0 {
            return Ok(report);
        }
        system.fill_values(omega, &mut self.values);
        self.equilibrate()?;
        let Some(symbolic) = &self.symbolic else {
            return Err(SolverError::ZeroPivot { unknown: 0 });
        };
        let pattern = SymbolicSparseColMatRef::new_checked(
            self.n,
            self.n,
            &self.col_ptr,
            None,
            &self.row_idx,
        );
        let matrix = SparseColMatRef::new(pattern, &self.values);
        let stack = MemStack::new(&mut self.mem);
        match symbolic.factorize_numeric_lu(
            &mut self.numeric,
            matrix,
            Par::Seq,
            stack,
            Spec::default(),
        ) {
            Ok(_) => {
                self.factored = true;
                Ok(report)
            }
            Err(LuError::SymbolicSingular { index }) => {
                Err(SolverError::ZeroPivot { unknown: index })
            }
            Err(LuError::Generic(_)) => Err(SolverError::ZeroPivot { unknown: 0 }),
        }
    }

    fn solve_in_place(&mut self, rhs: &mut [Complex64]) {
        for (b, &r) in rhs.iter_mut().zip(&self.row_scale) {
            *b *= r;
        }
        self.solve_scaled(rhs, false);
        for (b, &c) in rhs.iter_mut().zip(&self.col_scale) {
            *b *= c;
        }
    }

    fn condition_estimate(&mut self) -> f64 {
        let n = self.n;
        if n == 0 || !self.factored {
            return 0.0;
        }
        let mut x = std::mem::take(&mut self.work);
        let mut s = std::mem::take(&mut self.sign);
        let est = crate::solver::hager(n, &mut x, &mut s, |v, adjoint| {
            self.solve_scaled(v, adjoint);
        });
        self.work = x;
        self.sign = s;
        self.norm1 * est
    }
}
