//! Learning-curve families and their fitting: weighted nonlinear least squares over (training
//! size, measured value) points, family choice by forecasting held-back anchors, and refits on
//! resampled repeats for bands. A leaf: knows nothing of data, models or files.

pub use crate::report::{Family, FitStatus};

use argmin::core::{CostFunction, Executor, State};
use argmin::solver::brent::BrentOpt;

/// Every family, in the order they are reported.
pub const FAMILIES: [Family; 4] = [
    Family::PowerLaw,
    Family::Exponential,
    Family::Logarithmic,
    Family::Flat,
];

impl Family {
    /// The family's formula in n.
    pub fn formula(self) -> &'static str {
        match self {
            Family::PowerLaw => "a - b*n^(-c)",
            Family::Exponential => "a - b*exp(-c*n)",
            Family::Logarithmic => "a + b*ln(n)",
            Family::Flat => "a",
        }
    }

    /// Number of parameters.
    pub fn parameters(self) -> usize {
        match self {
            Family::PowerLaw | Family::Exponential => 3,
            Family::Logarithmic => 2,
            Family::Flat => 1,
        }
    }

    /// Bounds of c, in units of the scaled size x = n / n_ref.
    fn rate_bounds(self) -> (f64, f64) {
        match self {
            Family::PowerLaw => (0.005, 5.0),
            Family::Exponential => (0.05, 500.0),
            Family::Logarithmic | Family::Flat => (1.0, 1.0),
        }
    }

    /// The basis φ(x) of the linear part: y = a + β·φ(x).
    fn basis(self, x: f64, c: f64) -> f64 {
        match self {
            Family::PowerLaw => x.powf(-c),
            Family::Exponential => (-c * x).exp(),
            Family::Logarithmic => x.ln(),
            Family::Flat => 0.0,
        }
    }
}

/// A fitted curve.
#[derive(Debug, Clone, PartialEq)]
pub struct Fit {
    /// The family fitted.
    pub family: Family,
    /// How the fit ended.
    pub status: FitStatus,
    /// a, β (= −b for the power law and the exponential, b for the logarithmic) and c, on the scaled size x = n / n_ref.
    level: f64,
    slope: f64,
    rate: f64,
    n_ref: f64,
    /// Weighted residual sum of squares Σ w (y − ŷ)².
    pub rss: f64,
}

impl Fit {
    /// The curve's value at training size `n`.
    pub fn predict(&self, n: f64) -> f64 {
        self.level + self.slope * self.family.basis(n / self.n_ref, self.rate)
    }

    /// The level the curve tends to as n grows, where it has one.
    pub fn asymptote(&self) -> Option<f64> {
        match self.family {
            Family::PowerLaw | Family::Exponential | Family::Flat => Some(self.level),
            Family::Logarithmic => (self.slope == 0.0).then_some(self.level),
        }
    }

    /// The level, where the curve gets there in practice: it closes at least 90% of its
    /// remaining gap to the asymptote by 100× the size `n`. A power law with a tiny exponent has
    /// an asymptote no amount of data reaches; reporting it as "the level" would mislead.
    pub fn level_reached_from(&self, n: f64) -> Option<f64> {
        let level = self.asymptote()?;
        let gap_now = (level - self.predict(n)).abs();
        let gap_far = (level - self.predict(100.0 * n)).abs();
        (gap_now < 1e-9 || gap_far <= 0.1 * gap_now).then_some(level)
    }

    /// Parameters a, b, c of the family's formula in n itself (unscaled); absent ones are 0.
    pub fn parameters(&self) -> [f64; 3] {
        match self.family {
            Family::PowerLaw => [
                self.level,
                -self.slope * self.n_ref.powf(self.rate),
                self.rate,
            ],
            Family::Exponential => [self.level, -self.slope, self.rate / self.n_ref],
            Family::Logarithmic => [self.level - self.slope * self.n_ref.ln(), self.slope, 0.0],
            Family::Flat => [self.level, 0.0, 0.0],
        }
    }
}

/// Weighted least squares of y on [1, φ] for a fixed rate: (a, β, rss).
fn linear_part(family: Family, rate: f64, points: &[(f64, f64, f64)]) -> (f64, f64, f64) {
    let (mut sw, mut sp, mut sy, mut spp, mut spy) = (0.0, 0.0, 0.0, 0.0, 0.0);
    for &(x, y, w) in points {
        let p = family.basis(x, rate);
        sw += w;
        sp += w * p;
        sy += w * y;
        spp += w * p * p;
        spy += w * p * y;
    }
    let det = sw * spp - sp * sp;
    let (level, slope) = if family == Family::Flat || det <= 1e-12 * (sw * spp).abs().max(1e-300) {
        (sy / sw, 0.0)
    } else {
        let slope = (sw * spy - sp * sy) / det;
        ((sy - slope * sp) / sw, slope)
    };
    let rss = points
        .iter()
        .map(|&(x, y, w)| w * (y - level - slope * family.basis(x, rate)).powi(2))
        .sum();
    (level, slope, rss)
}

/// The residual sum of squares as a function of ln c, with a and β solved exactly for each c
/// (variable projection): the cost argmin's Brent search minimises.
struct Profile<'a> {
    family: Family,
    points: &'a [(f64, f64, f64)],
}

impl CostFunction for Profile<'_> {
    type Param = f64;
    type Output = f64;

    fn cost(&self, log_rate: &f64) -> Result<f64, argmin::core::Error> {
        let rss = linear_part(self.family, log_rate.exp(), self.points).2;
        Ok(if rss.is_finite() { rss } else { f64::MAX })
    }
}

/// Points of the log-rate grid searched before Brent's method refines the best one.
const GRID: usize = 60;

/// Fits `family` to values at training sizes, minimising Σ wᵢ (yᵢ − f(nᵢ))².
pub fn fit(family: Family, sizes: &[f64], values: &[f64], weights: &[f64]) -> Fit {
    let n_ref = sizes.iter().copied().fold(f64::MIN, f64::max);
    let failed = Fit {
        family,
        status: FitStatus::Failed,
        level: f64::NAN,
        slope: 0.0,
        rate: 0.0,
        n_ref: n_ref.max(1.0),
        rss: f64::INFINITY,
    };
    let usable = sizes.len() == values.len()
        && sizes.len() == weights.len()
        && sizes.len() >= family.parameters()
        && n_ref > 0.0
        && values
            .iter()
            .chain(sizes)
            .chain(weights)
            .all(|v| v.is_finite());
    if !usable {
        return failed;
    }
    let points: Vec<(f64, f64, f64)> = sizes
        .iter()
        .zip(values)
        .zip(weights)
        .map(|((&n, &y), &w)| (n / n_ref, y, w))
        .collect();
    let (rate, status) = match family {
        Family::Logarithmic | Family::Flat => (1.0, FitStatus::Converged),
        Family::PowerLaw | Family::Exponential => {
            let (low, high) = family.rate_bounds();
            let (low, high) = (low.ln(), high.ln());
            let step = (high - low) / (GRID - 1) as f64;
            let profile = Profile {
                family,
                points: &points,
            };
            let costs: Vec<f64> = (0..GRID)
                .map(|k| profile.cost(&(low + step * k as f64)).unwrap_or(f64::MAX))
                .collect();
            let best = (0..GRID)
                .min_by(|&a, &b| costs[a].total_cmp(&costs[b]))
                .unwrap_or(0);
            let left = low + step * best.saturating_sub(1) as f64;
            let right = low + step * (best + 1).min(GRID - 1) as f64;
            let refined = Executor::new(
                profile,
                BrentOpt::new(left, right).set_tolerance(1e-10, 1e-12),
            )
            .configure(|state| state.max_iters(200))
            .run()
            .ok()
            .and_then(|result| result.state().get_best_param().copied());
            let log_rate = match refined {
                Some(t)
                    if t.is_finite() && linear_part(family, t.exp(), &points).2 <= costs[best] =>
                {
                    t
                }
                _ => low + step * best as f64,
            };
            let at_edge = best == 0 || best == GRID - 1;
            (
                log_rate.exp(),
                if at_edge {
                    FitStatus::AtBound
                } else {
                    FitStatus::Converged
                },
            )
        }
    };
    let (level, slope, rss) = linear_part(family, rate, &points);
    if !(level.is_finite() && slope.is_finite() && rss.is_finite()) {
        return failed;
    }
    Fit {
        family,
        status,
        level,
        slope,
        rate,
        n_ref,
        rss,
    }
}

/// Weights of anchors at these sizes: proportional to the size (larger sizes weigh more; their
/// measurements vary less), scaled so the largest weighs 1.
pub fn size_weights(sizes: &[f64]) -> Vec<f64> {
    let top = sizes.iter().copied().fold(f64::MIN, f64::max);
    sizes.iter().map(|&n| n / top).collect()
}

/// How each family forecast the held-back anchors, and the one chosen.
#[derive(Debug, Clone, PartialEq)]
pub struct Choice {
    /// Per family: the fit on all anchors and the weighted RMS error of the fit on the smaller
    /// anchors at the `hold_back` largest ones (`None` when that fit failed).
    pub candidates: Vec<(Fit, Option<f64>)>,
    /// Index into `candidates` of the family with the smallest forecast error.
    pub chosen: usize,
}

impl Choice {
    /// The chosen fit (on all anchors).
    pub fn fit(&self) -> &Fit {
        &self.candidates[self.chosen].0
    }
}

/// Fits every family, scores each by forecasting the `hold_back` largest anchors from the
/// others, and chooses the best forecaster. Anchors must be sorted by size. `None` with fewer
/// than `hold_back + 2` anchors.
pub fn choose(sizes: &[f64], values: &[f64], hold_back: usize) -> Option<Choice> {
    choose_with_noise(sizes, values, hold_back, 0.0)
}

/// [`choose`], with the one-standard-error rule: the family with the fewest parameters whose
/// forecast error is within `noise` (the standard error of the held-back anchors' means) of the
/// best one's is chosen, so that noise alone does not buy a curve a trend it has not shown.
pub fn choose_with_noise(
    sizes: &[f64],
    values: &[f64],
    hold_back: usize,
    noise: f64,
) -> Option<Choice> {
    if sizes.len() < hold_back + 2 {
        return None;
    }
    let weights = size_weights(sizes);
    let split = sizes.len() - hold_back;
    let candidates: Vec<(Fit, Option<f64>)> = FAMILIES
        .iter()
        .map(|&family| {
            let early = fit(
                family,
                &sizes[..split],
                &values[..split],
                &size_weights(&sizes[..split]),
            );
            let error = (early.status != FitStatus::Failed).then(|| {
                let (mut sum, mut total) = (0.0, 0.0);
                for i in split..sizes.len() {
                    sum += weights[i] * (values[i] - early.predict(sizes[i])).powi(2);
                    total += weights[i];
                }
                (sum / total).sqrt()
            });
            (
                fit(family, sizes, values, &weights),
                error.filter(|e| e.is_finite()),
            )
        })
        .collect();
    let usable: Vec<usize> = (0..candidates.len())
        .filter(|&i| candidates[i].0.status != FitStatus::Failed && candidates[i].1.is_some())
        .collect();
    let error = |i: usize| candidates[i].1.unwrap_or(f64::INFINITY);
    let best = usable
        .iter()
        .copied()
        .min_by(|&a, &b| error(a).total_cmp(&error(b)))?;
    let limit = error(best) + noise.max(0.0);
    let chosen = usable
        .iter()
        .copied()
        .filter(|&i| error(i) <= limit)
        .min_by(|&a, &b| {
            let (fa, fb) = (candidates[a].0.family, candidates[b].0.family);
            fa.parameters()
                .cmp(&fb.parameters())
                .then(error(a).total_cmp(&error(b)))
        })
        .unwrap_or(best);
    Some(Choice { candidates, chosen })
}

/// Means over the repeats listed in `draw` (repeat indices, with repetition for a bootstrap) of
/// per-repeat values (`per_repeat[r][i]` at size i; `None` where undefined). Sizes where no drawn
/// repeat has a value are left out. Returns the kept sizes' indices and means.
pub fn means_over(
    per_repeat: &[Vec<Option<f64>>],
    draw: &[usize],
    sizes: usize,
) -> (Vec<usize>, Vec<f64>) {
    let mut kept = Vec::with_capacity(sizes);
    let mut means = Vec::with_capacity(sizes);
    for i in 0..sizes {
        let (sum, count) = draw
            .iter()
            .filter_map(|&r| per_repeat[r].get(i).copied().flatten())
            .fold((0.0, 0usize), |(s, c), v| (s + v, c + 1));
        if count > 0 {
            kept.push(i);
            means.push(sum / count as f64);
        }
    }
    (kept, means)
}

/// The `q` quantile (0..1) of `values` by linear interpolation; `None` when empty.
pub fn quantile(values: &mut [f64], q: f64) -> Option<f64> {
    if values.is_empty() {
        return None;
    }
    values.sort_by(f64::total_cmp);
    Some(quantile_sorted(values, q))
}

/// The `q` quantile of values already sorted and not empty, as [`quantile`].
pub fn quantile_sorted(sorted: &[f64], q: f64) -> f64 {
    let position = q.clamp(0.0, 1.0) * (sorted.len() - 1) as f64;
    let low = position.floor() as usize;
    let high = position.ceil() as usize;
    let t = position - low as f64;
    sorted[low] * (1.0 - t) + sorted[high] * t
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::Rng;

    fn sizes() -> Vec<f64> {
        (0..10).map(|k| 250.0 * 2f64.sqrt().powi(k)).collect()
    }

    #[test]
    fn family_names_are_their_json_names() {
        // Constructed, no source needed: the reports' text and JSON name a family alike.
        for f in FAMILIES {
            assert_eq!(
                serde_json::to_string(&f).unwrap(),
                format!("\"{}\"", f.name())
            );
        }
    }

    #[test]
    fn exact_curves_give_back_their_parameters() {
        // Constructed curves, no source needed: each family must recover what made the points.
        let n = sizes();
        let w = size_weights(&n);
        let cases = [
            (Family::PowerLaw, [0.86, 3.0, 0.5]),
            (Family::Exponential, [0.80, 0.2, 1.0 / 3000.0]),
            (Family::Logarithmic, [0.40, 0.03, 0.0]),
            (Family::Flat, [0.25, 0.0, 0.0]),
        ];
        for (family, [a, b, c]) in cases {
            let y: Vec<f64> = n
                .iter()
                .map(|&n| match family {
                    Family::PowerLaw => a - b * n.powf(-c),
                    Family::Exponential => a - b * (-c * n).exp(),
                    Family::Logarithmic => a + b * n.ln(),
                    Family::Flat => a,
                })
                .collect();
            let f = fit(family, &n, &y, &w);
            let p = f.parameters();
            for (got, want) in p.iter().zip([a, b, c]) {
                assert!(
                    (got - want).abs() <= 1e-6 * want.abs().max(1e-3),
                    "{family:?}: {p:?}"
                );
            }
            assert!(f.rss < 1e-20, "{family:?} rss {}", f.rss);
        }
    }

    #[test]
    fn fits_match_scipy_curve_fit() {
        // scipy 1.17.1, scipy.optimize.curve_fit with sigma = 1/sqrt(w), absolute_sigma, on the
        // points below (tests/reference/reference.py prints these values):
        let n = [500.0, 707.0, 1000.0, 1414.0, 2000.0, 2828.0, 4000.0, 5657.0];
        let y = [
            0.7912, 0.8031, 0.8155, 0.8204, 0.8297, 0.8321, 0.8388, 0.8402,
        ];
        let w: Vec<f64> = size_weights(&n);
        let expected = [
            (
                Family::PowerLaw,
                [0.8524756685597008, 4.18976146596958, 0.6791516749860809],
                4.097770397490212e-06,
            ),
            (
                Family::Exponential,
                [
                    0.8401521467394063,
                    0.0712132525318068,
                    0.0009174823814675426,
                ],
                8.331192322499254e-06,
            ),
            (
                Family::Logarithmic,
                [0.6968685096290081, 0.016884358192376964, 0.0],
                3.026975315222485e-05,
            ),
        ];
        for (family, params, rss) in expected {
            let f = fit(family, &n, &y, &w);
            let p = f.parameters();
            for (got, want) in p.iter().zip(params) {
                assert!(
                    (got - want).abs() <= 1e-4 * want.abs().max(1e-6),
                    "{family:?}: {p:?}"
                );
            }
            assert!(
                (f.rss - rss).abs() <= 1e-6 * rss.max(1e-12),
                "{family:?}: rss {}",
                f.rss
            );
        }
    }

    #[test]
    fn a_level_is_only_reported_where_the_curve_gets_there() {
        let n = sizes();
        let w = size_weights(&n);
        let quick: Vec<f64> = n.iter().map(|&n| 0.9 - 2.0 * n.powf(-0.8)).collect();
        let slow: Vec<f64> = n.iter().map(|&n| 0.9 - 0.5 * n.powf(-0.05)).collect();
        let top = *n.last().unwrap();
        assert!(fit(Family::PowerLaw, &n, &quick, &w)
            .level_reached_from(top)
            .is_some());
        assert!(fit(Family::PowerLaw, &n, &slow, &w)
            .level_reached_from(top)
            .is_none());
    }

    #[test]
    fn the_best_forecaster_is_chosen() {
        let n = sizes();
        let y: Vec<f64> = n.iter().map(|&n| 0.9 - 2.0 * n.powf(-0.45)).collect();
        let choice = choose(&n, &y, 2).unwrap();
        assert_eq!(choice.fit().family, Family::PowerLaw);
        let flat: Vec<f64> = vec![0.3; n.len()];
        let choice = choose(&n, &flat, 2).unwrap();
        assert!(choice.fit().predict(1e6).abs() - 0.3 < 1e-9);
        assert!(choose(&n[..3], &y[..3], 2).is_none());
    }

    #[test]
    fn bootstrap_bands_cover_the_truth_near_their_nominal_rate() {
        // Synthetic truth with noise shrinking like 1/sqrt(n); 10 repeats, 200 bootstrap draws,
        // 80% bands at the largest anchor, over 200 fixed seeds. The share of bands holding the
        // true value should sit near 0.8 (a percentile bootstrap over 10 repeats runs a little
        // narrow, so the accepted range is 0.65..0.92: common practice, no source).
        let n = sizes();
        let truth = |n: f64| 0.85 - 1.5 * n.powf(-0.5);
        let at = *n.last().unwrap();
        let mut covered = 0;
        let seeds = 200;
        for seed in 0..seeds {
            let mut rng = crate::engine::streams::stream_rng(
                seed,
                crate::engine::streams::Stream::Check(900),
                0,
            );
            let repeats = 10;
            let per_repeat: Vec<Vec<Option<f64>>> = (0..repeats)
                .map(|_| {
                    n.iter()
                        .map(|&n| {
                            let noise: f64 = (0..12).map(|_| rng.gen::<f64>()).sum::<f64>() - 6.0;
                            Some(truth(n) + noise * 0.6 / n.sqrt())
                        })
                        .collect()
                })
                .collect();
            let all: Vec<usize> = (0..repeats).collect();
            let (_, means) = means_over(&per_repeat, &all, n.len());
            let family = choose(&n, &means, 2).unwrap().fit().family;
            let mut at_top = Vec::new();
            for _ in 0..200 {
                let draw: Vec<usize> = (0..repeats).map(|_| rng.gen_range(0..repeats)).collect();
                let (kept, m) = means_over(&per_repeat, &draw, n.len());
                let sizes: Vec<f64> = kept.iter().map(|&i| n[i]).collect();
                at_top.push(fit(family, &sizes, &m, &size_weights(&sizes)).predict(at));
            }
            let low = quantile(&mut at_top, 0.1).unwrap();
            let high = quantile(&mut at_top, 0.9).unwrap();
            covered += usize::from(low <= truth(at) && truth(at) <= high);
        }
        let share = covered as f64 / seeds as f64;
        assert!((0.65..=0.92).contains(&share), "coverage {share}");
    }

    #[test]
    fn within_noise_the_simplest_family_wins() {
        let n = sizes();
        // A faint trend buried in noise of 0.01: with that noise declared, flat is chosen.
        let y: Vec<f64> = n
            .iter()
            .enumerate()
            .map(|(i, &n)| 0.5 + 0.002 * n.ln() + if i % 2 == 0 { 0.004 } else { -0.004 })
            .collect();
        let noisy = choose_with_noise(&n, &y, 2, 0.01).unwrap();
        assert_eq!(noisy.fit().family, Family::Flat);
        let exact: Vec<f64> = n.iter().map(|&n| 0.9 - 2.0 * n.powf(-0.45)).collect();
        assert_eq!(
            choose_with_noise(&exact, &exact, 2, 1e-9).map(|c| c.fit().family),
            choose(&exact, &exact, 2).map(|c| c.fit().family)
        );
    }

    #[test]
    fn quantiles_interpolate() {
        // numpy.quantile([1, 2, 3, 4], 0.25) = 1.75 (linear method; from memory).
        assert_eq!(quantile(&mut [4.0, 1.0, 3.0, 2.0], 0.25), Some(1.75));
    }
}
