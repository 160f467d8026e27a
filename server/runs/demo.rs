//! The demo company's runs: a gravimetric Kv series of its 6R vials at three pressures, a
//! development run of the platform cycle with centre and edge probes and both gauges,
//! and thief samples through secondary drying.
//!
//! The recorded data are made by the model from invented "true" values of the demo dryer
//! (its vials transfer more heat than the typical coefficients say, and the trehalose
//! reference dries through a less resistive cake than the default), written as a delimited
//! text export and read back through the same import as an uploaded file. Invented
//! numbers: they belong to the demo only.

use glasspoint_science::drying::{DryingBase, Resistance};
use glasspoint_science::runs::synthetic::DesorptionSpec;
use glasspoint_science::runs::{
    moisture_samples, synthesize_gravimetric_test, synthesize_run, AnnealingSpec, FreezingSpec,
    ProbePosition, ProbeSpec, RunSeries, SyntheticRunSpec,
};
use time::macros::date;

use crate::auth::Actor;
use crate::derive::{drying_base, resistance_of};
use crate::domain::runs::*;
use crate::domain::{Container, Formulation};
use crate::error::AppError;
use crate::storage::{RunFilter, Store};

/// The demo dryer's vials transfer this much more heat at KC than the typical values say
/// (invented).
const TRUE_KC_FACTOR: f64 = 1.25;
const TRUE_KP_FACTOR: f64 = 0.9;
/// The demo dryer's edge vials' Kv over centre vials' (invented).
const TRUE_EDGE_FACTOR: f64 = 1.28;
/// The trehalose reference's cake (invented).
const TRUE_RESISTANCE: Resistance = Resistance {
    r0_cm2_torr_h_g: 0.8,
    a1_cm_torr_h_g: 9.0,
    a2_per_cm: 0.4,
};

fn bad(msg: impl std::fmt::Display) -> AppError {
    AppError::Internal(format!("demo runs: {msg}"))
}

/// A run's series as a dryer's comma-separated export.
pub fn export_text(series: &RunSeries) -> String {
    let mut header = vec!["Time [h]".to_string(), "Shelf inlet [°C]".to_string()];
    for p in &series.probes {
        let place = match p.position {
            ProbePosition::Centre => "centre",
            ProbePosition::Edge => "edge",
            ProbePosition::Front => "front",
            ProbePosition::Back => "back",
        };
        header.push(format!("Product {} {place} [°C]", p.label));
    }
    if series.manometer_mtorr.is_some() {
        header.push("Capacitance manometer [mTorr]".into());
    }
    if series.pirani_mtorr.is_some() {
        header.push("Pirani [mTorr]".into());
    }
    if series.condenser_c.is_some() {
        header.push("Condenser [°C]".into());
    }
    let mut out = header.join(",");
    out.push('\n');
    let cell = |v: Option<&f64>, digits: usize| match v {
        Some(x) if x.is_finite() => format!("{x:.digits$}"),
        _ => String::new(),
    };
    for i in 0..series.time_h.len() {
        let mut row = vec![
            cell(series.time_h.get(i), 4),
            cell(series.shelf_c.get(i), 2),
        ];
        row.extend(series.probes.iter().map(|p| cell(p.temp_c.get(i), 2)));
        for gauge in [&series.manometer_mtorr, &series.pirani_mtorr]
            .into_iter()
            .flatten()
        {
            row.push(cell(gauge.get(i), 1));
        }
        if let Some(c) = &series.condenser_c {
            row.push(cell(c.get(i), 1));
        }
        out.push_str(&row.join(","));
        out.push('\n');
    }
    out
}

fn true_base(base: &DryingBase) -> DryingBase {
    let mut b = base.clone();
    b.vial.kc_cal_s_cm2_k *= TRUE_KC_FACTOR;
    b.vial.kp_cal_s_cm2_k_torr *= TRUE_KP_FACTOR;
    b.resistance = TRUE_RESISTANCE;
    b
}

fn recorded(name: &str, series: &RunSeries) -> Result<RecordedData, AppError> {
    let text = export_text(series);
    match read_recorded(name, text.into_bytes(), &[]) {
        Ok(ReadOutcome::Ready { data, .. }) => Ok(data),
        Ok(ReadOutcome::NeedsMapping(req)) => Err(bad(format!("{name}: {:?}", req.reasons))),
        Err(e) => Err(bad(format!("{name}: {:?}", e.first()))),
    }
}

struct Scene {
    cycle_id: i64,
    dryer_id: Option<i64>,
    container: Container,
    formulation: Formulation,
    base: DryingBase,
}

async fn scene(store: &Store) -> Result<Option<Scene>, AppError> {
    let Some(cycle_id) = store.cycle_id_by_name("Larchvale platform A").await? else {
        return Ok(None);
    };
    let Some(fid) = store.formulation_id_by_code("LV-002").await? else {
        return Ok(None);
    };
    let formulation = store.get_formulation(fid).await?;
    let Some(container) = store
        .list_containers()
        .await?
        .into_iter()
        .find(|c| c.name.eq_ignore_ascii_case("6R tubing vial"))
    else {
        return Ok(None);
    };
    let dryer_id = store
        .list_dryers()
        .await?
        .into_iter()
        .find(|d| d.name.eq_ignore_ascii_case("Typical laboratory dryer"))
        .map(|d| d.id);
    let materials = store.list_materials().await?;
    let resistance = resistance_of(store, &formulation).await?;
    let base = drying_base(
        &formulation,
        &materials,
        &container,
        2.0,
        resistance.resistance,
    );
    Ok(Some(Scene {
        cycle_id,
        dryer_id,
        container,
        formulation,
        base,
    }))
}

fn draft(s: &Scene, name: &str, kind: RunKind, on: time::Date) -> RunDraft {
    RunDraft {
        name: name.into(),
        kind,
        cycle_id: s.cycle_id,
        dryer_id: s.dryer_id,
        run_on: on,
        container_id: s.container.id,
        vial_count: Some(480),
        fill_volume_ml: 2.0,
        formulation_ids: vec![s.formulation.id],
        probed_formulation_id: Some(s.formulation.id),
        chamber_pressure_mtorr: None,
        test_start_h: None,
        test_end_h: None,
        cake_appearance: CakeAppearance::NotInspected,
        cake_notes: String::new(),
        notes: String::new(),
        moisture: Vec::new(),
        weights: Vec::new(),
    }
}

/// Three gravimetric tests at 60, 100 and 200 mTorr: four centre and three edge vials
/// weighed, one probe of each.
async fn gravimetric_series(store: &Store, actor: &Actor, s: &Scene) -> Result<(), AppError> {
    let truth = true_base(&s.base);
    let days = [
        date!(2026 - 10 - 5),
        date!(2026 - 10 - 7),
        date!(2026 - 10 - 9),
    ];
    for (i, (pressure, on)) in [60.0, 100.0, 200.0].into_iter().zip(days).enumerate() {
        let (hours, shelf) = (8.0, -25.0);
        let seed = 40 + i as u64;
        let (mut series, centre_g) =
            synthesize_gravimetric_test(&truth, shelf, pressure, hours, 1.0, 0.15, seed)
                .map_err(bad)?;
        let (edge, edge_g) = synthesize_gravimetric_test(
            &truth,
            shelf,
            pressure,
            hours,
            TRUE_EDGE_FACTOR,
            0.15,
            seed + 10,
        )
        .map_err(bad)?;
        for (p, label) in series.probes.iter_mut().zip(["C1"]) {
            p.label = label.into();
        }
        series.probes.extend(edge.probes.into_iter().map(|mut p| {
            p.label = "E1".into();
            p
        }));
        // Vial-to-vial scatter of a few per cent (invented).
        let scatter = [0.985, 1.01, 0.995, 1.02];
        let mut weights: Vec<VialWeight> = scatter
            .iter()
            .map(|f| VialWeight {
                location: VialLocation::Centre,
                before_g: 9.35,
                after_g: 9.35 - centre_g * f,
            })
            .collect();
        weights.extend(scatter[..3].iter().map(|f| VialWeight {
            location: VialLocation::Edge,
            before_g: 9.41,
            after_g: 9.41 - edge_g * f,
        }));
        let mut d = draft(
            s,
            &format!("Kv test at {pressure} mTorr"),
            RunKind::Gravimetric,
            on,
        );
        d.chamber_pressure_mtorr = Some(pressure);
        d.test_start_h = Some(0.0);
        d.test_end_h = Some(hours);
        d.cake_appearance = CakeAppearance::NoCake;
        d.weights = weights;
        d.notes = format!(
            "Sublimation test: shelf held at {shelf} °C from the moment the vacuum was pulled, \
             stopped after {hours} h with ice left; vials weighed before and after."
        );
        let data = recorded(&format!("kv-test-{pressure}-mtorr.csv"), &series)?;
        store.create_run(actor, &d, Some(&data)).await?;
    }
    Ok(())
}

/// The platform cycle run with the trehalose reference: centre and edge probes, both
/// gauges, thief samples through secondary drying.
async fn development_run(store: &Store, actor: &Actor, s: &Scene) -> Result<(), AppError> {
    let cycle = store.get_cycle(s.cycle_id).await?;
    let p = &cycle.program;
    let mut spec = SyntheticRunSpec::demo(true_base(&s.base));
    spec.edge_kv_factor = TRUE_EDGE_FACTOR;
    spec.freezing = FreezingSpec {
        start_c: 5.0,
        ramp_c_per_min: p.freezing.ramp_c_per_min,
        hold_c: p.freezing.hold_temp_c,
        hold_h: p.freezing.hold_min / 60.0,
    };
    spec.annealing = p.annealing.map(|a| AnnealingSpec {
        temp_c: a.temp_c,
        ramp_c_per_min: a.return_ramp_c_per_min.unwrap_or(p.freezing.ramp_c_per_min),
        hold_h: a.hold_min / 60.0,
    });
    spec.primary_shelf_temp_c = p.primary.shelf_temp_c;
    spec.primary_ramp_c_per_min = p.primary.ramp_c_per_min;
    spec.chamber_pressure_mtorr = p.primary.chamber_pressure_mtorr;
    spec.secondary_temp_c = p.secondary.shelf_temp_c;
    spec.secondary_ramp_c_per_min = p.secondary.ramp_c_per_min;
    spec.secondary_hold_h = p.secondary.hold_min / 60.0;
    spec.sample_interval_min = 5.0;
    spec.probes = vec![
        ProbeSpec {
            label: "C1".into(),
            position: ProbePosition::Centre,
        },
        ProbeSpec {
            label: "C2".into(),
            position: ProbePosition::Centre,
        },
        ProbeSpec {
            label: "E1".into(),
            position: ProbePosition::Edge,
        },
    ];
    spec.seed = 7;
    let run = synthesize_run(&spec).map_err(bad)?;
    // Thief samples: two hours into the ramp's start, then through the hold at the
    // secondary shelf (invented desorption constants).
    let start = run.secondary_ramp_start_h;
    let samples = moisture_samples(&DesorptionSpec {
        initial_water_fraction: 0.065,
        equilibrium_water_fraction: 0.006,
        rate_per_h_at_reference: 0.45,
        reference_temp_c: 40.0,
        activation_energy_kj_mol: 45.0,
        holds: vec![(25.0, 3.0), (spec.secondary_temp_c, 5.0)],
        samples_per_hold: 3,
        noise: 0.0005,
        seed: 11,
    });
    let mut d = draft(
        s,
        "Platform A, development run 1",
        RunKind::Development,
        date!(2026 - 10 - 20),
    );
    d.moisture = samples
        .iter()
        .map(|m| MoistureEntry {
            time_h: ((start + m.time_h) * 100.0).round() / 100.0,
            shelf_temp_c: m.shelf_temp_c,
            water_percent: (m.water_fraction * 10_000.0).round() / 100.0,
            method: "Karl Fischer (oven)".into(),
        })
        .collect();
    d.cake_appearance = CakeAppearance::Intact;
    d.cake_notes = "Elegant cakes; edge vials slightly shrunk from the wall.".into();
    d.notes = "Thermocouples in two centre vials and one front-edge vial; the Pirani read \
               against the capacitance manometer for the end of primary drying."
        .into();
    let data = recorded("platform-a-run-1.csv", &run.series)?;
    store.create_run(actor, &d, Some(&data)).await?;
    Ok(())
}

/// Adds the demo runs once (a database that has runs already is left as it is).
pub async fn seed_runs(store: &Store) -> Result<usize, AppError> {
    if !store.list_runs(RunFilter::default()).await?.is_empty() {
        return Ok(0);
    }
    let Some(scene) = scene(store).await? else {
        return Ok(0);
    };
    let Some(user) = store.user_by_name("mhollis").await?.map(|(u, _)| u) else {
        return Ok(0);
    };
    let actor = user.actor(true);
    gravimetric_series(store, &actor, &scene).await?;
    development_run(store, &actor, &scene).await?;
    Ok(4)
}
