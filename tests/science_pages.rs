//! Derived limits and advice on the formulation page, and the calculators page.

use axum::http::StatusCode;

use crate::on_both_backends;

on_both_backends! {
    async fn the_formulation_page_shows_estimate_limit_and_advice_with_their_reasoning(app) {
        app.load_demo().await;
        let id = app.store.formulation_id_by_code("LV-001").await.unwrap().unwrap();
        let page = app.get(&format!("/formulations/{id}")).await;
        assert_eq!(page.status, StatusCode::OK);
        let body = page.body;
        assert!(body.contains("Tg′ estimate from the composition"));
        assert!(body.contains("measured minus estimate"), "estimate and measurement are compared");
        assert!(body.contains("measured collapse onset"), "collapse onset governs when measured");
        // Demo LV-001: mean collapse onset −30.9 °C, default margin 2 °C → −32.9 °C.
        assert!(body.contains("−32.9 °C"), "the maximum allowable product temperature");
        assert!(body.contains("do not replace experimental confirmation"), "the caution is shown");
        assert!(body.contains("ice-ripening"), "all-amorphous: optional ice-ripening anneal");

        let wider = app.get(&format!("/formulations/{id}?margin_c=3")).await.body;
        assert!(wider.contains("−33.9 °C"), "a wider margin lowers the limit");
        let bad = app.get(&format!("/formulations/{id}?margin_c=abc")).await.body;
        assert!(bad.contains("margin_c: “abc” is not a number"));

        let mannitol = app.store.formulation_id_by_code("LV-006").await.unwrap().unwrap();
        let body = app.get(&format!("/formulations/{mannitol}")).await.body;
        assert!(body.contains("Anneal: crystallize the bulking agent"));
        assert!(body.contains("Use the Te-governed alternative for cycle checks"));
        let chosen = app.post_form(&format!("/formulations/{mannitol}/limit-basis"), &[("basis", "crystalline")]).await;
        assert_eq!(chosen.status, StatusCode::SEE_OTHER);
        let body = app.get(&format!("/formulations/{mannitol}")).await.body;
        assert!(body.contains("the Te-governed alternative"));
        let wrong = app.post_form(&format!("/formulations/{mannitol}/limit-basis"), &[("basis", "melted")]).await;
        assert_eq!(wrong.status, StatusCode::UNPROCESSABLE_ENTITY);
    }
}

on_both_backends! {
    async fn the_calculators_estimate_without_saving_and_name_wrong_fields(app) {
        app.load_demo().await;
        let sucrose = app.material_id("Sucrose").await.to_string();
        let trehalose = app.material_id("Trehalose").await.to_string();
        let before = app.store.list_materials().await.unwrap().len();
        let q = format!("/calculators?mode=tg_prime&method=fox&r0_material={sucrose}&r0_fraction=1&r1_material={trehalose}&r1_fraction=1");
        let page = app.get(&q).await;
        assert_eq!(page.status, StatusCode::OK);
        assert!(page.body.contains("Tg′ of the mixture"), "{}", page.body);
        assert!(page.body.contains("scaled to 1"), "unnormalised shares are said to be scaled");
        assert!(page.body.contains("/calculators/mixture.svg?"), "the chart is offered");
        let svg = app.get(&q.replace("/calculators?", "/calculators/mixture.svg?")).await;
        assert_eq!(svg.status, StatusCode::OK);
        assert!(svg.body.starts_with("<svg") && svg.body.contains("our measured Tg′"), "measured points are overlaid");

        let bad = app.get(&format!("/calculators?r0_material={sucrose}&r0_fraction=-1")).await;
        assert!(bad.body.contains("r0_fraction"), "the wrong row is named");

        let cake = app.get(&format!("/calculators?cake_material={sucrose}&storage_temp_c=25&margin_c=20")).await;
        assert!(cake.body.contains("Keep residual water below"), "{}", cake.body);
        let cake_svg = app.get(&format!("/calculators/cake.svg?cake_material={sucrose}&storage_temp_c=25&margin_c=20")).await;
        assert!(cake_svg.body.contains("storage 25 °C"), "the storage line is drawn");
        let too_warm = app.get(&format!("/calculators?cake_material={sucrose}&storage_temp_c=60&margin_c=20")).await;
        assert!(too_warm.body.contains("field-error"), "an impossible target is refused");
        assert_eq!(app.store.list_materials().await.unwrap().len(), before, "nothing saved");
    }
}

on_both_backends! {
    async fn a_fitted_k_is_kept_as_an_in_house_property_linked_to_its_measurements(app) {
        app.load_demo().await;
        let sucrose = app.material_id("Sucrose").await;
        let trehalose = app.material_id("Trehalose").await;
        let page = app.get(&format!("/calculators?fit_a={sucrose}&fit_b={trehalose}")).await;
        assert!(page.body.contains("Gordon–Taylor k of Trehalose relative to Sucrose"), "{}", page.body);
        let saved = app.post_form("/calculators/fit/save", &[("fit_a", &sucrose.to_string()), ("fit_b", &trehalose.to_string())]).await;
        assert_eq!(saved.status, StatusCode::SEE_OTHER);
        let m = app.store.get_material(trehalose).await.unwrap();
        let p = m.property(glasspoint::domain::PropertyKind::TgPrimeBlendK).expect("saved");
        assert_eq!(p.source_kind, glasspoint::domain::SourceKind::InHouse);
        assert!(p.measurement_ids.len() >= 6, "linked to the blends' measurements: {:?}", p.measurement_ids);
        assert!(p.value > 0.0);
        let glucose = app.material_id("Glucose").await;
        let none = app.get(&format!("/calculators?fit_a={glucose}&fit_b={trehalose}")).await;
        assert!(none.body.contains("needs at least two measured blends"));
    }
}

#[tokio::test]
async fn the_team_margin_sets_the_limit_that_cycle_checks_use() {
    let app = crate::helpers::TestApp::sqlite().await.with_margin(4.0);
    app.load_demo().await;
    let id = app
        .store
        .formulation_id_by_code("LV-001")
        .await
        .unwrap()
        .unwrap();
    let body = app.get(&format!("/formulations/{id}")).await.body;
    // Demo LV-001: mean collapse onset −30.9 °C; team margin 4 °C → −34.9 °C.
    assert!(
        body.contains("−34.9 °C"),
        "the team margin applies by default"
    );
    assert!(body.contains("team margin of 4 °C"));
    let cycle = app
        .store
        .cycle_id_by_name("Larchvale platform A")
        .await
        .unwrap()
        .unwrap();
    let link = app
        .store
        .links_of_cycle(cycle)
        .await
        .unwrap()
        .into_iter()
        .find(|l| l.formulation_code == "LV-001")
        .unwrap();
    let svg = app
        .get(&format!(
            "/cycles/{cycle}/links/{}/temperatures.svg",
            link.id
        ))
        .await
        .body;
    assert!(
        svg.contains("limit −34.9 °C"),
        "cycle checks use the team margin"
    );
    app.cleanup().await;
}

on_both_backends! {
    async fn an_estimate_that_may_be_too_warm_says_so_beside_its_value(app) {
        // Sodium chloride crystallizes and has no Tg′ in the library (Te −21.1 °C:
        // Drebushchak et al. 2017): left amorphous as a minority it would lower Tg′ by an
        // amount the estimate cannot know.
        let sucrose = app.material_id("Sucrose").await;
        let salt = app.material_id("Sodium chloride").await;
        let r = app.post_json("/api/v1/formulations", &serde_json::json!({
            "code": "WARM-1", "name": "Sucrose with a little salt",
            "components": [{"material_id": sucrose, "concentration": 50.0, "unit": "mg/mL"},
                           {"material_id": salt, "concentration": 2.0, "unit": "mg/mL"}]
        })).await;
        assert_eq!(r.status, StatusCode::CREATED, "{}", r.body);
        let id = r.json()["id"].as_i64().unwrap();
        let page = app.get(&format!("/formulations/{id}")).await.body;
        assert!(page.contains("may be too warm: a component that may stay amorphous has no"), "the flag is shown beside the value, not only in the reasoning");
    }
}

on_both_backends! {
    async fn a_minority_salt_s_eutectic_lowers_the_limit_below_a_warmer_collapse_onset(app) {
        // Any crystallizing component's Te bounds the limit, whatever its share: NaCl–water
        // eutectic −21.1 °C (Drebushchak et al. 2017, Thermochim. Acta 647:94, as shipped in
        // the library) lies below a measured collapse onset of −18 °C, so the limit is
        // −21.1 − 2 (the default margin) = −23.1 °C, not −18 − 2 = −20.0 °C.
        let sucrose = app.material_id("Sucrose").await;
        let salt = app.material_id("Sodium chloride").await;
        let r = app.post_json("/api/v1/formulations", &serde_json::json!({
            "code": "TE-1", "name": "Sucrose with saline",
            "components": [{"material_id": sucrose, "concentration": 50.0, "unit": "mg/mL"},
                           {"material_id": salt, "concentration": 9.0, "unit": "mg/mL"}]
        })).await;
        assert_eq!(r.status, StatusCode::CREATED, "{}", r.body);
        let id = r.json()["id"].as_i64().unwrap();
        let m = app.post_json("/api/v1/measurements", &serde_json::json!({
            "formulation_id": id, "kind": "tc_onset", "value_c": -18.0, "method": "fdm",
            "analyst": "Test analyst", "measured_on": "2026-11-30"
        })).await;
        assert_eq!(m.status, StatusCode::CREATED, "{}", m.body);
        let page = app.get(&format!("/formulations/{id}")).await.body;
        assert!(page.contains("−23.1 °C"), "the limit follows the salt's eutectic: {page}");
        assert!(!page.contains("<p class=\"big\">−20.0 °C</p>"), "not the collapse onset minus the margin");
    }
}
