//! Line and scatter charts with horizontal and vertical reference lines.

use super::clip::{clip_polyline, distinct_pixels, finite_runs, is_finite_point, thin_to_columns};
use super::clip::{Bounds, Point};
use super::legend::{self, LegendEntry, LegendKey, MarkerShape};
use super::{check_range, check_size, clean_text, draw_no_data, draw_title, render_svg, style};
use super::{Area, ChartError};
use plotters::coord::types::RangedCoordf64;
use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

/// Most points one series may carry (a two-day log at one point per second fits).
pub const MAX_POINTS_PER_SERIES: usize = 200_000;

const TITLE_CHARS: usize = 120;
const LABEL_CHARS: usize = 80;

/// How a series is drawn.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum SeriesStyle {
    /// A solid line, e.g. a model sweep or a logged temperature.
    #[default]
    Line,
    /// Unjoined markers, e.g. measured values.
    Points,
    /// A dashed line, e.g. a second model or an estimate.
    DashedLine,
}

/// One named set of (x, y) points. Non-finite points are skipped; in a line
/// they leave a gap.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Series {
    pub name: String,
    pub points: Vec<(f64, f64)>,
    pub style: SeriesStyle,
    /// Palette index (wraps at [`super::PALETTE_LEN`]); `None` takes the
    /// series' position.
    pub color: Option<usize>,
}

/// A labelled constant line, e.g. a temperature limit or a storage condition.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct RefLine {
    pub label: String,
    pub value: f64,
    /// Palette index; `None` draws it in neutral dark grey.
    pub color: Option<usize>,
}

/// A chart of series against shared axes. Put units in the axis labels,
/// e.g. "Time (h)", "Temperature (°C)".
#[derive(Debug, Clone, PartialEq)]
pub struct LineChart {
    pub title: String,
    pub x_label: String,
    pub y_label: String,
    pub series: Vec<Series>,
    /// Horizontal lines at y = value.
    pub hlines: Vec<RefLine>,
    /// Vertical lines at x = value.
    pub vlines: Vec<RefLine>,
    /// Fixed axis ranges; `None` fits the data and the reference lines.
    pub x_range: Option<(f64, f64)>,
    pub y_range: Option<(f64, f64)>,
    pub width: u32,
    pub height: u32,
}

impl Default for LineChart {
    fn default() -> Self {
        Self {
            title: String::new(),
            x_label: String::new(),
            y_label: String::new(),
            series: Vec::new(),
            hlines: Vec::new(),
            vlines: Vec::new(),
            x_range: None,
            y_range: None,
            width: 720,
            height: 420,
        }
    }
}

/// Renders a line chart as a complete SVG document.
pub fn render_line_chart(chart: &LineChart) -> Result<String, ChartError> {
    check_size(chart.width, chart.height)?;
    let x_fixed = chart
        .x_range
        .map(|r| check_range("x_range", r))
        .transpose()?;
    let y_fixed = chart
        .y_range
        .map(|r| check_range("y_range", r))
        .transpose()?;
    for s in &chart.series {
        if s.points.len() > MAX_POINTS_PER_SERIES {
            return Err(ChartError::TooMuchData {
                field: "series.points",
                limit: MAX_POINTS_PER_SERIES,
                actual: s.points.len(),
            });
        }
    }

    let title = clean_text(&chart.title, TITLE_CHARS);
    let has_data = chart
        .series
        .iter()
        .any(|s| s.points.iter().any(|p| is_finite_point(*p)));
    if !has_data {
        return render_svg(chart.width, chart.height, &title, |root| {
            draw_no_data(root, &title, "No data to show")
        });
    }

    let bounds = Bounds {
        x: match x_fixed {
            Some(r) => r,
            None => auto_range("series", x_values(chart), x_padding(chart))?,
        },
        y: match y_fixed {
            Some(r) => r,
            None => auto_range("series", y_values(chart), 0.05)?,
        },
    };

    render_svg(chart.width, chart.height, &title, |root| {
        draw_chart(root, chart, &title, &bounds)
    })
}

fn x_values(chart: &LineChart) -> Vec<f64> {
    let points = chart.series.iter().flat_map(|s| &s.points);
    let finite = points.filter(|p| is_finite_point(**p)).map(|p| p.0);
    finite
        .chain(
            chart
                .vlines
                .iter()
                .map(|l| l.value)
                .filter(|v| v.is_finite()),
        )
        .collect()
}

fn y_values(chart: &LineChart) -> Vec<f64> {
    let points = chart.series.iter().flat_map(|s| &s.points);
    let finite = points.filter(|p| is_finite_point(**p)).map(|p| p.1);
    finite
        .chain(
            chart
                .hlines
                .iter()
                .map(|l| l.value)
                .filter(|v| v.is_finite()),
        )
        .collect()
}

/// Lines usually start at a meaningful x (time zero, pure solute), so only
/// charts with markers get room at the sides.
fn x_padding(chart: &LineChart) -> f64 {
    let has_points = chart.series.iter().any(|s| s.style == SeriesStyle::Points);
    if has_points {
        0.03
    } else {
        0.0
    }
}

/// The span of `values` widened by `pad` of the span on each side; a
/// single value gets a small window around it.
fn auto_range(field: &'static str, values: Vec<f64>, pad: f64) -> Result<(f64, f64), ChartError> {
    let min = values.iter().copied().fold(f64::INFINITY, f64::min);
    let max = values.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let span = max - min;
    if !span.is_finite() {
        return Err(ChartError::InvalidRange { field, min, max });
    }
    let (lo, hi) = if span > 1e-9 * min.abs().max(max.abs()) {
        (min - span * pad, max + span * pad)
    } else {
        let half = (min.abs() * 0.05).max(1.0);
        (min - half, max + half)
    };
    check_range(field, (lo, hi))
}

type Chart<'a, 'b> = ChartContext<'a, SVGBackend<'b>, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

fn draw_chart(
    root: &Area<'_>,
    chart: &LineChart,
    title: &str,
    bounds: &Bounds,
) -> Result<(), ChartError> {
    let body = draw_title(root, title)?;
    let entries = legend_entries(chart);
    let legend_w =
        legend::legend_width(entries.iter().map(|e| e.label.chars().count()), chart.width);
    let (plot_area, legend_area) = body.split_horizontally(chart.width - legend_w);

    let mut plot = ChartBuilder::on(&plot_area)
        .margin_top(6)
        .margin_right(12)
        .margin_left(6)
        .margin_bottom(6)
        .x_label_area_size(44)
        .y_label_area_size(64)
        .build_cartesian_2d(bounds.x.0..bounds.x.1, bounds.y.0..bounds.y.1)?;

    let (x_span, y_span) = (bounds.x.1 - bounds.x.0, bounds.y.1 - bounds.y.0);
    let x_ticks = |v: &f64| style::format_tick(*v, x_span);
    let y_ticks = |v: &f64| style::format_tick(*v, y_span);
    plot.configure_mesh()
        .x_label_formatter(&x_ticks)
        .y_label_formatter(&y_ticks)
        .x_desc(clean_text(&chart.x_label, LABEL_CHARS))
        .y_desc(clean_text(&chart.y_label, LABEL_CHARS))
        .x_labels(8)
        .y_labels(6)
        .bold_line_style(style::GRID.stroke_width(1))
        .light_line_style(TRANSPARENT)
        .axis_style(style::AXIS.stroke_width(1))
        .label_style(style::tick_font())
        .axis_desc_style(style::axis_label_font())
        .draw()?;

    for line in &chart.hlines {
        draw_hline(&plot, line, bounds)?;
    }
    for line in &chart.vlines {
        draw_vline(&plot, line, bounds)?;
    }
    let (plot_w, plot_h) = plot.plotting_area().dim_in_pixel();
    let pixel = (x_span / plot_w.max(1) as f64, y_span / plot_h.max(1) as f64);
    let mut point_series = 0;
    for (i, series) in chart.series.iter().enumerate() {
        let color = style::palette(series.color.unwrap_or(i));
        let dashed = series.style == SeriesStyle::DashedLine;
        match series.style {
            SeriesStyle::Line | SeriesStyle::DashedLine => {
                draw_path(&mut plot, &series.points, color, dashed, bounds, pixel.0)?
            }
            SeriesStyle::Points => {
                let shape = MarkerShape::nth(point_series);
                point_series += 1;
                // Markers closer than two pixels would look the same drawn once.
                let cell = (pixel.0 * 2.0, pixel.1 * 2.0);
                for p in distinct_pixels(&series.points, bounds, cell) {
                    legend::draw_marker(plot.plotting_area(), p, shape, color)?;
                }
            }
        }
    }

    legend::draw_legend(&legend_area.margin(6, 0, 0, 0), "", &entries)
}

fn legend_entries(chart: &LineChart) -> Vec<LegendEntry> {
    let mut entries = Vec::new();
    let mut point_series = 0;
    for (i, series) in chart.series.iter().enumerate() {
        let color = style::palette(series.color.unwrap_or(i));
        let key = match series.style {
            SeriesStyle::Line => LegendKey::Line(color),
            SeriesStyle::DashedLine => LegendKey::DashedLine(color),
            SeriesStyle::Points => {
                point_series += 1;
                LegendKey::Marker(color, MarkerShape::nth(point_series - 1))
            }
        };
        let mut label = clean_text(&series.name, LABEL_CHARS);
        if label.is_empty() {
            label = format!("Series {}", i + 1);
        }
        entries.push(LegendEntry { key, label });
    }
    for line in chart.hlines.iter().chain(&chart.vlines) {
        if line.value.is_finite() {
            entries.push(LegendEntry {
                key: LegendKey::Reference(ref_color(line)),
                label: ref_label(line),
            });
        }
    }
    entries
}

fn ref_color(line: &RefLine) -> RGBColor {
    line.color.map_or(style::REFERENCE, style::palette)
}

fn ref_label(line: &RefLine) -> String {
    let label = clean_text(&line.label, LABEL_CHARS);
    if label.is_empty() {
        style::format_tick(line.value, line.value.abs())
    } else {
        label
    }
}

fn reference_style(line: &RefLine) -> ShapeStyle {
    ref_color(line).stroke_width(style::REFERENCE_WIDTH)
}

fn draw_hline(plot: &Chart<'_, '_>, line: &RefLine, bounds: &Bounds) -> Result<(), ChartError> {
    let v = line.value;
    if !(v.is_finite() && v >= bounds.y.0 && v <= bounds.y.1) {
        return Ok(());
    }
    let (dash, gap) = style::REFERENCE_DASH;
    plot.plotting_area().draw(&DashedPathElement::new(
        vec![(bounds.x.0, v), (bounds.x.1, v)],
        dash,
        gap,
        reference_style(line),
    ))?;
    // Label at the right end, above the line unless that leaves the plot.
    let top = plot.backend_coord(&(bounds.x.1, bounds.y.1)).1;
    let near_top = plot.backend_coord(&(bounds.x.1, v)).1 - top < 18;
    let (dy, v_pos) = if near_top {
        (3, VPos::Top)
    } else {
        (-3, VPos::Bottom)
    };
    legend::draw_backed_label(
        plot.plotting_area(),
        (bounds.x.1, v),
        (-4, dy),
        (HPos::Right, v_pos),
        &ref_label(line),
        ref_color(line),
    )
}

fn draw_vline(plot: &Chart<'_, '_>, line: &RefLine, bounds: &Bounds) -> Result<(), ChartError> {
    let v = line.value;
    if !(v.is_finite() && v >= bounds.x.0 && v <= bounds.x.1) {
        return Ok(());
    }
    let (dash, gap) = style::REFERENCE_DASH;
    plot.plotting_area().draw(&DashedPathElement::new(
        vec![(v, bounds.y.0), (v, bounds.y.1)],
        dash,
        gap,
        reference_style(line),
    ))?;
    // Label at the top, right of the line unless that leaves the plot.
    let right = plot.backend_coord(&(bounds.x.1, bounds.y.1)).0;
    let label = ref_label(line);
    let room = right - plot.backend_coord(&(v, bounds.y.1)).0;
    let (dx, h_pos) = if room > style::legend_text_width(&label) as i32 + 10 {
        (4, HPos::Left)
    } else {
        (-4, HPos::Right)
    };
    legend::draw_backed_label(
        plot.plotting_area(),
        (v, bounds.y.1),
        (dx, 4),
        (h_pos, VPos::Top),
        &label,
        ref_color(line),
    )
}

fn draw_path(
    plot: &mut Chart<'_, '_>,
    points: &[Point],
    color: RGBColor,
    dashed: bool,
    bounds: &Bounds,
    pixel_width: f64,
) -> Result<(), ChartError> {
    let line_style = color.stroke_width(style::SERIES_WIDTH);
    for run in finite_runs(points) {
        // A lone point between gaps would vanish as a line: show it as a dot.
        if run.len() == 1 {
            if bounds.contains(run[0]) {
                plot.plotting_area()
                    .draw(&Circle::new(run[0], 2, color.filled()))?;
            }
            continue;
        }
        for piece in clip_polyline(&run, bounds) {
            let piece = thin_to_columns(&piece, bounds.x.0, pixel_width);
            if dashed {
                let (dash, gap) = style::SERIES_DASH;
                plot.plotting_area()
                    .draw(&DashedPathElement::new(piece, dash, gap, line_style))?;
            } else {
                plot.draw_series(LineSeries::new(piece, line_style))?;
            }
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn demo_chart() -> LineChart {
        LineChart {
            title: "Shelf and product temperature".into(),
            x_label: "Time (h)".into(),
            y_label: "Temperature (°C)".into(),
            series: vec![
                Series {
                    name: "Shelf".into(),
                    points: vec![(0.0, -40.0), (1.0, -40.0), (2.0, -20.0), (10.0, -20.0)],
                    style: SeriesStyle::Line,
                    color: None,
                },
                Series {
                    name: "Product (bottom)".into(),
                    points: vec![(0.0, -42.0), (2.0, -36.0), (8.0, -33.0), (10.0, -22.0)],
                    style: SeriesStyle::DashedLine,
                    color: None,
                },
                Series {
                    name: "Measured".into(),
                    points: vec![(1.0, -41.0), (5.0, -34.0), (9.0, -28.0)],
                    style: SeriesStyle::Points,
                    color: Some(2),
                },
            ],
            hlines: vec![RefLine {
                label: "Collapse limit".into(),
                value: -30.0,
                color: Some(1),
            }],
            vlines: vec![RefLine {
                label: "End of primary drying".into(),
                value: 8.5,
                color: None,
            }],
            ..LineChart::default()
        }
    }

    fn is_svg_document(svg: &str) -> bool {
        svg.starts_with("<svg ")
            && svg.trim_end().ends_with("</svg>")
            && svg.contains("viewBox=\"0 0 ")
    }

    #[test]
    fn a_line_chart_is_an_svg_with_title_legend_and_reference_labels() {
        let svg = render_line_chart(&demo_chart()).unwrap();
        assert!(is_svg_document(&svg));
        for text in [
            "Shelf and product temperature",
            "Time (h)",
            "Temperature (°C)",
            "Shelf",
            "Product (bottom)",
            "Measured",
            "Collapse limit",
            "End of primary drying",
        ] {
            assert!(svg.contains(text), "missing {text}");
        }
        assert!(svg.contains("<polyline"), "no lines drawn");
        assert!(svg.contains("<circle"), "no markers drawn");
    }

    #[test]
    fn the_output_has_no_inline_style_attributes_or_scripts() {
        let svg = render_line_chart(&demo_chart()).unwrap();
        assert!(!svg.contains("style="));
        assert!(!svg.to_lowercase().contains("<script"));
    }

    #[test]
    fn markup_in_user_text_is_escaped() {
        let mut chart = demo_chart();
        chart.title = "<script>alert('x')</script> & co".into();
        chart.series[0].name = "<b>shelf</b>".into();
        chart.hlines[0].label = "\"limit\" <".into();
        let svg = render_line_chart(&chart).unwrap();
        assert!(!svg.contains("<script"));
        assert!(!svg.contains("<b>"));
        assert!(svg.contains("&lt;script&gt;alert(&apos;x&apos;)&lt;/script&gt; &amp; co"));
        assert!(svg.contains("&lt;b&gt;shelf&lt;/b&gt;"));
        assert!(svg.contains("&quot;limit&quot; &lt;"));
        // The aria-label on the root element is escaped too.
        assert!(svg.contains("aria-label=\"&lt;script&gt;"));
    }

    #[test]
    fn a_chart_without_series_renders_a_no_data_chart() {
        let chart = LineChart {
            title: "Empty".into(),
            ..LineChart::default()
        };
        let svg = render_line_chart(&chart).unwrap();
        assert!(is_svg_document(&svg));
        assert!(svg.contains("Empty"));
        assert!(svg.contains("No data to show"));
    }

    #[test]
    fn series_with_only_non_finite_points_render_a_no_data_chart() {
        let mut chart = demo_chart();
        for s in &mut chart.series {
            s.points = vec![(f64::NAN, 1.0), (1.0, f64::INFINITY)];
        }
        let svg = render_line_chart(&chart).unwrap();
        assert!(svg.contains("No data to show"));
    }

    #[test]
    fn non_finite_points_are_skipped_and_do_not_reach_the_svg() {
        let mut chart = demo_chart();
        chart.series[0].points = vec![
            (0.0, 1.0),
            (1.0, f64::NAN),
            (2.0, 3.0),
            (f64::INFINITY, 4.0),
            (4.0, 5.0),
            (5.0, 6.0),
        ];
        chart.series[2].points.push((f64::NAN, f64::NAN));
        chart.hlines.push(RefLine {
            label: "nan line".into(),
            value: f64::NAN,
            color: None,
        });
        let svg = render_line_chart(&chart).unwrap();
        assert!(is_svg_document(&svg));
        assert!(!svg.contains("NaN") && !svg.contains("inf"));
        assert!(!svg.contains("nan line"));
    }

    #[test]
    fn points_outside_a_fixed_range_are_clipped_not_drawn_far_away() {
        let mut chart = demo_chart();
        chart.series[1].points.push((1e300, -1e300));
        chart.x_range = Some((0.0, 10.0));
        chart.y_range = Some((-50.0, 0.0));
        let svg = render_line_chart(&chart).unwrap();
        // No coordinate beyond the canvas appears in the drawing.
        assert!(!svg.contains("2147483647") && !svg.contains("-2147483648"));
    }

    #[test]
    fn a_single_point_or_constant_series_still_renders() {
        let chart = LineChart {
            series: vec![Series {
                name: "one".into(),
                points: vec![(3.0, -30.0)],
                ..Series::default()
            }],
            ..LineChart::default()
        };
        let svg = render_line_chart(&chart).unwrap();
        assert!(svg.contains("<circle"));
    }

    #[test]
    fn a_reversed_fixed_range_is_rejected_naming_the_field() {
        let mut chart = demo_chart();
        chart.y_range = Some((0.0, -50.0));
        let err = render_line_chart(&chart).unwrap_err();
        assert_eq!(err.field(), Some("y_range"));
    }

    #[test]
    fn a_series_with_too_many_points_is_rejected() {
        let mut chart = demo_chart();
        chart.series[0].points = vec![(0.0, 0.0); MAX_POINTS_PER_SERIES + 1];
        let err = render_line_chart(&chart).unwrap_err();
        assert_eq!(err.field(), Some("series.points"));
    }

    #[test]
    fn data_spanning_the_whole_f64_range_is_an_error_not_a_panic() {
        let chart = LineChart {
            series: vec![Series {
                name: "wild".into(),
                points: vec![(0.0, -f64::MAX), (1.0, f64::MAX)],
                ..Series::default()
            }],
            ..LineChart::default()
        };
        assert!(render_line_chart(&chart).is_err());
    }

    #[test]
    fn extreme_but_finite_data_renders_without_panicking() {
        let cases: [&[(f64, f64)]; 5] = [
            &[(0.0, 1e-300), (1.0, 2e-300)],
            &[(1e12, 1.0), (1e12 + 1e-3, 1.0)],
            &[(-1e300, 0.0), (1e300, 1.0)],
            &[(0.0, 5.0), (0.0, 5.0)],
            &[(1e15, 1e15), (1e15 + 1.0, 1e15 + 1.0)],
        ];
        for points in cases {
            let chart = LineChart {
                series: vec![Series {
                    name: "edge".into(),
                    points: points.to_vec(),
                    style: SeriesStyle::DashedLine,
                    color: Some(99),
                }],
                ..LineChart::default()
            };
            let svg = render_line_chart(&chart).unwrap();
            assert!(is_svg_document(&svg));
        }
    }

    #[test]
    fn a_chart_at_the_minimum_size_renders() {
        let mut chart = demo_chart();
        chart.width = 240;
        chart.height = 180;
        assert!(is_svg_document(&render_line_chart(&chart).unwrap()));
    }

    #[test]
    fn many_series_fold_into_a_more_entry_in_the_legend() {
        let mut chart = demo_chart();
        chart.height = 200;
        chart.series = (0..40)
            .map(|i| Series {
                name: format!("run {i}"),
                points: vec![(0.0, i as f64), (1.0, i as f64 + 1.0)],
                ..Series::default()
            })
            .collect();
        let svg = render_line_chart(&chart).unwrap();
        assert!(svg.contains("more"));
    }
}
