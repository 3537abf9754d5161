//! SVG charts drawn with plotters into in-memory strings: the growth-function chart
//! of `gapcert growth --svg`, and the two charts of the HTML report.
//!
//! Every chart must read in grayscale, so a verdict is told apart by the shape or
//! fill pattern of its mark as well as by its color, and every line has its own dash
//! pattern. plotters' SVG backend escapes the text it writes (`&`, `<`, `>`, `"`,
//! `'`), so labels are handed to it as plain text: escaping them here as well would
//! show the entities to the reader.

use std::io::{self, Write};

use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use crate::audit::splits::SplitEntry;
use crate::audit::Verdict;
use crate::calculators::GrowthRow;
use crate::theory::growth::Family;

/// The font family of every chart label (no web font is ever fetched).
pub const FONT: &str = "sans-serif";

/// Verdict colors: (strong, light).
pub const CERTIFIED_COLOR: RGBColor = RGBColor(0x1e, 0x7b, 0x4a);
pub const CERTIFIED_FILL: RGBColor = RGBColor(0x8f, 0xd1, 0xa8);
pub const UNPROVEN_COLOR: RGBColor = RGBColor(0xa8, 0x6b, 0x00);
pub const REFUTED_COLOR: RGBColor = RGBColor(0xb0, 0x24, 0x18);
pub const REFUTED_FILL: RGBColor = RGBColor(0xf6, 0xd5, 0xd1);
pub const NO_CLAIM_COLOR: RGBColor = RGBColor(0x80, 0x80, 0x80);
/// Marks drawn over the interval bars.
pub const OBSERVED_COLOR: RGBColor = RGBColor(0x10, 0x10, 0x10);
pub const CLAIM_COLOR: RGBColor = RGBColor(0x1b, 0x3f, 0x9e);
pub const TRAIN_COLOR: RGBColor = RGBColor(0x6a, 0x1b, 0x8a);
const GRID_COLOR: RGBColor = RGBColor(0xdd, 0xdd, 0xdd);
const STRIPE_COLOR: RGBColor = RGBColor(0xf3, 0xf4, 0xf6);
const TEXT_COLOR: RGBColor = RGBColor(0x22, 0x22, 0x22);
/// The outline of the legend boxes.
const LEGEND_BORDER: RGBColor = RGBColor(0x99, 0x99, 0x99);

/// Colors of the theory curves, in order; each curve also gets its own dash pattern.
pub const CURVE_COLORS: [RGBColor; 10] = [
    RGBColor(0x1f, 0x5f, 0xa8),
    RGBColor(0xc2, 0x57, 0x1a),
    RGBColor(0x2a, 0x8c, 0x6e),
    RGBColor(0x8c, 0x2a, 0x7a),
    RGBColor(0x6b, 0x6b, 0x00),
    RGBColor(0x44, 0x44, 0x44),
    RGBColor(0x00, 0x7c, 0x99),
    RGBColor(0x99, 0x33, 0x33),
    RGBColor(0x4b, 0x3b, 0xb0),
    RGBColor(0x3d, 0x8b, 0x2f),
];

/// (dash length, gap) in pixels per curve index; (0, 0) is a solid line.
const DASHES: [(u32, u32); 10] = [
    (0, 0),
    (10, 5),
    (3, 4),
    (16, 5),
    (6, 3),
    (2, 8),
    (12, 3),
    (8, 8),
    (4, 2),
    (20, 4),
];

/// A plotters failure as an I/O error (the writers' error type).
fn chart_error<E: std::fmt::Debug>(error: E) -> io::Error {
    io::Error::other(format!("cannot draw the chart: {error:?}"))
}

/// The verdict's strong color.
pub fn verdict_color(verdict: Verdict) -> RGBColor {
    match verdict {
        Verdict::Certified => CERTIFIED_COLOR,
        Verdict::Unproven => UNPROVEN_COLOR,
        Verdict::Refuted => REFUTED_COLOR,
        Verdict::NoClaim => NO_CLAIM_COLOR,
    }
}

/// The verdict as a reader sees it.
pub fn verdict_words(verdict: Verdict) -> &'static str {
    match verdict {
        Verdict::Certified => "certified",
        Verdict::Unproven => "unproven",
        Verdict::Refuted => "refuted",
        Verdict::NoClaim => "no claim",
    }
}

/// An exponent as Unicode superscript digits ("⁻³").
fn superscript(exponent: i32) -> String {
    let digits = ['⁰', '¹', '²', '³', '⁴', '⁵', '⁶', '⁷', '⁸', '⁹'];
    let mut text = String::new();
    if exponent < 0 {
        text.push('⁻');
    }
    for ch in exponent.unsigned_abs().to_string().chars() {
        let index = ch.to_digit(10).unwrap_or(0) as usize;
        text.push(digits[index]);
    }
    text
}

/// A log-axis tick: "10⁶" for powers of ten, a short decimal otherwise.
pub fn power_of_ten_label(value: f64) -> String {
    if !(value > 0.0 && value.is_finite()) {
        return String::new();
    }
    let exponent = value.log10().round();
    if (value / 10f64.powf(exponent) - 1.0).abs() < 1e-6 {
        match exponent as i32 {
            0 => "1".to_string(),
            1 => "10".to_string(),
            e => format!("10{}", superscript(e)),
        }
    } else {
        format!("{value:.3}")
    }
}

/// The decades [10^a, 10^b] that contain `low..=high` (both positive), with at least
/// one decade between them so a log axis always has two labelled ticks.
pub fn decade_range(low: f64, high: f64) -> (f64, f64) {
    let low = if low > 0.0 && low.is_finite() {
        low
    } else {
        1.0
    };
    let high = if high > 0.0 && high.is_finite() {
        high.max(low)
    } else {
        low
    };
    let a = low.log10().floor().clamp(-300.0, 300.0);
    let mut b = high.log10().ceil().clamp(-300.0, 300.0);
    if b <= a {
        b = a + 1.0;
    }
    (10f64.powf(a), 10f64.powf(b))
}

/// Text truncated to `max_chars` characters, with an ellipsis when cut.
pub fn truncate_chars(text: &str, max_chars: usize) -> String {
    let single_line: String = text
        .chars()
        .map(|c| if c.is_control() { ' ' } else { c })
        .collect();
    if single_line.chars().count() <= max_chars {
        single_line
    } else {
        let mut cut: String = single_line
            .chars()
            .take(max_chars.saturating_sub(1))
            .collect();
        cut.push('…');
        cut
    }
}

/// An inline copy of a standalone SVG for an HTML page: the namespace declaration is
/// dropped (HTML parsing supplies it) so the page carries no URL at all, and the
/// element gets an accessible name.
pub fn inline_svg(svg: &str, accessible_name: &str) -> String {
    let without_namespace = svg.replacen(" xmlns=\"http://www.w3.org/2000/svg\"", "", 1);
    without_namespace.replacen(
        "<svg ",
        &format!(
            "<svg role=\"img\" aria-label=\"{}\" ",
            super::escape::escape_html(accessible_name)
        ),
        1,
    )
}

fn text_style(size: u32, color: RGBColor) -> TextStyle<'static> {
    TextStyle {
        font: (FONT, size).into_font(),
        color: color.to_backend_color(),
        pos: Pos::new(HPos::Left, VPos::Top),
    }
}

/// Draws a verdict's interval bar in backend pixels: certified solid, unproven hollow
/// with a heavy outline, refuted hatched, no claim a thin grey strip.
pub fn draw_verdict_bar<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    verdict: Verdict,
    (x0, y0): (i32, i32),
    (x1, y1): (i32, i32),
) -> io::Result<()> {
    let (left, right) = (x0.min(x1), x0.max(x1).max(x0.min(x1) + 2));
    let (top, bottom) = (y0.min(y1), y0.max(y1));
    match verdict {
        Verdict::Certified => {
            area.draw(&Rectangle::new(
                [(left, top), (right, bottom)],
                CERTIFIED_FILL.filled(),
            ))
            .map_err(chart_error)?;
            area.draw(&Rectangle::new(
                [(left, top), (right, bottom)],
                CERTIFIED_COLOR.stroke_width(1),
            ))
            .map_err(chart_error)?;
        }
        Verdict::Unproven => {
            area.draw(&Rectangle::new(
                [(left, top), (right, bottom)],
                WHITE.filled(),
            ))
            .map_err(chart_error)?;
            area.draw(&Rectangle::new(
                [(left + 1, top + 1), (right - 1, bottom - 1)],
                UNPROVEN_COLOR.stroke_width(2),
            ))
            .map_err(chart_error)?;
        }
        Verdict::Refuted => {
            area.draw(&Rectangle::new(
                [(left, top), (right, bottom)],
                REFUTED_FILL.filled(),
            ))
            .map_err(chart_error)?;
            // Diagonal hatching: lines x − y = c, clipped to the bar.
            let height = bottom - top;
            let mut start = left - height;
            while start < right {
                let t0 = ((left - start) as f64 / height.max(1) as f64).clamp(0.0, 1.0);
                let t1 = ((right - start) as f64 / height.max(1) as f64).clamp(0.0, 1.0);
                if t1 > t0 {
                    let point = |t: f64| {
                        (
                            start + (t * height as f64).round() as i32,
                            bottom - (t * height as f64).round() as i32,
                        )
                    };
                    area.draw(&PathElement::new(
                        vec![point(t0), point(t1)],
                        REFUTED_COLOR.stroke_width(1),
                    ))
                    .map_err(chart_error)?;
                }
                start += 5;
            }
            area.draw(&Rectangle::new(
                [(left, top), (right, bottom)],
                REFUTED_COLOR.stroke_width(1),
            ))
            .map_err(chart_error)?;
        }
        Verdict::NoClaim => {
            let middle = (top + bottom) / 2;
            let half = ((bottom - top) / 4).max(1);
            area.draw(&Rectangle::new(
                [(left, middle - half), (right, middle + half)],
                NO_CLAIM_COLOR.filled(),
            ))
            .map_err(chart_error)?;
        }
    }
    Ok(())
}

/// The observed held-out error: a black dot with a white ring.
fn draw_observed<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    at: (i32, i32),
) -> io::Result<()> {
    area.draw(&Circle::new(at, 6, WHITE.filled()))
        .map_err(chart_error)?;
    area.draw(&Circle::new(at, 4, OBSERVED_COLOR.filled()))
        .map_err(chart_error)
}

/// The claimed error: a tall bar with a notch, taller than the interval bar.
fn draw_claim<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    (x, y): (i32, i32),
    half_height: i32,
) -> io::Result<()> {
    area.draw(&Rectangle::new(
        [(x - 2, y - half_height), (x + 1, y + half_height)],
        WHITE.filled(),
    ))
    .map_err(chart_error)?;
    area.draw(&PathElement::new(
        vec![(x, y - half_height + 1), (x, y + half_height - 1)],
        CLAIM_COLOR.stroke_width(3),
    ))
    .map_err(chart_error)?;
    // A small downward wedge on top, so the claim is not mistaken for a bar edge.
    area.draw(&Polygon::new(
        vec![
            (x - 5, y - half_height - 5),
            (x + 5, y - half_height - 5),
            (x, y - half_height + 1),
        ],
        CLAIM_COLOR.filled(),
    ))
    .map_err(chart_error)
}

/// The training error: a cross.
fn draw_train<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    at: (i32, i32),
) -> io::Result<()> {
    area.draw(&Cross::new(at, 5, WHITE.stroke_width(5)))
        .map_err(chart_error)?;
    area.draw(&Cross::new(at, 5, TRAIN_COLOR.stroke_width(2)))
        .map_err(chart_error)
}

/// One row of the interval chart.
#[derive(Clone, Debug)]
pub struct IntervalRow {
    pub label: String,
    pub verdict: Verdict,
    /// The two-sided interval of the chosen method.
    pub interval: [f64; 2],
    pub observed: f64,
    pub claim: Option<f64>,
    pub train: Option<f64>,
}

const INTERVAL_WIDTH: u32 = 1100;
const INTERVAL_LEGEND_HEIGHT: u32 = 78;
const INTERVAL_ROW_HEIGHT: u32 = 26;
const INTERVAL_AXIS_HEIGHT: u32 = 52;
const INTERVAL_LABEL_WIDTH: u32 = 270;
const INTERVAL_VERDICT_WIDTH: u32 = 96;
const LABEL_CHARS: usize = 36;

fn finite_rate(value: f64) -> f64 {
    if value.is_finite() {
        value.clamp(0.0, 1.0)
    } else {
        0.0
    }
}

/// The frame of the charts with one row per run or claim: `rows` rows over the x range,
/// the x axis labelled by `x_label` and described by `x_desc`, no y labels, and zebra
/// stripes for the eye to follow a row across (row 0 at the top).
fn row_chart<'a, DB: DrawingBackend>(
    body: &'a DrawingArea<DB, Shift>,
    x_range: std::ops::Range<f64>,
    rows: usize,
    x_label: &dyn Fn(&f64) -> String,
    x_desc: &str,
) -> io::Result<ChartContext<'a, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>> {
    let (x_min, x_max) = (x_range.start, x_range.end);
    let mut chart = ChartBuilder::on(body)
        .margin_right(INTERVAL_VERDICT_WIDTH)
        .margin_top(6)
        .x_label_area_size(INTERVAL_AXIS_HEIGHT)
        .y_label_area_size(INTERVAL_LABEL_WIDTH)
        .build_cartesian_2d(x_range, 0f64..rows as f64)
        .map_err(chart_error)?;
    chart
        .configure_mesh()
        .disable_y_mesh()
        .y_label_formatter(&|_| String::new())
        .y_labels(2)
        .x_labels(12)
        .x_label_formatter(x_label)
        .x_desc(x_desc)
        .label_style(text_style(15, TEXT_COLOR))
        .axis_desc_style(text_style(16, TEXT_COLOR))
        .light_line_style(WHITE)
        .bold_line_style(GRID_COLOR)
        .draw()
        .map_err(chart_error)?;
    chart
        .draw_series((0..rows).step_by(2).map(|i| {
            let y = rows as f64 - i as f64 - 0.5;
            Rectangle::new([(x_min, y - 0.5), (x_max, y + 0.5)], STRIPE_COLOR.filled())
        }))
        .map_err(chart_error)?;
    Ok(chart)
}

/// The interval chart: one row per run (in the order given), the two-sided held-out
/// interval as a bar styled by verdict, the observed error as a dot, the claim as a
/// notched bar and the training error as a cross. `method` names the interval.
pub fn interval_chart_svg(rows: &[IntervalRow], method: &str) -> io::Result<String> {
    let count = rows.len().max(1);
    let height =
        INTERVAL_LEGEND_HEIGHT + count as u32 * INTERVAL_ROW_HEIGHT + INTERVAL_AXIS_HEIGHT + 8;
    let x_max = rows
        .iter()
        .flat_map(|r| {
            [
                r.interval[1],
                r.observed,
                r.claim.unwrap_or(0.0),
                r.train.unwrap_or(0.0),
            ]
        })
        .map(finite_rate)
        .fold(0.0_f64, f64::max);
    let x_max = (x_max * 1.08).clamp(0.01, 1.0);

    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (INTERVAL_WIDTH, height)).into_drawing_area();
        root.fill(&WHITE).map_err(chart_error)?;
        let (legend, body) = root.split_vertically(INTERVAL_LEGEND_HEIGHT);
        draw_interval_legend(&legend, method)?;

        let chart = row_chart(
            &body,
            0.0..x_max,
            count,
            &|v| format!("{:.1}%", v * 100.0),
            "error rate (held-out, claimed and training)",
        )?;
        let row_center = |index: usize| count as f64 - index as f64 - 0.5;

        let pixel = |x: f64, y: f64| chart.backend_coord(&(x, y));
        let (plot_left, plot_right) = {
            let (l, _) = pixel(0.0, 0.0);
            let (r, _) = pixel(x_max, 0.0);
            (l, r)
        };
        let half_bar = (INTERVAL_ROW_HEIGHT as i32 * 3) / 10;
        for (index, row) in rows.iter().enumerate() {
            let y = row_center(index);
            let (_, y_pixel) = pixel(0.0, y);
            let (x_lo, _) = pixel(finite_rate(row.interval[0]), y);
            let (x_hi, _) = pixel(finite_rate(row.interval[1]), y);
            draw_verdict_bar(
                &root,
                row.verdict,
                (x_lo, y_pixel - half_bar),
                (x_hi, y_pixel + half_bar),
            )?;
            if let Some(train) = row.train {
                draw_train(&root, pixel(finite_rate(train), y))?;
            }
            if let Some(claim) = row.claim {
                let (x, _) = pixel(finite_rate(claim), y);
                draw_claim(&root, (x, y_pixel), half_bar + 3)?;
            }
            draw_observed(&root, pixel(finite_rate(row.observed), y))?;

            let label_style = text_style(15, TEXT_COLOR).pos(Pos::new(HPos::Right, VPos::Center));
            root.draw(&Text::new(
                truncate_chars(&row.label, LABEL_CHARS),
                (plot_left - 10, y_pixel),
                label_style,
            ))
            .map_err(chart_error)?;
            let verdict_style = TextStyle {
                font: (FONT, 15).into_font().style(FontStyle::Bold),
                color: verdict_color(row.verdict).to_backend_color(),
                pos: Pos::new(HPos::Left, VPos::Center),
            };
            root.draw(&Text::new(
                verdict_words(row.verdict),
                (plot_right + 10, y_pixel),
                verdict_style,
            ))
            .map_err(chart_error)?;
        }
        if rows.is_empty() {
            let (x, y) = pixel(x_max / 2.0, 0.5);
            root.draw(&Text::new(
                "no runs to show",
                (x, y),
                text_style(16, TEXT_COLOR).pos(Pos::new(HPos::Center, VPos::Center)),
            ))
            .map_err(chart_error)?;
        }
        root.present().map_err(chart_error)?;
    }
    Ok(svg)
}

fn draw_interval_legend<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    method: &str,
) -> io::Result<()> {
    let style = text_style(15, TEXT_COLOR).pos(Pos::new(HPos::Left, VPos::Center));
    let mut x = 16;
    let first = 22;
    area.draw(&Text::new(
        format!("Bar: two-sided {method} interval —"),
        (x, first),
        style.clone(),
    ))
    .map_err(chart_error)?;
    x += 260;
    for verdict in [
        Verdict::Certified,
        Verdict::Unproven,
        Verdict::Refuted,
        Verdict::NoClaim,
    ] {
        draw_verdict_bar(area, verdict, (x, first - 8), (x + 44, first + 8))?;
        let words = match verdict {
            Verdict::Certified => "certified (solid)",
            Verdict::Unproven => "unproven (hollow)",
            Verdict::Refuted => "refuted (hatched)",
            Verdict::NoClaim => "no claim (thin)",
        };
        area.draw(&Text::new(words, (x + 52, first), style.clone()))
            .map_err(chart_error)?;
        x += 200;
    }
    let second = 56;
    let mut x = 24;
    draw_observed(area, (x, second))?;
    area.draw(&Text::new(
        "observed held-out error",
        (x + 14, second),
        style.clone(),
    ))
    .map_err(chart_error)?;
    x += 250;
    draw_claim(area, (x, second), 10)?;
    area.draw(&Text::new(
        "claimed error (1 − claimed accuracy)",
        (x + 14, second),
        style.clone(),
    ))
    .map_err(chart_error)?;
    x += 330;
    draw_train(area, (x, second))?;
    area.draw(&Text::new("training error", (x + 14, second), style))
        .map_err(chart_error)?;
    Ok(())
}

/// One claim on the claims chart.
#[derive(Clone, Debug)]
pub struct ClaimRow {
    pub label: String,
    pub verdict: Verdict,
    /// Bounds on the claimed quantity (E, E − E_in or Δ), signed.
    pub lower: f64,
    pub upper: f64,
    /// What the claim holds the quantity to.
    pub threshold: f64,
}

/// The claims chart: one row per claim, the bounds on its claimed quantity as a bar
/// styled by verdict and the threshold the claim sets as the notched mark of the
/// interval chart. A claim is certified when its whole bar lies left of its mark and
/// refuted when the whole bar lies right of it. The axis is in percentage points
/// and may go below zero (differences and gaps can).
pub fn claims_chart_svg(rows: &[ClaimRow]) -> io::Result<String> {
    let count = rows.len().max(1);
    let legend_height = 44;
    let height = legend_height + count as u32 * INTERVAL_ROW_HEIGHT + INTERVAL_AXIS_HEIGHT + 8;
    let values = rows
        .iter()
        .flat_map(|r| [r.lower, r.upper, r.threshold])
        .filter(|v| v.is_finite());
    let (mut x_min, mut x_max) =
        values.fold((0.0_f64, 0.0_f64), |(lo, hi), v| (lo.min(v), hi.max(v)));
    let pad = ((x_max - x_min) * 0.06).max(0.002);
    x_min -= pad;
    x_max += pad;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (INTERVAL_WIDTH, height)).into_drawing_area();
        root.fill(&WHITE).map_err(chart_error)?;
        let (legend, body) = root.split_vertically(legend_height);
        let style = text_style(15, TEXT_COLOR).pos(Pos::new(HPos::Left, VPos::Center));
        let mut x = 16;
        for verdict in [Verdict::Certified, Verdict::Unproven, Verdict::Refuted] {
            draw_verdict_bar(&legend, verdict, (x, 14), (x + 44, 30))?;
            legend
                .draw(&Text::new(
                    verdict_words(verdict),
                    (x + 52, 22),
                    style.clone(),
                ))
                .map_err(chart_error)?;
            x += 170;
        }
        draw_claim(&legend, (x + 6, 22), 10)?;
        legend
            .draw(&Text::new(
                "what the claim needs the quantity to be at most",
                (x + 20, 22),
                style,
            ))
            .map_err(chart_error)?;
        let mut chart = row_chart(
            &body,
            x_min..x_max,
            count,
            &|v| format!("{:.1}", v * 100.0),
            "percentage points: error E, gap E − E_in, or difference Δ = E_run − E_base",
        )?;
        let row_center = |index: usize| count as f64 - index as f64 - 0.5;
        if x_min < 0.0 && x_max > 0.0 {
            chart
                .draw_series(std::iter::once(PathElement::new(
                    vec![(0.0, 0.0), (0.0, count as f64)],
                    OBSERVED_COLOR.stroke_width(1),
                )))
                .map_err(chart_error)?;
        }
        let pixel = |x: f64, y: f64| chart.backend_coord(&(x, y));
        let (plot_left, plot_right) = (pixel(x_min, 0.0).0, pixel(x_max, 0.0).0);
        let half_bar = (INTERVAL_ROW_HEIGHT as i32 * 3) / 10;
        for (index, row) in rows.iter().enumerate() {
            let y = row_center(index);
            let (_, y_pixel) = pixel(0.0, y);
            let clamp = |v: f64| {
                if v.is_finite() {
                    v.clamp(x_min, x_max)
                } else {
                    x_max
                }
            };
            // A refuted gap can report a lower bound above the upper one's route: draw
            // the bar between whichever ends, the mark shows the claim.
            let (a, b) = (
                clamp(row.lower.min(row.upper)),
                clamp(row.lower.max(row.upper)),
            );
            let (x_lo, _) = pixel(a, y);
            let (x_hi, _) = pixel(b, y);
            draw_verdict_bar(
                &root,
                row.verdict,
                (x_lo, y_pixel - half_bar),
                (x_hi.max(x_lo + 2), y_pixel + half_bar),
            )?;
            let (x_target, _) = pixel(clamp(row.threshold), y);
            draw_claim(&root, (x_target, y_pixel), half_bar + 3)?;
            root.draw(&Text::new(
                truncate_chars(&row.label, LABEL_CHARS),
                (plot_left - 10, y_pixel),
                text_style(15, TEXT_COLOR).pos(Pos::new(HPos::Right, VPos::Center)),
            ))
            .map_err(chart_error)?;
            root.draw(&Text::new(
                verdict_words(row.verdict),
                (plot_right + 10, y_pixel),
                TextStyle {
                    font: (FONT, 15).into_font().style(FontStyle::Bold),
                    color: verdict_color(row.verdict).to_backend_color(),
                    pos: Pos::new(HPos::Left, VPos::Center),
                },
            ))
            .map_err(chart_error)?;
        }
        root.present().map_err(chart_error)?;
    }
    Ok(svg)
}

/// The wear chart of one held-out split: the accuracy its best run can certify
/// against the number of models compared on it (log axis), with today's K marked, the
/// best run's claimed accuracy as a line, and the wear history (K and the best run so
/// far, in time order) as points.
pub fn wear_chart_svg(entry: &SplitEntry) -> io::Result<String> {
    let (width, height) = (560u32, 330u32);
    let today = entry.candidates.max(1) as f64;
    let mut x_end = (today * 10.0).max(100.0);
    if let Some(left) = entry.comparisons_left {
        let most = today + left as f64;
        if most < 1e9 {
            x_end = x_end.max(most * 2.0);
        }
    }
    let x_end = x_end.min(1e12);
    let samples = 80;
    let curve: Vec<(f64, f64)> = (0..=samples)
        .map(|i| {
            let k = x_end.powf(i as f64 / samples as f64).round().max(1.0);
            (k, entry.certifiable_at(k as u64))
        })
        .collect();
    let claim = entry.claim_error_rate.map(|c| 1.0 - c);
    let values = curve
        .iter()
        .map(|p| p.1)
        .chain(claim)
        .chain(entry.history.iter().map(|h| h.certifiable_accuracy))
        .filter(|v| v.is_finite());
    let (low, high) = values.fold((1.0_f64, 0.0_f64), |(lo, hi), v| (lo.min(v), hi.max(v)));
    let pad = ((high - low) * 0.12).max(0.002);
    let y_min = (low - pad).max(0.0);
    // Headroom for the legend (upper right): the curve and the claim span the whole
    // width, so without it the legend covers them. The plot is about 236 px high; each
    // legend entry takes about 18 px.
    let entries = 2 + usize::from(claim.is_some()) + usize::from(!entry.history.is_empty());
    let legend_share = ((entries * 18 + 28) as f64 / 236.0).min(0.6);
    let y_max = (y_min + (high + pad - y_min) / (1.0 - legend_share)).min(1.0);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (width, height)).into_drawing_area();
        root.fill(&WHITE).map_err(chart_error)?;
        let title = truncate_chars(&format!("split {}", entry.split), 60);
        let mut chart = ChartBuilder::on(&root)
            .caption(title, (FONT, 17).into_font().color(&TEXT_COLOR))
            .margin(10)
            .margin_right(20)
            .x_label_area_size(44)
            .y_label_area_size(64)
            .build_cartesian_2d((1f64..x_end).log_scale(), y_min..y_max)
            .map_err(chart_error)?;
        chart
            .configure_mesh()
            .x_desc("models compared on the split (K)")
            .y_desc("certifiable accuracy")
            .x_label_formatter(&|v| power_of_ten_label(*v))
            .y_label_formatter(&|v| format!("{:.1}%", v * 100.0))
            .label_style(text_style(13, TEXT_COLOR))
            .axis_desc_style(text_style(14, TEXT_COLOR))
            .light_line_style(WHITE)
            .bold_line_style(GRID_COLOR)
            .draw()
            .map_err(chart_error)?;
        let curve_color = CURVE_COLORS[0];
        chart
            .draw_series(LineSeries::new(
                curve.iter().copied(),
                curve_color.stroke_width(3),
            ))
            .map_err(chart_error)?
            .label(format!("best run {}", truncate_chars(&entry.best_run, 24)))
            .legend(move |(x, y)| {
                PathElement::new(vec![(x, y), (x + 24, y)], curve_color.stroke_width(3))
            });
        if let Some(claim) = claim {
            chart
                .draw_series(std::iter::once(DashedPathElement::new(
                    vec![(1.0, claim), (x_end, claim)],
                    8,
                    4,
                    CLAIM_COLOR.stroke_width(2),
                )))
                .map_err(chart_error)?
                .label(format!("its claim, {:.2}%", claim * 100.0))
                .legend(move |(x, y)| {
                    DashedPathElement::new(
                        vec![(x, y), (x + 24, y)],
                        8,
                        4,
                        CLAIM_COLOR.stroke_width(2),
                    )
                });
        }
        if !entry.history.is_empty() {
            chart
                .draw_series(entry.history.iter().map(|h| {
                    Circle::new(
                        (h.compared.max(1) as f64, h.certifiable_accuracy),
                        4,
                        TRAIN_COLOR.filled(),
                    )
                }))
                .map_err(chart_error)?
                .label("history: best run so far, in time order")
                .legend(move |(x, y)| Circle::new((x + 12, y), 4, TRAIN_COLOR.filled()));
        }
        let now = entry.certifiable_now;
        chart
            .draw_series(std::iter::once(PathElement::new(
                vec![(today, y_min), (today, y_max)],
                REFUTED_COLOR.stroke_width(2),
            )))
            .map_err(chart_error)?
            .label(format!(
                "today: K = {}, {:.2}%",
                entry.candidates,
                now * 100.0
            ))
            .legend(move |(x, y)| {
                PathElement::new(vec![(x, y), (x + 24, y)], REFUTED_COLOR.stroke_width(2))
            });
        chart
            .draw_series(std::iter::once(Circle::new(
                (today, now),
                6,
                REFUTED_COLOR.filled(),
            )))
            .map_err(chart_error)?;
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperRight)
            .margin(8)
            .label_font(text_style(13, TEXT_COLOR))
            .background_style(WHITE.mix(0.9))
            .border_style(LEGEND_BORDER)
            .draw()
            .map_err(chart_error)?;
        root.present().map_err(chart_error)?;
    }
    Ok(svg)
}

/// A theory curve: Ω(N) of a Sauer bound, sampled on the chart's N range.
#[derive(Clone, Debug)]
pub struct TheoryCurve {
    pub label: String,
    /// (N, Ω) with Ω > 0 and finite.
    pub points: Vec<(f64, f64)>,
}

/// One run on the theory chart.
#[derive(Clone, Debug)]
pub struct TheoryPoint {
    pub train_n: f64,
    pub allowance: f64,
    /// Index into the curves (for the color), or None when the run has no curve.
    pub curve: Option<usize>,
    /// Index into the family keys (for the marker shape).
    pub family: usize,
}

/// Draws marker `shape` (cycled) in backend pixels: filled circle, triangle, square,
/// cross, then the hollow circle, diamond and square, a plus, a filled diamond, a
/// hollow triangle, a bar and an asterisk.
fn draw_marker<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    shape: usize,
    (x, y): (i32, i32),
    color: RGBColor,
) -> io::Result<()> {
    let filled = color.filled();
    let outline = color.stroke_width(2);
    let square = [(x - 5, y - 5), (x + 5, y + 5)];
    match shape % 12 {
        0 => area.draw(&Circle::new((x, y), 5, filled)),
        1 => area.draw(&TriangleMarker::new((x, y), 7, filled)),
        2 => area.draw(&Rectangle::new(square, filled)),
        3 => area.draw(&Cross::new((x, y), 5, outline)),
        4 => area
            .draw(&Circle::new((x, y), 5, WHITE.filled()))
            .and_then(|_| area.draw(&Circle::new((x, y), 5, outline))),
        5 => {
            let diamond = vec![(x, y - 7), (x + 7, y), (x, y + 7), (x - 7, y), (x, y - 7)];
            area.draw(&Polygon::new(diamond.clone(), WHITE.filled()))
                .and_then(|_| area.draw(&PathElement::new(diamond, outline)))
        }
        6 => area
            .draw(&Rectangle::new(square, WHITE.filled()))
            .and_then(|_| area.draw(&Rectangle::new(square, outline))),
        8 => {
            let diamond = vec![(x, y - 7), (x + 7, y), (x, y + 7), (x - 7, y)];
            area.draw(&Polygon::new(diamond, filled))
        }
        9 => {
            let triangle = vec![(x, y - 7), (x + 7, y + 5), (x - 7, y + 5), (x, y - 7)];
            area.draw(&Polygon::new(triangle.clone(), WHITE.filled()))
                .and_then(|_| area.draw(&PathElement::new(triangle, outline)))
        }
        10 => area.draw(&Rectangle::new([(x - 7, y - 2), (x + 7, y + 2)], filled)),
        11 => area
            .draw(&Cross::new((x, y), 5, outline))
            .and_then(|_| area.draw(&PathElement::new(vec![(x - 7, y), (x + 7, y)], outline)))
            .and_then(|_| area.draw(&PathElement::new(vec![(x, y - 7), (x, y + 7)], outline))),
        _ => area
            .draw(&PathElement::new(vec![(x - 6, y), (x + 6, y)], outline))
            .and_then(|_| area.draw(&PathElement::new(vec![(x, y - 6), (x, y + 6)], outline))),
    }
    .map_err(chart_error)
}

/// Draws a polyline in backend pixels with curve `index`'s dash pattern.
fn draw_patterned_line<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    index: usize,
    points: Vec<(i32, i32)>,
    style: ShapeStyle,
) -> io::Result<()> {
    let (dash, gap) = DASHES[index % DASHES.len()];
    if dash == 0 {
        area.draw(&PathElement::new(points, style))
    } else {
        area.draw(&DashedPathElement::new(points, dash, gap, style))
    }
    .map_err(chart_error)
}

/// A legend entry of the theory chart.
enum LegendSample {
    Heading,
    Line { index: usize, color: RGBColor },
    Marker { shape: usize, color: RGBColor },
}

const LEGEND_LINE_HEIGHT: i32 = 22;

/// Draws legend entries downwards from `top_left` (backend pixels), at most
/// `max_rows` of them (the rest are counted in a last line).
fn draw_legend<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    entries: &[(LegendSample, String)],
    top_left: (i32, i32),
    max_rows: usize,
) -> io::Result<()> {
    let (left, top) = top_left;
    let shown = if entries.len() > max_rows {
        max_rows.saturating_sub(1)
    } else {
        entries.len()
    };
    for (row, (sample, text)) in entries.iter().take(shown).enumerate() {
        let y = top + LEGEND_LINE_HEIGHT / 2 + row as i32 * LEGEND_LINE_HEIGHT;
        let text_x = match sample {
            LegendSample::Heading => left,
            LegendSample::Line { index, color } => {
                draw_patterned_line(
                    area,
                    *index,
                    vec![(left + 4, y), (left + 40, y)],
                    color.stroke_width(2),
                )?;
                left + 50
            }
            LegendSample::Marker { shape, color } => {
                draw_marker(area, *shape, (left + 22, y), *color)?;
                left + 50
            }
        };
        let font = match sample {
            LegendSample::Heading => (FONT, 15).into_font().style(FontStyle::Bold),
            _ => (FONT, 15).into_font(),
        };
        area.draw(&Text::new(
            text.clone(),
            (text_x, y),
            TextStyle {
                font,
                color: TEXT_COLOR.to_backend_color(),
                pos: Pos::new(HPos::Left, VPos::Center),
            },
        ))
        .map_err(chart_error)?;
    }
    if shown < entries.len() {
        let y = top + LEGEND_LINE_HEIGHT / 2 + shown as i32 * LEGEND_LINE_HEIGHT;
        area.draw(&Text::new(
            format!("… {} more", entries.len() - shown),
            (left, y),
            text_style(15, TEXT_COLOR).pos(Pos::new(HPos::Left, VPos::Center)),
        ))
        .map_err(chart_error)?;
    }
    Ok(())
}

/// Text on a white patch, so a label stays legible where a curve passes under it.
fn draw_label_on_patch<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    text: &str,
    (x, y): (i32, i32),
    color: RGBColor,
) -> io::Result<()> {
    // Right-anchored at (x, y); the width is an estimate (SVG text is never measured).
    let width = text.chars().count() as i32 * 7 + 8;
    area.draw(&Rectangle::new(
        [(x - width, y - 9), (x + 4, y + 9)],
        WHITE.mix(0.9).filled(),
    ))
    .map_err(chart_error)?;
    area.draw(&Text::new(
        text.to_string(),
        (x, y),
        text_style(15, color).pos(Pos::new(HPos::Right, VPos::Center)),
    ))
    .map_err(chart_error)
}

/// The theory chart: Ω against N on log–log axes, one curve per entry of `curves`,
/// one marker per run (shape by family key, color by curve), with the tolerance and
/// Ω = 1 drawn as reference lines. The legend sits at the lower left, which a
/// decreasing Ω(N) always leaves empty.
pub fn theory_chart_svg(
    curves: &[TheoryCurve],
    points: &[TheoryPoint],
    family_keys: &[String],
    x_range: (f64, f64),
    tolerance: f64,
) -> io::Result<String> {
    let width = 1100;
    let legend_width = 300;
    let height = 600;
    let values = curves
        .iter()
        .flat_map(|c| c.points.iter().map(|p| p.1))
        .chain(points.iter().map(|p| p.allowance))
        .chain([tolerance, 1.0])
        .filter(|v| *v > 0.0 && v.is_finite());
    let (y_min, y_max) = values.fold((f64::INFINITY, 0.0_f64), |(lo, hi), v| {
        (lo.min(v), hi.max(v))
    });
    let (y_lo, y_hi) = decade_range(y_min, y_max);
    let (x_lo, x_hi) = decade_range(x_range.0, x_range.1);
    let x_decades = (x_hi / x_lo).log10().round().max(1.0) as usize;
    let y_decades = (y_hi / y_lo).log10().round().max(1.0) as usize;
    let in_view = |x: f64, y: f64| x >= x_lo && x <= x_hi && y >= y_lo && y <= y_hi;

    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (width, height)).into_drawing_area();
        root.fill(&WHITE).map_err(chart_error)?;
        let (plot_side, legend_side) = root.split_horizontally(width - legend_width);
        let mut chart = ChartBuilder::on(&plot_side)
            .margin(16)
            .margin_right(20)
            .x_label_area_size(56)
            .y_label_area_size(84)
            .build_cartesian_2d((x_lo..x_hi).log_scale(), (y_lo..y_hi).log_scale())
            .map_err(chart_error)?;
        chart
            .configure_mesh()
            .x_labels(x_decades + 1)
            .y_labels(y_decades + 1)
            .x_label_formatter(&|v| power_of_ten_label(*v))
            .y_label_formatter(&|v| power_of_ten_label(*v))
            .x_desc("training examples N (log scale)")
            .y_desc("VC allowance Ω(N) (log scale)")
            .label_style(text_style(15, TEXT_COLOR))
            .axis_desc_style(text_style(16, TEXT_COLOR))
            .light_line_style(WHITE)
            .bold_line_style(GRID_COLOR)
            .draw()
            .map_err(chart_error)?;
        let pixel = |x: f64, y: f64| chart.backend_coord(&(x, y));

        // Reference lines: Ω = 1 and the tolerance, labelled at the right end (the
        // labels are drawn last, over the curves).
        let mut labels = Vec::new();
        for (level, words, color) in [
            (
                1.0,
                "Ω = 1: above this line the training data guarantee nothing".to_string(),
                REFUTED_COLOR,
            ),
            (tolerance, format!("tolerance {tolerance}"), CERTIFIED_COLOR),
        ] {
            if !(level >= y_lo && level <= y_hi) {
                continue;
            }
            let (left, y) = pixel(x_lo, level);
            let (right, _) = pixel(x_hi, level);
            root.draw(&DashedPathElement::new(
                vec![(left, y), (right, y)],
                4,
                4,
                color.stroke_width(1),
            ))
            .map_err(chart_error)?;
            labels.push((words, (right - 8, y - 11), color));
        }

        let mut legend = Vec::new();
        if !curves.is_empty() {
            legend.push((LegendSample::Heading, "Curves".to_string()));
        }
        for (index, curve) in curves.iter().enumerate() {
            let color = CURVE_COLORS[index % CURVE_COLORS.len()];
            let line: Vec<(i32, i32)> = curve
                .points
                .iter()
                .filter(|(x, y)| in_view(*x, *y))
                .map(|(x, y)| pixel(*x, *y))
                .collect();
            draw_patterned_line(&root, index, line, color.stroke_width(2))?;
            legend.push((
                LegendSample::Line { index, color },
                truncate_chars(&curve.label, 40),
            ));
        }
        for point in points.iter().filter(|p| in_view(p.train_n, p.allowance)) {
            let color = point
                .curve
                .map(|c| CURVE_COLORS[c % CURVE_COLORS.len()])
                .unwrap_or(NO_CLAIM_COLOR);
            draw_marker(
                &root,
                point.family,
                pixel(point.train_n, point.allowance),
                color,
            )?;
        }
        if !family_keys.is_empty() {
            legend.push((
                LegendSample::Heading,
                "Runs (marker shape = family)".to_string(),
            ));
        }
        for (shape, key) in family_keys.iter().enumerate() {
            legend.push((
                LegendSample::Marker {
                    shape,
                    color: TEXT_COLOR,
                },
                truncate_chars(key, 30),
            ));
        }
        if curves.is_empty() && points.is_empty() {
            let (x, y) = pixel((x_lo * x_hi).sqrt(), (y_lo * y_hi).sqrt());
            root.draw(&Text::new(
                "no run has a family with a growth bound",
                (x, y),
                text_style(16, TEXT_COLOR).pos(Pos::new(HPos::Center, VPos::Center)),
            ))
            .map_err(chart_error)?;
        }
        for (words, at, color) in labels {
            draw_label_on_patch(&root, &words, at, color)?;
        }
        let (legend_left, _) = legend_side.get_base_pixel();
        let max_rows = ((height as i32 - 40) / LEGEND_LINE_HEIGHT).max(1) as usize;
        draw_legend(&root, &legend, (legend_left + 8, 24), max_rows)?;
        root.present().map_err(chart_error)?;
    }
    Ok(svg)
}

/// Most points the growth chart draws per line; longer tables are thinned evenly
/// (the curves are smooth, and the break point is marked separately).
const GROWTH_MAX_POINTS: usize = 2000;

/// Writes an SVG of ln m_H(N) and ln 2^N = N·ln 2 against N, with the break point
/// marked by a vertical line, from the rows of the growth table; the log scale for the
/// counts is the natural logarithm on the y axis.
pub fn write_growth_svg(
    family: &Family,
    rows: &[GrowthRow],
    out: &mut dyn Write,
) -> io::Result<()> {
    let svg = growth_svg(family, rows)?;
    out.write_all(svg.as_bytes())
}

fn growth_svg(family: &Family, rows: &[GrowthRow]) -> io::Result<String> {
    let width = 960;
    let height = 600;
    let step = rows.len().div_ceil(GROWTH_MAX_POINTS).max(1);
    let sampled: Vec<(f64, f64, f64)> = rows
        .iter()
        .enumerate()
        .filter(|(i, _)| i % step == 0 || *i + 1 == rows.len())
        .map(|(_, row)| {
            let n = row.n as f64;
            (n, row.growth_ln, n * std::f64::consts::LN_2)
        })
        .filter(|(x, y, z)| x.is_finite() && y.is_finite() && z.is_finite())
        .collect();
    let x_min = sampled.first().map(|p| p.0).unwrap_or(0.0).clamp(0.0, 1.0);
    let x_max = sampled.last().map(|p| p.0).unwrap_or(1.0).max(x_min + 1.0);
    let y_max = sampled.iter().map(|p| p.1.max(p.2)).fold(1.0_f64, f64::max) * 1.06;
    let vc_words = family
        .vc_dim()
        .map(|d| format!("VC dimension {d}"))
        .unwrap_or_else(|| "no VC dimension given".to_string());
    let title = format!("Growth function of family {} ({vc_words})", family.key());

    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (width, height)).into_drawing_area();
        root.fill(&WHITE).map_err(chart_error)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, (FONT, 22).into_font().color(&TEXT_COLOR))
            .margin(16)
            .margin_right(30)
            .x_label_area_size(52)
            .y_label_area_size(80)
            .build_cartesian_2d(x_min..x_max, 0f64..y_max)
            .map_err(chart_error)?;
        chart
            .configure_mesh()
            .x_desc("N (points)")
            .y_desc("ln (number of dichotomies)")
            .x_label_formatter(&|v| {
                if (v - v.round()).abs() < 1e-9 {
                    format!("{}", v.round())
                } else {
                    format!("{v:.1}")
                }
            })
            .y_label_formatter(&|v| format!("{v:.1}"))
            .label_style(text_style(15, TEXT_COLOR))
            .axis_desc_style(text_style(16, TEXT_COLOR))
            .light_line_style(WHITE)
            .bold_line_style(GRID_COLOR)
            .draw()
            .map_err(chart_error)?;

        let all_dichotomies = CURVE_COLORS[5];
        let growth_color = CURVE_COLORS[0];
        chart
            .draw_series(std::iter::once(DashedPathElement::new(
                sampled.iter().map(|p| (p.0, p.2)).collect::<Vec<_>>(),
                10,
                5,
                all_dichotomies.stroke_width(2),
            )))
            .map_err(chart_error)?
            .label("ln 2^N = N·ln 2 (every dichotomy)")
            .legend(move |(x, y)| {
                DashedPathElement::new(
                    vec![(x, y), (x + 28, y)],
                    10,
                    5,
                    all_dichotomies.stroke_width(2),
                )
            });
        chart
            .draw_series(LineSeries::new(
                sampled.iter().map(|p| (p.0, p.1)),
                growth_color.stroke_width(3),
            ))
            .map_err(chart_error)?
            .label("ln m_H(N)")
            .legend(move |(x, y)| {
                PathElement::new(vec![(x, y), (x + 28, y)], growth_color.stroke_width(3))
            });
        if sampled.len() <= 40 {
            chart
                .draw_series(
                    sampled
                        .iter()
                        .map(|p| Circle::new((p.0, p.1), 4, growth_color.filled())),
                )
                .map_err(chart_error)?;
        }

        if let Some(break_point) = family.break_point() {
            let x = break_point as f64;
            if x >= x_min && x <= x_max {
                chart
                    .draw_series(std::iter::once(PathElement::new(
                        vec![(x, 0.0), (x, y_max)],
                        REFUTED_COLOR.stroke_width(2),
                    )))
                    .map_err(chart_error)?
                    .label(format!("break point k = {break_point}: m_H(k) < 2^k"))
                    .legend(move |(x, y)| {
                        PathElement::new(vec![(x, y), (x + 28, y)], REFUTED_COLOR.stroke_width(2))
                    });
                let (px, py) = chart.backend_coord(&(x, y_max));
                let right_half = x > (x_min + x_max) / 2.0;
                let (anchor, offset) = if right_half {
                    (HPos::Right, -6)
                } else {
                    (HPos::Left, 6)
                };
                root.draw(&Text::new(
                    format!("break point {break_point}"),
                    (px + offset, py + 14),
                    text_style(15, REFUTED_COLOR).pos(Pos::new(anchor, VPos::Center)),
                ))
                .map_err(chart_error)?;
            }
        }
        if sampled.is_empty() {
            let (x, y) = chart.backend_coord(&((x_min + x_max) / 2.0, y_max / 2.0));
            root.draw(&Text::new(
                "no rows to draw",
                (x, y),
                text_style(16, TEXT_COLOR).pos(Pos::new(HPos::Center, VPos::Center)),
            ))
            .map_err(chart_error)?;
        }
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::LowerRight)
            .margin(14)
            .legend_area_size(40)
            .label_font(text_style(15, TEXT_COLOR))
            .background_style(WHITE.mix(0.92))
            .border_style(LEGEND_BORDER)
            .draw()
            .map_err(chart_error)?;
        root.present().map_err(chart_error)?;
    }
    Ok(svg)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn powers_of_ten_use_superscripts() {
        assert_eq!(power_of_ten_label(1e6), "10⁶");
        assert_eq!(power_of_ten_label(1e-3), "10⁻³");
        assert_eq!(power_of_ten_label(1.0), "1");
        assert_eq!(power_of_ten_label(10.0), "10");
    }

    #[test]
    fn decade_range_always_spans_a_decade() {
        assert_eq!(decade_range(0.02, 0.05), (0.01, 0.1));
        assert_eq!(decade_range(100.0, 100.0), (100.0, 1000.0));
        let (lo, hi) = decade_range(f64::NAN, 0.0);
        assert!(lo > 0.0 && hi > lo);
    }

    #[test]
    fn truncation_counts_characters_not_bytes() {
        assert_eq!(truncate_chars("ééééé", 3), "éé…");
        assert_eq!(truncate_chars("a\nb", 10), "a b");
    }

    #[test]
    fn growth_chart_marks_the_break_point() {
        let family = Family::Linear { dim: 2 };
        let table = crate::calculators::growth_table(&family, 8).expect("a table");
        let mut out = Vec::new();
        write_growth_svg(&family, &table.rows, &mut out).expect("drawn");
        let svg = String::from_utf8(out).expect("utf-8");
        assert!(svg.contains("break point 4"), "{svg}");
        assert!(svg.contains("ln m_H(N)"));
    }

    #[test]
    fn growth_chart_survives_no_rows() {
        let mut out = Vec::new();
        write_growth_svg(&Family::Ray, &[], &mut out).expect("drawn");
        assert!(String::from_utf8(out)
            .expect("utf-8")
            .contains("no rows to draw"));
    }
}
