//! Run data read back into the model: round trips through model-made runs, the comparative
//! pressure end point, desorption kinetics, phases and excursions, and the topics' JSON.

use approx::assert_relative_eq;
use glasspoint_science::calc::{self, CalcError};
use glasspoint_science::drying::{DryingBase, Product, Resistance, Vial};
use glasspoint_science::runs::{
    comparative_pressure, excursions, find_phases, fit_kv, kv_from_gravimetric, moisture_samples,
    prediction_error, probe_arrivals, rp_from_product_temperature, secondary_kinetics,
    synthesize_gravimetric_test, synthesize_run, AnnealingSpec, DesorptionSpec, GravimetricInput,
    KvPoint, PhaseKind, Probe, ProbePosition, RpInput, RunSeries, SecondaryInput, SyntheticRun,
    SyntheticRunSpec,
};
use glasspoint_science::units::mtorr_to_pa;
use serde_json::{json, Value};

#[path = "runs/robustness.rs"]
mod robustness;
#[path = "runs/topics.rs"]
mod topics;

/// A 10 mL tubing vial: areas typical of that size; KC, KP and KD typical magnitudes for
/// tubing vials (from memory, not one vial's published set).
fn tubing_vial() -> Vial {
    Vial {
        inner_area_cm2: 3.80,
        outer_area_cm2: 4.71,
        kc_cal_s_cm2_k: 3.0e-4,
        kp_cal_s_cm2_k_torr: 1.5e-3,
        kd_per_torr: 1.0,
    }
}

/// 4 mL in the tubing vial with resistance `r` (5 % sucrose: R0 ≈ 1.4, A1 ≈ 16, A2 ≈ 0,
/// references.md, from memory).
fn product(r: Resistance) -> DryingBase {
    DryingBase {
        fill_volume_ml: 4.0,
        solids_mass_fraction: 0.05,
        solution_density_g_ml: None,
        unfrozen_water_g_per_g_solids: None,
        vial: tubing_vial(),
        resistance: r,
        ice_density_g_cm3: None,
        ice_conductivity_w_mk: None,
        sublimation_enthalpy_j_g: None,
    }
}

fn sucrose() -> DryingBase {
    product(Resistance {
        r0_cm2_torr_h_g: 1.4,
        a1_cm_torr_h_g: 16.0,
        a2_per_cm: 0.0,
    })
}

fn gravimetric_kv(
    base: &DryingBase,
    pressure_mtorr: f64,
    kv_factor: f64,
    noise_c: f64,
    seed: u64,
) -> f64 {
    let (series, mass_g) =
        synthesize_gravimetric_test(base, -20.0, pressure_mtorr, 6.0, kv_factor, noise_c, seed)
            .unwrap();
    let input = GravimetricInput {
        time_h: series.time_h.clone(),
        shelf_temp_c: series.shelf_c.clone(),
        bottom_temp_c: series.probes[0].temp_c.clone(),
        mass_loss_g: mass_g,
        outer_area_cm2: base.vial.outer_area_cm2,
        sublimation_enthalpy_j_g: None,
    };
    kv_from_gravimetric(&input).unwrap().kv_w_m2k
}

const PRESSURES_MTORR: [f64; 6] = [50.0, 75.0, 100.0, 150.0, 250.0, 400.0];

// ---------------------------------------------------------------------------------------
// Kv

#[test]
fn gravimetric_tests_made_by_the_model_give_back_its_kv_exactly() {
    // Round trip (common practice, no source): Kv = ΔHs·Δm/(Av·∫(Ts − Tb)dt) (Pikal, Roy &
    // Shah 1984, from memory) inverts the model's own heat balance.
    let base = sucrose();
    let model = Product::new(&base).unwrap();
    for p in PRESSURES_MTORR {
        let kv = gravimetric_kv(&base, p, 1.0, 0.0, 1);
        // Exact but for the model's solver tolerance on the front temperature.
        assert_relative_eq!(kv, model.kv_w_m2k(mtorr_to_pa(p)), max_relative = 1e-5);
    }
}

#[test]
fn kv_fitted_to_noise_free_tests_gives_back_kc_kp_and_kd() {
    let base = sucrose();
    let points: Vec<KvPoint> = PRESSURES_MTORR
        .iter()
        .map(|&p| KvPoint {
            pressure_mtorr: p,
            kv_w_m2k: gravimetric_kv(&base, p, 1.0, 0.0, 1),
        })
        .collect();
    let fit = fit_kv(&points).unwrap();
    // Round trip, exact but for the model's solver tolerance (common practice, no source).
    assert_relative_eq!(fit.kc_cal_s_cm2_k, 3.0e-4, max_relative = 1e-5);
    assert_relative_eq!(fit.kp_cal_s_cm2_k_torr, 1.5e-3, max_relative = 1e-5);
    assert_relative_eq!(fit.kd_per_torr, 1.0, max_relative = 1e-4);
    assert!(fit.rms_w_m2k < 1e-4, "rms {}", fit.rms_w_m2k);
}

#[test]
fn kv_fitted_to_noisy_tests_lands_within_its_standard_errors() {
    // Probe noise 0.3 °C (a thermocouple's scatter, common practice, no source); each
    // coefficient within three of its reported standard errors of the truth.
    let base = sucrose();
    let points: Vec<KvPoint> = PRESSURES_MTORR
        .iter()
        .enumerate()
        .map(|(i, &p)| KvPoint {
            pressure_mtorr: p,
            kv_w_m2k: gravimetric_kv(&base, p, 1.0, 0.3, 11 + i as u64),
        })
        .collect();
    let fit = fit_kv(&points).unwrap();
    let se = fit
        .standard_errors
        .expect("six points give standard errors");
    for (got, truth, se) in [
        (fit.kc_cal_s_cm2_k, 3.0e-4, se.kc_cal_s_cm2_k),
        (fit.kp_cal_s_cm2_k_torr, 1.5e-3, se.kp_cal_s_cm2_k_torr),
        (fit.kd_per_torr, 1.0, se.kd_per_torr),
    ] {
        assert!((got - truth).abs() <= 3.0 * se, "{got} vs {truth} ± {se}");
    }
    assert_eq!(fit.residuals_w_m2k.len(), PRESSURES_MTORR.len());
}

#[test]
fn a_tubing_vial_at_100_mtorr_has_a_kv_of_15_to_25() {
    // references.md, Primary drying: typical tubing vial Kv at 100 mTorr is 15–25 W/(m²·K)
    // (from memory).
    let kv = gravimetric_kv(&sucrose(), 100.0, 1.0, 0.2, 5);
    assert!((15.0..=25.0).contains(&kv), "Kv {kv}");
}

#[test]
fn edge_vials_weighed_beside_centre_vials_give_back_the_edge_factor() {
    // Round trip with an edge factor of 1.3 (laboratory dryers 1.1–1.5: Rambhatla & Pikal
    // 2003, from memory).
    let base = sucrose();
    let at = |f: f64| -> Vec<KvPoint> {
        [100.0, 200.0]
            .iter()
            .map(|&p| KvPoint {
                pressure_mtorr: p,
                kv_w_m2k: gravimetric_kv(&base, p, f, 0.0, 1),
            })
            .collect()
    };
    let factor = glasspoint_science::runs::edge_factor(&at(1.0), &at(1.3)).unwrap();
    assert_relative_eq!(factor, 1.3, max_relative = 1e-6);
}

// ---------------------------------------------------------------------------------------
// Rp

fn rp_run(r: Resistance, noise_c: f64, interval_min: f64) -> (SyntheticRun, RpInput) {
    let base = product(r);
    let mut spec = SyntheticRunSpec::demo(base.clone());
    spec.noise_c = noise_c;
    spec.pressure_noise_share = 0.0;
    spec.sample_interval_min = interval_min;
    spec.probes.truncate(1);
    let run = synthesize_run(&spec).unwrap();
    let s = &run.series;
    let rows = s.rows_between(run.vacuum_h, run.predicted_end_h);
    let input = RpInput {
        time_h: s.time_h[rows.clone()]
            .iter()
            .map(|t| t - run.vacuum_h)
            .collect(),
        shelf_temp_c: s.shelf_c[rows.clone()].to_vec(),
        bottom_temp_c: s.probes[0].temp_c[rows].to_vec(),
        chamber_pressure_mtorr: spec.chamber_pressure_mtorr,
        fill_volume_ml: base.fill_volume_ml,
        solids_mass_fraction: base.solids_mass_fraction,
        vial: base.vial,
        solution_density_g_ml: None,
        unfrozen_water_g_per_g_solids: None,
    };
    (run, input)
}

#[test]
fn rp_read_from_a_noise_free_run_gives_back_r0_a1_and_a2() {
    // Round trip (common practice, no source): the balance of the model turned around.
    let truth = Resistance {
        r0_cm2_torr_h_g: 1.0,
        a1_cm_torr_h_g: 12.0,
        a2_per_cm: 2.0,
    };
    let (_, input) = rp_run(truth, 0.0, 0.5);
    let result = rp_from_product_temperature(&input).unwrap();
    let fit = &result.fit;
    assert_relative_eq!(fit.r0_cm2_torr_h_g, 1.0, max_relative = 1e-5);
    assert_relative_eq!(fit.a1_cm_torr_h_g, 12.0, max_relative = 1e-5);
    assert_relative_eq!(fit.a2_per_cm, 2.0, max_relative = 1e-5);
    assert!(
        !result.notes.is_empty(),
        "the start transient is left out and said so"
    );
}

#[test]
fn rp_read_from_a_noisy_run_lands_near_the_truth() {
    // 5 % sucrose, R0 1.4, A1 16, A2 0 (references.md, from memory), probes with 0.1 °C
    // noise; tolerance stated here: Rp(l) within 5 % over the layers measured.
    let truth = Resistance {
        r0_cm2_torr_h_g: 1.4,
        a1_cm_torr_h_g: 16.0,
        a2_per_cm: 0.0,
    };
    let (_, input) = rp_run(truth, 0.1, 2.0);
    let result = rp_from_product_temperature(&input).unwrap();
    let fitted = result.fit.resistance();
    let rp =
        |r: &Resistance, l: f64| r.r0_cm2_torr_h_g + r.a1_cm_torr_h_g * l / (1.0 + r.a2_per_cm * l);
    let l_max = result
        .points
        .iter()
        .map(|p| p.dried_layer_cm)
        .fold(0.0, f64::max);
    for share in [0.2, 0.5, 0.8, 1.0] {
        let l = share * l_max;
        assert_relative_eq!(rp(&fitted, l), rp(&truth, l), max_relative = 0.05);
    }
}

// ---------------------------------------------------------------------------------------
// End of primary drying

#[test]
fn a_piecewise_linear_pirani_fall_gives_its_corners_exactly() {
    // Analytic fixture (common practice, no source): plateau 150 mTorr to 10 h, a straight
    // fall to the manometer's 100 mTorr at 12 h: onset 10 h, midpoint 11 h, end 12 h.
    let time: Vec<f64> = (0..=200).map(|i| i as f64 * 0.1).collect();
    let pirani: Vec<f64> = time
        .iter()
        .map(|&t| {
            if t <= 10.0 {
                150.0
            } else if t < 12.0 {
                150.0 - 25.0 * (t - 10.0)
            } else {
                100.0
            }
        })
        .collect();
    let end = comparative_pressure(&time, &pirani, &vec![100.0; time.len()]).unwrap();
    assert_relative_eq!(end.onset_h, 10.0, max_relative = 1e-9);
    assert_relative_eq!(end.midpoint_h, 11.0, max_relative = 1e-9);
    assert_relative_eq!(end.end_h, 12.0, max_relative = 1e-9);
}

#[test]
fn the_pump_down_from_atmosphere_is_not_read_as_the_end_of_primary_drying() {
    // The same fixture after a pump-down from 760 Torr over the first hour (both gauges
    // reading alike): the far larger fall of the pump-down must not be taken for the end.
    let time: Vec<f64> = (0..=200).map(|i| i as f64 * 0.1).collect();
    let pump = |t: f64| 760_000.0 * (1.0 - t).max(0.0) + 100.0;
    let pirani: Vec<f64> = time
        .iter()
        .map(|&t| match t {
            t if t < 1.0 => pump(t),
            t if t <= 10.0 => 150.0,
            t if t < 12.0 => 150.0 - 25.0 * (t - 10.0),
            _ => 100.0,
        })
        .collect();
    let manometer: Vec<f64> = time
        .iter()
        .map(|&t| if t < 1.0 { pump(t) } else { 100.0 })
        .collect();
    let end = comparative_pressure(&time, &pirani, &manometer).unwrap();
    assert_relative_eq!(end.onset_h, 10.0, max_relative = 1e-9);
    assert_relative_eq!(end.midpoint_h, 11.0, max_relative = 1e-9);
    assert_relative_eq!(end.end_h, 12.0, max_relative = 1e-9);
}

#[test]
fn a_pirani_that_never_meets_the_manometer_is_no_end_point() {
    let time = [0.0, 1.0, 2.0, 3.0];
    let err = comparative_pressure(&time, &[150.0, 150.0, 130.0, 120.0], &[100.0; 4]).unwrap_err();
    assert_eq!(err.field, "pirani_mtorr");
}

#[test]
fn the_model_pirani_reads_high_while_ice_sublimes_and_meets_the_manometer_at_the_end() {
    // Common practice: a nitrogen-calibrated Pirani reads above the manometer in water
    // vapour and converges when the last ice is gone (Patel, Doen & Pikal 2010, from
    // memory).
    let mut spec = SyntheticRunSpec::demo(sucrose());
    spec.pressure_noise_share = 0.0;
    let run = synthesize_run(&spec).unwrap();
    let s = &run.series;
    let pirani = s.pirani_mtorr.as_ref().unwrap();
    let manometer = s.manometer_mtorr.as_ref().unwrap();
    let mid = s
        .rows_between(0.5 * (run.vacuum_h + run.predicted_end_h), f64::INFINITY)
        .start;
    assert!(
        pirani[mid] > 1.3 * manometer[mid],
        "{} vs {}",
        pirani[mid],
        manometer[mid]
    );
    let after = s.rows_between(run.predicted_end_h + 0.1, f64::INFINITY);
    assert!(after
        .clone()
        .all(|i| (pirani[i] - manometer[i]).abs() < 1e-9 * manometer[i]));
    let primary = s.rows_between(run.vacuum_h, run.secondary_ramp_start_h);
    let end = comparative_pressure(
        &s.time_h[primary.clone()],
        &pirani[primary.clone()],
        &manometer[primary],
    )
    .unwrap();
    let interval_h = spec.sample_interval_min / 60.0;
    assert!(
        (end.end_h - run.predicted_end_h).abs() <= 2.0 * interval_h,
        "{end:?} vs {}",
        run.predicted_end_h
    );
    assert!(end.onset_h <= end.midpoint_h && end.midpoint_h <= end.end_h);
}

#[test]
fn probes_reach_the_shelf_after_their_vials_run_out_of_ice() {
    // Common practice, no source: a probe rises to the shelf when the ice around it is gone;
    // edge vials (more heat) before centre vials.
    let run = synthesize_run(&SyntheticRunSpec::demo(sucrose())).unwrap();
    let primary = run.series.between(0.0, run.secondary_ramp_start_h);
    let arrivals = probe_arrivals(&primary, run.vacuum_h, 1.0);
    let of = |label: &str| {
        arrivals
            .iter()
            .find(|a| a.label == label)
            .and_then(|a| a.time_h)
            .unwrap()
    };
    let (c1, e1) = (of("C1"), of("E1"));
    assert!(e1 < c1);
    assert!(
        c1 > run.predicted_end_h && c1 < run.predicted_end_h + 1.5,
        "{c1} vs {}",
        run.predicted_end_h
    );
    assert!(e1 > run.edge_end_h && e1 < run.edge_end_h + 1.5);
}

// ---------------------------------------------------------------------------------------
// Phases, excursions, prediction

#[test]
fn phases_of_a_run_with_annealing_are_found_at_their_times() {
    // Thresholds common practice, no source; the run's own corners are the truth.
    let mut spec = SyntheticRunSpec::demo(sucrose());
    spec.annealing = Some(AnnealingSpec {
        temp_c: -15.0,
        ramp_c_per_min: 1.0,
        hold_h: 3.0,
    });
    let run = synthesize_run(&spec).unwrap();
    let (a0, a1) = run.annealing_h.unwrap();
    let end = *run.series.time_h.last().unwrap();
    let expected = [
        (PhaseKind::Freezing, 0.0, a0),
        (PhaseKind::Annealing, a0, a1),
        (PhaseKind::Freezing, a1, run.vacuum_h),
        (PhaseKind::Primary, run.vacuum_h, run.secondary_ramp_start_h),
        (PhaseKind::Secondary, run.secondary_ramp_start_h, end),
    ];
    let tolerance_h = 0.05; // one or two 2-minute samples
    let check = |series: &RunSeries| {
        let phases = find_phases(series, None);
        assert_eq!(phases.len(), expected.len(), "{phases:?}");
        for (p, (kind, start, stop)) in phases.iter().zip(expected) {
            assert_eq!(p.kind, kind);
            assert!((p.start_h - start).abs() <= tolerance_h, "{p:?} vs {start}");
            assert!((p.end_h - stop).abs() <= tolerance_h, "{p:?} vs {stop}");
        }
    };
    check(&run.series);
    // Without gauges, freezing ends where the shelf leaves its coldest level.
    let mut no_gauges = run.series.clone();
    no_gauges.manometer_mtorr = None;
    no_gauges.pirani_mtorr = None;
    check(&no_gauges);
    // A given end of primary drying is taken as it is.
    let given = find_phases(&run.series, Some(run.predicted_end_h + 1.0));
    let primary = given.iter().find(|p| p.kind == PhaseKind::Primary).unwrap();
    assert_relative_eq!(primary.end_h, run.predicted_end_h + 1.0);
}

#[test]
fn a_series_that_never_freezes_has_no_phases() {
    let series = RunSeries {
        time_h: vec![0.0, 1.0, 2.0],
        shelf_c: vec![20.0, 10.0, 5.0],
        probes: vec![],
        manometer_mtorr: None,
        pirani_mtorr: None,
        condenser_c: None,
    };
    assert!(find_phases(&series, None).is_empty());
}

fn constructed(temps: Vec<f64>) -> RunSeries {
    let n = temps.len();
    RunSeries {
        time_h: (0..n).map(|i| i as f64).collect(),
        shelf_c: vec![-20.0; n],
        probes: vec![Probe {
            label: "P1".into(),
            position: ProbePosition::Edge,
            temp_c: temps,
        }],
        manometer_mtorr: None,
        pirani_mtorr: None,
        condenser_c: None,
    }
}

#[test]
fn excursions_above_a_limit_have_interpolated_ends_and_their_peak() {
    // Constructed trace, crossings by hand (common practice, no source).
    let series = constructed(vec![
        -35.0, -33.0, -31.0, -29.0, -27.0, -29.0, -31.0, -33.0, -35.0, -30.0, -28.0,
    ]);
    let found = excursions(&series, -30.0, 0.0, 10.0);
    assert_eq!(found.len(), 2);
    let first = &found[0];
    assert_relative_eq!(first.start_h, 2.5);
    assert_relative_eq!(first.end_h, 5.5);
    assert_relative_eq!(first.peak_c, -27.0);
    assert_relative_eq!(first.peak_above_c, 3.0);
    assert_relative_eq!(first.duration_h, 3.0);
    assert_eq!(first.position, ProbePosition::Edge);
    assert_relative_eq!(found[1].start_h, 9.0);
    assert_relative_eq!(found[1].end_h, 10.0);
    assert_relative_eq!(found[1].peak_c, -28.0);
    // A window that cuts the first stretch starts it at the window's edge.
    let cut = excursions(&series, -30.0, 3.5, 8.0);
    assert_eq!(cut.len(), 1);
    assert_relative_eq!(cut[0].start_h, 3.5);
    assert_relative_eq!(cut[0].end_h, 5.5);
}

#[test]
fn a_noise_free_run_matches_its_own_prediction() {
    let mut spec = SyntheticRunSpec::demo(sucrose());
    spec.noise_c = 0.0;
    let run = synthesize_run(&spec).unwrap();
    let error = prediction_error(
        &run.series,
        run.vacuum_h,
        run.predicted_end_h,
        &run.centre,
        Some(&run.edge),
    )
    .unwrap();
    assert!(error.end_error_h.abs() < 1e-9);
    assert_eq!(error.probes.len(), 3);
    for p in &error.probes {
        assert!(p.points > 100);
        assert!(p.max_abs_diff_c < 1e-3, "{p:?}");
    }
}

// ---------------------------------------------------------------------------------------
// Secondary drying

fn desorption() -> DesorptionSpec {
    // Invented kinetics: We 1 %, from 6 %, k 0.3/h at 30 °C, Ea 50 kJ/mol.
    DesorptionSpec {
        initial_water_fraction: 0.06,
        equilibrium_water_fraction: 0.01,
        rate_per_h_at_reference: 0.3,
        reference_temp_c: 30.0,
        activation_energy_kj_mol: 50.0,
        holds: vec![(20.0, 3.0), (30.0, 3.0), (40.0, 3.0)],
        samples_per_hold: 4,
        noise: 0.0,
        seed: 1,
    }
}

#[test]
fn first_order_desorption_is_recovered_exactly() {
    // Pikal, Shah, Roy & Putman 1990 (from memory): dW/dt = −k(T)(W − We), Arrhenius k;
    // analytic samples, so exact recovery is the check.
    let spec = desorption();
    let samples = moisture_samples(&spec);
    let result = secondary_kinetics(&SecondaryInput {
        samples: samples.clone(),
        target_water_fraction: Some(0.012),
        at_shelf_temp_c: Some(40.0),
    })
    .unwrap();
    assert_relative_eq!(result.equilibrium_water_fraction, 0.01, max_relative = 1e-6);
    let k = |t: f64| 0.3 * (-50_000.0 / 8.314_462_618 * (1.0 / (t + 273.15) - 1.0 / 303.15)).exp();
    assert_eq!(result.rates.len(), 3);
    for r in &result.rates {
        assert_relative_eq!(r.rate_per_h, k(r.shelf_temp_c), max_relative = 1e-6);
    }
    assert!(result
        .rates
        .windows(2)
        .all(|w| w[1].rate_per_h > w[0].rate_per_h));
    assert_relative_eq!(
        result.activation_energy_kj_mol.unwrap(),
        50.0,
        max_relative = 1e-6
    );
    let last = samples.last().unwrap().water_fraction;
    let hold = ((last - 0.01) / (0.012 - 0.01)).ln() / k(40.0);
    assert_relative_eq!(result.hold_h.unwrap(), hold, max_relative = 1e-6);
}

#[test]
fn a_hold_needs_a_target_above_equilibrium_and_a_known_rate() {
    let samples = moisture_samples(&desorption());
    let ask = |target: f64, at: Option<f64>, samples: Vec<_>| {
        secondary_kinetics(&SecondaryInput {
            samples,
            target_water_fraction: Some(target),
            at_shelf_temp_c: at,
        })
    };
    assert_eq!(
        ask(0.005, None, samples.clone()).unwrap_err().field,
        "target_water_fraction"
    );
    // One temperature only: no rate at another without Arrhenius.
    let one: Vec<_> = samples
        .iter()
        .copied()
        .filter(|s| s.shelf_temp_c > 35.0)
        .collect();
    assert_eq!(
        ask(0.012, Some(50.0), one.clone()).unwrap_err().field,
        "at_shelf_temp_c"
    );
    assert!(ask(0.012, Some(40.0), one).is_ok());
    // Arrhenius carries the rate to 50 °C when there are several temperatures.
    assert!(ask(0.012, Some(50.0), samples).unwrap().hold_h.unwrap() > 0.0);
}
