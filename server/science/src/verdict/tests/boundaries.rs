//! Table-driven boundaries of every check, and properties that must hold.

use super::*;
use crate::dryer::CapabilityPoint;
use crate::drying::tests::sucrose_5_percent;
use crate::drying::DryingBase;
use proptest::prelude::*;

#[test]
fn every_secondary_drying_boundary_is_where_it_is_stated() {
    // Table: (ramp °C/min, shelf °C, hold min, cake Tg, crystalline) → state. Ramp limits
    // 0.15 amorphous / 0.4 crystalline (from memory), fail beyond twice (no source); holds
    // 3–6 h (from memory); cake Tg margin 5 °C (no source); shelf above 60 °C watched.
    let cases = [
        (0.15, 40.0, 360.0, None, false, CheckState::Ok),
        (0.16, 40.0, 360.0, None, false, CheckState::Watch),
        (0.30, 40.0, 360.0, None, false, CheckState::Watch),
        (0.31, 40.0, 360.0, None, false, CheckState::Fails),
        (0.40, 40.0, 360.0, None, true, CheckState::Ok),
        (0.81, 40.0, 360.0, None, true, CheckState::Fails),
        (0.10, 40.0, 179.0, None, false, CheckState::Watch),
        (0.10, 40.0, 181.0, None, false, CheckState::Ok),
        (0.10, 40.0, 0.0, None, false, CheckState::Fails),
        (0.10, 61.0, 360.0, None, false, CheckState::Watch),
        (0.10, 40.0, 360.0, Some(46.0), false, CheckState::Ok),
        (0.10, 40.0, 360.0, Some(44.0), false, CheckState::Watch),
        (0.10, 40.0, 360.0, Some(40.0), false, CheckState::Fails),
    ];
    for (ramp, shelf, hold, cake, crystalline, want) in cases {
        let mut c = cycle(-35.0, 60.0, 140.0 * 60.0);
        c.secondary.ramp_c_per_min = ramp;
        c.secondary.shelf_temp_c = shelf;
        c.secondary.hold_min = hold;
        let f = FormulationFacts {
            dried_cake_tg_c: cake,
            crystalline,
            ..sucrose_facts()
        };
        let got = state_of(&verdict(&c, &f), CheckTopic::SecondaryDrying);
        assert_eq!(
            got, want,
            "ramp {ramp}, shelf {shelf}, hold {hold}, cake {cake:?}"
        );
    }
}

#[test]
fn every_product_temperature_boundary_is_where_it_is_stated() {
    // ok ≥ 1 °C below, watch within 1 °C (common practice, no source), fails above.
    let c = cycle(-35.0, 60.0, 140.0 * 60.0);
    let b = assess(&c, &sucrose_facts(), &Load::default())
        .batch
        .unwrap();
    let peak = b
        .warmest_by(|c| c.peak_front_temp_c)
        .unwrap()
        .peak_front_temp_c;
    for (offset, want) in [
        (1.01, CheckState::Ok),
        (0.99, CheckState::Watch),
        (0.01, CheckState::Watch),
        (-0.01, CheckState::Fails),
    ] {
        let f = FormulationFacts {
            max_product_temp_c: Some(peak + offset),
            ..sucrose_facts()
        };
        let v = verdict(&c, &f);
        assert_eq!(
            state_of(&v, CheckTopic::ProductTemperature),
            want,
            "offset {offset}"
        );
    }
    let v = verdict(&c, &FormulationFacts::default());
    assert_eq!(
        state_of(&v, CheckTopic::ProductTemperature),
        CheckState::Watch
    );
}

/// The load's peak sublimation rate for `c` with `n` vials, kg/h.
pub(super) fn peak_kg_h(c: &CycleProgram, n: f64) -> f64 {
    let load = Load {
        vial_count: Some(n),
        ..Load::default()
    };
    assess(c, &sucrose_facts(), &load)
        .batch
        .unwrap()
        .peak_sublimation_kg_h
        .unwrap()
}

#[test]
fn every_equipment_boundary_is_where_it_is_stated() {
    // Capacity use above 80 % watched (common practice, no source), above 100 % fails.
    let c = cycle(-35.0, 100.0, 140.0 * 60.0);
    let peak = peak_kg_h(&c, 1000.0);
    for (capability, want) in [
        (peak / 0.79, CheckState::Ok),
        (peak / 0.81, CheckState::Watch),
        (peak / 1.01, CheckState::Fails),
    ] {
        let dryer = Dryer {
            shelf_area_m2: 1.0,
            min_pressure_mtorr: Some(20.0),
            condenser_capacity_kg: Some(100.0),
            capability: Some(vec![CapabilityPoint {
                pressure_mtorr: 100.0,
                max_sublimation_kg_h: capability,
            }]),
            edge_heat_factor: None,
        };
        let load = Load {
            dryer: Some(dryer),
            vial_count: Some(1000.0),
            ..Load::default()
        };
        let v = assess(&c, &sucrose_facts(), &load).verdict;
        assert_eq!(
            state_of(&v, CheckTopic::Equipment),
            want,
            "capability {capability}"
        );
    }
    // Ice: 1000 vials × 3.8 g = 3.8 kg against the condenser's capacity.
    for (capacity, want) in [
        (3.8 / 0.79, CheckState::Ok),
        (3.8 / 0.81, CheckState::Watch),
        (3.8 / 1.01, CheckState::Fails),
    ] {
        let mut dryer = lab_dryer();
        dryer.capability = Some(vec![CapabilityPoint {
            pressure_mtorr: 100.0,
            max_sublimation_kg_h: 100.0,
        }]);
        dryer.condenser_capacity_kg = Some(capacity);
        let load = Load {
            dryer: Some(dryer),
            vial_count: Some(1000.0),
            ..Load::default()
        };
        let v = assess(&c, &sucrose_facts(), &load).verdict;
        assert_eq!(
            state_of(&v, CheckTopic::Equipment),
            want,
            "condenser {capacity}"
        );
    }
    // A set pressure below the lowest controllable fails.
    let mut dryer = lab_dryer();
    dryer.min_pressure_mtorr = Some(101.0);
    let load = Load {
        dryer: Some(dryer),
        vial_count: Some(10.0),
        ..Load::default()
    };
    let v = assess(&c, &sucrose_facts(), &load).verdict;
    assert_eq!(state_of(&v, CheckTopic::Equipment), CheckState::Fails);
    assert!(message_of(&v, CheckTopic::Equipment).contains("below the 101 mTorr"));
}

#[test]
fn a_choked_cycle_fails_at_low_pressure_and_passes_at_a_higher_one() {
    // Choked flow: the capability rises about linearly with pressure (Patel, Chaudhary &
    // Pikal 2010, from memory); the load's rate hardly rises at the same shelf temperature,
    // so a cycle that chokes at low pressure fits at a higher one.
    let low = cycle(-25.0, 50.0, 140.0 * 60.0);
    let high = cycle(-25.0, 150.0, 140.0 * 60.0);
    let n = 2000.0;
    let (r_low, r_high) = (peak_kg_h(&low, n), peak_kg_h(&high, n));
    // A capability line through the origin with the load's low-pressure rate at 75 mTorr.
    let slope = r_low / 75.0;
    let dryer = Dryer {
        shelf_area_m2: 2.0,
        min_pressure_mtorr: None,
        condenser_capacity_kg: None,
        capability: Some(vec![
            CapabilityPoint {
                pressure_mtorr: 10.0,
                max_sublimation_kg_h: 10.0 * slope,
            },
            CapabilityPoint {
                pressure_mtorr: 300.0,
                max_sublimation_kg_h: 300.0 * slope,
            },
        ]),
        edge_heat_factor: None,
    };
    assert!(r_high < 150.0 * slope * 0.8, "{r_high} kg/h at 150 mTorr");
    let load = Load {
        dryer: Some(dryer),
        vial_count: Some(n),
        ..Load::default()
    };
    let v = assess(&low, &FormulationFacts::default(), &load).verdict;
    assert_eq!(state_of(&v, CheckTopic::Equipment), CheckState::Fails);
    let v = assess(&high, &FormulationFacts::default(), &load).verdict;
    assert_eq!(state_of(&v, CheckTopic::Equipment), CheckState::Ok);
}

fn base_with(pc_kv: f64) -> DryingBase {
    let mut b = sucrose_5_percent();
    b.vial.kc_cal_s_cm2_k *= pc_kv;
    b
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(24))]

    #[test]
    fn a_hotter_shelf_never_makes_the_product_temperature_better(
        shelf in -40.0f64..-5.0, step in 0.5f64..8.0, limit in -40.0f64..-15.0,
        kind in prop::bool::ANY,
    ) {
        let facts = FormulationFacts {
            max_product_temp_c: Some(limit),
            limit_kind: if kind { LimitKind::Eutectic } else { LimitKind::Collapse },
            ..FormulationFacts::default()
        };
        let opts = VerdictOptions::default();
        let load = Load::default();
        let base = base_with(1.0);
        let cool = assess_cycle(&cycle(shelf, 80.0, 6000.0), &facts, &base, &load, &opts).unwrap();
        let warm = assess_cycle(&cycle(shelf + step, 80.0, 6000.0), &facts, &base, &load, &opts)
            .unwrap();
        let (a, b) = (
            state_of(&cool.verdict, CheckTopic::ProductTemperature),
            state_of(&warm.verdict, CheckTopic::ProductTemperature),
        );
        // A shelf too cold to dry leaves the temperature unjudged (watch); skip that case.
        if cool.stop.is_none() {
            prop_assert!(b >= a, "{a:?} at {shelf} °C, {b:?} at {} °C", shelf + step);
        }
    }

    #[test]
    fn more_vials_never_make_the_equipment_better(n in 10.0f64..5000.0, more in 1.0f64..4.0) {
        let c = cycle(-25.0, 100.0, 140.0 * 60.0);
        let state = |count: f64| {
            let load = Load { dryer: Some(lab_dryer()), vial_count: Some(count), ..Load::default() };
            state_of(&assess(&c, &sucrose_facts(), &load).verdict, CheckTopic::Equipment)
        };
        prop_assert!(state(n * more) >= state(n));
    }
}
