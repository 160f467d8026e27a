//! Parse a delimited DSC export and analyse its heating segment (suggested windows: the
//! Tg' step and the melt), end to end. Targets: 1 000 000 rows under 1 s, 100 000 under
//! 100 ms.

use criterion::{criterion_group, criterion_main, Criterion};
use glasspoint_import::{read_dsc, ColumnChoice, Limits};
use glasspoint_science::dsc::{analyse, DscAnalysisInput, Exo, HeatFlowUnit};

/// A heating run −60 → 20 °C with a Tg' step at −32 °C and a melt near −2 °C, `rows` rows.
fn export(rows: usize) -> Vec<u8> {
    let mut out = String::from("Sample mass: 5 mg\nTime (min),Temperature (°C),Heat flow (mW)\n");
    for i in 0..rows {
        let t = -60.0 + 80.0 * i as f64 / rows as f64;
        let endo = 0.025 * (1.0 + (t + 32.0).tanh()) + 4.0 * (-(t + 2.0).powi(2) / 8.0).exp();
        let noise = 0.001 * ((i as f64) * 12.9898).sin();
        out.push_str(&format!(
            "{:.6},{:.6},{:.6}\n",
            (t + 60.0) / 10.0,
            t,
            -endo + noise
        ));
    }
    out.into_bytes()
}

fn parse_and_analyse(bytes: &[u8]) -> usize {
    let imp = read_dsc(bytes, Limits::default(), ColumnChoice::default()).expect("reads");
    let (t, hf) = imp.segment_trace(0).expect("one heating segment");
    let out = analyse(&DscAnalysisInput {
        temperature_c: t,
        heat_flow: hf,
        glass_transition_window_c: None,
        peak_windows_c: None,
        exo: Exo::Up,
        sample_mass_mg: imp.sample_mass_mg,
        heating_rate_c_min: Some(10.0),
        heat_flow_unit: HeatFlowUnit::MilliWatt,
        smoothing_points: None,
    })
    .expect("analyses");
    out.peaks.len()
}

fn bench(c: &mut Criterion) {
    let mut g = c.benchmark_group("parse_and_analyse");
    g.sample_size(10);
    for rows in [100_000, 1_000_000] {
        let bytes = export(rows);
        g.bench_function(format!("{rows} rows"), |b| {
            b.iter(|| parse_and_analyse(&bytes))
        });
    }
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
