//! The wear chart of the HTML report, one per held-out split: the accuracy its best run
//! can certify against the number of models compared on it.

use std::io;

use plotters::element::DashedPathElement;
use plotters::prelude::*;

use super::style::{
    chart_error, power_of_ten_label, text_style, truncate_chars, CLAIM_COLOR, CURVE_COLORS, FONT,
    GRID_COLOR, LEGEND_BORDER, REFUTED_COLOR, TEXT_COLOR, TRAIN_COLOR,
};
use crate::audit::splits::SplitEntry;

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
