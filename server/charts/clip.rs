//! Data-space geometry: finite runs and clipping to the plotted range.
//!
//! plotters does not clip to the plotting area, and its dashed lines walk
//! every pixel of a segment, so anything far outside the range must be cut
//! before it is drawn.

pub(super) type Point = (f64, f64);

/// The plotted data range.
#[derive(Debug, Clone, Copy)]
pub(super) struct Bounds {
    pub x: (f64, f64),
    pub y: (f64, f64),
}

impl Bounds {
    pub fn contains(&self, (x, y): Point) -> bool {
        x >= self.x.0 && x <= self.x.1 && y >= self.y.0 && y <= self.y.1
    }
}

pub(super) fn is_finite_point((x, y): Point) -> bool {
    x.is_finite() && y.is_finite()
}

/// Splits a path at non-finite points, so a gap in the data stays a gap.
pub(super) fn finite_runs(points: &[Point]) -> Vec<Vec<Point>> {
    points
        .split(|p| !is_finite_point(*p))
        .filter(|run| !run.is_empty())
        .map(<[Point]>::to_vec)
        .collect()
}

/// Where a clipped segment starts and ends.
struct Clipped {
    t0: f64,
    t1: f64,
    start: Point,
    end: Point,
}

/// Liang–Barsky clipping of segment `a`–`b` to `bounds`. The coordinate of
/// an end point cut at an edge is set to that edge exactly, so long segments
/// do not lose the visible part to rounding.
fn clip_segment(a: Point, b: Point, bounds: &Bounds) -> Option<Clipped> {
    let (dx, dy) = (b.0 - a.0, b.1 - a.1);
    // Only a segment spanning more than the whole f64 range overflows here.
    if !(dx.is_finite() && dy.is_finite()) {
        return None;
    }
    let (mut t0, mut t1): (f64, f64) = (0.0, 1.0);
    let (mut snap0, mut snap1) = (None, None);
    let edges = [
        (-dx, a.0 - bounds.x.0, Edge::X(bounds.x.0)),
        (dx, bounds.x.1 - a.0, Edge::X(bounds.x.1)),
        (-dy, a.1 - bounds.y.0, Edge::Y(bounds.y.0)),
        (dy, bounds.y.1 - a.1, Edge::Y(bounds.y.1)),
    ];
    for (p, q, edge) in edges {
        if p == 0.0 {
            if q < 0.0 {
                return None;
            }
        } else {
            let r = q / p;
            if p < 0.0 && r > t0 {
                t0 = r;
                snap0 = Some(edge);
            } else if p > 0.0 && r < t1 {
                t1 = r;
                snap1 = Some(edge);
            }
        }
    }
    if t0 > t1 {
        return None;
    }
    let at = |t: f64, snap: Option<Edge>| {
        let (x, y) = (a.0 + dx * t, a.1 + dy * t);
        match snap {
            Some(Edge::X(edge)) => (edge, y.max(bounds.y.0).min(bounds.y.1)),
            Some(Edge::Y(edge)) => (x.max(bounds.x.0).min(bounds.x.1), edge),
            None => (x, y),
        }
    };
    Some(Clipped {
        t0,
        t1,
        start: at(t0, snap0),
        end: at(t1, snap1),
    })
}

#[derive(Debug, Clone, Copy)]
enum Edge {
    X(f64),
    Y(f64),
}

/// Cuts a finite polyline to `bounds`, returning the visible pieces.
pub(super) fn clip_polyline(points: &[Point], bounds: &Bounds) -> Vec<Vec<Point>> {
    let mut pieces: Vec<Vec<Point>> = Vec::new();
    let mut current: Vec<Point> = Vec::new();
    for pair in points.windows(2) {
        let (a, b) = (pair[0], pair[1]);
        match clip_segment(a, b, bounds) {
            Some(c) => {
                // A segment that enters the range starts a new piece.
                if c.t0 > 0.0 || current.is_empty() {
                    if current.len() > 1 {
                        pieces.push(std::mem::take(&mut current));
                    }
                    current.clear();
                    current.push(c.start);
                }
                current.push(c.end);
                // A segment that leaves the range ends the piece.
                if c.t1 < 1.0 {
                    pieces.push(std::mem::take(&mut current));
                }
            }
            None => {
                if current.len() > 1 {
                    pieces.push(std::mem::take(&mut current));
                }
                current.clear();
            }
        }
    }
    if current.len() > 1 {
        pieces.push(current);
    }
    pieces
}

/// Thins a line to at most four points per pixel column (first, lowest,
/// highest, last), which draws the same picture with far fewer points.
pub(super) fn thin_to_columns(points: &[Point], x0: f64, column_width: f64) -> Vec<Point> {
    if points.len() <= 4 || !(column_width > 0.0 && column_width.is_finite()) {
        return points.to_vec();
    }
    let column = |p: &Point| ((p.0 - x0) / column_width).floor() as i64;
    let mut out = Vec::with_capacity(points.len().min(4096));
    let mut start = 0;
    while start < points.len() {
        let c = column(&points[start]);
        let end = start
            + points[start..]
                .iter()
                .take_while(|p| column(p) == c)
                .count();
        let group = &points[start..end];
        if group.len() <= 4 {
            out.extend_from_slice(group);
        } else {
            let (mut lo, mut hi) = (0, 0);
            for (i, p) in group.iter().enumerate() {
                if p.1 < group[lo].1 {
                    lo = i;
                }
                if p.1 > group[hi].1 {
                    hi = i;
                }
            }
            let mut keep = [0, lo, hi, group.len() - 1];
            keep.sort_unstable();
            let mut last = None;
            for i in keep {
                if last != Some(i) {
                    out.push(group[i]);
                    last = Some(i);
                }
            }
        }
        start = end;
    }
    out
}

/// Drops points that land on the same pixel as an earlier one.
pub(super) fn distinct_pixels(points: &[Point], bounds: &Bounds, pixel: (f64, f64)) -> Vec<Point> {
    let mut seen = std::collections::HashSet::new();
    points
        .iter()
        .copied()
        .filter(|p| is_finite_point(*p) && bounds.contains(*p))
        .filter(|p| {
            let key = (
                ((p.0 - bounds.x.0) / pixel.0).round() as i64,
                ((p.1 - bounds.y.0) / pixel.1).round() as i64,
            );
            seen.insert(key)
        })
        .collect()
}

/// 45° hatch lines (on screen) across the rectangle `p0`–`p1`, `spacing`
/// pixels apart. The lines sit on one grid anchored at `origin`, so the
/// hatching of neighbouring rectangles joins into one pattern. `pixel` is
/// the data size of one pixel along x and y.
pub(super) fn hatch_segments(
    p0: Point,
    p1: Point,
    origin: Point,
    pixel: (f64, f64),
    spacing: f64,
) -> Vec<[Point; 2]> {
    if !(pixel.0 > 0.0 && pixel.1 > 0.0 && spacing > 0.0) {
        return Vec::new();
    }
    // Work in pixel units, where the lines are u + v = c.
    let to_u = |x: f64| (x - origin.0) / pixel.0;
    let to_v = |y: f64| (y - origin.1) / pixel.1;
    let (u0, u1) = (to_u(p0.0).min(to_u(p1.0)), to_u(p0.0).max(to_u(p1.0)));
    let (v0, v1) = (to_v(p0.1).min(to_v(p1.1)), to_v(p0.1).max(to_v(p1.1)));
    let first = ((u0 + v0) / spacing).ceil() as i64;
    let last = ((u1 + v1) / spacing).floor() as i64;
    let back = |u: f64, v: f64| (origin.0 + u * pixel.0, origin.1 + v * pixel.1);
    (first..=last)
        .filter_map(|k| {
            let c = k as f64 * spacing;
            let (from, to) = (u0.max(c - v1), u1.min(c - v0));
            (to - from > 0.5).then(|| [back(from, c - from), back(to, c - to)])
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    const UNIT: Bounds = Bounds {
        x: (0.0, 1.0),
        y: (0.0, 1.0),
    };

    fn close(a: Point, b: Point) -> bool {
        (a.0 - b.0).abs() < 1e-12 && (a.1 - b.1).abs() < 1e-12
    }

    #[test]
    fn non_finite_points_split_a_path_into_runs() {
        let runs = finite_runs(&[(0.0, 0.0), (1.0, f64::NAN), (2.0, 2.0), (3.0, 3.0)]);
        assert_eq!(runs.len(), 2);
        assert_eq!(runs[1].len(), 2);
    }

    #[test]
    fn thinning_keeps_the_extremes_of_each_pixel_column() {
        let pts: Vec<Point> = (0..1000)
            .map(|i| (i as f64 / 1000.0, ((i * 7) % 13) as f64))
            .collect();
        let thin = thin_to_columns(&pts, 0.0, 0.1);
        assert!(thin.len() <= 40);
        assert!(close(thin[0], pts[0]) && close(thin[thin.len() - 1], pts[999]));
        let max = thin.iter().map(|p| p.1).fold(f64::MIN, f64::max);
        let min = thin.iter().map(|p| p.1).fold(f64::MAX, f64::min);
        assert!(close((min, max), (0.0, 12.0)));
    }

    #[test]
    fn hatch_lines_stay_inside_their_rectangle_and_join_across_neighbours() {
        let pixel = (0.01, 0.1);
        let left = hatch_segments((0.0, 0.0), (0.5, 5.0), (0.0, 0.0), pixel, 6.0);
        let right = hatch_segments((0.5, 0.0), (1.0, 5.0), (0.0, 0.0), pixel, 6.0);
        assert!(!left.is_empty() && !right.is_empty());
        for [a, b] in left.iter().chain(&right) {
            for (x, y) in [a, b] {
                assert!((-1e-9..=1.0 + 1e-9).contains(x) && (-1e-9..=5.0 + 1e-9).contains(y));
            }
        }
        // A line leaving the left rectangle at x = 0.5 continues in the right one.
        let exits: Vec<f64> = left
            .iter()
            .filter(|[_, b]| (b.0 - 0.5).abs() < 1e-9)
            .map(|[_, b]| b.1)
            .collect();
        assert!(exits.iter().all(|y| right
            .iter()
            .any(|[a, _]| (a.0 - 0.5).abs() < 1e-9 && (a.1 - y).abs() < 1e-9)));
    }

    #[test]
    fn points_on_the_same_pixel_are_drawn_once() {
        let pts = [(0.5, 0.5), (0.5001, 0.5), (0.9, 0.9), (2.0, 0.5)];
        let kept = distinct_pixels(&pts, &UNIT, (0.01, 0.01));
        assert_eq!(kept.len(), 2);
    }

    #[test]
    fn a_path_inside_the_bounds_is_kept_whole() {
        let pts = [(0.1, 0.1), (0.5, 0.5), (0.9, 0.2)];
        let pieces = clip_polyline(&pts, &UNIT);
        assert_eq!(pieces, vec![pts.to_vec()]);
    }

    #[test]
    fn a_path_leaving_and_reentering_the_bounds_becomes_two_pieces() {
        let pts = [(0.5, 0.5), (0.5, 2.0), (0.6, 0.5)];
        let pieces = clip_polyline(&pts, &UNIT);
        assert_eq!(pieces.len(), 2);
        assert!(close(pieces[0][1], (0.5, 1.0)));
        assert!(pieces[1].iter().all(|p| UNIT.contains(*p)));
    }

    #[test]
    fn a_segment_far_outside_is_dropped_and_a_crossing_one_is_cut() {
        assert!(clip_polyline(&[(5.0, 5.0), (6.0, 9.0)], &UNIT).is_empty());
        let pieces = clip_polyline(&[(-1e300, 0.5), (1e300, 0.5)], &UNIT);
        assert_eq!(pieces.len(), 1);
        assert!(close(pieces[0][0], (0.0, 0.5)));
        assert!(close(pieces[0][1], (1.0, 0.5)));
    }
}
