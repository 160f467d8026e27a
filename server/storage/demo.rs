//! The demo scenario (`seed-demo/demo.json`): an invented company's formulations and
//! results. Loading is idempotent: records already present (by name or code) are left alone.

use serde::Deserialize;

use super::library::LibraryMaterial;
use super::Store;
use super::{NewUser, SignRequest};
use crate::auth::secrets::{hash_password, random_hex};
use crate::auth::Actor;
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
    #[serde(default)]
    dryer: Option<String>,
    #[serde(default)]
    vial_count: Option<i64>,
    #[serde(default)]
    edge_vial_share: Option<f64>,
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
    /// Demo accounts created by this run, with their one-time passwords.
    pub new_users: Vec<(String, Role, String)>,
    /// Demo accounts that existed already (their passwords are not known any more).
    pub existing_users: Vec<String>,
    pub materials: usize,
    pub formulations: usize,
    pub measurements: usize,
    pub cycles: usize,
}

/// The demo team: invented people of the invented company.
const DEMO_USERS: [(&str, &str, Role); 3] = [
    ("mhollis", "Maren Hollis", Role::Scientist),
    ("tokafor", "Tobias Okafor", Role::Reviewer),
    ("iravel", "Ines Ravel", Role::Admin),
];

fn bad_demo(msg: String) -> AppError {
    AppError::Internal(format!("seed-demo/demo.json: {msg}"))
}

impl Store {
    /// The demo's scientist, reviewer and administrator, created with fresh random
    /// passwords when missing (the passwords are reported once and stored only hashed).
    async fn demo_users(&self, report: &mut DemoReport) -> Result<[Actor; 3], AppError> {
        let installer = Actor::system();
        let mut actors = Vec::new();
        for (username, full_name, role) in DEMO_USERS {
            let user = match self.user_by_name(username).await? {
                Some((user, _)) => {
                    report.existing_users.push(username.to_string());
                    user
                }
                None => {
                    let password = random_hex(8);
                    let id = self
                        .create_user(
                            &installer,
                            &NewUser {
                                username,
                                full_name,
                                role,
                                password_hash: &hash_password(&password)?,
                            },
                        )
                        .await?;
                    report
                        .new_users
                        .push((username.to_string(), role, password));
                    self.get_user(id).await?
                }
            };
            actors.push(user.actor(true));
        }
        actors
            .try_into()
            .map_err(|_| AppError::Internal("three demo users".into()))
    }

    /// Loads the demo scenario; running it again adds nothing.
    pub async fn seed_demo(&self) -> Result<DemoReport, AppError> {
        let demo: Demo = serde_json::from_str(DEMO_JSON).map_err(|e| bad_demo(e.to_string()))?;
        let mut report = DemoReport::default();
        let [scientist, reviewer, _admin] = self.demo_users(&mut report).await?;
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
            self.insert_material(&scientist, &draft, false).await?;
            report.materials += 1;
        }
        if report.materials > 0 {
            materials = self.list_materials().await?;
        }
        let containers = self.list_containers().await?;
        let dryers = self.list_dryers().await?;
        let today = time::OffsetDateTime::now_utc().date();
        let count = demo.formulations.len();
        for (index, f) in demo.formulations.into_iter().enumerate() {
            if self.formulation_id_by_code(&f.code).await?.is_some() {
                continue;
            }
            // The newest two formulations' results still wait for review, as in a real lab.
            let reviewed = index + 2 < count;
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
                status: if f.status == FormulationStatus::Approved {
                    FormulationStatus::Characterized
                } else {
                    f.status
                },
                ph: f.ph,
                fill_volume_ml: f.fill_volume_ml,
                container_id,
                notes: f.notes,
                tags: f.tags,
                components,
            };
            let id = self.create_formulation(&scientist, &draft).await?;
            report.formulations += 1;
            if f.limit_basis.as_deref() == Some("crystalline") {
                self.set_limit_basis(&scientist, id, true).await?;
            }
            let mut first_measurement = None;
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
                    review_state: String::new(),
                    version: String::new(),
                    reason: String::new(),
                };
                let draft = form
                    .parse(today)
                    .map_err(|e| bad_demo(format!("{}: {:?}", f.code, e.first())))?;
                let mid = self.create_measurement(&scientist, id, &draft).await?;
                first_measurement.get_or_insert((mid, draft));
                report.measurements += 1;
                if reviewed {
                    self.sign(
                        &reviewer,
                        &SignRequest {
                            entity: Entity::Measurement,
                            id: mid,
                            version: 1,
                            meaning: SignatureMeaning::Reviewed,
                            reason: "",
                        },
                    )
                    .await?;
                }
            }
            if f.status == FormulationStatus::Approved {
                let version = self.get_formulation(id).await?.version;
                self.sign(
                    &reviewer,
                    &SignRequest {
                        entity: Entity::Formulation,
                        id,
                        version,
                        meaning: SignatureMeaning::Approved,
                        reason: "",
                    },
                )
                .await?;
            }
            // The first formulation's first result was corrected after review: a new version
            // with its reason; the signature stays with the version it signed.
            if index == 0 {
                if let Some((mid, mut draft)) = first_measurement {
                    draft.notes = format!(
                        "{} Baseline re-integrated after the instrument's calibration check; value unchanged.",
                        draft.notes
                    )
                    .trim()
                    .to_string();
                    let version = self.get_measurement(mid).await?.version;
                    self.update_measurement(
                        &scientist,
                        mid,
                        version,
                        &draft,
                        "Baseline re-integrated after the calibration check",
                    )
                    .await?;
                }
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
                .create_cycle(
                    &scientist,
                    &CycleDraft {
                        name: c.name.clone(),
                        notes: c.notes,
                        program,
                        sublimation_ceiling_kg_h_m2: c.sublimation_ceiling_kg_h_m2,
                    },
                )
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
                let dryer_id = match &l.dryer {
                    None => None,
                    Some(name) => Some(
                        dryers
                            .iter()
                            .find(|d| d.name.eq_ignore_ascii_case(name))
                            .map(|d| d.id)
                            .ok_or_else(|| {
                                bad_demo(format!("cycle {}: unknown dryer {name}", c.name))
                            })?,
                    ),
                };
                self.create_link(
                    &scientist,
                    id,
                    &LinkDraft {
                        formulation_id,
                        container_id,
                        fill_volume_ml: l.fill_volume_ml,
                        dryer_id,
                        vial_count: l.vial_count,
                        edge_vial_share: l.edge_vial_share,
                    },
                )
                .await?;
            }
        }
        Ok(report)
    }
}
