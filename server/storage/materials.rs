//! Materials library queries.

use std::collections::HashMap;

use sqlx::FromRow;

use super::{decode, now, on_constraint, on_pool, Store};
use crate::domain::*;
use crate::error::AppError;

#[derive(FromRow)]
struct MaterialRow {
    id: i64,
    name: String,
    role: String,
    freezing_behaviour: String,
    notes: String,
    from_library: bool,
    version: i64,
}

#[derive(FromRow)]
struct PropertyRow {
    material_id: i64,
    kind: String,
    value: f64,
    convention: Option<String>,
    source_kind: String,
    citation: String,
    measurement_ids: String,
}

const SELECT_MATERIAL: &str =
    "SELECT id, name, role, freezing_behaviour, notes, from_library, version FROM materials";
const SELECT_PROPERTY: &str = "SELECT material_id, kind, value, convention, source_kind, citation, measurement_ids FROM material_properties";

fn to_property(r: PropertyRow) -> Result<MaterialProperty, AppError> {
    Ok(MaterialProperty {
        kind: decode(PropertyKind::parse(&r.kind), "property kind", &r.kind)?,
        value: r.value,
        convention: r.convention,
        source_kind: decode(
            SourceKind::parse(&r.source_kind),
            "source kind",
            &r.source_kind,
        )?,
        citation: r.citation,
        measurement_ids: r
            .measurement_ids
            .split(',')
            .filter_map(|s| s.trim().parse().ok())
            .collect(),
    })
}

fn to_material(
    r: MaterialRow,
    mut properties: Vec<MaterialProperty>,
) -> Result<Material, AppError> {
    properties.sort_by_key(|p| PropertyKind::ALL.iter().position(|k| *k == p.kind));
    Ok(Material {
        id: r.id,
        role: decode(MaterialRole::parse(&r.role), "role", &r.role)?,
        freezing_behaviour: decode(
            FreezingBehaviour::parse(&r.freezing_behaviour),
            "freezing behaviour",
            &r.freezing_behaviour,
        )?,
        name: r.name,
        notes: r.notes,
        from_library: r.from_library,
        version: r.version,
        properties,
    })
}

/// Inserts one property row of material `$id` inside transaction `$tx`.
macro_rules! insert_property {
    ($tx:ident, $id:expr, $p:expr) => {
        sqlx::query(
            "INSERT INTO material_properties (material_id, kind, value, convention, source_kind, citation, measurement_ids) \
             VALUES ($1, $2, $3, $4, $5, $6, $7)",
        )
        .bind($id)
        .bind($p.kind.code())
        .bind($p.value)
        .bind(&$p.convention)
        .bind($p.source_kind.code())
        .bind(&$p.citation)
        .bind(join_ids(&$p.measurement_ids))
        .execute(&mut *$tx)
        .await?;
    };
}

impl Store {
    /// Every material, by name, with its properties.
    pub async fn list_materials(&self) -> Result<Vec<Material>, AppError> {
        let (rows, props) = on_pool!(self, pool => {
            let rows: Vec<MaterialRow> =
                sqlx::query_as(&format!("{SELECT_MATERIAL} ORDER BY lower(name)"))
                    .fetch_all(pool)
                    .await?;
            let props: Vec<PropertyRow> = sqlx::query_as(SELECT_PROPERTY).fetch_all(pool).await?;
            (rows, props)
        });
        let mut by_material: HashMap<i64, Vec<MaterialProperty>> = HashMap::new();
        for p in props {
            let id = p.material_id;
            by_material.entry(id).or_default().push(to_property(p)?);
        }
        rows.into_iter()
            .map(|r| {
                let props = by_material.remove(&r.id).unwrap_or_default();
                to_material(r, props)
            })
            .collect()
    }

    pub async fn get_material(&self, id: i64) -> Result<Material, AppError> {
        let (row, props) = on_pool!(self, pool => {
            let row: Option<MaterialRow> =
                sqlx::query_as(&format!("{SELECT_MATERIAL} WHERE id = $1"))
                    .bind(id)
                    .fetch_optional(pool)
                    .await?;
            let props: Vec<PropertyRow> =
                sqlx::query_as(&format!("{SELECT_PROPERTY} WHERE material_id = $1"))
                    .bind(id)
                    .fetch_all(pool)
                    .await?;
            (row, props)
        });
        let row = row.ok_or_else(|| AppError::NotFound(format!("Material {id}")))?;
        let props = props
            .into_iter()
            .map(to_property)
            .collect::<Result<_, _>>()?;
        to_material(row, props)
    }

    pub async fn create_material(&self, draft: &MaterialDraft) -> Result<i64, AppError> {
        self.insert_material(draft, false).await
    }

    pub(super) async fn insert_material(
        &self,
        draft: &MaterialDraft,
        from_library: bool,
    ) -> Result<i64, AppError> {
        let at = now();
        on_pool!(self, pool => {
            let mut tx = pool.begin().await?;
            let (id,): (i64,) = sqlx::query_as(
                "INSERT INTO materials (name, role, freezing_behaviour, notes, from_library, version, created_at, updated_at) \
                 VALUES ($1, $2, $3, $4, $5, 1, $6, $6) RETURNING id",
            )
            .bind(&draft.name)
            .bind(draft.role.code())
            .bind(draft.freezing_behaviour.code())
            .bind(&draft.notes)
            .bind(from_library)
            .bind(at)
            .fetch_one(&mut *tx)
            .await
            .map_err(|e| on_constraint(e, "name", "a material with this name already exists"))?;
            for p in &draft.properties {
                insert_property!(tx, id, p);
            }
            tx.commit().await?;
            Ok(id)
        })
    }

    /// Replaces a material's fields and properties, if nobody changed it since `version`.
    pub async fn update_material(
        &self,
        id: i64,
        version: i64,
        draft: &MaterialDraft,
    ) -> Result<(), AppError> {
        let at = now();
        on_pool!(self, pool => {
            let mut tx = pool.begin().await?;
            let done = sqlx::query(
                "UPDATE materials SET name = $1, role = $2, freezing_behaviour = $3, notes = $4, \
                 version = version + 1, updated_at = $5 WHERE id = $6 AND version = $7",
            )
            .bind(&draft.name)
            .bind(draft.role.code())
            .bind(draft.freezing_behaviour.code())
            .bind(&draft.notes)
            .bind(at)
            .bind(id)
            .bind(version)
            .execute(&mut *tx)
            .await
            .map_err(|e| on_constraint(e, "name", "a material with this name already exists"))?;
            if done.rows_affected() == 0 {
                tx.rollback().await?;
                return Err(stale_or_missing(self, "Material", id).await);
            }
            sqlx::query("DELETE FROM material_properties WHERE material_id = $1")
                .bind(id)
                .execute(&mut *tx)
                .await?;
            for p in &draft.properties {
                insert_property!(tx, id, p);
            }
            tx.commit().await?;
            Ok(())
        })
    }

    /// Sets one property of a material (e.g. an in-house fitted value), replacing any
    /// earlier value of that kind.
    pub async fn set_material_property(
        &self,
        material_id: i64,
        property: &PropertyDraft,
    ) -> Result<(), AppError> {
        let at = now();
        on_pool!(self, pool => {
            let mut tx = pool.begin().await?;
            let done = sqlx::query("UPDATE materials SET version = version + 1, updated_at = $1 WHERE id = $2")
                .bind(at)
                .bind(material_id)
                .execute(&mut *tx)
                .await?;
            if done.rows_affected() == 0 {
                tx.rollback().await?;
                return Err(AppError::NotFound(format!("Material {material_id}")));
            }
            sqlx::query("DELETE FROM material_properties WHERE material_id = $1 AND kind = $2")
                .bind(material_id)
                .bind(property.kind.code())
                .execute(&mut *tx)
                .await?;
            insert_property!(tx, material_id, property);
            tx.commit().await?;
            Ok(())
        })
    }
}

fn join_ids(ids: &[i64]) -> String {
    ids.iter().map(i64::to_string).collect::<Vec<_>>().join(",")
}

/// After an update touched no row: the record is gone, or someone saved first.
pub(super) async fn stale_or_missing(store: &Store, what: &str, id: i64) -> AppError {
    let table = match what {
        "Material" => "materials",
        "Container" => "containers",
        "Formulation" => "formulations",
        "Cycle" => "cycles",
        _ => "measurements",
    };
    let sql = format!("SELECT COUNT(*) FROM {table} WHERE id = $1");
    let exists: Result<(i64,), sqlx::Error> = on_pool!(store, pool => {
        sqlx::query_as(&sql).bind(id).fetch_one(pool).await
    });
    match exists {
        Ok((0,)) => AppError::NotFound(format!("{what} {id}")),
        Ok(_) => AppError::Conflict(format!(
            "{what} {id} was changed by someone else after you opened it. Reload it to see their change, then apply yours again."
        )),
        Err(e) => AppError::Database(e),
    }
}
