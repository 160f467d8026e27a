//! A run's recorded time series: one row per logged moment.

use serde::{Deserialize, Serialize};

use super::check_time_axis;
use crate::error::InputError;

/// Where a product probe sits in the load.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum ProbePosition {
    Centre,
    Edge,
    Front,
    Back,
}

impl ProbePosition {
    pub fn label(self) -> &'static str {
        match self {
            Self::Centre => "centre",
            Self::Edge => "edge",
            Self::Front => "front",
            Self::Back => "back",
        }
    }
}

/// One product temperature probe. NaN is a moment without a reading (JSON `null`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Probe {
    pub label: String,
    pub position: ProbePosition,
    #[serde(with = "nan_as_null")]
    pub temp_c: Vec<f64>,
}

/// What the dryer logged, row by row. Every series has one value per entry of `time_h`;
/// probes and gauges may miss readings (NaN), the shelf and the clock may not.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RunSeries {
    pub time_h: Vec<f64>,
    pub shelf_c: Vec<f64>,
    #[serde(default)]
    pub probes: Vec<Probe>,
    #[serde(default, with = "nan_as_null::option")]
    pub manometer_mtorr: Option<Vec<f64>>,
    #[serde(default, with = "nan_as_null::option")]
    pub pirani_mtorr: Option<Vec<f64>>,
    #[serde(default, with = "nan_as_null::option")]
    pub condenser_c: Option<Vec<f64>>,
}

impl RunSeries {
    /// Equal lengths, at least two rows, a finite non-decreasing clock, a finite shelf,
    /// and readings that are numbers or missing (never infinite; pressures not negative).
    pub fn validate(&self) -> Result<(), InputError> {
        check_time_axis("time_h", &self.time_h, 2)?;
        let n = self.time_h.len();
        let same_length = |field: &str, len: usize| {
            if len == n {
                Ok(())
            } else {
                Err(InputError::new(
                    field,
                    format!("has {len} values but time_h has {n}"),
                ))
            }
        };
        same_length("shelf_c", self.shelf_c.len())?;
        for (i, &v) in self.shelf_c.iter().enumerate() {
            if !v.is_finite() {
                return Err(InputError::new(
                    format!("shelf_c[{i}]"),
                    "needs a reading: the shelf temperature is the reference of every analysis",
                ));
            }
        }
        for (p, probe) in self.probes.iter().enumerate() {
            let field = format!("probes[{p}].temp_c");
            same_length(&field, probe.temp_c.len())?;
            readings(&field, &probe.temp_c, false)?;
            if probe.label.trim().is_empty() {
                return Err(InputError::new(
                    format!("probes[{p}].label"),
                    "needs a name",
                ));
            }
        }
        for (field, values, is_pressure) in [
            ("manometer_mtorr", &self.manometer_mtorr, true),
            ("pirani_mtorr", &self.pirani_mtorr, true),
            ("condenser_c", &self.condenser_c, false),
        ] {
            if let Some(v) = values {
                same_length(field, v.len())?;
                readings(field, v, is_pressure)?;
            }
        }
        Ok(())
    }

    /// The chamber pressure as best known: the manometer, else the Pirani.
    pub fn chamber_pressure_mtorr(&self) -> Option<&[f64]> {
        let has_readings = |v: &&Vec<f64>| v.iter().any(|x| x.is_finite());
        self.manometer_mtorr
            .as_ref()
            .filter(has_readings)
            .or(self.pirani_mtorr.as_ref().filter(has_readings))
            .map(Vec::as_slice)
    }

    /// The same series cut to the rows whose time lies in `[from_h, until_h]`.
    pub fn between(&self, from_h: f64, until_h: f64) -> RunSeries {
        let rows = self.rows_between(from_h, until_h);
        let cut = |v: &Vec<f64>| v.get(rows.clone()).map(<[f64]>::to_vec).unwrap_or_default();
        RunSeries {
            time_h: cut(&self.time_h),
            shelf_c: cut(&self.shelf_c),
            probes: self
                .probes
                .iter()
                .map(|p| Probe {
                    label: p.label.clone(),
                    position: p.position,
                    temp_c: cut(&p.temp_c),
                })
                .collect(),
            manometer_mtorr: self.manometer_mtorr.as_ref().map(cut),
            pirani_mtorr: self.pirani_mtorr.as_ref().map(cut),
            condenser_c: self.condenser_c.as_ref().map(cut),
        }
    }

    /// The rows whose time lies in `[from_h, until_h]`, as a range of indices.
    pub fn rows_between(&self, from_h: f64, until_h: f64) -> std::ops::Range<usize> {
        let start = self.time_h.partition_point(|&t| t < from_h);
        let end = self.time_h.partition_point(|&t| t <= until_h);
        start..end.max(start)
    }
}

/// Readings are numbers or missing; infinite is refused, and so is a negative pressure.
fn readings(field: &str, values: &[f64], is_pressure: bool) -> Result<(), InputError> {
    for (i, &v) in values.iter().enumerate() {
        if v.is_infinite() {
            return Err(InputError::new(
                format!("{field}[{i}]"),
                "must be a finite number or null (no reading)",
            ));
        }
        if is_pressure && v < 0.0 {
            return Err(InputError::new(
                format!("{field}[{i}]"),
                format!("a pressure cannot be negative (got {v})"),
            ));
        }
    }
    Ok(())
}

/// Serde for series with gaps: NaN (and any non-finite value) is written as `null`, and
/// `null` is read as NaN, so a series survives a JSON round trip.
pub mod nan_as_null {
    use serde::{Deserialize, Deserializer, Serializer};

    pub fn serialize<S: Serializer>(values: &[f64], serializer: S) -> Result<S::Ok, S::Error> {
        serializer.collect_seq(values.iter().map(|v| v.is_finite().then_some(*v)))
    }

    pub fn deserialize<'de, D: Deserializer<'de>>(deserializer: D) -> Result<Vec<f64>, D::Error> {
        let values = Vec::<Option<f64>>::deserialize(deserializer)?;
        Ok(values.into_iter().map(|v| v.unwrap_or(f64::NAN)).collect())
    }

    /// The same for an optional series.
    pub mod option {
        use serde::{Deserialize, Deserializer, Serializer};

        pub fn serialize<S: Serializer>(
            values: &Option<Vec<f64>>,
            serializer: S,
        ) -> Result<S::Ok, S::Error> {
            match values {
                Some(v) => super::serialize(v, serializer),
                None => serializer.serialize_none(),
            }
        }

        pub fn deserialize<'de, D: Deserializer<'de>>(
            deserializer: D,
        ) -> Result<Option<Vec<f64>>, D::Error> {
            let values = Option::<Vec<Option<f64>>>::deserialize(deserializer)?;
            Ok(values.map(|v| v.into_iter().map(|x| x.unwrap_or(f64::NAN)).collect()))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    fn two_rows() -> RunSeries {
        RunSeries {
            time_h: vec![0.0, 1.0],
            shelf_c: vec![-40.0, -30.0],
            probes: vec![Probe {
                label: "P1".into(),
                position: ProbePosition::Centre,
                temp_c: vec![f64::NAN, -35.0],
            }],
            manometer_mtorr: Some(vec![100.0, f64::NAN]),
            pirani_mtorr: None,
            condenser_c: None,
        }
    }

    #[test]
    fn a_series_with_gaps_survives_json_with_nulls() {
        let s = two_rows();
        let value = serde_json::to_value(&s).unwrap();
        assert_eq!(value["probes"][0]["temp_c"], json!([null, -35.0]));
        assert_eq!(value["manometer_mtorr"], json!([100.0, null]));
        assert_eq!(value["probes"][0]["position"], json!("centre"));
        let back: RunSeries = serde_json::from_value(value).unwrap();
        assert!(back.probes[0].temp_c[0].is_nan());
        assert!(back.manometer_mtorr.as_ref().unwrap()[1].is_nan());
        assert_eq!(back.pirani_mtorr, None);
        back.validate().unwrap();
    }

    #[test]
    fn a_probe_of_the_wrong_length_is_named() {
        let mut s = two_rows();
        s.probes[0].temp_c.push(1.0);
        assert_eq!(s.validate().unwrap_err().field, "probes[0].temp_c");
    }

    #[test]
    fn a_clock_going_backwards_is_refused() {
        let mut s = two_rows();
        s.time_h = vec![1.0, 0.5];
        assert_eq!(s.validate().unwrap_err().field, "time_h[1]");
    }

    #[test]
    fn a_single_row_is_not_a_series() {
        let mut s = two_rows();
        s.time_h.truncate(1);
        assert_eq!(s.validate().unwrap_err().field, "time_h");
    }

    #[test]
    fn a_missing_shelf_reading_is_refused() {
        let mut s = two_rows();
        s.shelf_c[1] = f64::NAN;
        assert_eq!(s.validate().unwrap_err().field, "shelf_c[1]");
    }

    #[test]
    fn the_pirani_stands_in_when_there_is_no_manometer() {
        let mut s = two_rows();
        s.manometer_mtorr = Some(vec![f64::NAN, f64::NAN]);
        s.pirani_mtorr = Some(vec![150.0, 140.0]);
        assert_eq!(s.chamber_pressure_mtorr(), Some(&[150.0, 140.0][..]));
    }
}
