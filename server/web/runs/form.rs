//! Recording a run: the run form (multipart, with the dryer's data export), the column
//! map when the export's columns need choosing, changing a run, and replacing its data.

use askama::Template;
use axum::extract::{Request, State};
use axum::response::Response;

use super::super::extract::{Path, Query};
use super::super::formulations::{into_field_errors, unprocessable};
use super::super::upload::{read_upload, Upload};
use super::super::{render, see_other};
use crate::auth::Actor;
use crate::domain::fields::format_date;
use crate::domain::runs::*;
use crate::domain::*;
use crate::{AppError, AppState};

/// One choice of a select.
pub struct Choice {
    pub id: i64,
    pub label: String,
}

/// The roles a column may take, for the column map's selects: (code, words).
fn roles() -> Vec<(String, &'static str)> {
    glasspoint_import::RunRole::ALL
        .iter()
        .map(|r| (r.to_string(), r.label()))
        .collect()
}

/// The column map the page asks for.
pub struct MapView {
    pub columns: Vec<(String, String, String)>,
    pub preview: Vec<Vec<String>>,
    pub reasons: Vec<String>,
}

impl MapView {
    fn new(req: &glasspoint_import::MappingRequest, typed: &[(String, String)]) -> Self {
        MapView {
            columns: req
                .columns
                .iter()
                .map(|c| {
                    let role = typed
                        .iter()
                        .find(|(h, _)| *h == c.header)
                        .map(|(_, r)| r.clone())
                        .unwrap_or_else(|| c.suggested.to_string());
                    let unit = c.unit.map(|u| u.label().to_string()).unwrap_or_default();
                    (c.header.clone(), unit, role)
                })
                .collect(),
            preview: req.preview.clone(),
            reasons: req.reasons.clone(),
        }
    }
}

#[derive(Template)]
#[template(path = "runs/form.html")]
struct FormPage {
    /// `None` for a new run.
    run_id: Option<i64>,
    form: RunForm,
    errors: FieldErrors,
    map: Option<MapView>,
    cycles: Vec<Choice>,
    containers: Vec<Choice>,
    dryers: Vec<Choice>,
    formulations: Vec<Choice>,
    kinds: &'static [RunKind],
    cakes: &'static [CakeAppearance],
    roles: Vec<(String, &'static str)>,
    max_mib: usize,
    needs_reason: bool,
}

fn choices(items: impl IntoIterator<Item = (i64, String)>) -> Vec<Choice> {
    items
        .into_iter()
        .map(|(id, label)| Choice { id, label })
        .collect()
}

async fn form_page(
    state: &AppState,
    run_id: Option<i64>,
    form: RunForm,
    errors: FieldErrors,
    map: Option<MapView>,
) -> Result<Response, AppError> {
    let s = &state.store;
    let needs_reason = match run_id {
        Some(id) => s.get_run(id).await?.review_state != ReviewState::Recorded,
        None => false,
    };
    let page = FormPage {
        run_id,
        form,
        errors,
        map,
        cycles: choices(
            s.list_cycles(false)
                .await?
                .into_iter()
                .map(|c| (c.id, c.name)),
        ),
        containers: choices(
            s.list_containers()
                .await?
                .into_iter()
                .map(|c| (c.id, c.name)),
        ),
        dryers: choices(s.list_dryers().await?.into_iter().map(|d| (d.id, d.name))),
        formulations: choices(s.formulation_codes().await?),
        kinds: RunKind::ALL,
        cakes: CakeAppearance::ALL,
        roles: roles(),
        max_mib: MAX_RUN_FILE_BYTES / (1024 * 1024),
        needs_reason,
    };
    Ok(render(page))
}

#[derive(serde::Deserialize, Default)]
#[serde(default)]
pub struct NewQuery {
    cycle_id: String,
    kind: String,
}

pub async fn new_form(
    State(state): State<AppState>,
    Query(q): Query<NewQuery>,
) -> Result<Response, AppError> {
    let mut form = RunForm {
        cycle_id: q.cycle_id.clone(),
        kind: q.kind,
        run_on: format_date(time::OffsetDateTime::now_utc().date()),
        ..Default::default()
    };
    // A run of a linked cycle starts from its first link's load.
    if let Ok(cycle_id) = q.cycle_id.trim().parse::<i64>() {
        if let Some(link) = state.store.links_of_cycle(cycle_id).await?.first() {
            form.container_id = link.container_id.to_string();
            form.fill_volume_ml = number_text(link.fill_volume_ml);
            form.formulation_ids = link.formulation_id.to_string();
            form.dryer_id = link.dryer_id.map(|d| d.to_string()).unwrap_or_default();
            form.vial_count = link.vial_count.map(|n| n.to_string()).unwrap_or_default();
        }
    }
    form_page(&state, None, form, FieldErrors::default(), None).await
}

/// The run form an upload carries (page and API alike).
pub fn form_of(up: &Upload) -> RunForm {
    let t = |n: &str| up.text(n);
    RunForm {
        name: t("name"),
        kind: t("kind"),
        cycle_id: t("cycle_id"),
        dryer_id: t("dryer_id"),
        run_on: t("run_on"),
        container_id: t("container_id"),
        vial_count: t("vial_count"),
        fill_volume_ml: t("fill_volume_ml"),
        formulation_ids: String::new(),
        probed_formulation_id: t("probed_formulation_id"),
        chamber_pressure_mtorr: t("chamber_pressure_mtorr"),
        test_start_h: t("test_start_h"),
        test_end_h: t("test_end_h"),
        cake_appearance: t("cake_appearance"),
        cake_notes: t("cake_notes"),
        notes: t("notes"),
        moisture: t("moisture"),
        weights: t("weights"),
        version: t("version"),
        reason: t("reason"),
    }
    .with_formulations(&up.all("formulation_ids"))
}

/// The column choices the form sent: (header, role) pairs.
pub fn typed_map(up: &Upload) -> Vec<(String, String)> {
    up.all("map_header")
        .into_iter()
        .zip(up.all("map_role"))
        .collect()
}

/// Reads an export with the column map typed, else the dryer's remembered one (set aside
/// when the export's columns no longer fit it), else columns chosen from their headers.
pub async fn read_export(
    state: &AppState,
    file_name: &str,
    bytes: Vec<u8>,
    typed: &[(String, String)],
    dryer_id: Option<i64>,
) -> Result<Result<ReadOutcome, FieldErrors>, AppError> {
    Ok(match (typed.is_empty(), dryer_id) {
        (false, _) => read_recorded(file_name, bytes, typed),
        (true, Some(d)) => {
            let remembered = state.store.dryer_column_map(d).await?;
            read_with_remembered_map(file_name, bytes, &remembered)
        }
        (true, None) => read_recorded(file_name, bytes, &[]),
    })
}

/// What became of an export: stored data, or a page to answer.
enum Data {
    None,
    Read {
        data: RecordedData,
        mapping: Vec<(String, String)>,
    },
    Refused(FieldErrors, Option<MapView>),
}

async fn read_data(state: &AppState, up: Upload, dryer_id: Option<i64>) -> Result<Data, AppError> {
    if up.bytes.is_empty() {
        return Ok(Data::None);
    }
    let typed = typed_map(&up);
    let read = read_export(state, &up.file_name, up.bytes, &typed, dryer_id).await?;
    Ok(match read {
        Ok(ReadOutcome::Ready { data, mapping }) => Data::Read { data, mapping },
        Ok(ReadOutcome::NeedsMapping(req)) => {
            let mut e = FieldErrors::default();
            e.add(
                "file",
                "choose what each column of the export holds below, then select the file again \
                 (nothing was stored)",
            );
            Data::Refused(e, Some(MapView::new(&req, &typed)))
        }
        Err(e) => Data::Refused(e, None),
    })
}

pub async fn create(
    State(state): State<AppState>,
    actor: Actor,
    req: Request,
) -> Result<Response, AppError> {
    let up = read_upload(req).await?;
    let form = form_of(&up);
    let draft = match form.parse() {
        Ok(d) => d,
        Err(errors) => {
            let page = form_page(&state, None, form, errors, None).await?;
            return Ok(unprocessable(page));
        }
    };
    let (data, mapping) = match read_data(&state, up, draft.dryer_id).await? {
        Data::None => (None, None),
        Data::Read { data, mapping } => (Some(data), Some(mapping)),
        Data::Refused(errors, map) => {
            let page = form_page(&state, None, form, errors, map).await?;
            return Ok(unprocessable(page));
        }
    };
    match state.store.create_run(&actor, &draft, data.as_ref()).await {
        Ok(id) => {
            if let (Some(dryer), Some(map)) = (draft.dryer_id, mapping) {
                state.store.remember_column_map(&actor, dryer, &map).await?;
            }
            Ok(see_other(&format!("/runs/{id}")))
        }
        Err(e) => {
            let errors = into_field_errors(e)?;
            Ok(unprocessable(
                form_page(&state, None, form, errors, None).await?,
            ))
        }
    }
}

pub async fn edit_form(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> Result<Response, AppError> {
    let run = state.store.get_run(id).await?;
    form_page(
        &state,
        Some(id),
        RunForm::from_run(&run),
        FieldErrors::default(),
        None,
    )
    .await
}

/// Saves a changed run; a new export given with it replaces the recorded data.
pub async fn update(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    req: Request,
) -> Result<Response, AppError> {
    state.store.get_run(id).await?;
    let up = read_upload(req).await?;
    let form = form_of(&up);
    let refuse = |errors: FieldErrors, map: Option<MapView>, form: RunForm| {
        let state = state.clone();
        async move {
            Ok(unprocessable(
                form_page(&state, Some(id), form, errors, map).await?,
            ))
        }
    };
    let version = match form.version.trim().parse::<i64>() {
        Ok(v) => v,
        Err(_) => {
            return refuse(
                FieldError::new("version", "is missing; reload the page").into(),
                None,
                form,
            )
            .await
        }
    };
    let draft = match form.parse() {
        Ok(d) => d,
        Err(errors) => return refuse(errors, None, form).await,
    };
    let read = read_data(&state, up, draft.dryer_id).await?;
    let (data, mapping) = match read {
        Data::None => (None, None),
        Data::Read { data, mapping } => (Some(data), Some(mapping)),
        Data::Refused(errors, map) => return refuse(errors, map, form).await,
    };
    if let Err(e) = state
        .store
        .update_run(&actor, id, version, &draft, data.as_ref(), &form.reason)
        .await
    {
        return refuse(into_field_errors(e)?, None, form).await;
    }
    if let (Some(dryer), Some(map)) = (draft.dryer_id, mapping) {
        state.store.remember_column_map(&actor, dryer, &map).await?;
    }
    Ok(see_other(&format!("/runs/{id}")))
}
