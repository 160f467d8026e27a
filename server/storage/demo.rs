//! The demo scenario (`seed-demo/demo.json`): an invented company's formulations and
//! results. Loading is idempotent: records already present (by name or code) are left alone.

use serde::Deserialize;

use super::library::LibraryMaterial;
use super::Store;
use crate::domain::*;
use crate::error::AppError;

const DEMO_JSON: &str = include_str!("../../seed-demo/demo.json");

#[derive(Deserialize)]
struct Demo {
    #[serde(default)]
    materials: Vec<LibraryMaterial>,
    formulations: Vec<DemoFormulation>,
    #[serde(default)]
    cycles: Vec<DemoCycle>,
}

#[derive(Deserialize)]
struct DemoCycle {
    name: String,
    #[serde(default)]
    notes: String,
    freezing: glasspoint_science::verdict::FreezingStep,
    annealing: Option<glasspoint_science::verdict::AnnealingStep>,
    primary: glasspoint_science::verdict::PrimaryStep,
    secondary: glasspoint_science::verdict::SecondaryStep,
    condenser_temp_c: Option<f64>,
    sublimation_ceiling_kg_h_m2: Option<f64>,
    links: Vec<DemoLink>,
}

#[derive(Deserialize)]
struct DemoLink {
    formulation: String,
    container: String,
    fill_volume_ml: f64,
}

#[derive(Deserialize)]
struct DemoFormulation {
    code: String,
    name: String,
    project: String,
    status: FormulationStatus,
    ph: Option<f64>,
    fill_volume_ml: Option<f64>,
    container: Option<String>,
    #[serde(default)]
    notes: String,
    #[serde(default)]
    tags: Vec<String>,
    components: Vec<DemoComponent>,
    measurements: Vec<DemoMeasurement>,
    /// "crystalline" when the team checks cycles against the Te-governed limit.
    #[serde(default)]
    limit_basis: Option<String>,
}

#[derive(Deserialize)]
struct DemoComponent {
    material: String,
    concentration: f64,
    unit: ConcentrationUnit,
}

#[derive(Deserialize)]
struct DemoMeasurement {
    kind: MeasurementKind,
    value_c: f64,
    method: MeasurementMethod,
    heating_rate_c_min: Option<f64>,
    sample_mass_mg: Option<f64>,
    #[serde(default)]
    pan: String,
    #[serde(default)]
    instrument: String,
    analyst: String,
    measured_on: String,
    replicate: i64,
    residual_moisture_pct: Option<f64>,
    #[serde(default)]
    notes: String,
}

/// What a demo load added.
#[derive(Debug, Default, PartialEq, Eq)]
pub struct DemoReport {
    pub materials: usize,
    pub formulations: usize,
    pub measurements: usize,
    pub cycles: usize,
}

fn bad_demo(msg: String) -> AppError {
    AppError::Internal(format!("seed-demo/demo.json: {msg}"))
}

impl Store {
    /// Loads the demo scenario; running it again adds nothing.
    pub async fn seed_demo(&self) -> Result<DemoReport, AppError> {
        let demo: Demo = serde_json::from_str(DEMO_JSON).map_err(|e| bad_demo(e.to_string()))?;
        let mut report = DemoReport::default();
        let mut materials = self.list_materials().await?;
        for m in demo.materials {
            if materials
                .iter()
                .any(|x| x.name.eq_ignore_ascii_case(&m.name))
            {
                continue;
            }
            let draft = MaterialDraft {
                name: m.name,
                role: m.role,
                freezing_behaviour: m.freezing_behaviour,
                notes: m.notes,
                properties: Vec::new(),
            };
            self.insert_material(&draft, false).await?;
            report.materials += 1;
        }
        if report.materials > 0 {
            materials = self.list_materials().await?;
        }
        let containers = self.list_containers().await?;
        let today = time::OffsetDateTime::now_utc().date();
        for f in demo.formulations {
            if self.formulation_id_by_code(&f.code).await?.is_some() {
                continue;
            }
            let components = f
                .components
                .iter()
                .map(|c| {
                    let m = materials
                        .iter()
                        .find(|m| m.name.eq_ignore_ascii_case(&c.material))
                        .ok_or_else(|| {
                            bad_demo(format!("{}: unknown material {}", f.code, c.material))
                        })?;
                    Ok(ComponentDraft {
                        material_id: m.id,
                        concentration: c.concentration,
                        unit: c.unit,
                    })
                })
                .collect::<Result<Vec<_>, AppError>>()?;
            let container_id = f
                .container
                .as_ref()
                .and_then(|name| {
                    containers
                        .iter()
                        .find(|c| c.name.eq_ignore_ascii_case(name))
                })
                .map(|c| c.id);
            let draft = FormulationDraft {
                code: f.code.clone(),
                name: f.name,
                project: f.project,
                status: f.status,
                ph: f.ph,
                fill_volume_ml: f.fill_volume_ml,
                container_id,
                notes: f.notes,
                tags: f.tags,
                components,
            };
            let id = self.create_formulation(&draft).await?;
            report.formulations += 1;
            if f.limit_basis.as_deref() == Some("crystalline") {
                self.set_limit_basis(id, true).await?;
            }
            for m in f.measurements {
                // Demo rows go through the same checks as typed ones.
                let form = MeasurementForm {
                    kind: m.kind.code().into(),
                    value_c: m.value_c.to_string(),
                    residual_moisture_pct: m
                        .residual_moisture_pct
                        .map(|v| v.to_string())
                        .unwrap_or_default(),
                    method: m.method.code().into(),
                    heating_rate_c_min: m
                        .heating_rate_c_min
                        .map(|v| v.to_string())
                        .unwrap_or_default(),
                    sample_mass_mg: m.sample_mass_mg.map(|v| v.to_string()).unwrap_or_default(),
                    pan: m.pan,
                    instrument: m.instrument,
                    analyst: m.analyst,
                    measured_on: m.measured_on,
                    replicate: m.replicate.to_string(),
                    notes: m.notes,
                    review_state: "reviewed".into(),
                    version: String::new(),
                };
                let draft = form
                    .parse(today)
                    .map_err(|e| bad_demo(format!("{}: {:?}", f.code, e.first())))?;
                self.create_measurement(id, &draft).await?;
                report.measurements += 1;
            }
        }
        for c in demo.cycles {
            if self.cycle_id_by_name(&c.name).await?.is_some() {
                continue;
            }
            let program = glasspoint_science::verdict::CycleProgram {
                freezing: c.freezing,
                annealing: c.annealing,
                primary: c.primary,
                secondary: c.secondary,
                condenser_temp_c: c.condenser_temp_c,
            };
            glasspoint_science::verdict::validate_cycle(&program)
                .map_err(|e| bad_demo(format!("cycle {}: {e}", c.name)))?;
            let id = self
                .create_cycle(&CycleDraft {
                    name: c.name.clone(),
                    notes: c.notes,
                    program,
                    sublimation_ceiling_kg_h_m2: c.sublimation_ceiling_kg_h_m2,
                })
                .await?;
            report.cycles += 1;
            for l in c.links {
                let formulation_id = self
                    .formulation_id_by_code(&l.formulation)
                    .await?
                    .ok_or_else(|| {
                        bad_demo(format!(
                            "cycle {}: unknown formulation {}",
                            c.name, l.formulation
                        ))
                    })?;
                let container_id = containers
                    .iter()
                    .find(|k| k.name.eq_ignore_ascii_case(&l.container))
                    .map(|k| k.id)
                    .ok_or_else(|| {
                        bad_demo(format!(
                            "cycle {}: unknown container {}",
                            c.name, l.container
                        ))
                    })?;
                self.create_link(
                    id,
                    &LinkDraft {
                        formulation_id,
                        container_id,
                        fill_volume_ml: l.fill_volume_ml,
                    },
                )
                .await?;
            }
        }
        Ok(report)
    }
}
