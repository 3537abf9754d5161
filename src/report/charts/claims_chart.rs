//! The claims chart of the HTML report: one row per claim, the bounds on its claimed
//! quantity styled by verdict and the threshold the claim sets.

use std::io;

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::frame::{
    row_chart, INTERVAL_AXIS_HEIGHT, INTERVAL_ROW_HEIGHT, INTERVAL_WIDTH, LABEL_CHARS,
};
use super::marks::{draw_claim, draw_verdict_bar};
use super::style::{
    chart_error, text_style, truncate_chars, verdict_color, verdict_words, FONT, OBSERVED_COLOR,
    TEXT_COLOR,
};
use crate::audit::Verdict;

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
