//! The growth-function chart of `gapcert growth --svg`: ln m_H(N) against ln 2^N, with
//! the break point marked.

use std::io::{self, Write};

use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::style::{
    chart_error, text_style, CURVE_COLORS, FONT, GRID_COLOR, LEGEND_BORDER, REFUTED_COLOR,
    TEXT_COLOR,
};
use crate::calculators::GrowthRow;
use crate::theory::growth::Family;

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
