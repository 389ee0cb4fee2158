//! A semi-log concentration-time chart: ln of concentration up the side, labelled in
//! concentration; clock times along the bottom; curves, marked points and guide lines.

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::style::{Color, Modifier, Style};
use ratatui::symbols::Marker;
use ratatui::text::{Line, Span};
use ratatui::widgets::canvas::{Canvas, Line as CanvasLine, Points};
use ratatui::widgets::{Paragraph, Widget};

use crate::core::clock::{minute_of_day, Clock};
use crate::core::report::num;
use crate::tui::strings;

/// What a curve shows (it decides the stroke and colour).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CurveRole {
    /// The model through the recorded doses (solid).
    Model,
    /// The fitted log-linear line (dotted).
    Fitted,
    /// The projected course of the plan (solid).
    Plan,
    /// An edge of the model's 95 % band (dotted, dim).
    Band,
}

/// A curve in (hours on the case axis, level in the case's unit).
#[derive(Debug, Clone, PartialEq)]
pub struct Curve {
    /// What it shows.
    pub role: CurveRole,
    /// The points, in time order.
    pub points: Vec<(f64, f64)>,
}

/// What a marked point is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MarkKind {
    /// A level in the fit.
    InFit,
    /// A level marked for use but outside the fitted interval.
    NotInFit,
    /// A level the user left out of the fit.
    LeftOut,
    /// The n-th half-life of the washout.
    HalfLife(u32),
    /// The moment the level reaches the threshold.
    Reached,
    /// The earliest start of the next agent (`[switch]`).
    SwitchStart,
}

/// A marked point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Mark {
    /// Hours on the case axis.
    pub t: f64,
    /// Level in the case's unit.
    pub value: f64,
    /// What it is.
    pub kind: MarkKind,
}

/// What a horizontal guide line stands for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum GuideRole {
    /// The threshold the level must fall below.
    Threshold,
    /// The highest acceptable trough.
    TroughTarget,
}

/// A horizontal guide line.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Guide {
    /// Level in the case's unit.
    pub value: f64,
    /// What it stands for.
    pub role: GuideRole,
}

/// Everything one chart shows; plain data, built from the core's figures.
#[derive(Debug, Clone, PartialEq)]
pub struct ChartData {
    /// Turns hours on the axis into clock times for the labels.
    pub clock: Clock,
    /// The time span shown, hours on the axis.
    pub x: [f64; 2],
    /// Curves, drawn in order.
    pub curves: Vec<Curve>,
    /// Marked points, drawn over the curves.
    pub marks: Vec<Mark>,
    /// A horizontal guide line.
    pub guide: Option<Guide>,
    /// A vertical line at a time (the procedure), hours on the axis.
    pub vline: Option<f64>,
    /// Spans of time shaded behind the curves (haemodialysis sessions), hours on the axis.
    pub bands: Vec<[f64; 2]>,
}

/// The chart widget: data plus the unit for the legend.
pub struct SemiLogChart<'a> {
    /// What to draw.
    pub data: &'a ChartData,
    /// The level unit, for the legend.
    pub unit: &'a str,
}

fn curve_style(role: CurveRole) -> Style {
    match role {
        CurveRole::Model => Style::new().fg(Color::Cyan),
        CurveRole::Fitted => Style::new().fg(Color::Yellow),
        CurveRole::Plan => Style::new().fg(Color::Green),
        CurveRole::Band => Style::new().fg(Color::Blue),
    }
}

fn band_style() -> Style {
    Style::new().fg(Color::DarkGray)
}

fn guide_style(role: GuideRole) -> Style {
    match role {
        GuideRole::Threshold => Style::new().fg(Color::Red),
        GuideRole::TroughTarget => Style::new().fg(Color::Magenta),
    }
}

/// The symbol and style of a marked point.
pub fn mark_symbol(kind: MarkKind) -> (String, Style) {
    match kind {
        MarkKind::InFit => (
            strings::MARK_IN_FIT.into(),
            Style::new().fg(Color::White).add_modifier(Modifier::BOLD),
        ),
        MarkKind::NotInFit => (
            strings::MARK_NOT_IN_FIT.into(),
            Style::new().fg(Color::White),
        ),
        MarkKind::LeftOut => (
            strings::MARK_LEFT_OUT.into(),
            Style::new().fg(Color::DarkGray),
        ),
        MarkKind::HalfLife(n) => (
            if n < 10 { n.to_string() } else { "+".into() },
            Style::new().fg(Color::White).add_modifier(Modifier::BOLD),
        ),
        MarkKind::Reached => (
            strings::MARK_REACHED.into(),
            Style::new().fg(Color::Red).add_modifier(Modifier::BOLD),
        ),
        MarkKind::SwitchStart => (
            strings::MARK_SWITCH.into(),
            Style::new().fg(Color::Magenta).add_modifier(Modifier::BOLD),
        ),
    }
}

/// 1-2-5 values in [lo, hi], with the "rank" deciding which are labelled first.
fn nice_ticks(lo: f64, hi: f64) -> Vec<(f64, u8)> {
    let mut out = Vec::new();
    let (e0, e1) = (lo.log10().floor() as i32 - 1, hi.log10().ceil() as i32 + 1);
    for e in e0..=e1 {
        for (m, rank) in [(1.0, 0u8), (5.0, 1), (2.0, 2)] {
            let v = m * 10f64.powi(e);
            if v >= lo * (1.0 - 1e-9) && v <= hi * (1.0 + 1e-9) {
                out.push((v, rank));
            }
        }
    }
    out
}

/// The largest 1-2-5 value at or below `x`, and the smallest at or above it.
fn nice_floor(x: f64) -> f64 {
    let e = x.log10().floor();
    let base = 10f64.powf(e);
    let m = x / base;
    let f = if m >= 5.0 {
        5.0
    } else if m >= 2.0 {
        2.0
    } else {
        1.0
    };
    f * base
}

fn nice_ceil(x: f64) -> f64 {
    let e = x.log10().floor();
    let base = 10f64.powf(e);
    let m = x / base;
    let f = if m <= 1.0 + 1e-9 {
        1.0
    } else if m <= 2.0 {
        2.0
    } else if m <= 5.0 {
        5.0
    } else {
        10.0
    };
    f * base
}

/// Steps for time labels, in hours.
const TIME_STEPS: [f64; 12] = [
    1.0, 2.0, 3.0, 4.0, 6.0, 8.0, 12.0, 24.0, 48.0, 72.0, 168.0, 336.0,
];

struct Frame {
    plot: Rect,
    x: [f64; 2],
    y: [f64; 2],
}

impl Frame {
    /// The cell column of time `t`, matching the braille grid of the canvas.
    fn col(&self, t: f64) -> Option<u16> {
        let w = f64::from(self.plot.width);
        let px = ((t - self.x[0]) * (w * 2.0 - 1.0) / (self.x[1] - self.x[0])).round();
        (px >= 0.0 && px < w * 2.0).then(|| self.plot.x + (px as u16) / 2)
    }

    /// The cell row of level `v`.
    fn row(&self, v: f64) -> Option<u16> {
        if !(v.is_finite() && v > 0.0) {
            return None;
        }
        let h = f64::from(self.plot.height);
        let py = ((self.y[1] - v.ln()) * (h * 4.0 - 1.0) / (self.y[1] - self.y[0])).round();
        (py >= 0.0 && py < h * 4.0).then(|| self.plot.y + (py as u16) / 4)
    }
}

impl SemiLogChart<'_> {
    fn y_range(&self) -> Option<[f64; 2]> {
        let d = self.data;
        let mut vals: Vec<f64> = d
            .curves
            .iter()
            .flat_map(|c| c.points.iter().map(|p| p.1))
            .chain(d.marks.iter().map(|m| m.value))
            .chain(d.guide.map(|g| g.value))
            .filter(|v| v.is_finite() && *v > 0.0)
            .collect();
        vals.sort_by(f64::total_cmp);
        let hi = *vals.last()?;
        // Keep the interesting part: at most four decades below the top, but every mark and
        // guide line stays in view.
        let floor = hi / 1.0e4;
        let lo_marks = d
            .marks
            .iter()
            .map(|m| m.value)
            .chain(d.guide.map(|g| g.value))
            .filter(|v| v.is_finite() && *v > 0.0)
            .fold(f64::INFINITY, f64::min);
        let lo = vals
            .iter()
            .copied()
            .find(|v| *v >= floor)
            .unwrap_or(hi)
            .min(lo_marks);
        let (mut lo, mut hi) = (lo, hi);
        if hi / lo < 4.0 {
            let mid = (hi * lo).sqrt();
            lo = mid / 2.0;
            hi = mid * 2.0;
        }
        let (lo, hi) = (nice_floor(lo / 1.05), nice_ceil(hi * 1.05));
        (lo.is_finite() && hi.is_finite() && hi > lo && lo > 0.0).then_some([lo, hi])
    }

    fn time_labels(&self, f: &Frame) -> Vec<(u16, String)> {
        let width = usize::from(f.plot.width);
        let span = f.x[1] - f.x[0];
        let clock = self.data.clock;
        let Some(start) = clock.at_minute(f.x[0]) else {
            return Vec::new();
        };
        let last = TIME_STEPS.len() - 1;
        for (si, step) in TIME_STEPS.iter().copied().enumerate() {
            // (with the weekday, label width)
            let formats: &[(bool, usize)] = if step >= 24.0 {
                &[(true, 6)]
            } else {
                &[(true, 9), (false, 5)]
            };
            for &(long, len) in formats {
                let count = (span / step).floor() as usize + 1;
                if count * (len + 2) > width && si < last {
                    continue;
                }
                let step_min = (step * 60.0) as u32;
                let m = minute_of_day(&start);
                let offset = if step <= 24.0 {
                    (step_min - m % step_min) % step_min
                } else {
                    (1440 - m % 1440) % 1440
                };
                let mut out = Vec::new();
                let mut t = f.x[0] + f64::from(offset) / 60.0;
                while t <= f.x[1] {
                    if let (Some(c), Some(s)) = (f.col(t), clock.at_minute(t)) {
                        let midnight = minute_of_day(&s) == 0;
                        // Days apart: the weekday and day; weeks apart, the day and month
                        // (a weekday and a day of the month repeat from month to month).
                        let fmt = if step > 24.0 * 7.0 - 1e-9 {
                            "%-d %b"
                        } else if step >= 24.0 || (!long && midnight) {
                            "%a %-d"
                        } else if long {
                            "%a %H:%M"
                        } else {
                            "%H:%M"
                        };
                        out.push((c, s.wall().format(fmt).to_string()));
                    }
                    t += step;
                }
                return out;
            }
        }
        Vec::new()
    }

    /// The columns the bands cover (each band at least one column), or `None` when no band
    /// is in view. Without a frame, whether any band overlaps the time span.
    fn band_columns(&self, f: Option<&Frame>) -> Option<Vec<u16>> {
        let d = self.data;
        let mut cols = Vec::new();
        for &[a, b] in &d.bands {
            let (a, b) = (a.max(d.x[0]), b.min(d.x[1]));
            if a.is_nan() || b.is_nan() || a > b {
                continue;
            }
            match f {
                None => return Some(Vec::new()),
                Some(f) => {
                    if let (Some(ca), Some(cb)) = (f.col(a), f.col(b)) {
                        cols.extend(ca..=cb);
                    }
                }
            }
        }
        (!cols.is_empty()).then_some(cols)
    }

    /// The legend, packed into lines no wider than `width`.
    fn legend(&self, width: u16) -> Vec<Line<'static>> {
        let mut lines: Vec<Vec<Span<'static>>> = vec![Vec::new()];
        let mut used = 0usize;
        for item in self.legend_items() {
            let w: usize = item.iter().map(|s| s.content.chars().count()).sum();
            if used > 0 && used + 2 + w > usize::from(width) {
                lines.push(Vec::new());
                used = 0;
            }
            if let Some(line) = lines.last_mut() {
                if used > 0 {
                    line.push(Span::raw("  "));
                    used += 2;
                }
                line.extend(item);
                used += w;
            }
        }
        lines.into_iter().map(Line::from).collect()
    }

    fn legend_items(&self) -> Vec<Vec<Span<'static>>> {
        let d = self.data;
        let mut items = vec![vec![Span::raw(strings::chart_unit(self.unit))]];
        let mut seen_roles: Vec<CurveRole> = Vec::new();
        for c in &d.curves {
            if seen_roles.contains(&c.role) {
                continue;
            }
            seen_roles.push(c.role);
            let (sym, name) = match c.role {
                CurveRole::Model => ("━", strings::LEGEND_MODEL),
                CurveRole::Fitted => ("┅", strings::LEGEND_FITTED),
                CurveRole::Plan => ("━", strings::LEGEND_PLAN),
                CurveRole::Band => ("┈", strings::LEGEND_BAND),
            };
            items.push(vec![
                Span::styled(sym, curve_style(c.role)),
                Span::raw(format!(" {name}")),
            ]);
        }
        let mut seen_marks: Vec<MarkKind> = Vec::new();
        for m in &d.marks {
            let kind = match m.kind {
                MarkKind::HalfLife(_) => MarkKind::HalfLife(1),
                k => k,
            };
            if seen_marks.contains(&kind) {
                continue;
            }
            seen_marks.push(kind);
            let (sym, style) = mark_symbol(kind);
            let (sym, name) = match kind {
                MarkKind::InFit => (sym, strings::LEGEND_IN_FIT),
                MarkKind::NotInFit => (sym, strings::LEGEND_NOT_IN_FIT),
                MarkKind::LeftOut => (sym, strings::LEGEND_LEFT_OUT),
                MarkKind::HalfLife(_) => ("1 2 3".into(), strings::LEGEND_HALF_LIVES),
                MarkKind::Reached => (sym, strings::LEGEND_REACHED),
                MarkKind::SwitchStart => (sym, strings::LEGEND_SWITCH),
            };
            items.push(vec![
                Span::styled(sym, style),
                Span::raw(format!(" {name}")),
            ]);
        }
        if let Some(g) = d.guide {
            let name = match g.role {
                GuideRole::Threshold => strings::LEGEND_THRESHOLD,
                GuideRole::TroughTarget => strings::LEGEND_TROUGH_TARGET,
            };
            items.push(vec![
                Span::styled("╌", guide_style(g.role)),
                Span::raw(format!(" {name} {}", num(g.value))),
            ]);
        }
        if self.band_columns(None).is_some() {
            items.push(vec![
                Span::styled(strings::BAND_SHADE, band_style()),
                Span::raw(format!(" {}", strings::LEGEND_DIALYSIS)),
            ]);
        }
        if d.vline.is_some() {
            items.push(vec![
                Span::styled("┊", Style::new().fg(Color::Magenta)),
                Span::raw(format!(" {}", strings::LEGEND_PROCEDURE)),
            ]);
        }
        items
    }
}

impl Widget for SemiLogChart<'_> {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let d = self.data;
        let too_small = area.width < 24 || area.height < 6;
        let x_ok = d.x[0].is_finite() && d.x[1].is_finite() && d.x[1] > d.x[0];
        let Some([lo, hi]) = self.y_range().filter(|_| x_ok && !too_small) else {
            Paragraph::new(strings::CHART_NO_ROOM).render(area, buf);
            return;
        };
        let ticks = nice_ticks(lo, hi);
        let gutter = ticks
            .iter()
            .map(|(v, _)| num(*v).chars().count())
            .max()
            .unwrap_or(1) as u16;
        let legend = self.legend(area.width);
        let legend_h = (legend.len() as u16).min(area.height.saturating_sub(5));
        let plot = Rect {
            x: area.x + gutter + 1,
            y: area.y,
            width: area.width.saturating_sub(gutter + 1),
            height: area.height.saturating_sub(2 + legend_h),
        };
        let f = Frame {
            plot,
            x: d.x,
            y: [lo.ln(), hi.ln()],
        };
        let axis = Style::new().fg(Color::Gray);

        // Curves on a braille canvas.
        let canvas = Canvas::default()
            .marker(Marker::Braille)
            .x_bounds(f.x)
            .y_bounds(f.y)
            .paint(|ctx| {
                for c in &d.curves {
                    let color = curve_style(c.role).fg.unwrap_or(Color::White);
                    let pts: Vec<(f64, f64)> = c
                        .points
                        .iter()
                        .filter(|(_, v)| v.is_finite() && *v > 0.0)
                        .map(|(t, v)| (*t, v.ln()))
                        .collect();
                    let inside = |y: f64| y >= f.y[0] - 1e-9 && y <= f.y[1] + 1e-9;
                    if c.role == CurveRole::Band {
                        // A sparse dotted line: one dot every cell or so.
                        let cell = (f.x[1] - f.x[0]) / f64::from(plot.width.max(1));
                        let mut last = f64::NEG_INFINITY;
                        let mut dots = Vec::new();
                        for &(x, y) in &pts {
                            if inside(y) && x - last >= cell {
                                dots.push((x, y));
                                last = x;
                            }
                        }
                        ctx.draw(&Points::new(&dots, color));
                        continue;
                    }
                    for w in pts.windows(2) {
                        let ((x1, y1), (x2, y2)) = (w[0], w[1]);
                        if !(inside(y1) && inside(y2)) {
                            continue;
                        }
                        if c.role == CurveRole::Fitted {
                            let n = ((x2 - x1) / (f.x[1] - f.x[0]) * f64::from(plot.width) / 1.5)
                                .ceil()
                                .clamp(1.0, 2000.0) as usize;
                            let dots: Vec<(f64, f64)> = (0..=n)
                                .map(|i| {
                                    let a = i as f64 / n as f64;
                                    (x1 + a * (x2 - x1), y1 + a * (y2 - y1))
                                })
                                .collect();
                            ctx.draw(&Points::new(&dots, color));
                        } else {
                            ctx.draw(&CanvasLine::new(x1, y1, x2, y2, color));
                        }
                    }
                }
            });
        canvas.render(plot, buf);

        let blank = |buf: &Buffer, x: u16, y: u16| {
            buf.cell((x, y))
                .map(|c| c.symbol() == " " || c.symbol() == "\u{2800}")
                .unwrap_or(false)
        };
        // The guide line, dashed, where the curves leave room.
        if let Some(g) = d.guide {
            if let Some(r) = f.row(g.value) {
                for x in plot.left()..plot.right() {
                    if blank(buf, x, r) {
                        buf.set_string(x, r, "╌", guide_style(g.role));
                    }
                }
            }
        }
        // Haemodialysis sessions: light shade in the free cells of their columns, and a
        // heavy rule on the time axis under them.
        let band_cols = self.band_columns(Some(&f)).unwrap_or_default();
        for &c in &band_cols {
            for y in plot.top()..plot.bottom() {
                if blank(buf, c, y) {
                    buf.set_string(c, y, strings::BAND_SHADE, band_style());
                }
            }
        }
        if let Some(t) = d.vline {
            if let Some(c) = f.col(t) {
                for y in plot.top()..plot.bottom() {
                    if blank(buf, c, y) {
                        buf.set_string(c, y, "┊", Style::new().fg(Color::Magenta));
                    }
                }
            }
        }
        // Marks over everything.
        for m in &d.marks {
            if let (Some(c), Some(r)) = (f.col(m.t), f.row(m.value)) {
                let (sym, style) = mark_symbol(m.kind);
                buf.set_string(c, r, sym, style);
            }
        }

        // Axes: the left rule with its labels, the bottom rule with clock times.
        let axis_x = area.x + gutter;
        let bottom = plot.bottom();
        for y in plot.top()..bottom {
            buf.set_string(axis_x, y, "│", axis);
        }
        buf.set_string(axis_x, bottom, "└", axis);
        for x in plot.left()..plot.right() {
            buf.set_string(x, bottom, "─", axis);
        }
        for &c in &band_cols {
            buf.set_string(c, bottom, strings::BAND_AXIS, band_style());
        }
        let mut placed: Vec<u16> = Vec::new();
        for rank in 0..3u8 {
            for (v, r) in &ticks {
                if *r != rank {
                    continue;
                }
                let Some(row) = f.row(*v) else { continue };
                if placed.iter().any(|p| p.abs_diff(row) < 2) {
                    continue;
                }
                placed.push(row);
                let label = num(*v);
                let lx = axis_x.saturating_sub(label.chars().count() as u16);
                buf.set_string(lx, row, &label, axis);
                buf.set_string(axis_x, row, "┤", axis);
            }
        }
        let label_row = bottom + 1;
        let mut free_from = area.x;
        for (c, text) in self.time_labels(&f) {
            let len = text.chars().count() as u16;
            let start = c.saturating_sub(len / 2).max(area.x);
            if start < free_from || start + len > area.right() {
                continue;
            }
            buf.set_string(c, bottom, "┬", axis);
            buf.set_string(start, label_row, &text, axis);
            free_from = start + len + 1;
        }
        let legend_area = Rect {
            x: area.x,
            y: label_row + 1,
            width: area.width,
            height: legend_h,
        };
        Paragraph::new(legend).render(legend_area, buf);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nice_bounds_bracket_the_value() {
        assert_eq!(nice_floor(3.7), 2.0);
        assert_eq!(nice_floor(0.9), 0.5);
        assert_eq!(nice_ceil(3.7), 5.0);
        assert_eq!(nice_ceil(6.1), 10.0);
        assert_eq!(nice_ceil(1.0), 1.0);
        let t: Vec<f64> = nice_ticks(0.5, 10.0).iter().map(|x| x.0).collect();
        assert_eq!(t.len(), 5);
        assert!(t.contains(&0.5) && t.contains(&1.0) && t.contains(&2.0) && t.contains(&10.0));
    }
}
