//! Design-space heatmaps: a value per grid cell, a boundary line, the
//! cycle's own operating point and hatching for cells outside a limit.

use super::clip::{clip_polyline, finite_runs, hatch_segments, is_finite_point, Bounds};
use super::legend::{self, LegendEntry, LegendKey};
use super::{check_size, clean_text, draw_no_data, draw_title, render_svg, style};
use super::{Area, ChartError};
use plotters::coord::types::RangedCoordf64;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

/// Most cells one heatmap may carry.
pub const MAX_CELLS: usize = 40_000;

/// Number of colour bands in the scale (fewer when the values do not vary).
const BANDS: usize = 6;

const TITLE_CHARS: usize = 120;
const LABEL_CHARS: usize = 80;

/// A grid of results over two operating variables, e.g. shelf temperature
/// against chamber pressure. Put units in the labels.
#[derive(Debug, Clone, PartialEq)]
pub struct HeatmapChart {
    pub title: String,
    pub x_label: String,
    pub y_label: String,
    /// Cell centres along x, finite and strictly increasing.
    pub x_values: Vec<f64>,
    /// Cell centres along y, finite and strictly increasing.
    pub y_values: Vec<f64>,
    /// Row-major by y then x: `values[iy * x_values.len() + ix]`.
    /// `None` (or a non-finite value) marks a cell without a result.
    pub values: Vec<Option<f64>>,
    /// What the colour means, with unit, e.g. "Product temperature (°C)".
    pub value_label: String,
    /// A line through the grid, e.g. where the product reaches its limit.
    pub boundary: Vec<(f64, f64)>,
    /// Legend text for the boundary; empty gives "Boundary".
    pub boundary_label: String,
    /// The cycle's own point and its label; empty label gives "This cycle".
    pub marker: Option<(f64, f64, String)>,
    /// Empty, or one entry per cell in the order of `values`: `false` cells
    /// are hatched (e.g. exceeding a limit).
    pub ok_mask: Vec<bool>,
    /// Legend text for hatched cells; empty gives "Exceeds limit".
    pub mask_label: String,
    pub width: u32,
    pub height: u32,
}

impl Default for HeatmapChart {
    fn default() -> Self {
        Self {
            title: String::new(),
            x_label: String::new(),
            y_label: String::new(),
            x_values: Vec::new(),
            y_values: Vec::new(),
            values: Vec::new(),
            value_label: String::new(),
            boundary: Vec::new(),
            boundary_label: String::new(),
            marker: None,
            ok_mask: Vec::new(),
            mask_label: String::new(),
            width: 720,
            height: 460,
        }
    }
}

/// Renders a heatmap as a complete SVG document.
pub fn render_heatmap(chart: &HeatmapChart) -> Result<String, ChartError> {
    check_size(chart.width, chart.height)?;
    check_axis("x_values", &chart.x_values)?;
    check_axis("y_values", &chart.y_values)?;
    let cells = chart.x_values.len().saturating_mul(chart.y_values.len());
    if cells > MAX_CELLS {
        return Err(ChartError::TooMuchData {
            field: "values",
            limit: MAX_CELLS,
            actual: cells,
        });
    }
    if chart.values.len() != cells {
        return Err(ChartError::LengthMismatch {
            field: "values",
            expected: cells,
            actual: chart.values.len(),
        });
    }
    if !chart.ok_mask.is_empty() && chart.ok_mask.len() != cells {
        return Err(ChartError::LengthMismatch {
            field: "ok_mask",
            expected: cells,
            actual: chart.ok_mask.len(),
        });
    }

    let title = clean_text(&chart.title, TITLE_CHARS);
    if cells == 0 {
        return render_svg(chart.width, chart.height, &title, |root| {
            draw_no_data(root, &title, "No data to show")
        });
    }

    let x_edges = cell_edges(&chart.x_values);
    let y_edges = cell_edges(&chart.y_values);
    let bounds = Bounds {
        x: (x_edges[0], x_edges[x_edges.len() - 1]),
        y: (y_edges[0], y_edges[y_edges.len() - 1]),
    };
    for (field, (min, max)) in [("x_values", bounds.x), ("y_values", bounds.y)] {
        super::check_range(field, (min, max))?;
    }
    let scale = ColorScale::fit(&chart.values);

    render_svg(chart.width, chart.height, &title, |root| {
        let grid = Grid {
            x_edges: &x_edges,
            y_edges: &y_edges,
            bounds,
            scale,
        };
        draw_chart(root, chart, &title, &grid)
    })
}

fn check_axis(field: &'static str, values: &[f64]) -> Result<(), ChartError> {
    for (index, v) in values.iter().enumerate() {
        let increasing = index == 0 || values[index - 1] < *v;
        if !v.is_finite() || !increasing {
            return Err(ChartError::NotIncreasing { field, index });
        }
    }
    Ok(())
}

/// Cell edges half-way between centres, the outer cells as wide as their
/// neighbours; a single centre gets a cell of 10 % of its size (at least 1).
fn cell_edges(centres: &[f64]) -> Vec<f64> {
    let n = centres.len();
    if n == 1 {
        let half = (centres[0].abs() * 0.05).max(0.5);
        return vec![centres[0] - half, centres[0] + half];
    }
    let mut edges = Vec::with_capacity(n + 1);
    edges.push(centres[0] - (centres[1] - centres[0]) / 2.0);
    edges.extend(centres.windows(2).map(|w| w[0] + (w[1] - w[0]) / 2.0));
    edges.push(centres[n - 1] + (centres[n - 1] - centres[n - 2]) / 2.0);
    edges
}

/// Equal-width colour bands over the finite values.
#[derive(Debug, Clone, Copy)]
struct ColorScale {
    min: f64,
    step: f64,
    bands: usize,
}

impl ColorScale {
    /// `None` bands when no cell has a finite value.
    fn fit(values: &[Option<f64>]) -> Option<Self> {
        let finite = values.iter().flatten().copied().filter(|v| v.is_finite());
        let (min, max) = finite.fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| {
            (lo.min(v), hi.max(v))
        });
        if !(min.is_finite() && max.is_finite()) {
            return None;
        }
        let span = max - min;
        let varies = span.is_finite() && span > 1e-12 * min.abs().max(max.abs());
        Some(if varies {
            ColorScale {
                min,
                step: span / BANDS as f64,
                bands: BANDS,
            }
        } else {
            ColorScale {
                min,
                step: 0.0,
                bands: 1,
            }
        })
    }

    fn band(&self, v: f64) -> usize {
        if self.bands == 1 {
            return 0;
        }
        (((v - self.min) / self.step).floor().max(0.0) as usize).min(self.bands - 1)
    }

    fn color(&self, band: usize) -> RGBColor {
        if self.bands == 1 {
            return style::heat_color(0.5);
        }
        style::heat_color(band as f64 / (self.bands - 1) as f64)
    }

    fn label(&self, band: usize) -> String {
        if self.bands == 1 {
            let step = if self.min.abs() > 0.0 {
                self.min.abs() * 0.1
            } else {
                1.0
            };
            return format_value(self.min, step);
        }
        let lo = self.min + self.step * band as f64;
        let hi = lo + self.step;
        format!(
            "{} to {}",
            format_value(lo, self.step),
            format_value(hi, self.step)
        )
    }
}

/// Enough decimals that a band of width `step` shows two significant digits.
fn format_value(v: f64, step: f64) -> String {
    let decimals = if step > 0.0 && step.is_finite() {
        (1.0 - step.log10().floor()).clamp(0.0, 6.0) as usize
    } else {
        1
    };
    let text = format!("{v:.decimals$}");
    // "-0.0" reads as a sign error.
    if text.starts_with('-') && text[1..].chars().all(|c| c == '0' || c == '.') {
        text[1..].to_string()
    } else {
        text
    }
}

struct Grid<'a> {
    x_edges: &'a [f64],
    y_edges: &'a [f64],
    bounds: Bounds,
    scale: Option<ColorScale>,
}

type Chart<'a, 'b> = ChartContext<'a, SVGBackend<'b>, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

fn draw_chart(
    root: &Area<'_>,
    chart: &HeatmapChart,
    title: &str,
    grid: &Grid<'_>,
) -> Result<(), ChartError> {
    let body = draw_title(root, title)?;
    let entries = legend_entries(chart, grid);
    let heading = clean_text(&chart.value_label, LABEL_CHARS);
    let label_lengths = entries
        .iter()
        .map(|e| e.label.chars().count())
        .chain([heading.chars().count().min(24)]);
    let legend_w = legend::legend_width(label_lengths, chart.width);
    let (plot_area, legend_area) = body.split_horizontally(chart.width - legend_w);

    let b = grid.bounds;
    let mut plot = ChartBuilder::on(&plot_area)
        .margin_top(6)
        .margin_right(12)
        .margin_left(6)
        .margin_bottom(6)
        .x_label_area_size(44)
        .y_label_area_size(64)
        .build_cartesian_2d(b.x.0..b.x.1, b.y.0..b.y.1)?;

    let (x_span, y_span) = (b.x.1 - b.x.0, b.y.1 - b.y.0);
    let x_ticks = |v: &f64| style::format_tick(*v, x_span);
    let y_ticks = |v: &f64| style::format_tick(*v, y_span);
    plot.configure_mesh()
        .x_label_formatter(&x_ticks)
        .y_label_formatter(&y_ticks)
        .x_desc(clean_text(&chart.x_label, LABEL_CHARS))
        .y_desc(clean_text(&chart.y_label, LABEL_CHARS))
        .x_labels(8)
        .y_labels(6)
        .disable_mesh()
        .axis_style(style::AXIS.stroke_width(1))
        .label_style(style::tick_font())
        .axis_desc_style(style::axis_label_font())
        .draw()?;

    draw_cells(&mut plot, chart, grid)?;
    for run in finite_runs(&chart.boundary) {
        for piece in clip_polyline(&run, &b) {
            legend::draw_haloed(plot.plotting_area(), piece, 2)?;
        }
    }
    if let Some((x, y, label)) = &chart.marker {
        draw_marker(&plot, (*x, *y), &marker_label(label), &b)?;
    }

    legend::draw_legend(&legend_area.margin(6, 0, 0, 0), &heading, &entries)
}

fn draw_cells(
    plot: &mut Chart<'_, '_>,
    chart: &HeatmapChart,
    grid: &Grid<'_>,
) -> Result<(), ChartError> {
    let nx = chart.x_values.len();
    let (plot_w, plot_h) = plot.plotting_area().dim_in_pixel();

    let color_of = |i: usize| match (chart.values[i], grid.scale) {
        (Some(v), Some(scale)) if v.is_finite() => scale.color(scale.band(v)),
        _ => style::NO_RESULT,
    };
    for iy in 0..chart.y_values.len() {
        // Neighbouring cells of one colour become one rectangle: a smaller
        // document, and no seams inside a band.
        let mut ix = 0;
        while ix < nx {
            let color = color_of(iy * nx + ix);
            let run = (ix..nx)
                .take_while(|&j| color_of(iy * nx + j) == color)
                .count();
            let p0 = (grid.x_edges[ix], grid.y_edges[iy]);
            let p1 = (grid.x_edges[ix + run], grid.y_edges[iy + 1]);
            // The outline in the fill colour hides seams between rows.
            plot.draw_series([
                Rectangle::new([p0, p1], color.filled()),
                Rectangle::new([p0, p1], color.stroke_width(1)),
            ])?;
            ix += run;
        }
    }
    // Hatching goes on top of all cells, over runs of cells in a row, on
    // one grid so neighbouring runs join into one pattern.
    if chart.ok_mask.is_empty() {
        return Ok(());
    }
    let (plot_w, plot_h) = (plot_w.max(1) as f64, plot_h.max(1) as f64);
    let b = grid.bounds;
    let pixel = ((b.x.1 - b.x.0) / plot_w, (b.y.1 - b.y.0) / plot_h);
    let origin = (b.x.0, b.y.0);
    for iy in 0..chart.y_values.len() {
        let row = &chart.ok_mask[iy * nx..(iy + 1) * nx];
        let mut ix = 0;
        while ix < nx {
            let run = row[ix..].iter().take_while(|ok| !**ok).count();
            if run > 0 {
                let p0 = (grid.x_edges[ix], grid.y_edges[iy]);
                let p1 = (grid.x_edges[ix + run], grid.y_edges[iy + 1]);
                for [a, c] in hatch_segments(p0, p1, origin, pixel, legend::HATCH_SPACING) {
                    legend::draw_haloed(plot.plotting_area(), vec![a, c], 1)?;
                }
            }
            ix += run.max(1);
        }
    }
    Ok(())
}

fn draw_marker(
    plot: &Chart<'_, '_>,
    at: (f64, f64),
    label: &str,
    b: &Bounds,
) -> Result<(), ChartError> {
    if !(is_finite_point(at) && b.contains(at)) {
        return Ok(());
    }
    let area = plot.plotting_area();
    legend::draw_cycle_marker(area, at)?;

    // Label beside the marker, on the side with room.
    let (px, _) = plot.backend_coord(&at);
    let (right_edge, _) = plot.backend_coord(&(b.x.1, b.y.1));
    let room = right_edge - px;
    let (dx, h_pos) = if room > style::legend_text_width(label) as i32 + 16 {
        (11, HPos::Left)
    } else {
        (-11, HPos::Right)
    };
    legend::draw_backed_label(area, at, (dx, 0), (h_pos, VPos::Center), label, style::TEXT)
}

fn marker_label(label: &str) -> String {
    let label = clean_text(label, LABEL_CHARS);
    if label.is_empty() {
        "This cycle".to_string()
    } else {
        label
    }
}

fn legend_entries(chart: &HeatmapChart, grid: &Grid<'_>) -> Vec<LegendEntry> {
    let mut entries = Vec::new();
    if let Some(scale) = grid.scale {
        // Highest band on top, like a colour bar.
        for band in (0..scale.bands).rev() {
            entries.push(LegendEntry {
                key: LegendKey::Swatch(scale.color(band)),
                label: scale.label(band),
            });
        }
    }
    if chart.values.iter().any(|v| !v.is_some_and(f64::is_finite)) {
        entries.push(LegendEntry {
            key: LegendKey::Swatch(style::NO_RESULT),
            label: "No result".to_string(),
        });
    }
    if chart.ok_mask.iter().any(|ok| !ok) {
        entries.push(LegendEntry {
            key: LegendKey::Hatched,
            label: or_default(&chart.mask_label, "Exceeds limit"),
        });
    }
    if finite_runs(&chart.boundary).iter().any(|run| run.len() > 1) {
        entries.push(LegendEntry {
            key: LegendKey::Boundary,
            label: or_default(&chart.boundary_label, "Boundary"),
        });
    }
    if let Some((x, y, label)) = &chart.marker {
        if is_finite_point((*x, *y)) {
            let mut label = marker_label(label);
            if !grid.bounds.contains((*x, *y)) {
                label.push_str(" (outside chart)");
            }
            entries.push(LegendEntry {
                key: LegendKey::CycleMarker,
                label,
            });
        }
    }
    entries
}

fn or_default(label: &str, default: &str) -> String {
    let label = clean_text(label, LABEL_CHARS);
    if label.is_empty() {
        default.to_string()
    } else {
        label
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Demo data: a 5 × 4 grid with a gap and a limit.
    fn demo_heatmap() -> HeatmapChart {
        let x_values = vec![-30.0, -25.0, -20.0, -15.0, -10.0];
        let y_values = vec![5.0, 10.0, 15.0, 20.0];
        let mut values = Vec::new();
        for (iy, _) in y_values.iter().enumerate() {
            for (ix, _) in x_values.iter().enumerate() {
                values.push(Some(-40.0 + 2.0 * ix as f64 + 1.5 * iy as f64));
            }
        }
        values[19] = None;
        let ok_mask = values
            .iter()
            .map(|v| v.is_some_and(|t| t < -31.0))
            .collect();
        HeatmapChart {
            title: "Design space".into(),
            x_label: "Shelf temperature (°C)".into(),
            y_label: "Chamber pressure (Pa)".into(),
            x_values,
            y_values,
            values,
            value_label: "Product temperature (°C)".into(),
            boundary: vec![(-27.0, 5.0), (-22.0, 12.0), (-19.0, 20.0)],
            boundary_label: "Collapse limit".into(),
            marker: Some((-20.0, 10.0, "Current cycle".into())),
            ok_mask,
            mask_label: "Above collapse limit".into(),
            ..HeatmapChart::default()
        }
    }

    #[test]
    fn a_heatmap_is_an_svg_with_scale_boundary_and_marker() {
        let svg = render_heatmap(&demo_heatmap()).unwrap();
        assert!(svg.starts_with("<svg ") && svg.trim_end().ends_with("</svg>"));
        for text in [
            "Design space",
            "Shelf temperature (°C)",
            "Chamber pressure (Pa)",
            "Product temperature (°C)",
            "Collapse limit",
            "Current cycle",
            "Above collapse limit",
            "No result",
            "-40.0 to -38.2",
        ] {
            assert!(svg.contains(text), "missing {text}");
        }
        assert!(!svg.contains("style="));
    }

    #[test]
    fn a_heatmap_with_missing_cells_renders() {
        let mut chart = demo_heatmap();
        chart.values[3] = None;
        chart.values[7] = Some(f64::NAN);
        chart.ok_mask.clear();
        let svg = render_heatmap(&chart).unwrap();
        assert!(svg.contains("No result"));
        assert!(!svg.contains("NaN"));
    }

    #[test]
    fn a_heatmap_without_any_result_shows_only_no_result_cells() {
        let mut chart = demo_heatmap();
        chart.values = vec![None; 20];
        let svg = render_heatmap(&chart).unwrap();
        assert!(svg.contains("No result"));
        assert!(!svg.contains(" to "));
    }

    #[test]
    fn an_empty_grid_renders_a_no_data_chart() {
        let chart = HeatmapChart {
            title: "Nothing yet".into(),
            ..HeatmapChart::default()
        };
        let svg = render_heatmap(&chart).unwrap();
        assert!(svg.contains("Nothing yet") && svg.contains("No data to show"));
    }

    #[test]
    fn a_heatmap_at_the_minimum_size_renders() {
        let mut chart = demo_heatmap();
        chart.width = 240;
        chart.height = 180;
        assert!(render_heatmap(&chart).unwrap().ends_with("</svg>\n"));
    }

    #[test]
    fn a_values_vector_of_the_wrong_length_is_rejected() {
        let mut chart = demo_heatmap();
        chart.values.pop();
        assert_eq!(render_heatmap(&chart).unwrap_err().field(), Some("values"));
    }

    #[test]
    fn an_ok_mask_of_the_wrong_length_is_rejected() {
        let mut chart = demo_heatmap();
        chart.ok_mask = vec![true; 3];
        assert_eq!(render_heatmap(&chart).unwrap_err().field(), Some("ok_mask"));
    }

    #[test]
    fn unsorted_or_nan_axis_values_are_rejected_naming_the_axis() {
        let mut chart = demo_heatmap();
        chart.y_values[2] = 1.0;
        assert_eq!(
            render_heatmap(&chart).unwrap_err(),
            ChartError::NotIncreasing {
                field: "y_values",
                index: 2
            }
        );
        chart = demo_heatmap();
        chart.x_values[0] = f64::NAN;
        assert_eq!(
            render_heatmap(&chart).unwrap_err().field(),
            Some("x_values")
        );
    }

    #[test]
    fn a_one_cell_grid_with_a_constant_value_renders() {
        let chart = HeatmapChart {
            x_values: vec![-20.0],
            y_values: vec![10.0],
            values: vec![Some(-35.0)],
            marker: Some((f64::NAN, 1.0, String::new())),
            boundary: vec![(f64::NAN, 0.0)],
            ..HeatmapChart::default()
        };
        let svg = render_heatmap(&chart).unwrap();
        assert!(svg.contains("-35.0"));
        assert!(!svg.contains("This cycle"));
    }

    #[test]
    fn a_marker_outside_the_grid_is_named_as_such_in_the_legend() {
        let mut chart = demo_heatmap();
        chart.marker = Some((50.0, 10.0, "Current cycle".into()));
        let svg = render_heatmap(&chart).unwrap();
        assert!(svg.contains("Current cycle (outside chart)"));
    }

    #[test]
    fn a_title_with_markup_is_escaped() {
        let mut chart = demo_heatmap();
        chart.title = "<script>x</script>".into();
        chart.marker = Some((-20.0, 10.0, "a & <b>".into()));
        let svg = render_heatmap(&chart).unwrap();
        assert!(!svg.contains("<script") && !svg.contains("<b>"));
        assert!(svg.contains("&lt;script&gt;x&lt;/script&gt;"));
        assert!(svg.contains("a &amp; &lt;b&gt;"));
    }

    #[test]
    fn bands_cover_the_value_range_and_the_top_value_is_in_the_top_band() {
        let scale = ColorScale::fit(&[Some(0.0), Some(6.0), None]).unwrap();
        assert_eq!(scale.bands, BANDS);
        assert_eq!(scale.band(0.0), 0);
        assert_eq!(scale.band(6.0), BANDS - 1);
        assert_eq!(scale.label(0), "0.0 to 1.0");
    }

    #[test]
    fn band_labels_do_not_show_negative_zero() {
        assert_eq!(format_value(-0.0001, 1.0), "0.0");
        assert_eq!(format_value(-12.34, 0.05), "-12.340");
    }

    #[test]
    fn a_grid_larger_than_the_cell_limit_is_rejected() {
        let chart = HeatmapChart {
            x_values: (0..300).map(f64::from).collect(),
            y_values: (0..300).map(f64::from).collect(),
            ..HeatmapChart::default()
        };
        assert_eq!(render_heatmap(&chart).unwrap_err().field(), Some("values"));
    }
}
