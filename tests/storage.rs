//! Migrations, the shipped library and the demo scenario, on both backends.

use crate::on_both_backends;
use glasspoint::domain::PropertyKind;

on_both_backends! {
    async fn the_shipped_library_has_its_citations(app) {
        let materials = app.store.list_materials().await.unwrap();
        assert!(materials.len() >= 15, "at least 15 excipients ship");
        for m in &materials {
            for p in &m.properties {
                assert!(!p.citation.trim().is_empty(), "{} {:?} has a citation", m.name, p.kind);
            }
        }
        let sucrose = materials.iter().find(|m| m.name == "Sucrose").unwrap();
        // literature: sucrose Tg′ about −32 °C (higher transition), from memory.
        let tg = sucrose.value(PropertyKind::TgPrime).unwrap();
        assert!((-35.0..=-31.0).contains(&tg), "sucrose Tg′ {tg}");
        let nacl = materials.iter().find(|m| m.name == "Sodium chloride").unwrap();
        // Drebushchak et al. (2017), Thermochim. Acta 647:94: NaCl–water eutectic −21.1 to −21.2 °C.
        let te = nacl.value(PropertyKind::Te).unwrap();
        assert!((-21.3..=-21.0).contains(&te), "NaCl Te {te}");
        let vials = app.store.list_containers().await.unwrap();
        assert!(vials.len() >= 2 && vials.iter().all(|v| v.typical_values), "typical vials are marked as such");
    }
}

on_both_backends! {
    async fn migrating_twice_and_seeding_the_demo_twice_adds_nothing_more(app) {
        app.store.migrate().await.unwrap();
        let before = app.store.list_materials().await.unwrap().len();
        let first = app.store.seed_demo().await.unwrap();
        assert!(first.formulations >= 8 && first.measurements >= 40, "{first:?}");
        let second = app.store.seed_demo().await.unwrap();
        assert!(second.new_users.is_empty() && second.existing_users.len() == 3, "{second:?}");
        assert_eq!(
            (second.materials, second.formulations, second.measurements, second.cycles),
            (0, 0, 0, 0),
            "a second load adds nothing"
        );
        app.store.migrate().await.unwrap();
        let after = app.store.list_materials().await.unwrap().len();
        assert_eq!(after, before + first.materials, "the library is installed once");
    }
}

on_both_backends! {
    async fn the_library_holds_sucrose_s_unfrozen_water_with_its_source(app) {
        // Sucrose's maximally freeze-concentrated solution holds about 0.2–0.25 g water per g
        // (Roos 1993; Ablett, Izzard & Lillford 1992; from memory).
        let sucrose = app.store.get_material(app.material_id("Sucrose").await).await.unwrap();
        let wg = sucrose.value(PropertyKind::UnfrozenWater).expect("Wg′ of sucrose");
        assert!((0.2..=0.25).contains(&wg), "{wg}");
        let p = sucrose.properties.iter().find(|p| p.kind == PropertyKind::UnfrozenWater).unwrap();
        assert!(p.citation.contains("Roos (1993)"), "the value names its source");
    }
}
