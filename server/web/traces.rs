//! DSC trace pages: upload on a formulation (multipart), the trace with its chart and the
//! values found in adjustable windows, saving those values as measurements, and the
//! original file byte for byte.

use askama::Template;
use axum::extract::{DefaultBodyLimit, Request, State};
use axum::http::StatusCode;
use axum::response::Response;
use axum::routing::{get, post};
use axum::Router;

use super::extract::{Form, Path, Query};
use super::formulations::unprocessable;
use super::{render, see_other, svg};
use crate::auth::Actor;
use crate::charts::{render_line_chart, LineChart, RefLine, Series, SeriesStyle};
use crate::domain::traces::*;
use crate::domain::*;
use crate::{AppError, AppState};

/// Shown wherever values are derived from a trace.
pub const CAUTION: &str = "Values found in a trace support the judgement of qualified people; \
    check the windows against the curve, and confirm critical temperatures experimentally \
    before relying on them.";

pub fn router() -> Router<AppState> {
    Router::new()
        .route("/formulations/{id}/traces/new", get(new_form))
        .route(
            "/formulations/{id}/traces",
            post(upload).layer(DefaultBodyLimit::max(MAX_TRACE_BYTES)),
        )
        .route("/traces/{id}", get(detail))
        .route("/traces/{id}/chart.svg", get(chart))
        .route("/traces/{id}/original", get(original))
        .route("/traces/{id}/measurements", post(save_measurements))
}

#[derive(Template)]
#[template(path = "traces/form.html")]
struct FormPage {
    formulation_id: i64,
    formulation_code: String,
    formulation_name: String,
    form: TraceForm,
    errors: FieldErrors,
    preview: Option<ColumnPreview>,
    max_mib: usize,
}

async fn form_page(
    state: &AppState,
    formulation_id: i64,
    form: TraceForm,
    errors: FieldErrors,
    preview: Option<ColumnPreview>,
) -> Result<Response, AppError> {
    let f = state.store.get_formulation(formulation_id).await?;
    Ok(render(FormPage {
        formulation_id,
        formulation_code: f.code,
        formulation_name: f.name,
        form,
        errors,
        preview,
        max_mib: MAX_TRACE_BYTES / (1024 * 1024),
    }))
}

async fn new_form(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> Result<Response, AppError> {
    form_page(
        &state,
        id,
        TraceForm::default(),
        FieldErrors::default(),
        None,
    )
    .await
}

/// A trace upload's fields: the file's bytes and name, and the typed fields.
pub async fn read_multipart(req: Request) -> Result<(TraceForm, Vec<u8>), AppError> {
    let up = super::upload::read_upload(req).await?;
    let typed_name = up.text("file_name");
    let form = TraceForm {
        file_name: if typed_name.is_empty() {
            up.file_name.clone()
        } else {
            typed_name
        },
        sample_mass_mg: up.text("sample_mass_mg"),
        heating_rate_c_min: up.text("heating_rate_c_min"),
        exo: up.text("exo"),
        notes: up.text("notes"),
        temperature_column: up.text("temperature_column"),
        heat_flow_column: up.text("heat_flow_column"),
        time_column: up.text("time_column"),
    };
    Ok((form, up.bytes))
}

async fn upload(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    req: Request,
) -> Result<Response, AppError> {
    // The formulation first: an upload to one that does not exist is a 404, not a form.
    state.store.get_formulation(id).await?;
    let (form, bytes) = read_multipart(req).await?;
    let refusal = match form.parse(bytes) {
        Ok(draft) => match state.store.create_trace(&actor, id, &draft).await {
            Ok(trace_id) => return Ok(see_other(&format!("/traces/{trace_id}"))),
            Err(e) => UploadRefusal::Fields(super::formulations::into_field_errors(e)?),
        },
        Err(r) => r,
    };
    let page = match refusal {
        UploadRefusal::Fields(errors) => form_page(&state, id, form, errors, None).await?,
        UploadRefusal::Ambiguous(preview) => {
            let mut errors = FieldErrors::default();
            errors.add(
                "file",
                "several columns could be the temperature or the heat flow: choose them below \
                 and select the file again (nothing was stored)",
            );
            form_page(&state, id, form, errors, Some(preview)).await?
        }
    };
    Ok(unprocessable(page))
}

/// One value found in the trace, for the table and the chart.
pub struct Found {
    pub label: String,
    pub value_c: f64,
}

/// One peak row of the page.
pub struct PeakRow {
    pub index: usize,
    pub kind: &'static str,
    pub onset_c: f64,
    pub peak_c: f64,
    pub end_c: f64,
    pub area: String,
}

#[derive(Template)]
#[template(path = "traces/detail.html")]
struct DetailPage {
    t: TraceMeta,
    formulation_code: String,
    caution: &'static str,
    /// Query string for the chart, so it shows the same windows.
    chart_query: String,
    /// The windows shown in the fields (those used, or those typed when they failed).
    windows: WindowQuery,
    /// The windows as typed (blank: suggested), carried by the save form so the values
    /// saved are found exactly as shown.
    typed: WindowQuery,
    errors: FieldErrors,
    segment_text: String,
    glass: Option<glasspoint_science::dsc::topic::GlassTransitionResult>,
    peaks: Vec<PeakRow>,
    notes: Vec<String>,
    peak_slots: Vec<usize>,
    measurements: Vec<Measurement>,
    today: String,
    analyst: String,
    saved: bool,
}

/// The page's field for an analysis error's field.
fn window_field(field: &str) -> String {
    if field == "glass_transition_window_c" {
        return "gt_lo".into();
    }
    if let Some(rest) = field.strip_prefix("peak_windows_c[") {
        if let Some(i) = rest.strip_suffix(']') {
            return format!("p{i}_lo");
        }
    }
    "windows".into()
}

struct Analysis {
    segment: usize,
    output: Option<glasspoint_science::dsc::DscAnalysisOutput>,
    errors: FieldErrors,
}

async fn analysis_of(
    state: &AppState,
    t: &TraceMeta,
    q: &WindowQuery,
) -> Result<(TraceData, Analysis), AppError> {
    let data = state.store.trace_data(t.id).await?;
    let windows = match q.parse() {
        Ok(w) => w,
        Err(errors) => {
            return Ok((
                data,
                Analysis {
                    segment: 0,
                    output: None,
                    errors,
                },
            ))
        }
    };
    let analysis = match analyse_trace(t, &data, &windows) {
        Ok((segment, out)) => Analysis {
            segment,
            output: Some(out),
            errors: FieldErrors::default(),
        },
        Err(e) => {
            let mut errors = FieldErrors::default();
            errors.add(window_field(&e.field), e.message);
            Analysis {
                segment: 0,
                output: None,
                errors,
            }
        }
    };
    Ok((data, analysis))
}

#[derive(Debug, Default, serde::Deserialize)]
struct DetailQuery {
    #[serde(flatten)]
    windows: WindowQuery,
    #[serde(default)]
    saved: String,
}

async fn detail(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    Query(q): Query<DetailQuery>,
) -> Result<Response, AppError> {
    let t = state.store.get_trace(id).await?;
    let (page, status) = detail_page(
        &state,
        &actor,
        t,
        q.windows,
        FieldErrors::default(),
        !q.saved.is_empty(),
    )
    .await?;
    let mut r = render(page);
    *r.status_mut() = status;
    Ok(r)
}

async fn detail_page(
    state: &AppState,
    actor: &Actor,
    t: TraceMeta,
    typed: WindowQuery,
    extra_errors: FieldErrors,
    saved: bool,
) -> Result<(DetailPage, StatusCode), AppError> {
    let f = state.store.get_formulation(t.formulation_id).await?;
    let (data, a) = analysis_of(state, &t, &typed).await?;
    let typed_fields = typed.clone();
    let mut errors = a.errors;
    for (k, v) in extra_errors.iter() {
        errors.add(k.clone(), v.clone());
    }
    let status = if errors.is_empty() {
        StatusCode::OK
    } else {
        StatusCode::UNPROCESSABLE_ENTITY
    };
    let segment_text = data
        .segments
        .get(a.segment)
        .map(|s| {
            format!(
                "{} segment {} of {}: {} to {} °C, {} points",
                s.kind,
                a.segment + 1,
                data.segments.len(),
                crate::web::fmt::num1(s.start_c),
                crate::web::fmt::num1(s.end_c),
                s.end.saturating_sub(s.start)
            )
        })
        .unwrap_or_default();
    // The fields show what was typed when it failed, else the windows used.
    let (windows, glass, peaks, notes) = match a.output {
        Some(out) => {
            let windows =
                WindowQuery::from_used(out.windows.glass_transition_c, &out.windows.peak_windows_c);
            let unit = "J/g";
            let peaks = out
                .peaks
                .iter()
                .enumerate()
                .map(|(i, p)| PeakRow {
                    index: i,
                    kind: peak_kind(&p.peak.kind),
                    onset_c: p.peak.onset_c,
                    peak_c: p.peak.peak_c,
                    end_c: p.peak.end_c,
                    area: p
                        .area_j_g
                        .map(|v| format!("{} {unit}", crate::web::fmt::num2(v)))
                        .unwrap_or_else(|| "—".into()),
                })
                .collect();
            (windows, out.glass_transition, peaks, out.notes)
        }
        None => (typed, None, Vec::new(), Vec::new()),
    };
    let chart_query = serde_urlencoded::to_string(&windows).unwrap_or_default();
    let measurements = state
        .store
        .measurements_of(t.formulation_id)
        .await?
        .into_iter()
        .filter(|m| m.trace_id == Some(t.id))
        .collect();
    let peak_slots = (0..peaks.len().min(SAVE_PEAKS)).collect();
    Ok((
        DetailPage {
            formulation_code: f.code,
            caution: CAUTION,
            chart_query,
            windows,
            typed: typed_fields,
            errors,
            segment_text,
            glass,
            peaks,
            notes,
            peak_slots,
            measurements,
            today: fields::format_date(time::OffsetDateTime::now_utc().date()),
            analyst: if actor.full_name.is_empty() {
                actor.username.clone()
            } else {
                actor.full_name.clone()
            },
            saved,
            t,
        },
        status,
    ))
}

fn peak_kind(k: &glasspoint_science::dsc::PeakKind) -> &'static str {
    match k {
        glasspoint_science::dsc::PeakKind::Exotherm => "Exotherm",
        glasspoint_science::dsc::PeakKind::Endotherm => "Endotherm",
    }
}

async fn chart(
    State(state): State<AppState>,
    Path(id): Path<i64>,
    Query(q): Query<WindowQuery>,
) -> Result<Response, AppError> {
    let t = state.store.get_trace(id).await?;
    let (data, a) = analysis_of(&state, &t, &q).await?;
    let (_, temperature_c, heat_flow) = data
        .analysed_segment()
        .map_err(|e| AppError::input(e.field, e.message))?;
    let mut found: Vec<Found> = Vec::new();
    if let Some(out) = &a.output {
        if let Some(g) = &out.glass_transition {
            found.push(Found {
                label: "Tg onset".into(),
                value_c: g.transition.onset_c,
            });
            found.push(Found {
                label: "Tg midpoint".into(),
                value_c: g.transition.midpoint_c,
            });
            found.push(Found {
                label: "Tg end".into(),
                value_c: g.transition.end_c,
            });
        }
        for (i, p) in out.peaks.iter().enumerate() {
            found.push(Found {
                label: format!("peak {} onset", i + 1),
                value_c: p.peak.onset_c,
            });
            found.push(Found {
                label: format!("peak {} max", i + 1),
                value_c: p.peak.peak_c,
            });
        }
    }
    let marks: Vec<(f64, f64)> = found
        .iter()
        .map(|f| {
            (
                f.value_c,
                glasspoint_science::dsc::trace::interp(&temperature_c, &heat_flow, f.value_c),
            )
        })
        .collect();
    let unit = if t.heat_flow_unit == "W/g" {
        "W/g"
    } else {
        "mW"
    };
    let exo = if t.exo == "down" {
        "exo down"
    } else {
        "exo up"
    };
    let chart = LineChart {
        title: format!("{} ({exo})", t.file_name),
        x_label: "Temperature (°C)".into(),
        y_label: format!("Heat flow ({unit})"),
        series: vec![
            Series {
                name: "Heat flow".into(),
                points: envelope(&temperature_c, &heat_flow, CHART_BUCKETS),
                style: SeriesStyle::Line,
                color: Some(0),
            },
            Series {
                name: "Found".into(),
                points: marks,
                style: SeriesStyle::Points,
                color: Some(1),
            },
        ],
        vlines: found
            .iter()
            .map(|f| RefLine {
                label: format!("{} {} °C", f.label, crate::web::fmt::num1(f.value_c)),
                value: f.value_c,
                color: None,
            })
            .collect(),
        ..Default::default()
    };
    Ok(svg(render_line_chart(&chart)))
}

/// Columns of the chart's heat-flow line: longer traces are drawn as each bucket's lowest
/// and highest point, in order, so no peak is lost.
const CHART_BUCKETS: usize = 2000;

fn envelope(t: &[f64], y: &[f64], buckets: usize) -> Vec<(f64, f64)> {
    let n = t.len().min(y.len());
    if n <= 2 * buckets {
        return t.iter().copied().zip(y.iter().copied()).take(n).collect();
    }
    let size = n.div_ceil(buckets);
    let mut out = Vec::with_capacity(2 * buckets);
    for start in (0..n).step_by(size) {
        let end = (start + size).min(n);
        let (mut lo, mut hi) = (start, start);
        for i in start..end {
            if y[i] < y[lo] {
                lo = i;
            }
            if y[i] > y[hi] {
                hi = i;
            }
        }
        let (a, b) = if lo <= hi { (lo, hi) } else { (hi, lo) };
        out.push((t[a], y[a]));
        if b != a {
            out.push((t[b], y[b]));
        }
    }
    out
}

async fn original(
    State(state): State<AppState>,
    Path(id): Path<i64>,
) -> Result<Response, AppError> {
    original_response(&state, id).await
}

/// The original bytes with their file name, for pages and the API.
pub async fn original_response(state: &AppState, id: i64) -> Result<Response, AppError> {
    let (name, bytes) = state.store.trace_original(id).await?;
    Ok(super::upload::attachment(&name, bytes))
}

async fn save_measurements(
    State(state): State<AppState>,
    actor: Actor,
    Path(id): Path<i64>,
    Form(form): Form<SaveFromTraceForm>,
) -> Result<Response, AppError> {
    let t = state.store.get_trace(id).await?;
    let data = state.store.trace_data(id).await?;
    let retry = |errors: FieldErrors| {
        let state = state.clone();
        let actor = actor.clone();
        let t = t.clone();
        let windows = form.windows.clone();
        async move {
            let (page, _) = detail_page(&state, &actor, t, windows, errors, false).await?;
            Ok::<_, AppError>(unprocessable(render(page)))
        }
    };
    let windows = match form.windows.parse() {
        Ok(w) => w,
        Err(errors) => return retry(errors).await,
    };
    let out = match analyse_trace(&t, &data, &windows) {
        Ok((_, out)) => out,
        Err(e) => {
            let mut errors = FieldErrors::default();
            errors.add(window_field(&e.field), e.message);
            return retry(errors).await;
        }
    };
    let drafts = match drafts_from(&t, &out, &form) {
        Ok(d) => d,
        Err(errors) => return retry(errors).await,
    };
    for d in &drafts {
        state
            .store
            .create_measurement_with_trace(&actor, t.formulation_id, d, Some(t.id))
            .await?;
    }
    Ok(see_other(&format!("/traces/{id}?saved=1")))
}

/// The measurements the save form asks for, from the analysis made on the server.
fn drafts_from(
    t: &TraceMeta,
    out: &glasspoint_science::dsc::DscAnalysisOutput,
    form: &SaveFromTraceForm,
) -> Result<Vec<MeasurementDraft>, FieldErrors> {
    let mut e = FieldErrors::default();
    let method = match form.method.trim() {
        "" | "dsc" => MeasurementMethod::Dsc,
        "mdsc" => MeasurementMethod::ModulatedDsc,
        other => {
            e.add("method", format!("“{other}” is not one of: dsc, mdsc"));
            MeasurementMethod::Dsc
        }
    };
    let analyst = fields::required_text(&mut e, "analyst", &form.analyst, limits::NAME_CHARS);
    let measured_on = if form.measured_on.trim().is_empty() {
        Some(time::OffsetDateTime::now_utc().date())
    } else {
        fields::parse_date(&mut e, "measured_on", &form.measured_on)
    };
    let replicate = match form.replicate.trim() {
        "" => 1,
        text => match text.parse::<i64>() {
            Ok(v) if (1..=1000).contains(&v) => v,
            _ => {
                e.add(
                    "replicate",
                    format!("“{text}” is not a whole number from 1 to 1000"),
                );
                1
            }
        },
    };
    let mut values: Vec<(MeasurementKind, f64, String)> = Vec::new();
    match form.tg_prime_from.trim() {
        "" => {}
        which @ ("midpoint" | "onset") => match &out.glass_transition {
            Some(g) => {
                let v = if which == "midpoint" {
                    g.transition.midpoint_c
                } else {
                    g.transition.onset_c
                };
                values.push((
                    MeasurementKind::TgPrime,
                    v,
                    format!("glass transition {which}"),
                ));
            }
            None => e.add(
                "tg_prime_from",
                "no glass transition was found in the window",
            ),
        },
        other => e.add(
            "tg_prime_from",
            format!("“{other}” is not one of: midpoint, onset"),
        ),
    }
    for i in 0..SAVE_PEAKS {
        let choice = form.peak_choice(i).trim();
        if choice.is_empty() {
            continue;
        }
        let field = format!("peak{i}");
        let kind = match choice {
            "ice_melt_onset" => MeasurementKind::IceMeltOnset,
            "te" => MeasurementKind::Te,
            "cryst_exotherm_onset" => MeasurementKind::CrystallizationExotherm,
            other => {
                e.add(
                    &field,
                    format!("“{other}” is not one of: ice_melt_onset, te, cryst_exotherm_onset"),
                );
                continue;
            }
        };
        match out.peaks.get(i) {
            Some(p) => values.push((kind, p.peak.onset_c, format!("peak {} onset", i + 1))),
            None => e.add(&field, format!("there is no peak {} in the windows", i + 1)),
        }
    }
    if values.is_empty() && e.is_empty() {
        e.add("tg_prime_from", "choose at least one value to save");
    }
    let drafts = values
        .into_iter()
        .map(|(kind, value_c, what)| MeasurementDraft {
            kind,
            value_c: (value_c * 100.0).round() / 100.0,
            residual_moisture_pct: None,
            method,
            heating_rate_c_min: t.heating_rate_c_min,
            sample_mass_mg: t.sample_mass_mg,
            pan: String::new(),
            instrument: String::new(),
            analyst: analyst.clone(),
            measured_on: measured_on.unwrap_or_else(|| time::OffsetDateTime::now_utc().date()),
            replicate,
            notes: format!(
                "Read from DSC trace {} ({what}, rounded to 0.01 °C).",
                t.file_name
            ),
            review_state: ReviewState::Recorded,
        })
        .collect();
    e.into_result(drafts)
}
