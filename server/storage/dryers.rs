//! Dryer queries: the dryer row and its capability points (a child table, part of the
//! record's audited content).

use sqlx::FromRow;

use super::write::{on_tx, Target};
use super::{now, on_constraint, on_pool, Store};
use crate::auth::Actor;
use crate::domain::*;
use crate::error::AppError;

#[derive(FromRow)]
struct DryerRow {
    id: i64,
    name: String,
    shelf_area_m2: f64,
    shelf_area_source: String,
    min_pressure_mtorr: Option<f64>,
    min_pressure_source: String,
    condenser_capacity_kg: Option<f64>,
    condenser_source: String,
    capability_source: String,
    edge_heat_factor: f64,
    edge_heat_source: String,
    typical_values: bool,
    notes: String,
    version: i64,
}

#[derive(FromRow)]
struct PointRow {
    dryer_id: i64,
    pressure_mtorr: f64,
    max_sublimation_kg_h: f64,
}

const SELECT: &str = "SELECT id, name, shelf_area_m2, shelf_area_source, min_pressure_mtorr, \
     min_pressure_source, condenser_capacity_kg, condenser_source, capability_source, \
     edge_heat_factor, edge_heat_source, typical_values, notes, version FROM dryers";

const SELECT_POINTS: &str =
    "SELECT dryer_id, pressure_mtorr, max_sublimation_kg_h FROM dryer_capability_points";

const DUPLICATE: &str = "a dryer with this name already exists";

fn to_dryer(r: DryerRow, points: &[PointRow]) -> Dryer {
    Dryer {
        capability: points
            .iter()
            .filter(|p| p.dryer_id == r.id)
            .map(|p| DryerPoint {
                pressure_mtorr: p.pressure_mtorr,
                max_sublimation_kg_h: p.max_sublimation_kg_h,
            })
            .collect(),
        id: r.id,
        name: r.name,
        shelf_area_m2: r.shelf_area_m2,
        shelf_area_source: r.shelf_area_source,
        min_pressure_mtorr: r.min_pressure_mtorr,
        min_pressure_source: r.min_pressure_source,
        condenser_capacity_kg: r.condenser_capacity_kg,
        condenser_source: r.condenser_source,
        capability_source: r.capability_source,
        edge_heat_factor: r.edge_heat_factor,
        edge_heat_source: r.edge_heat_source,
        typical_values: r.typical_values,
        notes: r.notes,
        version: r.version,
    }
}

/// Writes the capability points of a dryer, replacing any it had.
macro_rules! write_points {
    ($c:expr, $id:expr, $points:expr) => {{
        sqlx::query("DELETE FROM dryer_capability_points WHERE dryer_id = $1")
            .bind($id)
            .execute(&mut **$c)
            .await?;
        for (i, p) in $points.iter().enumerate() {
            sqlx::query(
                "INSERT INTO dryer_capability_points (dryer_id, position, pressure_mtorr, \
                 max_sublimation_kg_h) VALUES ($1, $2, $3, $4)",
            )
            .bind($id)
            .bind(i as i64)
            .bind(p.pressure_mtorr)
            .bind(p.max_sublimation_kg_h)
            .execute(&mut **$c)
            .await?;
        }
    }};
}

impl Store {
    pub async fn list_dryers(&self) -> Result<Vec<Dryer>, AppError> {
        let (rows, points): (Vec<DryerRow>, Vec<PointRow>) = on_pool!(self, pool => {
            let rows = sqlx::query_as(&format!("{SELECT} ORDER BY lower(name)"))
                .fetch_all(pool)
                .await?;
            let points = sqlx::query_as(&format!("{SELECT_POINTS} ORDER BY dryer_id, position"))
                .fetch_all(pool)
                .await?;
            (rows, points)
        });
        Ok(rows.into_iter().map(|r| to_dryer(r, &points)).collect())
    }

    pub async fn get_dryer(&self, id: i64) -> Result<Dryer, AppError> {
        let (row, points): (Option<DryerRow>, Vec<PointRow>) = on_pool!(self, pool => {
            let row = sqlx::query_as(&format!("{SELECT} WHERE id = $1"))
                .bind(id)
                .fetch_optional(pool)
                .await?;
            let points = sqlx::query_as(&format!("{SELECT_POINTS} WHERE dryer_id = $1 ORDER BY position"))
                .bind(id)
                .fetch_all(pool)
                .await?;
            (row, points)
        });
        let row = row.ok_or_else(|| AppError::NotFound(format!("Dryer {id}")))?;
        Ok(to_dryer(row, &points))
    }

    pub async fn create_dryer(&self, actor: &Actor, d: &DryerDraft) -> Result<i64, AppError> {
        let at = now();
        let mut w = self
            .begin_write(actor, Target::create(Entity::Dryer), "")
            .await?;
        let id = on_tx!(&mut w.tx, c => {
            let (id,): (i64,) = sqlx::query_as(
                "INSERT INTO dryers (name, shelf_area_m2, shelf_area_source, min_pressure_mtorr, \
                 min_pressure_source, condenser_capacity_kg, condenser_source, capability_source, \
                 edge_heat_factor, edge_heat_source, typical_values, notes, version, created_at, \
                 updated_at) VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, 1, $13, $13) \
                 RETURNING id",
            )
            .bind(&d.name)
            .bind(d.shelf_area_m2)
            .bind(&d.shelf_area_source)
            .bind(d.min_pressure_mtorr)
            .bind(&d.min_pressure_source)
            .bind(d.condenser_capacity_kg)
            .bind(&d.condenser_source)
            .bind(&d.capability_source)
            .bind(d.edge_heat_factor)
            .bind(&d.edge_heat_source)
            .bind(d.typical_values)
            .bind(&d.notes)
            .bind(at)
            .fetch_one(&mut **c)
            .await
            .map_err(|e| on_constraint(e, "name", DUPLICATE))?;
            write_points!(c, id, d.capability);
            id
        });
        w.finish(id).await?;
        Ok(id)
    }

    pub async fn update_dryer(
        &self,
        actor: &Actor,
        id: i64,
        version: i64,
        d: &DryerDraft,
    ) -> Result<(), AppError> {
        let mut w = self
            .begin_write(actor, Target::update(Entity::Dryer, id, Some(version)), "")
            .await?;
        on_tx!(&mut w.tx, c => {
            sqlx::query(
                "UPDATE dryers SET name = $1, shelf_area_m2 = $2, shelf_area_source = $3, \
                 min_pressure_mtorr = $4, min_pressure_source = $5, condenser_capacity_kg = $6, \
                 condenser_source = $7, capability_source = $8, edge_heat_factor = $9, \
                 edge_heat_source = $10, typical_values = $11, notes = $12 WHERE id = $13",
            )
            .bind(&d.name)
            .bind(d.shelf_area_m2)
            .bind(&d.shelf_area_source)
            .bind(d.min_pressure_mtorr)
            .bind(&d.min_pressure_source)
            .bind(d.condenser_capacity_kg)
            .bind(&d.condenser_source)
            .bind(&d.capability_source)
            .bind(d.edge_heat_factor)
            .bind(&d.edge_heat_source)
            .bind(d.typical_values)
            .bind(&d.notes)
            .bind(id)
            .execute(&mut **c)
            .await
            .map_err(|e| on_constraint(e, "name", DUPLICATE))?;
            write_points!(c, id, d.capability);
        });
        w.finish(id).await?;
        Ok(())
    }
}
