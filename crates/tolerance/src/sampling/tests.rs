//! Tests of band sampling, streams and statistics.

use super::*;

fn pool(threads: usize) -> rayon::ThreadPool {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap()
}

fn draws(band: Tolerance, distribution: Distribution, n: usize) -> Vec<f64> {
    run_trials(
        n,
        2024,
        None,
        || (),
        |(), rng, _| sample_factor(band, distribution, rng),
    )
}

#[test]
fn uniform_band_has_the_uniform_moments() {
    // A uniform ±t band has mean 1 and σ = t/√3 (textbook moments of a uniform law).
    let t = 0.05;
    let v = draws(Tolerance::symmetric(t), Distribution::Uniform, 20_000);
    assert!(v.iter().all(|f| (1.0 - t..=1.0 + t).contains(f)));
    let s = summarize(&v).unwrap();
    assert!((s.mean - 1.0).abs() < 1e-3 * t * 10.0, "{s:?}");
    let sigma = s.std_dev.unwrap();
    assert!(
        (sigma / relative_sigma(t, Distribution::Uniform) - 1.0).abs() < 0.01,
        "{s:?}"
    );
    // The extremes come close to the band edges.
    assert!(s.min < 1.0 - 0.999 * t && s.max > 1.0 + 0.999 * t);
}

#[test]
fn gaussian_band_is_three_sigma_truncated() {
    // Normal truncated at ±3σ: variance 1 − 6φ(3)/(2Φ(3) − 1) = 0.97334 (standard
    // truncated-normal moments), so σ is 0.98658 of the untruncated t/3.
    let t = 0.1;
    let v = draws(Tolerance::symmetric(t), Distribution::Gaussian, 30_000);
    assert!(v.iter().all(|f| (1.0 - t..=1.0 + t).contains(f)));
    let s = summarize(&v).unwrap();
    assert!((s.mean - 1.0).abs() < 1e-3, "{s:?}");
    let ratio = s.std_dev.unwrap() / relative_sigma(t, Distribution::Gaussian);
    assert!((ratio - 0.98658).abs() < 0.01, "{ratio}");
    // About 68.3 % within ±1σ (of the untruncated law, renormalised: 0.6827/0.9973).
    let inside = v.iter().filter(|f| (**f - 1.0).abs() <= t / 3.0).count() as f64;
    assert!((inside / v.len() as f64 - 0.6845).abs() < 0.01);
}

#[test]
fn asymmetric_band_is_honoured() {
    let band = Tolerance {
        lower: -0.2,
        upper: 0.8,
    };
    for distribution in [Distribution::Uniform, Distribution::Gaussian] {
        let v = draws(band, distribution, 10_000);
        assert!(v.iter().all(|f| (0.8..=1.8).contains(f)));
        let s = summarize(&v).unwrap();
        assert!((s.mean - 1.3).abs() < 0.01, "{distribution:?} {s:?}");
        assert!((s.p50 - 1.3).abs() < 0.02, "{distribution:?} {s:?}");
    }
}

#[test]
fn trials_are_bitwise_reproducible_across_thread_counts() {
    let band = Tolerance::symmetric(0.01);
    let run = |threads| {
        run_trials(
            4_000,
            99,
            Some(&pool(threads)),
            Vec::<f64>::new,
            |scratch, rng, i| {
                // Worker state is reused across trials; the result must not depend on it.
                scratch.clear();
                scratch.push(sample_factor(band, Distribution::Gaussian, rng));
                scratch[0] * (i as f64 + 1.0)
            },
        )
    };
    let (one, two) = (run(1), run(2));
    assert_eq!(one.len(), 4_000);
    assert!(
        one.iter()
            .zip(&two)
            .all(|(a, b)| a.to_bits() == b.to_bits())
    );
    let (s1, s2) = (summarize(&one).unwrap(), summarize(&two).unwrap());
    assert_eq!(s1.mean.to_bits(), s2.mean.to_bits());
    assert_eq!(s1.std_dev.unwrap().to_bits(), s2.std_dev.unwrap().to_bits());
    // A different seed gives different draws.
    let other = run_trials(10, 100, None, || (), |(), rng, _| rng.random::<f64>());
    let same_seed = run_trials(10, 99, None, || (), |(), rng, _| rng.random::<f64>());
    assert_ne!(other, same_seed);
}

#[test]
fn percentiles_follow_definition_7() {
    // numpy.percentile(range(1, 11), [1, 50, 99]) = [1.09, 5.5, 9.91] (numpy's default
    // "linear" method, Hyndman & Fan definition 7).
    let v: Vec<f64> = (1..=10).rev().map(f64::from).collect();
    let s = summarize(&v).unwrap();
    assert!((s.p01 - 1.09).abs() < 1e-12);
    assert!((s.p50 - 5.5).abs() < 1e-12);
    assert!((s.p99 - 9.91).abs() < 1e-12);
    assert_eq!((s.min, s.max, s.count), (1.0, 10.0, 10));
    // Sample σ of 1..10 is √(82.5/9) = 3.02765.
    assert!((s.std_dev.unwrap() - (82.5f64 / 9.0).sqrt()).abs() < 1e-12);
    assert_eq!(percentile_sorted(&[1.0], 0.5), Some(1.0));
    assert_eq!(percentile_sorted(&[], 0.5), None);
    assert_eq!(percentile_sorted(&[1.0, 2.0], 1.5), None);
}

#[test]
fn statistics_skip_non_finite_and_handle_degenerate_input() {
    assert!(summarize(&[]).is_none());
    assert!(summarize(&[f64::NAN]).is_none());
    let s = summarize(&[2.0, f64::INFINITY]).unwrap();
    assert_eq!((s.count, s.mean, s.std_dev), (1, 2.0, None));
    let h = histogram(&[5.0, 5.0, f64::NAN], 4).unwrap();
    assert_eq!(h.counts, [2, 0, 0, 0]);
    assert_eq!(h.bin_width(), 0.0);
    assert!(histogram(&[1.0], 0).is_none());
}

#[test]
fn histogram_covers_every_value() {
    let v = draws(Tolerance::symmetric(0.05), Distribution::Uniform, 10_000);
    let h = histogram(&v, 20).unwrap();
    assert_eq!(h.counts.iter().sum::<u64>(), 10_000);
    // A uniform law fills 20 bins with about 500 each (binomial σ ≈ 22).
    assert!(
        h.counts.iter().all(|&c| (400..=600).contains(&c)),
        "{:?}",
        h.counts
    );
    let (lo, hi) = h.bin_edges(19);
    assert!((hi - h.high).abs() < 1e-12 && lo < hi);
}

#[test]
fn compensated_sum_keeps_small_terms() {
    assert_eq!(compensated_sum([1e16, 1.0, -1e16]), 1.0);
    assert_eq!(compensated_sum([0.1; 10]), 1.0);
}
