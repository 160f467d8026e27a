//! Heating, cooling and isothermal segments of a temperature programme, from the
//! temperature column (and the time column when there is one).
//!
//! Each row is labelled from the temperature change over ±k rows (k grows with the trace:
//! 5 to 50): with time, isothermal below 0.1 °C/min; without, below a tenth of the typical
//! step between rows (common practice, no source). Runs shorter than 2k + 1 rows are
//! merged into the run before them, so noise does not make segments.

use crate::ImportError;

/// Most segments accepted; more means the column is not a temperature programme.
pub const MAX_SEGMENTS: usize = 200;
/// Rate below which a stretch counts as isothermal, °C/min.
pub const ISOTHERMAL_RATE_C_MIN: f64 = 0.1;
/// Share of rows a heating or cooling segment may lose to steps against its direction.
pub const MAX_BACKSTEP_SHARE: f64 = 0.05;

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SegmentKind {
    Heating,
    Cooling,
    Isothermal,
}

/// Rows `start..end` of one segment.
#[derive(Debug, Clone, PartialEq)]
pub struct Segment {
    pub kind: SegmentKind,
    pub start: usize,
    pub end: usize,
    pub start_c: f64,
    pub end_c: f64,
    /// Mean rate over the segment, °C/min, when there is a time column.
    pub rate_c_min: Option<f64>,
}

impl Segment {
    /// The rows of a heating or cooling segment along which temperature moves strictly
    /// one way (rows that repeat or step back are left out), refused when more than
    /// 5 % would be left out.
    pub fn monotonic_rows(&self, temperature_c: &[f64]) -> Result<Vec<usize>, ImportError> {
        let up = match self.kind {
            SegmentKind::Heating => true,
            SegmentKind::Cooling => false,
            SegmentKind::Isothermal => {
                return Err(ImportError::new(
                    "segment",
                    format!(
                        "rows {}–{} are isothermal: there is no trace over temperature",
                        self.start + 1,
                        self.end
                    ),
                ))
            }
        };
        let rows = temperature_c.get(self.start..self.end).unwrap_or(&[]);
        let mut keep = Vec::with_capacity(rows.len());
        let mut last = f64::NAN;
        for (i, &t) in rows.iter().enumerate() {
            if keep.is_empty() || (up && t > last) || (!up && t < last) {
                keep.push(self.start + i);
                last = t;
            }
        }
        let dropped = rows.len() - keep.len();
        if dropped as f64 > MAX_BACKSTEP_SHARE * rows.len() as f64 {
            return Err(ImportError::new(
                "segment",
                format!(
                    "rows {}–{}: temperature goes back and forth on {dropped} of {} rows; it \
                     cannot be split into a steady {}",
                    self.start + 1,
                    self.end,
                    rows.len(),
                    if up { "heating" } else { "cooling" }
                ),
            ));
        }
        Ok(keep)
    }
}

/// Splits rows into segments. `time_s`, when given, must be as long as the temperatures.
pub fn split_segments(
    temperature_c: &[f64],
    time_s: Option<&[f64]>,
) -> Result<Vec<Segment>, ImportError> {
    let n = temperature_c.len();
    if n < 2 {
        return Err(ImportError::new(
            "rows",
            "a single point cannot be split into segments",
        ));
    }
    if let Some(i) = temperature_c.iter().position(|v| !v.is_finite()) {
        return Err(ImportError::new(
            format!("temperature row {}", i + 1),
            "is not a finite number",
        ));
    }
    let time = time_s.filter(|t| t.len() == n && t.iter().all(|v| v.is_finite()));
    let k = (n / 1000).clamp(5, 50).min((n - 1) / 2).max(1);
    let mut steps: Vec<f64> = temperature_c
        .windows(2)
        .map(|w| (w[1] - w[0]).abs())
        .collect();
    steps.sort_by(f64::total_cmp);
    let typical = steps[(steps.len() * 9) / 10];
    let label = |i: usize| -> SegmentKind {
        let (a, b) = (i.saturating_sub(k), (i + k).min(n - 1));
        let dt = temperature_c[b] - temperature_c[a];
        let iso = match time {
            Some(t) if t[b] > t[a] => (dt / (t[b] - t[a]) * 60.0).abs() < ISOTHERMAL_RATE_C_MIN,
            _ => dt.abs() < 0.1 * typical * (b - a) as f64 || typical <= 0.0,
        };
        if iso {
            SegmentKind::Isothermal
        } else if dt > 0.0 {
            SegmentKind::Heating
        } else {
            SegmentKind::Cooling
        }
    };
    // Runs of one label: (kind, start, end).
    let mut runs: Vec<(SegmentKind, usize, usize)> = Vec::new();
    for i in 0..n {
        let kind = label(i);
        match runs.last_mut() {
            Some(r) if r.0 == kind => r.2 = i + 1,
            _ => runs.push((kind, i, i + 1)),
        }
    }
    let min_run = 2 * k + 1;
    let mut merged: Vec<(SegmentKind, usize, usize)> = Vec::new();
    for r in runs {
        match merged.last_mut() {
            Some(m) if m.0 == r.0 || r.2 - r.1 < min_run => m.2 = r.2,
            _ => merged.push(r),
        }
        if merged.len() > MAX_SEGMENTS {
            return Err(ImportError::new(
                "segments",
                format!(
                    "temperature changes direction more than {MAX_SEGMENTS} times; the rows \
                     cannot be split into heating, cooling and isothermal segments (is the \
                     temperature column the right one?)"
                ),
            ));
        }
    }
    // A short first run was kept as is; fold it into the next one.
    if merged.len() > 1 && merged[0].2 - merged[0].1 < min_run {
        let first = merged.remove(0);
        merged[0].1 = first.1;
    }
    Ok(merged
        .into_iter()
        .map(|(kind, start, end)| Segment {
            kind,
            start,
            end,
            start_c: temperature_c[start],
            end_c: temperature_c[end - 1],
            rate_c_min: time.and_then(|t| {
                let d = t[end - 1] - t[start];
                (d > 0.0).then(|| (temperature_c[end - 1] - temperature_c[start]) / d * 60.0)
            }),
        })
        .collect())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_cool_hold_heat_programme_gives_three_segments() {
        // Invented programme (common practice, no source): 20 → −50 °C at 1 °C/min,
        // hold 30 min, −50 → 20 °C at 2 °C/min; one row per 6 s, 0.02 °C noise.
        let mut t = Vec::new();
        let mut time = Vec::new();
        let mut s = 0.0;
        let mut push = |temp: f64, i: usize| {
            t.push(temp + 0.02 * ((i as f64) * 1.7).sin());
            time.push(s);
            s += 6.0;
        };
        let mut i = 0;
        for j in 0..700 {
            push(20.0 - 0.1 * j as f64, i);
            i += 1;
        }
        for _ in 0..300 {
            push(-50.0, i);
            i += 1;
        }
        for j in 0..350 {
            push(-50.0 + 0.2 * j as f64, i);
            i += 1;
        }
        let segs = split_segments(&t, Some(&time)).unwrap();
        let kinds: Vec<_> = segs.iter().map(|s| s.kind).collect();
        assert_eq!(
            kinds,
            vec![
                SegmentKind::Cooling,
                SegmentKind::Isothermal,
                SegmentKind::Heating
            ]
        );
        let rate = segs[2].rate_c_min.unwrap();
        assert!((rate - 2.0).abs() < 0.05 * 2.0, "{rate}");
        let rows = segs[2].monotonic_rows(&t).unwrap();
        assert!(rows.len() > 300);
        let without = split_segments(&t, None).unwrap();
        assert_eq!(without.len(), 3);
    }

    #[test]
    fn a_column_that_jumps_about_is_refused() {
        let t: Vec<f64> = (0..5000)
            .map(|i| {
                if (i / 12) % 2 == 0 {
                    i as f64
                } else {
                    -(i as f64)
                }
            })
            .collect();
        assert_eq!(split_segments(&t, None).unwrap_err().field, "segments");
    }
}
