//! Configuration from flags and environment variables, with defaults that need no set-up.

use std::net::SocketAddr;

/// The SQLite file `serve` creates in the working directory when no database is given.
pub const DEFAULT_SQLITE_FILE: &str = "glasspoint.db";
pub const DEFAULT_BIND: &str = "127.0.0.1:8080";
/// Largest request body accepted anywhere, in bytes.
pub const DEFAULT_BODY_LIMIT: usize = 256 * 1024;

pub const DEFAULT_SESSION_IDLE_MIN: i64 = 120;
pub const DEFAULT_SESSION_ABSOLUTE_H: i64 = 12;

#[derive(Debug, Clone)]
pub struct Config {
    pub database_url: String,
    pub bind: SocketAddr,
    pub body_limit_bytes: usize,
    pub request_timeout_s: u64,
    /// The team's safety margin below the critical temperature, °C.
    pub margin_c: f64,
    /// Marks the session cookie `Secure`: set when the app is served over TLS (directly or
    /// behind a proxy that terminates it).
    pub secure_cookies: bool,
    /// A session nobody used for this long ends.
    pub session_idle_min: i64,
    /// Every session ends this long after sign-in.
    pub session_absolute_h: i64,
    /// Host names (without port) requests may address; others are refused. `*` allows
    /// any. See [`allowed_hosts_for`].
    pub allowed_hosts: Vec<String>,
}

impl Config {
    /// A configuration for `database_url` with every other setting at its default.
    pub fn for_database(database_url: impl Into<String>) -> Self {
        Self {
            database_url: database_url.into(),
            bind: DEFAULT_BIND.parse().expect("default bind address is valid"),
            body_limit_bytes: DEFAULT_BODY_LIMIT,
            request_timeout_s: 30,
            margin_c: glasspoint_science::limit::DEFAULT_MARGIN_C,
            secure_cookies: false,
            session_idle_min: DEFAULT_SESSION_IDLE_MIN,
            session_absolute_h: DEFAULT_SESSION_ABSOLUTE_H,
            allowed_hosts: allowed_hosts_for(
                DEFAULT_BIND.parse().expect("default bind address is valid"),
                &[],
            ),
        }
    }

    /// The start-up warning for a server listening on every interface: who it answers to
    /// and how to add a name.
    pub fn bind_warning(&self) -> Option<String> {
        if !self.bind.ip().is_unspecified() {
            return None;
        }
        Some(format!(
            "glasspoint: listening on all interfaces ({}), but answering only requests addressed to: {}. \
             To reach it under another name or address, add --allowed-host NAME (repeatable) or \
             GLASSPOINT_ALLOWED_HOSTS=name1,name2.",
            self.bind,
            self.allowed_hosts.join(", ")
        ))
    }
}

/// The host names a server bound to `bind` answers to: the bind address's host,
/// `localhost`, `127.0.0.1` and `[::1]` (any port), then each of `extra`.
pub fn allowed_hosts_for(bind: SocketAddr, extra: &[String]) -> Vec<String> {
    let own = match bind.ip() {
        std::net::IpAddr::V6(ip) => format!("[{ip}]"),
        ip => ip.to_string(),
    };
    let mut hosts = vec![
        "localhost".to_string(),
        "127.0.0.1".to_string(),
        "[::1]".to_string(),
    ];
    for name in std::iter::once(own).chain(extra.iter().map(|e| crate::web::host::host_name(e))) {
        if !name.is_empty() && !hosts.contains(&name) {
            hosts.push(name);
        }
    }
    hosts
}

/// The database URL to use: the flag, else `DATABASE_URL` (clap reads it), else a SQLite
/// file in the working directory.
pub fn database_url_or_default(given: Option<String>) -> String {
    given
        .filter(|s| !s.trim().is_empty())
        .unwrap_or_else(|| format!("sqlite://{DEFAULT_SQLITE_FILE}"))
}

impl Config {
    pub fn session_limits(&self) -> crate::storage::SessionLimits {
        crate::storage::SessionLimits {
            idle: time::Duration::minutes(self.session_idle_min),
            absolute: time::Duration::hours(self.session_absolute_h),
        }
    }
}
