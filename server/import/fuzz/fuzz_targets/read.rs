//! Any bytes: the readers answer a trace, a run or an error, and never panic.
#![no_main]

use glasspoint_import::{read_dsc, read_run, ColumnChoice, Limits};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let limits = Limits {
        max_rows: 10_000,
        ..Limits::default()
    };
    let _ = read_run(data, limits, None);
    if let Ok(import) = read_dsc(data, limits, ColumnChoice::default()) {
        for i in 0..import.segments.len() {
            let _ = import.segment_trace(i);
        }
    }
});
