//! The one application error. Pages render it as an HTML page, the API as
//! `{"error", "field"}`; internal details are logged and never shown.

use axum::http::StatusCode;
use axum::response::{IntoResponse, Response};

use crate::domain::{FieldError, FieldErrors};

#[derive(Debug, thiserror::Error)]
pub enum AppError {
    #[error("{0} not found")]
    NotFound(String),
    /// Nobody is signed in (pages send the browser to the sign-in page instead).
    #[error("sign-in required")]
    Unauthorized,
    /// Signed in, but the role or token scope does not allow this.
    #[error("forbidden: {0}")]
    Forbidden(String),
    /// Input that failed a check; the form or request names the field.
    #[error("{}: {}", .0.field, .0.message)]
    Input(FieldError),
    /// Several wrong fields at once (forms re-render all of them).
    #[error("invalid input")]
    Fields(FieldErrors),
    /// The record changed since the user opened it.
    #[error("{0}")]
    Conflict(String),
    #[error("database error: {0}")]
    Database(#[from] sqlx::Error),
    #[error("migration error: {0}")]
    Migrate(#[from] sqlx::migrate::MigrateError),
    #[error("internal error: {0}")]
    Internal(String),
    /// A request refused before it reached a handler's logic: an unreadable path, query or
    /// body, a body over the limit, a cross-site form post, a host name not served here.
    #[error("{message}")]
    Refused {
        status: StatusCode,
        field: Option<String>,
        message: String,
    },
}

impl AppError {
    pub fn input(field: impl Into<String>, message: impl Into<String>) -> Self {
        AppError::Input(FieldError::new(field, message))
    }

    /// A refused request: `status` with `message`, naming `field` when one is to blame.
    pub fn refused(status: StatusCode, field: Option<&str>, message: impl Into<String>) -> Self {
        AppError::Refused {
            status,
            field: field.map(str::to_string),
            message: message.into(),
        }
    }

    pub fn status(&self) -> StatusCode {
        match self {
            AppError::Refused { status, .. } => *status,
            AppError::NotFound(_) => StatusCode::NOT_FOUND,
            AppError::Unauthorized => StatusCode::UNAUTHORIZED,
            AppError::Forbidden(_) => StatusCode::FORBIDDEN,
            AppError::Input(_) | AppError::Fields(_) => StatusCode::UNPROCESSABLE_ENTITY,
            AppError::Conflict(_) => StatusCode::CONFLICT,
            _ => StatusCode::INTERNAL_SERVER_ERROR,
        }
    }

    /// What may be shown to a user: never the internals.
    pub fn public_message(&self) -> String {
        match self {
            AppError::NotFound(what) => format!("{what} was not found."),
            AppError::Input(e) => format!("{}: {}", e.field, e.message),
            AppError::Fields(all) => all
                .first()
                .map(|e| format!("{}: {}", e.field, e.message))
                .unwrap_or_else(|| "invalid input".into()),
            AppError::Conflict(msg) => msg.clone(),
            AppError::Unauthorized => {
                "Sign in first: send a session cookie or an API token (Authorization: Bearer …)."
                    .into()
            }
            AppError::Forbidden(why) => format!("Not allowed: {why}."),
            AppError::Refused {
                field: Some(field),
                message,
                ..
            } => format!("{field}: {message}"),
            AppError::Refused { message, .. } => message.clone(),
            _ => "Something went wrong on our side. The details were logged.".into(),
        }
    }

    /// The field to name in a JSON answer, when there is one.
    pub fn field(&self) -> Option<String> {
        match self {
            AppError::Input(e) => Some(e.field.clone()),
            AppError::Fields(all) => all.first().map(|e| e.field),
            AppError::Conflict(_) => Some("version".into()),
            AppError::Refused { field, .. } => field.clone(),
            _ => None,
        }
    }

    fn log(&self) {
        if self.status().is_server_error() {
            tracing::error!(error = %self, "request failed");
        }
    }
}

impl From<FieldErrors> for AppError {
    fn from(e: FieldErrors) -> Self {
        AppError::Fields(e)
    }
}

impl From<glasspoint_science::InputError> for AppError {
    fn from(e: glasspoint_science::InputError) -> Self {
        AppError::Input(e.into())
    }
}

/// Pages: a plain HTML error page.
impl IntoResponse for AppError {
    fn into_response(self) -> Response {
        self.log();
        let status = self.status();
        crate::web::error_page(status, &self.public_message())
    }
}

/// The API's error: the same errors as JSON `{"error", "field"}`.
#[derive(Debug)]
pub struct ApiError(pub AppError);

impl<E: Into<AppError>> From<E> for ApiError {
    fn from(e: E) -> Self {
        ApiError(e.into())
    }
}

impl IntoResponse for ApiError {
    fn into_response(self) -> Response {
        self.0.log();
        let status = self.0.status();
        let message = match &self.0 {
            AppError::Input(e) => e.message.clone(),
            AppError::Fields(all) => all.first().map(|e| e.message).unwrap_or_default(),
            AppError::Refused { message, .. } => message.clone(),
            other => other.public_message(),
        };
        let body = serde_json::json!({ "error": message, "field": self.0.field() });
        (status, axum::Json(body)).into_response()
    }
}
