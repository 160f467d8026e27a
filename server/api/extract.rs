//! The API's path and query extractors: every refusal answers JSON `{error, field}` naming
//! the path parameter or query key to blame (axum's own answer in plain text).

use axum::extract::FromRequestParts;
use axum::http::request::Parts;
use serde::de::DeserializeOwned;

use crate::error::ApiError;
use crate::web::extract::{path_value, urlencoded_value};

/// A path parameter; a value that does not parse answers 400 naming the parameter.
pub struct Path<T>(pub T);

impl<T, S> FromRequestParts<S> for Path<T>
where
    T: DeserializeOwned + Send,
    S: Send + Sync,
{
    type Rejection = ApiError;

    async fn from_request_parts(parts: &mut Parts, state: &S) -> Result<Self, Self::Rejection> {
        Ok(Path(path_value(parts, state).await?))
    }
}

/// A query string; a value that does not parse, or a key given twice, answers 400 naming
/// the key.
pub struct Query<T>(pub T);

impl<T, S> FromRequestParts<S> for Query<T>
where
    T: DeserializeOwned,
    S: Send + Sync,
{
    type Rejection = ApiError;

    async fn from_request_parts(parts: &mut Parts, _: &S) -> Result<Self, Self::Rejection> {
        let raw = parts.uri.query().unwrap_or("");
        Ok(Query(urlencoded_value(raw.as_bytes(), "query")?))
    }
}
