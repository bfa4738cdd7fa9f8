//! L2-regularised logistic regression (linfa-logistic), with warm starts across nested sizes.

use linfa::prelude::*;
use linfa::DatasetBase;
use linfa_logistic::LogisticRegression;
use ndarray::{Array1, ArrayView2};

use super::{count_fit, FittedModel, ModelFamily};
use crate::error::{Error, Result};

/// Logistic regression with an L2 penalty `alpha/2 · |w|²` on the weights (not the intercept),
/// the objective scikit-learn minimises with C = 1/alpha.
#[derive(Debug, Clone)]
pub struct Logistic {
    /// L2 penalty on the weights (scikit-learn's 1/C).
    pub alpha: f64,
    /// Most L-BFGS iterations.
    pub max_iterations: u64,
    /// Stop when the gradient norm per training row falls below this.
    pub gradient_tolerance: f64,
}

impl Default for Logistic {
    fn default() -> Self {
        Logistic {
            alpha: 1.0,
            max_iterations: 100,
            gradient_tolerance: 1e-4,
        }
    }
}

struct FittedLogistic {
    weights: Array1<f64>,
    intercept: f64,
}

impl FittedModel for FittedLogistic {
    fn scores(&self, x: ArrayView2<f64>) -> Vec<f64> {
        x.dot(&self.weights)
            .iter()
            .map(|z| 1.0 / (1.0 + (-(z + self.intercept)).exp()))
            .collect()
    }

    fn warm_start(&self) -> Option<Vec<f64>> {
        let mut start = self.weights.to_vec();
        start.push(self.intercept);
        Some(start)
    }
}

/// Whether linfa-logistic will model the favourable label as its "positive" class: it takes the
/// first label it meets, unless that label is the rarer one.
fn favourable_is_positive(y: &[bool]) -> bool {
    let favourable = y.iter().filter(|&&l| l).count();
    let unfavourable = y.len() - favourable;
    match y.first() {
        Some(true) => favourable >= unfavourable,
        _ => favourable > unfavourable,
    }
}

impl ModelFamily for Logistic {
    fn fit_from(
        &self,
        x: ArrayView2<f64>,
        y: &[bool],
        start: Option<&[f64]>,
    ) -> Result<Box<dyn FittedModel>> {
        count_fit();
        let targets = Array1::from(y.to_vec());
        let dataset = DatasetBase::new(x, targets.view());
        let mut params = LogisticRegression::default()
            .alpha(self.alpha)
            .max_iterations(self.max_iterations)
            .gradient_tolerance(self.gradient_tolerance * y.len().max(1) as f64);
        if let Some(start) = start.filter(|s| s.len() == x.ncols() + 1) {
            let sign = if favourable_is_positive(y) { 1.0 } else { -1.0 };
            params = params.initial_params(Array1::from_iter(start.iter().map(|v| sign * v)));
        }
        let fitted = params
            .fit(&dataset)
            .map_err(|e| Error::Internal(format!("logistic regression failed to fit: {e}")))?;
        // linfa models the probability of its "positive" class; turn it into the favourable one.
        let sign = if fitted.labels().pos.class { 1.0 } else { -1.0 };
        Ok(Box::new(FittedLogistic {
            weights: fitted.params().mapv(|w| sign * w),
            intercept: sign * fitted.intercept(),
        }))
    }

    fn gives_scores(&self) -> bool {
        true
    }
}
