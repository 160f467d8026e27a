//! DSC analysis against the outside: the exact tanh fixture of references.md, a Gaussian
//! peak with its tangent onset computed here independently, and six published heating runs
//! (fpex0; Sommer, Hohenauer & Barz 2022).

use approx::assert_abs_diff_eq;
use glasspoint_science::calc;
use glasspoint_science::dsc::{analyse, DscAnalysisInput, Exo, HeatFlowUnit, PeakKind};
use serde_json::json;

#[path = "dsc/fpex0.rs"]
mod fpex0;

/// Tolerance on characteristic temperatures of the synthetic fixtures, as the brief and
/// references.md state it: 0.2 °C.
const TOL_C: f64 = 0.2;

fn input(t: Vec<f64>, hf: Vec<f64>, exo: Exo) -> DscAnalysisInput {
    DscAnalysisInput {
        temperature_c: t,
        heat_flow: hf,
        glass_transition_window_c: None,
        peak_windows_c: Some(vec![]),
        exo,
        sample_mass_mg: None,
        heating_rate_c_min: None,
        heat_flow_unit: HeatFlowUnit::MilliWatt,
        smoothing_points: None,
    }
}

/// Seeded Gaussian noise (xorshift64* and Box–Muller), so every run sees the same numbers.
struct Noise(u64);
impl Noise {
    fn uniform(&mut self) -> f64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        let x = self.0.wrapping_mul(0x2545_F491_4F6C_DD1D);
        ((x >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    fn gauss(&mut self) -> f64 {
        let (u, v) = (self.uniform(), self.uniform());
        (-2.0 * u.ln()).sqrt() * (std::f64::consts::TAU * v).cos()
    }
}

/// Uneven grid from `lo` by about `step`.
fn grid(lo: f64, hi: f64, step: f64) -> Vec<f64> {
    let n = ((hi - lo) / step) as usize;
    (0..=n)
        .map(|i| lo + step * i as f64 + 0.2 * step * (i as f64).sin())
        .collect()
}

/// references.md, "Exact synthetic fixture": f(T) = a + bT + (Δ/2)[1 + tanh((T − Tm)/w)]
/// has midpoint and inflection Tm and tangent onset/end Tm ∓ w for any baseline slope b.
fn tanh_step(t: &[f64], a: f64, b: f64, delta: f64, tm: f64, w: f64) -> Vec<f64> {
    t.iter()
        .map(|&x| a + b * x + 0.5 * delta * (1.0 + ((x - tm) / w).tanh()))
        .collect()
}

fn check_tanh(noise_sd: f64, b: f64, exo: Exo) {
    let (tm, w, delta) = (-32.0, 1.5, 0.4);
    let t = grid(-60.0, -5.0, 0.05);
    let mut f = tanh_step(&t, 1.0, b, delta, tm, w);
    let mut rng = Noise(0x9E37_79B9_7F4A_7C15);
    f.iter_mut().for_each(|v| *v += noise_sd * rng.gauss());
    // Exotherm up: the endothermic step of Tg is drawn downwards.
    let sign = if exo == Exo::Up { -1.0 } else { 1.0 };
    let hf = f.iter().map(|v| sign * v).collect();
    let mut inp = input(t, hf, exo);
    inp.glass_transition_window_c = Some([tm - 10.0 * w, tm + 10.0 * w]);
    inp.sample_mass_mg = Some(10.0);
    inp.heating_rate_c_min = Some(10.0);
    let out = analyse(&inp).expect("fixture analyses");
    let g = out.glass_transition.expect("a glass transition");
    let at = format!("noise {noise_sd}, slope {b}, exo {exo:?}");
    assert_abs_diff_eq!(g.transition.midpoint_c, tm, epsilon = TOL_C);
    assert_abs_diff_eq!(g.transition.inflection_c, tm, epsilon = TOL_C);
    assert_abs_diff_eq!(g.transition.onset_c, tm - w, epsilon = TOL_C);
    assert_abs_diff_eq!(g.transition.end_c, tm + w, epsilon = TOL_C);
    // Step: Δ, to 2 % (the fixture's definition); ΔCp = step/(mass·rate) in J/(g·K).
    assert!(
        (g.transition.step - delta).abs() < 0.02 * delta,
        "{at}: {g:?}"
    );
    let dcp = g.delta_cp_j_gk.expect("ΔCp with mass and rate");
    assert!(
        (dcp - delta / (10.0 * 10.0 / 60.0)).abs() < 0.02 * dcp,
        "{at}"
    );
}

#[test]
fn the_tanh_fixture_gives_its_midpoint_inflection_onset_and_end_for_any_baseline_slope() {
    for b in [-0.02, 0.0, 0.015] {
        for exo in [Exo::Up, Exo::Down] {
            check_tanh(0.0, b, exo);
        }
    }
}

#[test]
fn the_tanh_fixture_with_seeded_noise_stays_within_a_fifth_of_a_degree() {
    // Noise 1 % of the step height (common practice for a clear Tg' step, no source).
    for b in [-0.02, 0.0, 0.015] {
        check_tanh(0.004, b, Exo::Up);
    }
}

/// Gaussian peak A·exp(−(T − Tp)²/(2σ²)) on a sloped baseline. Check values: the peak at
/// Tp (exact by symmetry of the grid and of the smoothing), and the ASTM E794 tangent
/// onset and end computed here from the function itself: the steepest leading point is
/// the inflection, where g'' = 0; its tangent meets the baseline at T − g/g'.
#[test]
fn a_gaussian_endotherm_has_its_peak_exactly_and_its_tangent_onset() {
    let (tp, sigma, amp) = (100.0, 2.0, 3.0);
    let t: Vec<f64> = (0..=1000).map(|i| 50.0 + f64::from(i) / 10.0).collect();
    let g = |x: f64| amp * (-(x - tp).powi(2) / (2.0 * sigma * sigma)).exp();
    let dg = |x: f64| -(x - tp) / (sigma * sigma) * g(x);
    // Inflection by bisection on g'' = g·((x−Tp)²/σ⁴ − 1/σ²) between Tp − 3σ and Tp.
    let d2 = |x: f64| g(x) * ((x - tp).powi(2) / sigma.powi(4) - 1.0 / (sigma * sigma));
    let (mut lo, mut hi) = (tp - 3.0 * sigma, tp);
    for _ in 0..80 {
        let mid = 0.5 * (lo + hi);
        if (d2(lo) > 0.0) == (d2(mid) > 0.0) {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    let onset = lo - g(lo) / dg(lo);
    let end = 2.0 * tp - onset; // mirror image
    let area = amp * sigma * (std::f64::consts::TAU).sqrt(); // ∫ of a Gaussian
                                                             // Exotherm down: an endotherm points up.
    let hf: Vec<f64> = t.iter().map(|&x| 0.5 + 0.01 * x + g(x)).collect();
    let mut inp = input(t, hf, Exo::Down);
    inp.peak_windows_c = Some(vec![[tp - 8.0 * sigma, tp + 8.0 * sigma]]);
    let out = analyse(&inp).expect("analyses");
    let p = &out.peaks[0].peak;
    assert_eq!(p.kind, PeakKind::Endotherm);
    assert_abs_diff_eq!(p.peak_c, tp, epsilon = 1e-9);
    // Smoothing over ±0.4 K blunts the edge slope by under 1 % (module docs): 0.05 °C.
    assert_abs_diff_eq!(p.onset_c, onset, epsilon = 0.05);
    assert_abs_diff_eq!(p.end_c, end, epsilon = 0.05);
    assert!((p.area - area).abs() < 1e-3 * area, "{} vs {area}", p.area);
}

#[test]
fn an_exotherm_is_found_as_one_whichever_way_it_is_drawn() {
    let t: Vec<f64> = (0..=400).map(|i| -60.0 + f64::from(i) / 10.0).collect();
    let g = |x: f64| (-(x + 40.0_f64).powi(2) / 2.0).exp();
    for (exo, sign) in [(Exo::Up, 1.0), (Exo::Down, -1.0)] {
        let hf = t.iter().map(|&x| sign * g(x)).collect();
        let mut inp = input(t.clone(), hf, exo);
        inp.peak_windows_c = Some(vec![[-50.0, -30.0]]);
        let out = analyse(&inp).expect("analyses");
        assert_eq!(out.peaks[0].peak.kind, PeakKind::Exotherm);
        assert_abs_diff_eq!(out.peaks[0].peak.peak_c, -40.0, epsilon = 1e-9);
    }
}

/// On cooling the leading edge is the high-temperature side (ASTM E794's leading edge is
/// the one met first). Check values: the Gaussian's tangent intersections, mirrored, from
/// its inflection at Tp ± σ (the tangent meets the baseline at T − g/g' there).
#[test]
fn on_cooling_the_onset_is_on_the_high_temperature_side() {
    let (tp, sigma) = (-20.0, 1.5);
    let t: Vec<f64> = (0..=600).map(|i| 10.0 - f64::from(i) / 10.0).collect();
    let g = |x: f64| (-(x - tp).powi(2) / (2.0 * sigma * sigma)).exp();
    let dg = |x: f64| -(x - tp) / (sigma * sigma) * g(x);
    let high = tp + sigma - g(tp + sigma) / dg(tp + sigma);
    let low = tp - sigma - g(tp - sigma) / dg(tp - sigma);
    // A crystallization exotherm drawn up (exotherm up).
    let hf = t.iter().map(|&x| g(x)).collect();
    let mut inp = input(t, hf, Exo::Up);
    inp.peak_windows_c = Some(vec![[tp - 8.0 * sigma, tp + 8.0 * sigma]]);
    let p = analyse(&inp).expect("analyses").peaks[0].peak.clone();
    assert_eq!(p.kind, PeakKind::Exotherm);
    assert_abs_diff_eq!(p.onset_c, high, epsilon = 0.05);
    assert_abs_diff_eq!(p.end_c, low, epsilon = 0.05);
}

#[test]
fn suggested_windows_find_the_tg_prime_step_below_the_ice_melt() {
    // A frozen-solution heating run drawn from the fixtures above: a Tg' step (tanh, Tm
    // −32 °C) and a much larger melting endotherm near −2 °C. Check values: the fixture's Tm.
    let t = grid(-60.0, 10.0, 0.05);
    let step = tanh_step(&t, 0.0, 0.002, 0.05, -32.0, 1.0);
    let hf: Vec<f64> = t
        .iter()
        .zip(step)
        .map(|(&x, s)| -(s + 4.0 * (-(x + 2.0).powi(2) / 8.0).exp()))
        .collect();
    let mut inp = input(t, hf, Exo::Up);
    inp.peak_windows_c = None;
    let out = analyse(&inp).expect("analyses");
    let g = out.glass_transition.expect("a suggested Tg' window");
    assert!(out.windows.glass_transition_suggested);
    assert_abs_diff_eq!(g.transition.midpoint_c, -32.0, epsilon = TOL_C);
    assert_eq!(out.peaks[0].peak.kind, PeakKind::Endotherm);
    assert_abs_diff_eq!(out.peaks[0].peak.peak_c, -2.0, epsilon = TOL_C);
}

#[test]
fn one_melting_peak_is_suggested_once_whatever_else_the_trace_holds() {
    // The Gaussian endotherm of the test above beside a step drawn in the exothermic
    // direction (no glass transition looks like that): the peak's shoulders and the step
    // must not come back as further windows over the same peak. Common practice, no
    // source: one feature, one window.
    let t = grid(-70.0, 10.0, 0.05);
    let hf: Vec<f64> = t
        .iter()
        .map(|&x| {
            0.1 + 0.001 * x + 0.15 * (1.0 + ((x + 32.5) / 1.5).tanh())
                - 8.0 * (-((x + 1.5) / 1.2).powi(2)).exp()
        })
        .collect();
    let mut inp = input(t, hf, Exo::Up);
    inp.peak_windows_c = None;
    let out = analyse(&inp).expect("analyses");
    let melt: Vec<_> = out
        .peaks
        .iter()
        .filter(|p| (p.peak.peak_c + 1.5).abs() < 0.5)
        .collect();
    assert_eq!(
        melt.len(),
        1,
        "the melting peak is suggested once: {:?}",
        out.windows
    );
    let w = &out.windows.peak_windows_c;
    for (i, a) in w.iter().enumerate() {
        for b in &w[i + 1..] {
            assert!(
                a[1] <= b[0] || b[1] <= a[0],
                "suggested windows do not overlap: {w:?}"
            );
        }
    }
}

#[test]
fn a_lone_glass_transition_step_is_found_without_a_window() {
    // The tanh fixture (references.md: midpoint Tm, tangent onset/end Tm ∓ w) drawn as a
    // glass transition is drawn on heating: heat capacity rises, so with exotherms up the
    // curve steps down. No melt follows; the suggested window must still hold the step.
    let t = grid(-70.0, -5.0, 0.05);
    let hf: Vec<f64> = tanh_step(&t, 0.1, 0.001, 0.3, -32.5, 1.5)
        .into_iter()
        .map(|v| -v)
        .collect();
    let mut inp = input(t, hf, Exo::Up);
    inp.peak_windows_c = None;
    inp.glass_transition_window_c = None;
    let out = analyse(&inp).expect("analyses");
    let g = out.glass_transition.expect("the step is found");
    assert_abs_diff_eq!(g.transition.midpoint_c, -32.5, epsilon = TOL_C);
    assert_abs_diff_eq!(g.transition.onset_c, -34.0, epsilon = TOL_C);
    assert_abs_diff_eq!(g.transition.end_c, -31.0, epsilon = TOL_C);
}

#[test]
fn a_step_drawn_the_exothermic_way_gets_no_glass_transition_window() {
    // The same fixture with the sign a glass transition never has on heating (exotherms up,
    // curve stepping up): the suggestion must not invent a Tg′ window elsewhere.
    let t = grid(-70.0, -5.0, 0.05);
    let hf = tanh_step(&t, 0.1, 0.001, 0.3, -32.5, 1.5);
    let mut inp = input(t, hf, Exo::Up);
    inp.peak_windows_c = None;
    inp.glass_transition_window_c = None;
    let out = analyse(&inp).expect("analyses");
    assert!(out.glass_transition.is_none(), "{:?}", out.windows);
    assert!(
        out.windows.glass_transition_c.is_none(),
        "no window is suggested: {:?}",
        out.windows
    );
}

#[test]
fn too_few_points_are_refused_naming_the_field() {
    let err = calc::run(
        "dsc-analysis",
        json!({"temperature_c": [1.0, 2.0, 3.0], "heat_flow": [0.0, 0.0, 0.0]}),
    )
    .unwrap_err();
    assert_eq!(
        err,
        calc::CalcError::Input(glasspoint_science::InputError::new(
            "temperature_c",
            "has 3 points; the analysis needs at least 10"
        ))
    );
}

#[test]
fn a_temperature_that_turns_back_is_refused_naming_the_point() {
    let mut t: Vec<f64> = (0..20).map(f64::from).collect();
    t[7] = 5.5;
    let err = analyse(&input(t, vec![0.0; 20], Exo::Up)).unwrap_err();
    assert_eq!(err.field, "temperature_c[7]");
    assert!(err.message.contains("5.5"), "{}", err.message);
}

#[test]
fn a_nan_is_refused_naming_the_point() {
    let t: Vec<f64> = (0..20).map(f64::from).collect();
    let mut hf = vec![0.0; 20];
    hf[3] = f64::NAN;
    assert_eq!(
        analyse(&input(t, hf, Exo::Up)).unwrap_err().field,
        "heat_flow[3]"
    );
}

#[test]
fn a_window_outside_the_data_is_refused_naming_it() {
    let t: Vec<f64> = (0..50).map(f64::from).collect();
    let mut inp = input(t, vec![0.0; 50], Exo::Up);
    inp.peak_windows_c = Some(vec![[10.0, 20.0], [80.0, 90.0]]);
    let err = analyse(&inp).unwrap_err();
    assert_eq!(err.field, "peak_windows_c[0]"); // flat: no peak in the first window
    inp.peak_windows_c = Some(vec![[80.0, 90.0]]);
    let err = analyse(&inp).unwrap_err();
    assert_eq!(err.field, "peak_windows_c[0]");
    assert!(err.message.contains("outside the data"), "{}", err.message);
    inp.peak_windows_c = Some(vec![]);
    inp.glass_transition_window_c = Some([20.0, 21.0]);
    assert_eq!(
        analyse(&inp).unwrap_err().field,
        "glass_transition_window_c"
    );
}

#[test]
fn the_topic_answers_the_documented_shape() {
    let t: Vec<f64> = (0..=400).map(|i| -60.0 + f64::from(i) / 10.0).collect();
    let hf: Vec<f64> = tanh_step(&t, 0.0, 0.0, 0.3, -40.0, 1.0)
        .iter()
        .map(|v| -v)
        .collect();
    let out = calc::run(
        "dsc-analysis",
        json!({"temperature_c": t, "heat_flow": hf, "glass_transition_window_c": [-55.0, -25.0],
               "peak_windows_c": [], "sample_mass_mg": 10.0, "heating_rate_c_min": 10.0}),
    )
    .expect("answers");
    for key in [
        "onset_c",
        "midpoint_c",
        "inflection_c",
        "end_c",
        "step",
        "delta_cp_j_gk",
    ] {
        assert!(out["glass_transition"][key].is_number(), "{key}: {out}");
    }
    assert_eq!(out["windows"]["glass_transition_c"], json!([-55.0, -25.0]));
    assert_eq!(out["peaks"], json!([]));
}

mod never_panics {
    use glasspoint_science::dsc::{analyse, DscAnalysisInput, Exo, HeatFlowUnit};
    use proptest::prelude::*;

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(256))]

        /// Whatever the trace and windows, the analysis answers a result or an error.
        #[test]
        fn any_trace_and_windows_give_a_result_or_an_error(
            steps in proptest::collection::vec(0.0f64..3.0, 0..300),
            flows in proptest::collection::vec(-1e3f64..1e3, 0..300),
            gt in proptest::option::of((-100.0f64..300.0, -100.0f64..300.0)),
            peaks in proptest::option::of(proptest::collection::vec((-100.0f64..300.0, 0.0f64..50.0), 0..4)),
            smoothing in proptest::option::of(0usize..100),
        ) {
            let mut t = Vec::with_capacity(steps.len());
            let mut x = -60.0;
            for s in &steps {
                x += s;
                t.push(x);
            }
            let n = t.len().min(flows.len());
            let input = DscAnalysisInput {
                temperature_c: t[..n].to_vec(),
                heat_flow: flows[..n].to_vec(),
                glass_transition_window_c: gt.map(|(a, b)| [a, b]),
                peak_windows_c: peaks.map(|p| p.iter().map(|&(lo, w)| [lo, lo + w]).collect()),
                exo: Exo::Up,
                sample_mass_mg: Some(5.0),
                heating_rate_c_min: Some(10.0),
                heat_flow_unit: HeatFlowUnit::MilliWatt,
                smoothing_points: smoothing,
            };
            let _ = analyse(&input);
        }
    }
}
