//! The look shared by every chart: the font, the verdict and curve colors, the dash
//! patterns, the text of labels (log-axis ticks, truncation) and the inline form of an
//! SVG for an HTML page.

use std::io;

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use crate::audit::Verdict;

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
pub(super) const GRID_COLOR: RGBColor = RGBColor(0xdd, 0xdd, 0xdd);
pub(super) const STRIPE_COLOR: RGBColor = RGBColor(0xf3, 0xf4, 0xf6);
pub(super) const TEXT_COLOR: RGBColor = RGBColor(0x22, 0x22, 0x22);
/// The outline of the legend boxes.
pub(super) const LEGEND_BORDER: RGBColor = RGBColor(0x99, 0x99, 0x99);

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
pub(super) const DASHES: [(u32, u32); 10] = [
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
pub(super) fn chart_error<E: std::fmt::Debug>(error: E) -> io::Error {
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
            crate::report::escape::escape_html(accessible_name)
        ),
        1,
    )
}

pub(super) fn text_style(size: u32, color: RGBColor) -> TextStyle<'static> {
    TextStyle {
        font: (FONT, size).into_font(),
        color: color.to_backend_color(),
        pos: Pos::new(HPos::Left, VPos::Top),
    }
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
}
