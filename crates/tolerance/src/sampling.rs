//! Tolerance-band sampling, per-trial random streams, order-stable statistics and the
//! parallel trial runner.
//!
//! Reproducibility rests on three rules. Every trial draws from its own stream,
//! `ChaCha8Rng::seed_from_u64(seed)` with `set_stream(trial)`, so what a trial draws
//! does not depend on which thread runs it. Results are collected in trial order. And
//! every reduction (mean, σ, percentiles) runs serially over that ordered list, so the
//! statistics are bit-identical whatever the thread count. The generator is named
//! (ChaCha8 from `rand`), never `StdRng`, whose algorithm may change between versions.

use rand::rngs::ChaCha8Rng;
use rand::{Rng, RngExt, SeedableRng};
use rayon::prelude::*;
use rolloff_netlist::Tolerance;

/// The name of the random generator, for recording beside a seed in reports.
pub const RNG_NAME: &str = "ChaCha8 (rand 0.10), stream = trial index";

/// How a part value is drawn within its tolerance band.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default)]
pub enum Distribution {
    /// Uniform over the band (the default): every value in the band equally likely.
    #[default]
    Uniform,
    /// Gaussian centred on the middle of the band with the half-width as 3σ, truncated
    /// to the band by rejection (about 0.27 % of draws are redrawn). Treating a
    /// tolerance as a 3σ limit is common practice, not a promise of any maker.
    Gaussian,
}

/// The random stream of one trial: `ChaCha8Rng::seed_from_u64(seed)` on stream `trial`.
///
/// ```
/// use rand::RngExt;
/// use rolloff_tolerance::sampling::trial_rng;
/// let a: f64 = trial_rng(7, 3).random();
/// let b: f64 = trial_rng(7, 3).random();
/// let c: f64 = trial_rng(7, 4).random();
/// assert_eq!(a, b);
/// assert_ne!(a, c);
/// ```
pub fn trial_rng(seed: u64, trial: u64) -> ChaCha8Rng {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    rng.set_stream(trial);
    rng
}

/// A multiplier `1 + δ` with `δ` drawn from `band` (`value · factor` is the part).
///
/// The result always lies in `1 + band.lower ..= 1 + band.upper`. An asymmetric band
/// (`-20 % .. +80 %`) is honoured as written: uniform over it, or for
/// [`Distribution::Gaussian`] centred on its middle (`+30 %`) with σ a sixth of its width.
///
/// ```
/// use rolloff_netlist::Tolerance;
/// use rolloff_tolerance::sampling::{sample_factor, trial_rng, Distribution};
/// let band = Tolerance { lower: -0.2, upper: 0.8 };
/// let mut rng = trial_rng(1, 0);
/// for _ in 0..100 {
///     let f = sample_factor(band, Distribution::Gaussian, &mut rng);
///     assert!((0.8..=1.8).contains(&f));
/// }
/// ```
pub fn sample_factor<R: Rng + ?Sized>(
    band: Tolerance,
    distribution: Distribution,
    rng: &mut R,
) -> f64 {
    let (low, high) = (1.0 + band.lower, 1.0 + band.upper);
    match distribution {
        Distribution::Uniform => {
            let u: f64 = rng.random();
            (low + (high - low) * u).clamp(low, high)
        }
        Distribution::Gaussian => {
            let centre = 0.5 * (low + high);
            let sigma = (high - low) / 6.0;
            (centre + sigma * truncated_standard_normal(rng, 3.0)).clamp(low, high)
        }
    }
}

/// A standard normal variate redrawn until `|z| <= limit` (Box–Muller, cosine branch).
///
/// Written here rather than taken from a distribution crate so that the stream of
/// values is fixed by this code alone. After 64 rejections in a row (probability
/// about 1e-164 for `limit = 3`) it returns 0.
pub fn truncated_standard_normal<R: Rng + ?Sized>(rng: &mut R, limit: f64) -> f64 {
    for _ in 0..64 {
        // 1 − u lies in (0, 1], so the logarithm is finite.
        let u1: f64 = 1.0 - rng.random::<f64>();
        let u2: f64 = rng.random();
        let z = (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos();
        if z.abs() <= limit {
            return z;
        }
    }
    0.0
}

/// The standard deviation of a distribution over a band of relative half-width `t`:
/// `t/√3` for a uniform band, `t/3` for the Gaussian (ignoring the 0.27 % truncation).
pub fn relative_sigma(half_width: f64, distribution: Distribution) -> f64 {
    match distribution {
        Distribution::Uniform => half_width / 3f64.sqrt(),
        Distribution::Gaussian => half_width / 3.0,
    }
}

/// Runs `trials` trials in parallel and returns their results in trial order.
///
/// Trial `i` gets [`trial_rng`]`(seed, i)` and a worker state made by `init` (rayon's
/// `map_init`: one state per work split, reused across the trials of that split; a
/// trial must therefore set everything it depends on and not rely on what an earlier
/// trial left behind). With `pool`, the work runs inside that pool; without, in the
/// caller's current rayon context. The library never builds the global pool.
///
/// ```
/// use rand::RngExt;
/// use rolloff_tolerance::sampling::run_trials;
/// let one = rayon::ThreadPoolBuilder::new().num_threads(1).build().unwrap();
/// let two = rayon::ThreadPoolBuilder::new().num_threads(2).build().unwrap();
/// let run = |pool| run_trials(1000, 42, Some(pool), || (), |_, rng, _| rng.random::<f64>());
/// assert_eq!(run(&one), run(&two));
/// ```
pub fn run_trials<S, T, I, F>(
    trials: usize,
    seed: u64,
    pool: Option<&rayon::ThreadPool>,
    init: I,
    trial: F,
) -> Vec<T>
where
    T: Send,
    I: Fn() -> S + Send + Sync,
    F: Fn(&mut S, &mut ChaCha8Rng, usize) -> T + Send + Sync,
{
    let work = || {
        (0..trials)
            .into_par_iter()
            .map_init(&init, |state, i| {
                let mut rng = trial_rng(seed, i as u64);
                trial(state, &mut rng, i)
            })
            .collect::<Vec<T>>()
    };
    match pool {
        Some(pool) => pool.install(work),
        None => work(),
    }
}

/// Order statistics and moments of one metric over the trials where it was found.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Summary {
    /// How many values entered the statistics.
    pub count: usize,
    /// The smallest value.
    pub min: f64,
    /// The 1st percentile.
    pub p01: f64,
    /// The median (50th percentile).
    pub p50: f64,
    /// The 99th percentile.
    pub p99: f64,
    /// The largest value.
    pub max: f64,
    /// The arithmetic mean.
    pub mean: f64,
    /// The sample standard deviation (divisor `n − 1`); `None` for fewer than 2 values.
    pub std_dev: Option<f64>,
}

/// Summarises `values` (in trial order). Non-finite values are skipped; `None` when
/// no finite value is left.
///
/// The mean is a compensated (Neumaier) sum taken serially in the given order; the
/// percentiles interpolate linearly between order statistics of a sorted copy
/// (Hyndman & Fan's definition 7, the default of R and numpy).
///
/// ```
/// use rolloff_tolerance::sampling::summarize;
/// let s = summarize(&[3.0, 1.0, 2.0, 4.0]).unwrap();
/// assert_eq!((s.min, s.p50, s.max, s.mean), (1.0, 2.5, 4.0, 2.5));
/// assert!((s.p01 - 1.03).abs() < 1e-12);
/// ```
pub fn summarize(values: &[f64]) -> Option<Summary> {
    let mut sorted: Vec<f64> = values.iter().copied().filter(|v| v.is_finite()).collect();
    if sorted.is_empty() {
        return None;
    }
    let n = sorted.len();
    let mean = compensated_sum(values.iter().copied().filter(|v| v.is_finite())) / n as f64;
    let std_dev = (n >= 2).then(|| {
        let squares = compensated_sum(
            values
                .iter()
                .filter(|v| v.is_finite())
                .map(|v| (v - mean) * (v - mean)),
        );
        (squares / (n - 1) as f64).sqrt()
    });
    sorted.sort_by(f64::total_cmp);
    Some(Summary {
        count: n,
        min: sorted[0],
        p01: percentile_sorted(&sorted, 0.01)?,
        p50: percentile_sorted(&sorted, 0.50)?,
        p99: percentile_sorted(&sorted, 0.99)?,
        max: sorted[n - 1],
        mean,
        std_dev,
    })
}

/// The `q`-quantile (`0 ≤ q ≤ 1`) of ascending `sorted` values by linear interpolation
/// between order statistics (Hyndman & Fan definition 7); `None` when empty or `q` is
/// outside `[0, 1]`.
///
/// ```
/// use rolloff_tolerance::sampling::percentile_sorted;
/// assert_eq!(percentile_sorted(&[10.0, 20.0, 30.0], 0.25), Some(15.0));
/// ```
pub fn percentile_sorted(sorted: &[f64], q: f64) -> Option<f64> {
    if sorted.is_empty() || !(0.0..=1.0).contains(&q) {
        return None;
    }
    let h = (sorted.len() - 1) as f64 * q;
    let below = h.floor() as usize;
    let above = (below + 1).min(sorted.len() - 1);
    let fraction = h - below as f64;
    Some(sorted[below] + fraction * (sorted[above] - sorted[below]))
}

/// A sum with Neumaier's compensation, taken in iteration order.
pub fn compensated_sum(values: impl IntoIterator<Item = f64>) -> f64 {
    let mut sum = 0.0_f64;
    let mut compensation = 0.0_f64;
    for v in values {
        let t = sum + v;
        if sum.abs() >= v.abs() {
            compensation += (sum - t) + v;
        } else {
            compensation += (v - t) + sum;
        }
        sum = t;
    }
    sum + compensation
}

/// Counts of values in equal-width bins from `low` to `high`.
#[derive(Debug, Clone, PartialEq)]
pub struct Histogram {
    /// The lower edge of the first bin (the smallest value).
    pub low: f64,
    /// The upper edge of the last bin (the largest value, included in the last bin).
    pub high: f64,
    /// Counts per bin, lowest first.
    pub counts: Vec<u64>,
}

impl Histogram {
    /// The width of one bin (0 when all values were equal).
    pub fn bin_width(&self) -> f64 {
        (self.high - self.low) / self.counts.len() as f64
    }

    /// The lower and upper edge of bin `i`.
    pub fn bin_edges(&self, i: usize) -> (f64, f64) {
        let w = self.bin_width();
        (self.low + w * i as f64, self.low + w * (i + 1) as f64)
    }
}

/// Bins the finite `values` into `bins` equal bins spanning their range; `None` when
/// there is no finite value or `bins` is 0. Equal values all fall into one bin.
///
/// ```
/// use rolloff_tolerance::sampling::histogram;
/// let h = histogram(&[0.0, 0.1, 0.6, 1.0], 2).unwrap();
/// assert_eq!(h.counts, [2, 2]);
/// ```
pub fn histogram(values: &[f64], bins: usize) -> Option<Histogram> {
    if bins == 0 {
        return None;
    }
    let finite = || values.iter().copied().filter(|v| v.is_finite());
    let low = finite().min_by(f64::total_cmp)?;
    let high = finite().max_by(f64::total_cmp)?;
    let mut counts = vec![0u64; bins];
    let width = high - low;
    for v in finite() {
        let i = if width > 0.0 {
            (((v - low) / width * bins as f64) as usize).min(bins - 1)
        } else {
            0
        };
        counts[i] += 1;
    }
    Some(Histogram { low, high, counts })
}

#[cfg(test)]
#[allow(clippy::unwrap_used, clippy::expect_used)]
mod tests;
