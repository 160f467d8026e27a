//! Container (vial) queries.

use sqlx::FromRow;

use super::write::{on_tx, Target};
use super::{decode, now, on_constraint, on_pool, Store};
use crate::auth::Actor;
use crate::domain::*;
use crate::error::AppError;

#[derive(FromRow)]
struct ContainerRow {
    id: i64,
    name: String,
    kind: String,
    nominal_ml: f64,
    inner_area_cm2: f64,
    outer_area_cm2: f64,
    kc_cal_s_cm2_k: f64,
    kp_cal_s_cm2_k_torr: f64,
    kd_per_torr: f64,
    kv_source: String,
    typical_values: bool,
    notes: String,
    version: i64,
}

const SELECT: &str =
    "SELECT id, name, kind, nominal_ml, inner_area_cm2, outer_area_cm2, kc_cal_s_cm2_k, \
     kp_cal_s_cm2_k_torr, kd_per_torr, kv_source, typical_values, notes, version FROM containers";

fn to_container(r: ContainerRow) -> Result<Container, AppError> {
    Ok(Container {
        id: r.id,
        kind: decode(ContainerKind::parse(&r.kind), "container kind", &r.kind)?,
        name: r.name,
        nominal_ml: r.nominal_ml,
        inner_area_cm2: r.inner_area_cm2,
        outer_area_cm2: r.outer_area_cm2,
        kc_cal_s_cm2_k: r.kc_cal_s_cm2_k,
        kp_cal_s_cm2_k_torr: r.kp_cal_s_cm2_k_torr,
        kd_per_torr: r.kd_per_torr,
        kv_source: r.kv_source,
        typical_values: r.typical_values,
        notes: r.notes,
        version: r.version,
    })
}

const DUPLICATE: &str = "a container with this name already exists";

impl Store {
    pub async fn list_containers(&self) -> Result<Vec<Container>, AppError> {
        let rows: Vec<ContainerRow> = on_pool!(self, pool => {
            sqlx::query_as(&format!("{SELECT} ORDER BY nominal_ml, lower(name)"))
                .fetch_all(pool)
                .await?
        });
        rows.into_iter().map(to_container).collect()
    }

    pub async fn get_container(&self, id: i64) -> Result<Container, AppError> {
        let row: Option<ContainerRow> = on_pool!(self, pool => {
            sqlx::query_as(&format!("{SELECT} WHERE id = $1"))
                .bind(id)
                .fetch_optional(pool)
                .await?
        });
        to_container(row.ok_or_else(|| AppError::NotFound(format!("Container {id}")))?)
    }

    pub async fn create_container(
        &self,
        actor: &Actor,
        d: &ContainerDraft,
    ) -> Result<i64, AppError> {
        let at = now();
        let mut w = self
            .begin_write(actor, Target::create(Entity::Container), "")
            .await?;
        let id = on_tx!(&mut w.tx, c => {
            let (id,): (i64,) = sqlx::query_as(
                "INSERT INTO containers (name, kind, nominal_ml, inner_area_cm2, outer_area_cm2, kc_cal_s_cm2_k, \
                 kp_cal_s_cm2_k_torr, kd_per_torr, kv_source, typical_values, notes, version, created_at, updated_at) \
                 VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, 1, $12, $12) RETURNING id",
            )
            .bind(&d.name)
            .bind(d.kind.code())
            .bind(d.nominal_ml)
            .bind(d.inner_area_cm2)
            .bind(d.outer_area_cm2)
            .bind(d.kc_cal_s_cm2_k)
            .bind(d.kp_cal_s_cm2_k_torr)
            .bind(d.kd_per_torr)
            .bind(&d.kv_source)
            .bind(d.typical_values)
            .bind(&d.notes)
            .bind(at)
            .fetch_one(&mut **c)
            .await
            .map_err(|e| on_constraint(e, "name", DUPLICATE))?;
            id
        });
        w.finish(id).await?;
        Ok(id)
    }

    pub async fn update_container(
        &self,
        actor: &Actor,
        id: i64,
        version: i64,
        d: &ContainerDraft,
    ) -> Result<(), AppError> {
        let mut w = self
            .begin_write(
                actor,
                Target::update(Entity::Container, id, Some(version)),
                "",
            )
            .await?;
        on_tx!(&mut w.tx, c => {
            sqlx::query(
                "UPDATE containers SET name = $1, kind = $2, nominal_ml = $3, inner_area_cm2 = $4, outer_area_cm2 = $5, \
                 kc_cal_s_cm2_k = $6, kp_cal_s_cm2_k_torr = $7, kd_per_torr = $8, kv_source = $9, typical_values = $10, \
                 notes = $11 WHERE id = $12",
            )
            .bind(&d.name)
            .bind(d.kind.code())
            .bind(d.nominal_ml)
            .bind(d.inner_area_cm2)
            .bind(d.outer_area_cm2)
            .bind(d.kc_cal_s_cm2_k)
            .bind(d.kp_cal_s_cm2_k_torr)
            .bind(d.kd_per_torr)
            .bind(&d.kv_source)
            .bind(d.typical_values)
            .bind(&d.notes)
            .bind(id)
            .execute(&mut **c)
            .await
            .map_err(|e| on_constraint(e, "name", DUPLICATE))?;
        });
        w.finish(id).await?;
        Ok(())
    }
}
