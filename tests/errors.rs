//! One error shape: every API error is JSON `{error, field}` with the right status, every
//! page error is the HTML error page, and every response carries the security headers,
//! whichever part of the stack answered.

use axum::body::Body;
use axum::http::{header, Request, StatusCode};

use crate::helpers::Reply;
use crate::on_both_backends;

/// A request for the table below.
fn req(method: &str, path: &str) -> axum::http::request::Builder {
    Request::builder().method(method).uri(path)
}

fn oversized() -> Vec<u8> {
    let mut body = b"{\"code\": \"BIG\", \"name\": \"".to_vec();
    body.extend(std::iter::repeat_n(b'x', 300 * 1024));
    body.extend(b"\"}");
    body
}

fn assert_security_headers(r: &Reply, what: &str) {
    let get = |h: header::HeaderName| {
        r.headers
            .get(&h)
            .and_then(|v| v.to_str().ok())
            .unwrap_or_else(|| panic!("{what}: no {h} header"))
            .to_string()
    };
    let csp = get(header::CONTENT_SECURITY_POLICY);
    assert!(csp.contains("frame-ancestors 'none'"), "{what}: {csp}");
    assert!(!csp.contains("unsafe-inline"), "{what}: {csp}");
    assert_eq!(get(header::X_FRAME_OPTIONS), "DENY", "{what}");
    assert_eq!(get(header::X_CONTENT_TYPE_OPTIONS), "nosniff", "{what}");
    assert_eq!(get(header::REFERRER_POLICY), "same-origin", "{what}");
}

/// (what, request, status, field named by the JSON answer)
fn api_cases() -> Vec<(
    &'static str,
    Request<Body>,
    StatusCode,
    Option<&'static str>,
)> {
    vec![
        (
            "a non-numeric record id",
            req("GET", "/api/v1/formulations/abc")
                .body(Body::empty())
                .unwrap(),
            StatusCode::BAD_REQUEST,
            Some("id"),
        ),
        (
            "a non-numeric cycle id",
            req("GET", "/api/v1/cycles/12x")
                .body(Body::empty())
                .unwrap(),
            StatusCode::BAD_REQUEST,
            Some("id"),
        ),
        (
            "a non-numeric page",
            req("GET", "/api/v1/measurements?page=NaN")
                .body(Body::empty())
                .unwrap(),
            StatusCode::BAD_REQUEST,
            Some("page"),
        ),
        (
            "a non-numeric per_page",
            req("GET", "/api/v1/formulations?per_page=lots")
                .body(Body::empty())
                .unwrap(),
            StatusCode::BAD_REQUEST,
            Some("per_page"),
        ),
        (
            "a query key given twice",
            req("GET", "/api/v1/measurements?page=1&page=2")
                .body(Body::empty())
                .unwrap(),
            StatusCode::BAD_REQUEST,
            Some("page"),
        ),
        (
            "an oversized body with its length announced",
            req("POST", "/api/v1/formulations")
                .header(header::CONTENT_TYPE, "application/json")
                .header(header::CONTENT_LENGTH, oversized().len())
                .body(Body::from(oversized()))
                .unwrap(),
            StatusCode::PAYLOAD_TOO_LARGE,
            Some("body"),
        ),
        (
            "an oversized body without its length announced",
            req("POST", "/api/v1/formulations")
                .header(header::CONTENT_TYPE, "application/json")
                .body(Body::from(oversized()))
                .unwrap(),
            StatusCode::PAYLOAD_TOO_LARGE,
            Some("body"),
        ),
        (
            "a form post from another site",
            req("POST", "/api/v1/formulations")
                .header(header::CONTENT_TYPE, "application/json")
                .header("sec-fetch-site", "cross-site")
                .body(Body::from("{}"))
                .unwrap(),
            StatusCode::FORBIDDEN,
            None,
        ),
        (
            "a method the route does not take",
            req("DELETE", "/api/v1/formulations")
                .body(Body::empty())
                .unwrap(),
            StatusCode::METHOD_NOT_ALLOWED,
            None,
        ),
        (
            "an unknown API route",
            req("GET", "/api/v1/nothing-here")
                .body(Body::empty())
                .unwrap(),
            StatusCode::NOT_FOUND,
            None,
        ),
        (
            "an unknown record",
            req("GET", "/api/v1/formulations/999999")
                .body(Body::empty())
                .unwrap(),
            StatusCode::NOT_FOUND,
            None,
        ),
        (
            "a host this server does not serve",
            req("GET", "/api/v1/formulations")
                .header(header::HOST, "rebound.example")
                .body(Body::empty())
                .unwrap(),
            StatusCode::MISDIRECTED_REQUEST,
            Some("host"),
        ),
    ]
}

/// (what, request, status)
fn page_cases() -> Vec<(&'static str, Request<Body>, StatusCode)> {
    let form = |body: Vec<u8>| {
        req("POST", "/formulations")
            .header(header::CONTENT_TYPE, "application/x-www-form-urlencoded")
            .body(Body::from(body))
    };
    vec![
        (
            "a non-numeric record id",
            req("GET", "/formulations/abc").body(Body::empty()).unwrap(),
            StatusCode::BAD_REQUEST,
        ),
        (
            "a non-numeric edit id",
            req("GET", "/cycles/abc/edit").body(Body::empty()).unwrap(),
            StatusCode::BAD_REQUEST,
        ),
        (
            "a non-numeric second id",
            req("GET", "/cycles/1/links/x").body(Body::empty()).unwrap(),
            StatusCode::BAD_REQUEST,
        ),
        (
            "a query key given twice",
            req("GET", "/formulations?q=a&q=b")
                .body(Body::empty())
                .unwrap(),
            StatusCode::BAD_REQUEST,
        ),
        (
            "a form key given twice",
            req("POST", "/containers")
                .header(header::CONTENT_TYPE, "application/x-www-form-urlencoded")
                .body(Body::from("name=a&name=b"))
                .unwrap(),
            StatusCode::BAD_REQUEST,
        ),
        (
            "a form sent as JSON",
            req("POST", "/containers")
                .header(header::CONTENT_TYPE, "application/json")
                .body(Body::from("{}"))
                .unwrap(),
            StatusCode::UNSUPPORTED_MEDIA_TYPE,
        ),
        (
            "an oversized form",
            form(oversized()).unwrap(),
            StatusCode::PAYLOAD_TOO_LARGE,
        ),
        (
            "a form post from another site",
            form(b"code=A".to_vec())
                .map(|mut r| {
                    r.headers_mut()
                        .insert("sec-fetch-site", "cross-site".parse().unwrap());
                    r
                })
                .unwrap(),
            StatusCode::FORBIDDEN,
        ),
        (
            "a method the route does not take",
            req("DELETE", "/formulations").body(Body::empty()).unwrap(),
            StatusCode::METHOD_NOT_ALLOWED,
        ),
        (
            "an unknown page",
            req("GET", "/nothing-here").body(Body::empty()).unwrap(),
            StatusCode::NOT_FOUND,
        ),
        (
            "an unknown static file",
            req("GET", "/static/nothing.css")
                .body(Body::empty())
                .unwrap(),
            StatusCode::NOT_FOUND,
        ),
        (
            "a host this server does not serve",
            req("GET", "/formulations")
                .header(header::HOST, "rebound.example:8080")
                .body(Body::empty())
                .unwrap(),
            StatusCode::MISDIRECTED_REQUEST,
        ),
    ]
}

on_both_backends! {
    async fn every_api_error_is_json_naming_the_field_with_the_right_status(app) {
        for (what, request, status, field) in api_cases() {
            let r = app.request(request).await;
            assert_eq!(r.status, status, "{what}: {}", r.body);
            assert_eq!(r.content_type(), "application/json", "{what}: {}", r.body);
            let body = r.json();
            assert!(body["error"].as_str().is_some_and(|e| !e.is_empty()), "{what}: {body}");
            assert_eq!(body["field"].as_str(), field, "{what}: {body}");
            assert_security_headers(&r, what);
        }
    }
}

on_both_backends! {
    async fn every_page_error_is_the_html_error_page_with_the_right_status(app) {
        for (what, request, status) in page_cases() {
            let r = app.request(request).await;
            assert_eq!(r.status, status, "{what}: {}", r.body);
            assert_eq!(r.content_type(), "text/html", "{what}: {}", r.body);
            assert!(r.body.contains("<h1>"), "{what}: the error page: {}", r.body);
            assert_security_headers(&r, what);
        }
    }
}

on_both_backends! {
    async fn a_bad_id_on_a_page_names_the_id_and_its_value(app) {
        let r = app.get("/formulations/abc").await;
        assert!(r.body.contains("id: “abc” is not a record number"), "{}", r.body);
    }
}

on_both_backends! {
    async fn successful_pages_api_answers_and_static_files_carry_the_security_headers(app) {
        for path in ["/formulations", "/formulations/new", "/api/v1/formulations", "/api/v1/openapi.json", "/static/glasspoint.css", "/healthz", "/"] {
            let r = app.get(path).await;
            assert!(r.status.is_success() || r.status.is_redirection(), "{path}: {}", r.status);
            assert_security_headers(&r, path);
        }
    }
}
