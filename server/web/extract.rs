//! Extractors whose every refusal answers in the app's own error shape, naming the part of
//! the request to blame: an HTML error page for pages ([`Path`], [`Query`], [`Form`]), and
//! JSON `{error, field}` for the API (the same extractors under `crate::api::extract`).
//! axum's own extractors answer such refusals in plain text.

use axum::extract::path::ErrorKind;
use axum::extract::rejection::PathRejection;
use axum::extract::{FromRequest, FromRequestParts, RawPathParams, Request};
use axum::http::request::Parts;
use axum::http::{header, StatusCode};
use serde::de::DeserializeOwned;

use crate::AppError;

/// Why a path could not be read, naming the path parameter.
pub async fn path_value<T, S>(parts: &mut Parts, state: &S) -> Result<T, AppError>
where
    T: DeserializeOwned + Send,
    S: Send + Sync,
{
    let names: Vec<String> = match RawPathParams::from_request_parts(parts, state).await {
        Ok(raw) => raw.iter().map(|(k, _)| k.to_string()).collect(),
        Err(_) => Vec::new(),
    };
    match axum::extract::Path::<T>::from_request_parts(parts, state).await {
        Ok(axum::extract::Path(v)) => Ok(v),
        Err(PathRejection::FailedToDeserializePathParams(e)) => {
            let (field, value, expected) = match e.kind() {
                ErrorKind::ParseErrorAtKey {
                    key,
                    value,
                    expected_type,
                } => (key.clone(), value.clone(), *expected_type),
                ErrorKind::ParseErrorAtIndex {
                    index,
                    value,
                    expected_type,
                } => (
                    names.get(*index).cloned().unwrap_or_else(|| "path".into()),
                    value.clone(),
                    *expected_type,
                ),
                ErrorKind::ParseError {
                    value,
                    expected_type,
                } => (
                    names.first().cloned().unwrap_or_else(|| "path".into()),
                    value.clone(),
                    *expected_type,
                ),
                ErrorKind::DeserializeError { key, value, .. } => (key.clone(), value.clone(), ""),
                ErrorKind::InvalidUtf8InPathParam { key } => {
                    return Err(AppError::refused(
                        StatusCode::BAD_REQUEST,
                        Some(key),
                        "is not valid UTF-8 text",
                    ))
                }
                _ => {
                    return Err(AppError::refused(
                        StatusCode::BAD_REQUEST,
                        Some("path"),
                        "this address could not be read",
                    ))
                }
            };
            let message = if matches!(expected, "i64" | "u64" | "i32" | "u32" | "usize") {
                format!("“{value}” is not a record number: it must be a whole number")
            } else {
                format!("“{value}” is not valid here")
            };
            Err(AppError::refused(
                StatusCode::BAD_REQUEST,
                Some(&field),
                message,
            ))
        }
        Err(e) => Err(AppError::Internal(format!("path: {e}"))),
    }
}

/// Deserializes urlencoded `pairs` (a query string or a form body), naming the field of
/// any complaint; `what` ("query" or "body") is blamed when no field is.
pub fn urlencoded_value<T: DeserializeOwned>(raw: &[u8], what: &str) -> Result<T, AppError> {
    let de = serde_urlencoded::Deserializer::new(form_urlencoded::parse(raw));
    serde_path_to_error::deserialize(de).map_err(|e| {
        let path = e.path().to_string();
        let inner = e.into_inner().to_string();
        if let Some(dup) = inner
            .strip_prefix("duplicate field `")
            .and_then(|r| r.strip_suffix('`'))
        {
            return AppError::refused(
                StatusCode::BAD_REQUEST,
                Some(dup),
                "is given more than once; send it once",
            );
        }
        if path.is_empty() || path == "." || path == "?" {
            return AppError::refused(
                StatusCode::BAD_REQUEST,
                Some(what),
                format!("could not be read: {inner}"),
            );
        }
        let value = form_urlencoded::parse(raw)
            .find(|(k, _)| *k == path)
            .map(|(_, v)| v.into_owned())
            .unwrap_or_default();
        AppError::refused(
            StatusCode::BAD_REQUEST,
            Some(&path),
            format!("“{value}” is not accepted: {inner}"),
        )
    })
}

/// The request body, refusing one over the limit with 413 naming `body`.
pub async fn body_bytes<S: Send + Sync>(
    req: Request,
    state: &S,
) -> Result<axum::body::Bytes, AppError> {
    axum::body::Bytes::from_request(req, state)
        .await
        .map_err(|e| {
            if e.status() == StatusCode::PAYLOAD_TOO_LARGE {
                too_large()
            } else {
                AppError::refused(
                    StatusCode::BAD_REQUEST,
                    Some("body"),
                    "the request body could not be read",
                )
            }
        })
}

/// The answer to a body over the limit.
pub fn too_large() -> AppError {
    AppError::refused(
        StatusCode::PAYLOAD_TOO_LARGE,
        Some("body"),
        "the request body is larger than this server accepts",
    )
}

/// A path parameter for pages; a value that does not parse answers an HTML 400 page.
pub struct Path<T>(pub T);

impl<T, S> FromRequestParts<S> for Path<T>
where
    T: DeserializeOwned + Send,
    S: Send + Sync,
{
    type Rejection = AppError;

    async fn from_request_parts(parts: &mut Parts, state: &S) -> Result<Self, Self::Rejection> {
        path_value(parts, state).await.map(Path)
    }
}

/// A query string for pages; a value that does not parse answers an HTML 400 page.
pub struct Query<T>(pub T);

impl<T, S> FromRequestParts<S> for Query<T>
where
    T: DeserializeOwned,
    S: Send + Sync,
{
    type Rejection = AppError;

    async fn from_request_parts(parts: &mut Parts, _: &S) -> Result<Self, Self::Rejection> {
        let raw = parts.uri.query().unwrap_or("");
        urlencoded_value(raw.as_bytes(), "query").map(Query)
    }
}

/// A urlencoded form body for pages.
pub struct Form<T>(pub T);

impl<T, S> FromRequest<S> for Form<T>
where
    T: DeserializeOwned,
    S: Send + Sync,
{
    type Rejection = AppError;

    async fn from_request(req: Request, state: &S) -> Result<Self, Self::Rejection> {
        let is_form = req
            .headers()
            .get(header::CONTENT_TYPE)
            .and_then(|v| v.to_str().ok())
            .is_some_and(|v| {
                v.split(';').next().is_some_and(|t| {
                    t.trim()
                        .eq_ignore_ascii_case("application/x-www-form-urlencoded")
                })
            });
        if !is_form {
            return Err(AppError::refused(
                StatusCode::UNSUPPORTED_MEDIA_TYPE,
                Some("body"),
                "a form must be sent as application/x-www-form-urlencoded",
            ));
        }
        let bytes = body_bytes(req, state).await?;
        urlencoded_value(&bytes, "body").map(Form)
    }
}
