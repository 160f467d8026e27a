//! Server-side charts rendered as SVG documents.
//!
//! The inputs are plain data (the app adapts its own types into them) and the
//! output is a complete `<svg …>` document to inline in a page. Text becomes
//! SVG `<text>` elements that the browser lays out, so no font library or
//! font file is needed. plotters escapes `<`, `>`, `&` and quotes in all text
//! and writes presentation attributes only (no `style=`), which keeps the
//! output usable under a strict content security policy.
//!
//! Rendering never panics on data: non-finite points are skipped, empty input
//! renders a "no data" chart, and malformed input returns a [`ChartError`]
//! naming the field.

mod clip;
mod heatmap;
mod legend;
mod line;
mod style;

pub use heatmap::{render_heatmap, HeatmapChart, MAX_CELLS};
pub use line::{render_line_chart, LineChart, RefLine, Series, SeriesStyle, MAX_POINTS_PER_SERIES};
pub use style::PALETTE_LEN;

use plotters::coord::Shift;
use plotters::prelude::*;
use std::fmt;

/// Smallest and largest accepted chart sizes in pixels (the SVG scales with its viewBox).
const MIN_WIDTH: u32 = 240;
const MIN_HEIGHT: u32 = 180;
const MAX_SIDE: u32 = 4000;

/// Why a chart could not be rendered.
#[derive(Debug, Clone, PartialEq)]
pub enum ChartError {
    /// Width or height outside the accepted range.
    InvalidSize {
        field: &'static str,
        value: u32,
        min: u32,
        max: u32,
    },
    /// An explicit axis range that is not finite or not increasing.
    InvalidRange {
        field: &'static str,
        min: f64,
        max: f64,
    },
    /// A data vector whose length does not match the grid it belongs to.
    LengthMismatch {
        field: &'static str,
        expected: usize,
        actual: usize,
    },
    /// Axis values that are not finite and strictly increasing.
    NotIncreasing { field: &'static str, index: usize },
    /// More data than one chart should carry.
    TooMuchData {
        field: &'static str,
        limit: usize,
        actual: usize,
    },
    /// The drawing library failed; the text is for logs, not for users.
    Render(String),
}

impl ChartError {
    /// The input field the error is about, if any.
    pub fn field(&self) -> Option<&'static str> {
        match self {
            ChartError::InvalidSize { field, .. }
            | ChartError::InvalidRange { field, .. }
            | ChartError::LengthMismatch { field, .. }
            | ChartError::NotIncreasing { field, .. }
            | ChartError::TooMuchData { field, .. } => Some(field),
            ChartError::Render(_) => None,
        }
    }
}

impl fmt::Display for ChartError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ChartError::InvalidSize {
                field,
                value,
                min,
                max,
            } => write!(
                f,
                "{field} must be between {min} and {max} pixels, got {value}"
            ),
            ChartError::InvalidRange { field, min, max } => write!(
                f,
                "{field} must be finite with min below max, got ({min}, {max})"
            ),
            ChartError::LengthMismatch {
                field,
                expected,
                actual,
            } => write!(f, "{field} must have {expected} entries, got {actual}"),
            ChartError::NotIncreasing { field, index } => write!(
                f,
                "{field} must be finite and strictly increasing (problem at index {index})"
            ),
            ChartError::TooMuchData {
                field,
                limit,
                actual,
            } => write!(
                f,
                "{field} has {actual} entries, at most {limit} can be drawn"
            ),
            ChartError::Render(msg) => write!(f, "chart rendering failed: {msg}"),
        }
    }
}

impl std::error::Error for ChartError {}

impl<E: std::error::Error + Send + Sync> From<DrawingAreaErrorKind<E>> for ChartError {
    fn from(err: DrawingAreaErrorKind<E>) -> Self {
        ChartError::Render(err.to_string())
    }
}

type Area<'a> = DrawingArea<SVGBackend<'a>, Shift>;

fn check_size(width: u32, height: u32) -> Result<(), ChartError> {
    if !(MIN_WIDTH..=MAX_SIDE).contains(&width) {
        return Err(ChartError::InvalidSize {
            field: "width",
            value: width,
            min: MIN_WIDTH,
            max: MAX_SIDE,
        });
    }
    if !(MIN_HEIGHT..=MAX_SIDE).contains(&height) {
        return Err(ChartError::InvalidSize {
            field: "height",
            value: height,
            min: MIN_HEIGHT,
            max: MAX_SIDE,
        });
    }
    Ok(())
}

/// Checks an explicit axis range given by the caller.
fn check_range(field: &'static str, range: (f64, f64)) -> Result<(f64, f64), ChartError> {
    let (min, max) = range;
    if min.is_finite() && max.is_finite() && min < max && (max - min).is_finite() {
        Ok(range)
    } else {
        Err(ChartError::InvalidRange { field, min, max })
    }
}

/// Makes user text safe to lay out: control characters (invalid in XML)
/// become spaces and very long text is cut with an ellipsis. Markup
/// characters are left for the SVG backend, which escapes them.
fn clean_text(text: &str, max_chars: usize) -> String {
    let mut out: String = text
        .chars()
        .map(|c| if c.is_control() { ' ' } else { c })
        .take(max_chars + 1)
        .collect();
    if out.chars().count() > max_chars {
        out = out.chars().take(max_chars.saturating_sub(1)).collect();
        out.push('…');
    }
    out.trim().to_string()
}

/// Escapes text for an XML attribute value.
fn escape_attr(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '&' => out.push_str("&amp;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            other => out.push(other),
        }
    }
    out
}

/// Renders into a string with the shared canvas set-up, then labels the root
/// element for CSS and assistive technology.
fn render_svg<F>(width: u32, height: u32, title: &str, draw: F) -> Result<String, ChartError>
where
    F: FnOnce(&Area<'_>) -> Result<(), ChartError>,
{
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (width, height)).into_drawing_area();
        root.fill(&style::BACKGROUND)?;
        draw(&root)?;
        root.present()?;
    }
    Ok(label_root(svg, title))
}

/// Adds `class`, `role` and `aria-label` to the opening `<svg` tag.
fn label_root(svg: String, title: &str) -> String {
    match svg.strip_prefix("<svg ") {
        Some(rest) => {
            let label = if title.is_empty() { "Chart" } else { title };
            format!(
                "<svg class=\"chart\" role=\"img\" aria-label=\"{}\" {rest}",
                escape_attr(label)
            )
        }
        None => svg,
    }
}

/// Draws the title (if any) and returns the area below it.
fn draw_title<'a>(root: &Area<'a>, title: &str) -> Result<Area<'a>, ChartError> {
    if title.is_empty() {
        return Ok(root.margin(8, 0, 0, 0));
    }
    Ok(root.titled(title, style::title_font())?)
}

/// The chart shown when there is nothing to plot: the title and a framed note.
fn draw_no_data(root: &Area<'_>, title: &str, note: &str) -> Result<(), ChartError> {
    let body = draw_title(root, title)?.margin(8, 16, 16, 16);
    let (w, h) = body.dim_in_pixel();
    let (w, h) = (w as i32, h as i32);
    body.draw(&Rectangle::new(
        [(0, 0), (w - 1, h - 1)],
        style::AXIS.stroke_width(1),
    ))?;
    body.draw(&Text::new(
        note.to_string(),
        (w / 2, h / 2),
        style::note_font().pos(plotters::style::text_anchor::Pos::new(
            plotters::style::text_anchor::HPos::Center,
            plotters::style::text_anchor::VPos::Center,
        )),
    ))?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn control_characters_become_spaces_and_long_text_is_cut() {
        assert_eq!(clean_text("a\u{0}b\nc", 20), "a b c");
        let cut = clean_text(&"x".repeat(50), 10);
        assert_eq!(cut.chars().count(), 10);
        assert!(cut.ends_with('…'));
    }

    #[test]
    fn attribute_text_is_escaped() {
        assert_eq!(
            escape_attr("<a href=\"x\">&'"),
            "&lt;a href=&quot;x&quot;&gt;&amp;&apos;"
        );
    }

    #[test]
    fn a_too_small_width_is_rejected_naming_the_field() {
        let err = check_size(10, 400).unwrap_err();
        assert_eq!(err.field(), Some("width"));
    }

    #[test]
    fn a_reversed_or_nan_range_is_rejected() {
        assert!(check_range("x_range", (2.0, 1.0)).is_err());
        assert!(check_range("x_range", (f64::NAN, 1.0)).is_err());
        assert!(check_range("x_range", (-f64::MAX, f64::MAX)).is_err());
        assert!(check_range("x_range", (0.0, 1.0)).is_ok());
    }
}
