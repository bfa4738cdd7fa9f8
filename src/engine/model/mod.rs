//! The model families behind one small trait over linfa: L2-regularised logistic regression and a
//! decision tree whose leaves give scores.

use ndarray::ArrayView2;

use crate::error::Result;
use crate::settings::ModelKind;

mod logistic;
mod tree;

pub use logistic::Logistic;
pub use tree::Tree;

/// A fitted model: a score in [0, 1] for the favourable label; favourable when score ≥ 0.5.
pub trait FittedModel: Send + Sync {
    /// Scores of the rows of `x`.
    fn scores(&self, x: ArrayView2<f64>) -> Vec<f64>;
    /// Parameters from which a fit on more rows of the same columns can start, where the family
    /// can use them.
    fn warm_start(&self) -> Option<Vec<f64>> {
        None
    }
}

/// A model family with fixed settings, fitted afresh in every trial.
pub trait ModelFamily: Send + Sync {
    /// Fits on `x` with labels `y` (true = favourable).
    fn fit(&self, x: ArrayView2<f64>, y: &[bool]) -> Result<Box<dyn FittedModel>> {
        self.fit_from(x, y, None)
    }
    /// Fits, starting from the [`FittedModel::warm_start`] of an earlier fit where given (used
    /// across nested training sizes; the optimum is the same, it is only reached sooner).
    fn fit_from(
        &self,
        x: ArrayView2<f64>,
        y: &[bool],
        start: Option<&[f64]>,
    ) -> Result<Box<dyn FittedModel>>;
    /// Whether the scores rank rows finely enough for AUC to mean something.
    fn gives_scores(&self) -> bool;
}

/// Models fitted by this process so far, counted for `--timings` and the benchmarks; nothing
/// computed depends on it.
static FITS: std::sync::atomic::AtomicU64 = std::sync::atomic::AtomicU64::new(0);

/// How many models this process has fitted.
pub fn fits_so_far() -> u64 {
    FITS.load(std::sync::atomic::Ordering::Relaxed)
}

fn count_fit() {
    FITS.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
}

/// The family for a model kind, with acquest's default settings.
pub fn family(kind: ModelKind) -> Box<dyn ModelFamily> {
    match kind {
        ModelKind::Logistic => Box::new(Logistic::default()),
        ModelKind::Tree => Box::new(Tree::default()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::array;

    /// The small table of tests/reference/reference.py.
    fn small_table() -> ndarray::Array2<f64> {
        array![
            [0.5, 1.0],
            [1.5, -0.5],
            [-1.0, 0.3],
            [2.0, 1.2],
            [-0.3, -1.1],
            [0.8, 0.4],
            [-1.7, 0.9],
            [1.1, -1.4],
            [0.0, 0.0],
            [-0.6, 1.8],
            [1.9, 0.2],
            [-1.2, -0.7]
        ]
    }

    #[test]
    fn logistic_coefficients_match_scikit_learn() {
        // scikit-learn 1.9.1, LogisticRegression(C=1.0, tol=1e-12, max_iter=10000) on this table
        // (tests/reference/reference.py): coef [1.2618853931960752, 0.5294273430803651],
        // intercept -0.391725824526378.
        let x = small_table();
        let y = [
            true, true, false, true, false, true, false, false, true, false, true, false,
        ];
        let family = Logistic {
            alpha: 1.0,
            max_iterations: 1000,
            gradient_tolerance: 1e-10,
        };
        let fitted = family.fit(x.view(), &y).unwrap();
        // Recover the linear predictor from the scores at three points.
        let probe = array![[0.0, 0.0], [1.0, 0.0], [0.0, 1.0]];
        let logit: Vec<f64> = fitted
            .scores(probe.view())
            .iter()
            .map(|p| (p / (1.0 - p)).ln())
            .collect();
        assert!((logit[0] - -0.391725824526378).abs() < 1e-5, "{logit:?}");
        assert!((logit[1] - logit[0] - 1.2618853931960752).abs() < 1e-5);
        assert!((logit[2] - logit[0] - 0.5294273430803651).abs() < 1e-5);
    }

    #[test]
    fn a_warm_start_reaches_the_same_fit() {
        // Both label orders, so that linfa's choice of its positive class is exercised.
        let x = small_table();
        for flip in [false, true] {
            let y: Vec<bool> = [
                true, true, false, true, false, true, false, false, true, false, false, false,
            ]
            .iter()
            .map(|&l| l ^ flip)
            .collect();
            let family = Logistic {
                alpha: 1.0,
                max_iterations: 1000,
                gradient_tolerance: 1e-10,
            };
            let cold = family.fit(x.view(), &y).unwrap();
            let start = cold.warm_start().unwrap();
            let warm = family.fit_from(x.view(), &y, Some(&start)).unwrap();
            for (a, b) in cold.scores(x.view()).iter().zip(warm.scores(x.view())) {
                assert!((a - b).abs() < 1e-6, "flip {flip}: {a} vs {b}");
            }
        }
    }

    #[test]
    fn tree_scores_are_leaf_shares_and_repeat_exactly() {
        // A step in x at 0.5 with noise in the labels: worked by construction, no source needed.
        let n = 400;
        let x = ndarray::Array2::from_shape_fn((n, 2), |(i, j)| {
            if j == 0 {
                (i % 100) as f64 / 100.0
            } else {
                ((i * 7) % 13) as f64
            }
        });
        let y: Vec<bool> = (0..n).map(|i| ((i % 100) >= 50) ^ (i % 10 == 0)).collect();
        let family = Tree::default();
        let first = family.fit(x.view(), &y).unwrap().scores(x.view());
        for _ in 0..5 {
            assert_eq!(first, family.fit(x.view(), &y).unwrap().scores(x.view()));
        }
        assert!(first.iter().all(|s| (0.0..=1.0).contains(s)));
        let high: f64 = first[60];
        assert!(high > 0.5);
    }
}
