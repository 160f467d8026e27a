//! Pages, in-process against the real router and database.

use axum::http::StatusCode;

use crate::on_both_backends;

on_both_backends! {
    /// Every page of the demo renders.
    async fn every_page_renders(app) {
        app.load_demo().await;
        let formulations = app
            .store
            .search_formulations(&Default::default(), Default::default(), 1, 200)
            .await
            .unwrap();
        assert!(formulations.total >= 8, "demo has at least 8 formulations");
        let mut paths: Vec<String> = vec![
            "/formulations".into(), "/formulations/new".into(), "/materials".into(), "/materials/new".into(),
            "/containers".into(), "/containers/new".into(), "/measurements".into(),
        ];
        for f in &formulations.items {
            paths.push(format!("/formulations/{}", f.id));
            paths.push(format!("/formulations/{}/edit", f.id));
            paths.push(format!("/formulations/{}/measurements/new", f.id));
        }
        for m in app.store.list_materials().await.unwrap() {
            paths.push(format!("/materials/{}", m.id));
            paths.push(format!("/materials/{}/edit", m.id));
        }
        for c in app.store.list_containers().await.unwrap() {
            paths.push(format!("/containers/{}/edit", c.id));
        }
        for p in paths {
            let r = app.get(&p).await;
            assert_eq!(r.status, StatusCode::OK, "{p}: {}", r.body);
            assert!(r.body.contains("<main>"), "{p} renders the page layout");
        }
    }
}

on_both_backends! {
    async fn a_new_formulation_shows_its_composition_on_solid_basis(app) {
        let sucrose = app.material_id("Sucrose").await.to_string();
        let trehalose = app.material_id("Trehalose").await.to_string();
        let r = app
            .post_form(
                "/formulations",
                &[("code", "T-100"), ("name", "Sugar blend"), ("project", "Screen"), ("status", "draft"),
                  ("c0_material", &sucrose), ("c0_concentration", "30"), ("c0_unit", "mg/mL"),
                  ("c1_material", &trehalose), ("c1_concentration", "1"), ("c1_unit", "% w/v")],
            )
            .await;
        assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        let detail = app.get(r.location.as_deref().unwrap()).await;
        assert_eq!(detail.status, StatusCode::OK);
        // 30 mg/mL sucrose + 1 % w/v (10 mg/mL) trehalose: 75 % and 25 % of 40 mg/mL solids.
        assert!(detail.body.contains("75.0 %"), "sucrose share shown");
        assert!(detail.body.contains("25.0 %"), "trehalose share shown");
        assert!(detail.body.contains("40.0 mg/mL"), "solids content shown");
    }
}

on_both_backends! {
    async fn a_bad_concentration_re_renders_the_form_with_what_was_typed(app) {
        let sucrose = app.material_id("Sucrose").await.to_string();
        let r = app
            .post_form(
                "/formulations",
                &[("code", "T-200"), ("name", "Typed name kept"), ("c0_material", &sucrose), ("c0_concentration", "-5")],
            )
            .await;
        assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert!(r.body.contains("Typed name kept"), "the typed name is kept");
        assert!(r.body.contains("value=\"-5\""), "the typed concentration is kept");
        assert!(r.body.contains("must be greater than zero"), "the row says why");
        assert_eq!(app.store.formulation_id_by_code("T-200").await.unwrap(), None, "nothing saved");
    }
}

on_both_backends! {
    async fn a_duplicate_code_and_an_unknown_material_are_form_errors(app) {
        let sucrose = app.material_id("Sucrose").await.to_string();
        let first = app.post_form("/formulations", &[("code", "DUP-1"), ("name", "one"), ("c0_material", &sucrose), ("c0_concentration", "50")]).await;
        assert_eq!(first.status, StatusCode::SEE_OTHER);
        let again = app.post_form("/formulations", &[("code", "dup-1"), ("name", "two")]).await;
        assert_eq!(again.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert!(again.body.contains("another formulation already uses this code"));
        let unknown = app.post_form("/formulations", &[("code", "NEW-2"), ("name", "x"), ("c0_material", "99999"), ("c0_concentration", "5")]).await;
        assert_eq!(unknown.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert!(unknown.body.contains("unknown material"));
    }
}

on_both_backends! {
    async fn measurements_are_added_validated_and_summarised(app) {
        let sucrose = app.material_id("Sucrose").await.to_string();
        let r = app.post_form("/formulations", &[("code", "M-1"), ("name", "x"), ("c0_material", &sucrose), ("c0_concentration", "50")]).await;
        let detail_path = r.location.unwrap();
        let id = detail_path.rsplit('/').next().unwrap().to_string();
        let bad = app
            .post_form(&format!("/formulations/{id}/measurements"),
                &[("kind", "tg_prime"), ("value_c", "-33.0"), ("method", "dsc"), ("analyst", "R. Quill"), ("measured_on", "14/09/2026")])
            .await;
        assert_eq!(bad.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert!(bad.body.contains("write it as YYYY-MM-DD"));
        assert!(bad.body.contains("R. Quill"), "the analyst typed is kept");
        let hot = app
            .post_form(&format!("/formulations/{id}/measurements"),
                &[("kind", "tg_prime"), ("value_c", "45"), ("method", "dsc"), ("analyst", "R. Quill"), ("measured_on", "2026-09-14")])
            .await;
        assert_eq!(hot.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert!(hot.body.contains("outside the plausible range"));
        for (value, rep) in [("-33.0", "1"), ("-32.0", "2"), ("-31.0", "3")] {
            let ok = app
                .post_form(&format!("/formulations/{id}/measurements"),
                    &[("kind", "tg_prime"), ("value_c", value), ("method", "dsc"), ("heating_rate_c_min", "10"),
                      ("analyst", "R. Quill"), ("measured_on", "2026-09-14"), ("replicate", rep)])
                .await;
            assert_eq!(ok.status, StatusCode::SEE_OTHER, "{}", ok.body);
        }
        let page = app.get(&detail_path).await;
        // Mean −32.0, SD 1.00, range −33.0 to −31.0.
        assert!(page.body.contains("−32.0"), "mean shown");
        assert!(page.body.contains("1.00"), "SD shown");
        assert!(page.body.contains("−33.0 to −31.0"), "range shown");
    }
}

on_both_backends! {
    async fn search_filters_and_archive(app) {
        app.load_demo().await;
        let all = app.get("/formulations").await;
        assert!(all.body.contains("LV-001"));
        let trehalose = app.get("/formulations?q=trehalose").await;
        assert!(trehalose.body.contains("Trehalose"), "material search finds trehalose formulations");
        assert!(!trehalose.body.contains(">LV-006<"), "mannitol/sucrose is not listed for trehalose");
        let id = app.store.formulation_id_by_code("LV-001").await.unwrap().unwrap();
        let archived = app.post_form(&format!("/formulations/{id}/archive"), &[]).await;
        assert_eq!(archived.status, StatusCode::SEE_OTHER);
        let after = app.get("/formulations").await;
        assert!(!after.body.contains(">LV-001<"), "archived formulations leave the default list");
        let shown = app.get("/formulations?status=archived").await;
        assert!(shown.body.contains(">LV-001<"), "and can be listed on purpose");
        assert_eq!(app.get(&format!("/formulations/{id}")).await.status, StatusCode::OK, "nothing is deleted");
    }
}

on_both_backends! {
    async fn an_edit_from_a_stale_page_is_refused_and_keeps_the_input(app) {
        let sucrose = app.material_id("Sucrose").await.to_string();
        let r = app.post_form("/formulations", &[("code", "V-1"), ("name", "first"), ("c0_material", &sucrose), ("c0_concentration", "50")]).await;
        let path = r.location.unwrap();
        let ok = app.post_form(&path, &[("version", "1"), ("code", "V-1"), ("name", "second"), ("c0_material", &sucrose), ("c0_concentration", "50")]).await;
        assert_eq!(ok.status, StatusCode::SEE_OTHER);
        let stale = app.post_form(&path, &[("version", "1"), ("code", "V-1"), ("name", "third"), ("c0_material", &sucrose), ("c0_concentration", "50")]).await;
        assert_eq!(stale.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert!(stale.body.contains("was changed by admin"), "the message says who changed it");
        assert!(stale.body.contains("changed: name"), "and what changed");
        assert!(stale.body.contains("third"), "the user's edit is still in the form");
        assert!(app.get(&path).await.body.contains("second"), "the other edit stands");
    }
}

on_both_backends! {
    async fn materials_and_containers_validate_their_fields(app) {
        let no_source = app.post_form("/materials", &[("name", "Novel sugar"), ("role", "lyoprotectant"), ("freezing_behaviour", "amorphous"), ("tg_prime_c_value", "-30")]).await;
        assert_eq!(no_source.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert!(no_source.body.contains("a value needs its source"));
        assert!(no_source.body.contains("Novel sugar"));
        let ok = app.post_form("/materials", &[("name", "Novel sugar"), ("role", "lyoprotectant"), ("freezing_behaviour", "amorphous"),
            ("tg_prime_c_value", "-30"), ("tg_prime_c_citation", "In-house DSC, notebook 12 p. 4"), ("tg_prime_c_source", "in_house")]).await;
        assert_eq!(ok.status, StatusCode::SEE_OTHER, "{}", ok.body);
        let shown = app.get(ok.location.as_deref().unwrap()).await;
        assert!(shown.body.contains("In-house DSC, notebook 12 p. 4"));
        let vial = app.post_form("/containers", &[("name", "Odd vial"), ("kind", "tubing"), ("nominal_ml", "10"),
            ("inner_area_cm2", "5"), ("outer_area_cm2", "4"), ("kc_cal_s_cm2_k", "2.6e-4"), ("kp_cal_s_cm2_k_torr", "1.8e-3"),
            ("kd_per_torr", "1.5"), ("kv_source", "own")]).await;
        assert_eq!(vial.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert!(vial.body.contains("cannot exceed the outer area"));
    }
}

#[tokio::test]
async fn unknown_records_and_pages_answer_404_pages() {
    let app = crate::helpers::TestApp::sqlite().await;
    for p in [
        "/formulations/4242",
        "/materials/4242",
        "/measurements/4242/edit",
        "/containers/4242/edit",
        "/no-such-page",
    ] {
        let r = app.get(p).await;
        assert_eq!(r.status, StatusCode::NOT_FOUND, "{p}");
        assert!(r.body.contains("Not found"), "{p} shows the error page");
    }
    let r = app.get("/formulations/not-a-number").await;
    assert!(
        r.status.is_client_error(),
        "a malformed id is a client error"
    );
    app.cleanup().await;
}

#[tokio::test]
async fn an_oversized_body_is_refused() {
    let app = crate::helpers::TestApp::sqlite().await;
    let big = "x".repeat(2 * 1024 * 1024);
    let r = app
        .post_form("/formulations", &[("code", "BIG"), ("name", &big)])
        .await;
    assert_eq!(r.status, StatusCode::PAYLOAD_TOO_LARGE);
    assert_eq!(app.store.formulation_id_by_code("BIG").await.unwrap(), None);
    app.cleanup().await;
}

on_both_backends! {
    async fn formulations_compare_side_by_side(app) {
        app.load_demo().await;
        let a = app.store.formulation_id_by_code("LV-001").await.unwrap().unwrap();
        let b = app.store.formulation_id_by_code("LV-006").await.unwrap().unwrap();
        let r = app.get(&format!("/formulations/compare?id={a}&id={b}")).await;
        assert_eq!(r.status, StatusCode::OK);
        assert!(r.body.contains("LV-001") && r.body.contains("LV-006"));
        assert!(r.body.contains("Maximum product temperature"));
        assert!(r.body.contains("Anneal: crystallize the bulking agent"), "LV-006's advice is in its column");
        let one = app.get(&format!("/formulations/compare?id={a}")).await;
        assert!(one.body.contains("tick at least two formulations"));
        let list = app.get("/formulations").await;
        assert!(list.body.contains("action=\"/formulations/compare\""), "the list offers the comparison");
    }
}

#[tokio::test]
async fn a_form_posted_from_another_site_is_refused() {
    let app = crate::helpers::TestApp::sqlite().await;
    let request = axum::http::Request::post("/formulations")
        .header("content-type", "application/x-www-form-urlencoded")
        .header("sec-fetch-site", "cross-site")
        .body(axum::body::Body::from("code=EVIL-1&name=x"))
        .unwrap();
    let r = app.request(request).await;
    assert_eq!(r.status, StatusCode::FORBIDDEN);
    assert_eq!(
        app.store.formulation_id_by_code("EVIL-1").await.unwrap(),
        None
    );
    let same_site = axum::http::Request::post("/formulations")
        .header("content-type", "application/x-www-form-urlencoded")
        .header("sec-fetch-site", "same-origin")
        .body(axum::body::Body::from("code=OK-1&name=x"))
        .unwrap();
    assert_eq!(app.request(same_site).await.status, StatusCode::SEE_OTHER);
    app.cleanup().await;
}
