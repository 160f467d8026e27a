//! One primary-drying simulation, and a 50 × 50 design space.

use std::hint::black_box;

use criterion::{criterion_group, criterion_main, Criterion};
use glasspoint_science::design_space::{design_space, DesignSpaceInput};
use glasspoint_science::drying::{
    prepare, run, simulate, DryingBase, PrimaryDryingInput, Resistance, ShelfStep, Vial,
};

/// 5 % sucrose, 4 mL in a 10 mL tubing vial (typical magnitudes, as in the tests).
fn base() -> DryingBase {
    DryingBase {
        fill_volume_ml: 4.0,
        solids_mass_fraction: 0.05,
        solution_density_g_ml: None,
        unfrozen_water_g_per_g_solids: None,
        vial: Vial {
            inner_area_cm2: 3.80,
            outer_area_cm2: 4.71,
            kc_cal_s_cm2_k: 3.0e-4,
            kp_cal_s_cm2_k_torr: 1.5e-3,
            kd_per_torr: 1.0,
        },
        resistance: Resistance {
            r0_cm2_torr_h_g: 1.4,
            a1_cm_torr_h_g: 16.0,
            a2_per_cm: 0.0,
        },
        ice_density_g_cm3: None,
        ice_conductivity_w_mk: None,
        sublimation_enthalpy_j_g: None,
    }
}

fn one_simulation(c: &mut Criterion) {
    let held = PrimaryDryingInput::constant(&base(), -25.0, 100.0);
    let ramped = PrimaryDryingInput::programmed(
        &base(),
        vec![
            ShelfStep {
                ramp_c_per_min: 0.5,
                target_c: -20.0,
                hold_min: 600.0,
            },
            ShelfStep {
                ramp_c_per_min: 0.2,
                target_c: -10.0,
                hold_min: 300.0,
            },
        ],
        Some(-45.0),
        80.0,
    );
    let (product, conditions) = prepare(&held).unwrap();
    c.bench_function("summary, held shelf", |b| {
        b.iter(|| run(black_box(&product), black_box(&conditions)).unwrap())
    });
    let (product, conditions) = prepare(&ramped).unwrap();
    c.bench_function("summary, ramped program", |b| {
        b.iter(|| run(black_box(&product), black_box(&conditions)).unwrap())
    });
    c.bench_function("simulate with series, held shelf", |b| {
        b.iter(|| simulate(black_box(&held)).unwrap())
    });
}

fn grid_50_by_50(c: &mut Criterion) {
    let input = DesignSpaceInput {
        base: base(),
        shelf_temps_c: (0..50).map(|i| -40.0 + f64::from(i)).collect(),
        pressures_mtorr: (0..50).map(|i| 30.0 + 5.0 * f64::from(i)).collect(),
        max_product_temp_c: -32.0,
        start_shelf_temp_c: None,
        ramp_c_per_min: None,
        sublimation_ceiling_kg_h_m2: None,
        sublimation_ceiling_g_h_per_vial: None,
    };
    let mut group = c.benchmark_group("design space");
    group.sample_size(20);
    group.bench_function("50 x 50 with boundary", |b| {
        b.iter(|| design_space(black_box(&input)).unwrap())
    });
    group.finish();
}

criterion_group!(benches, one_simulation, grid_50_by_50);
criterion_main!(benches);
