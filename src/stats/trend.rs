//! A measured difference carried beyond the largest size measured: the last anchor plus the
//! trend of the upper anchors in log size, that trend shrunk towards none by how well it is
//! known.

/// The anchors whose trend is carried on: those of the upper half of the measured range in log
/// size (at least `min(3, all)`), so the trend reaches as far back as it is carried forward for
/// a pilot a few times smaller than today's data.
pub fn upper_anchors(sizes: &[f64]) -> std::ops::Range<usize> {
    let Some((&first, &last)) = sizes.first().zip(sizes.last()) else {
        return 0..0;
    };
    let middle = (first * last).sqrt() * (1.0 - 1e-9);
    let from = sizes.iter().position(|&n| n >= middle).unwrap_or(0);
    from.min(sizes.len().saturating_sub(3))..sizes.len()
}

/// Least-squares slope of `values` on the natural log of `sizes` (per unit of ln n). `None`
/// with fewer than two points or one size only.
pub fn log_slope(sizes: &[f64], values: &[f64]) -> Option<f64> {
    let n = sizes.len().min(values.len());
    if n < 2 {
        return None;
    }
    let x: Vec<f64> = sizes[..n].iter().map(|s| s.ln()).collect();
    let mx = x.iter().sum::<f64>() / n as f64;
    let my = values[..n].iter().sum::<f64>() / n as f64;
    let sxx: f64 = x.iter().map(|v| (v - mx).powi(2)).sum();
    let sxy: f64 = x
        .iter()
        .zip(&values[..n])
        .map(|(a, b)| (a - mx) * (b - my))
        .sum();
    (sxx > 0.0).then(|| sxy / sxx)
}

/// The share of an estimated `increment` to keep, given its sampling `variance`: the weight
/// δ²/(δ² + v) that minimises the mean squared error of w·b̂ when the true increment is δ and its
/// estimate b̂ has variance v, with δ² estimated without bias by b̂² − v and none kept where that
/// is not positive: the positive-part shrinkage of James and Stein (1961), w = (1 − v/b̂²)₊. 1
/// when the increment is known exactly, 0 when it is within one standard error of none.
pub fn keep_share(increment: f64, variance: f64) -> f64 {
    let b2 = increment * increment;
    if !b2.is_finite() || !variance.is_finite() {
        return 0.0;
    }
    if variance <= 0.0 {
        return 1.0;
    }
    if b2 <= variance {
        return 0.0;
    }
    1.0 - variance / b2
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_slope_in_log_size_is_the_least_squares_one() {
        // An exact line in ln n gives its slope back.
        let sizes = [100.0, 200.0, 400.0, 800.0];
        let values: Vec<f64> = sizes.iter().map(|n: &f64| 0.1 + 0.02 * n.ln()).collect();
        assert!((log_slope(&sizes, &values).unwrap() - 0.02).abs() < 1e-12);
        // Worked by hand: x = ln 1, ln e, ln e² = 0, 1, 2 and y = 1, 0, 2; mean x 1, mean y 1;
        // Sxx = 2, Sxy = (−1)(0) + 0 + (1)(1) = 1; slope 0.5.
        let e = std::f64::consts::E;
        assert!((log_slope(&[1.0, e, e * e], &[1.0, 0.0, 2.0]).unwrap() - 0.5).abs() < 1e-12);
        assert_eq!(log_slope(&[5.0], &[1.0]), None);
        assert_eq!(log_slope(&[5.0, 5.0], &[1.0, 2.0]), None);
    }

    #[test]
    fn the_upper_anchors_span_the_upper_half_in_log_size() {
        // 100 .. 1600 doubling: the middle in log size is 400.
        let sizes = [100.0, 200.0, 400.0, 800.0, 1600.0];
        assert_eq!(upper_anchors(&sizes), 2..5);
        // Never fewer than three where there are three.
        assert_eq!(upper_anchors(&[100.0, 1000.0, 10_000.0, 100_000.0]), 1..4);
        assert_eq!(upper_anchors(&[100.0, 1000.0]), 0..2);
        assert_eq!(upper_anchors(&[]), 0..0);
    }

    #[test]
    fn the_kept_share_weighs_the_increment_against_its_noise() {
        // Worked by hand: b = 0.6, v = 0.09 (sd 0.3): 1 − 0.09/0.36 = 0.75; b = 0.3 is one
        // standard error from none, b = 0.2 less: nothing kept.
        assert!((keep_share(-0.6, 0.09) - 0.75).abs() < 1e-12);
        assert_eq!(keep_share(0.3, 0.09), 0.0);
        assert_eq!(keep_share(0.2, 0.09), 0.0);
        assert_eq!(keep_share(0.2, 0.0), 1.0);
        assert_eq!(keep_share(0.0, 0.0), 1.0);
        assert_eq!(keep_share(0.0, 0.1), 0.0);
        assert_eq!(keep_share(f64::NAN, 0.1), 0.0);
    }
}
