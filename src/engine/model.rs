//! The model families behind one small trait over linfa: L2-regularised logistic regression and a
//! decision tree whose leaves give scores.

use linfa::prelude::*;
use linfa::DatasetBase;
use linfa_logistic::LogisticRegression;
use linfa_trees::{DecisionTree, TreeNode};
use ndarray::{Array1, ArrayView2};

use crate::error::{Error, Result};
use crate::settings::ModelKind;

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

/// Logistic regression with an L2 penalty `alpha/2 · |w|²` on the weights (not the intercept),
/// the objective scikit-learn minimises with C = 1/alpha.
#[derive(Debug, Clone)]
pub struct Logistic {
    pub alpha: f64,
    pub max_iterations: u64,
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

/// A decision tree with Gini splits.
///
/// linfa-trees keeps class counts in a hash map whose iteration order changes from run to run;
/// with two classes this only matters where a node holds equal weights of both, where the
/// majority class is then picked at random. Favourable rows are therefore given the weight
/// `1 + 2⁻¹⁰`, so that equal weights cannot occur in nodes of fewer than 1,024 favourable rows,
/// and the scores come from acquest's own walk of the fitted tree: the favourable share of the
/// training rows in each leaf.
#[derive(Debug, Clone)]
pub struct Tree {
    pub max_depth: usize,
    pub min_leaf_rows: f32,
}

impl Default for Tree {
    fn default() -> Self {
        Tree {
            max_depth: 8,
            min_leaf_rows: 5.0,
        }
    }
}

/// A node of the flattened tree: a split on `feature` at `threshold` (rows with a value at or
/// below it go left), or a leaf with its favourable share.
#[derive(Debug, Clone)]
enum Node {
    Split {
        feature: usize,
        threshold: f64,
        left: usize,
        right: usize,
    },
    Leaf {
        share: f64,
    },
}

struct FittedTree {
    nodes: Vec<Node>,
}

impl FittedTree {
    fn leaf_of(&self, row: ndarray::ArrayView1<f64>) -> usize {
        let mut at = 0;
        loop {
            match &self.nodes[at] {
                Node::Split {
                    feature,
                    threshold,
                    left,
                    right,
                } => {
                    at = if row[*feature] <= *threshold {
                        *left
                    } else {
                        *right
                    }
                }
                Node::Leaf { .. } => return at,
            }
        }
    }
}

impl FittedModel for FittedTree {
    fn scores(&self, x: ArrayView2<f64>) -> Vec<f64> {
        x.rows()
            .into_iter()
            .map(|row| match self.nodes[self.leaf_of(row)] {
                Node::Leaf { share } => share,
                Node::Split { .. } => 0.5,
            })
            .collect()
    }
}

fn flatten(node: &TreeNode<f64, bool>, nodes: &mut Vec<Node>) -> usize {
    let at = nodes.len();
    nodes.push(Node::Leaf { share: 0.5 });
    let children = node.children();
    if let (false, Some(left), Some(right)) = (node.is_leaf(), children[0], children[1]) {
        let (feature, threshold, _) = node.split();
        let left = flatten(left, nodes);
        let right = flatten(right, nodes);
        nodes[at] = Node::Split {
            feature,
            threshold,
            left,
            right,
        };
    }
    at
}

/// Weight of a favourable row in tree fits (see [`Tree`]).
const FAVOURABLE_WEIGHT: f32 = 1.0 + 1.0 / 1024.0;

impl ModelFamily for Tree {
    fn fit_from(
        &self,
        x: ArrayView2<f64>,
        y: &[bool],
        _start: Option<&[f64]>,
    ) -> Result<Box<dyn FittedModel>> {
        count_fit();
        let targets = Array1::from(y.to_vec());
        let weights = Array1::from_iter(y.iter().map(|&l| if l { FAVOURABLE_WEIGHT } else { 1.0 }));
        let dataset = DatasetBase::new(x, targets).with_weights(weights);
        let fitted: DecisionTree<f64, bool> = DecisionTree::params()
            .max_depth(Some(self.max_depth))
            .min_weight_leaf(self.min_leaf_rows)
            .min_weight_split(2.0 * self.min_leaf_rows)
            .fit(&dataset)
            .map_err(|e| Error::Internal(format!("decision tree failed to fit: {e}")))?;
        let mut nodes = Vec::new();
        flatten(fitted.root_node(), &mut nodes);
        let mut tree = FittedTree { nodes };
        let mut tallies = vec![(0usize, 0usize); tree.nodes.len()];
        for (row, &label) in x.rows().into_iter().zip(y) {
            let leaf = tree.leaf_of(row);
            tallies[leaf].0 += usize::from(label);
            tallies[leaf].1 += 1;
        }
        for (node, (favourable, total)) in tree.nodes.iter_mut().zip(tallies) {
            if let Node::Leaf { share } = node {
                *share = if total > 0 {
                    favourable as f64 / total as f64
                } else {
                    0.5
                };
            }
        }
        Ok(Box::new(tree))
    }

    fn gives_scores(&self) -> bool {
        true
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
