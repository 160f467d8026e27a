//! The materials library and typical vials that ship with Glasspoint, installed once, on
//! the first migration of a database.

use serde::Deserialize;

use super::{on_pool, Store};
use crate::domain::*;
use crate::error::AppError;

const LIBRARY_JSON: &str = include_str!("library.json");
const VIALS_JSON: &str = include_str!("vials.json");
const MARKER: &str = "library_installed";

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

/// The shipped library, parsed (it is compiled in; a test checks that it parses).
pub fn shipped_materials() -> Result<Vec<LibraryMaterial>, AppError> {
    serde_json::from_str(LIBRARY_JSON)
        .map_err(|e| AppError::Internal(format!("shipped library.json is invalid: {e}")))
}

pub(super) async fn install_if_missing(store: &Store) -> Result<(), AppError> {
    let installer = crate::auth::Actor::system();
    let done: Option<(String,)> = on_pool!(store, pool => {
        sqlx::query_as("SELECT value FROM app_meta WHERE key = $1")
            .bind(MARKER)
            .fetch_optional(pool)
            .await?
    });
    if done.is_some() {
        return Ok(());
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
    on_pool!(store, pool => {
        sqlx::query("INSERT INTO app_meta (key, value) VALUES ($1, $2)")
            .bind(MARKER)
            .bind("1")
            .execute(pool)
            .await?;
    });
    Ok(())
}
