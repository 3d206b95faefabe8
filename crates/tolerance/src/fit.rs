//! Fitting a part value: the part written `?` is solved for so that the circuit's
//! equality expectation holds, on the real (loaded, multi-stage) circuit.
//!
//! The search works in `u = ln x` over the part's fit range: a log-spaced scan brackets
//! a sign change of `metric(x) − target` (the bracket nearest the start guess wins when
//! there are several), then Brent's method (R. P. Brent, *Algorithms for Minimization
//! without Derivatives*, 1973, ch. 4) refines it. The exact value is then rounded to a
//! standard series both ways, and the best two-part combination is given, each with
//! the metric it actually gives.

use crate::error::ToleranceError;
use crate::model::{Model, expectation_metrics, sum_is_series};
use crate::series::{Combination, Joining, Series, StandardValue};
use rolloff_netlist::{Comparison, Deviation, FitRange, Metric, PartId, PartKind, Unit};

/// Options of [`fit`].
#[derive(Debug, Clone, PartialEq)]
pub struct FitOptions {
    /// The series the exact value is rounded to.
    pub series: Series,
    /// Scan points per decade of the fit range when bracketing (≥ 1).
    pub points_per_decade: usize,
    /// Convergence tolerance on `ln x` (a relative tolerance on the value).
    pub log_tolerance: f64,
    /// Iteration cap of the root finder.
    pub max_iterations: usize,
}

impl Default for FitOptions {
    /// E24, 10 scan points per decade, `1e-13` on `ln x`, 100 iterations.
    fn default() -> Self {
        Self {
            series: Series::E24,
            points_per_decade: 10,
            log_tolerance: 1e-13,
            max_iterations: 100,
        }
    }
}

/// The expectation a fit meets.
#[derive(Debug, Clone, PartialEq)]
pub struct FitTarget {
    /// Index into `Circuit::expectations`.
    pub expectation: usize,
    /// The expectation as written.
    pub text: String,
    /// The metric's label (`cutoff(out)`).
    pub label: String,
    /// The value the metric must equal.
    pub value: f64,
    /// Its unit.
    pub unit: Unit,
}

/// How two parts that replace one are connected.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Connection {
    /// In series (values add for resistors and inductors).
    Series,
    /// In parallel (values add for capacitors).
    Parallel,
}

/// A standard value tried in place of the exact one.
#[derive(Debug, Clone, PartialEq)]
pub struct StandardCandidate {
    /// The value.
    pub value: StandardValue,
    /// Whether it is the nearest on a log scale ([`Series::nearest`]).
    pub nearest: bool,
    /// The metric with this value (`Err` with the reason if it failed).
    pub metric: Result<f64, String>,
    /// `(metric − target) / target`; `None` if the metric failed or the target is 0.
    pub relative_error: Option<f64>,
}

/// The best two-part replacement.
#[derive(Debug, Clone, PartialEq)]
pub struct PairCandidate {
    /// The two values and their combination.
    pub combination: Combination,
    /// How the two parts are wired.
    pub connection: Connection,
    /// The metric with the combined value.
    pub metric: Result<f64, String>,
    /// `(metric − target) / target`.
    pub relative_error: Option<f64>,
}

/// The result of [`fit`].
#[derive(Debug, Clone, PartialEq)]
pub struct FitReport {
    /// The part solved for.
    pub part: PartId,
    /// Its name.
    pub name: String,
    /// The part's keyword (`resistor`, `capacitor`, `inductor`).
    pub kind: &'static str,
    /// The range searched.
    pub range: FitRange,
    /// The expectation met.
    pub target: FitTarget,
    /// The value that meets it.
    pub exact: f64,
    /// The metric at `exact`.
    pub achieved: f64,
    /// Model evaluations spent (scan and refinement).
    pub evaluations: usize,
    /// The series used for the candidates.
    pub series: Series,
    /// The standard values just below and just above `exact` (one if it is standard).
    pub standard: Vec<StandardCandidate>,
    /// The best two-part combination from the series.
    pub best_pair: Option<PairCandidate>,
}

/// Solves for the one part whose value is `?`.
///
/// The target is the circuit's `=` expectation; when there are several, the one
/// without a `±` (a deviation of zero) is taken.
///
/// # Errors
/// [`ToleranceError::NothingToFit`], [`ToleranceError::SeveralFitParts`],
/// [`ToleranceError::NoFitTarget`], [`ToleranceError::AmbiguousFitTarget`] for what the
/// circuit lacks; [`ToleranceError::NoBracket`] when the target is met nowhere in the
/// range; [`ToleranceError::FitFailed`] when the metric fails during refinement;
/// [`ToleranceError::InvalidOption`] for bad options or a bad range.
pub fn fit<M: Model>(model: &M, options: &FitOptions) -> Result<FitReport, ToleranceError> {
    validate(options)?;
    let (part, name, kind, range, start) = fit_part(model)?;
    let target = fit_target(model, &name)?;
    let metric = model.circuit().expectations[target.expectation].metric;
    let mut m = model.clone();
    let mut evaluations = 0usize;
    let mut residual = |u: f64| -> Result<f64, String> {
        evaluations += 1;
        m.set_part_value(part, u.exp())?;
        let v = m.measure(&metric)?;
        if v.is_finite() {
            Ok(v - target.value)
        } else {
            Err("the metric was not a finite number".into())
        }
    };
    let (lo, hi) = (range.low.ln(), range.high.ln());
    let (a, fa, b, fb) = bracket(&mut residual, lo, hi, start.ln(), options.points_per_decade)
        .map_err(|found| ToleranceError::NoBracket {
            part: name.clone(),
            metric: target.label.clone(),
            target: target.value,
            low: range.low,
            high: range.high,
            found,
        })?;
    let root = brent(
        &mut residual,
        (a, fa),
        (b, fb),
        options.log_tolerance,
        options.max_iterations,
    )
    .map_err(|(u, reason)| ToleranceError::FitFailed {
        part: name.clone(),
        metric: target.label.clone(),
        value: u.exp(),
        reason,
    })?;
    let exact = root.exp();
    let achieved = residual(root).map_err(|reason| ToleranceError::FitFailed {
        part: name.clone(),
        metric: target.label.clone(),
        value: exact,
        reason,
    })? + target.value;

    let (standard, best_pair) =
        candidates(model, part, &kind, exact, &target, metric, options.series);
    Ok(FitReport {
        part,
        name,
        kind: kind.keyword(),
        range,
        target,
        exact,
        achieved,
        evaluations,
        series: options.series,
        standard,
        best_pair,
    })
}

/// The standard values around `exact` and the best pair, each with the metric it gives
/// (on `model` as it is, with only `part` changed).
fn candidates<M: Model>(
    model: &M,
    part: PartId,
    kind: &PartKind,
    exact: f64,
    target: &FitTarget,
    metric: Metric,
    series: Series,
) -> (Vec<StandardCandidate>, Option<PairCandidate>) {
    let try_value = |v: f64| -> Result<f64, String> {
        let mut trial = model.clone();
        trial.set_part_value(part, v)?;
        trial.measure(&metric)
    };
    let relative = |r: &Result<f64, String>| {
        r.as_ref()
            .ok()
            .filter(|_| target.value != 0.0)
            .map(|v| (v - target.value) / target.value)
    };
    let nearest = series.nearest(exact);
    let mut standard: Vec<StandardCandidate> = Vec::new();
    for value in [series.next_down(exact), series.next_up(exact)]
        .into_iter()
        .flatten()
    {
        if standard.iter().any(|c| c.value == value) {
            continue;
        }
        let metric = try_value(value.value);
        standard.push(StandardCandidate {
            value,
            nearest: nearest == Some(value),
            relative_error: relative(&metric),
            metric,
        });
    }
    let best_pair = series.best_combination(exact).map(|combination| {
        let metric = try_value(combination.value);
        let series_wiring = sum_is_series(kind) == (combination.joining == Joining::Sum);
        PairCandidate {
            combination,
            connection: if series_wiring {
                Connection::Series
            } else {
                Connection::Parallel
            },
            relative_error: relative(&metric),
            metric,
        }
    });
    (standard, best_pair)
}

/// Solves for every `?` part at once, one `=` target per part (the targets without `±`,
/// else all `=` expectations, in source order; part `i` is reported against target `i`,
/// though every target holds at the solution).
///
/// One part is [`fit`]. Several are solved by Newton's method in `ln x` with a
/// forward-difference Jacobian (step `1e-6`), each step halved until the largest
/// relative residual falls, and values kept inside their fit ranges; it stops when a
/// step moves no `ln x` by more than [`FitOptions::log_tolerance`]. The candidates of
/// each part are evaluated with the other parts at their exact values.
///
/// # Errors
/// As [`fit`], and [`ToleranceError::FitCountMismatch`] when the numbers of parts and
/// targets differ, [`ToleranceError::FitFailed`] when Newton does not converge (or the
/// targets do not depend independently on the parts).
pub fn fit_all<M: Model>(
    model: &M,
    options: &FitOptions,
) -> Result<Vec<FitReport>, ToleranceError> {
    validate(options)?;
    let parts = fit_parts(model)?;
    match parts.len() {
        0 => return Err(ToleranceError::NothingToFit),
        1 => return fit(model, options).map(|r| vec![r]),
        _ => {}
    }
    let targets = fit_targets(model.circuit());
    if targets.len() != parts.len() {
        return Err(ToleranceError::FitCountMismatch {
            parts: parts.iter().map(|p| p.1.clone()).collect(),
            targets: targets.into_iter().map(|t| t.text).collect(),
        });
    }
    let metrics: Vec<Metric> = targets
        .iter()
        .map(|t| model.circuit().expectations[t.expectation].metric)
        .collect();
    let names = parts
        .iter()
        .map(|p| p.1.as_str())
        .collect::<Vec<_>>()
        .join(", ");
    let labels = targets
        .iter()
        .map(|t| t.label.as_str())
        .collect::<Vec<_>>()
        .join(", ");
    let failed = |u: &[f64], reason: String| ToleranceError::FitFailed {
        part: names.clone(),
        metric: labels.clone(),
        value: u.first().map_or(0.0, |u| u.exp()),
        reason,
    };
    let mut m = model.clone();
    let mut evaluations = 0usize;
    let mut residuals = |u: &[f64]| -> Result<Vec<f64>, String> {
        evaluations += 1;
        for (p, &ui) in parts.iter().zip(u) {
            m.set_part_value(p.0, ui.exp())?;
        }
        m.measure_many(&metrics)
            .into_iter()
            .zip(&targets)
            .map(|(measured, t)| {
                let v = measured?;
                let scale = if t.value == 0.0 { 1.0 } else { t.value.abs() };
                let r = (v - t.value) / scale;
                if r.is_finite() {
                    Ok(r)
                } else {
                    Err("the metric was not a finite number".into())
                }
            })
            .collect()
    };
    let bounds: Vec<(f64, f64)> = parts
        .iter()
        .map(|p| (p.3.low.ln(), p.3.high.ln()))
        .collect();
    let mut u: Vec<f64> = parts.iter().map(|p| p.4.ln()).collect();
    let mut r = residuals(&u).map_err(|e| failed(&u, e))?;
    let worst = |r: &[f64]| r.iter().fold(0.0f64, |a, x| a.max(x.abs()));
    let mut converged = false;
    for _ in 0..options.max_iterations {
        if worst(&r) == 0.0 {
            converged = true;
            break;
        }
        let step = 1e-6;
        let mut jacobian = vec![vec![0.0; u.len()]; u.len()];
        for k in 0..u.len() {
            let mut probe = u.clone();
            probe[k] += step;
            let rk = residuals(&probe).map_err(|e| failed(&probe, e))?;
            for (row, (a, b)) in jacobian.iter_mut().zip(rk.iter().zip(&r)) {
                row[k] = (a - b) / step;
            }
        }
        let neg: Vec<f64> = r.iter().map(|x| -x).collect();
        let du = solve_dense(jacobian, neg).ok_or_else(|| {
            failed(
                &u,
                "the targets do not depend independently on the parts (singular Jacobian)".into(),
            )
        })?;
        let mut t = 1.0;
        let (next_u, next_r) = loop {
            let trial: Vec<f64> = u
                .iter()
                .zip(&du)
                .zip(&bounds)
                .map(|((ui, di), (lo, hi))| (ui + t * di).clamp(*lo, *hi))
                .collect();
            let rt = residuals(&trial).map_err(|e| failed(&trial, e))?;
            if worst(&rt) < worst(&r) || t < 1e-4 {
                break (trial, rt);
            }
            t *= 0.5;
        };
        let moved = next_u
            .iter()
            .zip(&u)
            .fold(0.0f64, |a, (x, y)| a.max((x - y).abs()));
        u = next_u;
        r = next_r;
        if moved <= options.log_tolerance {
            converged = true;
            break;
        }
    }
    if !converged || worst(&r) > 1e-6 {
        return Err(failed(
            &u,
            format!(
                "Newton did not converge: the largest relative residual is {:.3e}",
                worst(&r)
            ),
        ));
    }
    // The model with every part at its exact value, for the candidates.
    let mut solved = model.clone();
    for (p, ui) in parts.iter().zip(&u) {
        solved
            .set_part_value(p.0, ui.exp())
            .map_err(|e| failed(&u, e))?;
    }
    let achieved = solved.measure_many(&metrics);
    let mut reports = Vec::with_capacity(parts.len());
    for (((p, target), ui), measured) in parts.into_iter().zip(targets).zip(&u).zip(achieved) {
        let (part, name, kind, range, _) = p;
        let exact = ui.exp();
        let metric = model.circuit().expectations[target.expectation].metric;
        let (standard, best_pair) =
            candidates(&solved, part, &kind, exact, &target, metric, options.series);
        reports.push(FitReport {
            part,
            name,
            kind: kind.keyword(),
            range,
            achieved: measured.map_err(|e| failed(&u, e))?,
            target,
            exact,
            evaluations,
            series: options.series,
            standard,
            best_pair,
        });
    }
    Ok(reports)
}

/// Solves `a·x = b` by Gaussian elimination with partial pivoting; `None` if singular.
fn solve_dense(mut a: Vec<Vec<f64>>, mut b: Vec<f64>) -> Option<Vec<f64>> {
    let n = b.len();
    for k in 0..n {
        let p = (k..n).max_by(|&i, &j| a[i][k].abs().total_cmp(&a[j][k].abs()))?;
        if !(a[p][k].abs() > 0.0 && a[p][k].is_finite()) {
            return None;
        }
        a.swap(k, p);
        b.swap(k, p);
        let (top, bottom) = a.split_at_mut(k + 1);
        let pivot_row = &top[k];
        for (i, row) in bottom.iter_mut().enumerate() {
            let f = row[k] / pivot_row[k];
            for (x, p) in row[k..].iter_mut().zip(&pivot_row[k..]) {
                *x -= f * p;
            }
            b[k + 1 + i] -= f * b[k];
        }
    }
    let mut x = vec![0.0; n];
    for k in (0..n).rev() {
        let s: f64 = (k + 1..n).map(|j| a[k][j] * x[j]).sum();
        x[k] = (b[k] - s) / a[k][k];
    }
    x.iter().all(|v| v.is_finite()).then_some(x)
}

fn validate(options: &FitOptions) -> Result<(), ToleranceError> {
    let bad = |option, reason: &str| {
        Err(ToleranceError::InvalidOption {
            option,
            reason: reason.to_string(),
        })
    };
    if options.points_per_decade == 0 {
        return bad(
            "points_per_decade",
            "at least one point per decade is needed",
        );
    }
    if !(options.log_tolerance > 0.0 && options.log_tolerance < 0.1) {
        return bad("log_tolerance", "must lie in (0, 0.1)");
    }
    if options.max_iterations == 0 {
        return bad("max_iterations", "at least one iteration is needed");
    }
    Ok(())
}

type FitPart = (PartId, String, PartKind, FitRange, f64);

fn fit_part<M: Model>(model: &M) -> Result<FitPart, ToleranceError> {
    let mut found = fit_parts(model)?;
    match found.len() {
        0 => Err(ToleranceError::NothingToFit),
        1 => Ok(found.remove(0)),
        _ => Err(ToleranceError::SeveralFitParts(
            found.into_iter().map(|f| f.1).collect(),
        )),
    }
}

/// Every `?` part with its checked range and start guess, in circuit order.
fn fit_parts<M: Model>(model: &M) -> Result<Vec<FitPart>, ToleranceError> {
    let circuit = model.circuit();
    let mut found: Vec<FitPart> = Vec::new();
    for (i, p) in circuit.parts.iter().enumerate() {
        let (PartKind::Resistor { fit, value, .. }
        | PartKind::Capacitor { fit, value, .. }
        | PartKind::Inductor { fit, value, .. }) = p.kind
        else {
            continue;
        };
        let Some(range) = fit else {
            continue;
        };
        let ok = |v: f64| v.is_finite() && v > 0.0;
        if !(ok(range.low) && ok(range.high) && range.low < range.high) {
            return Err(ToleranceError::InvalidOption {
                option: "fit range",
                reason: format!(
                    "`{}`: {:e} .. {:e} is not a range of positive values",
                    p.name, range.low, range.high
                ),
            });
        }
        // The start guess steers the choice among several brackets, and starts Newton.
        let start = if ok(value) {
            value.clamp(range.low, range.high)
        } else {
            (range.low * range.high).sqrt()
        };
        found.push((
            PartId(i as u32),
            p.name.clone(),
            p.kind.clone(),
            range,
            start,
        ));
    }
    Ok(found)
}

fn fit_target<M: Model>(model: &M, part: &str) -> Result<FitTarget, ToleranceError> {
    let mut targets = fit_targets(model.circuit());
    match targets.len() {
        0 => Err(ToleranceError::NoFitTarget {
            part: part.to_string(),
        }),
        1 => Ok(targets.remove(0)),
        _ => Err(ToleranceError::AmbiguousFitTarget {
            part: part.to_string(),
            targets: targets.into_iter().map(|t| t.text).collect(),
        }),
    }
}

/// The fit targets: the `=` expectations without `±` (zero deviation), else every `=`
/// expectation, in source order.
fn fit_targets(circuit: &rolloff_netlist::Circuit) -> Vec<FitTarget> {
    let labels = expectation_metrics(circuit);
    let equalities: Vec<(usize, f64, bool)> = circuit
        .expectations
        .iter()
        .enumerate()
        .filter_map(|(i, e)| match e.comparison {
            Comparison::Equal { value, deviation } => {
                let exact = matches!(deviation, Deviation::Relative(d) | Deviation::Absolute(d) if d == 0.0);
                Some((i, value, exact))
            }
            _ => None,
        })
        .collect();
    let any_exact = equalities.iter().any(|e| e.2);
    equalities
        .into_iter()
        .filter(|e| e.2 || !any_exact)
        .map(|(i, value, _)| {
            let e = &circuit.expectations[i];
            let label = labels
                .iter()
                .find(|m| m.expectations.contains(&i))
                .map_or_else(|| e.text.clone(), |m| m.label.clone());
            FitTarget {
                expectation: i,
                text: e.text.clone(),
                label,
                value,
                unit: e.unit,
            }
        })
        .collect()
}

/// Scans `[lo, hi]` (in `ln x`) for a sign change of `f` and returns the bracket
/// `(a, f(a), b, f(b))` nearest to `start`. The error text says what `f` did.
fn bracket(
    f: &mut impl FnMut(f64) -> Result<f64, String>,
    lo: f64,
    hi: f64,
    start: f64,
    points_per_decade: usize,
) -> Result<(f64, f64, f64, f64), String> {
    let decades = (hi - lo) / std::f64::consts::LN_10;
    let n = ((decades * points_per_decade as f64).ceil() as usize).max(1);
    let mut previous: Option<(f64, f64)> = None;
    let mut best: Option<(f64, f64, f64, f64)> = None;
    let mut seen: Vec<f64> = Vec::new();
    let mut first_failure: Option<String> = None;
    for i in 0..=n {
        let u = if i == n {
            hi
        } else {
            lo + (hi - lo) * i as f64 / n as f64
        };
        let fu = match f(u) {
            Ok(v) => v,
            Err(reason) => {
                first_failure.get_or_insert(reason);
                continue;
            }
        };
        seen.push(fu);
        if let Some((a, fa)) = previous {
            if fa.signum() != fu.signum() || fu == 0.0 {
                let distance = |p: &(f64, f64, f64, f64)| (0.5 * (p.0 + p.2) - start).abs();
                let candidate = (a, fa, u, fu);
                if best
                    .as_ref()
                    .is_none_or(|b| distance(&candidate) < distance(b))
                {
                    best = Some(candidate);
                }
            }
        } else if fu == 0.0 {
            best = Some((u, fu, u, fu));
        }
        previous = Some((u, fu));
    }
    best.ok_or_else(|| describe(&seen, first_failure))
}

fn describe(seen: &[f64], failure: Option<String>) -> String {
    let low = seen.iter().copied().fold(f64::INFINITY, f64::min);
    let high = seen.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let mut text = if seen.is_empty() {
        "the metric could not be measured anywhere in the range".to_string()
    } else {
        format!("the metric minus the target stays between {low:.6e} and {high:.6e} over the range")
    };
    if let Some(reason) = failure {
        text = format!("{text} (it failed at some values: {reason})");
    }
    text
}

/// Brent's root finder on a bracket `(a, f(a)), (b, f(b))` with opposite signs.
/// Returns the root in `u`, or the point and reason where `f` failed.
fn brent(
    f: &mut impl FnMut(f64) -> Result<f64, String>,
    (mut a, mut fa): (f64, f64),
    (mut b, mut fb): (f64, f64),
    tolerance: f64,
    max_iterations: usize,
) -> Result<f64, (f64, String)> {
    if fa == 0.0 {
        return Ok(a);
    }
    if fb == 0.0 {
        return Ok(b);
    }
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
        let tol1 = 2.0 * f64::EPSILON * b.abs() + 0.5 * tolerance;
        let xm = 0.5 * (c - b);
        if xm.abs() <= tol1 || fb == 0.0 {
            return Ok(b);
        }
        if e.abs() >= tol1 && fa.abs() > fb.abs() {
            // Inverse quadratic interpolation, or the secant when only two points differ.
            let s = fb / fa;
            let (mut p, mut q);
            if a == c {
                p = 2.0 * xm * s;
                q = 1.0 - s;
            } else {
                let qa = fa / fc;
                let r = fb / fc;
                p = s * (2.0 * xm * qa * (qa - r) - (b - a) * (r - 1.0));
                q = (qa - 1.0) * (r - 1.0) * (s - 1.0);
            }
            if p > 0.0 {
                q = -q;
            }
            p = p.abs();
            let min1 = 3.0 * xm * q - (tol1 * q).abs();
            let min2 = (e * q).abs();
            if 2.0 * p < min1.min(min2) {
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
        fb = f(b).map_err(|reason| (b, reason))?;
    }
    Ok(b)
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::expect_used)]
mod tests;
