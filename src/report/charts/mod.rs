//! SVG charts drawn with plotters into in-memory strings: the growth-function chart
//! of `gapcert growth --svg`, and the charts of the HTML report.
//!
//! Every chart must read in grayscale, so a verdict is told apart by the shape or
//! fill pattern of its mark as well as by its color, and every line has its own dash
//! pattern. plotters' SVG backend escapes the text it writes (`&`, `<`, `>`, `"`,
//! `'`), so labels are handed to it as plain text: escaping them here as well would
//! show the entities to the reader.
//!
//! One file per chart over three shared parts: `style` (font, colors, dash patterns,
//! label text, the inline form of an SVG), `marks` (the verdict bar and the observed,
//! claimed and training marks) and `frame` (the frame of the charts with one row per
//! run or claim). The charts: `interval_chart`, `claims_chart`, `wear_chart` and
//! `theory_chart` (the HTML report) and `growth_chart` (`gapcert growth --svg`).

mod claims_chart;
mod frame;
mod growth_chart;
mod interval_chart;
mod marks;
mod style;
mod theory_chart;
mod wear_chart;

pub use claims_chart::{claims_chart_svg, ClaimRow};
pub use growth_chart::write_growth_svg;
pub use interval_chart::{interval_chart_svg, IntervalRow};
pub use marks::draw_verdict_bar;
pub use style::{
    decade_range, inline_svg, power_of_ten_label, truncate_chars, verdict_color, verdict_words,
    CERTIFIED_COLOR, CERTIFIED_FILL, CLAIM_COLOR, CURVE_COLORS, FONT, NO_CLAIM_COLOR,
    OBSERVED_COLOR, REFUTED_COLOR, REFUTED_FILL, TRAIN_COLOR, UNPROVEN_COLOR,
};
pub use theory_chart::{theory_chart_svg, TheoryCurve, TheoryPoint};
pub use wear_chart::wear_chart_svg;
