//! Six baseline-corrected DSC heating runs of one material at 0.6–20 K/min, from the PyPI
//! package fpex0 0.9.1 (MIT; `tests/data/fpex0/LICENSE`): Sommer, Hohenauer & Barz (2022),
//! J. Therm. Anal. Calorim., doi:10.1007/s10973-022-11258-y. A melting peak, endothermic
//! direction positive. Check values: the data themselves (the temperature of their
//! largest value), the ASTM E794 tangent onset computed here independently from the raw
//! points, and the thermal lag: peak temperatures move up with heating rate (common
//! practice, no source).
//!
//! The tangent onsets of these runs move *down* with heating rate (about 128.4 °C at
//! 0.6 K/min to 123.7 °C at 10 K/min by the independent computation below): the melting
//! range of this material broadens faster than the lag shifts it. So the expectation
//! "onsets rise with rate" does not hold for these data and is not tested.

use glasspoint_science::dsc::{analyse, DscAnalysisInput, Exo, HeatFlowUnit, PeakKind};

const FILES: [&str; 6] = [
    "ID407-rate_0.60.json",
    "ID407-rate_1.25.json",
    "ID407-rate_2.50.json",
    "ID407-rate_5.00.json",
    "ID407-rate_10.00.json",
    "ID407-rate_20.00.json",
];

struct Run {
    rate: f64,
    t: Vec<f64>,
    y: Vec<f64>,
}

fn load(name: &str) -> Run {
    let path = format!("{}/tests/data/fpex0/{name}", env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(&path).expect("fixture is present");
    let v: serde_json::Value = serde_json::from_str(&text).expect("fixture is JSON");
    let nums = |k: &str| -> Vec<f64> {
        v[k].as_array()
            .expect("an array")
            .iter()
            .map(|x| x.as_f64().expect("a number"))
            .collect()
    };
    Run {
        rate: v["rate"].as_f64().expect("a rate"),
        t: nums("T"),
        y: nums("latentdata"),
    }
}

#[test]
fn all_six_published_runs_give_their_peak_where_the_data_put_it_and_peaks_rise_with_rate() {
    let mut peaks = Vec::new();
    for name in FILES {
        let run = load(name);
        let (t0, t1) = (run.t[0], run.t[run.t.len() - 1]);
        let window = [t0, t1];
        let input = DscAnalysisInput {
            temperature_c: run.t.clone(),
            heat_flow: run.y.clone(),
            glass_transition_window_c: None,
            peak_windows_c: Some(vec![window]),
            exo: Exo::Down,
            sample_mass_mg: None,
            heating_rate_c_min: Some(run.rate),
            heat_flow_unit: HeatFlowUnit::WattPerGram,
            smoothing_points: None,
        };
        let out = analyse(&input).unwrap_or_else(|e| panic!("{name}: {e}"));
        let p = &out.peaks[0].peak;
        assert_eq!(p.kind, PeakKind::Endotherm, "{name}");
        // The data's own maximum within the window.
        let imax = (0..run.y.len())
            .max_by(|&a, &b| run.y[a].total_cmp(&run.y[b]))
            .unwrap_or(0);
        let spacing = run.t[imax + 1] - run.t[imax - 1];
        let tol = spacing.max(0.2);
        assert!(
            (p.peak_c - run.t[imax]).abs() <= tol,
            "{name}: peak {} vs data maximum at {} (±{tol})",
            p.peak_c,
            run.t[imax]
        );
        assert!(p.onset_c < p.peak_c && p.peak_c < p.end_c, "{name}: {p:?}");
        let independent = tangent_onset(&run.t, &run.y, imax, 3);
        // Within 1 °C: the two differ in how they smooth a curved leading edge.
        assert!(
            (p.onset_c - independent).abs() < 1.0,
            "{name}: onset {} vs independent {independent}",
            p.onset_c
        );
        peaks.push((run.rate, p.peak_c));
    }
    for pair in peaks.windows(2) {
        assert!(pair[0].0 < pair[1].0);
        assert!(
            pair[1].1 > pair[0].1,
            "peaks should rise with rate: {peaks:?}"
        );
    }
}

/// ASTM E794 onset, written independently of the library: the steepest straight-line
/// slope over ±`h` raw points before the maximum, its tangent against the zero baseline
/// of these baseline-corrected data.
fn tangent_onset(t: &[f64], y: &[f64], imax: usize, h: usize) -> f64 {
    let mut best = (f64::NEG_INFINITY, 0.0, 0.0);
    for j in h..imax {
        let (xs, ys) = (&t[j - h..=j + h], &y[j - h..=j + h]);
        let n = xs.len() as f64;
        let mx = xs.iter().sum::<f64>() / n;
        let my = ys.iter().sum::<f64>() / n;
        let sxy: f64 = xs.iter().zip(ys).map(|(x, v)| (x - mx) * (v - my)).sum();
        let sxx: f64 = xs.iter().map(|x| (x - mx) * (x - mx)).sum();
        if sxy / sxx > best.0 {
            best = (sxy / sxx, mx, my);
        }
    }
    best.1 - best.2 / best.0
}
