//! Benchmark of the planner: 60 feature options and 3 rows options of 4 steps each (125
//! combinations of rows), the plan and the frontier (at most 24 round budgets) as `acquest plan` computes them,
//! without floors, with each floor and with both. Target: both floors under 5 s on the 2-core
//! machine of the contributor guide. Prints wall times; run with `cargo bench --bench planner`.

use std::time::Instant;

use acquest::decide::plan::{frontier, round_budgets_of, FRONTIER_POINTS};
use acquest::decide::problem::{Problem, Shape};
use acquest::engine::streams::{stream_rng, Stream};
use acquest::report::PlanRules;

fn main() {
    let shape = Shape {
        rows_options: 3,
        steps: 4,
        features: 60,
        groups: 3,
    };
    println!(
        "planner: {} feature options, {} rows options of {} steps, {} groups; plan + frontier at round budgets (at most {FRONTIER_POINTS})",
        shape.features, shape.rows_options, shape.steps, shape.groups
    );
    println!("seed  floors                      wall (s)  plan score  items  cut short");
    let mut worst: f64 = 0.0;
    for seed in 1..=3 {
        let problem = Problem::synthetic(shape, &mut stream_rng(seed, Stream::Check(702), 0));
        let budget = problem.everything() / 3.0;
        for (name, keep_accuracy, no_adverse_impact) in [
            ("none", false, false),
            ("keep accuracy", true, false),
            ("no adverse impact", false, true),
            ("both", true, true),
        ] {
            let rules = PlanRules {
                budget,
                cautious: false,
                keep_accuracy,
                no_adverse_impact,
            };
            let started = Instant::now();
            let plan = problem.solve(&rules);
            let points = frontier(&problem, &rules, &round_budgets_of(&problem));
            let wall = started.elapsed().as_secs_f64();
            if keep_accuracy && no_adverse_impact {
                worst = worst.max(wall);
            }
            println!(
                "{seed:>4}  {name:<26} {wall:>9.3}  {:>10.4}  {:>5}  {:>9}",
                plan.score,
                plan.items.len(),
                problem.searches_cut_short()
            );
            assert!(!points.is_empty() && points.len() <= FRONTIER_POINTS);
        }
    }
    println!(
        "both floors, slowest of 3 problems: {worst:.3} s ({:.2} of the 5 s target)",
        worst / 5.0
    );
}
