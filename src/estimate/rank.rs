//! The ranking of options by utility per 1,000 and by its cautious lower end.

use crate::report::*;

/// Ranks by utility per 1,000 and by its cautious lower end (highest first; ties by name).
pub(super) fn rank(values: &[OptionValue]) -> Vec<Ranked> {
    let mut by_utility: Vec<usize> = (0..values.len()).collect();
    by_utility.sort_by(|&a, &b| {
        values[b]
            .estimate
            .utility_per_1000
            .total_cmp(&values[a].estimate.utility_per_1000)
            .then(values[a].name.cmp(&values[b].name))
    });
    let mut by_caution: Vec<usize> = (0..values.len()).collect();
    let cautious = |i: usize| {
        values[i]
            .estimate
            .cautious_per_1000
            .unwrap_or(f64::NEG_INFINITY)
    };
    by_caution.sort_by(|&a, &b| {
        cautious(b)
            .total_cmp(&cautious(a))
            .then(values[a].name.cmp(&values[b].name))
    });
    by_utility
        .iter()
        .enumerate()
        .map(|(rank, &i)| Ranked {
            name: values[i].name.clone(),
            utility_per_1000: values[i].estimate.utility_per_1000,
            rank: rank + 1,
            cautious_per_1000: values[i].estimate.cautious_per_1000,
            cautious_rank: by_caution.iter().position(|&x| x == i).unwrap_or(0) + 1,
        })
        .collect()
}
