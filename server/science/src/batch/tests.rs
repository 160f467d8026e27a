use super::*;
use crate::drying::tests::sucrose_5_percent;
use crate::drying::{prepare, simulate_summary, PrimaryDryingInput, Vial};
use approx::assert_relative_eq;

fn run_with(spec: &BatchSpec, shelf_c: f64, pc_mtorr: f64) -> BatchResult {
    let input = PrimaryDryingInput::constant(&sucrose_5_percent(), shelf_c, pc_mtorr);
    let (product, conditions) = prepare(&input).unwrap();
    simulate_batch(&product, &conditions, spec).unwrap()
}

fn spec(edge: f64, cv: f64) -> BatchSpec {
    BatchSpec::new(Some(edge), Some(0.1), Some(cv), Some(1000.0)).unwrap()
}

#[test]
fn an_edge_vial_equals_a_centre_vial_with_its_kv_scaled_by_the_edge_factor() {
    // Identity of the model: Kv × f is the same as KC and KP × f (Kv(Pc) is linear in both).
    let f = 1.3;
    let batch = run_with(&spec(f, 0.0), -25.0, 100.0);
    let edge = batch.class(VialClass::Edge).unwrap();
    let v = sucrose_5_percent().vial;
    let mut base = sucrose_5_percent();
    base.vial = Vial {
        kc_cal_s_cm2_k: v.kc_cal_s_cm2_k * f,
        kp_cal_s_cm2_k_torr: v.kp_cal_s_cm2_k_torr * f,
        ..v
    };
    let scaled = simulate_summary(&PrimaryDryingInput::constant(&base, -25.0, 100.0)).unwrap();
    assert_relative_eq!(
        edge.drying_time_h,
        scaled.drying_time_h,
        max_relative = 1e-3
    );
    assert_relative_eq!(
        edge.peak_front_temp_c,
        scaled.peak_front_temp_c,
        max_relative = 1e-4
    );
    assert_relative_eq!(
        edge.peak_sublimation_rate_g_h,
        scaled.peak_sublimation_rate_g_h,
        max_relative = 1e-6
    );
}

#[test]
fn edge_vials_run_warmer_and_finish_first() {
    // Rambhatla & Pikal (2003), from memory: edge vials take 10–50 % more heat in lab
    // dryers, run warmer and dry sooner. Factor 1.3 taken from that range.
    let batch = run_with(&spec(1.3, 0.05), -25.0, 100.0);
    let edge = batch.class(VialClass::Edge).unwrap();
    let centre = batch.class(VialClass::Centre).unwrap();
    let low = batch.class(VialClass::CentreLowKv).unwrap();
    assert!(edge.peak_front_temp_c > centre.peak_front_temp_c);
    assert!(edge.peak_bottom_temp_c > centre.peak_bottom_temp_c);
    assert!(edge.drying_time_h < centre.drying_time_h);
    assert!(low.drying_time_h > centre.drying_time_h);
    assert_relative_eq!(batch.first_dry_h, edge.drying_time_h);
    assert_relative_eq!(batch.last_dry_h, low.drying_time_h);
    assert_eq!(batch.slowest().unwrap().class, VialClass::CentreLowKv);
    assert_eq!(
        batch.warmest_by(|c| c.peak_front_temp_c).unwrap().class,
        VialClass::Edge
    );
}

#[test]
fn the_three_centre_classes_keep_the_mean_and_variance_of_kv() {
    // Three-point Gauss–Hermite rule: weights 1/6, 2/3, 1/6 at −√3σ, 0, +√3σ reproduce the
    // mean and variance of a normal distribution exactly (standard quadrature result).
    let s = BatchSpec::new(None, Some(0.0), Some(0.08), None).unwrap();
    let classes = s.classes();
    assert_eq!(classes.len(), 3);
    let mean: f64 = classes.iter().map(|c| c.share * c.kv_factor).sum();
    let var: f64 = classes
        .iter()
        .map(|c| c.share * (c.kv_factor - 1.0).powi(2))
        .sum();
    assert_relative_eq!(mean, 1.0, max_relative = 1e-12);
    assert_relative_eq!(var, 0.08f64.powi(2), max_relative = 1e-12);
    let with_edge = spec(1.2, 0.05).classes();
    let total: f64 = with_edge.iter().map(|c| c.share).sum();
    assert_relative_eq!(total, 1.0, max_relative = 1e-12);
}

#[test]
fn the_load_sublimes_exactly_its_ice() {
    // Mass balance: the average vial's rate integrated over time is one vial's ice
    // (3.8 g for 4 mL of 5 % solids at 1 g/mL).
    let batch = run_with(&spec(1.3, 0.05), -25.0, 100.0);
    let sublimed: f64 = batch
        .rate
        .windows(2)
        .map(|w| 0.5 * (w[0].mean_rate_g_h + w[1].mean_rate_g_h) * (w[1].time_h - w[0].time_h))
        .sum();
    assert_relative_eq!(sublimed, 3.8, max_relative = 5e-3);
    let last = batch.rate.last().unwrap();
    assert_relative_eq!(last.time_h, batch.last_dry_h);
    assert_relative_eq!(last.mean_rate_g_h, 0.0);
    assert_relative_eq!(last.share_with_ice, 0.0);
    let peak = batch.peak_sublimation_kg_h.unwrap();
    assert_relative_eq!(
        peak,
        1000.0 * batch.peak_mean_rate_g_h / 1000.0,
        max_relative = 1e-12
    );
}

#[test]
fn the_share_of_vials_with_ice_falls_in_steps_from_the_first_end_to_the_last() {
    let batch = run_with(&spec(1.3, 0.05), -25.0, 100.0);
    let before_first: Vec<_> = batch
        .rate
        .iter()
        .filter(|p| p.time_h < batch.first_dry_h)
        .collect();
    assert!(before_first
        .iter()
        .all(|p| (p.share_with_ice - 1.0).abs() < 1e-12));
    assert!(batch
        .rate
        .windows(2)
        .all(|w| w[1].share_with_ice <= w[0].share_with_ice + 1e-12));
    let steps = batch
        .rate
        .windows(2)
        .filter(|w| w[1].share_with_ice < w[0].share_with_ice - 1e-12)
        .count();
    assert_eq!(steps, 4, "one step per class");
}

#[test]
fn bad_load_numbers_are_refused_naming_the_field() {
    assert_eq!(
        BatchSpec::new(Some(0.9), None, None, None)
            .unwrap_err()
            .field,
        "dryer.edge_heat_factor"
    );
    assert_eq!(
        BatchSpec::new(None, Some(1.0), None, None)
            .unwrap_err()
            .field,
        "edge_vial_share"
    );
    assert_eq!(
        BatchSpec::new(None, None, Some(0.5), None)
            .unwrap_err()
            .field,
        "kv_cv"
    );
    assert_eq!(
        BatchSpec::new(None, None, None, Some(0.0))
            .unwrap_err()
            .field,
        "vial_count"
    );
}
