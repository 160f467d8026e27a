use super::*;
use crate::batch::VialClass;
use crate::dryer::CapabilityPoint;
use crate::drying::simulate_summary;
use crate::drying::tests::sucrose_5_percent;
use crate::ice::vapour_pressure_pa;
use crate::units::{mtorr_to_pa, pa_to_mtorr};

/// A conservative cycle for 5 % sucrose (Tg′ ≈ −32 °C, literature value from memory) with a
/// limit of −34 °C.
pub(super) fn cycle(primary_shelf_c: f64, pc_mtorr: f64, primary_hold_min: f64) -> CycleProgram {
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

pub(super) fn sucrose_facts() -> FormulationFacts {
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
pub(super) fn lab_dryer() -> Dryer {
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

pub(super) fn assess(c: &CycleProgram, f: &FormulationFacts, load: &Load) -> CycleAssessment {
    assess_cycle(c, f, &sucrose_5_percent(), load, &VerdictOptions::default()).unwrap()
}

pub(super) fn verdict(c: &CycleProgram, f: &FormulationFacts) -> CycleVerdict {
    assess(c, f, &Load::default()).verdict
}

pub(super) fn state_of(v: &CycleVerdict, topic: CheckTopic) -> CheckState {
    v.check(topic).map(|c| c.state).unwrap()
}

pub(super) fn message_of(v: &CycleVerdict, topic: CheckTopic) -> String {
    v.check(topic).map(|c| c.message.clone()).unwrap()
}

/// The slowest class's predicted drying time for `c` (default load), h.
pub(super) fn slowest_h(c: &CycleProgram) -> f64 {
    let a = assess(c, &sucrose_facts(), &Load::default());
    a.batch.unwrap().last_dry_h
}

/// A hold giving `total_h` of primary drying for `c`, ramp included.
pub(super) fn with_total(mut c: CycleProgram, total_h: f64) -> CycleProgram {
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

pub(super) fn with_anneal(temp_c: f64, hold_min: f64) -> CycleProgram {
    let mut c = cycle(-35.0, 60.0, 140.0 * 60.0);
    c.annealing = Some(AnnealingStep {
        temp_c,
        hold_min,
        return_ramp_c_per_min: None,
    });
    c
}

pub(super) fn anneal_state(c: &CycleProgram, f: &FormulationFacts) -> CheckState {
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

mod boundaries;
mod topic;
