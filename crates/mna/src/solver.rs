//! Linear solvers behind a small trait, and the dense complex LU.
//!
//! The dense solver equilibrates `Y` by powers of two before factorising: first each
//! row by the power of two nearest below its largest entry (`|re| + |im|`), then each
//! column of the row-scaled matrix likewise, so every row and column of the scaled
//! matrix has its largest entry in `[1, 2)`. Scaling by powers of two is exact (no
//! rounding), and it puts node voltages, branch currents, `1 mΩ` and `1 TΩ`, `1 fF` at
//! `1 mHz` and `1 F` at `10 GHz` on a common footing. Conditioning is judged on the
//! scaled matrix, with a Hager/Higham 1-norm estimate of `‖A⁻¹‖₁`.

use num_complex::Complex64;

use crate::system::System;

/// Why a factorisation failed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SolverError {
    /// The matrix has a row with no non-zero entry (its unknown's equation is empty).
    ZeroRow {
        /// Row (equation) index.
        row: usize,
    },
    /// Elimination met an exactly zero pivot column.
    ZeroPivot {
        /// Unknown (column) index at which elimination stopped.
        unknown: usize,
    },
}

/// Facts about a factorisation, for deciding whether to estimate the condition number.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FactorReport {
    /// Smallest over largest pivot magnitude of the (scaled) matrix.
    pub pivot_ratio: f64,
    /// Largest entry of `U` over the largest entry of the scaled matrix.
    pub growth: f64,
    /// The unknown whose pivot was smallest.
    pub smallest_pivot_unknown: usize,
}

/// A linear solver for `Y(jω) x = b` that keeps its factors between solves.
///
/// An implementation reads the matrix from the [`System`] (the dense matrices or the
/// stamp pattern with the parameter vector), so a sparse solver can do its symbolic
/// analysis once in [`LinearSolver::for_system`] from [`System::pattern`] and reuse it.
/// After [`LinearSolver::factor`], no call may allocate.
pub trait LinearSolver: Clone + Send {
    /// Prepares storage (and any symbolic analysis) for a system's structure.
    fn for_system(system: &System) -> Self
    where
        Self: Sized;

    /// Factorises `Y(jω) = G + jωC` of the system.
    ///
    /// # Errors
    /// [`SolverError`] when the matrix is exactly singular.
    fn factor(&mut self, system: &System, omega: f64) -> Result<FactorReport, SolverError>;

    /// Solves `Y x = b` in place with the current factors (`rhs` holds `b`, then `x`).
    /// `&mut self` so that a solver may use its own preallocated scratch space.
    fn solve_in_place(&mut self, rhs: &mut [Complex64]);

    /// An estimate of the 1-norm condition number of the matrix as factorised (after
    /// any equilibration), from the current factors.
    fn condition_estimate(&mut self) -> f64;
}

/// Dense complex LU with partial pivoting and power-of-two equilibration, in place on
/// a preallocated column-major buffer (no allocation after construction).
#[derive(Debug, Clone, Default)]
pub struct DenseLu {
    n: usize,
    lu: Vec<Complex64>,
    inv_diag: Vec<Complex64>,
    ipiv: Vec<usize>,
    row_scale: Vec<f64>,
    col_scale: Vec<f64>,
    work: Vec<Complex64>,
    sign: Vec<Complex64>,
    norm1: f64,
}

/// `|re| + |im|`, the cheap magnitude LU pivoting uses.
#[inline]
pub(crate) fn norm1(z: Complex64) -> f64 {
    z.re.abs() + z.im.abs()
}

/// The power of two `2^-e` with `2^e <= m < 2^(e+1)`, for finite `m > 0`.
pub(crate) fn inverse_pow2(m: f64) -> f64 {
    let bits = m.to_bits();
    let biased = ((bits >> 52) & 0x7ff) as i32;
    let e = if biased == 0 {
        // Subnormal: normalise first.
        let scaled = m * f64::from_bits((1023u64 + 54) << 52);
        ((scaled.to_bits() >> 52) & 0x7ff) as i32 - 1023 - 54
    } else {
        biased - 1023
    };
    // Clamped to the normal range, so the scale itself is always finite and
    // non-zero (a subnormal row maximum is then scaled up as far as f64 allows).
    let target = (-e).clamp(-1022, 1023);
    f64::from_bits(((target + 1023) as u64) << 52)
}

impl DenseLu {
    /// Storage for an `n × n` system.
    pub fn with_dim(n: usize) -> DenseLu {
        DenseLu {
            n,
            lu: vec![Complex64::new(0.0, 0.0); n * n],
            inv_diag: vec![Complex64::new(0.0, 0.0); n],
            ipiv: vec![0; n],
            row_scale: vec![1.0; n],
            col_scale: vec![1.0; n],
            work: vec![Complex64::new(0.0, 0.0); n],
            sign: vec![Complex64::new(0.0, 0.0); n],
            norm1: 0.0,
        }
    }

    /// The matrix buffer (column-major `n × n`) to fill before [`DenseLu::factor_buffer`].
    pub fn buffer_mut(&mut self) -> &mut [Complex64] {
        &mut self.lu
    }

    /// Equilibrates and factorises the matrix currently in the buffer.
    ///
    /// # Errors
    /// [`SolverError`] when it is exactly singular.
    pub fn factor_buffer(&mut self) -> Result<FactorReport, SolverError> {
        self.equilibrate()?;
        self.eliminate()
    }

    fn equilibrate(&mut self) -> Result<(), SolverError> {
        let n = self.n;
        let a = &mut self.lu;
        let rmax = &mut self.row_scale;
        rmax.fill(0.0);
        for col in a.chunks_exact(n) {
            for (r, &z) in rmax.iter_mut().zip(col) {
                *r = r.max(norm1(z));
            }
        }
        for (row, r) in rmax.iter_mut().enumerate() {
            if !(*r > 0.0 && r.is_finite()) {
                return Err(SolverError::ZeroRow { row });
            }
            *r = inverse_pow2(*r);
        }
        let mut norm = 0.0f64;
        for (col, cs) in a.chunks_exact_mut(n).zip(self.col_scale.iter_mut()) {
            // norm1(z·r) = norm1(z)·r exactly, r being a power of two.
            let mut m = 0.0f64;
            for (z, &r) in col.iter().zip(rmax.iter()) {
                m = m.max(norm1(*z) * r);
            }
            // An all-zero column is caught as a zero pivot.
            *cs = if m > 0.0 { inverse_pow2(m) } else { 1.0 };
            // Column sums of |re| + |im|: within √2 of the modulus 1-norm, without
            // a square root per entry.
            let mut sum = 0.0;
            for (z, &r) in col.iter_mut().zip(rmax.iter()) {
                *z = *z * r * *cs;
                sum += norm1(*z);
            }
            norm = norm.max(sum);
        }
        self.norm1 = norm;
        Ok(())
    }

    fn eliminate(&mut self) -> Result<FactorReport, SolverError> {
        let n = self.n;
        let a = &mut self.lu;
        // After equilibration every column's largest entry lies in [1, 2), so the
        // growth factor is the largest entry of U. U's row k is final after step k:
        // its diagonal is the pivot and its other entries are the multipliers read
        // in the update, so the statistics cost no extra pass.
        let mut umax = 0.0f64;
        let (mut dmin, mut dmax, mut at) = (f64::INFINITY, 0.0f64, 0);
        for k in 0..n {
            let (left, right) = a.split_at_mut((k + 1) * n);
            let colk = &mut left[k * n..];
            let mut p = k;
            let mut best = norm1(colk[k]);
            for (i, &z) in colk.iter().enumerate().skip(k + 1) {
                let v = norm1(z);
                if v > best {
                    best = v;
                    p = i;
                }
            }
            if !(best > 0.0 && best.is_finite()) {
                return Err(SolverError::ZeroPivot { unknown: k });
            }
            if best < dmin {
                dmin = best;
                at = k;
            }
            dmax = dmax.max(best);
            self.ipiv[k] = p;
            if p != k {
                colk.swap(k, p);
                for col in left[..k * n].chunks_exact_mut(n) {
                    col.swap(k, p);
                }
                for col in right.chunks_exact_mut(n) {
                    col.swap(k, p);
                }
            }
            let colk = &mut left[k * n..];
            let inv = colk[k].inv();
            self.inv_diag[k] = inv;
            for z in &mut colk[k + 1..] {
                *z *= inv;
            }
            let colk = &left[k * n..];
            for colj in right.chunks_exact_mut(n) {
                let akj = colj[k];
                if akj == Complex64::new(0.0, 0.0) {
                    continue;
                }
                umax = umax.max(norm1(akj));
                for (z, &l) in colj[k + 1..].iter_mut().zip(&colk[k + 1..]) {
                    *z -= l * akj;
                }
            }
        }
        Ok(FactorReport {
            pivot_ratio: if n == 0 { 1.0 } else { dmin / dmax },
            growth: umax.max(dmax),
            smallest_pivot_unknown: at,
        })
    }

    /// Solves with the scaled factors (`P A_s = L U`), no equilibration applied.
    fn solve_scaled(&self, b: &mut [Complex64]) {
        let n = self.n;
        let a = &self.lu;
        for (k, &p) in self.ipiv.iter().enumerate() {
            if p != k {
                b.swap(k, p);
            }
        }
        for k in 0..n {
            let bk = b[k];
            if bk != Complex64::new(0.0, 0.0) {
                let col = &a[k * n..(k + 1) * n];
                for (bi, &l) in b[k + 1..].iter_mut().zip(&col[k + 1..]) {
                    *bi -= l * bk;
                }
            }
        }
        for k in (0..n).rev() {
            b[k] *= self.inv_diag[k];
            let bk = b[k];
            if bk != Complex64::new(0.0, 0.0) {
                let col = &a[k * n..(k + 1) * n];
                for (bi, &u) in b[..k].iter_mut().zip(&col[..k]) {
                    *bi -= u * bk;
                }
            }
        }
    }

    /// Solves `A_sᴴ y = z` with the scaled factors (for the condition estimate).
    fn solve_scaled_adjoint(&self, b: &mut [Complex64]) {
        let n = self.n;
        let a = &self.lu;
        // Uᴴ w = z (lower triangular).
        for i in 0..n {
            let col = &a[i * n..(i + 1) * n];
            let mut s = b[i];
            for (&u, &w) in col[..i].iter().zip(&b[..i]) {
                s -= u.conj() * w;
            }
            b[i] = s * self.inv_diag[i].conj();
        }
        // Lᴴ v = w (unit upper triangular).
        for i in (0..n).rev() {
            let col = &a[i * n..(i + 1) * n];
            let mut s = b[i];
            for (&l, &v) in col[i + 1..].iter().zip(&b[i + 1..]) {
                s -= l.conj() * v;
            }
            b[i] = s;
        }
        for k in (0..n).rev() {
            let p = self.ipiv[k];
            if p != k {
                b.swap(k, p);
            }
        }
    }

    /// Hager/Higham estimate of `‖A_s⁻¹‖₁` for the scaled matrix.
    fn inverse_norm1_estimate(&mut self) -> f64 {
        let mut x = std::mem::take(&mut self.work);
        let mut s = std::mem::take(&mut self.sign);
        let est = hager(self.n, &mut x, &mut s, |v, adjoint| {
            if adjoint {
                self.solve_scaled_adjoint(v);
            } else {
                self.solve_scaled(v);
            }
        });
        self.work = x;
        self.sign = s;
        est
    }
}

/// Hager's (1984) 1-norm estimator of `‖A⁻¹‖₁` with Higham's (1988) alternating-sign
/// safeguard, given solves with `A` (`adjoint == false`) and `Aᴴ` (`true`). `x` and
/// `s` are `n`-element work vectors.
pub(crate) fn hager(
    n: usize,
    x: &mut [Complex64],
    s: &mut [Complex64],
    mut solve: impl FnMut(&mut [Complex64], bool),
) -> f64 {
    if n == 0 {
        return 0.0;
    }
    x.fill(Complex64::new(1.0 / n as f64, 0.0));
    solve(x, false);
    let mut est: f64 = x.iter().map(|z| z.norm()).sum();
    let mut last_j = usize::MAX;
    for _ in 0..5 {
        for (si, xi) in s.iter_mut().zip(x.iter()) {
            let m = xi.norm();
            *si = if m > 0.0 {
                xi / m
            } else {
                Complex64::new(1.0, 0.0)
            };
        }
        solve(s, true);
        let mut j = 0;
        let mut best = -1.0;
        for (i, z) in s.iter().enumerate() {
            if z.norm() > best {
                best = z.norm();
                j = i;
            }
        }
        if j == last_j {
            break;
        }
        last_j = j;
        x.fill(Complex64::new(0.0, 0.0));
        x[j] = Complex64::new(1.0, 0.0);
        solve(x, false);
        let new: f64 = x.iter().map(|z| z.norm()).sum();
        if new <= est {
            break;
        }
        est = new;
    }
    // Higham's alternating-sign test vector guards against a poor local maximum.
    let denom = (n.max(2) - 1) as f64;
    for (i, xi) in x.iter_mut().enumerate() {
        let sgn = if i % 2 == 0 { 1.0 } else { -1.0 };
        *xi = Complex64::new(sgn * (1.0 + i as f64 / denom), 0.0);
    }
    solve(x, false);
    let alt: f64 = 2.0 * x.iter().map(|z| z.norm()).sum::<f64>() / (3.0 * n as f64);
    est.max(alt)
}

impl LinearSolver for DenseLu {
    fn for_system(system: &System) -> Self {
        DenseLu::with_dim(system.dim())
    }

    fn factor(&mut self, system: &System, omega: f64) -> Result<FactorReport, SolverError> {
        system.fill_dense(omega, &mut self.lu);
        self.factor_buffer()
    }

    fn solve_in_place(&mut self, rhs: &mut [Complex64]) {
        for (b, &r) in rhs.iter_mut().zip(&self.row_scale) {
            *b *= r;
        }
        self.solve_scaled(rhs);
        for (b, &c) in rhs.iter_mut().zip(&self.col_scale) {
            *b *= c;
        }
    }

    fn condition_estimate(&mut self) -> f64 {
        self.norm1 * self.inverse_norm1_estimate()
    }
}

#[cfg(test)]
mod tests {
    #![allow(clippy::unwrap_used, clippy::expect_used)]
    use super::*;

    #[test]
    fn inverse_pow2_brackets() {
        for m in [1.0, 1.5, 3.0, 1e-300, 1e300, 3e-308, 0.75, 1e307] {
            let s = inverse_pow2(m);
            let p = m * s;
            assert!((1.0..2.0).contains(&p), "{m}: {p}");
        }
        // A subnormal maximum cannot be brought to [1, 2) by a finite power of two.
        let s = inverse_pow2(5e-320);
        assert!(s.is_finite() && 5e-320 * s > 1e-13);
    }

    fn solve_dense(a: &[[Complex64; 3]; 3], b: [Complex64; 3]) -> [Complex64; 3] {
        let mut lu = DenseLu::with_dim(3);
        for (j, col) in lu.buffer_mut().chunks_exact_mut(3).enumerate() {
            for (i, z) in col.iter_mut().enumerate() {
                *z = a[i][j];
            }
        }
        lu.factor_buffer().unwrap();
        let mut x = b;
        lu.solve_in_place(&mut x);
        x
    }

    #[test]
    fn solves_a_general_complex_system() {
        let c = |re, im| Complex64::new(re, im);
        let a = [
            [c(0.0, 1.0), c(2.0, 0.0), c(1.0, -1.0)],
            [c(3.0, 0.0), c(0.0, 0.0), c(1.0, 0.0)],
            [c(1.0, 1.0), c(1.0, 0.0), c(0.0, 2.0)],
        ];
        let x_true = [c(1.0, 2.0), c(-1.0, 0.5), c(0.25, -3.0)];
        let mut b = [c(0.0, 0.0); 3];
        for i in 0..3 {
            for j in 0..3 {
                b[i] += a[i][j] * x_true[j];
            }
        }
        let x = solve_dense(&a, b);
        for i in 0..3 {
            assert!((x[i] - x_true[i]).norm() < 1e-14, "{x:?}");
        }
    }

    #[test]
    fn condition_estimate_matches_a_known_matrix() {
        // diag(1, 1e-8) scaled by powers of two becomes near identity: well conditioned.
        let mut lu = DenseLu::with_dim(2);
        lu.buffer_mut()[0] = Complex64::new(1.0, 0.0);
        lu.buffer_mut()[3] = Complex64::new(1e-8, 0.0);
        lu.factor_buffer().unwrap();
        assert!(lu.condition_estimate() <= 2.0);
        // [[1, 1], [1, 1 + 1e-10]]: the exact 1-norm condition number is about 4e10.
        let mut lu = DenseLu::with_dim(2);
        let buf = lu.buffer_mut();
        buf[0] = Complex64::new(1.0, 0.0);
        buf[1] = Complex64::new(1.0, 0.0);
        buf[2] = Complex64::new(1.0, 0.0);
        buf[3] = Complex64::new(1.0 + 1e-10, 0.0);
        lu.factor_buffer().unwrap();
        let k = lu.condition_estimate();
        assert!(k > 1e10 && k < 1e11, "{k}");
    }

    #[test]
    fn zero_pivot_is_reported() {
        let mut lu = DenseLu::with_dim(2);
        let buf = lu.buffer_mut();
        buf[0] = Complex64::new(1.0, 0.0);
        buf[1] = Complex64::new(2.0, 0.0);
        buf[2] = Complex64::new(2.0, 0.0);
        buf[3] = Complex64::new(4.0, 0.0);
        assert_eq!(
            lu.factor_buffer(),
            Err(SolverError::ZeroPivot { unknown: 1 })
        );
    }

    /// The exact `‖A‖₁·‖A⁻¹‖₁` of a small matrix, by solving for every column of the
    /// inverse (the definition of the 1-norm condition number).
    fn exact_condition(a: &[Complex64], n: usize) -> f64 {
        let norm = (0..n)
            .map(|j| (0..n).map(|i| a[j * n + i].norm()).sum::<f64>())
            .fold(0.0, f64::max);
        let mut lu = DenseLu::with_dim(n);
        lu.buffer_mut().copy_from_slice(a);
        lu.factor_buffer().unwrap();
        let mut inv_norm = 0.0f64;
        for j in 0..n {
            let mut e = vec![Complex64::new(0.0, 0.0); n];
            e[j] = Complex64::new(1.0, 0.0);
            lu.solve_in_place(&mut e);
            inv_norm = inv_norm.max(e.iter().map(|z| z.norm()).sum());
        }
        norm * inv_norm
    }

    #[test]
    fn hager_estimate_is_close_to_the_exact_condition_number() {
        // Hager (1984) / Higham (1988): the estimate is a lower bound of ‖A⁻¹‖₁ that is
        // exact or nearly so on most matrices; ours uses |re| + |im| column sums for
        // ‖A‖₁, which is at most √2 above the modulus norm.
        let c = |re, im| Complex64::new(re, im);
        let mats: [Vec<Complex64>; 3] = [
            vec![
                c(4.0, 1.0),
                c(1.0, 0.0),
                c(0.0, 0.0),
                c(1.0, 0.0),
                c(3.0, 0.0),
                c(1.0, -1.0),
                c(0.0, 0.0),
                c(1.0, 1.0),
                c(2.0, 0.0),
            ],
            vec![
                c(1.0, 0.0),
                c(1.0, 0.0),
                c(1.0, 0.0),
                c(1.0, 0.0),
                c(1.0, 1e-6),
                c(1.0, 0.0),
                c(1.0, 0.0),
                c(1.0, 0.0),
                c(1.0 + 1e-4, 0.0),
            ],
            vec![
                c(1e-3, 0.0),
                c(1.0, 0.0),
                c(0.0, 5.0),
                c(2.0, 0.0),
                c(0.0, -1.0),
                c(1.0, 0.0),
                c(1.0, 1.0),
                c(0.0, 0.0),
                c(3.0, 0.0),
            ],
        ];
        for a in &mats {
            // Equilibrate first (as the solver does), then compare on the scaled matrix.
            let mut lu = DenseLu::with_dim(3);
            lu.buffer_mut().copy_from_slice(a);
            lu.equilibrate().unwrap();
            let scaled = lu.lu.clone();
            lu.eliminate().unwrap();
            let est = lu.condition_estimate();
            let exact = exact_condition(&scaled, 3);
            assert!(
                est <= exact * 2f64.sqrt() * (1.0 + 1e-12),
                "{est} > {exact}"
            );
            assert!(est >= exact / 3.0, "{est} << {exact}");
        }
    }
}
