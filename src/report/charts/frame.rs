//! The frame of the charts with one row per run or claim (the interval and claims
//! charts): their sizes, axis and zebra stripes.

use std::io;

use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;

use super::style::{chart_error, text_style, GRID_COLOR, STRIPE_COLOR, TEXT_COLOR};

pub(super) const INTERVAL_WIDTH: u32 = 1100;
pub(super) const INTERVAL_LEGEND_HEIGHT: u32 = 78;
pub(super) const INTERVAL_ROW_HEIGHT: u32 = 26;
pub(super) const INTERVAL_AXIS_HEIGHT: u32 = 52;
const INTERVAL_LABEL_WIDTH: u32 = 270;
const INTERVAL_VERDICT_WIDTH: u32 = 96;
pub(super) const LABEL_CHARS: usize = 36;

/// The frame of the charts with one row per run or claim: `rows` rows over the x range,
/// the x axis labelled by `x_label` and described by `x_desc`, no y labels, and zebra
/// stripes for the eye to follow a row across (row 0 at the top).
pub(super) fn row_chart<'a, DB: DrawingBackend>(
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
