//! Safeguarded one-dimensional solvers (Brent's root finder and minimiser) and phase
//! unwrapping. The metric engine runs them on `x = ln f`, so their absolute tolerance in
//! `x` is a relative tolerance in frequency.

/// Absolute tolerance in `ln f` for roots: 1e-12, far below the 1e-9 relative required.
pub const ROOT_TOL: f64 = 1e-12;
/// Absolute tolerance in `ln f` for a minimum located without a derivative (a smooth
/// minimum is only defined to about √ε of its abscissa).
pub const MIN_TOL: f64 = 2e-9;
/// Iteration cap of the metric engine's root searches (Brent converges in far fewer).
pub const ROOT_ITERATIONS: usize = 200;

/// Brent's method (inverse quadratic interpolation safeguarded by bisection) for a root
/// of `f` in `[a, b]`, where `fa = f(a)` and `fb = f(b)` have opposite signs (or one is
/// zero). Converges to `tol` in the abscissa within `max_iterations` steps (the best
/// point so far is returned after them); errors of `f` are passed through.
///
/// ```
/// use rolloff_report::numeric::brent_root;
/// let mut f = |x: f64| Ok::<f64, ()>(x * x - 2.0);
/// let root = brent_root(&mut f, (0.0, -2.0), (2.0, 2.0), 1e-14, 100).unwrap();
/// assert!((root - 2f64.sqrt()).abs() < 1e-13);
/// ```
///
/// # Errors
/// The first error of `f`.
pub fn brent_root<E>(
    f: &mut dyn FnMut(f64) -> Result<f64, E>,
    (a, fa): (f64, f64),
    (b, fb): (f64, f64),
    tol: f64,
    max_iterations: usize,
) -> Result<f64, E> {
    if fa == 0.0 {
        return Ok(a);
    }
    if fb == 0.0 {
        return Ok(b);
    }
    let (mut a, mut fa, mut b, mut fb) = (a, fa, b, fb);
    let (mut c, mut fc) = (b, fb);
    let mut d = b - a;
    let mut e = d;
    for _ in 0..max_iterations {
        if (fb > 0.0) == (fc > 0.0) {
            c = a;
            fc = fa;
            d = b - a;
            e = d;
        }
        if fc.abs() < fb.abs() {
            a = b;
            b = c;
            c = a;
            fa = fb;
            fb = fc;
            fc = fa;
        }
        let tol1 = 2.0 * f64::EPSILON * b.abs() + 0.5 * tol;
        let xm = 0.5 * (c - b);
        if xm.abs() <= tol1 || fb == 0.0 {
            return Ok(b);
        }
        if e.abs() >= tol1 && fa.abs() > fb.abs() {
            let s = fb / fa;
            let (mut p, mut q);
            if a == c {
                p = 2.0 * xm * s;
                q = 1.0 - s;
            } else {
                let qq = fa / fc;
                let r = fb / fc;
                p = s * (2.0 * xm * qq * (qq - r) - (b - a) * (r - 1.0));
                q = (qq - 1.0) * (r - 1.0) * (s - 1.0);
            }
            if p > 0.0 {
                q = -q;
            } else {
                p = -p;
            }
            if 2.0 * p < (3.0 * xm * q - (tol1 * q).abs()).min((e * q).abs()) {
                e = d;
                d = p / q;
            } else {
                d = xm;
                e = d;
            }
        } else {
            d = xm;
            e = d;
        }
        a = b;
        fa = fb;
        b += if d.abs() > tol1 { d } else { tol1.copysign(xm) };
        fb = f(b)?;
    }
    Ok(b)
}

/// Brent's minimiser (golden section with parabolic steps) of `f` on `[a, b]`, started
/// from an interior point `x0` with value `f0` (the best sample). Returns the abscissa and
/// value of the smallest point seen.
///
/// # Errors
/// The first error of `f`.
pub fn brent_min<E>(
    f: &mut dyn FnMut(f64) -> Result<f64, E>,
    (mut a, mut b): (f64, f64),
    (x0, f0): (f64, f64),
    tol: f64,
) -> Result<(f64, f64), E> {
    const CGOLD: f64 = 0.381_966_011_250_105;
    let (mut x, mut w, mut v) = (x0, x0, x0);
    let (mut fx, mut fw, mut fv) = (f0, f0, f0);
    let mut d: f64 = 0.0;
    let mut e: f64 = 0.0;
    for _ in 0..200 {
        let xm = 0.5 * (a + b);
        let tol1 = tol;
        let tol2 = 2.0 * tol1;
        if (x - xm).abs() <= tol2 - 0.5 * (b - a) {
            break;
        }
        let mut golden = true;
        if e.abs() > tol1 {
            let r = (x - w) * (fx - fv);
            let mut q = (x - v) * (fx - fw);
            let mut p = (x - v) * q - (x - w) * r;
            q = 2.0 * (q - r);
            if q > 0.0 {
                p = -p;
            }
            q = q.abs();
            let etemp = e;
            if p.abs() < (0.5 * q * etemp).abs() && p > q * (a - x) && p < q * (b - x) {
                e = d;
                d = p / q;
                let u = x + d;
                if u - a < tol2 || b - u < tol2 {
                    d = tol1.copysign(xm - x);
                }
                golden = false;
            }
        }
        if golden {
            e = if x >= xm { a - x } else { b - x };
            d = CGOLD * e;
        }
        let u = if d.abs() >= tol1 {
            x + d
        } else {
            x + tol1.copysign(d)
        };
        let fu = f(u)?;
        if fu <= fx {
            if u >= x {
                a = x;
            } else {
                b = x;
            }
            (v, fv, w, fw, x, fx) = (w, fw, x, fx, u, fu);
        } else {
            if u < x {
                a = u;
            } else {
                b = u;
            }
            if fu <= fw || w == x {
                (v, fv, w, fw) = (w, fw, u, fu);
            } else if fu <= fv || v == x || v == w {
                (v, fv) = (u, fu);
            }
        }
    }
    Ok((x, fx))
}

/// Unwraps phases in degrees in place: each step between neighbours is brought into
/// `(−180, 180]` by adding whole turns, so the curve is continuous from the first value.
pub fn unwrap_degrees(phases: &mut [f64]) {
    for i in 1..phases.len() {
        let prev = phases[i - 1];
        phases[i] = nearest_branch(phases[i], prev);
    }
}

/// The value `phase + k·360` (k whole) nearest to `anchor`.
pub fn nearest_branch(phase: f64, anchor: f64) -> f64 {
    phase + 360.0 * ((anchor - phase) / 360.0).round()
}

/// `a − b` on the circle, in `(−180, 180]` degrees.
pub fn circular_difference(a: f64, b: f64) -> f64 {
    let d = (a - b).rem_euclid(360.0);
    if d > 180.0 { d - 360.0 } else { d }
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    #[test]
    fn root_of_cubic_to_tolerance() {
        // x³ − 2 = 0 has the root 2^(1/3) (exact arithmetic).
        let mut f = |x: f64| Ok::<f64, ()>(x * x * x - 2.0);
        let root = brent_root(&mut f, (0.0, -2.0), (2.0, 6.0), 1e-14, ROOT_ITERATIONS).unwrap();
        assert!((root - 2f64.cbrt()).abs() < 1e-13, "{root}");
    }

    #[test]
    fn minimum_of_shifted_parabola() {
        let mut f = |x: f64| Ok::<f64, ()>((x - 0.3).powi(2) + (x - 0.3).powi(4));
        let (x, _) = brent_min(&mut f, (-1.0, 1.0), (0.0, 0.09 + 0.0081), 1e-10).unwrap();
        assert!((x - 0.3).abs() < 1e-7, "{x}");
    }

    #[test]
    fn unwrap_removes_turns() {
        let mut p = [170.0, -175.0, -160.0, 175.0];
        unwrap_degrees(&mut p);
        assert_eq!(p, [170.0, 185.0, 200.0, 175.0]);
        assert_eq!(circular_difference(359.0, 1.0), -2.0);
        assert_eq!(circular_difference(-179.0, 179.0), 2.0);
    }
}
