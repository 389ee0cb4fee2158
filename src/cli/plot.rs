//! The plot: the semi-log course of one case as SVG — levels, the fitted line, the model
//! through the dose record, the projected plan, the threshold and the procedure time (for a
//! saturable drug the integrated Michaelis-Menten course) — told apart by dash pattern and
//! marker shape so it reads in black and white.

use plotters::prelude::*;

use crate::analysis::Analysis;
use crate::core::case::Case;
use crate::core::error::{Error, Result};
use crate::core::fit::Fit;
use crate::core::format::num;
use crate::core::projection::{self, Patient};
use crate::core::report::Report;
use crate::core::saturable_report::{self, SaturableReport};

/// Width and height of the drawing, in SVG pixels.
pub const SIZE: (u32, u32) = (960, 600);

/// The longest span drawn after the first dose, hours (five weeks).
const MAX_SPAN_H: f64 = 840.0;

/// The highest value the level axis can reach (any unit); above it `plot_svg` refuses.
pub const MAX_LEVEL_DRAWN: f64 = 1e300;

/// Samples along the time axis for each curve.
const SAMPLES: usize = 800;

/// The ids (SVG `<title>`-free legend labels) of the series, in the order drawn.
pub const LEGEND: [&str; 6] = [
    "model, doses given",
    "plan projected",
    "fitted line",
    "level in the fit",
    "level not in the fit",
    "threshold",
];

/// The legend label of the shaded haemodialysis sessions (marked, not modelled).
pub const SESSION_LEGEND: &str = "dialysis session (marked, not modelled)";

/// The height of the caution at the foot of the drawing, in SVG pixels.
const CAUTION_HEIGHT: u32 = 40;

/// The caution in two lines that fit the width: "CAUTION:" and its first sentences, then
/// the rest.
pub fn caution_lines(compartments: u8) -> [String; 2] {
    caution_lines_of(crate::core::report::caution_for(compartments).0)
}

/// `caution` after "CAUTION:" in two lines, broken after the sentence end nearest the middle.
fn caution_lines_of(caution: &str) -> [String; 2] {
    let text = format!("CAUTION: {caution}");
    let half = text.len() / 2;
    // Break after the sentence end nearest the middle.
    let cut = text
        .match_indices(". ")
        .map(|(i, _)| i + 1)
        .min_by_key(|i| i.abs_diff(half))
        .unwrap_or(text.len());
    let (a, b) = text.split_at(cut);
    [a.trim().to_string(), b.trim().to_string()]
}

fn draw_err(e: impl std::fmt::Display) -> Error {
    Error::invalid("plot", format!("cannot draw: {e}"))
}

/// Draw the plot of an analysis as an SVG document.
///
/// # Errors
/// The step that stopped the analysis (with `name` in front), or a drawing error.
pub fn plot_svg(a: &Analysis, name: &str) -> Result<String> {
    if let (None, Some(case), Some(s)) = (&a.stop, &a.case, &a.saturable) {
        return plot_saturable_svg(case, &s.report).map_err(|e| e.in_file(name));
    }
    let (case, r) = crate::cli::note::finished(a, name)?;
    match &a.fit {
        Some(fit) => plot_svg_from(case, fit, r).map_err(|e| e.in_file(name)),
        None => Err(Error::Fit("the analysis did not finish".into()).in_file(name)),
    }
}

/// Draw from a fit and report already made.
///
/// # Errors
/// A drawing error (none expected for finite figures).
pub fn plot_svg_from(case: &Case, fit: &Fit, r: &Report) -> Result<String> {
    let p = Patient::new(case, fit);
    let to = |x: f64| case.drug.scale.to_level(x);
    let u = case.drug.scale.unit.as_str();

    // The span: from the first dose to past every time of interest.
    let first = case.doses.first().map_or(0.0, |d| d.t);
    let mut last = case.levels.iter().map(|l| l.t).fold(first, f64::max);
    last = last.max(p.last_dose_end());
    if let Some(th) = &case.threshold {
        last = last.max(th.procedure_t.unwrap_or(last));
    }
    if let Some(t) = &r.threshold {
        last = last.max(case.clock.hours(&t.t0) + t.hours_from_t0);
    }
    if let Some(pl) = &case.plan {
        last = last.max(pl.start_t + 3.0 * pl.interval_h);
    }
    if let Some(s) = &r.advice.switch {
        last = last.max(case.clock.hours(&s.start_at));
    }
    // Every recorded session after the first dose is in view.
    for s in case.dialysis_sessions.iter().filter(|s| s.end() > first) {
        last = last.max(s.end());
    }
    let span = (last - first).clamp(1.0, MAX_SPAN_H);
    let (x0, x1) = (first - 0.03 * span, first + 1.05 * span);

    // Curves, in the level unit, sampled by the same core sampler as the screen's charts.
    let in_unit = |pts: Vec<(f64, f64)>| -> Vec<(f64, f64)> {
        pts.into_iter().map(|(t, c)| (t, to(c))).collect()
    };
    let recorded = in_unit(projection::course_mg_l(&p, None, first, x1, SAMPLES));
    let planned: Vec<(f64, f64)> = match (&case.plan, p.v()) {
        (Some(pl), Some(_)) => match projection::plan_doses_before(pl, x1).checked_sub(1) {
            Some(last) => in_unit(projection::course_mg_l(
                &p,
                Some((pl, last)),
                pl.start_t,
                x1,
                SAMPLES,
            )),
            None => Vec::new(),
        },
        _ => Vec::new(),
    };
    // The fitted line is straight on the log axis: its two ends draw it. A two-compartment
    // fit has no straight line (the model's own curve is the fit), so none is drawn.
    let window = &case.doses[fit.window_dose];
    let fitted_end = fit
        .used
        .iter()
        .map(|&i| case.levels[i].t)
        .fold(window.end(), f64::max);
    let line: Vec<(f64, f64)> = [window.end(), fitted_end]
        .into_iter()
        .filter(|_| fit.two.is_none())
        .map(|t| (t, to(fit.line_mg_l(t))))
        .collect();
    let used: Vec<(f64, f64)> = fit
        .used
        .iter()
        .map(|&i| (case.levels[i].t, case.levels[i].value))
        .collect();
    let unused: Vec<(f64, f64)> = case
        .levels
        .iter()
        .enumerate()
        .filter(|(i, _)| !fit.used.contains(i))
        .map(|(_, l)| (l.t, l.value))
        .collect();
    let threshold = case.threshold.as_ref().map(|t| t.below);

    // The level axis: a decade or so either side of the data, never below 1/10 000 of the top.
    let mut ys: Vec<f64> = case.levels.iter().map(|l| l.value).collect();
    ys.extend(recorded.iter().chain(&planned).map(|&(_, c)| c));
    ys.extend(threshold);
    let top = ys
        .iter()
        .copied()
        .filter(|y| y.is_finite())
        .fold(0.0, f64::max);
    let data_low = case
        .levels
        .iter()
        .map(|l| l.value)
        .chain(threshold)
        .fold(top, f64::min);
    let y = level_axis(top, data_low, u)?;
    let title = match (&case.patient.label, case.drug.name.as_str()) {
        (Some(l), "") => l.clone(),
        (Some(l), d) => format!("{l}: {d}"),
        (None, d) => d.to_string(),
    };
    // The SVG writer escapes markup; control characters, which XML does not allow at all,
    // are made visible here.
    let title = crate::core::text::printable(&title).into_owned();
    let caution = crate::core::report::caution_for(r.fit.compartments).0;
    draw_frame(case, caution, title, [x0, x1], y, u, |chart, keep| {
        let black = BLACK.stroke_width(2);
        chart
            .draw_series(LineSeries::new(keep(&recorded), black))
            .map_err(draw_err)?
            .label(LEGEND[0])
            .legend(move |(x, y)| PathElement::new([(x, y), (x + 30, y)], black));
        if !planned.is_empty() {
            let style = RGBColor(0, 70, 160).stroke_width(2);
            chart
                .draw_series(DashedLineSeries::new(keep(&planned), 12, 6, style))
                .map_err(draw_err)?
                .label(LEGEND[1])
                .legend(move |(x, y)| {
                    Rectangle::new([(x, y - 1), (x + 12, y + 1)], style.filled())
                });
        }
        if !line.is_empty() {
            let fit_style = RGBColor(160, 40, 0).stroke_width(2);
            chart
                .draw_series(DashedLineSeries::new(keep(&line), 4, 4, fit_style))
                .map_err(draw_err)?
                .label(LEGEND[2])
                .legend(move |(x, y)| {
                    Rectangle::new([(x, y - 1), (x + 4, y + 1)], fit_style.filled())
                });
        }
        chart
            .draw_series(
                keep(&used)
                    .into_iter()
                    .map(|pt| Circle::new(pt, 5, BLACK.filled())),
            )
            .map_err(draw_err)?
            .label(LEGEND[3])
            .legend(|(x, y)| Circle::new((x + 10, y), 5, BLACK.filled()));
        if !unused.is_empty() {
            chart
                .draw_series(
                    keep(&unused)
                        .into_iter()
                        .map(|pt| Cross::new(pt, 6, BLACK.stroke_width(2))),
                )
                .map_err(draw_err)?
                .label(LEGEND[4])
                .legend(|(x, y)| Cross::new((x + 10, y), 6, BLACK.stroke_width(2)));
        }
        Ok(())
    })
}

/// The legend of the saturable plot's levels: they are the deciding levels (adjusted for
/// albumin, or a free level over the free fraction, when the case has them).
pub const LEGEND_DECIDING: &str = "level (as it decides)";

/// The legend of the saturable plot's band: the edges of the model's 95 % range.
pub const LEGEND_BAND: &str = "95 % range of the model";

/// Draw the course of a drug with saturable (Michaelis-Menten) elimination: the integrated
/// model over the dose record and the plan (the core's `chart_course`), the deciding levels,
/// the threshold and the procedure, with the saturable caution at the foot.
///
/// # Errors
/// No volume (no weight: the course cannot be integrated), nothing above zero to draw, or a
/// drawing error.
pub fn plot_saturable_svg(case: &Case, r: &SaturableReport) -> Result<String> {
    if r.volume_l.is_none() {
        return Err(Error::invalid(
            "patient.weight_kg",
            "needed to draw the course of a drug with saturable elimination (the volume comes \
             from the weight); `ebb report` gives the figures without it",
        ));
    }
    let to = |x: f64| case.drug.scale.to_level(x);
    let u = case.drug.scale.unit.as_str();
    let [first, last] = saturable_report::chart_span(case, r);
    let (x0, x1) = (first - 0.02 * (last - first), last);
    let course = saturable_report::chart_course(case, r, [first, last], SAMPLES);
    let in_unit = |pts: Vec<(f64, f64)>| -> Vec<(f64, f64)> {
        pts.into_iter().map(|(t, c)| (t, to(c))).collect()
    };
    let (record, plan) = (in_unit(course.record), in_unit(course.plan));
    let band: Vec<Vec<(f64, f64)>> = course.band.into_iter().flatten().map(in_unit).collect();
    let levels: Vec<(f64, f64)> = r
        .readings
        .iter()
        .map(|x| (x.t, to(x.decision_mg_l)))
        .collect();
    let threshold = case.threshold.as_ref().map(|t| t.below);
    let top = record
        .iter()
        .chain(&plan)
        .chain(band.iter().flatten())
        .chain(&levels)
        .map(|p| p.1)
        .chain(threshold)
        .filter(|y| y.is_finite())
        .fold(0.0, f64::max);
    let low = levels
        .iter()
        .map(|p| p.1)
        .chain(threshold)
        .fold(top, f64::min);
    let y = level_axis(top, low, u)?;
    let title = match (&case.patient.label, case.drug.name.as_str()) {
        (Some(l), "") => l.clone(),
        (Some(l), d) => format!("{l}: {d}"),
        (None, d) => d.to_string(),
    };
    let title = format!(
        "{} (saturable elimination: Vmax {} mg/day, Km {} mg/L)",
        crate::core::text::printable(&title),
        num(r.vmax_mg_per_day),
        num(r.km_mg_l)
    );
    draw_frame(
        case,
        saturable_report::CAUTION,
        title,
        [x0, x1],
        y,
        u,
        |chart, keep| {
            let black = BLACK.stroke_width(2);
            let light = RGBColor(150, 150, 150).stroke_width(1);
            for (i, edge) in band.iter().enumerate() {
                let series = chart
                    .draw_series(LineSeries::new(keep(edge), light))
                    .map_err(draw_err)?;
                if i == 0 {
                    series
                        .label(LEGEND_BAND)
                        .legend(move |(x, y)| PathElement::new([(x, y), (x + 30, y)], light));
                }
            }
            chart
                .draw_series(LineSeries::new(keep(&record), black))
                .map_err(draw_err)?
                .label(LEGEND[0])
                .legend(move |(x, y)| PathElement::new([(x, y), (x + 30, y)], black));
            if !plan.is_empty() {
                let style = RGBColor(0, 70, 160).stroke_width(2);
                chart
                    .draw_series(DashedLineSeries::new(keep(&plan), 12, 6, style))
                    .map_err(draw_err)?
                    .label(LEGEND[1])
                    .legend(move |(x, y)| {
                        Rectangle::new([(x, y - 1), (x + 12, y + 1)], style.filled())
                    });
            }
            chart
                .draw_series(
                    keep(&levels)
                        .into_iter()
                        .map(|pt| Circle::new(pt, 5, BLACK.filled())),
                )
                .map_err(draw_err)?
                .label(LEGEND_DECIDING)
                .legend(|(x, y)| Circle::new((x + 10, y), 5, BLACK.filled()));
            Ok(())
        },
    )
}

/// The level axis for values up to `top` with the lowest data value `low`: a decade or so
/// either side of the data, never below 1/10 000 of the top, with headroom above for the
/// legend.
///
/// # Errors
/// Nothing above zero to draw, or a value too high to draw.
fn level_axis(top: f64, low: f64, u: &str) -> Result<[f64; 2]> {
    if top <= 0.0 {
        return Err(Error::invalid("plot", "no level above zero to draw"));
    }
    // The axis runs to 4 x the top; near the largest float that overflows and the drawing
    // would never finish. No real level comes near the bound.
    if top > MAX_LEVEL_DRAWN {
        return Err(Error::invalid(
            "plot",
            format!(
                "the highest value to draw (a level, the threshold or the model) is {} {u}; levels above {MAX_LEVEL_DRAWN:e} cannot be drawn, check the values",
                num(top)
            ),
        ));
    }
    Ok([(low / 3.0).max(top / 1e4), top * 4.0])
}

/// The chart both plots draw on: clock time across, the level on a log scale up.
type Chart<'a, 'b> = ChartContext<
    'a,
    SVGBackend<'b>,
    Cartesian2d<plotters::coord::types::RangedCoordf64, LogCoord<f64>>,
>;

/// Draw what every plot has — the caution at the foot, the title, the axes, the dialysis
/// sessions as shaded bands, the threshold, the procedure and the legend — around the curves
/// and levels `series` draws (given the chart and a filter that keeps the points in view).
fn draw_frame(
    case: &Case,
    caution: &str,
    title: String,
    [x0, x1]: [f64; 2],
    [y0, y1]: [f64; 2],
    u: &str,
    series: impl FnOnce(&mut Chart, &dyn Fn(&[(f64, f64)]) -> Vec<(f64, f64)>) -> Result<()>,
) -> Result<String> {
    let keep = |v: &[(f64, f64)]| -> Vec<(f64, f64)> {
        v.iter()
            .copied()
            .filter(|&(t, c)| c.is_finite() && c >= y0 && t >= x0 && t <= x1)
            .collect()
    };
    let clock = case.clock;
    let label_x = move |h: &f64| -> String {
        clock
            .at_minute(*h)
            .map_or(String::new(), |s| s.axis_label())
    };
    let threshold = case.threshold.as_ref().map(|t| t.below);
    let procedure = case.threshold.as_ref().and_then(|t| t.procedure_t);
    let mut svg = String::new();
    {
        let whole = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        whole.fill(&WHITE).map_err(draw_err)?;
        // The caution goes with the drawing wherever it is copied: two lines at the foot.
        let (root, foot) = whole.split_vertically(SIZE.1 - CAUTION_HEIGHT);
        let style = ("sans-serif", 13).into_font().color(&BLACK);
        for (i, line) in caution_lines_of(caution).iter().enumerate() {
            foot.draw(&Text::new(
                line.clone(),
                (14, 4 + 16 * i as i32),
                style.clone(),
            ))
            .map_err(draw_err)?;
        }
        let mut chart = ChartBuilder::on(&root)
            .caption(title, ("sans-serif", 20))
            .margin(12)
            .x_label_area_size(50)
            .y_label_area_size(70)
            .build_cartesian_2d(x0..x1, (y0..y1).log_scale())
            .map_err(draw_err)?;
        chart
            .configure_mesh()
            .x_labels(8)
            .y_labels(10)
            .x_label_formatter(&label_x)
            .y_label_formatter(&|y: &f64| num(*y))
            .x_desc("clock time")
            .y_desc(format!("level ({u}, log scale)"))
            .light_line_style(WHITE)
            .draw()
            .map_err(draw_err)?;

        // Haemodialysis sessions first, as shaded bands under the curves, each labelled.
        let band = RGBColor(200, 200, 200).mix(0.6);
        let bands: Vec<(usize, f64, f64)> = case
            .dialysis_sessions
            .iter()
            .map(|s| (s.row, s.t.max(x0), s.end().min(x1)))
            .filter(|(_, a, b)| a < b)
            .collect();
        if !bands.is_empty() {
            chart
                .draw_series(
                    bands
                        .iter()
                        .map(|&(_, a, b)| Rectangle::new([(a, y0), (b, y1)], band.filled())),
                )
                .map_err(draw_err)?
                .label(SESSION_LEGEND)
                .legend(move |(x, y)| Rectangle::new([(x, y - 5), (x + 16, y + 5)], band.filled()));
            let font = ("sans-serif", 12).into_font().color(&BLACK);
            chart
                .draw_series(bands.iter().map(|&(row, a, _)| {
                    Text::new(format!("dialysis {row}"), (a, y1 / 1.6), font.clone())
                }))
                .map_err(draw_err)?;
        }

        series(&mut chart, &keep)?;

        let grey = RGBColor(90, 90, 90).stroke_width(2);
        if let Some(b) = threshold.filter(|b| *b >= y0) {
            chart
                .draw_series(DashedLineSeries::new([(x0, b), (x1, b)], 16, 4, grey))
                .map_err(draw_err)?
                .label(format!("{} ({} {u})", LEGEND[5], num(b)))
                .legend(move |(x, y)| Rectangle::new([(x, y - 1), (x + 16, y + 1)], grey.filled()));
        }
        if let Some(tp) = procedure.filter(|t| *t >= x0 && *t <= x1) {
            chart
                .draw_series(DashedLineSeries::new([(tp, y0), (tp, y1)], 2, 5, grey))
                .map_err(draw_err)?
                .label("procedure")
                .legend(move |(x, y)| {
                    Rectangle::new([(x + 8, y - 6), (x + 10, y + 6)], grey.filled())
                });
        }
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperRight)
            .background_style(WHITE.mix(0.9))
            .border_style(BLACK)
            .draw()
            .map_err(draw_err)?;
        whole.present().map_err(draw_err)?;
    }
    Ok(svg)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn control_characters_in_the_title_leave_valid_xml() {
        let mut case = crate::core::casefile::CaseFile::parse(crate::demo::DEMO_CASE)
            .unwrap()
            .validate()
            .unwrap();
        // Built by a program, not loaded: loading refuses such a label.
        case.patient.label = Some("Bed\u{1b}[2J\u{1} <4> & \"x\"".into());
        let fit = crate::core::fit::fit(&case).unwrap();
        let r = crate::core::report::build_from_fit(&case, &fit).unwrap();
        let svg = plot_svg_from(&case, &fit, &r).unwrap();
        let doc = roxmltree::Document::parse(&svg).unwrap();
        assert!(doc.descendants().any(
            |n| n.text().map(str::trim) == Some("Bed\\u{1b}[2J\\u{1} <4> & \"x\": gentamicin")
        ));
    }
}
