//! Candidate cycles: forms, links, verdicts, charts, design space and suggestions.

use axum::http::StatusCode;

use crate::on_both_backends;

fn cycle_fields<'a>(name: &'a str, shelf: &'a str) -> Vec<(&'a str, &'a str)> {
    vec![
        ("name", name),
        ("pressure_unit", "mTorr"),
        ("freezing_ramp_c_per_min", "1"),
        ("freezing_hold_temp_c", "-45"),
        ("freezing_hold_h", "2"),
        ("primary_ramp_c_per_min", "0.5"),
        ("primary_shelf_temp_c", shelf),
        ("primary_chamber_pressure", "100"),
        ("primary_hold_h", "45"),
        ("secondary_ramp_c_per_min", "0.1"),
        ("secondary_shelf_temp_c", "40"),
        ("secondary_pressure", "100"),
        ("secondary_hold_h", "6"),
        ("condenser_temp_c", "-70"),
    ]
}

on_both_backends! {
    async fn a_cycle_is_created_linked_and_judged(app) {
        app.load_demo().await;
        let mut bad = cycle_fields("Trial X", "-25");
        bad.retain(|(k, _)| *k != "primary_hold_h");
        bad.push(("primary_hold_h", "forty"));
        let r = app.post_form("/cycles", &bad).await;
        assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert!(r.body.contains("“forty” is not a number"));
        assert!(r.body.contains("value=\"Trial X\""), "the typed name is kept");

        let r = app.post_form("/cycles", &cycle_fields("Trial X", "-28")).await;
        assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
        let path = r.location.unwrap();
        let fid = app.store.formulation_id_by_code("LV-001").await.unwrap().unwrap().to_string();
        let vial = app.store.list_containers().await.unwrap().into_iter().find(|c| c.name == "6R tubing vial").unwrap().id.to_string();
        let no_fill = app.post_form(&format!("{path}/links"), &[("formulation_id", &fid), ("container_id", &vial), ("fill_volume_ml", "-2")]).await;
        assert_eq!(no_fill.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert!(no_fill.body.contains("fill_volume_ml"));
        let linked = app.post_form(&format!("{path}/links"), &[("formulation_id", &fid), ("container_id", &vial), ("fill_volume_ml", "")]).await;
        assert_eq!(linked.status, StatusCode::SEE_OTHER, "a blank fill takes the formulation's own: {}", linked.body);
        let again = app.post_form(&format!("{path}/links"), &[("formulation_id", &fid), ("container_id", &vial), ("fill_volume_ml", "2")]).await;
        assert_eq!(again.status, StatusCode::UNPROCESSABLE_ENTITY, "the same link twice is refused");

        let cycle_page = app.get(&path).await.body;
        assert!(cycle_page.contains("LV-001"));
        assert!(cycle_page.contains("do not replace experimental confirmation"));
        let cycle_id: i64 = path.rsplit('/').next().unwrap().parse().unwrap();
        let link = app.store.links_of_cycle(cycle_id).await.unwrap().remove(0);
        let link_page = app.get(&format!("{path}/links/{}", link.id)).await;
        assert_eq!(link_page.status, StatusCode::OK);
        for check in ["Product temperature", "Primary drying time", "Freezing", "Secondary drying", "Condenser"] {
            assert!(link_page.body.contains(check), "{check} is checked");
        }
        assert!(link_page.body.contains("stated default"), "the default resistance is marked as such");
        for chart in ["temperatures.svg", "layer.svg", "rate.svg", "gauges.svg", "design-space.svg"] {
            let svg = app.get(&format!("{path}/links/{}/{chart}", link.id)).await;
            assert_eq!(svg.status, StatusCode::OK, "{chart}: {}", svg.body);
            assert!(svg.body.starts_with("<svg"), "{chart}");
        }
        let temps = app.get(&format!("{path}/links/{}/temperatures.svg", link.id)).await.body;
        assert!(temps.contains("limit −32.9 °C"), "the limit line is drawn");
        let formulation_page = app.get(&format!("/formulations/{fid}")).await.body;
        assert!(formulation_page.contains("Trial X"), "the formulation lists its cycles");
    }
}

on_both_backends! {
    async fn copy_archive_design_space_and_suggestion(app) {
        app.load_demo().await;
        let id = app.store.cycle_id_by_name("Larchvale platform A").await.unwrap().unwrap();
        let links = app.store.links_of_cycle(id).await.unwrap();
        assert!(!links.is_empty());
        let link = &links[0];

        let space = app.get(&format!("/cycles/{id}/links/{}/design-space?steps=12", link.id)).await;
        assert_eq!(space.status, StatusCode::OK);
        assert!(space.body.contains("Hottest shelf within the limit"));
        let bad_grid = app.get(&format!("/cycles/{id}/links/{}/design-space?steps=500", link.id)).await;
        assert!(bad_grid.body.contains("steps: must be a whole number from 2 to 60"));

        let before = app.store.list_cycles(false).await.unwrap().len();
        let adopted = app.post_form(&format!("/cycles/{id}/links/{}/suggest", link.id), &[("choice", "fastest")]).await;
        assert_eq!(adopted.status, StatusCode::SEE_OTHER, "{}", adopted.body);
        let new_path = adopted.location.unwrap();
        let new_id: i64 = new_path.rsplit('/').next().unwrap().parse().unwrap();
        assert_eq!(app.store.list_cycles(false).await.unwrap().len(), before + 1);
        let new_links = app.store.links_of_cycle(new_id).await.unwrap();
        assert_eq!(new_links.len(), 1, "the suggestion keeps the formulation, container and fill");
        let verdict_page = app.get(&format!("{new_path}/links/{}", new_links[0].id)).await.body;
        assert!(!verdict_page.contains(">fails<"), "the suggested cycle keeps the product within its limit");

        let copied = app.post_form(&format!("/cycles/{id}/copy"), &[]).await;
        assert_eq!(copied.status, StatusCode::SEE_OTHER);
        assert!(copied.location.unwrap().ends_with("/edit"));
        assert!(app.store.cycle_id_by_name("Larchvale platform A (copy)").await.unwrap().is_some());

        let archived = app.post_form(&format!("/cycles/{id}/archive"), &[]).await;
        assert_eq!(archived.status, StatusCode::SEE_OTHER);
        let list = app.get("/cycles").await.body;
        assert!(!list.contains(">Larchvale platform A<"), "archived cycles leave the list");
        assert!(app.get("/cycles?archived=1").await.body.contains(">Larchvale platform A<"));
    }
}

on_both_backends! {
    async fn a_measured_resistance_replaces_the_default(app) {
        app.load_demo().await;
        let fid = app.store.formulation_id_by_code("LV-002").await.unwrap().unwrap();
        let bad = app.post_form(&format!("/formulations/{fid}/resistance"), &[("r0_cm2_torr_h_g", "-1"), ("a1_cm_torr_h_g", "12"), ("a2_per_cm", "0"), ("source", "")]).await;
        assert_eq!(bad.status, StatusCode::UNPROCESSABLE_ENTITY);
        assert!(bad.body.contains("outside the plausible range") && bad.body.contains("is required"));
        let ok = app.post_form(&format!("/formulations/{fid}/resistance"), &[("r0_cm2_torr_h_g", "1.1"), ("a1_cm_torr_h_g", "12"), ("a2_per_cm", "0.5"), ("source", "Run LV-MTM-07, pressure-rise test")]).await;
        assert_eq!(ok.status, StatusCode::SEE_OTHER, "{}", ok.body);
        let page = app.get(&format!("/formulations/{fid}")).await.body;
        assert!(page.contains("Dry-layer resistance: measured"));
        let stale = app.post_form(&format!("/formulations/{fid}/resistance"), &[("r0_cm2_torr_h_g", "1.0"), ("a1_cm_torr_h_g", "12"), ("a2_per_cm", "0.5"), ("source", "late"), ("version", "0")]).await;
        assert_eq!(stale.status, StatusCode::UNPROCESSABLE_ENTITY, "an edit from a stale page is refused");
    }
}

#[tokio::test]
async fn the_shipped_vials_have_kv_in_the_reported_range_at_100_mtorr() {
    let app = crate::helpers::TestApp::sqlite().await;
    for c in app.store.list_containers().await.unwrap() {
        let p_torr = 0.1;
        let kv = c.kc_cal_s_cm2_k + c.kp_cal_s_cm2_k_torr * p_torr / (1.0 + c.kd_per_torr * p_torr);
        let kv_si = glasspoint_science::units::cal_s_cm2_k_to_w_m2_k(kv);
        // literature: typical tubing-vial Kv at 100 mTorr is 15–25 W/(m²·K) (from memory).
        assert!((15.0..=25.0).contains(&kv_si), "{}: {kv_si}", c.name);
    }
    app.cleanup().await;
}
