//! The metric engine against closed-form transfer functions (textbook results named at
//! each check) and against sampled data.

#![allow(clippy::unwrap_used, clippy::expect_used)]

use crate::*;
use num_complex::Complex64;
use rolloff_netlist::{MetricKind, MetricOptions, Sweep};
use std::f64::consts::{FRAC_1_SQRT_2, PI};

fn log_sweep(start: f64, stop: f64, per_decade: u32) -> Vec<f64> {
    Sweep::Log {
        start,
        stop,
        per_decade,
    }
    .frequencies()
}

fn rel(a: f64, b: f64) -> f64 {
    (a / b - 1.0).abs()
}

/// First-order high-pass `sτ/(1+sτ)` with its derivative `τ/(1+sτ)²`.
fn high_pass(tau: f64) -> ClosedForm {
    ClosedForm::new(move |s| s * tau / (1.0 + s * tau))
        .with_derivative(move |s| tau / ((1.0 + s * tau) * (1.0 + s * tau)))
}

/// First-order low-pass `1/(1+sτ)` with its derivative `−τ/(1+sτ)²`.
fn low_pass(tau: f64) -> ClosedForm {
    ClosedForm::new(move |s| 1.0 / (1.0 + s * tau))
        .with_derivative(move |s| -tau / ((1.0 + s * tau) * (1.0 + s * tau)))
}

fn opts(reference: Option<f64>) -> MetricOptions {
    MetricOptions {
        reference,
        level_db: None,
    }
}

fn measure(
    source: &mut dyn ResponseSource,
    freqs: &[f64],
    kind: MetricKind,
    reference: Option<f64>,
) -> Result<f64, MetricError> {
    measure_response(source, freqs, kind, &opts(reference))
}

// R = 10 kΩ, C = 100 nF: fc = 1/(2πRC) = 159.15 Hz (first-order RC section, textbook).
const R: f64 = 10e3;
const C: f64 = 100e-9;

#[test]
fn first_order_high_pass_cutoff_phase_and_slope() {
    let tau = R * C;
    let fc = 1.0 / (2.0 * PI * tau);
    let freqs = log_sweep(1.0, 100e3, 40);
    let mut hp = high_pass(tau);
    let s = analyze(&mut hp, &freqs, None).unwrap();
    assert_eq!(s.shape, Shape::HighPass);
    assert_eq!(s.cutoffs.len(), 1);
    let f = s.cutoffs[0].freq_hz;
    assert!(s.cutoffs[0].rising);
    // The gain at the cutoff is 1/√2 (70.7 %, −3.0103 dB) of the passband reference
    // (common practice); the refinement holds it to far better than 1e-9.
    let ratio = hp.eval(f).unwrap().norm() / hp.eval(s.reference.freq_hz).unwrap().norm();
    assert!((ratio - FRAC_1_SQRT_2).abs() < 1e-10, "{ratio}");
    // The sweep's largest gain sits 1e-5 dB under the asymptote, which moves the
    // crossing by a few ppm from 1/(2πRC).
    assert!(rel(f, fc) < 1e-5, "{f} vs {fc}");
    // The far decade (fc/1000 .. fc/100) lies below the 1 Hz sweep start: measured on
    // the source, and flagged in its `Slope` (no warning: it is meant to lie far out).
    assert!(s.warnings.is_empty(), "{:?}", s.warnings);
    assert!(s.stopband[0].far.unwrap().beyond_sweep);

    // With the reference on the asymptote the cutoff is 1/(2πRC) to 1e-9.
    let f = measure(&mut hp, &freqs, MetricKind::Cutoff, Some(1e9)).unwrap();
    assert!(rel(f, fc) < 1e-9, "{f} vs {fc}");
    // Phase of jx/(1+jx) at x = 1 is +45° (textbook), unwrapped from the lowest frequency.
    let p = measure(&mut hp, &freqs, MetricKind::Phase { freq: fc }, None).unwrap();
    assert!((p - 45.0).abs() < 1e-9, "{p}");
    assert!((s.phase_at_cutoffs_deg[0].unwrap() - 45.0).abs() < 1e-3);

    // Stopband slope over the decade fc/100 .. fc/10: +20 dB/decade (common practice),
    // exactly 20 − 10·log10(1.01/1.0001) for this section.
    let stop = s.stopband[0];
    assert_eq!(stop.side, Side::Low);
    let near = stop.near.unwrap();
    assert!(rel(near.from_hz, stop.edge_hz / 100.0) < 1e-12);
    let exact = 20.0 - 10.0 * (1.01f64 / 1.0001).log10();
    assert!(
        (near.db_per_decade - exact).abs() < 2e-4,
        "{}",
        near.db_per_decade
    );
    assert!((near.db_per_decade - 20.0).abs() < 0.1);
    assert_eq!(stop.order, Some(1));
    assert!(s.bandwidth_hz.is_none());
}

#[test]
fn derivative_free_source_finds_the_same_cutoff() {
    let tau = R * C;
    let fc = 1.0 / (2.0 * PI * tau);
    let freqs = log_sweep(1.0, 100e3, 40);
    let mut hp = ClosedForm::new(move |s| s * tau / (1.0 + s * tau));
    let f = measure(&mut hp, &freqs, MetricKind::Cutoff, Some(1e9)).unwrap();
    assert!(rel(f, fc) < 1e-9);
    let e = measure(&mut hp, &freqs, MetricKind::GroupDelay { freq: fc }, None).unwrap_err();
    assert_eq!(
        e.to_string(),
        "this response source gives no derivative (needed for group delay)"
    );
}

#[test]
fn reference_looks_beyond_a_sweep_that_ends_in_the_transition() {
    let tau = R * C;
    let fc = 1.0 / (2.0 * PI * tau);
    // The sweep ends at 6.3·fc, where the gain still rises by 0.49 dB/decade.
    let freqs = log_sweep(1.0, 1e3, 40);
    let mut hp = high_pass(tau);
    let s = analyze(&mut hp, &freqs, None).unwrap();
    assert_eq!(s.reference.origin, ReferenceOrigin::BeyondSweep);
    assert!(s.warnings.iter().any(|w| matches!(
        w,
        ReportWarning::StillChanging {
            end: SweepEnd::End,
            ..
        }
    )));
    let text: Vec<String> = s.warnings.iter().map(ToString::to_string).collect();
    assert_eq!(
        text[0],
        "the gain still changes by 0.494090461 dB/decade at the sweep end (1 kHz): the passband may extend beyond the sweep"
    );
    assert!(text[1].starts_with("the passband reference is taken beyond the sweep, at 10 kHz"));
    assert!(rel(s.cutoffs[0].freq_hz, fc) < 1e-3);
    // The stopband decades lie inside this sweep, nothing else beyond.
    assert!(!s.stopband[0].near.unwrap().beyond_sweep);
}

#[test]
fn sampled_data_gives_the_interpolated_cutoff() {
    let tau = R * C;
    let fc = 1.0 / (2.0 * PI * tau);
    let freqs = log_sweep(1.0, 100e3, 40);
    let mut hp = high_pass(tau);
    let values: Vec<Complex64> = freqs.iter().map(|f| hp.eval(*f).unwrap()).collect();
    let mut sampled = SampledResponse::new(freqs.clone(), &values).unwrap();
    let s = analyze(&mut sampled, &freqs, None).unwrap();
    assert_eq!(s.shape, Shape::HighPass);
    // Linear interpolation of dB over 1/40 decade: well under 0.1 % off.
    assert!(rel(s.cutoffs[0].freq_hz, fc) < 1e-3);
    // The stopband decade fc/100 .. fc/10 lies in the data; the far decade below it
    // does not, and nothing is invented for it.
    let near = s.stopband[0].near.unwrap();
    assert!(rel(near.from_hz, s.cutoffs[0].freq_hz / 100.0) < 1e-12);
    assert!((near.db_per_decade - 20.0).abs() < 0.5);
    assert!(s.stopband[0].far.is_none());
    // Outside the data nothing is invented.
    let e = measure(&mut sampled, &freqs, MetricKind::Gain { freq: 0.5 }, None).unwrap_err();
    assert_eq!(
        e.to_string(),
        "500 mHz lies outside the measured data (1 Hz .. 100 kHz)"
    );
}

/// Corner of n identical loaded first-order sections: two cascaded RC low-pass
/// sections give 1/(s²τ² + 3sτ + 1) and two CR high-pass sections s²τ²/(s²τ² + 3sτ + 1)
/// (textbook result for two cascaded identical sections, the second loading the first).
#[test]
fn two_loaded_rc_stages_move_the_corner() {
    let tau = R * C;
    let f_rc = 1.0 / (2.0 * PI * tau);
    let freqs = log_sweep(1.0, 1e6, 40);
    let denominator = move |s: Complex64| s * s * tau * tau + 3.0 * s * tau + 1.0;
    let mut lp = ClosedForm::new(move |s| 1.0 / denominator(s));
    let mut hp = ClosedForm::new(move |s| s * s * tau * tau / denominator(s));
    // |H|² = 1/2 solves to x⁴ + 7x² − 1 = 0 (low-pass) and x⁴ − 7x² − 1 = 0 (high-pass),
    // x = ωτ.
    let x_lp = ((53f64.sqrt() - 7.0) / 2.0).sqrt();
    let x_hp = f64::midpoint(53f64.sqrt(), 7.0).sqrt();
    let f = measure(&mut lp, &freqs, MetricKind::Cutoff, Some(1e-3)).unwrap();
    assert!(rel(f, x_lp * f_rc) < 1e-9, "{f}");
    let f = measure(&mut hp, &freqs, MetricKind::Cutoff, Some(1e9)).unwrap();
    assert!(rel(f, x_hp * f_rc) < 1e-9, "{f}");
    // The corner is not at 1/(2πRC) and the gain there is 20·log10(1/3) = −9.54 dB, not −6 dB.
    assert!(rel(f, f_rc) > 1.0);
    let g = measure(&mut lp, &freqs, MetricKind::Gain { freq: f_rc }, None).unwrap();
    assert!((g - 20.0 * (1.0f64 / 3.0).log10()).abs() < 1e-9, "{g}");
    assert!((g + 6.02).abs() > 3.0);
    // Second order: the far stopband decade reads 40 dB/decade.
    let s = analyze(&mut lp, &freqs, None).unwrap();
    assert_eq!(s.shape, Shape::LowPass);
    assert_eq!(s.stopband[0].order, Some(2));
}

/// Series RLC, output across R: H = sRC/(s²LC + sRC + 1). f0 = 1/(2π√(LC)),
/// Q = √(L/C)/R, BW = R/(2πL), band edges f0·(√(1 + 1/(4Q²)) ∓ 1/(2Q)) (textbook
/// second-order band-pass).
fn rlc_band_pass(r: f64, l: f64, c: f64) -> ClosedForm {
    let den = move |s: Complex64| s * s * l * c + s * r * c + 1.0;
    ClosedForm::new(move |s| s * r * c / den(s))
        .with_derivative(move |s| r * c * (1.0 - s * s * l * c) / (den(s) * den(s)))
}

#[test]
fn rlc_band_pass_centre_bandwidth_and_q() {
    let (r, l, c): (f64, f64, f64) = (100.0, 10e-3, 100e-9);
    let f0 = 1.0 / (2.0 * PI * (l * c).sqrt());
    let q = (l / c).sqrt() / r;
    let bw = r / (2.0 * PI * l);
    let k = (1.0 + 1.0 / (4.0 * q * q)).sqrt();
    let (f_lo, f_hi) = (f0 * (k - 1.0 / (2.0 * q)), f0 * (k + 1.0 / (2.0 * q)));
    let freqs = log_sweep(10.0, 1e6, 40);
    let mut bp = rlc_band_pass(r, l, c);
    let mut m = |kind| measure(&mut bp, &freqs, kind, None);
    assert!(rel(m(MetricKind::Resonance).unwrap(), f0) < 1e-9);
    assert!(rel(m(MetricKind::PeakFreq).unwrap(), f0) < 1e-9);
    assert!(m(MetricKind::PeakGain).unwrap().abs() < 1e-9);
    assert!(m(MetricKind::PassbandGain).unwrap().abs() < 1e-9);
    assert!(rel(m(MetricKind::Bandwidth).unwrap(), bw) < 1e-9);
    assert!(rel(m(MetricKind::Q).unwrap(), q) < 1e-9);
    assert!(rel(m(MetricKind::CutoffLow).unwrap(), f_lo) < 1e-9);
    assert!(rel(m(MetricKind::CutoffHigh).unwrap(), f_hi) < 1e-9);
    assert_eq!(
        m(MetricKind::Cutoff).unwrap_err().to_string(),
        "two −3 dB crossings (4.29966965 kHz and 5.89121908 kHz): use cutoff_low and cutoff_high"
    );
    assert_eq!(
        m(MetricKind::Peaking).unwrap_err().to_string(),
        "peaking needs a flat region to compare the peak with and this band-pass response has none; give `ref <freq>`"
    );
    let s = analyze(&mut bp, &freqs, None).unwrap();
    assert_eq!(s.shape, Shape::BandPass);
    assert_eq!(s.stopband.len(), 2);
    assert!(s.stopband.iter().all(|x| x.order == Some(1)));
    assert!((s.stopband[0].near.unwrap().db_per_decade - 20.0).abs() < 0.2);
    assert!((s.stopband[1].near.unwrap().db_per_decade + 20.0).abs() < 0.2);
    // Only the far decades (three decades out) leave the sweep: flagged, no warning.
    assert!(s.warnings.is_empty(), "{:?}", s.warnings);
    assert!(s.stopband.iter().all(|x| x.far.unwrap().beyond_sweep));
    // Phase at the band edges of a second-order band-pass: ±45° (textbook).
    assert!((s.phase_at_cutoffs_deg[0].unwrap() - 45.0).abs() < 1e-6);
    assert!((s.phase_at_cutoffs_deg[1].unwrap() + 45.0).abs() < 1e-6);
}

/// Notch: R from input to output, series L–C (with loss r) from output to ground:
/// H = (s²LC + s·rC + 1)/(s²LC + s(R+r)C + 1). The minimum lies exactly at
/// f0 = 1/(2π√(LC)) with |H| = r/(R+r); with r = 0 the −3 dB stopband is
/// R/(2πL) wide (textbook second-order notch).
fn notch(big_r: f64, r: f64, l: f64, c: f64) -> ClosedForm {
    let num = move |s: Complex64| s * s * l * c + s * r * c + 1.0;
    let den = move |s: Complex64| s * s * l * c + s * (big_r + r) * c + 1.0;
    let dnum = move |s: Complex64| 2.0 * s * l * c + r * c;
    let dden = move |s: Complex64| 2.0 * s * l * c + (big_r + r) * c;
    ClosedForm::new(move |s| num(s) / den(s))
        .with_derivative(move |s| (dnum(s) * den(s) - num(s) * dden(s)) / (den(s) * den(s)))
}

#[test]
fn notch_found_at_its_design_frequency() {
    let (big_r, r, l, c): (f64, f64, f64, f64) = (1e3, 1.0, 10e-3, 100e-9);
    let f0 = 1.0 / (2.0 * PI * (l * c).sqrt());
    let freqs = log_sweep(10.0, 1e6, 40);
    let mut n = notch(big_r, r, l, c);
    // The reference on the asymptote (1 mHz): at 10 Hz the gain is still 1.7e-4 dB low.
    let mut m = |kind| measure(&mut n, &freqs, kind, Some(1e-3));
    assert!(rel(m(MetricKind::NotchFreq).unwrap(), f0) < 1e-9);
    let depth = 20.0 * ((big_r + r) / r).log10();
    assert!((m(MetricKind::NotchDepth).unwrap() - depth).abs() < 1e-6);
    let s = analyze(&mut n, &freqs, None).unwrap();
    assert_eq!(s.shape, Shape::BandStop);
    assert!(rel(s.notch.unwrap().freq_hz, f0) < 1e-9);

    let mut ideal = notch(big_r, 0.0, l, c);
    let mut m = |kind| measure(&mut ideal, &freqs, kind, Some(1e-3));
    assert!(rel(m(MetricKind::NotchFreq).unwrap(), f0) < 1e-9);
    assert!(m(MetricKind::NotchDepth).unwrap() > 100.0);
    assert!(rel(m(MetricKind::Bandwidth).unwrap(), big_r / (2.0 * PI * l)) < 1e-9);
}

#[test]
fn narrow_notch_between_samples_is_found() {
    // Q = √(L/C)/R = 31.6: the −3 dB stopband is 3 % wide, narrower than the 10 per
    // decade sweep spacing (26 %), so no sample need lie in it.
    let (big_r, l, c): (f64, f64, f64) = (10.0, 10e-3, 100e-9);
    let f0 = 1.0 / (2.0 * PI * (l * c).sqrt());
    let freqs = log_sweep(10.0, 1e6, 10);
    let mut n = notch(big_r, 0.1, l, c);
    let s = analyze(&mut n, &freqs, None).unwrap();
    assert_eq!(s.shape, Shape::BandStop);
    assert!(rel(s.notch.unwrap().freq_hz, f0) < 1e-9);
    assert!(rel(s.bandwidth_hz.unwrap(), big_r / (2.0 * PI * l)) < 0.02);
}

#[test]
fn group_delay_of_a_first_order_section() {
    // τg = τ/(1 + (ωτ)²) for 1/(1 + sτ) (textbook: −d/dω of −atan(ωτ)).
    let tau = 1e-3;
    let freqs = log_sweep(1.0, 100e3, 40);
    let mut lp = low_pass(tau);
    let dense = log_sweep(1.0, 100e3, 200);
    let values: Vec<Complex64> = dense.iter().map(|f| lp.eval(*f).unwrap()).collect();
    let mut sampled = SampledResponse::new(dense, &values).unwrap();
    for f in [10.0, 100.0, 159.154_943, 1e3, 10e3] {
        let w = 2.0 * PI * f;
        let exact = tau / (1.0 + (w * tau).powi(2));
        let g = measure(&mut lp, &freqs, MetricKind::GroupDelay { freq: f }, None).unwrap();
        assert!(rel(g, exact) < 1e-12, "{f}: {g} vs {exact}");
        // On sampled data (200 per decade): −Δφ/Δω between neighbouring samples.
        let g = measure(
            &mut sampled,
            &freqs,
            MetricKind::GroupDelay { freq: f },
            None,
        )
        .unwrap();
        // The chord gives the delay at the segment's middle: off by about
        // |d ln τg / d ln f|·Δln f / 2 ≤ 2 × 0.0115 / 2 at an end of a segment.
        assert!(rel(g, exact) < 0.015, "{f}: {g} vs {exact}");
    }
    let s = analyze(&mut lp, &freqs, None).unwrap();
    assert!(rel(s.group_delay_s.unwrap(), tau) < 1e-4);
}

#[test]
fn slopes_and_orders() {
    let tau = 1e-3;
    let freqs = log_sweep(1.0, 100e3, 40);
    let mut lp = low_pass(tau);
    let fc = 1.0 / (2.0 * PI * tau);
    // Average slope over 10·fc .. 100·fc: −(10·log10(10001/101)) = −19.957 dB/decade.
    let v = measure(
        &mut lp,
        &freqs,
        MetricKind::Slope {
            f1: 10.0 * fc,
            f2: 100.0 * fc,
        },
        None,
    )
    .unwrap();
    assert!((v + 10.0 * (10001.0f64 / 101.0).log10()).abs() < 1e-9);
    // Signed and symmetric in its arguments.
    let w = measure(
        &mut lp,
        &freqs,
        MetricKind::Slope {
            f1: 100.0 * fc,
            f2: 10.0 * fc,
        },
        None,
    )
    .unwrap();
    assert!((v - w).abs() < 1e-12);
    // A fourth-order Butterworth (1/B4(s), B4 the Butterworth polynomial, textbook):
    // the far decade reads 80 dB/decade, order 4.
    let wc = 2.0 * PI * 1e3;
    let mut b4 = ClosedForm::new(move |s| {
        let p = s / wc;
        1.0 / ((p * p + 0.765_366_864_730_18 * p + 1.0) * (p * p + 1.847_759_065_022_57 * p + 1.0))
    });
    let s = analyze(&mut b4, &log_sweep(10.0, 100e3, 40), None).unwrap();
    assert!(rel(s.cutoffs[0].freq_hz, 1e3) < 1e-9);
    assert_eq!(s.stopband[0].order, Some(4));
    assert!(s.stopband[0].far.unwrap().beyond_sweep);
    assert!(s.warnings.is_empty(), "{:?}", s.warnings);
    // A sweep ending an octave past the cutoff: the stopband slope itself is measured
    // beyond it, and the summary says so.
    let s = analyze(&mut b4, &log_sweep(10.0, 2e3, 40), None).unwrap();
    assert_eq!(
        s.warnings[0].to_string(),
        "a stopband slope is measured beyond the sweep (10 kHz .. 100 kHz)"
    );
    assert!((s.stopband[0].near.unwrap().db_per_decade + 80.0).abs() < 1.0);
    assert!(s.ripple_db.unwrap() < 1e-3);
    assert_eq!(order_of(-59.5), Some(3));
    assert_eq!(order_of(-50.0), None);
}

#[test]
fn peaking_low_pass_warns_and_measures() {
    // Second-order low-pass ω0²/(s² + sω0/Q + ω0²) with Q = 2: peak
    // 20·log10(Q/√(1 − 1/(4Q²))) at f0·√(1 − 1/(2Q²)) (textbook).
    let (w0, q) = (2.0 * PI * 1e3, 2.0);
    let mut lp2 = ClosedForm::new(move |s| w0 * w0 / (s * s + s * w0 / q + w0 * w0))
        .with_derivative(move |s| {
            let d = s * s + s * w0 / q + w0 * w0;
            -w0 * w0 * (2.0 * s + w0 / q) / (d * d)
        });
    let freqs = log_sweep(1.0, 100e3, 40);
    let peak_db = 20.0 * (q / (1.0 - 1.0 / (4.0 * q * q)).sqrt()).log10();
    let peak_f = 1e3 * (1.0 - 1.0 / (2.0 * q * q)).sqrt();
    let mut m = |kind, r| measure(&mut lp2, &freqs, kind, r);
    assert!((m(MetricKind::PeakGain, None).unwrap() - peak_db).abs() < 1e-9);
    assert!(rel(m(MetricKind::PeakFreq, None).unwrap(), peak_f) < 1e-9);
    // Peaking against the flat region (the gain at 1 Hz, 6e-7 dB under 0 dB).
    assert!((m(MetricKind::Peaking, None).unwrap() - peak_db).abs() < 1e-5);
    assert!((m(MetricKind::Peaking, Some(1.0)).unwrap() - peak_db).abs() < 1e-5);
    // With the reference at 1 mHz the cutoff is where |H| = 1/√2 of the DC gain.
    let f = m(MetricKind::Cutoff, Some(1e-3)).unwrap();
    let s = analyze(&mut lp2, &freqs, None).unwrap();
    assert!(
        s.warnings
            .iter()
            .any(|w| matches!(w, ReportWarning::PeaksAboveFlat { .. }))
    );
    assert!(
        s.warnings[0]
            .to_string()
            .starts_with("the gain peaks 6.3008"),
        "{}",
        s.warnings[0]
    );
    assert!(
        s.warnings[0]
            .to_string()
            .contains("above its flat region (at 935.414347 Hz)"),
        "{}",
        s.warnings[0]
    );
    let x2 = f / 1e3 * (f / 1e3);
    let g2 = 1.0 / ((1.0 - x2).powi(2) + x2 / (q * q));
    assert!((g2 - 0.5).abs() < 1e-9);
}

#[test]
fn custom_level_and_dc_point() {
    let tau = 1e-3;
    let mut lp = low_pass(tau);
    let freqs: Vec<f64> = (0..=2000).map(|i| f64::from(i) * 10.0).collect();
    let options = MetricOptions {
        reference: Some(1e-3),
        level_db: Some(-20.0 * 2f64.log10()),
    };
    // |H| = 1/2 at ωτ = √3.
    let f = measure_response(&mut lp, &freqs, MetricKind::Cutoff, &options).unwrap();
    assert!(rel(f, 3f64.sqrt() / (2.0 * PI * tau)) < 1e-9);
    let s = analyze(&mut lp, &freqs, None).unwrap();
    assert_eq!(s.warnings[0], ReportWarning::DcPointSkipped);
}

#[test]
fn every_metric_fails_with_its_reason() {
    let tau = 1e-3;
    let freqs = log_sweep(10.0, 1e6, 20);
    let message = |source: &mut dyn ResponseSource, kind, reference: Option<f64>| {
        measure(source, &freqs, kind, reference)
            .unwrap_err()
            .to_string()
    };
    // A flat response: nothing crosses.
    let mut flat = ClosedForm::new(|_| Complex64::new(2.0, 0.0));
    let none = "no −3 dB crossing between 10 Hz and 1 MHz";
    assert_eq!(message(&mut flat, MetricKind::Cutoff, None), none);
    assert_eq!(message(&mut flat, MetricKind::CutoffLow, None), none);
    assert_eq!(message(&mut flat, MetricKind::CutoffHigh, None), none);
    assert_eq!(message(&mut flat, MetricKind::Bandwidth, None), none);
    assert_eq!(
        message(&mut flat, MetricKind::PeakFreq, None),
        "the gain has no peak inside 10 Hz .. 1 MHz: its largest value is at the sweep start"
    );
    assert_eq!(
        message(&mut flat, MetricKind::NotchFreq, None),
        "no notch: the gain has no minimum inside 10 Hz .. 1 MHz at least 3 dB below the passband"
    );
    assert_eq!(
        message(&mut flat, MetricKind::NotchDepth, None),
        "no notch: the gain has no minimum inside 10 Hz .. 1 MHz at least 3 dB below the passband"
    );
    assert_eq!(
        message(&mut flat, MetricKind::Resonance, None),
        "resonance needs a band-pass response; this response is flat"
    );
    assert_eq!(
        message(&mut flat, MetricKind::Q, None),
        "resonance needs a band-pass response; this response is flat"
    );
    // Edges a shape does not have.
    let mut lp = low_pass(tau);
    assert_eq!(
        message(&mut lp, MetricKind::CutoffLow, None),
        "a low-pass response has no lower −3 dB point: the passband reaches down to 10 Hz; use cutoff"
    );
    let mut hp = high_pass(tau);
    assert_eq!(
        message(&mut hp, MetricKind::CutoffHigh, None),
        "a high-pass response has no upper −3 dB point: the passband reaches up to 1 MHz; use cutoff"
    );
    assert_eq!(
        message(&mut hp, MetricKind::Bandwidth, None),
        "bandwidth needs a band-pass, band-stop or low-pass response; this response is high-pass"
    );
    // Several bands: four crossings.
    let mut bands = SampledResponse::from_db_deg(
        vec![10.0, 100.0, 1e3, 1e4, 1e5],
        vec![0.0, -10.0, 0.0, -10.0, 0.0],
        vec![0.0; 5],
    )
    .unwrap();
    let f = bands.frequencies().to_vec();
    assert_eq!(
        measure(&mut bands, &f, MetricKind::Cutoff, None)
            .unwrap_err()
            .to_string(),
        "4 −3 dB crossings (20 Hz, 500 Hz, 2 kHz, 50 kHz): the response has several bands; use cutoff_low and cutoff_high for the outer ones"
    );
    // Zero response: gain, phase and group delay are unbounded.
    let mut zero = ClosedForm::new(|s| Complex64::new(s.im - 2.0 * PI * 1e3, 0.0))
        .with_derivative(|_| Complex64::new(1.0, 0.0));
    for (kind, what) in [
        (MetricKind::Gain { freq: 1e3 }, "gain in dB"),
        (MetricKind::Phase { freq: 1e3 }, "phase"),
        (MetricKind::GroupDelay { freq: 1e3 }, "group delay"),
    ] {
        assert_eq!(
            message(&mut zero, kind, None),
            format!("the response is exactly zero at 1 kHz, so its {what} is unbounded")
        );
    }
    assert_eq!(
        message(&mut zero, MetricKind::PassbandGain, Some(1e3)),
        "the response is exactly zero at 1 kHz, so its gain in dB is unbounded"
    );
    // Bad arguments.
    assert_eq!(
        message(
            &mut lp,
            MetricKind::Slope {
                f1: 100.0,
                f2: 100.0
            },
            None
        ),
        "slope needs two different frequencies, got 100 Hz twice"
    );
    assert_eq!(
        message(&mut lp, MetricKind::Gain { freq: -1.0 }, None),
        "the frequency must be a positive frequency, got -1 Hz"
    );
    assert_eq!(
        message(&mut lp, MetricKind::PassbandGain, Some(0.0)),
        "ref must be a positive frequency, got 0 Hz"
    );
    let options = MetricOptions {
        reference: None,
        level_db: Some(3.0),
    };
    assert_eq!(
        measure_response(&mut lp, &freqs, MetricKind::Cutoff, &options)
            .unwrap_err()
            .to_string(),
        "level must be below the passband (a negative number of dB), got 3 dB"
    );
    assert_eq!(
        measure(&mut lp, &[100.0], MetricKind::Cutoff, None)
            .unwrap_err()
            .to_string(),
        "the sweep has 1 positive frequency point(s); searching needs at least 2"
    );
    assert_eq!(
        measure(&mut lp, &[0.0], MetricKind::Cutoff, None)
            .unwrap_err()
            .to_string(),
        "the sweep has no positive frequency to analyse"
    );
    assert_eq!(
        message(&mut lp, MetricKind::Bias, None),
        "bias needs the circuit's solver, not only a response"
    );
}

proptest::proptest! {
    #![proptest_config(proptest::prelude::ProptestConfig::with_cases(64))]
    #[test]
    fn first_order_cutoff_is_exact_across_decades(exponent in -6.0f64..-1.0) {
        let tau = 10f64.powf(exponent);
        let fc = 1.0 / (2.0 * PI * tau);
        let mut lp = low_pass(tau);
        let freqs = log_sweep(fc / 1e3, fc * 1e3, 25);
        let f = measure(&mut lp, &freqs, MetricKind::Cutoff, Some(fc / 1e6)).unwrap();
        proptest::prop_assert!(rel(f, fc) < 1e-9);
    }
}

proptest::proptest! {
    #![proptest_config(proptest::prelude::ProptestConfig::with_cases(64))]
    /// Whatever the data, no metric panics and every value found is finite.
    #[test]
    fn any_sampled_data_gives_finite_values_or_reasons(
        gains in proptest::collection::vec(-120.0f64..40.0, 2..40),
        phase_seed in -720.0f64..720.0,
    ) {
        let n = gains.len();
        let freqs: Vec<f64> = (0..n).map(|i| 10f64.powf(1.0 + i as f64 / 8.0)).collect();
        let phases: Vec<f64> = (0..n).map(|i| phase_seed * (i as f64 / 7.0).sin()).collect();
        let mut data = SampledResponse::from_db_deg(freqs.clone(), gains, phases).unwrap();
        let mid = freqs[n / 2];
        let kinds = [
            MetricKind::Cutoff, MetricKind::CutoffLow, MetricKind::CutoffHigh,
            MetricKind::Bandwidth, MetricKind::PassbandGain, MetricKind::Resonance,
            MetricKind::Q, MetricKind::PeakGain, MetricKind::PeakFreq, MetricKind::Peaking,
            MetricKind::NotchFreq, MetricKind::NotchDepth, MetricKind::Gain { freq: mid },
            MetricKind::Phase { freq: mid }, MetricKind::GroupDelay { freq: mid },
            MetricKind::Slope { f1: freqs[0], f2: mid }, MetricKind::Impedance { freq: mid },
        ];
        for kind in kinds {
            for reference in [None, Some(mid)] {
                if let Ok(v) = measure(&mut data, &freqs, kind, reference) {
                    proptest::prop_assert!(v.is_finite(), "{kind:?}: {v}");
                }
            }
        }
        let s = analyze(&mut data, &freqs, None).unwrap();
        for (_, _, v) in s.named_values() {
            proptest::prop_assert!(v.is_finite());
        }
    }
}
