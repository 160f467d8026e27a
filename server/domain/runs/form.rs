//! The run form: typed text to a draft, naming the field (and the line of an entry) of
//! anything it cannot accept.

use time::Date;

use super::super::fields::*;
use super::*;

/// The run form as typed. Moisture samples are one per line: time (h), shelf temperature
/// (°C), water (% w/w) and the method, separated by semicolons or tabs (or spaces, with
/// the method last). Vial weights are one per line: centre or edge, the mass before and
/// after, g.
#[derive(Debug, Clone, Default, serde::Deserialize, serde::Serialize)]
#[serde(default)]
pub struct RunForm {
    pub name: String,
    pub kind: String,
    pub cycle_id: String,
    pub dryer_id: String,
    pub run_on: String,
    pub container_id: String,
    pub vial_count: String,
    pub fill_volume_ml: String,
    /// Formulation ids of the load, comma separated (the form's check boxes send one
    /// `formulation_ids` value each; see [`RunForm::with_formulations`]).
    pub formulation_ids: String,
    pub probed_formulation_id: String,
    pub chamber_pressure_mtorr: String,
    pub test_start_h: String,
    pub test_end_h: String,
    pub cake_appearance: String,
    pub cake_notes: String,
    pub notes: String,
    pub moisture: String,
    pub weights: String,
    pub version: String,
    pub reason: String,
}

pub fn moisture_text(entries: &[MoistureEntry]) -> String {
    entries
        .iter()
        .map(|m| {
            format!(
                "{}; {}; {}; {}",
                number_text(m.time_h),
                number_text(m.shelf_temp_c),
                number_text(m.water_percent),
                m.method
            )
        })
        .collect::<Vec<_>>()
        .join("\n")
}

pub fn weights_text(weights: &[VialWeight]) -> String {
    weights
        .iter()
        .map(|w| {
            format!(
                "{} {} {}",
                w.location.code(),
                number_text(w.before_g),
                number_text(w.after_g)
            )
        })
        .collect::<Vec<_>>()
        .join("\n")
}

fn entry_lines(raw: &str) -> Vec<&str> {
    raw.lines()
        .map(str::trim)
        .filter(|l| !l.is_empty())
        .collect()
}

fn read_number(text: &str) -> Option<f64> {
    text.trim()
        .replace(',', ".")
        .parse::<f64>()
        .ok()
        .filter(|v| v.is_finite())
}

/// Splits a moisture line into its three numbers and the method.
fn moisture_parts(line: &str) -> Option<(&str, &str, &str, &str)> {
    if line.contains(';') || line.contains('\t') {
        let parts: Vec<&str> = line.split([';', '\t']).map(str::trim).collect();
        return match parts.as_slice() {
            [t, s, w, m] => Some((t, s, w, m)),
            _ => None,
        };
    }
    let mut it = line.splitn(4, char::is_whitespace);
    let (t, s, w) = (it.next()?, it.next()?, it.next()?);
    Some((t, s, w, it.next().unwrap_or("").trim()))
}

fn parse_moisture(e: &mut FieldErrors, raw: &str) -> Vec<MoistureEntry> {
    let field = "moisture";
    let lines = entry_lines(raw);
    if lines.len() > MAX_ENTRIES {
        e.add(field, format!("give at most {MAX_ENTRIES} samples"));
        return Vec::new();
    }
    let mut out = Vec::new();
    for (i, line) in lines.iter().enumerate() {
        let n = i + 1;
        let Some((t, s, w, method)) = moisture_parts(line) else {
            e.add(
                field,
                format!(
                    "sample {n} (“{line}”): write the time in h, the shelf temperature in °C, \
                     the water in % w/w and the method, e.g. “30; 40; 1.2; Karl Fischer”"
                ),
            );
            return out;
        };
        let (Some(t), Some(s), Some(w)) = (read_number(t), read_number(s), read_number(w)) else {
            e.add(
                field,
                format!("sample {n} (“{line}”): time, shelf temperature and water must be numbers"),
            );
            return out;
        };
        let problem = if !(0.0..=MAX_RUN_HOURS).contains(&t) {
            Some(format!("the time must lie between 0 and {MAX_RUN_HOURS} h"))
        } else if !(-80.0..=150.0).contains(&s) {
            Some("the shelf temperature must lie between −80 and 150 °C".to_string())
        } else if !(0.0..=100.0).contains(&w) {
            Some("the water content must lie between 0 and 100 % w/w".to_string())
        } else if method.is_empty() {
            Some("name the method (e.g. Karl Fischer)".to_string())
        } else if method.chars().count() > limits::NAME_CHARS
            || method.chars().any(char::is_control)
        {
            Some(format!(
                "the method must be plain text of at most {} characters",
                limits::NAME_CHARS
            ))
        } else {
            None
        };
        if let Some(p) = problem {
            e.add(field, format!("sample {n} (“{line}”): {p}"));
            return out;
        }
        out.push(MoistureEntry {
            time_h: t,
            shelf_temp_c: s,
            water_percent: w,
            method: method.to_string(),
        });
    }
    out
}

fn parse_weights(e: &mut FieldErrors, raw: &str) -> Vec<VialWeight> {
    let field = "weights";
    let lines = entry_lines(raw);
    if lines.len() > MAX_ENTRIES {
        e.add(field, format!("give at most {MAX_ENTRIES} vials"));
        return Vec::new();
    }
    let mut out = Vec::new();
    for (i, line) in lines.iter().enumerate() {
        let n = i + 1;
        let parts: Vec<&str> = line
            .split(|c: char| c.is_whitespace() || c == ';')
            .filter(|s| !s.is_empty())
            .collect();
        let [loc, before, after] = parts.as_slice() else {
            e.add(
                field,
                format!(
                    "vial {n} (“{line}”): write centre or edge, then the mass before and after \
                     in g, e.g. “centre 14.812 13.905”"
                ),
            );
            return out;
        };
        let Some(location) = VialLocation::parse(&loc.to_lowercase()) else {
            e.add(
                field,
                format!("vial {n} (“{line}”): the location must be centre or edge"),
            );
            return out;
        };
        let (Some(b), Some(a)) = (read_number(before), read_number(after)) else {
            e.add(
                field,
                format!("vial {n} (“{line}”): both masses must be numbers"),
            );
            return out;
        };
        let problem = if b <= 0.0 || b > MAX_VIAL_G || a <= 0.0 || a > MAX_VIAL_G {
            Some(format!(
                "masses must lie above 0 and at most {MAX_VIAL_G} g"
            ))
        } else if a >= b {
            Some("the mass after must be below the mass before (the vial lost ice)".to_string())
        } else {
            None
        };
        if let Some(p) = problem {
            e.add(field, format!("vial {n} (“{line}”): {p}"));
            return out;
        }
        out.push(VialWeight {
            location,
            before_g: b,
            after_g: a,
        });
    }
    out
}

fn id_list(e: &mut FieldErrors, field: &str, raw: &str) -> Vec<i64> {
    let mut ids = Vec::new();
    for part in raw
        .split([',', ' '])
        .map(str::trim)
        .filter(|s| !s.is_empty())
    {
        match part.parse::<i64>() {
            Ok(v) if v > 0 => {
                if !ids.contains(&v) {
                    ids.push(v)
                }
            }
            _ => {
                e.add(field, format!("“{part}” is not a valid choice"));
                return ids;
            }
        }
    }
    if ids.len() > MAX_LOAD_FORMULATIONS {
        e.add(
            field,
            format!("a load holds at most {MAX_LOAD_FORMULATIONS} formulations"),
        );
    }
    ids
}

fn required_id(e: &mut FieldErrors, field: &str, raw: &str) -> i64 {
    if raw.trim().is_empty() {
        e.add(field, "is required");
        return 0;
    }
    optional_id(e, field, raw).unwrap_or(0)
}

fn hours(e: &mut FieldErrors, field: &str, raw: &str) -> Option<f64> {
    let v = optional_number(e, field, raw);
    check_range(e, field, v, 0.0, MAX_RUN_HOURS, "h");
    v
}

impl RunForm {
    /// The form showing a stored run.
    pub fn from_run(r: &Run) -> Self {
        let opt = |v: Option<f64>| v.map(number_text).unwrap_or_default();
        RunForm {
            name: r.name.clone(),
            kind: r.kind.code().into(),
            cycle_id: r.cycle_id.to_string(),
            dryer_id: r.dryer_id.map(|v| v.to_string()).unwrap_or_default(),
            run_on: format_date(r.run_on),
            container_id: r.container_id.to_string(),
            vial_count: r.vial_count.map(|v| v.to_string()).unwrap_or_default(),
            fill_volume_ml: number_text(r.fill_volume_ml),
            formulation_ids: r
                .formulation_ids
                .iter()
                .map(i64::to_string)
                .collect::<Vec<_>>()
                .join(","),
            probed_formulation_id: r
                .probed_formulation_id
                .map(|v| v.to_string())
                .unwrap_or_default(),
            chamber_pressure_mtorr: opt(r.chamber_pressure_mtorr),
            test_start_h: opt(r.test_start_h),
            test_end_h: opt(r.test_end_h),
            cake_appearance: r.cake_appearance.code().into(),
            cake_notes: r.cake_notes.clone(),
            notes: r.notes.clone(),
            moisture: moisture_text(&r.moisture),
            weights: weights_text(&r.weights),
            version: r.version.to_string(),
            reason: String::new(),
        }
    }

    /// The check boxes of the load arrive as repeated `formulation_ids` values.
    pub fn with_formulations(mut self, ids: &[String]) -> Self {
        if !ids.is_empty() {
            self.formulation_ids = ids.join(",");
        }
        self
    }

    pub fn selected(&self, id: &i64) -> bool {
        self.formulation_ids
            .split(',')
            .any(|s| s.trim() == id.to_string())
    }

    pub fn parse(&self) -> Result<RunDraft, FieldErrors> {
        let mut e = FieldErrors::default();
        let name = required_text(&mut e, "name", &self.name, limits::NAME_CHARS);
        let kind = if self.kind.trim().is_empty() {
            Some(RunKind::Development)
        } else {
            parse_choice(&mut e, "kind", &self.kind, RunKind::parse, RunKind::codes)
        };
        let cycle_id = required_id(&mut e, "cycle_id", &self.cycle_id);
        let dryer_id = optional_id(&mut e, "dryer_id", &self.dryer_id);
        let run_on = parse_date(&mut e, "run_on", &self.run_on);
        let container_id = required_id(&mut e, "container_id", &self.container_id);
        let vial_count = optional_number(&mut e, "vial_count", &self.vial_count);
        check_range(&mut e, "vial_count", vial_count, 1.0, 1.0e6, "vials");
        if vial_count.is_some_and(|v| v.fract() != 0.0) {
            e.add("vial_count", "must be a whole number of vials");
        }
        let fill = required_number(&mut e, "fill_volume_ml", &self.fill_volume_ml);
        check_positive(&mut e, "fill_volume_ml", fill, 1000.0, "mL");
        let formulation_ids = id_list(&mut e, "formulation_ids", &self.formulation_ids);
        if formulation_ids.is_empty() && !e.has("formulation_ids") {
            e.add(
                "formulation_ids",
                "choose at least one formulation of the load",
            );
        }
        let probed = optional_id(&mut e, "probed_formulation_id", &self.probed_formulation_id);
        if let Some(p) = probed {
            if !formulation_ids.is_empty() && !formulation_ids.contains(&p) {
                e.add(
                    "probed_formulation_id",
                    "the probed formulation must be one of the load",
                );
            }
        }
        let pressure = optional_number(
            &mut e,
            "chamber_pressure_mtorr",
            &self.chamber_pressure_mtorr,
        );
        check_positive(&mut e, "chamber_pressure_mtorr", pressure, 2000.0, "mTorr");
        let test_start = hours(&mut e, "test_start_h", &self.test_start_h);
        let test_end = hours(&mut e, "test_end_h", &self.test_end_h);
        if let (Some(s), Some(t)) = (test_start, test_end) {
            if t <= s {
                e.add("test_end_h", "must be after the test's start");
            }
        }
        let cake = if self.cake_appearance.trim().is_empty() {
            Some(CakeAppearance::NotInspected)
        } else {
            parse_choice(
                &mut e,
                "cake_appearance",
                &self.cake_appearance,
                CakeAppearance::parse,
                CakeAppearance::codes,
            )
        };
        let cake_notes = notes_text(&mut e, "cake_notes", &self.cake_notes);
        let notes = notes_text(&mut e, "notes", &self.notes);
        let moisture = parse_moisture(&mut e, &self.moisture);
        let weights = parse_weights(&mut e, &self.weights);
        let kind = kind.unwrap_or(RunKind::Development);
        e.into_result(RunDraft {
            name,
            kind,
            cycle_id,
            dryer_id,
            run_on: run_on.unwrap_or(Date::MIN),
            container_id,
            vial_count: vial_count.map(|v| v as i64),
            fill_volume_ml: fill.unwrap_or_default(),
            probed_formulation_id: probed.or_else(|| formulation_ids.first().copied()),
            formulation_ids,
            chamber_pressure_mtorr: pressure,
            test_start_h: test_start,
            test_end_h: test_end,
            cake_appearance: cake.unwrap_or(CakeAppearance::NotInspected),
            cake_notes,
            notes,
            moisture,
            weights,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn form() -> RunForm {
        RunForm {
            name: "Platform run 1".into(),
            cycle_id: "1".into(),
            run_on: "2026-11-03".into(),
            container_id: "2".into(),
            fill_volume_ml: "3".into(),
            formulation_ids: "4,5".into(),
            moisture: "30; 40; 1.2; Karl Fischer\n36 40 0.9 Karl Fischer".into(),
            weights: "centre 14.8 13.9\nEDGE 14.9 13.7".into(),
            ..Default::default()
        }
    }

    #[test]
    fn a_run_form_reads_its_entries_and_defaults_the_probed_formulation() {
        let d = form().parse().unwrap();
        assert_eq!(d.moisture.len(), 2);
        assert_eq!(d.moisture[1].method, "Karl Fischer");
        assert_eq!(d.weights[1].location, VialLocation::Edge);
        assert_eq!(d.probed_formulation_id, Some(4));
        assert_eq!(d.kind, RunKind::Development);
    }

    #[test]
    fn the_form_text_reads_back_as_the_same_entries() {
        let d = form().parse().unwrap();
        let mut e = FieldErrors::default();
        assert_eq!(
            parse_moisture(&mut e, &moisture_text(&d.moisture)),
            d.moisture
        );
        assert_eq!(parse_weights(&mut e, &weights_text(&d.weights)), d.weights);
        assert!(e.is_empty());
    }

    #[test]
    fn a_vial_that_gained_mass_is_refused_naming_the_vial() {
        let mut f = form();
        f.weights = "centre 14.8 13.9\ncentre 13 13.5".into();
        let e = f.parse().unwrap_err();
        assert!(e.msg("weights").contains("vial 2"), "{e:?}");
    }

    #[test]
    fn a_sample_without_a_method_is_refused_naming_the_sample() {
        let mut f = form();
        f.moisture = "30 40 1.2".into();
        let e = f.parse().unwrap_err();
        assert!(e.msg("moisture").contains("sample 1"), "{e:?}");
    }

    #[test]
    fn a_probed_formulation_outside_the_load_is_refused() {
        let mut f = form();
        f.probed_formulation_id = "9".into();
        assert!(f.parse().unwrap_err().has("probed_formulation_id"));
    }

    #[test]
    fn a_test_window_that_ends_before_it_starts_is_refused() {
        let mut f = form();
        f.test_start_h = "10".into();
        f.test_end_h = "4".into();
        assert!(f.parse().unwrap_err().has("test_end_h"));
    }
}
