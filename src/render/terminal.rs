//! The terminal view of every report: plain-text tables, warnings and cautions.

use std::fmt::Write as _;

use super::document::Document;
use super::*;
use crate::report::{AppraisalReport, BaselineReport, CurvesReport, Gain, OptionKind, PlanReport};

/// The baseline report as terminal text.
pub fn baseline_text(report: &BaselineReport) -> String {
    baseline_document(report).plain()
}

/// The baseline report's view.
pub fn baseline_document(report: &BaselineReport) -> Document {
    let mut d = Document::new("Baseline: the model today, its accuracy and fairness");
    let inputs = &report.inputs;
    d.text(format!(
        "acquest baseline: {} ({} rows read, {} used)",
        inputs.data.path,
        thousands(report.data.rows_read),
        thousands(report.data.rows_used)
    ));
    d.text(format!(
        "target '{}', favourable '{}' (otherwise '{}'); protected '{}'{}",
        inputs.target,
        inputs.favourable,
        inputs.unfavourable,
        inputs.protected,
        if inputs.more_protected.is_empty() {
            String::new()
        } else {
            format!(", also by {}", inputs.more_protected.join(", "))
        }
    ));
    let numeric = report
        .data
        .features
        .iter()
        .filter(|f| f.kind == "numeric")
        .count();
    d.text(format!(
"{} features ({} numeric, {} categorical){}; model {}, {} trials holding out {:.0}%, seed {}", report.data.features.len(),
        numeric,
        report.data.features.len() - numeric,
        if inputs.use_protected { ", protected attribute included" } else { "" },
        inputs.model,
        inputs.repeats,
        inputs.test_fraction * 100.0,
        inputs.seed));

    let figures = AttributeFigures {
        groups: &report.groups,
        reference: &report.reference,
        label_bias: &report.label_bias,
        model_groups: &report.model.groups,
        comparisons: &report.model.comparisons,
        worst: &report.model.worst,
        four_fifths: &report.model.four_fifths,
    };
    label_tables(&mut d, &figures, "");
    let m = &report.model;
    let level = (inputs.confidence * 100.0).round();
    d.heading(format!(
"Model on held-out rows ({} trials of {} training / {} test rows; mean [{level}% interval])", m.trials,
        thousands(m.train_rows),
        thousands(m.test_rows)));
    let mut t = Table::new(&["measure", "value"]);
    t.row(vec!["accuracy".into(), with_interval(Some(&m.accuracy))]);
    t.row(vec![
        "balanced accuracy".into(),
        with_interval(m.balanced_accuracy.as_ref()),
    ]);
    t.row(vec![
        "AUC".into(),
        with_interval(m.area_under_curve.as_ref()),
    ]);
    d.table(t);

    d.gap();
    model_tables(&mut d, &figures, "", inputs.confidence);
    for section in &report.attributes {
        attribute_section(&mut d, section, inputs.confidence);
    }
    if let Some(w) = &report.worst_over_attributes {
        let show = |w: &Option<crate::report::WorstOf>| {
            w.as_ref().map_or("n/a".into(), |w| {
                format!("'{}' of '{}' ({:.4})", w.group, w.attribute, w.unfairness)
            })
        };
        d.heading("Over every protected attribute: the group farthest from fair");
        d.note(format!(
            "SPD {}; DI {}; EOD {}; AOD {}",
            show(&w.statistical_parity_difference),
            show(&w.disparate_impact),
            show(&w.equal_opportunity_difference),
            show(&w.average_odds_difference)
        ));
    }

    warnings_and_cautions(&mut d, &report.warnings, &report.cautions);
    d
}

/// One attribute's figures as the baseline shows them: the first attribute's, or those of a
/// further attribute or intersection ([`crate::report::AttributeSection`]).
struct AttributeFigures<'a> {
    groups: &'a [crate::report::GroupSummary],
    reference: &'a crate::report::ReferenceGroup,
    label_bias: &'a crate::report::LabelBias,
    model_groups: &'a [crate::report::GroupRates],
    comparisons: &'a [crate::report::Comparison],
    worst: &'a crate::report::WorstGroups,
    four_fifths: &'a [crate::report::ModelFourFifths],
}

/// The groups and the bias in their labels, headings ending in `by` (" by 'race'").
fn label_tables(d: &mut Document, f: &AttributeFigures, by: &str) {
    d.heading(format!("Groups{by}"));
    let mut t = Table::new(&["group", "formed as", "rows", "favourable", "label rate"]);
    for g in f.groups {
        let mark = if g.name == f.reference.name {
            " (reference)"
        } else {
            ""
        };
        t.row(vec![
            format!("{}{mark}", g.name),
            g.definition.clone(),
            thousands(g.rows),
            thousands(g.favourable_labels),
            number(g.label_rate),
        ]);
    }
    d.table(t);
    d.note(format!("reference: {}", f.reference.rule));

    d.heading(format!("Bias already in the labels{by}"));
    let mut t = Table::new(&[
        "group",
        "SPD",
        "DI",
        "four-fifths",
        "z-test p",
        "Fisher p",
        "one person flips it",
    ]);
    for c in &f.label_bias.comparisons {
        let finding = f.label_bias.four_fifths.iter().find(|f| f.group == c.group);
        t.row(vec![
            c.group.clone(),
            maybe(c.statistical_parity_difference),
            maybe(c.disparate_impact),
            finding.map_or("n/a".into(), |f| {
                format!(
                    "{} ({:.3})",
                    if f.adverse_impact {
                        "adverse impact"
                    } else {
                        "not flagged"
                    },
                    f.impact_ratio
                )
            }),
            p_value(finding.and_then(|f| f.z_p_value)),
            p_value(finding.and_then(|f| f.fisher_p_value)),
            finding.map_or("".into(), |f| {
                if f.one_person_flips {
                    "yes".into()
                } else {
                    "no".into()
                }
            }),
        ]);
    }
    d.table(t);
    d.note("four-fifths: each group's favourable rate over the highest group's; flagged only when below 0.8");
}

/// The model's rates, disparities and four-fifths findings by the groups, headings ending in
/// `by`.
fn model_tables(d: &mut Document, f: &AttributeFigures, by: &str, confidence: f64) {
    let mut t = Table::new(&[
        "group",
        "test rows",
        "selection rate",
        "true positive rate",
        "false positive rate",
    ]);
    for g in f.model_groups {
        t.row(vec![
            g.group.clone(),
            format!("{:.0}", g.test_rows),
            with_interval(g.selection_rate.as_ref()),
            with_interval(g.true_positive_rate.as_ref()),
            with_interval(g.false_positive_rate.as_ref()),
        ]);
    }
    d.table(t);

    d.heading(format!(
        "Each group beside the reference group '{}'{by} (* differs from parity at p < {:.2})",
        f.reference.name,
        1.0 - confidence
    ));
    let mut t = Table::new(&[
        "group",
        "gap in selection rate (0 = parity)",
        "ratio of selection rates (1 = parity)",
        "gap in true positive rate (0 = parity)",
        "mean gap in TPR and FPR (0 = parity)",
    ]);
    for c in f.comparisons {
        let cell = |e: &Option<Estimate>| {
            format!(
                "{}{}",
                with_interval(e.as_ref()),
                significance(e.as_ref(), confidence)
            )
        };
        // The gaps are differences, signed (+ as well as -); disparate impact is a ratio.
        let gap = |e: &Option<Estimate>| {
            e.as_ref()
                .map_or("n/a".into(), |e| signed_estimate(e, confidence))
        };
        t.row(vec![
            c.group.clone(),
            gap(&c.statistical_parity_difference),
            cell(&c.disparate_impact),
            gap(&c.equal_opportunity_difference),
            gap(&c.average_odds_difference),
        ]);
    }
    d.table(t);
    d.note(
        "the four columns are the statistical parity difference (SPD), disparate impact (DI), \
         equal opportunity difference (EOD) and average odds difference (AOD)",
    );
    if f.comparisons.len() > 1 {
        let w = f.worst;
        let show = |w: &Option<crate::report::Worst>| {
            w.as_ref().map_or("n/a".into(), |w| {
                format!("{} ({:.4})", w.group, w.unfairness)
            })
        };
        d.note(format!(
            "worst group: SPD {}, DI {}, EOD {}, AOD {}",
            show(&w.statistical_parity_difference),
            show(&w.disparate_impact),
            show(&w.equal_opportunity_difference),
            show(&w.average_odds_difference)
        ));
    }

    d.heading(format!(
        "Four-fifths rule on the model's selections{by} (ratio to the highest group, per trial)"
    ));
    let mut t = Table::new(&["group", "impact ratio", "finding", "trials below 0.8"]);
    for x in f.four_fifths {
        t.row(vec![
            x.group.clone(),
            with_interval(Some(&x.impact_ratio)),
            if x.adverse_impact {
                "adverse impact".into()
            } else {
                "not flagged".into()
            },
            format!("{} of {}", x.trials_flagged, x.impact_ratio.trials),
        ]);
    }
    d.table(t);
}

/// A further attribute or intersection: one summary line in the terminal (its groups and
/// reference, the groups the four-fifths rule flags in the labels and in the model's
/// selections, the worst group by EOD, the cells too small), its full tables as detail.
fn attribute_section(d: &mut Document, a: &crate::report::AttributeSection, confidence: f64) {
    let flagged = |names: Vec<&str>| {
        if names.is_empty() {
            "none".to_string()
        } else {
            names.join(", ")
        }
    };
    let in_labels = flagged(
        a.label_bias
            .four_fifths
            .iter()
            .filter(|f| f.adverse_impact)
            .map(|f| f.group.as_str())
            .collect(),
    );
    let in_model = flagged(
        a.four_fifths
            .iter()
            .filter(|f| f.adverse_impact)
            .map(|f| f.group.as_str())
            .collect(),
    );
    let worst = a
        .worst
        .equal_opportunity_difference
        .as_ref()
        .map_or("n/a".into(), |w| {
            format!("{} ({:.4})", w.group, w.unfairness)
        });
    let small = if a.too_small.is_empty() {
        String::new()
    } else {
        format!(
            "; too small to assess: {}",
            a.too_small
                .iter()
                .map(|c| format!(
                    "{} ({} rows, {} favourable)",
                    c.group,
                    thousands(c.rows),
                    thousands(c.favourable_labels)
                ))
                .collect::<Vec<_>>()
                .join(", ")
        )
    };
    d.heading(format!(
        "By '{}': {} groups, reference '{}'",
        a.attribute,
        a.groups.len(),
        a.reference.name
    ));
    d.note(format!(
        "four-fifths flags in the labels: {in_labels}; in the model's selections: {in_model}; worst EOD: {worst}{small}"
    ));
    d.brief("the full tables: --detail, or the Markdown and HTML");
    let figures = AttributeFigures {
        groups: &a.groups,
        reference: &a.reference,
        label_bias: &a.label_bias,
        model_groups: &a.model_groups,
        comparisons: &a.comparisons,
        worst: &a.worst,
        four_fifths: &a.four_fifths,
    };
    let by = format!(" by '{}'", a.attribute);
    d.detail(|d| {
        label_tables(d, &figures, &by);
        d.heading(format!("The model's rates by '{}'", a.attribute));
        model_tables(d, &figures, &by, confidence);
    });
}

/// The curves report as terminal text.
pub fn curves_text(report: &CurvesReport) -> String {
    curves_document(report).plain()
}

/// The curves report's view, with the curves' chart for the HTML.
pub fn curves_document(report: &CurvesReport) -> Document {
    let mut d =
        Document::new("Learning curves: accuracy and each group's rates against training rows");
    let inputs = &report.inputs;
    let s = &report.schedule;
    d.text(format!(
"acquest curves: {} ({} rows); target '{}' favourable '{}', protected '{}'; model {}, {} repeats, seed {}", inputs.data.path,
        thousands(inputs.data.rows),
        inputs.target,
        inputs.favourable,
        inputs.protected,
        inputs.model,
        s.repeats,
        inputs.seed));
    d.text(format!(
"{} training sizes from {} to {} rows (all training rows), each repeat tested on the same {} held-out rows", s.sizes.len(),
        thousands(s.sizes[0]),
        thousands(*s.sizes.last().unwrap_or(&0)),
        thousands(s.test_rows)));
    d.note(format!("smallest size: {}", s.smallest_rule));
    let level = (inputs.confidence * 100.0).round();
    d.note(format!(
"each family is scored by forecasting the {} largest sizes from the others; bands: {level}% bootstrap over repeats ({} draws)", s.held_back, s.bootstrap_draws));
    let top = *s.sizes.last().unwrap_or(&0);
    let requested: Vec<f64> = report
        .curves
        .iter()
        .find(|c| !c.at.is_empty())
        .map(|c| c.at.iter().map(|p| p.size).collect())
        .unwrap_or_default();
    let at_header = |n: f64| {
        format!(
            "at {} ({:.1}x)",
            thousands(n.round() as usize),
            n / top as f64
        )
    };

    d.heading("Learning curves (value [band]; 'now' is the mean of the trials at all training rows, the baseline's own trials)");
    let mut header: Vec<String> = vec![
        "measure".into(),
        "group".into(),
        format!("now ({})", thousands(top)),
        "level".into(),
    ];
    header.extend(requested.iter().map(|&n| at_header(n)));
    header.extend(["family".into(), "forecast error".into()]);
    let header_refs: Vec<&str> = header.iter().map(String::as_str).collect();
    let mut t = Table::new(&header_refs);
    for c in &report.curves {
        let mut row = vec![
            c.quantity.clone(),
            c.group.clone().unwrap_or_else(|| "all".into()),
            c.anchors.last().map_or("n/a".into(), |a| number(a.mean)),
            maybe(c.asymptote),
        ];
        for i in 0..requested.len() {
            row.push(curve_cell(c.at.get(i)));
        }
        let chosen = c.families.iter().find(|f| Some(f.family) == c.chosen);
        row.push(chosen.map_or("none".into(), |f| {
            format!("{} ({})", f.family.name(), f.formula)
        }));
        row.push(
            chosen
                .and_then(|f| f.forecast_error)
                .map_or("n/a".into(), |e| format!("{e:.4}")),
        );
        t.row(row);
    }
    d.table(t);

    let at_headers: Vec<String> = requested.iter().map(|&n| at_header(n)).collect();
    disparity_table(
        &mut d,
        &report.reference.name,
        None,
        &report.disparities,
        &at_headers,
    );
    d.note("'in labels': the same measure on the labels themselves; more rows of the same kind tend to pull the model towards it");
    for a in &report.attributes {
        disparity_table(
            &mut d,
            &a.reference.name,
            Some(&a.attribute),
            &a.disparities,
            &at_headers,
        );
    }
    if report
        .curves
        .iter()
        .any(|c| c.at.iter().any(|p| p.unreliable))
        || report
            .disparities
            .iter()
            .any(|d| d.at.iter().any(|p| p.unreliable))
    {
        d.note(format!(
            "! beyond {} rows, 4x the largest fitted size: extrapolated too far to be relied on",
            thousands(s.reliable_up_to.round() as usize)
        ));
    }
    d.chart(None, super::svg::curves_svg(report));
    warnings_and_cautions(&mut d, &report.warnings, &report.cautions);
    d
}

/// The disparity curves of the groups against `reference` (of a further `attribute`, or of the
/// first), read now, at their
/// level and at the requested sizes (`at_headers`, their columns' names).
fn disparity_table(
    d: &mut Document,
    reference: &str,
    attribute: Option<&str>,
    disparities: &[crate::report::DisparityCurve],
    at_headers: &[String],
) {
    let how = format!(
        "each group's gap to '{reference}' moves along the curves (derived from the fitted rates)"
    );
    d.heading(match attribute {
        None => format!("How {how}"),
        Some(name) => format!("By '{name}': how {how}"),
    });
    let mut header: Vec<String> = vec![
        "measure".into(),
        "group".into(),
        "in labels".into(),
        "now".into(),
        "level".into(),
    ];
    header.extend(at_headers.iter().cloned());
    let header_refs: Vec<&str> = header.iter().map(String::as_str).collect();
    let mut t = Table::new(&header_refs);
    for g in disparities {
        let mut row = vec![
            g.measure.clone(),
            g.group.clone(),
            maybe(g.in_labels),
            g.anchors.last().map_or("n/a".into(), |a| number(a.mean)),
            maybe(g.asymptote),
        ];
        for i in 0..at_headers.len() {
            row.push(curve_cell(g.at.get(i)));
        }
        t.row(row);
    }
    d.table(t);
}

/// The appraisal report as terminal text.
pub fn appraisal_text(report: &AppraisalReport) -> String {
    appraisal_document(report).plain()
}

/// The appraisal report's view.
pub fn appraisal_document(report: &AppraisalReport) -> Document {
    let mut d = appraisal_body(report);
    d.chart(
        Some("Learning curves and each group's rates"),
        super::html::appraisal_curves(report),
    );
    warnings_and_cautions(&mut d, &report.warnings, &report.cautions);
    d
}

/// The appraisal without its warnings and cautions, for the reports that include it.
fn appraisal_body(report: &AppraisalReport) -> Document {
    let mut d = Document::new("Appraisal of the options on the cost sheet");
    let inputs = &report.inputs;
    let c = &report.costs;
    let confidence = inputs.confidence;
    d.text(format!(
        "acquest appraise: {} ({} rows) with cost sheet {}; model {}, {} repeats, seed {}",
        inputs.data.path,
        thousands(report.today.rows),
        c.path,
        inputs.model,
        inputs.repeats,
        inputs.seed
    ));
    d.text(format!(
        "today: accuracy {:.4}, unfairness {:.4} ({} of the worst group '{}' beside '{}'); {}",
        report.today.accuracy,
        report.today.unfairness,
        c.fairness.to_uppercase(),
        report.today.worst_group,
        report.reference.name,
        today_source(report)
    ));
    if let Some(sentence) = super::today_by_attribute(report) {
        d.text(sentence);
    }
    d.text(format!(
        "utility = {} x accuracy gain + {} x unfairness reduction; costs in {}; gains per 1,000 {}",
        c.weigh_accuracy, c.weigh_fairness, c.currency, c.currency
    ));

    let level = (confidence * 100.0).round();
    d.heading(format!(
        "Options, ranked by utility per 1,000 (mean [{level}% interval]; * differs from zero)"
    ));
    let mut t = Table::new(&[
        "rank",
        "option",
        "buys",
        "cost",
        "accuracy gain",
        "unfairness reduction",
        "utility/1000",
        "cautious/1000",
        "cautious rank",
    ]);
    for r in &report.ranking {
        let Some(o) = report.options.iter().find(|o| o.name == r.name) else {
            continue;
        };
        let e = &o.estimate;
        let buys = match o.kind {
            OptionKind::Feature => format!("feature {}", o.target.as_deref().unwrap_or("")),
            OptionKind::GroupRows => format!(
                "{} rows of {}",
                thousands(e.new_rows),
                o.target.as_deref().unwrap_or("")
            ),
            OptionKind::Rows => format!("{} rows", thousands(e.new_rows)),
        };
        t.row(vec![
            r.rank.to_string(),
            o.name.clone(),
            buys,
            money(e.cost),
            change_cell(&e.accuracy_gain, confidence),
            change_cell(&e.unfairness_reduction, confidence),
            format!("{:+.5}", r.utility_per_1000),
            r.cautious_per_1000
                .map_or("n/a".into(), |v| format!("{v:+.5}")),
            r.cautious_rank.to_string(),
        ]);
    }
    d.table(t);
    for o in &report.options {
        if !o.flags.is_empty() {
            d.note(format!("{}: {}", o.name, o.flags.join("; ")));
        }
    }
    d.chart(None, super::html::options_charts(report));

    for o in report
        .options
        .iter()
        .filter(|o| o.kind == OptionKind::Feature)
    {
        let Some(p) = &o.pilot else { continue };
        d.heading(format!(
            "Feature '{}' ({}): pilot of {} rows ({} training){}",
            o.name,
            o.target.as_deref().unwrap_or(""),
            thousands(p.rows),
            thousands(p.training_rows),
            p.mix_p_value.map_or(String::new(), |v| format!(
                ", group and label mix against the rest: chi-square p = {v:.3}"
            ))
        ));
        let difference = |e: Option<&crate::report::Estimate>, fairer: &str| match e {
            Some(e) => format!(
                "{} (p {}{fairer})",
                signed_estimate(e, confidence),
                p_value(e.p_value)
            ),
            None => "not measured".into(),
        };
        d.note(format!(
            "on the pilot at its size, with minus without, paired: accuracy {}, unfairness {}",
            difference(p.accuracy_difference.as_ref(), ""),
            difference(p.unfairness_difference.as_ref(), "; negative is fairer")
        ));
        if !p.unfairness_difference_by_attribute.is_empty() {
            let by: Vec<String> = p
                .unfairness_difference_by_attribute
                .iter()
                .map(|a| format!("{} {}", a.attribute, difference(a.difference.as_ref(), "")))
                .collect();
            d.note(format!(
                "unfairness by the other protected attributes, the same way (not in the estimate): {}",
                by.join("; ")
            ));
        }
        if let Some(direct) = &o.direct {
            d.note(format!(
"at full size, anchored on today's curve: accuracy {}, unfairness reduction {}\n  the pilot curve extrapolated directly, for comparison: accuracy {}, unfairness reduction {}", change_cell(&o.estimate.accuracy_gain, confidence),
                change_cell(&o.estimate.unfairness_reduction, confidence),
                change_cell(&direct.accuracy_gain, confidence),
                change_cell(&direct.unfairness_reduction, confidence)));
        }
        d.chart(
            None,
            super::svg::pilot_curves_svg(o, &report.today, &report.reference.name, confidence),
        );
        growth_table(&mut d, o, &p.growth);
        d.chart(
            None,
            super::html::growth_charts(o, (confidence * 100.0).round()),
        );
        if let (Some(first), Some(last)) = (o.steps.first(), o.steps.last()) {
            let step = |s: &crate::report::Purchase| {
                format!(
                    "+{} rows (cost {}): accuracy {}, unfairness reduction {}",
                    thousands(s.new_rows),
                    money(s.cost),
                    change_cell(&s.accuracy_gain, confidence),
                    change_cell(&s.unfairness_reduction, confidence)
                )
            };
            d.note(format!("bought with new rows: {}", step(first)));
            if o.steps.len() > 1 {
                d.note(format!(
                    "                     {} (every step in the JSON report)",
                    step(last)
                ));
            }
        }
    }
    for o in report
        .options
        .iter()
        .filter(|o| o.kind == OptionKind::GroupRows)
    {
        d.heading(format!(
            "Rows option '{}' ({}): every group's rates move",
            o.name,
            o.target.as_deref().unwrap_or("")
        ));
        let mut t = Table::new(&[
            "group",
            "selection rate",
            "true positive rate",
            "false positive rate",
        ]);
        for g in &o.estimate.groups {
            t.row(vec![
                g.group.clone(),
                change_cell(&g.selection_rate, confidence),
                change_cell(&g.true_positive_rate, confidence),
                change_cell(&g.false_positive_rate, confidence),
            ]);
        }
        d.table(t);
        first_parts_table(&mut d, o);
        d.chart(
            None,
            super::html::first_parts_charts(o, (confidence * 100.0).round()),
        );
    }

    if !report.held_features.is_empty() {
        d.heading(format!(
"Features held today: change when dropped (retrained without) or scrambled (permuted on test rows); unfairness on {}", c.fairness.to_uppercase()));
        let mut t = Table::new(&[
            "feature",
            "accuracy if dropped",
            "unfairness if dropped",
            "accuracy if scrambled",
            "unfairness if scrambled",
        ]);
        for h in &report.held_features {
            let cell = |e: &Option<crate::report::Estimate>| {
                e.as_ref().map_or("n/a".into(), |e| {
                    format!(
                        "{}{}",
                        with_interval(Some(e)),
                        significance(Some(e), confidence)
                    )
                })
            };
            t.row(vec![
                h.feature.clone(),
                cell(&h.ablation_accuracy),
                cell(&h.ablation_unfairness),
                cell(&h.permutation_accuracy),
                cell(&h.permutation_unfairness),
            ]);
        }
        d.table(t);
        d.note("a fall in accuracy when dropped is what the feature earns; a rise in unfairness when dropped means it makes the model fairer");
    }
    d
}

/// The plan report as terminal text: the appraisal's table, then the plan and the frontier.
pub fn plan_text(report: &PlanReport) -> String {
    let mut out = appraisal_body(&report.appraisal).plain();
    let currency = &report.appraisal.costs.currency;
    let rules = &report.rules;
    let _ = writeln!(
        out,
        "\nPlan for a budget of {} {currency}{}{}{}",
        money(rules.budget),
        if rules.cautious {
            ", scored by the lower end of each interval"
        } else {
            ""
        },
        if rules.keep_accuracy {
            ", accuracy kept at least at today's"
        } else {
            ""
        },
        if rules.no_adverse_impact {
            ", no group below four-fifths afterwards"
        } else {
            ""
        }
    );
    if let Some(advice) = advice_sentence(report) {
        let _ = writeln!(out, "  {advice}");
    }
    match &report.explanation {
        Some(why) => {
            let _ = writeln!(out, "  buy nothing: {why}");
        }
        None => {
            let whole = whole_plan(report);
            if let Some(doubt) = whole.as_ref().and_then(|w| w.doubt.as_ref()) {
                let _ = writeln!(out, "  ! {doubt}");
            }
            for line in plan_lines(report) {
                let _ = writeln!(out, "  - {line}");
            }
            let p = &report.plan;
            let _ = writeln!(
                out,
                "  total {} {currency}: accuracy {:+.4}, unfairness reduction {} (the sum of the options' estimates)",
                money(p.total_cost),
                p.accuracy_gain,
                plan_unfairness(p)
            );
            if let Some(whole) = whole {
                let _ = writeln!(out, "  {}", whole.figures);
                for flag in &whole.flags {
                    let _ = writeln!(out, "  note: {flag}");
                }
            }
        }
    }
    let _ = writeln!(out, "  chosen on {}", report.chosen_by);
    if !report.candidates.is_empty() {
        out.push_str("\nThe best plans, scored with their options taken together\n");
        let mut t = Table::new(&[
            "plan",
            "cost",
            "utility (sum)",
            "utility (joint)",
            "accuracy (joint)",
            "unfairness reduction (joint)",
        ]);
        for c in &report.candidates {
            let joint = |f: &dyn Fn(&crate::report::JointScore) -> &Change| match (
                &c.joint,
                c.plan.scored_together(),
            ) {
                (Some(j), _) => change_cell(f(j), report.appraisal.inputs.confidence),
                (None, true) => "its own estimate".to_string(),
                (None, false) => "n/a".to_string(),
            };
            t.row(vec![
                plan_label(&c.plan),
                money(c.plan.total_cost),
                format!("{:+.4}", c.plan.score),
                joint(&|j| &j.utility),
                joint(&|j| &j.accuracy_gain),
                joint(&|j| &j.unfairness_reduction),
            ]);
        }
        t.render(&mut out);
        for c in &report.candidates {
            if let Some(j) = &c.joint {
                let _ = writeln!(out, "  {}: {}", plan_label(&c.plan), j.method);
            } else if let (Some(note), true) = (&c.note, c.plan.items.len() > 1) {
                let _ = writeln!(out, "  {}: {}", plan_label(&c.plan), note);
            }
        }
    }
    out.push_str("\nBest plan at other budgets\n");
    let mut t = Table::new(&[
        "budget",
        "cost",
        "buys",
        "accuracy gain",
        "unfairness reduction",
    ]);
    let mut last = String::new();
    for point in &report.frontier {
        let buys = plan_label(&point.plan);
        if buys == last {
            continue;
        }
        last = buys.clone();
        t.row(vec![
            money(point.budget),
            money(point.plan.total_cost),
            buys,
            format!("{:+.4}", point.plan.accuracy_gain),
            plan_unfairness(&point.plan),
        ]);
    }
    t.render(&mut out);
    let _ = writeln!(out, "  gains: {}", report.gain_model);
    plain_warnings_and_cautions(&mut out, &report.warnings, &report.cautions);
    out
}

/// The backtest report as terminal text.
pub fn backtest_text(report: &crate::report::BacktestReport) -> String {
    backtest_document(report).plain()
}

/// The backtest report's view.
pub fn backtest_document(report: &crate::report::BacktestReport) -> Document {
    let mut d = Document::new("Backtest: the appraisal's predictions against gains realised");
    let b = &report.backtest;
    let inputs = &report.inputs;
    let confidence = inputs.confidence;
    d.text(format!(
"Backtest of the appraisal on {} ({} rows), groups by {}: {} round{}, {:.0}% of rows held back{}{}.", inputs.data.path,
        thousands(inputs.data.rows),
        inputs.protected,
        b.rounds,
        if b.rounds == 1 { "" } else { "s" },
        b.hold_rows * 100.0,
        match &b.hold_group {
            Some(g) => format!(" (also offered as rows of {g} alone)"),
            None => String::new(),
        },
        if b.hold_features.is_empty() {
            String::new()
        } else {
            format!(
                ", {} blanked outside {:.0}% pilots",
                b.hold_features.join(", "),
                b.pilot * 100.0
            )
        }));
    d.text(format!(
"Each option is appraised on what is left, then bought for real and measured with the same trials ({} repeats, {} model).", inputs.repeats, inputs.model));
    let shown = [Gain::Accuracy, Gain::Fairness(b.fairness)];
    for quantity in shown {
        let title = quantity.label();
        d.heading(format!(
"Predicted and realised {title} ({:.0}% intervals; * realised differs from 0 at p < {})", confidence * 100.0,
            report.significance));
        let mut table = Table::new(&[
            "round",
            "option",
            "acquest",
            "last anchor",
            "pilot alone",
            "realised",
        ]);
        for round in &report.rounds {
            for option in &round.options {
                if let Some(q) = option.quantities.iter().find(|q| q.quantity == quantity) {
                    table.row(vec![
                        (round.round + 1).to_string(),
                        option.option.clone(),
                        change_cell(&q.acquest, 1.0),
                        change_cell(&q.last_anchor, 1.0),
                        change_cell(&q.pilot_alone, 1.0),
                        realised_cell(&q.realised, report.significance),
                    ]);
                }
            }
        }
        d.table(table);
    }
    for summary in report
        .summary
        .iter()
        .filter(|s| shown.contains(&s.quantity))
    {
        d.heading(format!(
            "How well each method did: {} (over every option and round)",
            summary.quantity.label()
        ));
        let mut table = Table::new(&[
            "method",
            "mean abs. error (pp)",
            "RMSE net of noise (pp)",
            "coverage",
            "interval score (pp)",
            "mean width (pp)",
            "signs right",
            "detected",
            "Spearman (all)",
            "Spearman (distinct)",
            "best named",
        ]);
        for m in &summary.methods {
            table.row(vec![
                m.method.name().to_string(),
                m.mean_absolute_error_pp
                    .map_or("n/a".into(), |e| format!("{e:.2}")),
                m.error_net_of_noise_pp
                    .map_or("n/a".into(), |e| format!("{e:.2}")),
                match (m.coverage, m.coverage_allowing_noise) {
                    (Some(c), Some(n)) => {
                        format!(
                            "{:.0}% ({:.0}%) of {}",
                            c * 100.0,
                            n * 100.0,
                            m.with_interval
                        )
                    }
                    _ => "no intervals".into(),
                },
                m.interval_score_pp
                    .map_or("n/a".into(), |e| format!("{e:.2}")),
                m.mean_width_pp.map_or("n/a".into(), |e| format!("{e:.2}")),
                format!("{} of {}", m.sign_correct, m.significant),
                format!("{} of {}", m.detected, m.significant),
                m.spearman_all.map_or("n/a".into(), |r| format!("{r:.2}")),
                match m.spearman_distinct {
                    Some(r) => format!("{r:.2} in {} rounds", m.distinct_rounds),
                    None => "n/a (none distinct)".into(),
                },
                format!(
                    "{} of {} ({} or tied)",
                    m.best_named, m.rounds_compared, m.best_named_or_tied
                ),
            ]);
        }
        d.table(table);
        d.note(format!(
"Nominal coverage {:.0}%. The realised value is itself measured with noise, so even exact intervals cover it less often than nominal; in brackets, the coverage with that noise allowed for.", summary.nominal_coverage * 100.0));
    }
    if let Some(g) = &report.growth_check {
        growth_check_section(&mut d, report, g);
    }
    d.heading("Targets");
    for t in &report.targets {
        d.note(format!(
            "[{}] {}: {}",
            if t.met { "met" } else { "not met" },
            t.target,
            t.figure
        ));
    }
    let methods: Vec<String> = report
        .methods
        .iter()
        .map(|m| format!("{}: {}", m.method.name(), m.description))
        .collect();
    d.list("Methods", &methods);
    warnings_and_cautions(&mut d, &report.warnings, &report.cautions);
    d
}

/// The backtest's narrowing check: each held feature's interval widths at its pilot, predicted
/// for the grown pilot, and given by it, round by round, with the summary.
fn growth_check_section(
    d: &mut Document,
    report: &crate::report::BacktestReport,
    g: &crate::report::GrowthSummary,
) {
    d.heading(format!(
        "The narrowing check: each held feature's pilot grown {} times and appraised again (interval widths, pp)",
        g.factor
    ));
    let mut t = Table::new(&[
        "round",
        "option",
        "pilot rows",
        "grown rows",
        "accuracy: now",
        "predicted",
        "realised",
        "unfairness: now",
        "predicted",
        "realised",
    ]);
    let pp = |w: Option<f64>| w.map_or("n/a".into(), |w| format!("{:.2}", w * 100.0));
    for r in &report.rounds {
        for o in &r.options {
            let Some(c) = &o.growth_check else { continue };
            t.row(vec![
                r.round.to_string(),
                o.option.clone(),
                thousands(c.pilot_rows),
                thousands(c.grown_rows),
                pp(c.accuracy.now),
                pp(c.accuracy.predicted),
                pp(c.accuracy.realised),
                pp(c.unfairness.now),
                pp(c.unfairness.predicted),
                pp(c.unfairness.realised),
            ]);
        }
    }
    d.table(t);
    for (name, w) in [
        ("accuracy gain", &g.accuracy),
        ("unfairness reduction", &g.unfairness),
    ] {
        let ratio = |x: Option<f64>| x.map_or("n/a".into(), |x| format!("{x:.2}"));
        d.note(format!(
            "{name}: predicted / realised width, median {} over {} checks ({} within 25%); had no narrowing been predicted, {}",
            ratio(w.median_ratio),
            w.checks,
            w.within_25_percent
                .map_or("n/a".into(), |s| format!("{:.0}%", s * 100.0)),
            ratio(w.median_ratio_unchanged)
        ));
    }
}

/// "0.8512 [0.8490, 0.8534]" for a point on a curve, with "!" when beyond the reliable reach.
fn curve_cell(p: Option<&CurvePoint>) -> String {
    match p {
        None => "n/a".into(),
        Some(p) => {
            let mark = if p.unreliable { " !" } else { "" };
            match (p.low, p.high) {
                (Some(l), Some(h)) => {
                    format!("{} [{}, {}]{mark}", number(p.value), number(l), number(h))
                }
                _ => format!("{}{mark}", number(p.value)),
            }
        }
    }
}

/// A realised gain with its interval, marked when significant at the backtest's level.
fn realised_cell(r: &crate::report::RealisedGain, significance: f64) -> String {
    signed_cell(
        r.mean,
        r.low,
        r.high,
        r.p_value.is_some_and(|p| p < significance),
    )
}

fn warnings_and_cautions(d: &mut Document, warnings: &[String], cautions: &[String]) {
    d.list("Warnings", warnings);
    d.list("Cautions", cautions);
}

fn plain_warnings_and_cautions(out: &mut String, warnings: &[String], cautions: &[String]) {
    let mut d = Document::new("");
    warnings_and_cautions(&mut d, warnings, cautions);
    out.push_str(&d.plain());
}

/// Rows of one group bought in two parts: one row per first part, the whole purchase's
/// expected intervals once it is measured, and the smallest effects they could tell from zero.
fn first_parts_table(d: &mut Document, o: &crate::report::OptionValue) {
    if o.first_parts.is_empty() {
        return;
    }
    if !super::first_parts_narrow(o) {
        d.note(
            "bought in two parts: a first part would not narrow the interval of the whole purchase (a change measured at this size is as uncertain as today's estimate)",
        );
        return;
    }
    d.note(format!(
        "bought in two parts: the interval of all {} rows' gains once the first part is bought and measured; each side keeps what a measured change has (from the group curve's last two anchors) and the rest narrows with the distance left to extrapolate",
        thousands(o.estimate.new_rows)
    ));
    let mut t = Table::new(&[
        "first part",
        "cost",
        "group training rows",
        "accuracy gain",
        "told from zero above",
        "unfairness reduction",
        "told from zero above",
    ]);
    for p in &o.first_parts {
        let (accuracy, accuracy_told) =
            expected_cells(o.estimate.accuracy_gain.mean, &p.accuracy_gain);
        let (fairness, fairness_told) = expected_cells(
            o.estimate.unfairness_reduction.mean,
            &p.unfairness_reduction,
        );
        t.row(vec![
            format!("{} rows", thousands(p.rows)),
            money(p.cost),
            thousands(p.group_training_rows),
            accuracy,
            accuracy_told,
            fairness,
            fairness_told,
        ]);
    }
    d.table(t);
}

/// An expected interval about `mean`, and the smallest effect it tells from zero.
fn expected_cells(mean: f64, e: &Option<crate::report::ExpectedGain>) -> (String, String) {
    match e {
        Some(e) => (
            format!("{mean:+.4} [{:+.4}, {:+.4}]", e.low, e.high),
            format!("{:.4}", e.detectable),
        ),
        None => ("not measured".into(), "n/a".into()),
    }
}

/// What a bigger pilot of a feature would be expected to tell: one row per larger pilot, the
/// full-size gains' expected intervals and the smallest effects it could tell from zero.
fn growth_table(d: &mut Document, o: &crate::report::OptionValue, g: &crate::report::PilotGrowth) {
    if g.sizes.is_empty() {
        return;
    }
    d.note(
        "a bigger pilot, expected about the same point: the part of each side measured on the pilot narrows as 1/√rows, the part the extrapolation adds also with the distance left to carry it",
    );
    let mut t = Table::new(&[
        "pilot rows",
        "training rows",
        "accuracy gain",
        "told from zero above",
        "unfairness reduction",
        "told from zero above",
    ]);
    let interval = expected_cells;
    for s in &g.sizes {
        let (accuracy, accuracy_told) = interval(o.estimate.accuracy_gain.mean, &s.accuracy_gain);
        let (fairness, fairness_told) = interval(
            o.estimate.unfairness_reduction.mean,
            &s.unfairness_reduction,
        );
        t.row(vec![
            thousands(s.rows),
            thousands(s.training_rows),
            accuracy,
            accuracy_told,
            fairness,
            fairness_told,
        ]);
    }
    d.table(t);
}
