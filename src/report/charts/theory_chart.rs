//! The theory chart of the HTML report: the VC allowance Ω against N on log–log axes,
//! one curve per growth bound and one marker per run, with its own legend.

use std::io;

use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::style::{
    chart_error, decade_range, power_of_ten_label, text_style, truncate_chars, CERTIFIED_COLOR,
    CURVE_COLORS, DASHES, FONT, GRID_COLOR, NO_CLAIM_COLOR, REFUTED_COLOR, TEXT_COLOR,
};

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
