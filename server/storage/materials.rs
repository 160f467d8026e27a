//! Materials library queries.

use std::collections::HashMap;

use sqlx::FromRow;

use super::write::{on_tx, Target};
use super::{decode, now, on_constraint, on_pool, Store};
use crate::auth::Actor;
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
        .execute(&mut **$tx)
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

    pub async fn create_material(
        &self,
        actor: &Actor,
        draft: &MaterialDraft,
    ) -> Result<i64, AppError> {
        self.insert_material(actor, draft, false).await
    }

    pub(super) async fn insert_material(
        &self,
        actor: &Actor,
        draft: &MaterialDraft,
        from_library: bool,
    ) -> Result<i64, AppError> {
        let at = now();
        let mut w = self
            .begin_write(actor, Target::create(Entity::Material), "")
            .await?;
        let id = on_tx!(&mut w.tx, c => {
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
            .fetch_one(&mut **c)
            .await
            .map_err(|e| on_constraint(e, "name", "a material with this name already exists"))?;
            for p in &draft.properties {
                insert_property!(c, id, p);
            }
            id
        });
        w.finish(id).await?;
        Ok(id)
    }

    /// Replaces a material's fields and properties, if nobody changed it since `version`.
    pub async fn update_material(
        &self,
        actor: &Actor,
        id: i64,
        version: i64,
        draft: &MaterialDraft,
    ) -> Result<(), AppError> {
        let mut w = self
            .begin_write(
                actor,
                Target::update(Entity::Material, id, Some(version)),
                "",
            )
            .await?;
        on_tx!(&mut w.tx, c => {
            sqlx::query(
                "UPDATE materials SET name = $1, role = $2, freezing_behaviour = $3, notes = $4 WHERE id = $5",
            )
            .bind(&draft.name)
            .bind(draft.role.code())
            .bind(draft.freezing_behaviour.code())
            .bind(&draft.notes)
            .bind(id)
            .execute(&mut **c)
            .await
            .map_err(|e| on_constraint(e, "name", "a material with this name already exists"))?;
            sqlx::query("DELETE FROM material_properties WHERE material_id = $1")
                .bind(id)
                .execute(&mut **c)
                .await?;
            for p in &draft.properties {
                insert_property!(c, id, p);
            }
        });
        w.finish(id).await?;
        Ok(())
    }

    /// Sets one property of a material (e.g. an in-house fitted value), replacing any
    /// earlier value of that kind.
    pub async fn set_material_property(
        &self,
        actor: &Actor,
        material_id: i64,
        property: &PropertyDraft,
    ) -> Result<(), AppError> {
        let mut w = self
            .begin_write(
                actor,
                Target::update(Entity::Material, material_id, None),
                "",
            )
            .await?;
        on_tx!(&mut w.tx, c => {
            sqlx::query("DELETE FROM material_properties WHERE material_id = $1 AND kind = $2")
                .bind(material_id)
                .bind(property.kind.code())
                .execute(&mut **c)
                .await?;
            insert_property!(c, material_id, property);
        });
        w.finish(material_id).await?;
        Ok(())
    }
}

fn join_ids(ids: &[i64]) -> String {
    ids.iter().map(i64::to_string).collect::<Vec<_>>().join(",")
}
