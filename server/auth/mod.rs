//! Who is asking: users, their roles, and the secrets that prove it (password hashes,
//! session cookies, API tokens). Storage keeps the rows; this module keeps the rules.

pub mod access;
pub mod secrets;

use crate::domain::Role;
use crate::error::AppError;

/// The person (or the installer) a change is attributed to.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Actor {
    /// `None` for the installer and the demo loader's own bookkeeping.
    pub user_id: Option<i64>,
    pub username: String,
    pub full_name: String,
    pub role: Role,
    /// False for a read-scope API token: it reads whatever the role reads, writes nothing.
    pub can_write: bool,
}

impl Actor {
    /// The application itself, for what it installs (the shipped materials library).
    pub fn system() -> Actor {
        Actor {
            user_id: None,
            username: "glasspoint".into(),
            full_name: "Glasspoint installer".into(),
            role: Role::Admin,
            can_write: true,
        }
    }

    /// The role that counts for this request: a read token reads only.
    pub fn effective_role(&self) -> Role {
        if self.can_write {
            self.role
        } else {
            Role::Reader
        }
    }

    pub fn require(&self, least: Role) -> Result<(), AppError> {
        if self.effective_role().at_least(least) {
            Ok(())
        } else {
            Err(AppError::Forbidden(format!(
                "this needs the {} role or higher",
                least.label().to_lowercase()
            )))
        }
    }

    pub fn may_write(&self) -> Result<(), AppError> {
        if self.can_write {
            Ok(())
        } else {
            Err(AppError::Forbidden(
                "this API token may only read".to_string(),
            ))
        }
    }
}

/// Handlers name the signed-in person by taking an `Actor`; the access layer put it there.
impl<S: Send + Sync> axum::extract::FromRequestParts<S> for Actor {
    type Rejection = AppError;

    async fn from_request_parts(
        parts: &mut axum::http::request::Parts,
        _state: &S,
    ) -> Result<Self, Self::Rejection> {
        parts
            .extensions
            .get::<Actor>()
            .cloned()
            .ok_or(AppError::Unauthorized)
    }
}
