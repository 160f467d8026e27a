//! Derived values of a formulation (never typed): its composition as the science crate
//! reads it, estimates, limits and advice.

use serde_json::{json, Value};

use crate::domain::*;
use crate::{AppError, Store};

/// The `formulation-estimate` input for a stored formulation: its components with the
/// library's values, keeping any options (method, share of missing values) the caller gave.
pub async fn inline_composition(
    store: &Store,
    formulation_id: i64,
    options: &Value,
) -> Result<Value, AppError> {
    let f = match store.get_formulation(formulation_id).await {
        Err(AppError::NotFound(_)) => {
            return Err(AppError::input(
                "formulation_id",
                format!("no formulation has id {formulation_id}"),
            ))
        }
        other => other?,
    };
    let materials = store.list_materials().await?;
    let components: Vec<Value> = f
        .components
        .iter()
        .map(|c| {
            let m = materials.iter().find(|m| m.id == c.material_id);
            let value = |kind| m.and_then(|m| m.value(kind));
            json!({
                "name": c.material_name,
                "material_id": c.material_id,
                "concentration_mg_ml": c.concentration_mg_ml,
                "behaviour": c.freezing_behaviour.code(),
                "tg_prime_c": value(PropertyKind::TgPrime),
                "te_c": value(PropertyKind::Te),
                "k": value(PropertyKind::GordonTaylorK),
                "delta_cp_j_gk": value(PropertyKind::DeltaCp),
            })
        })
        .collect();
    let mut input = options.clone();
    if let Some(obj) = input.as_object_mut() {
        obj.remove("formulation_id");
        obj.insert("components".into(), Value::Array(components));
    }
    Ok(input)
}
