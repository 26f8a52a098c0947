//! Summaries of Monte Carlo draws.

use serde::Serialize;

/// Summary of the draws of one quantity.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Summary {
    /// Number of draws summarised.
    pub n: usize,
    /// Mean.
    pub mean: f64,
    /// Standard deviation.
    pub sd: f64,
    /// Median.
    pub median: f64,
    /// 2.5th percentile.
    pub p2_5: f64,
    /// 97.5th percentile.
    pub p97_5: f64,
    /// Monte Carlo standard error of the median, from the medians of 20 consecutive batches
    /// (batch means, e.g. Flegal & Jones 2010, Ann. Stat. 38:1034): if it is small beside the
    /// interval, the number of draws was enough.
    pub mcse_median: f64,
}

/// Number of batches for the Monte Carlo standard error.
const BATCHES: usize = 20;

/// Percentile of sorted values by linear interpolation between closest ranks (the default of
/// NumPy's `percentile`, method "linear").
pub fn percentile_sorted(sorted: &[f64], p: f64) -> f64 {
    match sorted.len() {
        0 => f64::NAN,
        1 => sorted[0],
        n => {
            let rank = p / 100.0 * (n - 1) as f64;
            let lo = rank.floor() as usize;
            let hi = (lo + 1).min(n - 1);
            sorted[lo] + (rank - lo as f64) * (sorted[hi] - sorted[lo])
        }
    }
}

/// Summarise draws given in draw order (the order matters only for the batch standard error).
/// `None` for an empty set.
pub fn summarise(values: &[f64]) -> Option<Summary> {
    let n = values.len();
    if n == 0 {
        return None;
    }
    let mean = values.iter().sum::<f64>() / n as f64;
    let sd = if n > 1 {
        (values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1) as f64).sqrt()
    } else {
        0.0
    };
    let mut sorted = values.to_vec();
    sorted.sort_by(f64::total_cmp);
    let mcse_median = if n >= 2 * BATCHES {
        let size = n / BATCHES;
        let medians: Vec<f64> = values
            .chunks_exact(size)
            .take(BATCHES)
            .map(|chunk| {
                let mut c = chunk.to_vec();
                c.sort_by(f64::total_cmp);
                percentile_sorted(&c, 50.0)
            })
            .collect();
        let m = medians.iter().sum::<f64>() / BATCHES as f64;
        let var = medians.iter().map(|v| (v - m).powi(2)).sum::<f64>() / (BATCHES - 1) as f64;
        // The median of all n draws has about 1/BATCHES of a batch median's variance.
        (var / BATCHES as f64).sqrt()
    } else {
        f64::INFINITY
    };
    Some(Summary {
        n,
        mean,
        sd,
        median: percentile_sorted(&sorted, 50.0),
        p2_5: percentile_sorted(&sorted, 2.5),
        p97_5: percentile_sorted(&sorted, 97.5),
        mcse_median,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn percentiles_match_numpy_linear() {
        // Source: numpy.percentile([1, 2, 3, 4, 10], [2.5, 50, 97.5]) = [1.1, 3.0, 9.4]
        // (method "linear", worked by hand: rank = p/100 x 4). Tolerance 1e-12.
        let v = [1.0, 2.0, 3.0, 4.0, 10.0];
        assert!((percentile_sorted(&v, 2.5) - 1.1).abs() < 1e-12);
        assert!((percentile_sorted(&v, 50.0) - 3.0).abs() < 1e-12);
        assert!((percentile_sorted(&v, 97.5) - 9.4).abs() < 1e-12);
    }

    #[test]
    fn mcse_of_the_median_matches_theory_for_normal_draws() {
        // Source: the asymptotic standard error of a sample median of N(0,1) draws is
        // sqrt(pi/2)/sqrt(n) (textbook, e.g. Kendall & Stuart; from memory). For n = 20 000 that
        // is 0.00886; the batch estimate from 20 batches has ~16 % relative error, so accept
        // 0.5x-1.6x.
        let mut rng = crate::rng::DrawRng::for_draw(3, 0);
        let draws: Vec<f64> = (0..20_000).map(|_| rng.normal()).collect();
        let s = summarise(&draws).expect("non-empty");
        let theory = (std::f64::consts::PI / 2.0).sqrt() / (20_000f64).sqrt();
        assert!(
            s.mcse_median > 0.5 * theory && s.mcse_median < 1.6 * theory,
            "{}",
            s.mcse_median
        );
        // N(0,1) percentiles: ±1.95996 (standard normal table); sampling error ~0.02 at n = 20 000.
        assert!((s.p97_5 - 1.95996).abs() < 0.06, "{}", s.p97_5);
        assert!((s.p2_5 + 1.95996).abs() < 0.06, "{}", s.p2_5);
    }
}
