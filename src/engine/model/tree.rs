//! A decision tree (linfa-trees) made deterministic, whose leaves give scores.

use linfa::prelude::*;
use linfa::DatasetBase;
use linfa_trees::{DecisionTree, TreeNode};
use ndarray::{Array1, ArrayView2};

use super::{count_fit, FittedModel, ModelFamily};
use crate::error::{Error, Result};

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
    /// Deepest a branch may grow.
    pub max_depth: usize,
    /// Fewest (weighted) rows in a leaf.
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
