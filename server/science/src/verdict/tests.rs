use super::*;
use crate::batch::VialClass;
use crate::dryer::CapabilityPoint;
use crate::drying::tests::sucrose_5_percent;
use crate::drying::{simulate_summary, DryingBase};
use crate::ice::vapour_pressure_pa;
use crate::units::{mtorr_to_pa, pa_to_mtorr};
use proptest::prelude::*;
use serde_json::json;

/// A conservative cycle for 5 % sucrose (Tg′ ≈ −32 °C, literature value from memory) with a
/// limit of −34 °C.
fn cycle(primary_shelf_c: f64, pc_mtorr: f64, primary_hold_min: f64) -> CycleProgram {
    CycleProgram {
        freezing: FreezingStep {
            ramp_c_per_min: 1.0,
            hold_temp_c: -45.0,
            hold_min: 120.0,
        },
        annealing: None,
        primary: PrimaryStep {
            ramp_c_per_min: 0.5,
            shelf_temp_c: primary_shelf_c,
            chamber_pressure_mtorr: pc_mtorr,
            hold_min: primary_hold_min,
        },
        secondary: SecondaryStep {
            ramp_c_per_min: 0.1,
            shelf_temp_c: 40.0,
            pressure_mtorr: pc_mtorr,
            hold_min: 360.0,
        },
        condenser_temp_c: Some(-70.0),
    }
}

fn sucrose_facts() -> FormulationFacts {
    FormulationFacts {
        max_product_temp_c: Some(-34.0),
        tg_prime_c: Some(-32.0),
        ..FormulationFacts::default()
    }
}

/// A laboratory dryer: 1 m² of shelf, control from 20 mTorr, 20 kg condenser, capability
/// rising with pressure (shape after Patel, Chaudhary & Pikal 2010, from memory; the
/// numbers are made up for the test), edge factor 1.3 (lab dryers 1.1–1.5, Rambhatla &
/// Pikal 2003, from memory).
fn lab_dryer() -> Dryer {
    Dryer {
        shelf_area_m2: 1.0,
        min_pressure_mtorr: Some(20.0),
        condenser_capacity_kg: Some(20.0),
        capability: Some(vec![
            CapabilityPoint {
                pressure_mtorr: 50.0,
                max_sublimation_kg_h: 0.5,
            },
            CapabilityPoint {
                pressure_mtorr: 200.0,
                max_sublimation_kg_h: 2.0,
            },
        ]),
        edge_heat_factor: Some(1.3),
    }
}

fn assess(c: &CycleProgram, f: &FormulationFacts, load: &Load) -> CycleAssessment {
    assess_cycle(c, f, &sucrose_5_percent(), load, &VerdictOptions::default()).unwrap()
}

fn verdict(c: &CycleProgram, f: &FormulationFacts) -> CycleVerdict {
    assess(c, f, &Load::default()).verdict
}

fn state_of(v: &CycleVerdict, topic: CheckTopic) -> CheckState {
    v.check(topic).map(|c| c.state).unwrap()
}

fn message_of(v: &CycleVerdict, topic: CheckTopic) -> String {
    v.check(topic).map(|c| c.message.clone()).unwrap()
}

/// The slowest class's predicted drying time for `c` (default load), h.
fn slowest_h(c: &CycleProgram) -> f64 {
    let a = assess(c, &sucrose_facts(), &Load::default());
    a.batch.unwrap().last_dry_h
}

/// A hold giving `total_h` of primary drying for `c`, ramp included.
fn with_total(mut c: CycleProgram, total_h: f64) -> CycleProgram {
    let ramp_h =
        (c.primary.shelf_temp_c - c.freezing.hold_temp_c).abs() / c.primary.ramp_c_per_min / 60.0;
    c.primary.hold_min = (total_h - ramp_h) * 60.0;
    c
}

#[test]
fn a_conservative_cycle_in_a_capable_dryer_passes_every_check() {
    let c = cycle(-35.0, 60.0, 0.0);
    let c = with_total(c.clone(), slowest_h(&c) * 1.3);
    let load = Load {
        dryer: Some(lab_dryer()),
        vial_count: Some(500.0),
        ..Load::default()
    };
    let v = assess(&c, &sucrose_facts(), &load).verdict;
    assert_eq!(v.overall, CheckState::Ok, "{v:#?}");
    assert_eq!(v.checks.len(), 7);
    assert!(v
        .caution
        .contains("do not replace experimental confirmation"));
}

#[test]
fn without_a_dryer_the_equipment_is_watched_and_says_it_was_not_checked() {
    let v = verdict(&cycle(-35.0, 60.0, 140.0 * 60.0), &sucrose_facts());
    assert_eq!(state_of(&v, CheckTopic::Equipment), CheckState::Watch);
    assert!(message_of(&v, CheckTopic::Equipment).contains("not checked"));
}

#[test]
fn a_zero_minute_secondary_hold_at_90_c_fails() {
    // The first case: no hold at all, at a shelf far above the 40–50 °C common
    // (from memory), was judged ok overall.
    let mut c = cycle(-35.0, 60.0, 140.0 * 60.0);
    c.secondary.shelf_temp_c = 90.0;
    c.secondary.hold_min = 0.0;
    let v = verdict(&c, &sucrose_facts());
    assert_eq!(state_of(&v, CheckTopic::SecondaryDrying), CheckState::Fails);
    assert_eq!(v.overall, CheckState::Fails);
    let m = message_of(&v, CheckTopic::SecondaryDrying);
    assert!(
        m.contains("no secondary-drying hold") && m.contains("40–50 °C"),
        "{m}"
    );
}

#[test]
fn a_minus_50_c_condenser_fails_at_a_20_mtorr_secondary_pressure() {
    // Ice at −50 °C: 3.94 Pa ≈ 29.6 mTorr by Murphy & Koop (2005) eq. 7 — above 20 mTorr.
    let p = pa_to_mtorr(vapour_pressure_pa(-50.0).unwrap());
    assert!((29.0..30.5).contains(&p), "{p} mTorr");
    let mut c = cycle(-35.0, 100.0, 140.0 * 60.0);
    c.condenser_temp_c = Some(-50.0);
    c.secondary.pressure_mtorr = 20.0;
    let v = verdict(&c, &sucrose_facts());
    assert_eq!(state_of(&v, CheckTopic::Condenser), CheckState::Fails);
    assert!(message_of(&v, CheckTopic::Condenser).contains("secondary"));
    // The same condenser against 100 mTorr throughout: about 30 %, watched.
    c.secondary.pressure_mtorr = 100.0;
    let v = verdict(&c, &sucrose_facts());
    assert_eq!(state_of(&v, CheckTopic::Condenser), CheckState::Watch);
}

#[test]
fn the_condenser_fails_at_half_the_lowest_chamber_pressure_and_is_watched_above_a_fifth() {
    // Thresholds 20 % and 50 % (common practice, no source); pressures by Murphy & Koop.
    let t_at = |share: f64, pc: f64| {
        let target = mtorr_to_pa(share * pc);
        crate::roots::brent(
            |t| vapour_pressure_pa(t).unwrap() - target,
            -100.0,
            -1.0,
            1e-9,
        )
        .unwrap()
        .x
    };
    let pc = 80.0;
    for (share, want) in [
        (0.19, CheckState::Ok),
        (0.21, CheckState::Watch),
        (0.49, CheckState::Watch),
        (0.51, CheckState::Fails),
    ] {
        let mut c = cycle(-35.0, pc, 140.0 * 60.0);
        c.condenser_temp_c = Some(t_at(share, pc));
        assert_eq!(
            state_of(&verdict(&c, &sucrose_facts()), CheckTopic::Condenser),
            want,
            "share {share}"
        );
    }
    let mut c = cycle(-35.0, pc, 140.0 * 60.0);
    c.condenser_temp_c = None;
    assert_eq!(
        state_of(&verdict(&c, &sucrose_facts()), CheckTopic::Condenser),
        CheckState::Watch
    );
}

#[test]
fn a_front_above_the_limit_fails_and_says_when_and_for_how_long() {
    let v = verdict(&cycle(-20.0, 100.0, 100.0 * 60.0), &sucrose_facts());
    assert_eq!(
        state_of(&v, CheckTopic::ProductTemperature),
        CheckState::Fails
    );
    let m = message_of(&v, CheckTopic::ProductTemperature);
    assert!(
        m.contains("first rises above") && m.contains("in all"),
        "{m}"
    );
}

#[test]
fn a_eutectic_limit_is_held_at_the_warmer_bottom_and_a_collapse_limit_at_the_front() {
    // The case: with a step-down shelf program the bottom peaks warmer than the
    // front (Pikal 1985 model: conduction across the thick early ice). Melting starts in the
    // warmest ice, collapse at the front.
    use crate::batch::{simulate_batch, BatchSpec};
    use crate::drying::{prepare, ShelfStep};
    let steps = vec![
        ShelfStep {
            ramp_c_per_min: 1.0,
            target_c: 0.0,
            hold_min: 240.0,
        },
        ShelfStep {
            ramp_c_per_min: 0.5,
            target_c: -30.0,
            hold_min: 6000.0,
        },
    ];
    let input = PrimaryDryingInput::programmed(&sucrose_5_percent(), steps, Some(-45.0), 80.0);
    let (product, conditions) = prepare(&input).unwrap();
    let b = simulate_batch(&product, &conditions, &BatchSpec::default()).unwrap();
    let warm = b.warmest_by(|c| c.peak_bottom_temp_c).unwrap();
    let gap = warm.peak_bottom_temp_c - warm.peak_front_temp_c;
    assert!(
        gap > 0.3,
        "bottom {gap} °C warmer than the front at its peak"
    );
    let limit = warm.peak_front_temp_c + 0.5 * gap;
    let facts = |kind| FormulationFacts {
        max_product_temp_c: Some(limit),
        limit_kind: kind,
        ..FormulationFacts::default()
    };
    let collapse = super::product::product_temperature(&facts(LimitKind::Collapse), &b);
    assert_eq!(collapse.state, CheckState::Watch, "{}", collapse.message);
    assert!(
        collapse.message.contains("bottom"),
        "bottom reported beside the front"
    );
    let eutectic = super::product::product_temperature(&facts(LimitKind::Eutectic), &b);
    assert_eq!(eutectic.state, CheckState::Fails, "{}", eutectic.message);
    assert!(eutectic.message.contains("warmest ice"));
}

#[test]
fn when_only_edge_vials_exceed_the_limit_the_check_says_so() {
    // Edge factor 1.5, the top of the lab range (Rambhatla & Pikal 2003, from memory).
    let c = cycle(-25.0, 100.0, 100.0 * 60.0);
    let mut dryer = lab_dryer();
    dryer.edge_heat_factor = Some(1.5);
    let load = Load {
        dryer: Some(dryer),
        kv_cv: Some(0.0),
        ..Load::default()
    };
    let b = assess(&c, &FormulationFacts::default(), &load)
        .batch
        .unwrap();
    let centre = b.class(VialClass::Centre).unwrap().peak_front_temp_c;
    let edge = b.class(VialClass::Edge).unwrap().peak_front_temp_c;
    assert!(edge > centre + 0.5);
    let facts = FormulationFacts {
        max_product_temp_c: Some(0.5 * (centre + edge)),
        ..FormulationFacts::default()
    };
    let v = assess(&c, &facts, &load).verdict;
    assert_eq!(
        state_of(&v, CheckTopic::ProductTemperature),
        CheckState::Fails
    );
    assert!(message_of(&v, CheckTopic::ProductTemperature).contains("Only the edge vials"));
}

#[test]
fn the_primary_hold_is_judged_against_the_slowest_class_with_the_safety_margin() {
    // Margin 15 % by default (common practice 10–20 %, no source).
    let c = cycle(-35.0, 60.0, 0.0);
    let slowest = slowest_h(&c);
    let state = |share: f64| {
        let v = verdict(&with_total(c.clone(), slowest * share), &sucrose_facts());
        state_of(&v, CheckTopic::PrimaryDryingTime)
    };
    assert_eq!(state(0.99), CheckState::Fails);
    assert_eq!(state(1.01), CheckState::Watch);
    assert_eq!(state(1.14), CheckState::Watch);
    assert_eq!(state(1.16), CheckState::Ok);
    // The slowest class, not the nominal vial: the nominal dries sooner.
    let nominal = simulate_summary(&primary_drying_input(&c, &sucrose_5_percent(), None))
        .unwrap()
        .drying_time_h;
    assert!(slowest > nominal * 1.01);
    let v = verdict(&with_total(c.clone(), nominal * 1.001), &sucrose_facts());
    assert_eq!(
        state_of(&v, CheckTopic::PrimaryDryingTime),
        CheckState::Fails
    );
}

#[test]
fn freezing_must_reach_5_c_below_tg_prime_and_hold_an_hour() {
    // Common practice, from memory: at least 5 °C below Tg′/Te, held 1–2 h.
    let with_freezing = |hold_temp_c: f64, hold_min: f64| {
        let mut c = cycle(-35.0, 60.0, 140.0 * 60.0);
        c.freezing.hold_temp_c = hold_temp_c;
        c.freezing.hold_min = hold_min;
        state_of(&verdict(&c, &sucrose_facts()), CheckTopic::Freezing)
    };
    assert_eq!(with_freezing(-45.0, 120.0), CheckState::Ok);
    assert_eq!(with_freezing(-37.1, 120.0), CheckState::Ok);
    assert_eq!(with_freezing(-36.9, 120.0), CheckState::Watch);
    assert_eq!(with_freezing(-32.1, 120.0), CheckState::Watch);
    assert_eq!(with_freezing(-31.9, 120.0), CheckState::Fails);
    assert_eq!(with_freezing(-45.0, 59.0), CheckState::Watch);
    assert_eq!(with_freezing(-45.0, 61.0), CheckState::Ok);
}

fn with_anneal(temp_c: f64, hold_min: f64) -> CycleProgram {
    let mut c = cycle(-35.0, 60.0, 140.0 * 60.0);
    c.annealing = Some(AnnealingStep {
        temp_c,
        hold_min,
        return_ramp_c_per_min: None,
    });
    c
}

fn anneal_state(c: &CycleProgram, f: &FormulationFacts) -> CheckState {
    state_of(&verdict(c, f), CheckTopic::Annealing)
}

#[test]
fn annealing_is_judged_against_the_advice() {
    // Mannitol-like: Te −1.5 °C (literature value, from memory), window −25 to −15 °C.
    let advised = FormulationFacts {
        anneal_advised: true,
        anneal_window_c: Some((-25.0, -15.0)),
        te_c: Some(-1.5),
        crystalline: true,
        ..sucrose_facts()
    };
    let none = cycle(-35.0, 60.0, 140.0 * 60.0);
    assert_eq!(anneal_state(&none, &advised), CheckState::Watch);
    assert_eq!(
        anneal_state(&with_anneal(-20.0, 180.0), &advised),
        CheckState::Ok
    );
    assert_eq!(
        anneal_state(&with_anneal(-25.1, 180.0), &advised),
        CheckState::Watch
    );
    assert_eq!(
        anneal_state(&with_anneal(-14.9, 180.0), &advised),
        CheckState::Watch
    );
    assert_eq!(
        anneal_state(&with_anneal(-20.0, 59.0), &advised),
        CheckState::Watch
    );
    assert_eq!(
        anneal_state(&with_anneal(-1.5, 180.0), &advised),
        CheckState::Fails
    );
    assert_eq!(
        anneal_state(&with_anneal(-20.0, 180.0), &sucrose_facts()),
        CheckState::Watch
    );
    assert_eq!(anneal_state(&none, &sucrose_facts()), CheckState::Ok);
}

#[test]
fn an_advised_anneal_without_a_window_is_judged_against_tg_prime_and_te() {
    // The case: −38 °C lies below Tg′ (−32 °C) and used to pass.
    let advised = FormulationFacts {
        anneal_advised: true,
        anneal_window_c: None,
        te_c: Some(-1.5),
        ..sucrose_facts()
    };
    assert_eq!(
        anneal_state(&with_anneal(-38.0, 180.0), &advised),
        CheckState::Watch
    );
    let m = message_of(
        &verdict(&with_anneal(-38.0, 180.0), &advised),
        CheckTopic::Annealing,
    );
    assert!(m.contains("glassy"), "{m}");
    assert_eq!(
        anneal_state(&with_anneal(-20.0, 180.0), &advised),
        CheckState::Ok
    );
    assert_eq!(
        anneal_state(&with_anneal(-1.0, 180.0), &advised),
        CheckState::Fails
    );
    let unknown = FormulationFacts {
        anneal_advised: true,
        ..FormulationFacts::default()
    };
    assert_eq!(
        anneal_state(&with_anneal(-20.0, 180.0), &unknown),
        CheckState::Watch
    );
}

#[test]
fn an_anneal_below_tg_prime_is_not_described_as_growing_ice() {
    // Below Tg′ the freeze-concentrate is a glass: no ice ripening (common practice, no source).
    let v = verdict(&with_anneal(-38.0, 180.0), &sucrose_facts());
    let m = message_of(&v, CheckTopic::Annealing);
    assert!(!m.contains("grow larger ice"), "{m}");
    assert!(m.contains("do not grow"), "{m}");
    let v = verdict(&with_anneal(-20.0, 180.0), &sucrose_facts());
    assert!(message_of(&v, CheckTopic::Annealing).contains("grow larger ice"));
}

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
fn peak_kg_h(c: &CycleProgram, n: f64) -> f64 {
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

#[test]
fn a_primary_step_that_sublimes_nothing_fails_instead_of_being_refused() {
    let v = verdict(&cycle(-42.0, 150.0, 140.0 * 60.0), &sucrose_facts());
    assert_eq!(v.overall, CheckState::Fails);
    assert!(message_of(&v, CheckTopic::PrimaryDryingTime).contains("nothing sublimes"));
}

#[test]
fn bad_cycle_numbers_are_refused_by_name() {
    let opts = VerdictOptions::default();
    let base = sucrose_5_percent();
    let mut c = cycle(-35.0, 60.0, 140.0 * 60.0);
    c.primary.hold_min = -1.0;
    let err = assess_cycle(&c, &sucrose_facts(), &base, &Load::default(), &opts).unwrap_err();
    assert_eq!(err.field, "primary.hold_min");
    let facts = FormulationFacts {
        anneal_window_c: Some((-10.0, -20.0)),
        ..sucrose_facts()
    };
    let c = cycle(-35.0, 60.0, 6000.0);
    let err = assess_cycle(&c, &facts, &base, &Load::default(), &opts).unwrap_err();
    assert_eq!(err.field, "anneal_window_c");
}

fn topic_input() -> serde_json::Value {
    json!({
        "cycle": {
            "freezing": {"ramp_c_per_min": 1.0, "hold_temp_c": -45.0, "hold_min": 120.0},
            "primary": {"ramp_c_per_min": 0.5, "shelf_temp_c": -35.0,
                        "chamber_pressure_mtorr": 60.0, "hold_min": 12000.0},
            "secondary": {"ramp_c_per_min": 0.1, "shelf_temp_c": 40.0,
                          "pressure_mtorr": 60.0, "hold_min": 360.0},
            "condenser_temp_c": -70.0
        },
        "formulation": {"max_product_temp_c": -34.0, "limit_kind": "collapse",
                        "tg_prime_c": -32.0},
        "fill_volume_ml": 4.0,
        "solids_mass_fraction": 0.05,
        "vial": {"inner_area_cm2": 3.8, "outer_area_cm2": 4.71, "kc_cal_s_cm2_k": 3.0e-4,
                 "kp_cal_s_cm2_k_torr": 1.5e-3, "kd_per_torr": 1.0},
        "resistance": {"r0_cm2_torr_h_g": 1.4, "a1_cm_torr_h_g": 16.0, "a2_per_cm": 0.0},
        "dryer": {"shelf_area_m2": 1.0, "min_pressure_mtorr": 20.0,
                  "condenser_capacity_kg": 20.0, "edge_heat_factor": 1.3,
                  "capability": [{"pressure_mtorr": 50.0, "max_sublimation_kg_h": 0.5},
                                 {"pressure_mtorr": 200.0, "max_sublimation_kg_h": 2.0}]},
        "vial_count": 500
    })
}

#[test]
fn the_cycle_check_topic_answers_with_the_documented_fields() {
    let out = calc_cycle_check(topic_input()).unwrap();
    assert_eq!(out["overall"], "ok", "{out:#}");
    let topics: Vec<&str> = out["checks"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c["topic"].as_str().unwrap())
        .collect();
    assert_eq!(
        topics,
        [
            "product_temperature",
            "primary_drying_time",
            "freezing",
            "annealing",
            "secondary_drying",
            "condenser",
            "equipment"
        ]
    );
    let vials = out["vials"].as_array().unwrap();
    assert_eq!(vials.len(), 4);
    for key in [
        "class",
        "share",
        "peak_front_temp_c",
        "peak_bottom_temp_c",
        "drying_time_h",
        "peak_sublimation_rate_g_h",
    ] {
        assert!(vials[0].get(key).is_some(), "vials lack {key}");
    }
    assert!(vials.iter().any(|v| v["class"] == "edge"));
    for key in ["first_dry_h", "last_dry_h", "peak_sublimation_kg_h"] {
        assert!(out["batch"].get(key).is_some(), "batch lacks {key}");
    }
    assert!(out["caution"]
        .as_str()
        .unwrap()
        .contains("experimental confirmation"));
    assert!(crate::calc::TOPICS.contains(&"cycle-check"));
}

#[test]
fn bad_cycle_check_inputs_are_refused_naming_the_field() {
    let cases = [
        (
            json!({"cycle": {"primary": {"hold_min": -5.0}}}),
            "cycle.primary.hold_min",
        ),
        (json!({"formulation": {"te_c": 500.0}}), "formulation.te_c"),
        (
            json!({"formulation": {"limit_kind": "melting"}}),
            "formulation.limit_kind",
        ),
        (
            json!({"dryer": {"shelf_area_m2": -1.0}}),
            "dryer.shelf_area_m2",
        ),
        (
            json!({"dryer": {"edge_heat_factor": 0.5}}),
            "dryer.edge_heat_factor",
        ),
        (json!({"vial_count": 0}), "vial_count"),
        (json!({"edge_vial_share": 1.5}), "edge_vial_share"),
        (json!({"fill_volume_ml": 0.0}), "fill_volume_ml"),
        (
            json!({"unfrozen_water_g_per_g_solids": 2.0}),
            "unfrozen_water_g_per_g_solids",
        ),
        (
            json!({"vial": {"kc_cal_s_cm2_k": -1.0}}),
            "vial.kc_cal_s_cm2_k",
        ),
    ];
    for (patch, field) in cases {
        let mut input = topic_input();
        crate::drying::tests::merge(&mut input, &patch);
        let err = calc_cycle_check(input).unwrap_err();
        assert_eq!(err.field, field, "{patch}: {err}");
    }
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
