//! Small statistics for ensemble summaries: sample quantiles and Wilson
//! score intervals.

use serde::Serialize;

/// The standard normal quantile for a two-sided 95% interval, Φ⁻¹(0.975)
/// (e.g. Abramowitz & Stegun 1964, table 26.5; scipy.stats.norm.ppf(0.975)).
pub const Z_95: f64 = 1.959_963_984_540_054;

/// A proportion with its 95% Wilson score interval.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, serde::Deserialize)]
pub struct Proportion {
    /// Runs where it happened.
    pub count: u64,
    /// Runs counted.
    pub runs: u64,
    /// count / runs.
    pub probability: f64,
    /// [lower, upper] of the 95% Wilson score interval.
    pub ci: [f64; 2],
}

/// count out of runs with its 95% Wilson score interval (Wilson 1927,
/// J. Amer. Statist. Assoc. 22:209):
/// (p̂ + z²/2n ± z·√(p̂(1−p̂)/n + z²/4n²)) / (1 + z²/n).
/// None when no runs were counted.
pub fn wilson(count: u64, runs: u64) -> Option<Proportion> {
    if runs == 0 || count > runs {
        return None;
    }
    let n = runs as f64;
    let p = count as f64 / n;
    let z2 = Z_95 * Z_95;
    let centre = p + z2 / (2.0 * n);
    let half = Z_95 * (p * (1.0 - p) / n + z2 / (4.0 * n * n)).sqrt();
    let scale = 1.0 + z2 / n;
    Some(Proportion {
        count,
        runs,
        probability: p,
        ci: [
            ((centre - half) / scale).max(0.0),
            ((centre + half) / scale).min(1.0),
        ],
    })
}

/// The q-quantile (0 ≤ q ≤ 1) of sorted values by linear interpolation
/// between order statistics: h = (n − 1)q, x₍⌊h⌋₎ + (h − ⌊h⌋)(x₍⌊h⌋+1₎ −
/// x₍⌊h⌋₎) (definition 7 of Hyndman & Fan 1996, Amer. Statist. 50:361; the
/// default of numpy and R). None for no values.
pub fn quantile_sorted(sorted: &[f64], q: f64) -> Option<f64> {
    let n = sorted.len();
    if n == 0 || !(0.0..=1.0).contains(&q) {
        return None;
    }
    let h = (n - 1) as f64 * q;
    let lo = h.floor() as usize;
    let below = sorted[lo.min(n - 1)];
    let above = sorted[(lo + 1).min(n - 1)];
    Some(below + (h - lo as f64) * (above - below))
}

/// Quantiles at each of `levels` of `values` (sorted in place).
pub fn quantiles(values: &mut [f64], levels: &[f64]) -> Option<Vec<f64>> {
    values.sort_unstable_by(f64::total_cmp);
    levels.iter().map(|&q| quantile_sorted(values, q)).collect()
}
