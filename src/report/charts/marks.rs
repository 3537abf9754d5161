//! The marks of one run or claim, drawn in backend pixels: the interval bar styled by
//! verdict (solid, hollow, hatched, thin), the observed error, the claimed error and
//! the training error. The interval and claims charts and their legends share them.

use std::io;

use plotters::prelude::*;

use super::style::{
    chart_error, CERTIFIED_COLOR, CERTIFIED_FILL, CLAIM_COLOR, NO_CLAIM_COLOR, OBSERVED_COLOR,
    REFUTED_COLOR, REFUTED_FILL, TRAIN_COLOR, UNPROVEN_COLOR,
};
use crate::audit::Verdict;

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
pub(super) fn draw_observed<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    at: (i32, i32),
) -> io::Result<()> {
    area.draw(&Circle::new(at, 6, WHITE.filled()))
        .map_err(chart_error)?;
    area.draw(&Circle::new(at, 4, OBSERVED_COLOR.filled()))
        .map_err(chart_error)
}

/// The claimed error: a tall bar with a notch, taller than the interval bar.
pub(super) fn draw_claim<DB: DrawingBackend>(
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
pub(super) fn draw_train<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    at: (i32, i32),
) -> io::Result<()> {
    area.draw(&Cross::new(at, 5, WHITE.stroke_width(5)))
        .map_err(chart_error)?;
    area.draw(&Cross::new(at, 5, TRAIN_COLOR.stroke_width(2)))
        .map_err(chart_error)
}
