//! The best subset of feature options for one choice of rows: within the money left, maximising
//! the summed score, under the floors when they are set. Exact: a Pareto search over (cost,
//! score) without floors, branch and bound with the floors; and the enumeration of every subset
//! that both are checked against.

use crate::stats::metrics::FOUR_FIFTHS;

/// The values the solver works with for one choice of one option.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Value {
    /// Accuracy gain.
    pub accuracy: f64,
    /// Unfairness reduction.
    pub fairness: f64,
    /// What the plan maximises: the utility, or its lower end when cautious.
    pub score: f64,
}

/// Whether every group's selection rate is at least four-fifths of the highest (29 CFR
/// 1607.4(D): adverse impact only when strictly below).
pub(crate) fn four_fifths_hold(rates: &[f64]) -> bool {
    let top = rates.iter().copied().fold(0.0, f64::max);
    top <= 0.0
        || rates
            .iter()
            .all(|&r| r / top >= crate::stats::metrics::FOUR_FIFTHS)
}

/// A subset found: (cost, score, the items chosen in index order).
pub type Subset = (f64, f64, Vec<usize>);

/// Nodes one branch-and-bound search may visit before it stops with the best subset found so
/// far (which is then not proven best).
pub const NODE_LIMIT: usize = 2_000_000;

/// What the floors need: the plan's accuracy gain and selection rates before the features, and
/// each feature's change in every group's selection rate.
pub struct Floors<'a> {
    /// The plan's accuracy gain may not be negative.
    pub keep_accuracy: bool,
    /// Every group's selection rate stays at four-fifths of the highest.
    pub no_adverse_impact: bool,
    /// Accuracy gain of the rows chosen.
    pub accuracy: f64,
    /// Each group's selection rate after the rows chosen.
    pub rates: &'a [f64],
    /// Each feature's change in every group's selection rate.
    pub selection: &'a [Vec<f64>],
}

impl Floors<'_> {
    /// Whether the features `subset` (in index order) keep both floors: the rule as the plan
    /// states it, evaluated exactly.
    pub fn hold(&self, items: &[(f64, Value)], subset: &[usize]) -> bool {
        let accuracy = self.accuracy + subset.iter().map(|&i| items[i].1.accuracy).sum::<f64>();
        if self.keep_accuracy && accuracy < -1e-12 {
            return false;
        }
        if self.no_adverse_impact {
            let mut rates = self.rates.to_vec();
            for &i in subset {
                for (rate, change) in rates.iter_mut().zip(&self.selection[i]) {
                    *rate += change;
                }
            }
            return four_fifths_hold(&rates);
        }
        true
    }
}

/// Whether `candidate` beats `best`: a higher score, or the same score (within 1e-12) for less
/// money.
fn better(candidate: (f64, f64), best: Option<&Subset>) -> bool {
    match best {
        None => true,
        Some((c, s, _)) => {
            let (cost, score) = candidate;
            score > s + 1e-12 || ((score - s).abs() <= 1e-12 && cost < c - 1e-9)
        }
    }
}

/// Best subset within `capacity` without floors. Exact: keeps every (cost, score) state not
/// dominated by a cheaper one with at least its score.
pub fn best_subset_pareto(items: &[(f64, Value)], capacity: f64) -> Option<Subset> {
    let mut states: Vec<Subset> = vec![(0.0, 0.0, Vec::new())];
    for (i, (cost, value)) in items.iter().enumerate() {
        let mut next = states.clone();
        for (c, s, chosen) in &states {
            if c + cost <= capacity + 1e-9 {
                let mut with = chosen.clone();
                with.push(i);
                next.push((c + cost, s + value.score, with));
            }
        }
        next.sort_by(|a, b| a.0.total_cmp(&b.0).then(b.1.total_cmp(&a.1)));
        let mut kept: Vec<Subset> = Vec::with_capacity(next.len());
        for state in next {
            if kept.last().is_none_or(|k| state.1 > k.1 + 1e-12) {
                kept.push(state);
            }
        }
        states = kept;
    }
    states
        .into_iter()
        .max_by(|a, b| a.1.total_cmp(&b.1).then(b.0.total_cmp(&a.0)))
}

/// Best subset by trying them all, keeping only those the floors allow: the reference the other
/// two are checked against. Refuses more than 20 items.
pub fn best_subset_by_enumeration(
    items: &[(f64, Value)],
    capacity: f64,
    floors: &Floors,
) -> Option<Subset> {
    assert!(items.len() <= 20, "enumeration is for small checks only");
    let mut best: Option<Subset> = None;
    for mask in 0u32..(1u32 << items.len()) {
        let chosen: Vec<usize> = (0..items.len()).filter(|&i| mask >> i & 1 == 1).collect();
        let cost: f64 = chosen.iter().map(|&i| items[i].0).sum();
        if cost > capacity + 1e-9 || !floors.hold(items, &chosen) {
            continue;
        }
        let score: f64 = chosen.iter().map(|&i| items[i].1.score).sum();
        if better((cost, score), best.as_ref()) {
            best = Some((cost, score, chosen));
        }
    }
    best
}

/// The fractional-knapsack bound on the score of any subset of `items` within `capacity`:
/// the positive scores taken by falling score per unit of cost, the last in part.
pub fn fractional_bound(items: &[(f64, Value)], capacity: f64) -> f64 {
    let mut order: Vec<usize> = (0..items.len())
        .filter(|&i| items[i].1.score > 0.0)
        .collect();
    let ratio = |i: usize| {
        let (cost, value) = items[i];
        if cost <= 0.0 {
            f64::INFINITY
        } else {
            value.score / cost
        }
    };
    order.sort_by(|&a, &b| ratio(b).total_cmp(&ratio(a)));
    let (mut money, mut gain) = (capacity.max(0.0), 0.0);
    for i in order {
        let (cost, value) = items[i];
        if cost <= money {
            money -= cost;
            gain += value.score;
        } else {
            gain += value.score * money / cost;
            break;
        }
    }
    gain
}

/// Whether a search whose score can reach at most `bound` at a cost of at least `cost` can
/// still beat `best` = (cost, score) under [`better`]; a margin covers rounding in the bound.
pub fn may_beat(bound: f64, cost: f64, best: (f64, f64)) -> bool {
    let (best_cost, best_score) = best;
    let bound = bound + 1e-10;
    bound >= best_score - 1e-12 && (bound > best_score + 1e-12 || cost < best_cost - 1e-9)
}

/// The outcome of a bounded search: the best subset found, and whether the search ran to the
/// end (so that the subset is proven best).
pub struct Bounded {
    /// The best subset found, if any keeps the floors within the money.
    pub best: Option<Subset>,
    /// Whether the search ran to the end (the subset is then proven best).
    pub complete: bool,
}

/// Best subset within `capacity` under the floors, by depth-first branch and bound.
///
/// A branch is cut when a bound on its score cannot beat the best subset found (or the
/// `incumbent`), or when even the most favourable remaining items cannot bring it to a floor:
/// accuracy (all remaining positive accuracy gains added) or four-fifths (for some pair of
/// groups g, h: g's rate stays below four-fifths of h's whatever is added, while h's rate stays
/// above 0). The bound is the smaller of the fractional knapsack of the scores and a Lagrangian
/// bound over the four-fifths lines ([`Relaxed`]); items are branched on in the order of the
/// latter, starting from a greedy subset that keeps the floors. Every subset met on the way is
/// checked with the floors exactly as stated ([`Floors::hold`]), so the answer is the
/// enumeration's; past [`NODE_LIMIT`] nodes it stops with the best found.
///
/// `incumbent` (cost, score), when given, is a subset that is already as good as needed:
/// branches that cannot beat it are cut too, and the answer may then be no better than it.
pub fn best_subset_bounded(
    items: &[(f64, Value)],
    capacity: f64,
    floors: &Floors,
    incumbent: Option<(f64, f64)>,
) -> Bounded {
    let n = items.len();
    let groups = floors.rates.len();
    let change = |i: usize, g: usize| floors.selection[i].get(g).copied().unwrap_or(0.0);
    let lowest = |h: usize| floors.rates[h] + (0..n).map(|i| change(i, h).min(0.0)).sum::<f64>();
    let lines: Vec<Line> = if floors.no_adverse_impact {
        (0..groups)
            .flat_map(|g| (0..groups).filter(move |&h| h != g).map(move |h| (g, h)))
            .filter(|&(_, h)| lowest(h) > 1e-9)
            .map(|(g, h)| Line {
                pair: (g, h),
                a: (0..n)
                    .map(|i| change(i, g) - FOUR_FIFTHS * change(i, h))
                    .collect(),
                gap: floors.rates[g] - FOUR_FIFTHS * floors.rates[h],
            })
            .collect()
    } else {
        Vec::new()
    };
    let plain = Relaxed::build(items, &[], &[]);
    let relaxed: Vec<Relaxed> = std::iter::once(plain)
        .chain(Relaxed::fit(items, &lines, capacity))
        .collect();
    // Branch in the order of the tightest bound, every item included.
    let order = relaxed[relaxed.len() - 1].order.clone();
    let mut position = vec![0; n];
    for (k, &i) in order.iter().enumerate() {
        position[i] = k;
    }

    // Suffix sums over the order, for the floors' cuts.
    let suffix = |f: &dyn Fn(usize) -> f64| -> Vec<f64> {
        let mut s = vec![0.0; n + 1];
        for k in (0..n).rev() {
            s[k] = s[k + 1] + f(order[k]);
        }
        s
    };
    let accuracy_up = suffix(&|i| items[i].1.accuracy.max(0.0));
    let mut pairs: Vec<(usize, usize, Vec<f64>)> = Vec::new();
    let mut rate_down: Vec<Vec<f64>> = Vec::new();
    if floors.no_adverse_impact {
        for g in 0..groups {
            for h in (0..groups).filter(|&h| h != g) {
                let gap = suffix(&|i| (change(i, g) - FOUR_FIFTHS * change(i, h)).max(0.0));
                pairs.push((g, h, gap));
            }
        }
        rate_down = (0..groups)
            .map(|h| suffix(&|i| change(i, h).min(0.0)))
            .collect();
    }

    // A greedy start: items in branching order, each kept where it fits and keeps the floors.
    let mut greedy: Vec<usize> = Vec::new();
    let mut greedy_cost = 0.0;
    for &i in &order {
        if relaxed[relaxed.len() - 1].adjusted[i] <= 0.0 && items[i].1.score <= 0.0 {
            continue;
        }
        if greedy_cost + items[i].0 > capacity + 1e-9 {
            continue;
        }
        let mut with = greedy.clone();
        with.push(i);
        with.sort_unstable();
        if floors.hold(items, &with) {
            greedy = with;
            greedy_cost += items[i].0;
        }
    }
    let mut best: Option<Subset> = None;
    for subset in [Vec::new(), greedy] {
        if floors.hold(items, &subset) {
            let cost: f64 = subset.iter().map(|&i| items[i].0).sum();
            let score: f64 = subset.iter().map(|&i| items[i].1.score).sum();
            if better((cost, score), best.as_ref()) {
                best = Some((cost, score, subset));
            }
        }
    }

    struct State<'s> {
        items: &'s [(f64, Value)],
        relaxed: &'s [Relaxed],
        position: &'s [usize],
        order: &'s [usize],
        capacity: f64,
        floors: &'s Floors<'s>,
        accuracy_up: &'s [f64],
        pairs: &'s [(usize, usize, Vec<f64>)],
        rate_down: &'s [Vec<f64>],
        best: Option<Subset>,
        incumbent: Option<(f64, f64)>,
        nodes: usize,
        complete: bool,
        chosen: Vec<usize>,
    }

    impl State<'_> {
        /// Whether no completion from position k can keep the floors.
        fn floors_out_of_reach(&self, k: usize, accuracy: f64, rates: &[f64]) -> bool {
            if self.floors.keep_accuracy && accuracy + self.accuracy_up[k] < -1e-12 - 1e-9 {
                return true;
            }
            self.pairs.iter().any(|(g, h, gap)| {
                let best_gap = rates[*g] - FOUR_FIFTHS * rates[*h] + gap[k];
                let lowest_h = rates[*h] + self.rate_down[*h][k];
                best_gap < -1e-9 && lowest_h > 1e-9
            })
        }

        /// Visits position k with the items chosen so far; `fresh` when the last step added
        /// an item (so the subset as it stands has not been checked yet).
        fn visit(&mut self, k: usize, state: (f64, f64, f64), rates: &mut [f64], fresh: bool) {
            let (cost, score, accuracy) = state;
            self.nodes += 1;
            if self.nodes > NODE_LIMIT {
                self.complete = false;
                return;
            }
            if fresh {
                // The subset as it stands is a candidate (the leaf that adds nothing more),
                // scored and checked in index order as the enumeration does.
                let mut subset = self.chosen.clone();
                subset.sort_unstable();
                if self.floors.hold(self.items, &subset) {
                    let exact_cost: f64 = subset.iter().map(|&i| self.items[i].0).sum();
                    let exact_score: f64 = subset.iter().map(|&i| self.items[i].1.score).sum();
                    if better((exact_cost, exact_score), self.best.as_ref()) {
                        self.best = Some((exact_cost, exact_score, subset));
                    }
                }
            }
            if k == self.order.len() {
                return;
            }
            let money = self.capacity - cost;
            let free = |i: usize| self.position[i] >= k;
            let bound = self
                .relaxed
                .iter()
                .map(|r| score + r.bound(self.items, rates, money, &free))
                .fold(f64::INFINITY, f64::min);
            let found = self.best.as_ref().map(|(c, s, _)| (*c, *s));
            if found
                .into_iter()
                .chain(self.incumbent)
                .any(|best| !may_beat(bound, cost, best))
            {
                return;
            }
            if self.floors_out_of_reach(k, accuracy, rates) {
                return;
            }
            let i = self.order[k];
            let (item_cost, value) = self.items[i];
            if cost + item_cost <= self.capacity + 1e-9 {
                self.chosen.push(i);
                for (g, rate) in rates.iter_mut().enumerate() {
                    *rate += self.floors.selection[i].get(g).copied().unwrap_or(0.0);
                }
                let with = (
                    cost + item_cost,
                    score + value.score,
                    accuracy + value.accuracy,
                );
                self.visit(k + 1, with, rates, true);
                for (g, rate) in rates.iter_mut().enumerate() {
                    *rate -= self.floors.selection[i].get(g).copied().unwrap_or(0.0);
                }
                self.chosen.pop();
            }
            self.visit(k + 1, state, rates, false);
        }
    }

    let mut state = State {
        items,
        relaxed: &relaxed,
        position: &position,
        order: &order,
        capacity,
        floors,
        accuracy_up: &accuracy_up,
        pairs: &pairs,
        rate_down: &rate_down,
        best,
        incumbent,
        nodes: 0,
        complete: true,
        chosen: Vec::new(),
    };
    let mut rates = floors.rates.to_vec();
    state.visit(0, (0.0, 0.0, floors.accuracy), &mut rates, false);
    Bounded {
        best: state.best,
        complete: state.complete,
    }
}

/// The four-fifths line between groups g and h as a linear condition on the features chosen:
/// a·x ≥ −gap, with aᵢ = Δgᵢ − 0.8·Δhᵢ and gap = r_g − 0.8·r_h before the features. Only lines
/// that every completion must keep are formed (h's rate stays above 0 whatever is added, so
/// the highest rate is above 0 and g must reach four-fifths of it, hence of h's).
struct Line {
    pair: (usize, usize),
    a: Vec<f64>,
    gap: f64,
}

/// A Lagrangian bound over the binding four-fifths lines: for multipliers λ ≥ 0 and any subset
/// x that keeps every line, s·x ≤ s·x + Σ λ_c (a_c·x + gap_c), so the fractional knapsack of
/// the scores s + Σ λ_c a_c, plus Σ λ_c gap_c, bounds every subset that keeps them. The
/// multipliers are chosen once, at the root, to make that bound small (it is convex in λ:
/// coordinate descent by golden-section search); the bound stays valid at every node, with the
/// items already decided taken as fixed and the gaps as they stand there.
struct Relaxed {
    /// (g, h, λ) of each line with a multiplier above 0.
    lines: Vec<(usize, usize, f64)>,
    /// s + Σ λa per item.
    adjusted: Vec<f64>,
    /// Items by falling adjusted score per unit of cost.
    order: Vec<usize>,
}

impl Relaxed {
    /// The bound on the score still to gain, with the rates as they stand and `money` left,
    /// over the items `free` allows.
    fn bound(
        &self,
        items: &[(f64, Value)],
        rates: &[f64],
        money: f64,
        free: &dyn Fn(usize) -> bool,
    ) -> f64 {
        let gaps: f64 = self
            .lines
            .iter()
            .map(|&(g, h, lambda)| lambda * (rates[g] - FOUR_FIFTHS * rates[h]))
            .sum();
        gaps + self.knapsack(items, money, free)
    }

    fn knapsack(&self, items: &[(f64, Value)], money: f64, free: &dyn Fn(usize) -> bool) -> f64 {
        let mut money = money.max(0.0);
        let mut gain = 0.0;
        for &i in &self.order {
            if !free(i) {
                continue;
            }
            let (cost, adjusted) = (items[i].0, self.adjusted[i]);
            if adjusted <= 0.0 {
                break;
            }
            if cost <= money {
                money -= cost;
                gain += adjusted;
            } else {
                gain += adjusted * money / cost;
                break;
            }
        }
        gain
    }

    fn build(items: &[(f64, Value)], lines: &[Line], lambdas: &[f64]) -> Relaxed {
        let adjusted: Vec<f64> = (0..items.len())
            .map(|i| {
                items[i].1.score
                    + lines
                        .iter()
                        .zip(lambdas)
                        .map(|(l, lambda)| lambda * l.a[i])
                        .sum::<f64>()
            })
            .collect();
        let ratio = |i: usize| {
            if adjusted[i] <= 0.0 {
                f64::NEG_INFINITY
            } else if items[i].0 <= 0.0 {
                f64::INFINITY
            } else {
                adjusted[i] / items[i].0
            }
        };
        let mut order: Vec<usize> = (0..items.len()).collect();
        order.sort_by(|&x, &y| ratio(y).total_cmp(&ratio(x)).then(x.cmp(&y)));
        Relaxed {
            lines: lines
                .iter()
                .zip(lambdas)
                .filter(|(_, &lambda)| lambda > 0.0)
                .map(|(l, &lambda)| (l.pair.0, l.pair.1, lambda))
                .collect(),
            adjusted,
            order,
        }
    }

    /// The multipliers that make the root bound smallest; `None` when all zero do as well (no
    /// line binds).
    fn fit(items: &[(f64, Value)], lines: &[Line], capacity: f64) -> Option<Relaxed> {
        if lines.is_empty() {
            return None;
        }
        let at = |lambdas: &[f64]| -> f64 {
            let gaps: f64 = lines.iter().zip(lambdas).map(|(l, x)| x * l.gap).sum();
            gaps + Relaxed::build(items, lines, lambdas).knapsack(items, capacity, &|_| true)
        };
        let mut lambdas = vec![0.0; lines.len()];
        let plain = at(&lambdas);
        let golden = (5f64.sqrt() - 1.0) / 2.0;
        for _round in 0..3 {
            for c in 0..lines.len() {
                let with = |x: f64| {
                    let mut l = lambdas.clone();
                    l[c] = x;
                    at(&l)
                };
                let mut high = 1.0;
                while with(high) < with(high / 2.0) && high < 1e9 {
                    high *= 2.0;
                }
                let (mut low, mut top) = (0.0, high);
                for _ in 0..40 {
                    let x1 = top - golden * (top - low);
                    let x2 = low + golden * (top - low);
                    if with(x1) <= with(x2) {
                        top = x2;
                    } else {
                        low = x1;
                    }
                }
                let best = (low + top) / 2.0;
                if with(best) < with(lambdas[c]) {
                    lambdas[c] = best;
                }
            }
        }
        (at(&lambdas) < plain - 1e-9).then(|| Relaxed::build(items, lines, &lambdas))
    }
}
