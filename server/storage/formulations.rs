//! Formulation queries: search, detail, create, edit, archive.

use sqlx::FromRow;
use time::OffsetDateTime;

use super::write::{on_tx, Target};
use super::{decode, now, on_constraint, on_pool, Store};
use crate::auth::Actor;
use crate::domain::*;
use crate::error::AppError;

/// What the formulation list is narrowed to.
#[derive(Debug, Clone, Default)]
pub struct FormulationFilter {
    /// Matches code, name or a component's material name.
    pub query: String,
    pub project: String,
    pub status: Option<FormulationStatus>,
    pub has_tg_prime: bool,
    pub has_collapse: bool,
}

#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub enum FormulationSort {
    #[default]
    Code,
    Name,
    Project,
    Status,
    RecentlyChanged,
}

impl FormulationSort {
    pub const ALL: &'static [(FormulationSort, &'static str, &'static str)] = &[
        (FormulationSort::Code, "code", "Code"),
        (FormulationSort::Name, "name", "Name"),
        (FormulationSort::Project, "project", "Project"),
        (FormulationSort::Status, "status", "Status"),
        (
            FormulationSort::RecentlyChanged,
            "updated",
            "Recently changed",
        ),
    ];

    pub fn parse(code: &str) -> Option<Self> {
        Self::ALL
            .iter()
            .find(|(_, c, _)| *c == code)
            .map(|(s, _, _)| *s)
    }

    pub fn code(self) -> &'static str {
        Self::ALL
            .iter()
            .find(|(s, _, _)| *s == self)
            .map(|(_, c, _)| *c)
            .unwrap_or("code")
    }

    fn order_by(self) -> &'static str {
        match self {
            FormulationSort::Code => "lower(f.code) ASC",
            FormulationSort::Name => "lower(f.name) ASC, lower(f.code) ASC",
            FormulationSort::Project => "lower(f.project) ASC, lower(f.code) ASC",
            FormulationSort::Status => "f.status ASC, lower(f.code) ASC",
            FormulationSort::RecentlyChanged => "f.updated_at DESC, f.id DESC",
        }
    }
}

/// One page of a list, with what is needed to page through it.
#[derive(Debug, Clone, serde::Serialize, utoipa::ToSchema)]
pub struct Page<T> {
    pub items: Vec<T>,
    pub page: i64,
    pub per_page: i64,
    pub total: i64,
    pub pages: i64,
}

/// A formulation as listed: enough to choose one.
#[derive(Debug, Clone, serde::Serialize, utoipa::ToSchema)]
pub struct FormulationSummary {
    pub id: i64,
    pub code: String,
    pub name: String,
    pub project: String,
    pub status: FormulationStatus,
    pub composition: String,
    pub tg_prime_mean_c: Option<f64>,
    pub collapse_onset_mean_c: Option<f64>,
    pub measurement_count: i64,
}

#[derive(FromRow)]
struct SummaryRow {
    id: i64,
    code: String,
    name: String,
    project: String,
    status: String,
    tg_prime_mean_c: Option<f64>,
    collapse_onset_mean_c: Option<f64>,
    measurement_count: i64,
}

#[derive(FromRow)]
struct FormulationRow {
    id: i64,
    code: String,
    name: String,
    project: String,
    status: String,
    ph: Option<f64>,
    fill_volume_ml: Option<f64>,
    container_id: Option<i64>,
    container_name: Option<String>,
    notes: String,
    tags: String,
    limit_basis: String,
    version: i64,
    created_at: OffsetDateTime,
    updated_at: OffsetDateTime,
}

#[derive(FromRow)]
struct ComponentRow {
    formulation_id: i64,
    material_id: i64,
    material_name: String,
    concentration: f64,
    unit: String,
    freezing_behaviour: String,
    role: String,
}

const WHERE_FILTER: &str = "WHERE ($1 = '' OR lower(f.code) LIKE $2 ESCAPE '\\' OR lower(f.name) LIKE $2 ESCAPE '\\' \
       OR EXISTS (SELECT 1 FROM formulation_components c JOIN materials m ON m.id = c.material_id \
                  WHERE c.formulation_id = f.id AND lower(m.name) LIKE $2 ESCAPE '\\')) \
   AND ($3 = '' OR f.project = $3) \
   AND ($4 = '' OR f.status = $4) \
   AND ($5 = 0 OR EXISTS (SELECT 1 FROM measurements m WHERE m.formulation_id = f.id AND m.kind = 'tg_prime')) \
   AND ($6 = 0 OR EXISTS (SELECT 1 FROM measurements m WHERE m.formulation_id = f.id AND m.kind IN ('tc_onset', 'tc_full'))) \
   AND ($4 = 'archived' OR f.status <> 'archived')";

const SELECT_COMPONENTS: &str = "SELECT c.formulation_id, c.material_id, m.name AS material_name, c.concentration, c.unit, \
     m.freezing_behaviour, m.role FROM formulation_components c JOIN materials m ON m.id = c.material_id";

fn like_pattern(query: &str) -> String {
    let escaped = query
        .trim()
        .to_lowercase()
        .replace('\\', "\\\\")
        .replace('%', "\\%")
        .replace('_', "\\_");
    format!("%{escaped}%")
}

fn to_component(r: ComponentRow) -> Result<Component, AppError> {
    Ok(Component {
        material_id: r.material_id,
        unit: decode(ConcentrationUnit::parse(&r.unit), "unit", &r.unit)?,
        freezing_behaviour: decode(
            FreezingBehaviour::parse(&r.freezing_behaviour),
            "freezing behaviour",
            &r.freezing_behaviour,
        )?,
        role: decode(MaterialRole::parse(&r.role), "role", &r.role)?,
        material_name: r.material_name,
        concentration: r.concentration,
        concentration_mg_ml: 0.0,
        solid_fraction: 0.0,
    })
}

fn in_list(first: usize, n: usize) -> String {
    (first..first + n)
        .map(|i| format!("${i}"))
        .collect::<Vec<_>>()
        .join(", ")
}

/// Refuses unknown materials and containers on the row that names them.
macro_rules! check_references {
    ($tx:ident, $d:expr) => {
        for (i, c) in $d.components.iter().enumerate() {
            let (n,): (i64,) = sqlx::query_as("SELECT COUNT(*) FROM materials WHERE id = $1")
                .bind(c.material_id)
                .fetch_one(&mut **$tx)
                .await?;
            if n == 0 {
                return Err(AppError::input(
                    format!("c{i}_material"),
                    "unknown material",
                ));
            }
        }
        if let Some(container) = $d.container_id {
            let (n,): (i64,) = sqlx::query_as("SELECT COUNT(*) FROM containers WHERE id = $1")
                .bind(container)
                .fetch_one(&mut **$tx)
                .await?;
            if n == 0 {
                return Err(AppError::input("container_id", "unknown container"));
            }
        }
    };
}
#[allow(unused_imports)]
use check_references;

macro_rules! insert_components {
    ($tx:ident, $id:expr, $d:expr) => {
        for (position, c) in $d.components.iter().enumerate() {
            sqlx::query(
                "INSERT INTO formulation_components (formulation_id, position, material_id, concentration, unit) \
                 VALUES ($1, $2, $3, $4, $5)",
            )
            .bind($id)
            .bind(position as i64)
            .bind(c.material_id)
            .bind(c.concentration)
            .bind(c.unit.code())
            .execute(&mut **$tx)
            .await?;
        }
    };
}
#[allow(unused_imports)]
use insert_components;

impl Store {
    pub async fn search_formulations(
        &self,
        filter: &FormulationFilter,
        sort: FormulationSort,
        page: i64,
        per_page: i64,
    ) -> Result<Page<FormulationSummary>, AppError> {
        let per_page = per_page.clamp(1, 200);
        let query = filter.query.trim().to_string();
        let pattern = like_pattern(&query);
        let status = filter.status.map(|s| s.code()).unwrap_or("");
        let (tg, tc) = (filter.has_tg_prime as i64, filter.has_collapse as i64);
        let count_sql = format!("SELECT COUNT(*) FROM formulations f {WHERE_FILTER}");
        let list_sql = format!(
            "SELECT f.id, f.code, f.name, f.project, f.status, \
             (SELECT AVG(m.value_c) FROM measurements m WHERE m.formulation_id = f.id AND m.kind = 'tg_prime') AS tg_prime_mean_c, \
             (SELECT AVG(m.value_c) FROM measurements m WHERE m.formulation_id = f.id AND m.kind = 'tc_onset') AS collapse_onset_mean_c, \
             (SELECT COUNT(*) FROM measurements m WHERE m.formulation_id = f.id) AS measurement_count \
             FROM formulations f {WHERE_FILTER} ORDER BY {}, f.id LIMIT $7 OFFSET $8",
            sort.order_by()
        );
        let (total, rows) = on_pool!(self, pool => {
            let (total,): (i64,) = sqlx::query_as(&count_sql)
                .bind(&query).bind(&pattern).bind(&filter.project).bind(status).bind(tg).bind(tc)
                .fetch_one(pool)
                .await?;
            let pages = ((total + per_page - 1) / per_page).max(1);
            let page = page.clamp(1, pages);
            let rows: Vec<SummaryRow> = sqlx::query_as(&list_sql)
                .bind(&query).bind(&pattern).bind(&filter.project).bind(status).bind(tg).bind(tc)
                .bind(per_page)
                .bind((page - 1) * per_page)
                .fetch_all(pool)
                .await?;
            (total, rows)
        });
        let pages = ((total + per_page - 1) / per_page).max(1);
        let page = page.clamp(1, pages);
        let ids: Vec<i64> = rows.iter().map(|r| r.id).collect();
        let components = self.components_of(&ids).await?;
        let items = rows
            .into_iter()
            .map(|r| {
                let composition = components
                    .iter()
                    .filter(|c| c.0 == r.id)
                    .map(|(_, c)| {
                        format!(
                            "{} {} {}",
                            c.material_name,
                            trim_number(c.concentration),
                            c.unit.code()
                        )
                    })
                    .collect::<Vec<_>>()
                    .join(", ");
                Ok(FormulationSummary {
                    status: decode(FormulationStatus::parse(&r.status), "status", &r.status)?,
                    id: r.id,
                    code: r.code,
                    name: r.name,
                    project: r.project,
                    composition,
                    tg_prime_mean_c: r.tg_prime_mean_c,
                    collapse_onset_mean_c: r.collapse_onset_mean_c,
                    measurement_count: r.measurement_count,
                })
            })
            .collect::<Result<Vec<_>, AppError>>()?;
        Ok(Page {
            items,
            page,
            per_page,
            total,
            pages,
        })
    }

    async fn components_of(&self, ids: &[i64]) -> Result<Vec<(i64, Component)>, AppError> {
        if ids.is_empty() {
            return Ok(Vec::new());
        }
        let sql = format!(
            "{SELECT_COMPONENTS} WHERE c.formulation_id IN ({}) ORDER BY c.formulation_id, c.position",
            in_list(1, ids.len())
        );
        let rows: Vec<ComponentRow> = on_pool!(self, pool => {
            let mut q = sqlx::query_as(&sql);
            for id in ids {
                q = q.bind(*id);
            }
            q.fetch_all(pool).await?
        });
        rows.into_iter()
            .map(|r| Ok((r.formulation_id, to_component(r)?)))
            .collect()
    }

    /// Every project name in use, for the list's filter.
    pub async fn list_projects(&self) -> Result<Vec<String>, AppError> {
        let rows: Vec<(String,)> = on_pool!(self, pool => {
            sqlx::query_as("SELECT DISTINCT project FROM formulations WHERE project <> '' ORDER BY project")
                .fetch_all(pool)
                .await?
        });
        Ok(rows.into_iter().map(|r| r.0).collect())
    }

    pub async fn get_formulation(&self, id: i64) -> Result<Formulation, AppError> {
        let row: Option<FormulationRow> = on_pool!(self, pool => {
            sqlx::query_as(
                "SELECT f.id, f.code, f.name, f.project, f.status, f.ph, f.fill_volume_ml, f.container_id, \
                 c.name AS container_name, f.notes, f.tags, f.limit_basis, f.version, f.created_at, f.updated_at \
                 FROM formulations f LEFT JOIN containers c ON c.id = f.container_id WHERE f.id = $1",
            )
            .bind(id)
            .fetch_optional(pool)
            .await?
        });
        let r = row.ok_or_else(|| AppError::NotFound(format!("Formulation {id}")))?;
        let components = self
            .components_of(&[id])
            .await?
            .into_iter()
            .map(|(_, c)| c)
            .collect();
        let mut f = Formulation {
            status: decode(FormulationStatus::parse(&r.status), "status", &r.status)?,
            id: r.id,
            code: r.code,
            name: r.name,
            project: r.project,
            ph: r.ph,
            fill_volume_ml: r.fill_volume_ml,
            container_id: r.container_id,
            container_name: r.container_name,
            notes: r.notes,
            tags: r
                .tags
                .split(',')
                .map(str::trim)
                .filter(|t| !t.is_empty())
                .map(str::to_string)
                .collect(),
            use_crystalline_limit: r.limit_basis == "crystalline",
            version: r.version,
            created_at: r.created_at,
            updated_at: r.updated_at,
            components,
            solids_mg_ml: 0.0,
        };
        f.derive_composition();
        Ok(f)
    }

    /// The id of the formulation with `code` (any case), if there is one.
    pub async fn formulation_id_by_code(&self, code: &str) -> Result<Option<i64>, AppError> {
        let row: Option<(i64,)> = on_pool!(self, pool => {
            sqlx::query_as("SELECT id FROM formulations WHERE lower(code) = lower($1)")
                .bind(code)
                .fetch_optional(pool)
                .await?
        });
        Ok(row.map(|r| r.0))
    }

    pub async fn create_formulation(
        &self,
        actor: &Actor,
        d: &FormulationDraft,
    ) -> Result<i64, AppError> {
        refuse_approved_by_form(d.status, None)?;
        let at = now();
        let mut w = self
            .begin_write(actor, Target::create(Entity::Formulation), "")
            .await?;
        let id = on_tx!(&mut w.tx, c => {
            check_references!(c, d);
            let (id,): (i64,) = sqlx::query_as(
                "INSERT INTO formulations (code, name, project, status, ph, fill_volume_ml, container_id, notes, tags, \
                 version, created_at, updated_at) VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, 1, $10, $10) RETURNING id",
            )
            .bind(&d.code)
            .bind(&d.name)
            .bind(&d.project)
            .bind(d.status.code())
            .bind(d.ph)
            .bind(d.fill_volume_ml)
            .bind(d.container_id)
            .bind(&d.notes)
            .bind(d.tags.join(", "))
            .bind(at)
            .fetch_one(&mut **c)
            .await
            .map_err(|e| on_constraint(e, "code", "another formulation already uses this code"))?;
            insert_components!(c, id, d);
            id
        });
        w.finish(id).await?;
        Ok(id)
    }

    /// Saves an edit made on `version`. A reviewed or approved formulation needs a
    /// `reason`, and an approved one goes back to "characterized" until approved again
    /// (see the write path).
    pub async fn update_formulation(
        &self,
        actor: &Actor,
        id: i64,
        version: i64,
        d: &FormulationDraft,
        reason: &str,
    ) -> Result<(), AppError> {
        let mut w = self
            .begin_write(
                actor,
                Target::update(Entity::Formulation, id, Some(version)),
                reason,
            )
            .await?;
        let current = w
            .before()
            .and_then(|b| b.content.get("status"))
            .and_then(|v| v.as_str())
            .and_then(FormulationStatus::parse);
        refuse_approved_by_form(d.status, current)?;
        let status = d.status;
        on_tx!(&mut w.tx, c => {
            check_references!(c, d);
            sqlx::query(
                "UPDATE formulations SET code = $1, name = $2, project = $3, status = $4, ph = $5, fill_volume_ml = $6, \
                 container_id = $7, notes = $8, tags = $9 WHERE id = $10",
            )
            .bind(&d.code)
            .bind(&d.name)
            .bind(&d.project)
            .bind(status.code())
            .bind(d.ph)
            .bind(d.fill_volume_ml)
            .bind(d.container_id)
            .bind(&d.notes)
            .bind(d.tags.join(", "))
            .bind(id)
            .execute(&mut **c)
            .await
            .map_err(|e| on_constraint(e, "code", "another formulation already uses this code"))?;
            sqlx::query("DELETE FROM formulation_components WHERE formulation_id = $1")
                .bind(id)
                .execute(&mut **c)
                .await?;
            insert_components!(c, id, d);
        });
        w.finish(id).await?;
        Ok(())
    }

    /// Chooses which limit the formulation's cycle checks use (see `limit_basis`).
    pub async fn set_limit_basis(
        &self,
        actor: &Actor,
        id: i64,
        crystalline: bool,
    ) -> Result<(), AppError> {
        let basis = if crystalline {
            "crystalline"
        } else {
            "amorphous"
        };
        let mut w = self
            .begin_write(
                actor,
                Target::update(Entity::Formulation, id, None),
                "choice of the limit's basis",
            )
            .await?;
        on_tx!(&mut w.tx, c => {
            sqlx::query("UPDATE formulations SET limit_basis = $1 WHERE id = $2")
                .bind(basis)
                .bind(id)
                .execute(&mut **c)
                .await?;
        });
        w.finish(id).await?;
        Ok(())
    }

    /// Archives (or restores) a formulation: it leaves the default list but keeps every
    /// record; nothing is deleted.
    pub async fn set_formulation_status(
        &self,
        actor: &Actor,
        id: i64,
        status: FormulationStatus,
    ) -> Result<(), AppError> {
        let action = if status == FormulationStatus::Archived {
            Action::Archive
        } else {
            Action::Restore
        };
        let mut w = self
            .begin_write(actor, Target::with(Entity::Formulation, id, action), "")
            .await?;
        on_tx!(&mut w.tx, c => {
            sqlx::query("UPDATE formulations SET status = $1 WHERE id = $2")
                .bind(status.code())
                .bind(id)
                .execute(&mut **c)
                .await?;
        });
        w.finish(id).await?;
        Ok(())
    }
}

/// "Approved" is a reviewer's signature, not a choice on a form.
fn refuse_approved_by_form(
    wanted: FormulationStatus,
    current: Option<FormulationStatus>,
) -> Result<(), AppError> {
    if wanted == FormulationStatus::Approved && current != Some(FormulationStatus::Approved) {
        return Err(AppError::input(
            "status",
            "a formulation becomes approved only through a reviewer's signature",
        ));
    }
    Ok(())
}

/// A number without trailing zeros, for compact composition text.
pub fn trim_number(v: f64) -> String {
    let s = format!("{v:.3}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    s.to_string()
}

impl Store {
    /// Every formulation's id and code, for labelling lists of other records.
    pub async fn formulation_codes(&self) -> Result<Vec<(i64, String)>, AppError> {
        Ok(on_pool!(self, pool => {
            sqlx::query_as("SELECT id, code FROM formulations ORDER BY id")
                .fetch_all(pool)
                .await?
        }))
    }
}
