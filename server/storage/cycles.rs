//! Cycle, link and dry-layer resistance queries.

use glasspoint_science::drying::Resistance;
use glasspoint_science::verdict::{
    AnnealingStep, CycleProgram, FreezingStep, PrimaryStep, SecondaryStep,
};
use sqlx::FromRow;

use super::write::{on_tx, Target};
use super::{decode, now, on_constraint, on_pool, Store};
use crate::auth::Actor;
use crate::domain::*;
use crate::error::AppError;

#[derive(FromRow)]
struct CycleRow {
    id: i64,
    name: String,
    status: String,
    notes: String,
    freeze_ramp_c_min: f64,
    freeze_hold_c: f64,
    freeze_hold_min: f64,
    anneal_temp_c: Option<f64>,
    anneal_hold_min: Option<f64>,
    anneal_return_ramp_c_min: Option<f64>,
    primary_ramp_c_min: f64,
    primary_shelf_c: f64,
    primary_pressure_mtorr: f64,
    primary_hold_min: f64,
    secondary_ramp_c_min: f64,
    secondary_shelf_c: f64,
    secondary_pressure_mtorr: f64,
    secondary_hold_min: f64,
    condenser_temp_c: Option<f64>,
    sublimation_ceiling_kg_h_m2: Option<f64>,
    version: i64,
}

const COLUMNS: &str = "name, status, notes, freeze_ramp_c_min, freeze_hold_c, freeze_hold_min, anneal_temp_c, \
     anneal_hold_min, anneal_return_ramp_c_min, primary_ramp_c_min, primary_shelf_c, primary_pressure_mtorr, \
     primary_hold_min, secondary_ramp_c_min, secondary_shelf_c, secondary_pressure_mtorr, secondary_hold_min, \
     condenser_temp_c, sublimation_ceiling_kg_h_m2";

fn to_cycle(r: CycleRow) -> Result<Cycle, AppError> {
    let annealing = match (r.anneal_temp_c, r.anneal_hold_min) {
        (Some(temp_c), Some(hold_min)) => Some(AnnealingStep {
            temp_c,
            hold_min,
            return_ramp_c_per_min: r.anneal_return_ramp_c_min,
        }),
        _ => None,
    };
    Ok(Cycle {
        id: r.id,
        status: decode(CycleStatus::parse(&r.status), "cycle status", &r.status)?,
        name: r.name,
        notes: r.notes,
        program: CycleProgram {
            freezing: FreezingStep {
                ramp_c_per_min: r.freeze_ramp_c_min,
                hold_temp_c: r.freeze_hold_c,
                hold_min: r.freeze_hold_min,
            },
            annealing,
            primary: PrimaryStep {
                ramp_c_per_min: r.primary_ramp_c_min,
                shelf_temp_c: r.primary_shelf_c,
                chamber_pressure_mtorr: r.primary_pressure_mtorr,
                hold_min: r.primary_hold_min,
            },
            secondary: SecondaryStep {
                ramp_c_per_min: r.secondary_ramp_c_min,
                shelf_temp_c: r.secondary_shelf_c,
                pressure_mtorr: r.secondary_pressure_mtorr,
                hold_min: r.secondary_hold_min,
            },
            condenser_temp_c: r.condenser_temp_c,
        },
        sublimation_ceiling_kg_h_m2: r.sublimation_ceiling_kg_h_m2,
        version: r.version,
    })
}

#[derive(FromRow)]
struct LinkRow {
    id: i64,
    cycle_id: i64,
    cycle_name: String,
    formulation_id: i64,
    formulation_code: String,
    container_id: i64,
    container_name: String,
    fill_volume_ml: f64,
    dryer_id: Option<i64>,
    dryer_name: Option<String>,
    vial_count: Option<i64>,
    edge_vial_share: Option<f64>,
}

const SELECT_LINKS: &str =
    "SELECT l.id, l.cycle_id, y.name AS cycle_name, l.formulation_id, f.code AS formulation_code, \
     l.container_id, c.name AS container_name, l.fill_volume_ml, l.dryer_id, \
     d.name AS dryer_name, l.vial_count, l.edge_vial_share FROM cycle_links l \
     JOIN cycles y ON y.id = l.cycle_id JOIN formulations f ON f.id = l.formulation_id \
     JOIN containers c ON c.id = l.container_id LEFT JOIN dryers d ON d.id = l.dryer_id";

fn to_link(r: LinkRow) -> CycleLink {
    CycleLink {
        id: r.id,
        cycle_id: r.cycle_id,
        cycle_name: r.cycle_name,
        formulation_id: r.formulation_id,
        formulation_code: r.formulation_code,
        container_id: r.container_id,
        container_name: r.container_name,
        fill_volume_ml: r.fill_volume_ml,
        dryer_id: r.dryer_id,
        dryer_name: r.dryer_name,
        vial_count: r.vial_count,
        edge_vial_share: r.edge_vial_share,
    }
}

const DUPLICATE: &str = "another cycle already has this name";

/// Binds a draft's columns, in `COLUMNS` order, to a query.
macro_rules! bind_cycle {
    ($q:expr, $d:expr, $status:expr) => {{
        let p = &$d.program;
        $q.bind(&$d.name)
            .bind($status)
            .bind(&$d.notes)
            .bind(p.freezing.ramp_c_per_min)
            .bind(p.freezing.hold_temp_c)
            .bind(p.freezing.hold_min)
            .bind(p.annealing.map(|a| a.temp_c))
            .bind(p.annealing.map(|a| a.hold_min))
            .bind(p.annealing.and_then(|a| a.return_ramp_c_per_min))
            .bind(p.primary.ramp_c_per_min)
            .bind(p.primary.shelf_temp_c)
            .bind(p.primary.chamber_pressure_mtorr)
            .bind(p.primary.hold_min)
            .bind(p.secondary.ramp_c_per_min)
            .bind(p.secondary.shelf_temp_c)
            .bind(p.secondary.pressure_mtorr)
            .bind(p.secondary.hold_min)
            .bind(p.condenser_temp_c)
            .bind($d.sublimation_ceiling_kg_h_m2)
    }};
}

impl Store {
    /// Cycles by name; archived ones only when asked.
    pub async fn list_cycles(&self, include_archived: bool) -> Result<Vec<Cycle>, AppError> {
        let rows: Vec<CycleRow> = on_pool!(self, pool => {
            sqlx::query_as(&format!(
                "SELECT id, {COLUMNS}, version FROM cycles WHERE ($1 = 1 OR status <> 'archived') ORDER BY lower(name)"
            ))
            .bind(include_archived as i64)
            .fetch_all(pool)
            .await?
        });
        rows.into_iter().map(to_cycle).collect()
    }

    pub async fn get_cycle(&self, id: i64) -> Result<Cycle, AppError> {
        let row: Option<CycleRow> = on_pool!(self, pool => {
            sqlx::query_as(&format!("SELECT id, {COLUMNS}, version FROM cycles WHERE id = $1"))
                .bind(id)
                .fetch_optional(pool)
                .await?
        });
        to_cycle(row.ok_or_else(|| AppError::NotFound(format!("Cycle {id}")))?)
    }

    pub async fn cycle_id_by_name(&self, name: &str) -> Result<Option<i64>, AppError> {
        let row: Option<(i64,)> = on_pool!(self, pool => {
            sqlx::query_as("SELECT id FROM cycles WHERE lower(name) = lower($1)")
                .bind(name)
                .fetch_optional(pool)
                .await?
        });
        Ok(row.map(|r| r.0))
    }

    pub async fn create_cycle(&self, actor: &Actor, d: &CycleDraft) -> Result<i64, AppError> {
        let at = now();
        let sql = format!(
            "INSERT INTO cycles ({COLUMNS}, version, created_at, updated_at) VALUES \
             ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14, $15, $16, $17, $18, $19, 1, $20, $20) RETURNING id"
        );
        let mut w = self
            .begin_write(actor, Target::create(Entity::Cycle), "")
            .await?;
        let id = on_tx!(&mut w.tx, c => {
            let (id,): (i64,) = bind_cycle!(sqlx::query_as(&sql), d, CycleStatus::Candidate.code())
                .bind(at)
                .fetch_one(&mut **c)
                .await
                .map_err(|e| on_constraint(e, "name", DUPLICATE))?;
            id
        });
        w.finish(id).await?;
        Ok(id)
    }

    pub async fn update_cycle(
        &self,
        actor: &Actor,
        id: i64,
        version: i64,
        d: &CycleDraft,
    ) -> Result<(), AppError> {
        let mut w = self
            .begin_write(actor, Target::update(Entity::Cycle, id, Some(version)), "")
            .await?;
        let status = w
            .before()
            .and_then(|b| b.content.get("status"))
            .and_then(|v| v.as_str())
            .unwrap_or(CycleStatus::Candidate.code())
            .to_string();
        let sql = "UPDATE cycles SET name = $1, status = $2, notes = $3, freeze_ramp_c_min = $4, freeze_hold_c = $5, \
             freeze_hold_min = $6, anneal_temp_c = $7, anneal_hold_min = $8, anneal_return_ramp_c_min = $9, \
             primary_ramp_c_min = $10, primary_shelf_c = $11, primary_pressure_mtorr = $12, primary_hold_min = $13, \
             secondary_ramp_c_min = $14, secondary_shelf_c = $15, secondary_pressure_mtorr = $16, secondary_hold_min = $17, \
             condenser_temp_c = $18, sublimation_ceiling_kg_h_m2 = $19 WHERE id = $20";
        on_tx!(&mut w.tx, c => {
            bind_cycle!(sqlx::query(sql), d, status.as_str())
                .bind(id)
                .execute(&mut **c)
                .await
                .map_err(|e| on_constraint(e, "name", DUPLICATE))?;
        });
        w.finish(id).await?;
        Ok(())
    }

    /// Archives or restores a cycle; nothing is deleted.
    pub async fn set_cycle_status(
        &self,
        actor: &Actor,
        id: i64,
        status: CycleStatus,
    ) -> Result<(), AppError> {
        let action = if status == CycleStatus::Archived {
            Action::Archive
        } else {
            Action::Restore
        };
        let mut w = self
            .begin_write(actor, Target::with(Entity::Cycle, id, action), "")
            .await?;
        on_tx!(&mut w.tx, c => {
            sqlx::query("UPDATE cycles SET status = $1 WHERE id = $2")
                .bind(status.code())
                .bind(id)
                .execute(&mut **c)
                .await?;
        });
        w.finish(id).await?;
        Ok(())
    }

    pub async fn links_of_cycle(&self, cycle_id: i64) -> Result<Vec<CycleLink>, AppError> {
        let rows: Vec<LinkRow> = on_pool!(self, pool => {
            sqlx::query_as(&format!("{SELECT_LINKS} WHERE l.cycle_id = $1 ORDER BY f.code, l.id"))
                .bind(cycle_id)
                .fetch_all(pool)
                .await?
        });
        Ok(rows.into_iter().map(to_link).collect())
    }

    /// Links of a formulation to candidate (not archived) cycles.
    pub async fn links_of_formulation(
        &self,
        formulation_id: i64,
    ) -> Result<Vec<CycleLink>, AppError> {
        let rows: Vec<LinkRow> = on_pool!(self, pool => {
            sqlx::query_as(&format!(
                "{SELECT_LINKS} WHERE l.formulation_id = $1 AND y.status <> 'archived' ORDER BY y.name, l.id"
            ))
            .bind(formulation_id)
            .fetch_all(pool)
            .await?
        });
        Ok(rows.into_iter().map(to_link).collect())
    }

    pub async fn get_link(&self, link_id: i64) -> Result<CycleLink, AppError> {
        let row: Option<LinkRow> = on_pool!(self, pool => {
            sqlx::query_as(&format!("{SELECT_LINKS} WHERE l.id = $1"))
                .bind(link_id)
                .fetch_optional(pool)
                .await?
        });
        row.map(to_link)
            .ok_or_else(|| AppError::NotFound(format!("Cycle link {link_id}")))
    }

    /// Links a formulation to a cycle: a change of the cycle, in its history.
    pub async fn create_link(
        &self,
        actor: &Actor,
        cycle_id: i64,
        d: &LinkDraft,
    ) -> Result<i64, AppError> {
        // Name the field that is wrong rather than failing on the foreign key.
        self.get_cycle(cycle_id).await?;
        if let Err(AppError::NotFound(_)) = self.get_formulation(d.formulation_id).await {
            return Err(AppError::input("formulation_id", "unknown formulation"));
        }
        if let Err(AppError::NotFound(_)) = self.get_container(d.container_id).await {
            return Err(AppError::input("container_id", "unknown container"));
        }
        if let Some(dryer_id) = d.dryer_id {
            if let Err(AppError::NotFound(_)) = self.get_dryer(dryer_id).await {
                return Err(AppError::input("dryer_id", "unknown dryer"));
            }
        }
        let at = now();
        let mut w = self
            .begin_write(actor, Target::update(Entity::Cycle, cycle_id, None), "")
            .await?;
        let id = on_tx!(&mut w.tx, c => {
            let (id,): (i64,) = sqlx::query_as(
                "INSERT INTO cycle_links (cycle_id, formulation_id, container_id, fill_volume_ml, created_at, \
                 dryer_id, vial_count, edge_vial_share) VALUES ($1, $2, $3, $4, $5, $6, $7, $8) RETURNING id",
            )
            .bind(cycle_id)
            .bind(d.formulation_id)
            .bind(d.container_id)
            .bind(d.fill_volume_ml)
            .bind(at)
            .bind(d.dryer_id)
            .bind(d.vial_count)
            .bind(d.edge_vial_share)
            .fetch_one(&mut **c)
            .await
            .map_err(|e| on_constraint(e, "formulation_id", "this formulation is already linked to the cycle in that container"))?;
            id
        });
        w.finish(cycle_id).await?;
        Ok(id)
    }

    /// Unlinks a formulation from a cycle (the link holds no data of its own; the cycle's
    /// history keeps it).
    pub async fn delete_link(
        &self,
        actor: &Actor,
        cycle_id: i64,
        link_id: i64,
    ) -> Result<(), AppError> {
        let mut w = self
            .begin_write(actor, Target::update(Entity::Cycle, cycle_id, None), "")
            .await?;
        let done = on_tx!(&mut w.tx, c => {
            sqlx::query("DELETE FROM cycle_links WHERE id = $1 AND cycle_id = $2")
                .bind(link_id)
                .bind(cycle_id)
                .execute(&mut **c)
                .await?
                .rows_affected()
        });
        if done == 0 {
            return Err(AppError::NotFound(format!("Cycle link {link_id}")));
        }
        w.finish(cycle_id).await?;
        Ok(())
    }

    /// The formulation's measured resistance, if one was recorded.
    pub async fn measured_resistance(
        &self,
        formulation_id: i64,
    ) -> Result<Option<DryLayerResistance>, AppError> {
        let row: Option<(f64, f64, f64, String, i64)> = on_pool!(self, pool => {
            sqlx::query_as(
                "SELECT r0_cm2_torr_h_g, a1_cm_torr_h_g, a2_per_cm, source, version FROM dry_layer_resistance WHERE formulation_id = $1",
            )
            .bind(formulation_id)
            .fetch_optional(pool)
            .await?
        });
        Ok(row.map(|(r0, a1, a2, source, version)| DryLayerResistance {
            resistance: Resistance {
                r0_cm2_torr_h_g: r0,
                a1_cm_torr_h_g: a1,
                a2_per_cm: a2,
            },
            measured: true,
            source,
            version,
        }))
    }

    /// Records (or replaces) a formulation's measured resistance: a change of the
    /// formulation, in its history.
    pub async fn set_resistance(
        &self,
        actor: &Actor,
        formulation_id: i64,
        r: &Resistance,
        source: &str,
        version: Option<i64>,
    ) -> Result<(), AppError> {
        let at = now();
        let mut w = self
            .begin_write(
                actor,
                Target::update(Entity::Formulation, formulation_id, None),
                "",
            )
            .await?;
        let current: Option<i64> = w
            .before()
            .and_then(|b| b.content.get("dry_layer_resistance"))
            .and_then(|v| v.as_array())
            .and_then(|rows| rows.first())
            .and_then(|row| row.get("version"))
            .and_then(|v| v.as_i64());
        match (current, version) {
            (Some(current), Some(v)) if current != v => {
                return Err(AppError::Conflict(
                    "The resistance was changed by someone else after you opened it. Your values are kept below; reload to see theirs.".into(),
                ))
            }
            (Some(_), _) => {
                on_tx!(&mut w.tx, c => {
                    sqlx::query(
                        "UPDATE dry_layer_resistance SET r0_cm2_torr_h_g = $1, a1_cm_torr_h_g = $2, a2_per_cm = $3, \
                         source = $4, version = version + 1, updated_at = $5 WHERE formulation_id = $6",
                    )
                    .bind(r.r0_cm2_torr_h_g).bind(r.a1_cm_torr_h_g).bind(r.a2_per_cm).bind(source).bind(at).bind(formulation_id)
                    .execute(&mut **c)
                    .await?;
                });
            }
            (None, _) => {
                on_tx!(&mut w.tx, c => {
                    sqlx::query(
                        "INSERT INTO dry_layer_resistance (formulation_id, r0_cm2_torr_h_g, a1_cm_torr_h_g, a2_per_cm, source, version, updated_at) \
                         VALUES ($1, $2, $3, $4, $5, 1, $6)",
                    )
                    .bind(formulation_id).bind(r.r0_cm2_torr_h_g).bind(r.a1_cm_torr_h_g).bind(r.a2_per_cm).bind(source).bind(at)
                    .execute(&mut **c)
                    .await?;
                });
            }
        }
        w.finish(formulation_id).await?;
        Ok(())
    }
}
