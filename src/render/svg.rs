//! Charts as self-contained SVG, drawn from a report (never recomputed): learning curves with
//! their anchors, fitted lines, bands, and the extrapolated part dashed.

use std::fmt::Write as _;

use super::document::escape;

use crate::report::{
    AnchorPoint, CurvePoint, CurveRecord, CurveSchedule, CurvesReport, DisparityCurve,
    GroupSummary, Inputs, OptionValue, ReferenceGroup, Today,
};

const PALETTE: [&str; 6] = [
    "#1f5fa8", "#c8553d", "#2a9d8f", "#8e6bbf", "#b08d1a", "#555555",
];
const PANEL_WIDTH: f64 = 470.0;
const PANEL_HEIGHT: f64 = 310.0;
const MARGIN_LEFT: f64 = 62.0;
const MARGIN_RIGHT: f64 = 16.0;
const MARGIN_TOP: f64 = 64.0;
const MARGIN_BOTTOM: f64 = 46.0;

/// The charts' text and line styles.
const STYLE: &str = "<style>.title{font-size:14px;font-weight:bold;fill:#222}.tick{font-size:10px;fill:#444}\
     .axis{font-size:11px;fill:#333}.legend{font-size:11px;fill:#222}.note{font-size:10px;fill:#777}\
     .grid{stroke:#e6e6e6;stroke-width:1}.marker{stroke:#888;stroke-width:1;stroke-dasharray:3 3}</style>\n";

/// The start of an SVG document of `width` × `height`: its styles and background.
fn svg_opening(width: f64, height: f64) -> String {
    format!(
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{width:.0}\" height=\"{height:.0}\" viewBox=\"0 0 {width:.0} {height:.0}\" font-family=\"Helvetica, Arial, sans-serif\">\n{STYLE}<rect width=\"100%\" height=\"100%\" fill=\"#fafafa\"/>\n"
    )
}

/// One line on a panel.
struct Series<'a> {
    name: String,
    /// Colour index: the group's place in the report, so a group keeps its colour everywhere.
    colour: usize,
    anchors: &'a [AnchorPoint],
    grid: &'a [CurvePoint],
    /// A level to draw across the panel (the same measure on the labels).
    reference_level: Option<f64>,
}

struct Panel<'a> {
    title: String,
    y_label: String,
    series: Vec<Series<'a>>,
}

fn size_label(n: f64) -> String {
    if n >= 1e6 {
        format!("{}M", n / 1e6)
    } else if n >= 1e3 {
        format!("{}k", n / 1e3)
    } else {
        format!("{n}")
    }
}

/// Round tick step for a span, aiming at about five ticks.
/// A round step between axis ticks: about five of them over `span`.
pub(super) fn tick_step(span: f64) -> f64 {
    let raw = span / 5.0;
    let power = 10f64.powf(raw.log10().floor());
    [1.0, 2.0, 2.5, 5.0, 10.0]
        .iter()
        .map(|m| m * power)
        .find(|&s| s >= raw)
        .unwrap_or(10.0 * power)
}

/// Draws one panel at (`left`, `top`), with a dashed vertical line at each of `markers` (a
/// size and its label) that falls inside the plot.
fn draw_panel(out: &mut String, panel: &Panel, left: f64, top: f64, markers: &[(f64, &str)]) {
    let (plot_left, plot_top) = (left + MARGIN_LEFT, top + MARGIN_TOP);
    let plot_width = PANEL_WIDTH - MARGIN_LEFT - MARGIN_RIGHT;
    let plot_height = PANEL_HEIGHT - MARGIN_TOP - MARGIN_BOTTOM;

    let mut xs: Vec<f64> = Vec::new();
    let mut ys: Vec<f64> = Vec::new();
    for s in &panel.series {
        for a in s.anchors {
            xs.push(a.size as f64);
            ys.extend([a.min, a.max]);
        }
        for p in s.grid {
            xs.push(p.size);
            ys.push(p.value);
            ys.extend(p.low.iter().chain(p.high.iter()));
        }
        ys.extend(s.reference_level);
    }
    let _ = writeln!(
        out,
        r#"<text x="{:.1}" y="{:.1}" class="title">{}</text>"#,
        left + 8.0,
        top + 20.0,
        escape(&panel.title)
    );
    if xs.is_empty() || ys.is_empty() {
        let _ = writeln!(
            out,
            r#"<text x="{:.1}" y="{:.1}" class="note">no curve could be fitted</text>"#,
            plot_left + 10.0,
            plot_top + plot_height / 2.0
        );
        return;
    }
    let x_min = xs
        .iter()
        .copied()
        .fold(f64::INFINITY, f64::min)
        .max(1.0)
        .log10();
    let x_max = xs
        .iter()
        .copied()
        .fold(f64::NEG_INFINITY, f64::max)
        .log10()
        .max(x_min + 0.1);
    // A little room right of the last size, so a point drawn there shows whole.
    let x_max = x_max + (x_max - x_min) * 0.02;
    let mut y_min = ys.iter().copied().fold(f64::INFINITY, f64::min);
    let mut y_max = ys.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if y_max - y_min < 1e-6 {
        y_min -= 0.01;
        y_max += 0.01;
    }
    let pad = (y_max - y_min) * 0.06;
    let (y_min, y_max) = (y_min - pad, y_max + pad);
    let px = |n: f64| plot_left + (n.max(1.0).log10() - x_min) / (x_max - x_min) * plot_width;
    let py = |y: f64| plot_top + (y_max - y) / (y_max - y_min) * plot_height;

    let _ = writeln!(
        out,
        r##"<rect x="{plot_left:.1}" y="{plot_top:.1}" width="{plot_width:.1}" height="{plot_height:.1}" fill="#ffffff" stroke="#999999"/>"##
    );
    // Axes: 1-2-5 ticks on the log size axis, round steps on the value axis.
    let mut decade = 10f64.powf(x_min.floor());
    while decade <= 10f64.powf(x_max) {
        for m in [1.0, 2.0, 5.0] {
            let n = decade * m;
            let l = n.log10();
            if l >= x_min - 1e-9 && l <= x_max + 1e-9 {
                let x = px(n);
                let _ = writeln!(
                    out,
                    r#"<line x1="{x:.1}" y1="{plot_top:.1}" x2="{x:.1}" y2="{:.1}" class="grid"/><text x="{x:.1}" y="{:.1}" class="tick" text-anchor="middle">{}</text>"#,
                    plot_top + plot_height,
                    plot_top + plot_height + 14.0,
                    size_label(n)
                );
            }
        }
        decade *= 10.0;
    }
    let step = tick_step(y_max - y_min);
    let mut y = (y_min / step).ceil() * step;
    while y <= y_max + 1e-12 {
        let yy = py(y);
        let _ = writeln!(
            out,
            r#"<line x1="{plot_left:.1}" y1="{yy:.1}" x2="{:.1}" y2="{yy:.1}" class="grid"/><text x="{:.1}" y="{:.1}" class="tick" text-anchor="end">{}</text>"#,
            plot_left + plot_width,
            plot_left - 5.0,
            yy + 4.0,
            format_tick(y, step)
        );
        y += step;
    }
    let _ = writeln!(
        out,
        r#"<text x="{:.1}" y="{:.1}" class="axis" text-anchor="middle">training rows (log scale)</text>"#,
        plot_left + plot_width / 2.0,
        top + PANEL_HEIGHT - 10.0
    );
    let _ = writeln!(
        out,
        r#"<text x="{:.1}" y="{:.1}" class="axis" text-anchor="middle" transform="rotate(-90 {:.1} {:.1})">{}</text>"#,
        left + 16.0,
        plot_top + plot_height / 2.0,
        left + 16.0,
        plot_top + plot_height / 2.0,
        escape(&panel.y_label)
    );
    for &(n, label) in markers {
        if n.log10() <= x_max + 1e-9 && n.log10() >= x_min {
            let x = px(n);
            // Labels go left of the line, inside the plot.
            let _ = writeln!(
                out,
                r#"<line x1="{x:.1}" y1="{plot_top:.1}" x2="{x:.1}" y2="{:.1}" class="marker"/><text x="{:.1}" y="{:.1}" class="note" text-anchor="end">{label}</text>"#,
                plot_top + plot_height,
                x - 3.0,
                plot_top + 11.0
            );
        }
    }

    let mut legend_x = left + 10.0;
    let mut legend_y = top + 36.0;
    for s in &panel.series {
        let color = PALETTE[s.colour % PALETTE.len()];
        // Band.
        let banded: Vec<&CurvePoint> = s
            .grid
            .iter()
            .filter(|p| p.low.is_some() && p.high.is_some())
            .collect();
        if banded.len() > 1 {
            let mut points = String::new();
            for p in &banded {
                let _ = write!(
                    points,
                    "{:.1},{:.1} ",
                    px(p.size),
                    py(p.high.unwrap_or(p.value))
                );
            }
            for p in banded.iter().rev() {
                let _ = write!(
                    points,
                    "{:.1},{:.1} ",
                    px(p.size),
                    py(p.low.unwrap_or(p.value))
                );
            }
            let _ = writeln!(
                out,
                r#"<polygon points="{}" fill="{color}" fill-opacity="0.15" stroke="none"/>"#,
                points.trim_end()
            );
        }
        // Fitted line: solid over the measured sizes, dashed where extrapolated.
        let path = |points: &[&CurvePoint]| -> String {
            points
                .iter()
                .map(|p| format!("{:.1},{:.1}", px(p.size), py(p.value)))
                .collect::<Vec<_>>()
                .join(" ")
        };
        let fitted: Vec<&CurvePoint> = s.grid.iter().filter(|p| !p.extrapolated).collect();
        let mut beyond: Vec<&CurvePoint> = s.grid.iter().filter(|p| p.extrapolated).collect();
        if let (Some(last), false) = (fitted.last(), beyond.is_empty()) {
            beyond.insert(0, last);
        }
        if fitted.len() > 1 {
            let _ = writeln!(
                out,
                r#"<polyline points="{}" fill="none" stroke="{color}" stroke-width="2"/>"#,
                path(&fitted)
            );
        }
        if beyond.len() > 1 {
            let _ = writeln!(
                out,
                r#"<polyline points="{}" fill="none" stroke="{color}" stroke-width="2" stroke-dasharray="6 4"/>"#,
                path(&beyond)
            );
        }
        if let Some(level) = s.reference_level {
            let _ = writeln!(
                out,
                r#"<line x1="{plot_left:.1}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="{color}" stroke-width="1" stroke-dasharray="2 3"/>"#,
                py(level),
                plot_left + plot_width,
                py(level)
            );
        }
        // Anchors: mean and range over repeats.
        for a in s.anchors {
            let x = px(a.size as f64);
            let _ = writeln!(
                out,
                r#"<line x1="{x:.1}" y1="{:.1}" x2="{x:.1}" y2="{:.1}" stroke="{color}" stroke-width="1"/><circle cx="{x:.1}" cy="{:.1}" r="3" fill="{color}"/>"#,
                py(a.min),
                py(a.max),
                py(a.mean)
            );
        }
        // Legend: under the title, above the plot, wrapping to a second row.
        let entry_width = 30.0 + 6.2 * s.name.chars().count() as f64;
        if legend_x + entry_width > left + PANEL_WIDTH - MARGIN_RIGHT && legend_x > left + 10.0 {
            legend_x = left + 10.0;
            legend_y += 14.0;
        }
        let (lx, ly) = (legend_x, legend_y);
        legend_x += entry_width;
        let _ = writeln!(
            out,
            r#"<line x1="{lx:.1}" y1="{ly:.1}" x2="{:.1}" y2="{ly:.1}" stroke="{color}" stroke-width="2"/><text x="{:.1}" y="{:.1}" class="legend">{}</text>"#,
            lx + 18.0,
            lx + 23.0,
            ly + 4.0,
            escape(&s.name)
        );
    }
}

pub(super) fn format_tick(y: f64, step: f64) -> String {
    let y = if y.abs() < step * 1e-6 { 0.0 } else { y };
    let decimals = (-step.log10().floor()).max(0.0) as usize
        + usize::from(step.log10().fract().abs() > 1e-9 && step < 1.0);
    format!("{:.*}", decimals.min(4), y)
}

/// The learning curves of a report as one SVG document: accuracy, each rate by group, and the
/// statistical parity and equal opportunity differences against the labels' own level.
pub fn curves_svg(report: &CurvesReport) -> String {
    curve_chart(&CurveSet {
        inputs: &report.inputs,
        schedule: &report.schedule,
        groups: &report.groups,
        reference: &report.reference,
        curves: &report.curves,
        disparities: &report.disparities,
    })
}

/// What a learning-curve chart is drawn from (a curves report, or the curves inside a plan).
pub struct CurveSet<'a> {
    /// The run's inputs (for the chart's caption).
    pub inputs: &'a Inputs,
    /// The anchor schedule.
    pub schedule: &'a CurveSchedule,
    /// The groups, in report order.
    pub groups: &'a [GroupSummary],
    /// The reference group.
    pub reference: &'a ReferenceGroup,
    /// The fitted curves.
    pub curves: &'a [CurveRecord],
    /// The disparity curves.
    pub disparities: &'a [DisparityCurve],
}

/// The learning-curve chart of a [`CurveSet`].
pub fn curve_chart(set: &CurveSet) -> String {
    let report = set;
    let colour_of = |group: Option<&str>| {
        group
            .and_then(|g| report.groups.iter().position(|x| x.name == g))
            .unwrap_or(0)
    };
    let quantity_panel = |quantity: &str, title: &str| Panel {
        title: title.into(),
        y_label: quantity.into(),
        series: report
            .curves
            .iter()
            .filter(|c| c.quantity == quantity)
            .map(|c| Series {
                colour: colour_of(c.group.as_deref()),
                name: c.group.clone().unwrap_or_else(|| "all rows".into()),
                anchors: &c.anchors,
                grid: &c.grid,
                reference_level: None,
            })
            .collect(),
    };
    let disparity_panel = |measure: &str, title: String| Panel {
        title,
        y_label: measure.into(),
        series: report
            .disparities
            .iter()
            .filter(|d| d.measure == measure)
            .map(|d| Series {
                colour: colour_of(Some(&d.group)),
                name: d.group.clone(),
                anchors: &d.anchors,
                grid: &d.grid,
                reference_level: d.in_labels,
            })
            .collect(),
    };
    let reference = &report.reference.name;
    let panels = [
        quantity_panel("accuracy", "Accuracy"),
        quantity_panel("selection rate", "Selection rate by group"),
        quantity_panel("true positive rate", "True positive rate by group"),
        quantity_panel("false positive rate", "False positive rate by group"),
        disparity_panel(
            "statistical parity difference",
            format!("Statistical parity difference vs {reference} (dotted: in labels)"),
        ),
        disparity_panel(
            "equal opportunity difference",
            format!("Equal opportunity difference vs {reference}"),
        ),
    ];
    let columns = 2.0;
    let rows = (panels.len() as f64 / columns).ceil();
    let width = PANEL_WIDTH * columns;
    let height = PANEL_HEIGHT * rows + 56.0;
    let mut out = svg_opening(width, height);
    let _ = writeln!(
        out,
        r#"<text x="10" y="22" class="title">Learning curves: {} ({} model, {} repeats)</text>"#,
        escape(&report.inputs.data.path),
        escape(&report.inputs.model),
        report.schedule.repeats
    );
    let _ = writeln!(
        out,
        r#"<text x="10" y="40" class="note">dots: mean at each measured size, bars: range over repeats; line: chosen fit, dashed where extrapolated; band: {:.0}% bootstrap over repeats</text>"#,
        report.inputs.confidence * 100.0
    );
    let largest = *report.schedule.sizes.last().unwrap_or(&1) as f64;
    for (i, panel) in panels.iter().enumerate() {
        let left = (i % 2) as f64 * PANEL_WIDTH;
        let top = 48.0 + (i / 2) as f64 * PANEL_HEIGHT;
        // Where the data ends, and where extrapolation stops being reliable.
        let markers = [
            (largest, "all rows now"),
            (report.schedule.reliable_up_to, "4x: unreliable beyond"),
        ];
        draw_panel(&mut out, panel, left, top, &markers);
    }
    out.push_str("</svg>\n");
    out
}

/// A feature's pilot curves as one SVG of two panels: accuracy without and with the candidate
/// (dashed where extrapolated, out to today's training rows), with today's accuracy and the
/// option's estimate at today's rows (its interval as a bar); and the fairness measure the
/// utility counts, per compared group, without and with. Empty where the pilot has no curves.
pub fn pilot_curves_svg<'a>(
    option: &'a OptionValue,
    today: &Today,
    reference: &str,
    confidence: f64,
) -> String {
    let Some(pilot) = &option.pilot else {
        return String::new();
    };
    let Some(curves) = &pilot.curves else {
        return String::new();
    };
    let (without_colour, with_colour, today_colour) = (5, 0, 1);
    let today_size = today.training_rows;
    let point = |mean: f64, low: f64, high: f64| AnchorPoint {
        size: today_size,
        mean,
        std_dev: None,
        min: low,
        max: high,
        repeats: 0,
    };
    let now = [point(today.accuracy, today.accuracy, today.accuracy)];
    let gain = &option.estimate.accuracy_gain;
    let estimate: Vec<AnchorPoint> = gain
        .is_measured()
        .then(|| {
            point(
                today.accuracy + gain.mean,
                today.accuracy + gain.low.unwrap_or(gain.mean),
                today.accuracy + gain.high.unwrap_or(gain.mean),
            )
        })
        .into_iter()
        .collect();
    let column = option.target.as_deref().unwrap_or(&option.name);
    let curve = |name: String, colour: usize, c: &'a CurveRecord| Series {
        name,
        colour,
        anchors: &c.anchors,
        grid: &c.grid,
        reference_level: None,
    };
    let mut accuracy = vec![
        curve(
            "pilot without".into(),
            without_colour,
            &curves.accuracy_without,
        ),
        curve(
            format!("pilot with '{column}'"),
            with_colour,
            &curves.accuracy_with,
        ),
        Series {
            name: "today".into(),
            colour: today_colour,
            anchors: &now,
            grid: &[],
            reference_level: None,
        },
    ];
    if !estimate.is_empty() {
        accuracy.push(Series {
            name: format!("today + '{column}' (estimate)"),
            colour: 2,
            anchors: &estimate,
            grid: &[],
            reference_level: None,
        });
    }
    let several = curves.disparity_with.len() > 1;
    let arm = |label: &str, group: &str| {
        if several {
            format!("{label}, '{group}'")
        } else {
            label.to_string()
        }
    };
    let mut disparity = Vec::new();
    for (curves, label, colour) in [
        (&curves.disparity_without, "pilot without", without_colour),
        (&curves.disparity_with, "pilot with", with_colour),
    ] {
        for (k, d) in curves.iter().enumerate() {
            disparity.push(Series {
                name: arm(label, &d.group),
                colour: colour + 3 * k,
                anchors: &d.anchors,
                grid: &d.grid,
                reference_level: None,
            });
        }
    }
    let measure = curves
        .disparity_with
        .first()
        .map_or("fairness measure", |d| d.measure.as_str());
    let panels = [
        Panel {
            title: format!("Accuracy on the pilot of '{}'", option.name),
            y_label: "accuracy".into(),
            series: accuracy,
        },
        Panel {
            title: format!("{} vs {reference} on the pilot", capitalised(measure)),
            y_label: measure.into(),
            series: disparity,
        },
    ];
    let pilot_top = curves
        .accuracy_with
        .anchors
        .last()
        .map_or(pilot.training_rows, |a| a.size) as f64;
    let markers = [
        (today_size as f64, "today's rows"),
        (pilot_top, "pilot's rows"),
    ];
    let width = PANEL_WIDTH * 2.0;
    let height = PANEL_HEIGHT + 30.0;
    let mut out = svg_opening(width, height);
    let _ = writeln!(
        out,
        r#"<text x="10" y="18" class="note">dots: mean at each pilot size, bars: range over repeats; dashed: the pilot's curve extrapolated; at today's rows, the estimate's bar is its {:.0}% interval (today's curve plus the pilot's fitted difference)</text>"#,
        confidence * 100.0
    );
    for (i, panel) in panels.iter().enumerate() {
        draw_panel(&mut out, panel, i as f64 * PANEL_WIDTH, 24.0, &markers);
    }
    out.push_str("</svg>\n");
    out
}

/// The text with its first letter in capitals.
fn capitalised(text: &str) -> String {
    let mut chars = text.chars();
    chars.next().map_or_else(String::new, |first| {
        first.to_uppercase().chain(chars).collect()
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tick_steps_are_round() {
        assert_eq!(tick_step(1.0), 0.2);
        assert_eq!(tick_step(0.05), 0.01);
        assert_eq!(size_label(5000.0), "5k");
        assert_eq!(escape("a<b & c"), "a&lt;b &amp; c");
    }
}
