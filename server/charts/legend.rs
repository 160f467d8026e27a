//! The legend panel beside the plot, and the marks shared by plot and legend.

use super::clip::hatch_segments;
use super::{style, Area, ChartError};
use plotters::coord::CoordTranslate;
use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

const ROW_HEIGHT: i32 = 20;
const KEY_WIDTH: i32 = 24;
const KEY_GAP: i32 = 8;
const PADDING: i32 = 6;

/// Distance between hatch lines, in pixels.
pub(super) const HATCH_SPACING: f64 = 9.0;

/// Point marker shapes, handed out in turn so measured series differ by
/// shape as well as colour.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum MarkerShape {
    Circle,
    Square,
    Triangle,
}

impl MarkerShape {
    pub fn nth(n: usize) -> Self {
        [Self::Circle, Self::Square, Self::Triangle][n % 3]
    }
}

/// What the legend shows before a label.
#[derive(Debug, Clone, Copy)]
pub(super) enum LegendKey {
    Line(RGBColor),
    DashedLine(RGBColor),
    Reference(RGBColor),
    Marker(RGBColor, MarkerShape),
    Swatch(RGBColor),
    Hatched,
    Boundary,
    CycleMarker,
}

#[derive(Debug, Clone)]
pub(super) struct LegendEntry {
    pub key: LegendKey,
    pub label: String,
}

/// Legend width that fits the longest label, within a share of the chart.
pub(super) fn legend_width(labels: impl Iterator<Item = usize>, chart_width: u32) -> u32 {
    let longest = labels.max().unwrap_or(0) as u32;
    let wanted = (PADDING * 2 + KEY_WIDTH + KEY_GAP) as u32 + (longest as f64 * 7.0) as u32;
    // Not `clamp`: on a narrow chart the share is below the minimum.
    wanted.max(110).min((chart_width as f64 * 0.38) as u32)
}

/// Draws a heading (optional) and one row per entry, top-aligned.
pub(super) fn draw_legend(
    area: &Area<'_>,
    heading: &str,
    entries: &[LegendEntry],
) -> Result<(), ChartError> {
    let (w, h) = area.dim_in_pixel();
    let text_room = (w as i32 - PADDING * 2 - KEY_WIDTH - KEY_GAP).max(20) as u32;
    let label_style = style::legend_font().pos(Pos::new(HPos::Left, VPos::Center));
    let mut y = PADDING + ROW_HEIGHT / 2;

    if !heading.is_empty() {
        let room = (w as i32 - PADDING * 2).max(20) as u32;
        area.draw(&Text::new(
            fit(heading, room),
            (PADDING, y),
            style::legend_heading_font().pos(Pos::new(HPos::Left, VPos::Center)),
        ))?;
        y += ROW_HEIGHT;
    }

    let rows = ((h as i32 - y) / ROW_HEIGHT).max(0) as usize + 1;
    let (shown, hidden) = if entries.len() > rows {
        (rows.saturating_sub(1), entries.len() + 1 - rows)
    } else {
        (entries.len(), 0)
    };
    for entry in &entries[..shown] {
        draw_key(area, entry.key, (PADDING, y))?;
        area.draw(&Text::new(
            fit(&entry.label, text_room),
            (PADDING + KEY_WIDTH + KEY_GAP, y),
            label_style.clone(),
        ))?;
        y += ROW_HEIGHT;
    }
    if hidden > 0 {
        area.draw(&Text::new(
            format!("+ {hidden} more"),
            (PADDING, y),
            label_style,
        ))?;
    }
    Ok(())
}

/// Cuts a label to roughly `room` pixels, marking the cut.
fn fit(label: &str, room: u32) -> String {
    if style::legend_text_width(label) <= room {
        return label.to_string();
    }
    let mut out: String = label.chars().collect();
    while !out.is_empty() && style::legend_text_width(&out) + style::legend_text_width("…") > room
    {
        out.pop();
    }
    out.push('…');
    out
}

fn draw_key(area: &Area<'_>, key: LegendKey, (x, y): (i32, i32)) -> Result<(), ChartError> {
    let (x1, mid) = (x + KEY_WIDTH, x + KEY_WIDTH / 2);
    let swatch = [(x + 2, y - 6), (x1 - 2, y + 6)];
    match key {
        LegendKey::Line(color) => {
            area.draw(&PathElement::new(
                vec![(x, y), (x1, y)],
                color.stroke_width(style::SERIES_WIDTH),
            ))?;
        }
        LegendKey::DashedLine(color) => {
            let (dash, gap) = style::SERIES_DASH;
            area.draw(&DashedPathElement::new(
                vec![(x, y), (x1, y)],
                dash,
                gap,
                color.stroke_width(style::SERIES_WIDTH),
            ))?;
        }
        LegendKey::Reference(color) => {
            let (dash, gap) = style::REFERENCE_DASH;
            area.draw(&DashedPathElement::new(
                vec![(x, y), (x1, y)],
                dash,
                gap,
                color.stroke_width(style::REFERENCE_WIDTH),
            ))?;
        }
        LegendKey::Marker(color, shape) => draw_marker(area, (mid, y), shape, color)?,
        LegendKey::Swatch(color) => {
            area.draw(&Rectangle::new(swatch, color.filled()))?;
        }
        LegendKey::Hatched => {
            let [p0, p1] = swatch;
            let to_f = |p: (i32, i32)| (p.0 as f64, p.1 as f64);
            let to_i = |p: (f64, f64)| (p.0.round() as i32, p.1.round() as i32);
            let lines = hatch_segments(to_f(p0), to_f(p1), to_f(p0), (1.0, 1.0), HATCH_SPACING);
            for [a, b] in lines {
                draw_haloed(area, vec![to_i(a), to_i(b)], 1)?;
            }
            area.draw(&Rectangle::new(swatch, BLACK.stroke_width(1)))?;
        }
        LegendKey::Boundary => draw_haloed(area, vec![(x, y), (x1, y)], 2)?,
        LegendKey::CycleMarker => draw_cycle_marker(area, (mid, y))?,
    }
    Ok(())
}

/// A black line over a wider white one, visible on any cell colour.
pub(super) fn draw_haloed<CT>(
    area: &DrawingArea<SVGBackend<'_>, CT>,
    points: Vec<CT::From>,
    width: u32,
) -> Result<(), ChartError>
where
    CT: CoordTranslate,
    CT::From: Clone,
{
    area.draw(&PathElement::new(
        points.clone(),
        WHITE.mix(0.75).stroke_width(width + 2),
    ))?;
    area.draw(&PathElement::new(points, BLACK.stroke_width(width)))?;
    Ok(())
}

pub(super) fn draw_marker<CT>(
    area: &DrawingArea<SVGBackend<'_>, CT>,
    at: CT::From,
    shape: MarkerShape,
    color: RGBColor,
) -> Result<(), ChartError>
where
    CT: CoordTranslate,
{
    let r = style::MARKER_SIZE;
    match shape {
        MarkerShape::Circle => {
            area.draw(&(EmptyElement::at(at) + Circle::new((0, 0), r, color.filled())))?
        }
        MarkerShape::Square => area.draw(
            &(EmptyElement::at(at)
                + Rectangle::new([(-r + 1, -r + 1), (r - 1, r - 1)], color.filled())),
        )?,
        MarkerShape::Triangle => {
            area.draw(&(EmptyElement::at(at) + TriangleMarker::new((0, 0), r + 1, color.filled())))?
        }
    }
    Ok(())
}

/// The mark for the cycle's own operating point: a ringed dot.
pub(super) fn draw_cycle_marker<CT>(
    area: &DrawingArea<SVGBackend<'_>, CT>,
    at: CT::From,
) -> Result<(), ChartError>
where
    CT: CoordTranslate,
{
    area.draw(
        &(EmptyElement::at(at)
            + Circle::new((0, 0), 7, WHITE.filled())
            + Circle::new((0, 0), 7, BLACK.stroke_width(2))
            + Circle::new((0, 0), 2, BLACK.filled())),
    )?;
    Ok(())
}

/// Text on a light backing at a pixel `offset` from `at`, so it stays
/// readable over lines and cells.
pub(super) fn draw_backed_label<CT>(
    area: &DrawingArea<SVGBackend<'_>, CT>,
    at: CT::From,
    offset: (i32, i32),
    anchor: (HPos, VPos),
    text: &str,
    color: RGBColor,
) -> Result<(), ChartError>
where
    CT: CoordTranslate,
{
    let (dx, dy) = offset;
    let w = style::legend_text_width(text) as i32 + 4;
    let (x0, x1) = match anchor.0 {
        HPos::Left => (dx - 2, dx + w),
        HPos::Right => (dx - w, dx + 2),
        HPos::Center => (dx - w / 2 - 2, dx + w / 2 + 2),
    };
    let (y0, y1) = match anchor.1 {
        VPos::Top => (dy - 1, dy + 15),
        VPos::Center => (dy - 8, dy + 8),
        VPos::Bottom => (dy - 15, dy + 1),
    };
    let text_style = style::legend_font()
        .color(&color)
        .pos(Pos::new(anchor.0, anchor.1));
    area.draw(
        &(EmptyElement::at(at)
            + Rectangle::new([(x0, y0), (x1, y1)], WHITE.mix(0.85).filled())
            + Text::new(text.to_string(), (dx, dy), text_style)),
    )?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_legend_takes_at_most_its_share_of_a_narrow_chart() {
        assert_eq!(legend_width([3].into_iter(), 240), 91);
        assert_eq!(legend_width([3].into_iter(), 1000), 110);
        assert_eq!(legend_width([500].into_iter(), 1000), 380);
    }

    #[test]
    fn a_long_legend_label_is_cut_to_fit() {
        let cut = fit(&"m".repeat(80), 100);
        assert!(cut.ends_with('…'));
        assert!(style::legend_text_width(&cut) <= 100);
        assert_eq!(fit("short", 100), "short");
    }
}
