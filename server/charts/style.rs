//! The one look shared by every chart: colours, fonts and line widths.

use plotters::prelude::*;
use plotters::style::FontDesc;

/// Series colours, in the order they are handed out. The set stays
/// distinguishable under the common colour-vision deficiencies and against
/// white; yellow is left out because it is too faint as a line.
const PALETTE: [RGBColor; 7] = [
    RGBColor(0x00, 0x72, 0xB2), // blue
    RGBColor(0xD5, 0x5E, 0x00), // vermillion
    RGBColor(0x00, 0x9E, 0x73), // bluish green
    RGBColor(0xCC, 0x79, 0xA7), // reddish purple
    RGBColor(0xE6, 0x9F, 0x00), // orange
    RGBColor(0x56, 0xB4, 0xE9), // sky blue
    RGBColor(0x00, 0x00, 0x00), // black
];

/// Number of distinct palette entries; larger indices wrap around.
pub const PALETTE_LEN: usize = PALETTE.len();

pub(super) fn palette(index: usize) -> RGBColor {
    PALETTE[index % PALETTE.len()]
}

pub(super) const BACKGROUND: RGBColor = RGBColor(0xFF, 0xFF, 0xFF);
pub(super) const TEXT: RGBColor = RGBColor(0x22, 0x22, 0x22);
pub(super) const AXIS: RGBColor = RGBColor(0x55, 0x55, 0x55);
pub(super) const GRID: RGBColor = RGBColor(0xE3, 0xE3, 0xE3);
/// Reference lines default to a neutral dark grey so they never look like data.
pub(super) const REFERENCE: RGBColor = RGBColor(0x44, 0x44, 0x44);
/// Heatmap cells without a result.
pub(super) const NO_RESULT: RGBColor = RGBColor(0xD9, 0xD9, 0xD9);

pub(super) const SERIES_WIDTH: u32 = 2;
pub(super) const REFERENCE_WIDTH: u32 = 2;
pub(super) const MARKER_SIZE: i32 = 4;

/// Dash and gap lengths in pixels: short dashes for data, long for references.
pub(super) const SERIES_DASH: (u32, u32) = (6, 4);
pub(super) const REFERENCE_DASH: (u32, u32) = (10, 5);

const FAMILY: &str = "sans-serif";

/// plotters writes `font-size` as the given size divided by 1.24.
fn font(px: f64) -> FontDesc<'static> {
    (FAMILY, px * 1.24).into_font()
}

pub(super) fn title_font() -> TextStyle<'static> {
    font(16.0).style(FontStyle::Bold).color(&TEXT)
}

pub(super) fn axis_label_font() -> TextStyle<'static> {
    font(13.0).color(&TEXT)
}

pub(super) fn tick_font() -> TextStyle<'static> {
    font(11.0).color(&AXIS)
}

pub(super) fn legend_font() -> TextStyle<'static> {
    font(12.0).color(&TEXT)
}

pub(super) fn legend_heading_font() -> TextStyle<'static> {
    font(12.0).style(FontStyle::Bold).color(&TEXT)
}

pub(super) fn note_font() -> TextStyle<'static> {
    font(14.0).color(&AXIS)
}

/// Approximate width of text in the legend font, for layout only (the
/// browser does the real layout).
pub(super) fn legend_text_width(text: &str) -> u32 {
    (text.chars().count() as f64 * 12.0 * 0.58).ceil() as u32
}

/// Tick label text for an axis spanning `span`: enough decimals for steps
/// of about a tenth of the span, trailing zeros dropped ("-20", "0.25").
pub(super) fn format_tick(value: f64, span: f64) -> String {
    let decimals = if span > 0.0 && span.is_finite() {
        ((1.0 - (span / 10.0).log10()).ceil()).clamp(0.0, 12.0) as usize
    } else {
        1
    };
    let mut text = format!("{value:.decimals$}");
    if text.contains('.') {
        text = text.trim_end_matches('0').trim_end_matches('.').to_string();
    }
    if text == "-0" {
        text = "0".to_string();
    }
    text
}

/// Sequential colour scale for heatmaps: dark purple (low) to yellow (high),
/// monotone in lightness so it reads in grey and for colour-blind readers.
const HEAT_STOPS: [RGBColor; 7] = [
    RGBColor(0x44, 0x01, 0x54),
    RGBColor(0x44, 0x39, 0x83),
    RGBColor(0x31, 0x68, 0x8E),
    RGBColor(0x21, 0x91, 0x8C),
    RGBColor(0x35, 0xB7, 0x79),
    RGBColor(0x90, 0xD7, 0x43),
    RGBColor(0xFD, 0xE7, 0x25),
];

/// Colour at `t` in [0, 1] along the heat scale (clamped).
pub(super) fn heat_color(t: f64) -> RGBColor {
    let t = if t.is_finite() {
        t.clamp(0.0, 1.0)
    } else {
        0.0
    };
    let pos = t * (HEAT_STOPS.len() - 1) as f64;
    let i = (pos.floor() as usize).min(HEAT_STOPS.len() - 2);
    let f = pos - i as f64;
    let (a, b) = (HEAT_STOPS[i], HEAT_STOPS[i + 1]);
    let mix = |x: u8, y: u8| (x as f64 + (y as f64 - x as f64) * f).round() as u8;
    RGBColor(mix(a.0, b.0), mix(a.1, b.1), mix(a.2, b.2))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tick_labels_drop_needless_decimals_and_negative_zero() {
        assert_eq!(format_tick(-20.0, 30.0), "-20");
        assert_eq!(format_tick(0.30000000000000004, 1.0), "0.3");
        assert_eq!(format_tick(0.25, 1.0), "0.25");
        assert_eq!(format_tick(-1e-17, 1.0), "0");
        assert_eq!(format_tick(1.2e-6, 1e-5), "0.0000012");
    }

    #[test]
    fn palette_indices_wrap_around() {
        assert_eq!(palette(0), palette(PALETTE_LEN));
    }

    #[test]
    fn the_heat_scale_runs_from_first_to_last_stop_and_clamps() {
        assert_eq!(heat_color(0.0), HEAT_STOPS[0]);
        assert_eq!(heat_color(1.0), HEAT_STOPS[6]);
        assert_eq!(heat_color(7.0), HEAT_STOPS[6]);
        assert_eq!(heat_color(f64::NAN), HEAT_STOPS[0]);
    }
}
