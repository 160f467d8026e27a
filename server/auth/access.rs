//! The one table of who may use which route: every route the router serves has a rule
//! here, checked on the server for every request (pages only hide what a role cannot do).
//! A route without a rule is refused to everyone, and a test that reads the router's
//! source fails the suite until the rule is added.

use crate::domain::Role;

/// The least a request needs.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Access {
    /// Anyone, signed in or not.
    Public,
    /// A signed-in user (or token) with at least this role.
    Least(Role),
}

#[derive(Debug, Clone, Copy)]
pub struct Rule {
    pub method: &'static str,
    pub path: &'static str,
    pub access: Access,
}

const fn rule(method: &'static str, path: &'static str, access: Access) -> Rule {
    Rule {
        method,
        path,
        access,
    }
}

use Access::{Least, Public};
use Role::{Admin, Reader, Reviewer, Scientist};

pub const RULES: &[Rule] = &[
    // Open to anyone.
    rule("GET", "/healthz", Public),
    rule("GET", "/static/{*path}", Public),
    rule("GET", "/login", Public),
    rule("POST", "/login", Public),
    rule("POST", "/logout", Least(Reader)),
    rule("GET", "/", Least(Reader)),
    // Formulations.
    rule("GET", "/formulations", Least(Reader)),
    rule("POST", "/formulations", Least(Scientist)),
    rule("GET", "/formulations/new", Least(Scientist)),
    rule("GET", "/formulations/compare", Least(Reader)),
    rule("GET", "/formulations/{id}", Least(Reader)),
    rule("POST", "/formulations/{id}", Least(Scientist)),
    rule("GET", "/formulations/{id}/edit", Least(Scientist)),
    rule("POST", "/formulations/{id}/archive", Least(Scientist)),
    rule("POST", "/formulations/{id}/restore", Least(Scientist)),
    rule("GET", "/formulations/{id}/resistance", Least(Scientist)),
    rule("POST", "/formulations/{id}/resistance", Least(Scientist)),
    rule("POST", "/formulations/{id}/limit-basis", Least(Scientist)),
    // Measurements.
    rule("GET", "/measurements", Least(Reader)),
    rule("POST", "/formulations/{id}/measurements", Least(Scientist)),
    rule(
        "GET",
        "/formulations/{id}/measurements/new",
        Least(Scientist),
    ),
    rule("POST", "/measurements/{id}", Least(Scientist)),
    rule("GET", "/measurements/{id}/edit", Least(Scientist)),
    // DSC traces.
    rule("GET", "/formulations/{id}/traces/new", Least(Scientist)),
    rule("POST", "/formulations/{id}/traces", Least(Scientist)),
    rule("GET", "/traces/{id}", Least(Reader)),
    rule("GET", "/traces/{id}/chart.svg", Least(Reader)),
    rule("GET", "/traces/{id}/original", Least(Reader)),
    rule("POST", "/traces/{id}/measurements", Least(Scientist)),
    // Runs.
    rule("GET", "/runs", Least(Reader)),
    rule("POST", "/runs", Least(Scientist)),
    rule("GET", "/runs/new", Least(Scientist)),
    rule("GET", "/runs/{id}", Least(Reader)),
    rule("POST", "/runs/{id}", Least(Scientist)),
    rule("GET", "/runs/{id}/edit", Least(Scientist)),
    rule("GET", "/runs/{id}/chart.svg", Least(Reader)),
    rule("GET", "/runs/{id}/pressures.svg", Least(Reader)),
    rule("GET", "/runs/{id}/original", Least(Reader)),
    rule("POST", "/runs/{id}/adopt", Least(Reviewer)),
    // Materials and containers.
    rule("GET", "/materials", Least(Reader)),
    rule("POST", "/materials", Least(Scientist)),
    rule("GET", "/materials/new", Least(Scientist)),
    rule("GET", "/materials/{id}", Least(Reader)),
    rule("POST", "/materials/{id}", Least(Scientist)),
    rule("GET", "/materials/{id}/edit", Least(Scientist)),
    rule("GET", "/containers", Least(Reader)),
    rule("POST", "/containers", Least(Scientist)),
    rule("GET", "/containers/new", Least(Scientist)),
    rule("POST", "/containers/{id}", Least(Scientist)),
    rule("GET", "/containers/{id}/edit", Least(Scientist)),
    // Dryers.
    rule("GET", "/dryers", Least(Reader)),
    rule("POST", "/dryers", Least(Scientist)),
    rule("GET", "/dryers/new", Least(Scientist)),
    rule("GET", "/dryers/{id}", Least(Reader)),
    rule("POST", "/dryers/{id}", Least(Scientist)),
    rule("GET", "/dryers/{id}/edit", Least(Scientist)),
    // Cycles.
    rule("GET", "/cycles", Least(Reader)),
    rule("POST", "/cycles", Least(Scientist)),
    rule("GET", "/cycles/new", Least(Scientist)),
    rule("GET", "/cycles/{id}", Least(Reader)),
    rule("POST", "/cycles/{id}", Least(Scientist)),
    rule("GET", "/cycles/{id}/edit", Least(Scientist)),
    rule("POST", "/cycles/{id}/copy", Least(Scientist)),
    rule("POST", "/cycles/{id}/archive", Least(Scientist)),
    rule("POST", "/cycles/{id}/restore", Least(Scientist)),
    rule("POST", "/cycles/{id}/links", Least(Scientist)),
    rule("GET", "/cycles/{id}/links/{link}", Least(Reader)),
    rule("POST", "/cycles/{id}/links/{link}/remove", Least(Scientist)),
    rule(
        "POST",
        "/cycles/{id}/links/{link}/suggest",
        Least(Scientist),
    ),
    rule(
        "GET",
        "/cycles/{id}/links/{link}/design-space",
        Least(Reader),
    ),
    rule(
        "GET",
        "/cycles/{id}/links/{link}/temperatures.svg",
        Least(Reader),
    ),
    rule("GET", "/cycles/{id}/links/{link}/layer.svg", Least(Reader)),
    rule("GET", "/cycles/{id}/links/{link}/rate.svg", Least(Reader)),
    rule("GET", "/cycles/{id}/links/{link}/gauges.svg", Least(Reader)),
    rule(
        "GET",
        "/cycles/{id}/links/{link}/design-space.svg",
        Least(Reader),
    ),
    // Calculators.
    rule("GET", "/calculators", Least(Reader)),
    rule("GET", "/calculators/mixture.svg", Least(Reader)),
    rule("GET", "/calculators/cake.svg", Least(Reader)),
    rule("GET", "/calculators/fit.svg", Least(Reader)),
    rule("POST", "/calculators/fit/save", Least(Scientist)),
    // History, signatures, review and the audit trail.
    rule("GET", "/records/{entity}/{id}/history", Least(Reader)),
    rule(
        "GET",
        "/records/{entity}/{id}/versions/{version}",
        Least(Reader),
    ),
    rule("GET", "/records/{entity}/{id}/diff", Least(Reader)),
    rule("GET", "/records/{entity}/{id}/sign", Least(Reviewer)),
    rule("POST", "/records/{entity}/{id}/sign", Least(Reviewer)),
    rule("GET", "/review", Least(Reviewer)),
    rule("GET", "/audit", Least(Reviewer)),
    rule("GET", "/audit.csv", Least(Reviewer)),
    // Administration.
    rule("GET", "/admin/users", Least(Admin)),
    rule("POST", "/admin/users", Least(Admin)),
    rule("POST", "/admin/users/{id}", Least(Admin)),
    rule("POST", "/admin/users/{id}/password", Least(Admin)),
    rule("POST", "/admin/users/{id}/tokens", Least(Admin)),
    rule("POST", "/admin/tokens/{id}/revoke", Least(Admin)),
    rule("GET", "/admin/settings", Least(Admin)),
    rule("POST", "/admin/settings", Least(Admin)),
    rule("GET", "/admin/audit-check", Least(Admin)),
    // The JSON API.
    rule("GET", "/api/v1/openapi.json", Least(Reader)),
    rule("GET", "/api/v1/formulations", Least(Reader)),
    rule("POST", "/api/v1/formulations", Least(Scientist)),
    rule("GET", "/api/v1/formulations/{id}", Least(Reader)),
    rule("PUT", "/api/v1/formulations/{id}", Least(Scientist)),
    rule("GET", "/api/v1/materials", Least(Reader)),
    rule("POST", "/api/v1/materials", Least(Scientist)),
    rule("GET", "/api/v1/materials/{id}", Least(Reader)),
    rule("PUT", "/api/v1/materials/{id}", Least(Scientist)),
    rule("POST", "/api/v1/formulations/{id}/traces", Least(Scientist)),
    rule("GET", "/api/v1/traces/{id}", Least(Reader)),
    rule("GET", "/api/v1/traces/{id}/original", Least(Reader)),
    rule("GET", "/api/v1/runs", Least(Reader)),
    rule("POST", "/api/v1/runs", Least(Scientist)),
    rule("GET", "/api/v1/runs/{id}", Least(Reader)),
    rule("PUT", "/api/v1/runs/{id}", Least(Scientist)),
    rule("POST", "/api/v1/runs/{id}/data", Least(Scientist)),
    rule("GET", "/api/v1/runs/{id}/original", Least(Reader)),
    rule("GET", "/api/v1/measurements", Least(Reader)),
    rule("POST", "/api/v1/measurements", Least(Scientist)),
    rule("GET", "/api/v1/measurements/{id}", Least(Reader)),
    rule("PUT", "/api/v1/measurements/{id}", Least(Scientist)),
    rule("GET", "/api/v1/containers", Least(Reader)),
    rule("POST", "/api/v1/containers", Least(Scientist)),
    rule("GET", "/api/v1/containers/{id}", Least(Reader)),
    rule("PUT", "/api/v1/containers/{id}", Least(Scientist)),
    rule("GET", "/api/v1/dryers", Least(Reader)),
    rule("POST", "/api/v1/dryers", Least(Scientist)),
    rule("GET", "/api/v1/dryers/{id}", Least(Reader)),
    rule("PUT", "/api/v1/dryers/{id}", Least(Scientist)),
    rule("GET", "/api/v1/cycles", Least(Reader)),
    rule("POST", "/api/v1/cycles", Least(Scientist)),
    rule("GET", "/api/v1/cycles/{id}", Least(Reader)),
    rule("PUT", "/api/v1/cycles/{id}", Least(Scientist)),
    rule("POST", "/api/v1/cycles/{id}/links", Least(Scientist)),
    rule("POST", "/api/v1/calc/{topic}", Least(Reader)),
    rule("GET", "/api/v1/audit", Least(Reviewer)),
];

/// The rule of a matched route (HEAD follows GET).
pub fn rule_for(method: &str, matched_path: &str) -> Option<Access> {
    let method = if method == "HEAD" { "GET" } else { method };
    RULES
        .iter()
        .find(|r| r.method == method && r.path == matched_path)
        .map(|r| r.access)
}

/// The methods a route path has rules for (for a 405's `Allow`).
pub fn methods_for(matched_path: &str) -> Vec<&'static str> {
    RULES
        .iter()
        .filter(|r| r.path == matched_path)
        .map(|r| r.method)
        .collect()
}
