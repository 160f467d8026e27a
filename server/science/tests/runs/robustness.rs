//! The readers answer any run without panicking.

use super::*;
use proptest::prelude::*;

fn reading() -> impl Strategy<Value = f64> {
    prop_oneof![9 => -80.0..60.0f64, 1 => Just(f64::NAN)]
}

proptest! {
    #[test]
    fn on_any_run_the_readers_answer_without_panicking(
        steps in proptest::collection::vec(0.0..0.5f64, 2..60),
        shelf in proptest::collection::vec(-60.0..50.0f64, 60),
        probe in proptest::collection::vec(reading(), 60),
        pressure in proptest::collection::vec(prop_oneof![50.0..2000.0f64, Just(f64::NAN)], 60),
    ) {
        let n = steps.len();
        let time_h: Vec<f64> = steps.iter().scan(0.0, |t, d| { *t += d; Some(*t) }).collect();
        let series = RunSeries {
            time_h: time_h.clone(),
            shelf_c: shelf[..n].to_vec(),
            probes: vec![Probe { label: "P".into(), position: ProbePosition::Centre, temp_c: probe[..n].to_vec() }],
            manometer_mtorr: Some(vec![100.0; n]),
            pirani_mtorr: Some(pressure[..n].to_vec()),
            condenser_c: None,
        };
        let phases = find_phases(&series, None);
        prop_assert!(phases.iter().all(|p| p.end_h > p.start_h));
        for e in excursions(&series, -30.0, 0.0, f64::MAX) {
            prop_assert!(e.end_h >= e.start_h && e.peak_c > -30.0);
        }
        let _ = probe_arrivals(&series, 0.0, 1.0);
        let _ = comparative_pressure(&time_h, &pressure[..n], &vec![100.0; n]);
    }
}
