//! Every error answer in one shape, whoever produced it: responses from layers and from
//! axum itself (a body over the limit, a refused cross-site post, a timeout, a method the
//! route does not take, a panic) arrive here with an empty or plain-text body and leave
//! as JSON `{error, field}` under `/api/v1` or as the HTML error page elsewhere.

use axum::extract::{Request, State};
use axum::http::{header, StatusCode};
use axum::middleware::Next;
use axum::response::{IntoResponse, Response};

use crate::error::ApiError;
use crate::AppError;

/// Whether `path` belongs to the JSON API.
pub fn is_api(path: &str) -> bool {
    path == "/api/v1" || path.starts_with("/api/v1/")
}

/// Middleware: reshapes error responses that are not yet in the app's shape. The state is
/// the body limit in bytes, named in the answer to an over-large body.
pub async fn shape_errors(State(body_limit): State<usize>, req: Request, next: Next) -> Response {
    let path = req.uri().path().to_string();
    let response = next.run(req).await;
    let status = response.status();
    if !(status.is_client_error() || status.is_server_error()) || path == "/healthz" {
        return response;
    }
    let api = is_api(&path);
    let content_type = response
        .headers()
        .get(header::CONTENT_TYPE)
        .and_then(|v| v.to_str().ok())
        .unwrap_or("")
        .to_ascii_lowercase();
    let shaped = if api {
        content_type.starts_with("application/json")
    } else {
        content_type.starts_with("text/html")
    };
    if shaped {
        return response;
    }
    let error = refusal_for(status, super::body_limit_for(&path, body_limit));
    let mut out = if api {
        ApiError(error).into_response()
    } else {
        error.into_response()
    };
    if let Some(allow) = response.headers().get(header::ALLOW) {
        out.headers_mut().insert(header::ALLOW, allow.clone());
    }
    out
}

/// What an error answer with no body of its own says.
fn refusal_for(status: StatusCode, body_limit: usize) -> AppError {
    let (field, message) = match status {
        StatusCode::BAD_REQUEST => (None, "This request could not be read.".to_string()),
        StatusCode::FORBIDDEN => (
            None,
            "This request was refused: it was sent from another site. Send forms from Glasspoint's own pages.".to_string(),
        ),
        StatusCode::NOT_FOUND => (None, "This address was not found.".to_string()),
        StatusCode::METHOD_NOT_ALLOWED => (
            None,
            "This address does not accept that method.".to_string(),
        ),
        StatusCode::REQUEST_TIMEOUT => (
            None,
            "The request took too long and was stopped.".to_string(),
        ),
        StatusCode::PAYLOAD_TOO_LARGE => (
            Some("body"),
            format!("the request body is larger than the limit of {body_limit} bytes"),
        ),
        StatusCode::UNSUPPORTED_MEDIA_TYPE => (
            Some("body"),
            "this content type is not accepted here".to_string(),
        ),
        s if s.is_server_error() => (
            None,
            "Something went wrong on our side. The details were logged.".to_string(),
        ),
        s => (
            None,
            s.canonical_reason()
                .unwrap_or("This request was refused.")
                .to_string(),
        ),
    };
    AppError::refused(status, field, message)
}
