//! The host check: only the host names this server is meant to answer to get through.

use axum::body::Body;
use axum::http::{header, Request, StatusCode};
use glasspoint::config::allowed_hosts_for;
use glasspoint::Config;

use crate::helpers::{Reply, TestApp};
use crate::on_both_backends;

async fn get_as(app: &TestApp, host: &str, path: &str) -> Reply {
    app.request(
        Request::get(path)
            .header(header::HOST, host)
            .body(Body::empty())
            .unwrap(),
    )
    .await
}

on_both_backends! {
    async fn local_names_with_any_port_are_served_by_default(app) {
        for host in ["localhost", "localhost:8080", "127.0.0.1:3000", "[::1]:8080", "LOCALHOST:1"] {
            let r = get_as(&app, host, "/formulations").await;
            assert_eq!(r.status, StatusCode::OK, "{host}");
        }
        let no_host = app.get("/formulations").await;
        assert_eq!(no_host.status, StatusCode::OK, "a request without a host passes");
    }
}

on_both_backends! {
    async fn another_host_name_is_refused_with_a_clear_message(app) {
        for host in ["rebound.example", "rebound.example:8080", "localhost.rebound.example", "10.0.0.7:8080"] {
            let page = get_as(&app, host, "/formulations").await;
            assert_eq!(page.status, StatusCode::MISDIRECTED_REQUEST, "{host}");
            assert_eq!(page.content_type(), "text/html");
            assert!(page.body.contains("--allowed-host"), "{}", page.body);
            let api = get_as(&app, host, "/api/v1/formulations").await;
            assert_eq!(api.status, StatusCode::MISDIRECTED_REQUEST, "{host}");
            assert_eq!(api.json()["field"], "host");
        }
        let post = app.request(Request::post("/api/v1/formulations").header(header::HOST, "rebound.example")
            .header(header::CONTENT_TYPE, "application/json").body(Body::from(r#"{"code":"H-1","name":"h"}"#)).unwrap()).await;
        assert_eq!(post.status, StatusCode::MISDIRECTED_REQUEST);
        assert!(app.store.formulation_id_by_code("H-1").await.unwrap().is_none(), "nothing was written");
    }
}

#[tokio::test]
async fn an_added_host_name_is_served_alongside_the_defaults() {
    let app = TestApp::sqlite().await.with_config(|c| {
        c.bind = "0.0.0.0:8080".parse().unwrap();
        c.allowed_hosts = allowed_hosts_for(
            c.bind,
            &["Lab-Server.example:8443".into(), "192.168.1.20".into()],
        );
    });
    for host in [
        "lab-server.example:8080",
        "192.168.1.20:8080",
        "localhost:8080",
        "0.0.0.0:8080",
    ] {
        assert_eq!(
            get_as(&app, host, "/formulations").await.status,
            StatusCode::OK,
            "{host}"
        );
    }
    assert_eq!(
        get_as(&app, "other.example", "/formulations").await.status,
        StatusCode::MISDIRECTED_REQUEST
    );
    app.cleanup().await;
}

#[test]
fn binding_to_all_interfaces_warns_with_the_allowed_names_and_how_to_add_one() {
    let mut config = Config::for_database("sqlite://x.db");
    assert_eq!(
        config.bind_warning(),
        None,
        "the default loopback bind needs no warning"
    );
    config.bind = "0.0.0.0:8080".parse().unwrap();
    config.allowed_hosts = allowed_hosts_for(config.bind, &["lab.example".into()]);
    let warning = config.bind_warning().expect("a warning");
    for part in [
        "localhost",
        "127.0.0.1",
        "[::1]",
        "lab.example",
        "--allowed-host",
        "GLASSPOINT_ALLOWED_HOSTS",
    ] {
        assert!(warning.contains(part), "{part} in {warning}");
    }
    config.bind = "[::]:8080".parse().unwrap();
    assert!(config.bind_warning().is_some());
}

#[test]
fn the_default_allowed_hosts_are_the_bind_host_and_the_loopback_names() {
    let hosts = allowed_hosts_for("192.168.1.5:8080".parse().unwrap(), &[]);
    assert_eq!(hosts, ["localhost", "127.0.0.1", "[::1]", "192.168.1.5"]);
    let v6 = allowed_hosts_for("[fe80::1]:8080".parse().unwrap(), &[]);
    assert!(v6.contains(&"[fe80::1]".to_string()));
}
