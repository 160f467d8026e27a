//! The host check: a request naming a host this server does not serve is refused (421),
//! so a web page elsewhere cannot reach the app through a DNS name it controls that
//! resolves to this machine (DNS rebinding). Requests without a host (in-process tests,
//! some health probes) pass.

use std::sync::Arc;

use axum::extract::{Request, State};
use axum::http::{header, StatusCode};
use axum::middleware::Next;
use axum::response::{IntoResponse, Response};

use crate::error::ApiError;
use crate::AppError;

/// The host names a request may address, without ports; `*` allows any.
#[derive(Clone, Debug)]
pub struct AllowedHosts(Arc<Vec<String>>);

impl AllowedHosts {
    pub fn new(names: &[String]) -> Self {
        let mut all: Vec<String> = names.iter().map(|n| host_name(n)).collect();
        all.retain(|n| !n.is_empty());
        all.dedup();
        AllowedHosts(Arc::new(all))
    }

    /// Whether `authority` (a Host header: name or address, optional port) is served here.
    pub fn allows(&self, authority: &str) -> bool {
        let name = host_name(authority);
        self.0.iter().any(|a| a == "*" || *a == name)
    }
}

/// The host name of an authority, lower case, without port or trailing dot:
/// `Example.COM.:8080` → `example.com`, `[::1]:8080` → `[::1]`.
pub fn host_name(authority: &str) -> String {
    let a = authority.trim();
    let name = if a.starts_with('[') {
        match a.find(']') {
            Some(end) => &a[..=end],
            None => a,
        }
    } else if a.matches(':').count() == 1 {
        a.split(':').next().unwrap_or(a)
    } else {
        a
    };
    name.trim_end_matches('.').to_ascii_lowercase()
}

/// Middleware: refuses a request whose `Host` is not allowed, with JSON `{error, field}`
/// under `/api/v1` and the HTML error page elsewhere.
pub async fn check_host(State(allowed): State<AllowedHosts>, req: Request, next: Next) -> Response {
    let host = req
        .headers()
        .get(header::HOST)
        .map(|v| String::from_utf8_lossy(v.as_bytes()).into_owned())
        .or_else(|| req.uri().authority().map(|a| a.to_string()));
    match host {
        Some(host) if !allowed.allows(&host) => {
            let shown: String = host_name(&host).chars().take(100).collect();
            let error = AppError::refused(
                StatusCode::MISDIRECTED_REQUEST,
                Some("host"),
                format!(
                    "this server does not answer to the host name “{shown}”; an administrator can allow it with --allowed-host {shown} (or GLASSPOINT_ALLOWED_HOSTS)"
                ),
            );
            if super::errors::is_api(req.uri().path()) {
                ApiError(error).into_response()
            } else {
                error.into_response()
            }
        }
        _ => next.run(req).await,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_host_is_compared_without_its_port_or_case() {
        let allowed =
            AllowedHosts::new(&["localhost".into(), "[::1]".into(), "Lab.Example:443".into()]);
        assert!(allowed.allows("localhost:8080"));
        assert!(allowed.allows("LOCALHOST"));
        assert!(allowed.allows("[::1]:9000"));
        assert!(allowed.allows("lab.example."));
        assert!(!allowed.allows("evil.example"));
        assert!(!allowed.allows("localhost.evil.example:8080"));
    }

    #[test]
    fn a_star_allows_every_host() {
        assert!(AllowedHosts::new(&["*".into()]).allows("anything.example"));
    }
}
