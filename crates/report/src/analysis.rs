//! The metric engine: a response sampled on the sweep, refined on its source.
//!
//! An [`Analysis`] evaluates a [`ResponseSource`] once at every sweep frequency, keeps
//! gain (dB) and phase (unwrapped, degrees), and answers metrics from those samples,
//! asking the source again wherever a value between samples is needed: crossings are
//! bracketed on the sweep and refined by Brent's method on `ln f`; extrema are refined by
//! a root of `Re(H′/H)` (the slope of the gain) where the source gives a derivative, by
//! Brent's minimiser otherwise. The definitions are written out in `docs/metrics.md`.

use crate::format::{DEFAULT_LEVEL_DB, fmt_db, fmt_hz, fmt_hz_approx, fmt_num};
use crate::numeric::{
    self, MIN_TOL, ROOT_ITERATIONS, ROOT_TOL, brent_min, brent_root, nearest_branch,
};
use crate::{MetricError, ReportError, ResponseSource};
use num_complex::Complex64;
use rolloff_netlist::{MetricKind, MetricOptions};
use std::f64::consts::PI;
use std::fmt;

/// Gain in dB used internally for an exactly zero response (about `20·log10(1e-300)`).
const FLOOR_DB: f64 = -6000.0;
/// The gain is "still changing" at a sweep end above this slope (dB/decade).
pub const SETTLED_DB_PER_DECADE: f64 = 0.1;
/// The gain "peaks above its flat region" when it rises more than this (dB).
pub const PEAKING_WARN_DB: f64 = 0.1;
/// A sweep end whose gain changes less than this (dB/decade) is flat: its gain is a
/// flat region that peaking is measured from, even when it lies below the level.
pub const FLAT_END_DB_PER_DECADE: f64 = 1.0;
/// How many decades beyond a sweep end the reference search may look.
pub const LOOK_BEYOND_DECADES: i32 = 6;
/// A stopband slope within this of `n × 20 dB/decade` gives the roll-off order `n`.
pub const ORDER_TOLERANCE_DB_PER_DECADE: f64 = 1.0;
/// A local extremum of the gain that reaches the level by no more than this (dB) only
/// touches it: an equiripple minimum designed to lie exactly at the level, missed by
/// rounding. Such a touch is no crossing. About 1e7 times the solver's rounding in dB,
/// and far below any deviation a measurement could show.
pub const TOUCH_TOLERANCE_DB: f64 = 1e-6;

/// The shape of a response, found from where its gain lies above the passband level.
///
/// Rule: mark each sweep frequency "in" when its gain is at least the reference gain plus
/// the level (−3.0103 dB unless `level` says otherwise) and count the crossings (refined,
/// including narrow dips or peaks found between samples). No crossing and every point
/// in: [`Shape::Flat`]. One crossing: [`Shape::LowPass`] when the sweep starts in,
/// [`Shape::HighPass`] when it starts out. Two: [`Shape::BandPass`] when it starts out,
/// [`Shape::BandStop`] when it starts in. Anything else: [`Shape::Other`].
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Shape {
    /// Passes low frequencies, one crossing going down.
    LowPass,
    /// Passes high frequencies, one crossing going up.
    HighPass,
    /// One passband between two crossings.
    BandPass,
    /// One stopband (a notch) between two crossings.
    BandStop,
    /// The gain stays within the level across the sweep (an all-pass or a plain gain).
    Flat,
    /// Several bands, or no point reaches the passband level.
    Other,
}

impl fmt::Display for Shape {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            Shape::LowPass => "low-pass",
            Shape::HighPass => "high-pass",
            Shape::BandPass => "band-pass",
            Shape::BandStop => "band-stop",
            Shape::Flat => "flat",
            Shape::Other => "irregular",
        })
    }
}

/// One end of the sweep.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum SweepEnd {
    /// The lowest frequency.
    Start,
    /// The highest frequency.
    End,
}

impl fmt::Display for SweepEnd {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            SweepEnd::Start => "start",
            SweepEnd::End => "end",
        })
    }
}

/// Where the passband reference came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum ReferenceOrigin {
    /// The `ref` frequency of the metric or probe.
    Given,
    /// The largest gain on the sweep (refined between samples).
    LargestInSweep,
    /// The settled gain found beyond a sweep end, larger than anything in the sweep.
    BeyondSweep,
}

/// The passband reference.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Reference {
    /// Frequency in Hz.
    pub freq_hz: f64,
    /// Gain in dB.
    pub gain_db: f64,
    /// How it was chosen.
    pub origin: ReferenceOrigin,
}

/// A frequency where the gain crosses the passband level.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Crossing {
    /// Frequency in Hz (refined to 1e-9 relative or better on a continuous source).
    pub freq_hz: f64,
    /// Whether the gain rises through the level with increasing frequency.
    pub rising: bool,
}

/// A gain extremum.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Extremum {
    /// Frequency in Hz.
    pub freq_hz: f64,
    /// Gain in dB.
    pub gain_db: f64,
    /// Whether it lies strictly inside the sweep (a true peak or dip, not an end value).
    pub interior: bool,
}

/// Something the reader of a result should know; not an error.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum ReportWarning {
    /// A 0 Hz point of a linear sweep is left out of log-frequency searches.
    DcPointSkipped,
    /// The gain still changes faster than 0.1 dB/decade at an end the passband reaches.
    StillChanging {
        /// Which end.
        end: SweepEnd,
        /// The end frequency in Hz.
        freq_hz: f64,
        /// The local slope there.
        slope_db_per_decade: f64,
    },
    /// The reference was taken beyond the sweep, where the gain had settled.
    ReferenceBeyondSweep {
        /// Where, in Hz.
        freq_hz: f64,
        /// The gain there in dB.
        gain_db: f64,
    },
    /// Looking beyond the sweep end found no settled gain.
    AsymptoteNotFound {
        /// Which end.
        end: SweepEnd,
    },
    /// The gain peaks above its flat region, and the reference is the peak.
    PeaksAboveFlat {
        /// Peak frequency in Hz.
        peak_hz: f64,
        /// Peak gain in dB.
        peak_db: f64,
        /// Gain of the flat region in dB.
        flat_db: f64,
    },
    /// A stopband slope was measured beyond the sweep, on the solver.
    SlopeBeyondSweep {
        /// Start of the measured interval in Hz.
        from_hz: f64,
        /// End of the measured interval in Hz.
        to_hz: f64,
    },
}

impl fmt::Display for ReportWarning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match *self {
            ReportWarning::DcPointSkipped => {
                f.write_str("the 0 Hz point is left out of the log-frequency searches")
            }
            ReportWarning::StillChanging {
                end,
                freq_hz,
                slope_db_per_decade,
            } => write!(
                f,
                "the gain still changes by {} dB/decade at the sweep {end} ({}): the passband may extend beyond the sweep",
                fmt_num(slope_db_per_decade.abs()),
                fmt_hz(freq_hz)
            ),
            ReportWarning::ReferenceBeyondSweep { freq_hz, gain_db } => write!(
                f,
                "the passband reference is taken beyond the sweep, at {} ({}), where the gain has settled",
                fmt_hz(freq_hz),
                fmt_db(gain_db)
            ),
            ReportWarning::AsymptoteNotFound { end } => write!(
                f,
                "the gain does not settle within {LOOK_BEYOND_DECADES} decades beyond the sweep {end}; the reference is the largest gain in the sweep"
            ),
            ReportWarning::PeaksAboveFlat {
                peak_hz,
                peak_db,
                flat_db,
            } => write!(
                f,
                "the gain peaks {} above its flat region (at {}); the reference is the peak, give `ref <freq>` to measure from the flat region",
                fmt_db(peak_db - flat_db),
                fmt_hz(peak_hz)
            ),
            ReportWarning::SlopeBeyondSweep { from_hz, to_hz } => write!(
                f,
                "a stopband slope is measured beyond the sweep ({} .. {})",
                fmt_hz_approx(from_hz),
                fmt_hz_approx(to_hz)
            ),
        }
    }
}

/// The passband of a response: reference, level, crossings and shape.
#[derive(Debug, Clone, PartialEq)]
pub struct Passband {
    /// The reference gain.
    pub reference: Reference,
    /// The level relative to the reference, in dB (negative).
    pub level_db: f64,
    /// Crossings of `reference + level`, ascending.
    pub crossings: Vec<Crossing>,
    /// The shape.
    pub shape: Shape,
    /// The largest gain (refined).
    pub peak: Extremum,
    /// The gain of the flat region at the sweep end(s) the passband reaches (its settled
    /// value when looked for beyond the sweep); `None` when the passband reaches no end or
    /// the reference was given.
    pub flat_db: Option<f64>,
    /// Warnings found on the way.
    pub warnings: Vec<ReportWarning>,
}

impl Passband {
    /// The level the crossings are of: reference gain plus level, in dB.
    pub fn threshold_db(&self) -> f64 {
        self.reference.gain_db + self.level_db
    }
}

/// Which side of the passband a stopband lies on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Side {
    /// Below the passband.
    Low,
    /// Above the passband.
    High,
}

/// The average slope over an interval.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Slope {
    /// Start of the interval in Hz.
    pub from_hz: f64,
    /// End of the interval in Hz.
    pub to_hz: f64,
    /// Average slope, signed, in dB/decade.
    pub db_per_decade: f64,
    /// Whether the interval reaches outside the sweep (measured on the source).
    pub beyond_sweep: bool,
}

/// The roll-off on one side of the passband.
///
/// `near` is the decade one decade beyond the cutoff (`10·fc .. 100·fc` above, `fc/100 ..
/// fc/10` below); `far` is the next decade out, where the asymptote is read:
/// `order = n` when `|far| = n × 20 dB/decade` within 1 dB/decade. On a source with a
/// limited range (measured data) a decade that does not fit is replaced by the outermost
/// decade of the data, when that still lies beyond the previous one.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StopbandSlope {
    /// Which side.
    pub side: Side,
    /// The cutoff it is measured from, in Hz.
    pub edge_hz: f64,
    /// The decade beyond the cutoff.
    pub near: Option<Slope>,
    /// The next decade out.
    pub far: Option<Slope>,
    /// The asymptotic roll-off order from `far`.
    pub order: Option<u32>,
}

/// A response on a sweep, with its source for refinement.
pub struct Analysis<'a> {
    source: &'a mut dyn ResponseSource,
    freqs: Vec<f64>,
    ln_f: Vec<f64>,
    values: Vec<Complex64>,
    gain: Vec<f64>,
    phase: Vec<f64>,
    dc_skipped: bool,
}

impl fmt::Debug for Analysis<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("Analysis")
            .field("freqs", &self.freqs)
            .field("gain", &self.gain)
            .field("phase", &self.phase)
            .finish_non_exhaustive()
    }
}

fn db(h: Complex64) -> f64 {
    let m = h.norm();
    if m > 0.0 { 20.0 * m.log10() } else { FLOOR_DB }
}

fn check_freq(what: &str, f: f64) -> Result<f64, MetricError> {
    if f.is_finite() && f > 0.0 {
        Ok(f)
    } else {
        Err(MetricError::BadArgument(format!(
            "{what} must be a positive frequency, got {f} Hz"
        )))
    }
}

impl<'a> Analysis<'a> {
    /// Evaluates `source` at every positive frequency of `freqs` (sorted, duplicates
    /// dropped; a 0 Hz point is skipped with a warning).
    ///
    /// # Errors
    /// [`ReportError::BadFrequency`] for a negative or non-finite frequency,
    /// [`ReportError::EmptySweep`] when no positive frequency is left, or the source's error.
    pub fn new(source: &'a mut dyn ResponseSource, freqs: &[f64]) -> Result<Self, ReportError> {
        if let Some(&bad) = freqs.iter().find(|f| !(f.is_finite() && **f >= 0.0)) {
            return Err(ReportError::BadFrequency(bad));
        }
        let dc_skipped = freqs.contains(&0.0);
        let mut sorted: Vec<f64> = freqs.iter().copied().filter(|f| *f > 0.0).collect();
        sorted.sort_by(f64::total_cmp);
        sorted.dedup();
        if sorted.is_empty() {
            return Err(ReportError::EmptySweep);
        }
        let values = sorted
            .iter()
            .map(|&f| source.eval(f))
            .collect::<Result<Vec<_>, _>>()?;
        let gain = values.iter().map(|h| db(*h)).collect();
        let mut phase: Vec<f64> = values.iter().map(|h| h.arg().to_degrees()).collect();
        numeric::unwrap_degrees(&mut phase);
        Ok(Self {
            ln_f: sorted.iter().map(|f| f.ln()).collect(),
            freqs: sorted,
            values,
            gain,
            phase,
            source,
            dc_skipped,
        })
    }

    /// The sweep frequencies used (Hz, ascending, positive).
    pub fn frequencies(&self) -> &[f64] {
        &self.freqs
    }

    /// The response at the sweep frequencies.
    pub fn values(&self) -> &[Complex64] {
        &self.values
    }

    /// Gain in dB at the sweep frequencies (an exact zero shows as −6000 dB).
    pub fn gains_db(&self) -> &[f64] {
        &self.gain
    }

    /// Phase in degrees at the sweep frequencies, unwrapped from the lowest frequency.
    pub fn phases_deg(&self) -> &[f64] {
        &self.phase
    }

    /// Whether a 0 Hz point was skipped.
    pub fn dc_skipped(&self) -> bool {
        self.dc_skipped
    }

    fn low(&self) -> f64 {
        self.freqs[0]
    }

    fn high(&self) -> f64 {
        self.freqs[self.freqs.len() - 1]
    }

    fn in_range(&self, f: f64) -> bool {
        self.source
            .range()
            .is_none_or(|(lo, hi)| f >= lo * (1.0 - 1e-12) && f <= hi * (1.0 + 1e-12))
    }

    fn gain_at(&mut self, f: f64) -> Result<f64, ReportError> {
        Ok(db(self.source.eval(f)?))
    }

    /// The local slope of the gain in dB/decade: `20·ω·Re(H′/H)` from the derivative,
    /// or a central difference over ±0.005 decade when the source has none.
    fn slope_at(&mut self, f: f64) -> Result<f64, ReportError> {
        match self.source.eval_with_derivative(f) {
            Ok((h, dh)) if h.norm() > 0.0 => Ok(20.0 * 2.0 * PI * f * (dh / h).re),
            Ok(_) => Ok(0.0),
            Err(ReportError::NoDerivative) => {
                let k = 10f64.powf(0.005);
                Ok((self.gain_at(f * k)? - self.gain_at(f / k)?) / 0.01)
            }
            Err(e) => Err(e),
        }
    }

    /// Refines the extremum near interior sample `i` (a maximum when `maximum`).
    fn refine_extremum(&mut self, i: usize, maximum: bool) -> Result<(f64, f64), ReportError> {
        let sign = if maximum { 1.0 } else { -1.0 };
        let (x0, x1, x2) = (self.ln_f[i - 1], self.ln_f[i], self.ln_f[i + 1]);
        let sample = (self.freqs[i], self.gain[i]);
        let refined = match self.source.eval_with_derivative(self.freqs[i]) {
            Err(ReportError::NoDerivative) => {
                let source = &mut *self.source;
                let mut f =
                    |x: f64| -> Result<f64, ReportError> { Ok(-sign * db(source.eval(x.exp())?)) };
                let (x, v) = brent_min(&mut f, (x0, x2), (x1, -sign * sample.1), MIN_TOL)?;
                Some((x.exp(), -sign * v))
            }
            Err(e) => return Err(e),
            Ok(_) => self.extremum_by_derivative(x0, x1, x2, sign)?,
        };
        Ok(match refined {
            Some(r) if sign * r.1 >= sign * sample.1 => r,
            _ => sample,
        })
    }

    /// The root of the gain's slope in `[x0, x2]` around `x1` (on `ln f`).
    fn extremum_by_derivative(
        &mut self,
        x0: f64,
        x1: f64,
        x2: f64,
        sign: f64,
    ) -> Result<Option<(f64, f64)>, ReportError> {
        let source = &mut *self.source;
        let mut slope = |x: f64| -> Result<f64, ReportError> {
            let (h, dh) = source.eval_with_derivative(x.exp())?;
            Ok(if h.norm() > 0.0 {
                sign * (dh / h).re
            } else {
                0.0
            })
        };
        let (s0, s1, s2) = (slope(x0)?, slope(x1)?, slope(x2)?);
        // The gain rises (×sign) before the extremum and falls after it.
        let bracket = if s0 > 0.0 && s1 <= 0.0 {
            Some(((x0, s0), (x1, s1)))
        } else if s1 >= 0.0 && s2 < 0.0 {
            Some(((x1, s1), (x2, s2)))
        } else {
            None
        };
        let Some((a, b)) = bracket else {
            return Ok(None);
        };
        let x = brent_root(&mut slope, a, b, ROOT_TOL, ROOT_ITERATIONS)?;
        let f = x.exp();
        Ok(Some((f, db(source.eval(f)?))))
    }

    /// The largest gain: the largest sample, refined when it lies inside the sweep.
    ///
    /// # Errors
    /// The source's error while refining.
    pub fn peak(&mut self) -> Result<Extremum, ReportError> {
        let i = argmax(&self.gain);
        let n = self.freqs.len();
        if i == 0 || i == n - 1 {
            return Ok(Extremum {
                freq_hz: self.freqs[i],
                gain_db: self.gain[i],
                interior: false,
            });
        }
        let (freq_hz, gain_db) = self.refine_extremum(i, true)?;
        Ok(Extremum {
            freq_hz,
            gain_db,
            interior: true,
        })
    }

    /// The passband: reference (given `ref`, else the largest gain, looking beyond an end
    /// where the gain still changes), level, crossings (refined) and shape.
    ///
    /// # Errors
    /// [`MetricError::BadArgument`] for a `ref` that is not a positive frequency or a
    /// `level` that is not negative, [`MetricError::TooFewPoints`] for a sweep of one
    /// point, [`MetricError::ZeroResponse`] when the response is zero at `ref`, or the
    /// source's error.
    pub fn passband(&mut self, options: &MetricOptions) -> Result<Passband, MetricError> {
        let level_db = options.level_db.unwrap_or(DEFAULT_LEVEL_DB);
        if !(level_db.is_finite() && level_db < 0.0) {
            return Err(MetricError::BadArgument(format!(
                "level must be below the passband (a negative number of dB), got {level_db} dB"
            )));
        }
        if self.freqs.len() < 2 {
            return Err(MetricError::TooFewPoints {
                points: self.freqs.len(),
            });
        }
        let mut warnings = Vec::new();
        if self.dc_skipped {
            warnings.push(ReportWarning::DcPointSkipped);
        }
        let peak = self.peak()?;
        let (reference, flat_db) = match options.reference {
            Some(f) => {
                let f = check_freq("ref", f)?;
                let h = self.source.eval(f)?;
                if h.norm() == 0.0 {
                    return Err(MetricError::ZeroResponse {
                        freq_hz: f,
                        what: "gain in dB",
                    });
                }
                let reference = Reference {
                    freq_hz: f,
                    gain_db: db(h),
                    origin: ReferenceOrigin::Given,
                };
                (reference, None)
            }
            None => self.largest_reference(peak, level_db, &mut warnings)?,
        };
        let threshold = reference.gain_db + level_db;
        let crossings = self.crossings(threshold)?;
        let first_in = self.gain[0] >= threshold;
        let shape = match (crossings.len(), first_in) {
            (0, true) => Shape::Flat,
            (1, true) => Shape::LowPass,
            (1, false) => Shape::HighPass,
            (2, false) => Shape::BandPass,
            (2, true) => Shape::BandStop,
            _ => Shape::Other,
        };
        Ok(Passband {
            reference,
            level_db,
            crossings,
            shape,
            peak,
            flat_db,
            warnings,
        })
    }

    /// The reference when no `ref` is given, and the flat-region gain.
    fn largest_reference(
        &mut self,
        peak: Extremum,
        level_db: f64,
        warnings: &mut Vec<ReportWarning>,
    ) -> Result<(Reference, Option<f64>), MetricError> {
        let mut reference = Reference {
            freq_hz: peak.freq_hz,
            gain_db: peak.gain_db,
            origin: ReferenceOrigin::LargestInSweep,
        };
        let provisional = peak.gain_db + level_db;
        let mut flat_db: Option<f64> = None;
        let last = self.freqs.len() - 1;
        for (end, i) in [(SweepEnd::Start, 0), (SweepEnd::End, last)] {
            let f_end = self.freqs[i];
            let slope = self.slope_at(f_end)?;
            let in_passband = self.gain[i] >= provisional;
            if !in_passband && slope.abs() > FLAT_END_DB_PER_DECADE {
                continue;
            }
            let mut flat_here = self.gain[i];
            if in_passband && slope.abs() > SETTLED_DB_PER_DECADE {
                warnings.push(ReportWarning::StillChanging {
                    end,
                    freq_hz: f_end,
                    slope_db_per_decade: slope,
                });
                let rising_outward = match end {
                    SweepEnd::Start => slope < 0.0,
                    SweepEnd::End => slope > 0.0,
                };
                if rising_outward {
                    match self.look_beyond(end, f_end) {
                        Some((f, g)) => {
                            flat_here = g;
                            if g > reference.gain_db {
                                reference = Reference {
                                    freq_hz: f,
                                    gain_db: g,
                                    origin: ReferenceOrigin::BeyondSweep,
                                };
                                warnings.push(ReportWarning::ReferenceBeyondSweep {
                                    freq_hz: f,
                                    gain_db: g,
                                });
                            }
                        }
                        None => warnings.push(ReportWarning::AsymptoteNotFound { end }),
                    }
                }
            }
            flat_db = Some(flat_db.map_or(flat_here, |v| v.max(flat_here)));
        }
        if let Some(flat) = flat_db
            && peak.interior
            && peak.gain_db - flat > PEAKING_WARN_DB
            && reference.origin == ReferenceOrigin::LargestInSweep
        {
            warnings.push(ReportWarning::PeaksAboveFlat {
                peak_hz: peak.freq_hz,
                peak_db: peak.gain_db,
                flat_db: flat,
            });
        }
        Ok((reference, flat_db))
    }

    /// Steps out a decade at a time (at most [`LOOK_BEYOND_DECADES`]) until the gain
    /// settles to within 0.1 dB/decade; the settled frequency and gain.
    fn look_beyond(&mut self, end: SweepEnd, f_end: f64) -> Option<(f64, f64)> {
        let step = match end {
            SweepEnd::Start => 0.1,
            SweepEnd::End => 10.0,
        };
        let mut f = f_end;
        for _ in 0..LOOK_BEYOND_DECADES {
            f *= step;
            if !self.in_range(f) {
                return None;
            }
            let slope = self.slope_at(f).ok()?;
            if slope.abs() <= SETTLED_DB_PER_DECADE {
                return self.gain_at(f).ok().map(|g| (f, g));
            }
        }
        None
    }

    /// Every crossing of `threshold` dB: sign changes between samples refined by Brent's
    /// method, plus pairs around a dip (or peak) between samples that reaches across.
    /// A dip or peak that reaches across by no more than [`TOUCH_TOLERANCE_DB`] only
    /// touches the level and gives no crossing.
    fn crossings(&mut self, threshold: f64) -> Result<Vec<Crossing>, ReportError> {
        let n = self.freqs.len();
        // Sign changes, with the interval each lies in.
        let mut changes: Vec<(usize, Crossing)> = Vec::new();
        for i in 0..n - 1 {
            let (a, b) = (self.gain[i] - threshold, self.gain[i + 1] - threshold);
            if (a >= 0.0) != (b >= 0.0) {
                let f = self.root((self.ln_f[i], a), (self.ln_f[i + 1], b), threshold)?;
                changes.push((
                    i,
                    Crossing {
                        freq_hz: f,
                        rising: a < 0.0,
                    },
                ));
            }
        }
        let mut found = Vec::new();
        let mut k = 0;
        while k < changes.len() {
            if let Some(&(j, _)) = changes.get(k + 1)
                && self.only_touches(changes[k].0 + 1..=j, threshold, changes[k].1.rising)?
            {
                k += 2;
                continue;
            }
            found.push(changes[k].1);
            k += 1;
        }
        for i in 1..n.saturating_sub(1) {
            let (g0, g1, g2) = (self.gain[i - 1], self.gain[i], self.gain[i + 1]);
            let dip = g1 <= g0 && g1 < g2 && g0.min(g1).min(g2) >= threshold;
            let bump = g1 >= g0 && g1 > g2 && g0.max(g1).max(g2) < threshold;
            if !(dip || bump) {
                continue;
            }
            let (f_m, g_m) = self.refine_extremum(i, bump)?;
            let beyond = if bump {
                g_m - threshold
            } else {
                threshold - g_m
            };
            if (g_m >= threshold) == bump && beyond > TOUCH_TOLERANCE_DB {
                let x_m = f_m.ln();
                let m = g_m - threshold;
                let left = self.root((self.ln_f[i - 1], g0 - threshold), (x_m, m), threshold)?;
                let right = self.root((x_m, m), (self.ln_f[i + 1], g2 - threshold), threshold)?;
                found.push(Crossing {
                    freq_hz: left,
                    rising: bump,
                });
                found.push(Crossing {
                    freq_hz: right,
                    rising: !bump,
                });
            }
        }
        found.sort_by(|a, b| a.freq_hz.total_cmp(&b.freq_hz));
        Ok(found)
    }

    /// Whether the samples `between` two consecutive sign changes, which lie beyond the
    /// level (below it after a falling change, above after a rising one), reach beyond it
    /// by no more than [`TOUCH_TOLERANCE_DB`], the extremum among them refined.
    fn only_touches(
        &mut self,
        between: std::ops::RangeInclusive<usize>,
        threshold: f64,
        rising: bool,
    ) -> Result<bool, ReportError> {
        let n = self.freqs.len();
        let beyond = |g: f64| if rising { g - threshold } else { threshold - g };
        let mut extreme: Option<usize> = None;
        for i in between {
            if beyond(self.gain[i]) > TOUCH_TOLERANCE_DB {
                return Ok(false);
            }
            if extreme.is_none_or(|e| beyond(self.gain[i]) > beyond(self.gain[e])) {
                extreme = Some(i);
            }
        }
        let Some(i) = extreme.filter(|&i| i > 0 && i + 1 < n) else {
            return Ok(false);
        };
        let (_, g) = self.refine_extremum(i, rising)?;
        Ok(beyond(g) <= TOUCH_TOLERANCE_DB)
    }

    fn root(&mut self, a: (f64, f64), b: (f64, f64), threshold: f64) -> Result<f64, ReportError> {
        let source = &mut *self.source;
        let mut f =
            |x: f64| -> Result<f64, ReportError> { Ok(db(source.eval(x.exp())?) - threshold) };
        Ok(brent_root(&mut f, a, b, ROOT_TOL, ROOT_ITERATIONS)?.exp())
    }

    /// The value of one metric (not `bias`, which needs the circuit).
    ///
    /// # Errors
    /// A [`MetricError`] saying why the metric cannot be found.
    pub fn metric(
        &mut self,
        kind: MetricKind,
        options: &MetricOptions,
    ) -> Result<f64, MetricError> {
        match kind {
            MetricKind::Gain { freq } => self.gain(freq),
            MetricKind::Phase { freq } => self.phase(freq),
            MetricKind::GroupDelay { freq } => self.group_delay(freq),
            MetricKind::Slope { f1, f2 } => self.slope(f1, f2),
            MetricKind::Impedance { freq } => self.magnitude(freq),
            MetricKind::Bias => Err(MetricError::NeedsCircuit { metric: "bias" }),
            MetricKind::PeakGain => Ok(self.peak()?.gain_db),
            MetricKind::PeakFreq => {
                let peak = self.peak()?;
                if peak.interior {
                    Ok(peak.freq_hz)
                } else {
                    Err(self.no_peak(peak))
                }
            }
            _ => {
                let passband = self.passband(options)?;
                self.band_metric(kind, &passband)
            }
        }
    }

    /// As [`Analysis::metric`], with the passband's warnings for the cutoff family (the
    /// gain still changing at a sweep end, the reference taken beyond the sweep, peaking
    /// above the flat region, a skipped 0 Hz point); other metrics carry none.
    pub fn metric_with_warnings(
        &mut self,
        kind: MetricKind,
        options: &MetricOptions,
    ) -> (Result<f64, MetricError>, Vec<ReportWarning>) {
        if !uses_passband(kind) {
            return (self.metric(kind, options), Vec::new());
        }
        match self.passband(options) {
            Ok(passband) => (self.band_metric(kind, &passband), passband.warnings),
            Err(e) => (Err(e), Vec::new()),
        }
    }

    fn no_peak(&self, peak: Extremum) -> MetricError {
        MetricError::NoPeak {
            low_hz: self.low(),
            high_hz: self.high(),
            end: if peak.freq_hz <= self.low() {
                "start"
            } else {
                "end"
            },
        }
    }

    fn no_crossing(&self, passband: &Passband) -> MetricError {
        MetricError::NoCrossing {
            level_db: passband.level_db,
            low_hz: self.low(),
            high_hz: self.high(),
        }
    }

    /// A metric of the cutoff family on a passband already found.
    ///
    /// # Errors
    /// A [`MetricError`] saying why the metric cannot be found.
    pub fn band_metric(
        &mut self,
        kind: MetricKind,
        passband: &Passband,
    ) -> Result<f64, MetricError> {
        let c = &passband.crossings;
        match kind {
            MetricKind::Cutoff => match c.as_slice() {
                [] => Err(self.no_crossing(passband)),
                [one] => Ok(one.freq_hz),
                [low, high] => Err(MetricError::TwoCrossings {
                    level_db: passband.level_db,
                    low_hz: low.freq_hz,
                    high_hz: high.freq_hz,
                }),
                many => Err(MetricError::ManyCrossings {
                    level_db: passband.level_db,
                    freqs_hz: many.iter().map(|c| c.freq_hz).collect(),
                }),
            },
            MetricKind::CutoffLow => self.edge(passband, true),
            MetricKind::CutoffHigh => self.edge(passband, false),
            MetricKind::Bandwidth => self.bandwidth(passband),
            MetricKind::PassbandGain => Ok(passband.reference.gain_db),
            MetricKind::Resonance => self.resonance(passband),
            MetricKind::Q => Ok(self.resonance(passband)? / self.bandwidth(passband)?),
            MetricKind::Peaking => Self::peaking(passband),
            MetricKind::NotchFreq => Ok(self.notch(passband)?.freq_hz),
            MetricKind::NotchDepth => {
                let notch = self.notch(passband)?;
                if notch.gain_db <= FLOOR_DB {
                    return Err(MetricError::ZeroResponse {
                        freq_hz: notch.freq_hz,
                        what: "notch depth",
                    });
                }
                Ok(passband.reference.gain_db - notch.gain_db)
            }
            other => self.metric(other, &MetricOptions::default()),
        }
    }

    fn edge(&self, passband: &Passband, lower: bool) -> Result<f64, MetricError> {
        let c = &passband.crossings;
        let (Some(first), Some(last)) = (c.first(), c.last()) else {
            return Err(self.no_crossing(passband));
        };
        let missing = match (passband.shape, lower) {
            (Shape::LowPass, true) => Some(("lower", self.low())),
            (Shape::HighPass, false) => Some(("upper", self.high())),
            _ => None,
        };
        if let Some((edge, end_hz)) = missing {
            return Err(MetricError::NoEdge {
                shape: passband.shape,
                edge,
                level_db: passband.level_db,
                end_hz,
            });
        }
        Ok(if lower { first.freq_hz } else { last.freq_hz })
    }

    fn bandwidth(&self, passband: &Passband) -> Result<f64, MetricError> {
        let c = &passband.crossings;
        match passband.shape {
            Shape::BandPass | Shape::BandStop => Ok(c[1].freq_hz - c[0].freq_hz),
            Shape::LowPass => Ok(c[0].freq_hz),
            Shape::Flat => Err(self.no_crossing(passband)),
            shape => Err(MetricError::WrongShape {
                metric: "bandwidth",
                needs: "a band-pass, band-stop or low-pass response",
                shape,
            }),
        }
    }

    fn resonance(&self, passband: &Passband) -> Result<f64, MetricError> {
        if passband.shape != Shape::BandPass {
            return Err(MetricError::WrongShape {
                metric: "resonance",
                needs: "a band-pass response",
                shape: passband.shape,
            });
        }
        if passband.peak.interior {
            Ok(passband.peak.freq_hz)
        } else {
            Err(self.no_peak(passband.peak))
        }
    }

    fn peaking(passband: &Passband) -> Result<f64, MetricError> {
        let peak = passband.peak.gain_db;
        if passband.reference.origin == ReferenceOrigin::Given {
            return Ok(peak - passband.reference.gain_db);
        }
        match passband.flat_db {
            Some(flat) => Ok((peak - flat).max(0.0)),
            None => Err(MetricError::NoFlatRegion {
                shape: passband.shape,
            }),
        }
    }

    /// The deepest minimum inside the sweep that lies at least `|level|` below the
    /// reference (refined).
    ///
    /// # Errors
    /// [`MetricError::NoNotch`] when there is none, or the source's error.
    pub fn notch(&mut self, passband: &Passband) -> Result<Extremum, MetricError> {
        let threshold = passband.threshold_db();
        let n = self.freqs.len();
        let mut best: Option<(f64, f64)> = None;
        for i in 1..n.saturating_sub(1) {
            if self.gain[i] < self.gain[i - 1] && self.gain[i] <= self.gain[i + 1] {
                let (f, g) = self.refine_extremum(i, false)?;
                if g <= threshold && best.is_none_or(|(_, b)| g < b) {
                    best = Some((f, g));
                }
            }
        }
        best.map(|(freq_hz, gain_db)| Extremum {
            freq_hz,
            gain_db,
            interior: true,
        })
        .ok_or(MetricError::NoNotch {
            low_hz: self.low(),
            high_hz: self.high(),
            level_db: passband.level_db,
        })
    }

    /// Passband ripple in dB: the largest gain minus the smallest of the dips inside the
    /// passband and the gains at the sweep ends it reaches; 0 for a monotonic passband.
    ///
    /// # Errors
    /// The source's error while refining a dip.
    pub fn ripple(&mut self, passband: &Passband) -> Result<f64, MetricError> {
        let threshold = passband.threshold_db();
        let n = self.freqs.len();
        let mut lowest: Option<f64> = None;
        let mut note = |g: f64| lowest = Some(lowest.map_or(g, |l: f64| l.min(g)));
        for i in 1..n.saturating_sub(1) {
            if self.gain[i] < self.gain[i - 1]
                && self.gain[i] <= self.gain[i + 1]
                && self.gain[i] >= threshold - TOUCH_TOLERANCE_DB
            {
                let (_, g) = self.refine_extremum(i, false)?;
                if g >= threshold - TOUCH_TOLERANCE_DB {
                    note(g);
                }
            }
        }
        if let Some(flat) = passband.flat_db {
            note(flat);
        }
        Ok(lowest.map_or(0.0, |l| (passband.peak.gain_db - l).max(0.0)))
    }

    /// The roll-off on each stopband side of a low-pass, high-pass or band-pass.
    ///
    /// # Errors
    /// The source's error.
    pub fn stopband_slopes(
        &mut self,
        passband: &Passband,
    ) -> Result<Vec<StopbandSlope>, MetricError> {
        let c = &passband.crossings;
        let sides: Vec<(Side, f64)> = match passband.shape {
            Shape::LowPass => vec![(Side::High, c[0].freq_hz)],
            Shape::HighPass => vec![(Side::Low, c[0].freq_hz)],
            Shape::BandPass => vec![(Side::Low, c[0].freq_hz), (Side::High, c[1].freq_hz)],
            _ => Vec::new(),
        };
        let mut out = Vec::new();
        for (side, edge) in sides {
            let (near_iv, far_iv) = match side {
                Side::High => ((10.0 * edge, 100.0 * edge), (100.0 * edge, 1000.0 * edge)),
                Side::Low => ((edge / 100.0, edge / 10.0), (edge / 1000.0, edge / 100.0)),
            };
            let near_iv = self.fit_decade(near_iv, side, edge);
            let far_iv = self.fit_decade(far_iv, side, near_iv.map_or(edge, |iv| outer(iv, side)));
            let near = near_iv.map(|iv| self.average_slope(iv)).transpose()?;
            let far = far_iv.map(|iv| self.average_slope(iv)).transpose()?;
            let order = far.and_then(|s| order_of(s.db_per_decade));
            out.push(StopbandSlope {
                side,
                edge_hz: edge,
                near,
                far,
                order,
            });
        }
        Ok(out)
    }

    /// The interval as asked, or the outermost decade of a limited source when that still
    /// lies beyond `beyond`; `None` when nothing fits.
    fn fit_decade(&self, (a, b): (f64, f64), side: Side, beyond: f64) -> Option<(f64, f64)> {
        if self.in_range(a) && self.in_range(b) {
            return Some((a, b));
        }
        let (lo, hi) = self.source.range()?;
        match side {
            Side::High if hi / 10.0 >= beyond * (1.0 - 1e-9) && hi / 10.0 >= lo => {
                Some((hi / 10.0, hi))
            }
            Side::Low if lo * 10.0 <= beyond * (1.0 + 1e-9) && lo * 10.0 <= hi => {
                Some((lo, lo * 10.0))
            }
            _ => None,
        }
    }

    fn average_slope(&mut self, (a, b): (f64, f64)) -> Result<Slope, MetricError> {
        let db_per_decade = self.slope(a, b)?;
        let tol = 1e-9;
        Ok(Slope {
            from_hz: a,
            to_hz: b,
            db_per_decade,
            beyond_sweep: a < self.low() * (1.0 - tol) || b > self.high() * (1.0 + tol),
        })
    }

    /// `20·log10|H(f)|`.
    ///
    /// # Errors
    /// [`MetricError::ZeroResponse`] when `H(f) = 0`, or the source's error.
    pub fn gain(&mut self, freq: f64) -> Result<f64, MetricError> {
        let f = check_freq("the frequency", freq)?;
        let h = self.source.eval(f)?;
        if h.norm() == 0.0 {
            return Err(MetricError::ZeroResponse {
                freq_hz: f,
                what: "gain in dB",
            });
        }
        Ok(db(h))
    }

    /// `|H(f)|` (an impedance's magnitude in Ω for `zin`/`zout` probes).
    ///
    /// # Errors
    /// The source's error.
    pub fn magnitude(&mut self, freq: f64) -> Result<f64, MetricError> {
        let f = check_freq("the frequency", freq)?;
        Ok(self.source.eval(f)?.norm())
    }

    /// The phase in degrees, on the branch of the sweep's unwrapped phase: the value of
    /// `arg H(f)` nearest to the unwrapped phase interpolated (in `ln f`) between the
    /// neighbouring sweep points, or the nearest end's outside the sweep.
    ///
    /// # Errors
    /// [`MetricError::ZeroResponse`] when `H(f) = 0`, or the source's error.
    pub fn phase(&mut self, freq: f64) -> Result<f64, MetricError> {
        let f = check_freq("the frequency", freq)?;
        let h = self.source.eval(f)?;
        if h.norm() == 0.0 {
            return Err(MetricError::ZeroResponse {
                freq_hz: f,
                what: "phase",
            });
        }
        Ok(nearest_branch(h.arg().to_degrees(), self.phase_anchor(f)))
    }

    fn phase_anchor(&self, f: f64) -> f64 {
        let x = f.ln();
        let n = self.freqs.len();
        let upper = self.ln_f.partition_point(|&v| v <= x);
        if upper == 0 {
            return self.phase[0];
        }
        if upper >= n {
            return self.phase[n - 1];
        }
        let i = upper - 1;
        let t = (x - self.ln_f[i]) / (self.ln_f[i + 1] - self.ln_f[i]);
        self.phase[i] + t * (self.phase[i + 1] - self.phase[i])
    }

    /// Group delay `τ = −dφ/dω = −Im(H′/H)` in seconds, from the source's derivative.
    ///
    /// # Errors
    /// [`MetricError::Source`] with [`ReportError::NoDerivative`] for a source without a
    /// derivative, [`MetricError::ZeroResponse`] when `H(f) = 0`.
    pub fn group_delay(&mut self, freq: f64) -> Result<f64, MetricError> {
        let f = check_freq("the frequency", freq)?;
        let (h, dh) = self.source.eval_with_derivative(f)?;
        if h.norm() == 0.0 {
            return Err(MetricError::ZeroResponse {
                freq_hz: f,
                what: "group delay",
            });
        }
        Ok(-(dh / h).im)
    }

    /// Average slope between two frequencies: `(G(f2) − G(f1)) / log10(f2/f1)` dB/decade.
    ///
    /// # Errors
    /// [`MetricError::BadArgument`] when the frequencies are equal or not positive,
    /// [`MetricError::ZeroResponse`] when the response is zero at either.
    pub fn slope(&mut self, f1: f64, f2: f64) -> Result<f64, MetricError> {
        let (f1, f2) = (check_freq("slope's f1", f1)?, check_freq("slope's f2", f2)?);
        if f1 == f2 {
            return Err(MetricError::BadArgument(format!(
                "slope needs two different frequencies, got {} twice",
                fmt_hz(f1)
            )));
        }
        Ok((self.gain(f2)? - self.gain(f1)?) / (f2 / f1).log10())
    }
}

fn outer((a, b): (f64, f64), side: Side) -> f64 {
    match side {
        Side::High => b,
        Side::Low => a,
    }
}

/// Whether a metric is measured against the passband reference (the cutoff family).
pub fn uses_passband(kind: MetricKind) -> bool {
    matches!(
        kind,
        MetricKind::Cutoff
            | MetricKind::CutoffLow
            | MetricKind::CutoffHigh
            | MetricKind::Bandwidth
            | MetricKind::PassbandGain
            | MetricKind::Resonance
            | MetricKind::Q
            | MetricKind::Peaking
            | MetricKind::NotchFreq
            | MetricKind::NotchDepth
    )
}

/// `n` when `|slope|` is within 1 dB/decade of `n × 20` for some `n ≥ 1`.
pub fn order_of(slope_db_per_decade: f64) -> Option<u32> {
    let n = (slope_db_per_decade.abs() / 20.0).round();
    (n >= 1.0
        && (slope_db_per_decade.abs() - 20.0 * n).abs() <= ORDER_TOLERANCE_DB_PER_DECADE
        && n < 1000.0)
        .then_some(n as u32)
}

fn argmax(values: &[f64]) -> usize {
    let mut best = 0;
    for (i, v) in values.iter().enumerate() {
        if *v > values[best] {
            best = i;
        }
    }
    best
}
