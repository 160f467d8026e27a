//! Server-rendered pages. Handlers are thin: extract, parse into domain types, call the
//! store or the science, render.

mod admin;
pub mod auth;
mod calculators;
mod containers;
mod cycles;
mod derived_view;
mod dryers;
pub mod errors;
pub mod extract;
pub mod fmt;
mod formulations;
pub mod host;
pub use formulations::ListQuery as FormulationListQuery;
mod materials;
mod measurements;
pub mod records;
pub mod runs;
mod sign_in;
pub mod traces;
pub mod upload;

use std::time::Duration;

use askama::Template;
use axum::body::Body;
use axum::extract::State;
use axum::http::{header, HeaderValue, StatusCode};
use axum::response::{Html, IntoResponse, Redirect, Response};
use axum::routing::get;
use axum::Router;
use extract::Path;
use tower_http::catch_panic::CatchPanicLayer;
use tower_http::csrf::CsrfLayer;
use tower_http::set_header::SetResponseHeaderLayer;
use tower_http::timeout::TimeoutLayer;
use tower_http::trace::TraceLayer;

use crate::{AppError, AppState, Config};

pub fn router() -> Router<AppState> {
    Router::new()
        .route("/", get(|| async { Redirect::to("/formulations") }))
        .route("/healthz", get(healthz))
        .route("/static/{*path}", get(static_file))
        .merge(formulations::router())
        .merge(measurements::router())
        .merge(materials::router())
        .merge(containers::router())
        .merge(dryers::router())
        .merge(traces::router())
        .merge(runs::router())
        .merge(cycles::router())
        .merge(calculators::router())
        .merge(sign_in::router())
        .merge(records::router())
        .merge(admin::router())
        .fallback(|| async { AppError::NotFound("This page".into()) })
}

/// The file limit of a route that takes an upload: a DSC trace on
/// `/formulations/{id}/traces`, a run's data export on `/runs`, `/runs/{id}` and
/// `/runs/{id}/data` (each also under `/api/v1`); `None` elsewhere.
pub fn upload_limit(path: &str) -> Option<usize> {
    let bare = path.strip_prefix("/api/v1").unwrap_or(path);
    let parts: Vec<&str> = bare.split('/').collect();
    // The run form's other fields come with its file: room for them above the file.
    let run_form = crate::domain::runs::MAX_RUN_FILE_BYTES + 64 * 1024;
    match parts.as_slice() {
        ["", "formulations", id, "traces"] if !id.is_empty() => {
            Some(crate::domain::traces::MAX_TRACE_BYTES)
        }
        ["", "runs"] => Some(run_form),
        ["", "runs", id] | ["", "runs", id, "data"] if !id.is_empty() => Some(run_form),
        _ => None,
    }
}

/// The body limit of a request to `path`: the configured one, or the larger file limit
/// of an upload route.
pub fn body_limit_for(path: &str, configured: usize) -> usize {
    upload_limit(path).map_or(configured, |l| configured.max(l))
}

/// The app-wide body limit (in place of `RequestBodyLimitLayer`, which cannot be raised
/// per route): a declared length over the route's limit answers 413 at once, and a body
/// that turns out longer fails to read (axum's extractors answer 413 then).
async fn limit_body(
    State(configured): State<usize>,
    req: axum::extract::Request,
    next: axum::middleware::Next,
) -> Response {
    let limit = body_limit_for(req.uri().path(), configured);
    let declared = req
        .headers()
        .get(header::CONTENT_LENGTH)
        .and_then(|v| v.to_str().ok())
        .and_then(|v| v.parse::<u64>().ok());
    if declared.is_some_and(|n| n > limit as u64) {
        return StatusCode::PAYLOAD_TOO_LARGE.into_response();
    }
    let (parts, body) = req.into_parts();
    let body = axum::body::Body::new(http_body_util::Limited::new(body, limit));
    next.run(axum::extract::Request::from_parts(parts, body))
        .await
}

/// Request limits, the host check, cross-site refusal, one error shape, tracing, panic
/// containment and security headers for the whole app. The last layer added is the
/// outermost, so the security headers reach every response, errors included.
pub fn middleware(app: Router, config: &Config) -> Router {
    let limit = config.body_limit_bytes;
    app.layer(axum::extract::DefaultBodyLimit::max(limit))
        .layer(axum::middleware::from_fn_with_state(limit, limit_body))
        .layer(TimeoutLayer::with_status_code(
            StatusCode::REQUEST_TIMEOUT,
            Duration::from_secs(config.request_timeout_s),
        ))
        // Refuses unsafe requests sent from another site (by Sec-Fetch-Site, else Origin
        // against Host); same-site pages and clients without those headers pass. Its
        // empty 403 is given a body by `shape_errors`.
        .layer(CsrfLayer::new())
        .layer(axum::middleware::from_fn_with_state(
            host::AllowedHosts::new(&config.allowed_hosts),
            host::check_host,
        ))
        .layer(CatchPanicLayer::custom(|_| {
            tracing::error!("a request handler panicked");
            // An empty 500: `shape_errors` answers it as JSON or HTML by path.
            StatusCode::INTERNAL_SERVER_ERROR.into_response()
        }))
        .layer(axum::middleware::from_fn_with_state(
            limit,
            errors::shape_errors,
        ))
        .layer(TraceLayer::new_for_http())
        .layer(SetResponseHeaderLayer::if_not_present(
            header::CONTENT_SECURITY_POLICY,
            HeaderValue::from_static("default-src 'self'; img-src 'self' data:; style-src 'self'; frame-ancestors 'none'"),
        ))
        .layer(SetResponseHeaderLayer::if_not_present(
            header::X_FRAME_OPTIONS,
            HeaderValue::from_static("DENY"),
        ))
        .layer(SetResponseHeaderLayer::if_not_present(
            header::X_CONTENT_TYPE_OPTIONS,
            HeaderValue::from_static("nosniff"),
        ))
        .layer(SetResponseHeaderLayer::if_not_present(
            header::REFERRER_POLICY,
            HeaderValue::from_static("same-origin"),
        ))
}

async fn healthz(State(state): State<AppState>) -> Response {
    match state.store.ping().await {
        Ok(()) => (StatusCode::OK, "ok").into_response(),
        Err(e) => {
            tracing::error!(error = %e, "health check failed");
            (StatusCode::SERVICE_UNAVAILABLE, "database unavailable").into_response()
        }
    }
}

#[derive(rust_embed::RustEmbed)]
#[folder = "static/"]
struct StaticFiles;

async fn static_file(Path(path): Path<String>) -> Response {
    match StaticFiles::get(&path) {
        Some(file) => {
            let mime = mime_guess::from_path(&path).first_or_octet_stream();
            (
                [
                    (header::CONTENT_TYPE, mime.as_ref().to_string()),
                    (header::CACHE_CONTROL, "public, max-age=3600".to_string()),
                ],
                Body::from(file.data.into_owned()),
            )
                .into_response()
        }
        None => AppError::NotFound("This file".into()).into_response(),
    }
}

#[derive(Template)]
#[template(path = "error.html")]
struct ErrorPage<'a> {
    heading: &'a str,
    message: &'a str,
}

/// The plain error page every failed page request gets.
pub fn error_page(status: StatusCode, message: &str) -> Response {
    let heading = match status {
        StatusCode::NOT_FOUND => "Not found",
        StatusCode::UNPROCESSABLE_ENTITY => "That input was not accepted",
        StatusCode::CONFLICT => "Changed in the meantime",
        StatusCode::PAYLOAD_TOO_LARGE => "Too large",
        StatusCode::BAD_REQUEST => "That request was not understood",
        StatusCode::FORBIDDEN => "Refused",
        StatusCode::MISDIRECTED_REQUEST => "Not served under this name",
        StatusCode::METHOD_NOT_ALLOWED => "Not possible here",
        _ => "Something went wrong",
    };
    let body = ErrorPage { heading, message }
        .render()
        .unwrap_or_else(|_| "Something went wrong.".into());
    (status, Html(body)).into_response()
}

/// Renders a page template with a given status.
pub fn render_status<T: Template>(status: StatusCode, page: T) -> Response {
    let mut response = render(page);
    if response.status() == StatusCode::OK {
        *response.status_mut() = status;
    }
    response
}

/// Renders a page template, turning a template failure into a logged 500.
pub fn render<T: Template>(page: T) -> Response {
    match page.render() {
        Ok(html) => Html(html).into_response(),
        Err(e) => AppError::Internal(format!("template: {e}")).into_response(),
    }
}

/// After a successful POST: go to the record's page (303, so a reload does not resubmit).
pub fn see_other(to: &str) -> Response {
    Redirect::to(to).into_response()
}

/// Code/label pairs of a vocabulary, for `<select>` options.
pub fn options<T: Copy>(
    all: &[T],
    code: fn(T) -> &'static str,
    label: fn(T) -> &'static str,
) -> Vec<(&'static str, &'static str)> {
    all.iter().map(|v| (code(*v), label(*v))).collect()
}

/// A chart answered as an SVG image (charts escape every text they draw).
pub fn svg(result: Result<String, crate::charts::ChartError>) -> Response {
    match result {
        Ok(body) => ([(header::CONTENT_TYPE, "image/svg+xml")], body).into_response(),
        Err(e) => AppError::Internal(format!("chart: {e}")).into_response(),
    }
}

/// The draft and the record version of an edit form: field errors first, then a missing
/// version.
pub fn draft_and_version<D>(
    parsed: Result<D, crate::domain::FieldErrors>,
    version: &str,
) -> Result<(D, i64), AppError> {
    let draft = parsed.map_err(AppError::Fields)?;
    Ok((draft, parse_version(version)?))
}

/// After a form POST: go to the saved record (303), or re-render the form (422) with every
/// field error and the user's input; a missing record or an internal failure fails the
/// request as usual.
pub fn saved_or_form<T>(
    result: Result<T, AppError>,
    to: impl FnOnce(T) -> String,
    form: impl FnOnce(crate::domain::FieldErrors) -> Response,
) -> Result<Response, AppError> {
    match result {
        Ok(saved) => Ok(see_other(&to(saved))),
        Err(AppError::NotFound(what)) => Err(AppError::NotFound(what)),
        Err(e) => Ok(formulations::unprocessable(form(
            formulations::into_field_errors(e)?,
        ))),
    }
}

/// The hidden `version` field of an edit form.
pub fn parse_version(raw: &str) -> Result<i64, AppError> {
    raw.trim().parse().map_err(|_| {
        AppError::input(
            "version",
            "the form is missing its record version; reload the page",
        )
    })
}

#[cfg(test)]
mod tests {
    use super::upload_limit;
    use crate::domain::{runs::MAX_RUN_FILE_BYTES, traces::MAX_TRACE_BYTES};

    #[test]
    fn upload_routes_have_their_file_limits_and_others_none() {
        assert_eq!(
            upload_limit("/formulations/3/traces"),
            Some(MAX_TRACE_BYTES)
        );
        assert_eq!(
            upload_limit("/api/v1/formulations/3/traces"),
            Some(MAX_TRACE_BYTES)
        );
        for path in ["/runs", "/runs/4", "/api/v1/runs", "/api/v1/runs/4/data"] {
            assert!(
                upload_limit(path).is_some_and(|l| l > MAX_RUN_FILE_BYTES),
                "{path}"
            );
        }
        for path in [
            "/formulations",
            "/runs/4/adopt",
            "/runs/4/edit",
            "/api/v1/runs/4/original",
        ] {
            assert_eq!(upload_limit(path), None, "{path}");
        }
    }
}
