//! The materials library and typical vials that ship with Glasspoint, installed once, on
//! the first migration of a database.

use serde::Deserialize;

use super::{on_pool, Store};
use crate::domain::*;
use crate::error::AppError;

const LIBRARY_JSON: &str = include_str!("library.json");
const VIALS_JSON: &str = include_str!("vials.json");
const DRYERS_JSON: &str = include_str!("dryers.json");
const MARKER: &str = "library_installed";
/// Set once the typical dryer is installed: databases made before dryers existed get it on
/// the migration that adds them.
const DRYERS_MARKER: &str = "dryers_installed";

#[derive(Deserialize)]
pub struct LibraryMaterial {
    pub name: String,
    pub role: MaterialRole,
    pub freezing_behaviour: FreezingBehaviour,
    #[serde(default)]
    pub notes: String,
    pub properties: Vec<LibraryProperty>,
}

#[derive(Deserialize)]
pub struct LibraryProperty {
    pub kind: PropertyKind,
    pub value: f64,
    pub convention: Option<String>,
    pub citation: String,
}

#[derive(Deserialize)]
struct LibraryVial {
    name: String,
    kind: ContainerKind,
    nominal_ml: f64,
    inner_area_cm2: f64,
    outer_area_cm2: f64,
    kc_cal_s_cm2_k: f64,
    kp_cal_s_cm2_k_torr: f64,
    kd_per_torr: f64,
    kv_source: String,
    notes: String,
}

#[derive(Deserialize)]
struct LibraryDryer {
    name: String,
    shelf_area_m2: f64,
    shelf_area_source: String,
    min_pressure_mtorr: Option<f64>,
    #[serde(default)]
    min_pressure_source: String,
    condenser_capacity_kg: Option<f64>,
    #[serde(default)]
    condenser_source: String,
    #[serde(default)]
    capability: Vec<DryerPoint>,
    #[serde(default)]
    capability_source: String,
    edge_heat_factor: f64,
    edge_heat_source: String,
    notes: String,
}

/// The shipped typical dryers, parsed (compiled in; a test checks that they parse).
fn shipped_dryers() -> Result<Vec<LibraryDryer>, AppError> {
    serde_json::from_str(DRYERS_JSON)
        .map_err(|e| AppError::Internal(format!("shipped dryers.json is invalid: {e}")))
}

/// Installs the typical dryer once (on the first migration that knows dryers).
async fn install_dryers_if_missing(store: &Store) -> Result<(), AppError> {
    if installed(store, DRYERS_MARKER).await? {
        return Ok(());
    }
    let installer = crate::auth::Actor::system();
    let existing: Vec<String> = store
        .list_dryers()
        .await?
        .into_iter()
        .map(|d| d.name.to_lowercase())
        .collect();
    for d in shipped_dryers()? {
        if existing.contains(&d.name.to_lowercase()) {
            continue;
        }
        store
            .create_dryer(
                &installer,
                &DryerDraft {
                    name: d.name,
                    shelf_area_m2: d.shelf_area_m2,
                    shelf_area_source: d.shelf_area_source,
                    min_pressure_mtorr: d.min_pressure_mtorr,
                    min_pressure_source: d.min_pressure_source,
                    condenser_capacity_kg: d.condenser_capacity_kg,
                    condenser_source: d.condenser_source,
                    capability: d.capability,
                    capability_source: d.capability_source,
                    edge_heat_factor: d.edge_heat_factor,
                    edge_heat_source: d.edge_heat_source,
                    typical_values: true,
                    notes: d.notes,
                },
            )
            .await?;
    }
    mark_installed(store, DRYERS_MARKER).await
}

/// Whether the shipped records behind `marker` were installed already.
async fn installed(store: &Store, marker: &str) -> Result<bool, AppError> {
    let done: Option<(String,)> = on_pool!(store, pool => {
        sqlx::query_as("SELECT value FROM app_meta WHERE key = $1")
            .bind(marker)
            .fetch_optional(pool)
            .await?
    });
    Ok(done.is_some())
}

async fn mark_installed(store: &Store, marker: &str) -> Result<(), AppError> {
    on_pool!(store, pool => {
        sqlx::query("INSERT INTO app_meta (key, value) VALUES ($1, $2)")
            .bind(marker)
            .bind("1")
            .execute(pool)
            .await?;
    });
    Ok(())
}

/// The shipped library, parsed (it is compiled in; a test checks that it parses).
pub fn shipped_materials() -> Result<Vec<LibraryMaterial>, AppError> {
    serde_json::from_str(LIBRARY_JSON)
        .map_err(|e| AppError::Internal(format!("shipped library.json is invalid: {e}")))
}

pub(super) async fn install_if_missing(store: &Store) -> Result<(), AppError> {
    let installer = crate::auth::Actor::system();
    if installed(store, MARKER).await? {
        return install_dryers_if_missing(store).await;
    }
    let existing: Vec<String> = store
        .list_materials()
        .await?
        .into_iter()
        .map(|m| m.name.to_lowercase())
        .collect();
    for m in shipped_materials()? {
        if existing.contains(&m.name.to_lowercase()) {
            continue;
        }
        let draft = MaterialDraft {
            name: m.name,
            role: m.role,
            freezing_behaviour: m.freezing_behaviour,
            notes: m.notes,
            properties: m
                .properties
                .into_iter()
                .map(|p| PropertyDraft {
                    kind: p.kind,
                    value: p.value,
                    convention: p.convention,
                    source_kind: SourceKind::Literature,
                    citation: p.citation,
                    measurement_ids: Vec::new(),
                })
                .collect(),
        };
        store.insert_material(&installer, &draft, true).await?;
    }
    let vials: Vec<LibraryVial> = serde_json::from_str(VIALS_JSON)
        .map_err(|e| AppError::Internal(format!("shipped vials.json is invalid: {e}")))?;
    let existing: Vec<String> = store
        .list_containers()
        .await?
        .into_iter()
        .map(|c| c.name.to_lowercase())
        .collect();
    for v in vials {
        if existing.contains(&v.name.to_lowercase()) {
            continue;
        }
        store
            .create_container(
                &installer,
                &ContainerDraft {
                    name: v.name,
                    kind: v.kind,
                    nominal_ml: v.nominal_ml,
                    inner_area_cm2: v.inner_area_cm2,
                    outer_area_cm2: v.outer_area_cm2,
                    kc_cal_s_cm2_k: v.kc_cal_s_cm2_k,
                    kp_cal_s_cm2_k_torr: v.kp_cal_s_cm2_k_torr,
                    kd_per_torr: v.kd_per_torr,
                    kv_source: v.kv_source,
                    typical_values: true,
                    notes: v.notes,
                },
            )
            .await?;
    }
    mark_installed(store, MARKER).await?;
    install_dryers_if_missing(store).await
}

#[cfg(test)]
mod tests {
    #[test]
    fn the_shipped_dryers_parse_and_pass_the_dryer_form_checks() {
        for d in super::shipped_dryers().unwrap() {
            let draft = crate::domain::DryerDraft {
                name: d.name,
                shelf_area_m2: d.shelf_area_m2,
                shelf_area_source: d.shelf_area_source,
                min_pressure_mtorr: d.min_pressure_mtorr,
                min_pressure_source: d.min_pressure_source,
                condenser_capacity_kg: d.condenser_capacity_kg,
                condenser_source: d.condenser_source,
                capability: d.capability,
                capability_source: d.capability_source,
                edge_heat_factor: d.edge_heat_factor,
                edge_heat_source: d.edge_heat_source,
                typical_values: true,
                notes: d.notes,
            };
            let dryer = crate::domain::Dryer {
                id: 1,
                name: draft.name.clone(),
                shelf_area_m2: draft.shelf_area_m2,
                shelf_area_source: draft.shelf_area_source.clone(),
                min_pressure_mtorr: draft.min_pressure_mtorr,
                min_pressure_source: draft.min_pressure_source.clone(),
                condenser_capacity_kg: draft.condenser_capacity_kg,
                condenser_source: draft.condenser_source.clone(),
                capability: draft.capability.clone(),
                capability_source: draft.capability_source.clone(),
                edge_heat_factor: draft.edge_heat_factor,
                edge_heat_source: draft.edge_heat_source.clone(),
                typical_values: true,
                notes: draft.notes.clone(),
                version: 1,
            };
            let form = crate::domain::DryerForm::from_dryer(&dryer);
            assert_eq!(form.parse().unwrap(), draft);
        }
    }
}
