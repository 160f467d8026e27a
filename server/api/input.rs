//! JSON request bodies. Each becomes the same form the pages parse, so one set of checks
//! serves both; field names in errors are translated back to the JSON spelling.

use serde::Deserialize;
use utoipa::ToSchema;

use crate::domain::*;

fn num(v: Option<f64>) -> String {
    v.map(number_text).unwrap_or_default()
}

#[derive(Debug, Deserialize, ToSchema)]
pub struct ComponentInput {
    pub material_id: i64,
    pub concentration: f64,
    /// "mg/mL" or "% w/v"
    pub unit: String,
}

#[derive(Debug, Deserialize, ToSchema)]
pub struct FormulationInput {
    pub code: String,
    pub name: String,
    #[serde(default)]
    pub project: String,
    /// draft | characterized | approved | archived (default draft)
    #[serde(default)]
    pub status: Option<String>,
    pub ph: Option<f64>,
    pub fill_volume_ml: Option<f64>,
    pub container_id: Option<i64>,
    #[serde(default)]
    pub notes: String,
    #[serde(default)]
    pub tags: Vec<String>,
    #[serde(default)]
    pub components: Vec<ComponentInput>,
    /// Required on update: the version you read (optimistic locking).
    pub version: Option<i64>,
    /// Why the record is changed: required when it is reviewed or approved.
    #[serde(default)]
    pub reason: String,
}

impl FormulationInput {
    pub fn to_form(&self) -> FormulationForm {
        FormulationForm {
            code: self.code.clone(),
            name: self.name.clone(),
            project: self.project.clone(),
            status: self.status.clone().unwrap_or_default(),
            ph: num(self.ph),
            fill_volume_ml: num(self.fill_volume_ml),
            container_id: self.container_id.map(|v| v.to_string()).unwrap_or_default(),
            notes: self.notes.clone(),
            tags: self.tags.join(","),
            reason: self.reason.clone(),
            version: self.version.map(|v| v.to_string()).unwrap_or_default(),
            components: self
                .components
                .iter()
                .map(|c| ComponentRow {
                    material_id: c.material_id.to_string(),
                    concentration: c.concentration.to_string(),
                    unit: c.unit.clone(),
                })
                .collect(),
        }
    }
}

/// `c3_material` → `components[3].material_id`, and so on.
pub fn formulation_field(field: &str) -> String {
    if let Some(rest) = field.strip_prefix('c') {
        if let Some((index, part)) = rest.split_once('_') {
            if index.chars().all(|c| c.is_ascii_digit()) && !index.is_empty() {
                let part = match part {
                    "material" => "material_id",
                    other => other,
                };
                return format!("components[{index}].{part}");
            }
        }
    }
    field.to_string()
}

#[derive(Debug, Deserialize, ToSchema)]
pub struct PropertyInput {
    /// tg_prime_c | tg_c | te_c | delta_cp_j_gk | gt_k_water | density_g_cm3 | molar_mass_g_mol
    pub kind: String,
    pub value: f64,
    /// onset | midpoint (glass transitions only)
    pub convention: Option<String>,
    /// literature | in_house (default literature)
    pub source_kind: Option<String>,
    pub citation: String,
    /// For in-house values: the measurements the value came from.
    #[serde(default)]
    pub measurement_ids: Vec<i64>,
}

#[derive(Debug, Deserialize, ToSchema)]
pub struct MaterialInput {
    pub name: String,
    /// bulking_agent | lyoprotectant | buffer | tonicity_agent | surfactant | active | other
    pub role: String,
    /// amorphous | crystallizes | may_crystallize
    pub freezing_behaviour: String,
    #[serde(default)]
    pub notes: String,
    #[serde(default)]
    pub properties: Vec<PropertyInput>,
    pub version: Option<i64>,
}

impl MaterialInput {
    /// The form, or the error naming the first property of unknown kind or given twice.
    pub fn to_form(&self) -> Result<MaterialForm, FieldError> {
        let mut form = MaterialForm::from_pairs(&[]);
        form.name = self.name.clone();
        form.role = self.role.clone();
        form.freezing_behaviour = self.freezing_behaviour.clone();
        form.notes = self.notes.clone();
        form.version = self.version.map(|v| v.to_string()).unwrap_or_default();
        for (i, p) in self.properties.iter().enumerate() {
            let kind = PropertyKind::parse(&p.kind).ok_or_else(|| {
                FieldError::new(
                    format!("properties[{i}].kind"),
                    format!("“{}” is not one of: {}", p.kind, PropertyKind::codes()),
                )
            })?;
            let slot = form
                .properties
                .iter_mut()
                .find(|(k, _)| *k == kind)
                .map(|(_, slot)| slot)
                .ok_or_else(|| FieldError::new(format!("properties[{i}].kind"), "unknown kind"))?;
            if !slot.value.is_empty() {
                return Err(FieldError::new(
                    format!("properties[{i}].kind"),
                    "this property is given twice",
                ));
            }
            *slot = PropertyForm {
                value: p.value.to_string(),
                convention: p.convention.clone().unwrap_or_default(),
                citation: p.citation.clone(),
                source_kind: p.source_kind.clone().unwrap_or_default(),
                measurements: join_ids(&p.measurement_ids),
            };
        }
        Ok(form)
    }

    /// `tg_prime_c_citation` → `properties[i].citation`.
    pub fn field(&self, field: &str) -> String {
        for (i, p) in self.properties.iter().enumerate() {
            if let Some(part) = field.strip_prefix(&format!("{}_", p.kind)) {
                let part = match part {
                    "source" => "source_kind",
                    "measurements" => "measurement_ids",
                    other => other,
                };
                return format!("properties[{i}].{part}");
            }
        }
        field.to_string()
    }
}

#[derive(Debug, Deserialize, ToSchema)]
pub struct MeasurementInput {
    pub formulation_id: Option<i64>,
    /// tg_prime | te | tc_onset | tc_full | cryst_exotherm_onset | ice_melt_onset | cake_tg
    pub kind: String,
    pub value_c: f64,
    pub residual_moisture_pct: Option<f64>,
    /// dsc | mdsc | fdm | impedance | other
    pub method: String,
    pub heating_rate_c_min: Option<f64>,
    pub sample_mass_mg: Option<f64>,
    #[serde(default)]
    pub pan: String,
    #[serde(default)]
    pub instrument: String,
    pub analyst: String,
    /// YYYY-MM-DD
    pub measured_on: String,
    pub replicate: Option<i64>,
    #[serde(default)]
    pub notes: String,
    pub version: Option<i64>,
    /// Why the record is changed: required when it is reviewed.
    #[serde(default)]
    pub reason: String,
}

impl MeasurementInput {
    pub fn to_form(&self) -> MeasurementForm {
        MeasurementForm {
            kind: self.kind.clone(),
            value_c: self.value_c.to_string(),
            residual_moisture_pct: num(self.residual_moisture_pct),
            method: self.method.clone(),
            heating_rate_c_min: num(self.heating_rate_c_min),
            sample_mass_mg: num(self.sample_mass_mg),
            pan: self.pan.clone(),
            instrument: self.instrument.clone(),
            analyst: self.analyst.clone(),
            measured_on: self.measured_on.clone(),
            replicate: self.replicate.map(|v| v.to_string()).unwrap_or_default(),
            notes: self.notes.clone(),
            review_state: String::new(),
            version: self.version.map(|v| v.to_string()).unwrap_or_default(),
            reason: self.reason.clone(),
        }
    }
}

#[derive(Debug, Deserialize, ToSchema)]
pub struct ContainerInput {
    pub name: String,
    /// tubing | molded
    pub kind: String,
    pub nominal_ml: f64,
    pub inner_area_cm2: f64,
    pub outer_area_cm2: f64,
    pub kc_cal_s_cm2_k: f64,
    pub kp_cal_s_cm2_k_torr: f64,
    pub kd_per_torr: f64,
    pub kv_source: String,
    #[serde(default)]
    pub typical_values: bool,
    #[serde(default)]
    pub notes: String,
    pub version: Option<i64>,
}

impl ContainerInput {
    pub fn to_form(&self) -> ContainerForm {
        ContainerForm {
            name: self.name.clone(),
            kind: self.kind.clone(),
            nominal_ml: self.nominal_ml.to_string(),
            inner_area_cm2: self.inner_area_cm2.to_string(),
            outer_area_cm2: self.outer_area_cm2.to_string(),
            kc_cal_s_cm2_k: self.kc_cal_s_cm2_k.to_string(),
            kp_cal_s_cm2_k_torr: self.kp_cal_s_cm2_k_torr.to_string(),
            kd_per_torr: self.kd_per_torr.to_string(),
            kv_source: self.kv_source.clone(),
            typical_values: if self.typical_values {
                "on".into()
            } else {
                String::new()
            },
            notes: self.notes.clone(),
            version: self.version.map(|v| v.to_string()).unwrap_or_default(),
        }
    }
}

#[derive(Debug, Deserialize, ToSchema)]
pub struct DryerInput {
    pub name: String,
    pub shelf_area_m2: f64,
    pub shelf_area_source: String,
    /// Lowest controllable chamber pressure, mTorr.
    pub min_pressure_mtorr: Option<f64>,
    #[serde(default)]
    pub min_pressure_source: String,
    /// Ice the condenser holds, kg.
    pub condenser_capacity_kg: Option<f64>,
    #[serde(default)]
    pub condenser_source: String,
    /// Measured points, rising in pressure: chamber pressure (mTorr) → highest sustainable
    /// sublimation rate (kg/h).
    #[serde(default)]
    pub capability: Vec<DryerPoint>,
    #[serde(default)]
    pub capability_source: String,
    /// Edge vials' effective Kv over centre vials' (1 to 3; 1.0, no edge effect, when
    /// omitted).
    pub edge_heat_factor: Option<f64>,
    #[serde(default)]
    pub edge_heat_source: String,
    #[serde(default)]
    pub typical_values: bool,
    #[serde(default)]
    pub notes: String,
    /// Required on update: the version you read.
    pub version: Option<i64>,
}

impl DryerInput {
    pub fn to_form(&self) -> DryerForm {
        DryerForm {
            name: self.name.clone(),
            shelf_area_m2: number_text(self.shelf_area_m2),
            shelf_area_source: self.shelf_area_source.clone(),
            min_pressure_mtorr: num(self.min_pressure_mtorr),
            min_pressure_source: self.min_pressure_source.clone(),
            condenser_capacity_kg: num(self.condenser_capacity_kg),
            condenser_source: self.condenser_source.clone(),
            capability: capability_text(&self.capability),
            capability_source: self.capability_source.clone(),
            edge_heat_factor: num(self.edge_heat_factor),
            edge_heat_source: self.edge_heat_source.clone(),
            typical_values: if self.typical_values {
                "on".into()
            } else {
                String::new()
            },
            notes: self.notes.clone(),
            version: self.version.map(|v| v.to_string()).unwrap_or_default(),
        }
    }
}
