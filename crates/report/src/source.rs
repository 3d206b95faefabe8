//! Response sources: anything that gives a complex response at a frequency.
//!
//! Metrics ask a [`ResponseSource`] for values wherever they need them (to refine a
//! crossing, a peak, a slope far into the stopband). Three kinds exist: the solver-backed
//! [`crate::ProbeSource`], a [`ClosedForm`] transfer function `H(s)` (for tests and
//! for comparing with textbook results) and a [`SampledResponse`] of measured data,
//! which interpolates between its samples and refuses to extrapolate.

use crate::ReportError;
use num_complex::Complex64;
use std::f64::consts::{LN_10, PI};

/// A complex response that can be evaluated at any frequency in its range.
pub trait ResponseSource {
    /// The response at `f_hz` (Hz, > 0).
    ///
    /// # Errors
    /// A [`ReportError`] when the value cannot be had (solver failure, outside data).
    fn eval(&mut self, f_hz: f64) -> Result<Complex64, ReportError>;

    /// The response and its derivative with respect to ω (per rad/s) at `f_hz`.
    ///
    /// # Errors
    /// [`ReportError::NoDerivative`] by default; otherwise as [`ResponseSource::eval`].
    fn eval_with_derivative(&mut self, f_hz: f64) -> Result<(Complex64, Complex64), ReportError> {
        let _ = f_hz;
        Err(ReportError::NoDerivative)
    }

    /// The frequency range the source can be evaluated in, `None` for any `f > 0`.
    /// Metrics look beyond the sweep (for an asymptote, a stopband slope) only inside it.
    fn range(&self) -> Option<(f64, f64)> {
        None
    }
}

impl<S: ResponseSource + ?Sized> ResponseSource for &mut S {
    fn eval(&mut self, f_hz: f64) -> Result<Complex64, ReportError> {
        (**self).eval(f_hz)
    }
    fn eval_with_derivative(&mut self, f_hz: f64) -> Result<(Complex64, Complex64), ReportError> {
        (**self).eval_with_derivative(f_hz)
    }
    fn range(&self) -> Option<(f64, f64)> {
        (**self).range()
    }
}

type Transfer = Box<dyn FnMut(Complex64) -> Complex64 + Send>;

/// A transfer function given in closed form as a function of `s = jω`.
///
/// ```
/// use num_complex::Complex64;
/// use rolloff_report::{ClosedForm, ResponseSource};
/// // First-order low-pass with τ = 1 ms: H(s) = 1 / (1 + sτ), dH/ds = −τ / (1 + sτ)².
/// let tau = 1e-3;
/// let mut lp = ClosedForm::new(move |s| 1.0 / (1.0 + s * tau))
///     .with_derivative(move |s| -tau / ((1.0 + s * tau) * (1.0 + s * tau)));
/// let h = lp.eval(1.0 / (2.0 * std::f64::consts::PI * tau)).unwrap();
/// assert!((h.norm() - std::f64::consts::FRAC_1_SQRT_2).abs() < 1e-12);
/// ```
pub struct ClosedForm {
    transfer: Transfer,
    derivative: Option<Transfer>,
}

impl ClosedForm {
    /// A source evaluating `h(s)` at `s = j·2πf`.
    pub fn new(h: impl FnMut(Complex64) -> Complex64 + Send + 'static) -> Self {
        Self {
            transfer: Box::new(h),
            derivative: None,
        }
    }

    /// Adds `dh/ds`, which makes group delay and exact slopes available
    /// (`dH/dω = j·dH/ds`).
    #[must_use]
    pub fn with_derivative(
        mut self,
        dh_ds: impl FnMut(Complex64) -> Complex64 + Send + 'static,
    ) -> Self {
        self.derivative = Some(Box::new(dh_ds));
        self
    }
}

impl std::fmt::Debug for ClosedForm {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("ClosedForm")
            .field("derivative", &self.derivative.is_some())
            .finish_non_exhaustive()
    }
}

fn s_of(f_hz: f64) -> Result<Complex64, ReportError> {
    if f_hz.is_finite() && f_hz > 0.0 {
        Ok(Complex64::new(0.0, 2.0 * PI * f_hz))
    } else {
        Err(ReportError::BadFrequency(f_hz))
    }
}

fn finite(value: Complex64, freq_hz: f64) -> Result<Complex64, ReportError> {
    if value.re.is_finite() && value.im.is_finite() {
        Ok(value)
    } else {
        Err(ReportError::NotFinite { freq_hz })
    }
}

impl ResponseSource for ClosedForm {
    fn eval(&mut self, f_hz: f64) -> Result<Complex64, ReportError> {
        let s = s_of(f_hz)?;
        finite((self.transfer)(s), f_hz)
    }

    fn eval_with_derivative(&mut self, f_hz: f64) -> Result<(Complex64, Complex64), ReportError> {
        let s = s_of(f_hz)?;
        let h = finite((self.transfer)(s), f_hz)?;
        let dh = self.derivative.as_mut().ok_or(ReportError::NoDerivative)?;
        let d = finite(Complex64::i() * dh(s), f_hz)?;
        Ok((h, d))
    }
}

/// Measured (or exported) response data: frequencies with complex values.
///
/// Between samples the gain in dB and the unwrapped phase are interpolated linearly in
/// `ln f`; outside the samples nothing is invented ([`ReportError::OutsideData`]). The
/// derivative is the chord between the two neighbouring samples: `Δln|H| / Δ(ln f)` for
/// the gain's slope and `Δφ/Δω` for the phase, so group delay on measured data is
/// `−Δφ/Δω` between neighbours (exact for a pure delay or a phase linear in ω).
#[derive(Debug, Clone, PartialEq)]
pub struct SampledResponse {
    freqs: Vec<f64>,
    ln_f: Vec<f64>,
    gain_db: Vec<f64>,
    phase_deg: Vec<f64>,
}

impl SampledResponse {
    /// Samples from complex values.
    ///
    /// # Errors
    /// [`ReportError::BadSamples`] when the lengths differ, there are fewer than two
    /// points, a frequency is not finite and positive, the frequencies do not strictly
    /// increase, or a value is zero or not finite.
    pub fn new(freqs: Vec<f64>, values: &[Complex64]) -> Result<Self, ReportError> {
        if let Some((i, _)) = values
            .iter()
            .enumerate()
            .find(|(_, v)| !(v.re.is_finite() && v.im.is_finite()) || v.norm() == 0.0)
        {
            return Err(ReportError::BadSamples(format!(
                "value {i} is zero or not finite"
            )));
        }
        let gain = values.iter().map(|v| 20.0 * v.norm().log10()).collect();
        let phase = values.iter().map(|v| v.arg().to_degrees()).collect();
        Self::from_db_deg(freqs, gain, phase)
    }

    /// Samples from gain in dB and phase in degrees (wrapped or not; it is unwrapped here).
    ///
    /// # Errors
    /// As [`SampledResponse::new`].
    pub fn from_db_deg(
        freqs: Vec<f64>,
        gain_db: Vec<f64>,
        mut phase_deg: Vec<f64>,
    ) -> Result<Self, ReportError> {
        let bad = |why: String| Err(ReportError::BadSamples(why));
        if freqs.len() != gain_db.len() || freqs.len() != phase_deg.len() {
            return bad(format!(
                "{} frequencies, {} gains and {} phases",
                freqs.len(),
                gain_db.len(),
                phase_deg.len()
            ));
        }
        if freqs.len() < 2 {
            return bad("fewer than two samples".into());
        }
        if let Some(f) = freqs.iter().find(|f| !(f.is_finite() && **f > 0.0)) {
            return bad(format!("frequency {f} is not finite and positive"));
        }
        if let Some([a, b]) = freqs.windows(2).find(|w| w[1] <= w[0]) {
            return bad(format!("frequencies must increase strictly ({a} then {b})"));
        }
        if gain_db.iter().chain(&phase_deg).any(|v| !v.is_finite()) {
            return bad("a gain or phase is not finite".into());
        }
        crate::numeric::unwrap_degrees(&mut phase_deg);
        let ln_f = freqs.iter().map(|f| f.ln()).collect();
        Ok(Self {
            freqs,
            ln_f,
            gain_db,
            phase_deg,
        })
    }

    /// The sample frequencies in Hz, ascending.
    pub fn frequencies(&self) -> &[f64] {
        &self.freqs
    }

    /// Segment index `i` (between samples `i` and `i + 1`) and the position in it.
    fn locate(&self, f_hz: f64) -> Result<(usize, f64), ReportError> {
        let (low, high) = (self.freqs[0], self.freqs[self.freqs.len() - 1]);
        if !(f_hz.is_finite() && f_hz > 0.0) {
            return Err(ReportError::BadFrequency(f_hz));
        }
        let slack = 1e-12;
        if f_hz < low * (1.0 - slack) || f_hz > high * (1.0 + slack) {
            return Err(ReportError::OutsideData {
                freq_hz: f_hz,
                low_hz: low,
                high_hz: high,
            });
        }
        let x = f_hz.ln();
        let upper = self.ln_f.partition_point(|&v| v <= x);
        let i = upper.saturating_sub(1).min(self.freqs.len() - 2);
        let t = (x - self.ln_f[i]) / (self.ln_f[i + 1] - self.ln_f[i]);
        Ok((i, t.clamp(0.0, 1.0)))
    }

    fn value_at(&self, i: usize, t: f64) -> Complex64 {
        let g = self.gain_db[i] + t * (self.gain_db[i + 1] - self.gain_db[i]);
        let p = self.phase_deg[i] + t * (self.phase_deg[i + 1] - self.phase_deg[i]);
        Complex64::from_polar(10f64.powf(g / 20.0), p.to_radians())
    }
}

impl ResponseSource for SampledResponse {
    fn eval(&mut self, f_hz: f64) -> Result<Complex64, ReportError> {
        let (i, t) = self.locate(f_hz)?;
        Ok(self.value_at(i, t))
    }

    fn eval_with_derivative(&mut self, f_hz: f64) -> Result<(Complex64, Complex64), ReportError> {
        let (i, t) = self.locate(f_hz)?;
        let h = self.value_at(i, t);
        let dx = self.ln_f[i + 1] - self.ln_f[i];
        let omega = 2.0 * PI * f_hz;
        let d_omega = 2.0 * PI * (self.freqs[i + 1] - self.freqs[i]);
        // d ln|H| / dω of the interpolant (linear in ln f), dφ/dω as the chord in ω.
        let dln_mag = (self.gain_db[i + 1] - self.gain_db[i]) * LN_10 / 20.0 / dx / omega;
        let dphase = (self.phase_deg[i + 1] - self.phase_deg[i]).to_radians() / d_omega;
        Ok((h, h * Complex64::new(dln_mag, dphase)))
    }

    fn range(&self) -> Option<(f64, f64)> {
        Some((self.freqs[0], self.freqs[self.freqs.len() - 1]))
    }
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;

    #[test]
    fn sampled_interpolates_and_refuses_to_extrapolate() {
        let mut r = SampledResponse::from_db_deg(
            vec![10.0, 100.0, 1000.0],
            vec![0.0, -20.0, -40.0],
            vec![0.0, -90.0, 180.0],
        )
        .unwrap();
        // Geometric midpoint of the first decade: −10 dB, −45°.
        let h = r.eval(10f64.powf(1.5)).unwrap();
        assert!((20.0 * h.norm().log10() + 10.0).abs() < 1e-12);
        assert!((h.arg().to_degrees() + 45.0).abs() < 1e-12);
        // 180° after −90° unwraps to −180°: the midpoint of the second decade is −135°.
        let h = r.eval(10f64.powf(2.5)).unwrap();
        assert!((h.arg().to_degrees() + 135.0).abs() < 1e-9);
        assert!(matches!(r.eval(5.0), Err(ReportError::OutsideData { .. })));
        assert!(r.eval(1000.0).is_ok());
    }

    #[test]
    fn sampled_rejects_bad_data() {
        let e = SampledResponse::from_db_deg(vec![10.0, 10.0], vec![0.0; 2], vec![0.0; 2]);
        assert_eq!(
            e.unwrap_err().to_string(),
            "bad response samples: frequencies must increase strictly (10 then 10)"
        );
        let e = SampledResponse::new(vec![1.0, 2.0], &[Complex64::new(1.0, 0.0)]);
        assert!(e.is_err());
        let e = SampledResponse::new(vec![1.0, 2.0], &[Complex64::new(0.0, 0.0); 2]);
        assert_eq!(
            e.unwrap_err().to_string(),
            "bad response samples: value 0 is zero or not finite"
        );
    }
}
