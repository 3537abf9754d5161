//! The interval chart of the HTML report: one row per run, its two-sided held-out
//! interval styled by verdict, with the observed, claimed and training errors.

use std::io;

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::frame::{
    row_chart, INTERVAL_AXIS_HEIGHT, INTERVAL_LEGEND_HEIGHT, INTERVAL_ROW_HEIGHT, INTERVAL_WIDTH,
    LABEL_CHARS,
};
use super::marks::{draw_claim, draw_observed, draw_train, draw_verdict_bar};
use super::style::{
    chart_error, text_style, truncate_chars, verdict_color, verdict_words, FONT, TEXT_COLOR,
};
use crate::audit::Verdict;

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

fn finite_rate(value: f64) -> f64 {
    if value.is_finite() {
        value.clamp(0.0, 1.0)
    } else {
        0.0
    }
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
