//! The notebook's records as read back, and the drafts that create or change them. A draft
//! only exists once its form (or JSON body) has passed every check.

use time::{Date, OffsetDateTime};
use utoipa::ToSchema;

use super::enums::*;
use super::fields::*;

mod iso_date {
    use serde::Serializer;
    pub fn serialize<S: Serializer>(d: &time::Date, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str(&super::format_date(*d))
    }
}

// ---------------------------------------------------------------- materials

#[derive(Debug, Clone, serde::Serialize, ToSchema)]
pub struct MaterialProperty {
    pub kind: PropertyKind,
    pub value: f64,
    /// "onset" or "midpoint" for glass transitions.
    pub convention: Option<String>,
    pub source_kind: SourceKind,
    pub citation: String,
    /// For in-house values: the measurements the value came from.
    pub measurement_ids: Vec<i64>,
}

#[derive(Debug, Clone, serde::Serialize, ToSchema)]
pub struct Material {
    pub id: i64,
    pub name: String,
    pub role: MaterialRole,
    pub freezing_behaviour: FreezingBehaviour,
    pub notes: String,
    /// Shipped with the library (literature values) rather than added by the team.
    pub from_library: bool,
    pub version: i64,
    pub properties: Vec<MaterialProperty>,
}

impl Material {
    pub fn property(&self, kind: PropertyKind) -> Option<&MaterialProperty> {
        self.properties.iter().find(|p| p.kind == kind)
    }

    pub fn value(&self, kind: PropertyKind) -> Option<f64> {
        self.property(kind).map(|p| p.value)
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct PropertyDraft {
    pub kind: PropertyKind,
    pub value: f64,
    pub convention: Option<String>,
    pub source_kind: SourceKind,
    pub citation: String,
    pub measurement_ids: Vec<i64>,
}

#[derive(Debug, Clone, PartialEq)]
pub struct MaterialDraft {
    pub name: String,
    pub role: MaterialRole,
    pub freezing_behaviour: FreezingBehaviour,
    pub notes: String,
    pub properties: Vec<PropertyDraft>,
}

/// A material as typed: one value, convention and citation per property kind.
#[derive(Debug, Clone, Default)]
pub struct MaterialForm {
    pub name: String,
    pub role: String,
    pub freezing_behaviour: String,
    pub notes: String,
    pub version: String,
    /// Per property kind: (value, convention, citation, source kind).
    pub properties: Vec<(PropertyKind, PropertyForm)>,
}

#[derive(Debug, Clone, Default)]
pub struct PropertyForm {
    pub value: String,
    pub convention: String,
    pub citation: String,
    pub source_kind: String,
    /// Ids of the in-house measurements the value came from, comma separated.
    pub measurements: String,
}

impl MaterialForm {
    /// Builds the form from urlencoded pairs (property fields are `{kind}_value`,
    /// `{kind}_convention`, `{kind}_citation`, `{kind}_source`, `{kind}_measurements`).
    pub fn from_pairs(pairs: &[(String, String)]) -> Self {
        let get = |k: &str| {
            pairs
                .iter()
                .find(|(key, _)| key == k)
                .map(|(_, v)| v.clone())
                .unwrap_or_default()
        };
        MaterialForm {
            name: get("name"),
            role: get("role"),
            freezing_behaviour: get("freezing_behaviour"),
            notes: get("notes"),
            version: get("version"),
            properties: PropertyKind::ALL
                .iter()
                .map(|k| {
                    let c = k.code();
                    (
                        *k,
                        PropertyForm {
                            value: get(&format!("{c}_value")),
                            convention: get(&format!("{c}_convention")),
                            citation: get(&format!("{c}_citation")),
                            source_kind: get(&format!("{c}_source")),
                            measurements: get(&format!("{c}_measurements")),
                        },
                    )
                })
                .collect(),
        }
    }

    /// The form showing a stored material.
    pub fn from_material(m: &Material) -> Self {
        MaterialForm {
            name: m.name.clone(),
            role: m.role.code().into(),
            freezing_behaviour: m.freezing_behaviour.code().into(),
            notes: m.notes.clone(),
            version: m.version.to_string(),
            properties: PropertyKind::ALL
                .iter()
                .map(|k| {
                    let p = m.property(*k);
                    (
                        *k,
                        PropertyForm {
                            value: p.map(|p| number_text(p.value)).unwrap_or_default(),
                            convention: p.and_then(|p| p.convention.clone()).unwrap_or_default(),
                            citation: p.map(|p| p.citation.clone()).unwrap_or_default(),
                            source_kind: p
                                .map(|p| p.source_kind.code().to_string())
                                .unwrap_or_default(),
                            measurements: p
                                .map(|p| join_ids(&p.measurement_ids))
                                .unwrap_or_default(),
                        },
                    )
                })
                .collect(),
        }
    }

    pub fn property(&self, kind: PropertyKind) -> PropertyForm {
        self.properties
            .iter()
            .find(|(k, _)| *k == kind)
            .map(|(_, p)| p.clone())
            .unwrap_or_default()
    }

    pub fn parse(&self) -> Result<MaterialDraft, FieldErrors> {
        let mut errors = FieldErrors::default();
        let name = required_text(&mut errors, "name", &self.name, limits::NAME_CHARS);
        let role = parse_choice(
            &mut errors,
            "role",
            &self.role,
            MaterialRole::parse,
            MaterialRole::codes,
        );
        let behaviour = parse_choice(
            &mut errors,
            "freezing_behaviour",
            &self.freezing_behaviour,
            FreezingBehaviour::parse,
            FreezingBehaviour::codes,
        );
        let notes = notes_text(&mut errors, "notes", &self.notes);
        let mut properties = Vec::new();
        for (kind, p) in &self.properties {
            let code = kind.code();
            let value_field = format!("{code}_value");
            let value = optional_number(&mut errors, &value_field, &p.value);
            let (min, max) = kind.range();
            check_range(&mut errors, &value_field, value, min, max, "");
            if matches!(
                kind,
                PropertyKind::DeltaCp | PropertyKind::GordonTaylorK | PropertyKind::TgPrimeBlendK
            ) {
                check_positive(&mut errors, &value_field, value, max, "");
            }
            let citation = optional_text(
                &mut errors,
                &format!("{code}_citation"),
                &p.citation,
                limits::SOURCE_CHARS,
            );
            let measurement_ids = measurement_ids(
                &mut errors,
                &format!("{code}_measurements"),
                &p.measurements,
            );
            let convention = p.convention.trim();
            let convention = if convention.is_empty() || !kind.has_convention() {
                None
            } else if convention == "onset" || convention == "midpoint" {
                Some(convention.to_string())
            } else {
                errors.add(
                    format!("{code}_convention"),
                    "must be “onset” or “midpoint”",
                );
                None
            };
            let source_kind = if p.source_kind.trim().is_empty() {
                SourceKind::Literature
            } else {
                match SourceKind::parse(&p.source_kind) {
                    Some(s) => s,
                    None => {
                        errors.add(
                            format!("{code}_source"),
                            format!("must be one of: {}", SourceKind::codes()),
                        );
                        SourceKind::Literature
                    }
                }
            };
            match value {
                Some(_) if citation.is_empty() => {
                    errors.add(
                        format!("{code}_citation"),
                        "a value needs its source: a citation, or the in-house measurement it came from",
                    );
                }
                Some(v) => properties.push(PropertyDraft {
                    kind: *kind,
                    value: v,
                    convention,
                    source_kind,
                    citation,
                    measurement_ids,
                }),
                None if !citation.is_empty() || !measurement_ids.is_empty() => {
                    errors.add(
                        &value_field,
                        "a source is given without a value: give the value, or clear its source",
                    );
                }
                None => {}
            }
        }
        errors.into_result(MaterialDraft {
            name,
            role: role.unwrap_or(MaterialRole::Other),
            freezing_behaviour: behaviour.unwrap_or(FreezingBehaviour::Amorphous),
            notes,
            properties,
        })
    }
}

/// Measurement ids as a form shows them: "3,5".
pub fn join_ids(ids: &[i64]) -> String {
    ids.iter().map(i64::to_string).collect::<Vec<_>>().join(",")
}

/// Measurement ids typed or carried in a form: whole numbers, comma separated.
fn measurement_ids(errors: &mut FieldErrors, field: &str, raw: &str) -> Vec<i64> {
    let mut ids = Vec::new();
    for part in raw.split(',').map(str::trim).filter(|p| !p.is_empty()) {
        match part.parse::<i64>() {
            Ok(id) if id > 0 => ids.push(id),
            _ => {
                errors.add(
                    field,
                    format!("“{part}” is not a measurement id (a whole number)"),
                );
            }
        }
    }
    ids
}

/// One tag: a line of at most [`limits::TAG_CHARS`] characters.
fn check_tag(errors: &mut FieldErrors, tag: &str) {
    if tag.chars().count() > limits::TAG_CHARS {
        errors.add(
            "tags",
            format!("each tag must be at most {} characters", limits::TAG_CHARS),
        );
    } else if tag.chars().any(char::is_control) {
        errors.add(
            "tags",
            "a tag must not contain line breaks or control characters",
        );
    }
}

// ---------------------------------------------------------------- containers

#[derive(Debug, Clone, serde::Serialize, ToSchema)]
pub struct Container {
    pub id: i64,
    pub name: String,
    pub kind: ContainerKind,
    pub nominal_ml: f64,
    /// Ap: inner cross-section of the vial, cm².
    pub inner_area_cm2: f64,
    /// Av: outer bottom area of the vial, cm².
    pub outer_area_cm2: f64,
    pub kc_cal_s_cm2_k: f64,
    pub kp_cal_s_cm2_k_torr: f64,
    pub kd_per_torr: f64,
    pub kv_source: String,
    /// Literature-typical coefficients, to be replaced by the team's own measurements.
    pub typical_values: bool,
    pub notes: String,
    pub version: i64,
}

#[derive(Debug, Clone, PartialEq)]
pub struct ContainerDraft {
    pub name: String,
    pub kind: ContainerKind,
    pub nominal_ml: f64,
    pub inner_area_cm2: f64,
    pub outer_area_cm2: f64,
    pub kc_cal_s_cm2_k: f64,
    pub kp_cal_s_cm2_k_torr: f64,
    pub kd_per_torr: f64,
    pub kv_source: String,
    pub typical_values: bool,
    pub notes: String,
}

#[derive(Debug, Clone, Default, serde::Deserialize, serde::Serialize)]
pub struct ContainerForm {
    #[serde(default)]
    pub name: String,
    #[serde(default)]
    pub kind: String,
    #[serde(default)]
    pub nominal_ml: String,
    #[serde(default)]
    pub inner_area_cm2: String,
    #[serde(default)]
    pub outer_area_cm2: String,
    #[serde(default)]
    pub kc_cal_s_cm2_k: String,
    #[serde(default)]
    pub kp_cal_s_cm2_k_torr: String,
    #[serde(default)]
    pub kd_per_torr: String,
    #[serde(default)]
    pub kv_source: String,
    #[serde(default)]
    pub typical_values: String,
    #[serde(default)]
    pub notes: String,
    #[serde(default)]
    pub version: String,
}

impl ContainerForm {
    pub fn from_container(c: &Container) -> Self {
        ContainerForm {
            name: c.name.clone(),
            kind: c.kind.code().into(),
            nominal_ml: number_text(c.nominal_ml),
            inner_area_cm2: number_text(c.inner_area_cm2),
            outer_area_cm2: number_text(c.outer_area_cm2),
            kc_cal_s_cm2_k: number_text(c.kc_cal_s_cm2_k),
            kp_cal_s_cm2_k_torr: number_text(c.kp_cal_s_cm2_k_torr),
            kd_per_torr: number_text(c.kd_per_torr),
            kv_source: c.kv_source.clone(),
            typical_values: if c.typical_values {
                "on".into()
            } else {
                String::new()
            },
            notes: c.notes.clone(),
            version: c.version.to_string(),
        }
    }

    pub fn parse(&self) -> Result<ContainerDraft, FieldErrors> {
        let mut e = FieldErrors::default();
        let name = required_text(&mut e, "name", &self.name, limits::NAME_CHARS);
        let kind = parse_choice(
            &mut e,
            "kind",
            &self.kind,
            ContainerKind::parse,
            ContainerKind::codes,
        );
        let nominal = required_number(&mut e, "nominal_ml", &self.nominal_ml);
        check_positive(&mut e, "nominal_ml", nominal, 1000.0, "mL");
        let ap = required_number(&mut e, "inner_area_cm2", &self.inner_area_cm2);
        check_positive(&mut e, "inner_area_cm2", ap, 200.0, "cm²");
        let av = required_number(&mut e, "outer_area_cm2", &self.outer_area_cm2);
        check_positive(&mut e, "outer_area_cm2", av, 200.0, "cm²");
        if let (Some(ap), Some(av)) = (ap, av) {
            if ap > av && !e.has("inner_area_cm2") {
                e.add(
                    "inner_area_cm2",
                    "the inner area (Ap) cannot exceed the outer area (Av)",
                );
            }
        }
        let kc = required_number(&mut e, "kc_cal_s_cm2_k", &self.kc_cal_s_cm2_k);
        check_positive(&mut e, "kc_cal_s_cm2_k", kc, 0.01, "cal/(s·cm²·K)");
        let kp = required_number(&mut e, "kp_cal_s_cm2_k_torr", &self.kp_cal_s_cm2_k_torr);
        check_range(
            &mut e,
            "kp_cal_s_cm2_k_torr",
            kp,
            0.0,
            0.1,
            "cal/(s·cm²·K·Torr)",
        );
        let kd = required_number(&mut e, "kd_per_torr", &self.kd_per_torr);
        check_range(&mut e, "kd_per_torr", kd, 0.0, 100.0, "1/Torr");
        let kv_source = required_text(&mut e, "kv_source", &self.kv_source, limits::SOURCE_CHARS);
        let notes = notes_text(&mut e, "notes", &self.notes);
        let typical = matches!(self.typical_values.trim(), "on" | "true" | "1" | "yes");
        e.into_result(ContainerDraft {
            name,
            kind: kind.unwrap_or(ContainerKind::Tubing),
            nominal_ml: nominal.unwrap_or_default(),
            inner_area_cm2: ap.unwrap_or_default(),
            outer_area_cm2: av.unwrap_or_default(),
            kc_cal_s_cm2_k: kc.unwrap_or_default(),
            kp_cal_s_cm2_k_torr: kp.unwrap_or_default(),
            kd_per_torr: kd.unwrap_or_default(),
            kv_source,
            typical_values: typical,
            notes,
        })
    }
}

// ---------------------------------------------------------------- formulations

#[derive(Debug, Clone, serde::Serialize, ToSchema)]
pub struct Component {
    pub material_id: i64,
    pub material_name: String,
    pub concentration: f64,
    pub unit: ConcentrationUnit,
    /// The concentration converted to mg/mL.
    pub concentration_mg_ml: f64,
    /// Share of the total solids (solid basis), 0–1.
    pub solid_fraction: f64,
    pub freezing_behaviour: FreezingBehaviour,
    pub role: MaterialRole,
}

#[derive(Debug, Clone, serde::Serialize, ToSchema)]
pub struct Formulation {
    pub id: i64,
    pub code: String,
    pub name: String,
    pub project: String,
    pub status: FormulationStatus,
    pub ph: Option<f64>,
    pub fill_volume_ml: Option<f64>,
    pub container_id: Option<i64>,
    pub container_name: Option<String>,
    pub notes: String,
    pub tags: Vec<String>,
    /// For a crystalline matrix: whether cycle checks use the Te-governed limit.
    pub use_crystalline_limit: bool,
    pub version: i64,
    #[serde(with = "time::serde::rfc3339")]
    #[schema(value_type = String)]
    pub created_at: OffsetDateTime,
    #[serde(with = "time::serde::rfc3339")]
    #[schema(value_type = String)]
    pub updated_at: OffsetDateTime,
    pub components: Vec<Component>,
    /// Total dissolved solids, mg/mL.
    pub solids_mg_ml: f64,
}

impl Formulation {
    /// Fills in the derived per-component values and the solids content.
    pub fn derive_composition(&mut self) {
        let total: f64 = self
            .components
            .iter()
            .map(|c| c.unit.to_mg_ml(c.concentration))
            .sum();
        self.solids_mg_ml = total;
        for c in &mut self.components {
            c.concentration_mg_ml = c.unit.to_mg_ml(c.concentration);
            c.solid_fraction = if total > 0.0 {
                c.concentration_mg_ml / total
            } else {
                0.0
            };
        }
    }

    /// Solids as a mass fraction of the solution, taking the solution density in g/mL.
    pub fn solids_mass_fraction(&self, solution_density_g_ml: f64) -> f64 {
        self.solids_mg_ml / (solution_density_g_ml * 1000.0)
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct ComponentDraft {
    pub material_id: i64,
    pub concentration: f64,
    pub unit: ConcentrationUnit,
}

#[derive(Debug, Clone, PartialEq)]
pub struct FormulationDraft {
    pub code: String,
    pub name: String,
    pub project: String,
    pub status: FormulationStatus,
    pub ph: Option<f64>,
    pub fill_volume_ml: Option<f64>,
    pub container_id: Option<i64>,
    pub notes: String,
    pub tags: Vec<String>,
    pub components: Vec<ComponentDraft>,
}

#[derive(Debug, Clone, Default, serde::Serialize)]
pub struct ComponentRow {
    pub material_id: String,
    pub concentration: String,
    pub unit: String,
}

/// A formulation as typed. Component rows arrive as `c{i}_material`, `c{i}_concentration`,
/// `c{i}_unit`; rows left wholly blank are ignored.
#[derive(Debug, Clone, Default, serde::Serialize)]
pub struct FormulationForm {
    pub code: String,
    pub name: String,
    pub project: String,
    pub status: String,
    pub ph: String,
    pub fill_volume_ml: String,
    pub container_id: String,
    pub notes: String,
    pub tags: String,
    pub version: String,
    pub components: Vec<ComponentRow>,
    /// Why a reviewed or approved record is changed (required then).
    pub reason: String,
}

/// Longest composition a form or the API accepts.
pub const MAX_COMPONENTS: usize = limits::MAX_COMPONENTS;

/// `c12_concentration` → (12, "concentration").
fn component_key(key: &str) -> Option<(usize, &str)> {
    let rest = key.strip_prefix('c')?;
    let (index, part) = rest.split_once('_')?;
    if index.is_empty() || index.len() > 6 || !index.chars().all(|c| c.is_ascii_digit()) {
        return None;
    }
    Some((index.parse().ok()?, part))
}

impl FormulationForm {
    pub fn from_pairs(pairs: &[(String, String)]) -> Self {
        let get = |k: &str| {
            pairs
                .iter()
                .find(|(key, _)| key == k)
                .map(|(_, v)| v.clone())
                .unwrap_or_default()
        };
        // Every row the form posted, in row order, however many there are: rows past the
        // limit are refused by `parse`, never dropped.
        let mut rows: std::collections::BTreeMap<usize, ComponentRow> = Default::default();
        let mut seen = std::collections::HashSet::new();
        for (key, value) in pairs {
            let Some((index, part)) = component_key(key) else {
                continue;
            };
            if !seen.insert(key.as_str()) {
                continue;
            }
            let row = rows.entry(index).or_default();
            match part {
                "material" => row.material_id = value.clone(),
                "concentration" => row.concentration = value.clone(),
                "unit" => row.unit = value.clone(),
                _ => {}
            }
        }
        let components = rows.into_values().collect();
        FormulationForm {
            code: get("code"),
            name: get("name"),
            project: get("project"),
            status: get("status"),
            ph: get("ph"),
            fill_volume_ml: get("fill_volume_ml"),
            container_id: get("container_id"),
            notes: get("notes"),
            tags: get("tags"),
            version: get("version"),
            components,
            reason: get("reason"),
        }
    }

    pub fn from_formulation(f: &Formulation) -> Self {
        FormulationForm {
            code: f.code.clone(),
            name: f.name.clone(),
            project: f.project.clone(),
            status: f.status.code().into(),
            ph: f.ph.map(number_text).unwrap_or_default(),
            fill_volume_ml: f.fill_volume_ml.map(number_text).unwrap_or_default(),
            container_id: f.container_id.map(|v| v.to_string()).unwrap_or_default(),
            notes: f.notes.clone(),
            tags: f.tags.join(", "),
            version: f.version.to_string(),
            components: f
                .components
                .iter()
                .map(|c| ComponentRow {
                    material_id: c.material_id.to_string(),
                    concentration: number_text(c.concentration),
                    unit: c.unit.code().into(),
                })
                .collect(),
            reason: String::new(),
        }
    }

    pub fn parse(&self) -> Result<FormulationDraft, FieldErrors> {
        let mut e = FieldErrors::default();
        let code = required_text(&mut e, "code", &self.code, limits::CODE_CHARS);
        if !code.is_empty()
            && !code
                .chars()
                .all(|c| c.is_ascii_alphanumeric() || "-_./".contains(c))
        {
            e.add(
                "code",
                "may use only letters, digits and - _ . / (no spaces)",
            );
        }
        let name = required_text(&mut e, "name", &self.name, limits::LONG_NAME_CHARS);
        let project = optional_text(&mut e, "project", &self.project, limits::NAME_CHARS);
        let status = if self.status.trim().is_empty() {
            Some(FormulationStatus::Draft)
        } else {
            parse_choice(
                &mut e,
                "status",
                &self.status,
                FormulationStatus::parse,
                FormulationStatus::codes,
            )
        };
        let ph = optional_number(&mut e, "ph", &self.ph);
        check_range(&mut e, "ph", ph, 0.0, 14.0, "");
        let fill = optional_number(&mut e, "fill_volume_ml", &self.fill_volume_ml);
        check_positive(&mut e, "fill_volume_ml", fill, 500.0, "mL");
        let container_id = optional_id(&mut e, "container_id", &self.container_id);
        let notes = notes_text(&mut e, "notes", &self.notes);
        let tags: Vec<String> = self
            .tags
            .split(',')
            .map(|t| t.trim().to_string())
            .filter(|t| !t.is_empty())
            .collect();
        for tag in &tags {
            check_tag(&mut e, tag);
        }
        let filled = self.components.iter().filter(|r| !r.is_blank()).count();
        if filled > MAX_COMPONENTS {
            e.add(
                "components",
                format!(
                    "a formulation has at most {MAX_COMPONENTS} components; this one has {filled}"
                ),
            );
        }
        let mut components = Vec::new();
        for (i, row) in self.components.iter().enumerate() {
            if row.is_blank() {
                continue;
            }
            let mfield = format!("c{i}_material");
            let cfield = format!("c{i}_concentration");
            let material_id = match row.material_id.trim() {
                "" => {
                    e.add(&mfield, "choose a material for this concentration");
                    None
                }
                text => match text.parse::<i64>() {
                    Ok(v) if v > 0 => Some(v),
                    _ => {
                        e.add(&mfield, "unknown material");
                        None
                    }
                },
            };
            let conc = required_number(&mut e, &cfield, &row.concentration);
            if let Some(c) = conc {
                if c <= 0.0 {
                    e.add(&cfield, "must be greater than zero");
                }
            }
            let unit = if row.unit.trim().is_empty() {
                Some(ConcentrationUnit::MgPerMl)
            } else {
                parse_choice(
                    &mut e,
                    &format!("c{i}_unit"),
                    &row.unit,
                    ConcentrationUnit::parse,
                    ConcentrationUnit::codes,
                )
            };
            if let (Some(c), Some(u)) = (conc, unit) {
                if c > 0.0 && u.to_mg_ml(c) > 1000.0 {
                    e.add(
                        &cfield,
                        "is above 1000 mg/mL, more than a solution can hold",
                    );
                }
            }
            if let Some(id) = material_id {
                if components
                    .iter()
                    .any(|c: &ComponentDraft| c.material_id == id)
                {
                    e.add(&mfield, "this material is listed twice");
                }
            }
            if let (Some(material_id), Some(concentration), Some(unit)) = (material_id, conc, unit)
            {
                components.push(ComponentDraft {
                    material_id,
                    concentration,
                    unit,
                });
            }
        }
        let total: f64 = components
            .iter()
            .map(|c| c.unit.to_mg_ml(c.concentration))
            .sum();
        if total > 1000.0 && !e.iter().any(|(f, _)| f.ends_with("_concentration")) {
            e.add(
                "c0_concentration",
                "the components add up to more than 1000 mg/mL",
            );
        }
        e.into_result(FormulationDraft {
            code,
            name,
            project,
            status: status.unwrap_or(FormulationStatus::Draft),
            ph,
            fill_volume_ml: fill,
            container_id,
            notes,
            tags,
            components,
        })
    }
}

impl ComponentRow {
    pub fn is_blank(&self) -> bool {
        self.material_id.trim().is_empty() && self.concentration.trim().is_empty()
    }
}

// ---------------------------------------------------------------- measurements

#[derive(Debug, Clone, serde::Serialize, ToSchema)]
pub struct Measurement {
    pub id: i64,
    pub formulation_id: i64,
    pub kind: MeasurementKind,
    pub value_c: f64,
    /// For dried-cake Tg: the residual moisture the value was measured at, % w/w.
    pub residual_moisture_pct: Option<f64>,
    pub method: MeasurementMethod,
    pub heating_rate_c_min: Option<f64>,
    pub sample_mass_mg: Option<f64>,
    pub pan: String,
    pub instrument: String,
    pub analyst: String,
    #[serde(serialize_with = "iso_date::serialize")]
    #[schema(value_type = String, format = Date)]
    pub measured_on: Date,
    pub replicate: i64,
    pub notes: String,
    pub review_state: ReviewState,
    pub version: i64,
    #[serde(with = "time::serde::rfc3339")]
    #[schema(value_type = String)]
    pub created_at: OffsetDateTime,
    /// The DSC trace the value was read from, if any.
    pub trace_id: Option<i64>,
}

#[derive(Debug, Clone, PartialEq)]
pub struct MeasurementDraft {
    pub kind: MeasurementKind,
    pub value_c: f64,
    pub residual_moisture_pct: Option<f64>,
    pub method: MeasurementMethod,
    pub heating_rate_c_min: Option<f64>,
    pub sample_mass_mg: Option<f64>,
    pub pan: String,
    pub instrument: String,
    pub analyst: String,
    pub measured_on: Date,
    pub replicate: i64,
    pub notes: String,
    pub review_state: ReviewState,
}

#[derive(Debug, Clone, Default, serde::Deserialize, serde::Serialize)]
pub struct MeasurementForm {
    #[serde(default)]
    pub kind: String,
    #[serde(default)]
    pub value_c: String,
    #[serde(default)]
    pub residual_moisture_pct: String,
    #[serde(default)]
    pub method: String,
    #[serde(default)]
    pub heating_rate_c_min: String,
    #[serde(default)]
    pub sample_mass_mg: String,
    #[serde(default)]
    pub pan: String,
    #[serde(default)]
    pub instrument: String,
    #[serde(default)]
    pub analyst: String,
    #[serde(default)]
    pub measured_on: String,
    #[serde(default)]
    pub replicate: String,
    #[serde(default)]
    pub notes: String,
    #[serde(default)]
    pub review_state: String,
    #[serde(default)]
    pub version: String,
    /// Why a reviewed result is changed (required then).
    #[serde(default)]
    pub reason: String,
}

impl MeasurementForm {
    pub fn from_measurement(m: &Measurement) -> Self {
        let opt = |v: Option<f64>| v.map(number_text).unwrap_or_default();
        MeasurementForm {
            kind: m.kind.code().into(),
            value_c: number_text(m.value_c),
            residual_moisture_pct: opt(m.residual_moisture_pct),
            method: m.method.code().into(),
            heating_rate_c_min: opt(m.heating_rate_c_min),
            sample_mass_mg: opt(m.sample_mass_mg),
            pan: m.pan.clone(),
            instrument: m.instrument.clone(),
            analyst: m.analyst.clone(),
            measured_on: format_date(m.measured_on),
            replicate: m.replicate.to_string(),
            notes: m.notes.clone(),
            review_state: m.review_state.code().into(),
            reason: String::new(),
            version: m.version.to_string(),
        }
    }

    /// Parses the form; `today` bounds the measurement date.
    pub fn parse(&self, today: Date) -> Result<MeasurementDraft, FieldErrors> {
        let mut e = FieldErrors::default();
        let kind = parse_choice(
            &mut e,
            "kind",
            &self.kind,
            MeasurementKind::parse,
            MeasurementKind::codes,
        );
        let value = required_number(&mut e, "value_c", &self.value_c);
        // Frozen-state events lie between about −120 °C and the melting of ice; a dried
        // cake's Tg may lie well above room temperature.
        let (lo, hi) = match kind {
            Some(MeasurementKind::CakeTg) => (-120.0, 250.0),
            _ => (-120.0, 10.0),
        };
        check_range(&mut e, "value_c", value, lo, hi, "°C");
        let moisture =
            optional_number(&mut e, "residual_moisture_pct", &self.residual_moisture_pct);
        check_range(&mut e, "residual_moisture_pct", moisture, 0.0, 100.0, "%");
        match kind {
            Some(MeasurementKind::CakeTg)
                if moisture.is_none() && !e.has("residual_moisture_pct") =>
            {
                e.add(
                    "residual_moisture_pct",
                    "a dried-cake Tg needs the residual moisture it was measured at",
                );
            }
            Some(k) if k != MeasurementKind::CakeTg && moisture.is_some() => {
                e.add(
                    "residual_moisture_pct",
                    "only a dried-cake Tg carries a residual moisture",
                );
            }
            _ => {}
        }
        let method = parse_choice(
            &mut e,
            "method",
            &self.method,
            MeasurementMethod::parse,
            MeasurementMethod::codes,
        );
        let rate = optional_number(&mut e, "heating_rate_c_min", &self.heating_rate_c_min);
        check_positive(&mut e, "heating_rate_c_min", rate, 100.0, "°C/min");
        let mass = optional_number(&mut e, "sample_mass_mg", &self.sample_mass_mg);
        check_positive(&mut e, "sample_mass_mg", mass, 5000.0, "mg");
        let pan = optional_text(&mut e, "pan", &self.pan, limits::NAME_CHARS);
        let instrument = optional_text(&mut e, "instrument", &self.instrument, limits::NAME_CHARS);
        let analyst = required_text(&mut e, "analyst", &self.analyst, limits::NAME_CHARS);
        let date = parse_date(&mut e, "measured_on", &self.measured_on);
        if let Some(d) = date {
            if d > today {
                e.add("measured_on", "lies in the future");
            }
        }
        let replicate = if self.replicate.trim().is_empty() {
            Some(1)
        } else {
            match self.replicate.trim().parse::<i64>() {
                Ok(r) if (1..=99).contains(&r) => Some(r),
                _ => {
                    e.add("replicate", "must be a whole number from 1 to 99");
                    None
                }
            }
        };
        let notes = notes_text(&mut e, "notes", &self.notes);
        let review_state = if self.review_state.trim().is_empty() {
            Some(ReviewState::Recorded)
        } else {
            parse_choice(
                &mut e,
                "review_state",
                &self.review_state,
                ReviewState::parse,
                ReviewState::codes,
            )
        };
        e.into_result(MeasurementDraft {
            kind: kind.unwrap_or(MeasurementKind::TgPrime),
            value_c: value.unwrap_or_default(),
            residual_moisture_pct: moisture,
            method: method.unwrap_or(MeasurementMethod::Dsc),
            heating_rate_c_min: rate,
            sample_mass_mg: mass,
            pan,
            instrument,
            analyst,
            measured_on: date.unwrap_or(today),
            replicate: replicate.unwrap_or(1),
            notes,
            review_state: review_state.unwrap_or(ReviewState::Recorded),
        })
    }
}

/// Replicates of one result, summarised: same kind, same method and, for a dried-cake
/// Tg, the same residual moisture (values at other moistures are other results).
#[derive(Debug, Clone, serde::Serialize, ToSchema)]
pub struct ReplicateSummary {
    pub kind: MeasurementKind,
    pub method: MeasurementMethod,
    pub residual_moisture_pct: Option<f64>,
    pub n: usize,
    pub mean_c: f64,
    /// Sample standard deviation (n − 1); absent for a single value.
    pub sd_c: Option<f64>,
    pub min_c: f64,
    pub max_c: f64,
}

impl ReplicateSummary {
    /// "Tg′ · DSC", "Dried-cake Tg · DSC · 1.0 % moisture".
    pub fn label(&self) -> String {
        match self.residual_moisture_pct {
            Some(w) => format!(
                "{} · {} · {w:.1} % moisture",
                self.kind.label(),
                self.method.label()
            ),
            None => format!("{} · {}", self.kind.label(), self.method.label()),
        }
    }
}

/// Summaries in the order of `MeasurementKind::ALL`, then method, then moisture.
pub fn summarise(measurements: &[Measurement]) -> Vec<ReplicateSummary> {
    let mut keys: Vec<(MeasurementKind, MeasurementMethod, Option<i64>)> = Vec::new();
    for m in measurements {
        let key = (m.kind, m.method, moisture_key(m));
        if !keys.contains(&key) {
            keys.push(key);
        }
    }
    let order = |k: &MeasurementKind| MeasurementKind::ALL.iter().position(|x| x == k);
    let method_order = |k: &MeasurementMethod| MeasurementMethod::ALL.iter().position(|x| x == k);
    keys.sort_by_key(|(k, m, w)| (order(k), method_order(m), *w));
    keys.into_iter()
        .filter_map(|(kind, method, w)| {
            let values: Vec<f64> = measurements
                .iter()
                .filter(|m| m.kind == kind && m.method == method && moisture_key(m) == w)
                .map(|m| m.value_c)
                .collect();
            summary_of(kind, method, w.map(|w| w as f64 / 100.0), &values)
        })
        .collect()
}

/// Residual moisture to 0.01 %, so that equal moistures group together.
fn moisture_key(m: &Measurement) -> Option<i64> {
    m.residual_moisture_pct.map(|w| (w * 100.0).round() as i64)
}

/// The mean of every value of `kind` (all methods), when there is one.
pub fn mean_of(measurements: &[Measurement], kind: MeasurementKind) -> Option<f64> {
    let values: Vec<f64> = measurements
        .iter()
        .filter(|m| m.kind == kind)
        .map(|m| m.value_c)
        .collect();
    (!values.is_empty()).then(|| values.iter().sum::<f64>() / values.len() as f64)
}

fn summary_of(
    kind: MeasurementKind,
    method: MeasurementMethod,
    residual_moisture_pct: Option<f64>,
    values: &[f64],
) -> Option<ReplicateSummary> {
    if values.is_empty() {
        return None;
    }
    let n = values.len();
    let mean = values.iter().sum::<f64>() / n as f64;
    let sd = (n > 1)
        .then(|| (values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1) as f64).sqrt());
    Some(ReplicateSummary {
        kind,
        method,
        residual_moisture_pct,
        n,
        mean_c: mean,
        sd_c: sd,
        min_c: values.iter().copied().fold(f64::INFINITY, f64::min),
        max_c: values.iter().copied().fold(f64::NEG_INFINITY, f64::max),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn form(pairs: &[(&str, &str)]) -> FormulationForm {
        let owned: Vec<(String, String)> = pairs
            .iter()
            .map(|(k, v)| (k.to_string(), v.to_string()))
            .collect();
        FormulationForm::from_pairs(&owned)
    }

    #[test]
    fn a_negative_concentration_is_refused_on_its_row() {
        let f = form(&[
            ("code", "A-1"),
            ("name", "x"),
            ("c0_material", "1"),
            ("c0_concentration", "-5"),
        ]);
        let err = f.parse().unwrap_err();
        assert_eq!(
            err.get("c0_concentration"),
            Some("must be greater than zero")
        );
    }

    #[test]
    fn percent_weight_by_volume_is_ten_milligrams_per_millilitre() {
        assert!((ConcentrationUnit::PercentWv.to_mg_ml(5.0) - 50.0).abs() < 1e-12);
    }

    #[test]
    fn a_code_with_spaces_is_refused() {
        let f = form(&[("code", "A 1"), ("name", "x")]);
        assert!(f.parse().unwrap_err().has("code"));
    }

    #[test]
    fn replicate_summary_uses_the_sample_standard_deviation() {
        let sd = summary_of(
            MeasurementKind::TgPrime,
            MeasurementMethod::Dsc,
            None,
            &[-33.0, -32.0, -31.0],
        )
        .unwrap()
        .sd_c
        .unwrap();
        assert!((sd - 1.0).abs() < 1e-12);
    }

    #[test]
    fn a_malformed_date_is_refused() {
        let f = MeasurementForm {
            kind: "tg_prime".into(),
            value_c: "-32".into(),
            method: "dsc".into(),
            analyst: "A".into(),
            measured_on: "14/09/2026".into(),
            ..Default::default()
        };
        let today = time::macros::date!(2026 - 12 - 01);
        assert!(f.parse(today).unwrap_err().has("measured_on"));
    }
}
