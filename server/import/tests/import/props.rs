//! Property tests: whatever the bytes, the readers answer a table, a run or a mapping
//! request, or an error; never a panic.

use glasspoint_import::{
    read_dsc, read_run, read_table, ColumnChoice, ColumnMapping, Limits, RunRole,
};
use proptest::prelude::*;

fn small() -> Limits {
    Limits {
        max_rows: 500,
        ..Limits::default()
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(512))]

    #[test]
    fn any_bytes_parse_or_give_an_error(bytes in proptest::collection::vec(any::<u8>(), 0..3000)) {
        let _ = read_dsc(&bytes[..], small(), ColumnChoice::default());
    }

    #[test]
    fn any_delimited_looking_text_parses_or_gives_an_error(
        text in "[0-9a-zA-Z.,;:=\\t \"°()\\[\\]/+\\-eE\\r\\n]{0,2000}"
    ) {
        let _ = read_dsc(text.as_bytes(), small(), ColumnChoice::default());
        let mut utf16 = vec![0xFE, 0xFF];
        for u in text.encode_utf16() {
            utf16.extend_from_slice(&u.to_be_bytes());
        }
        let _ = read_dsc(&utf16[..], small(), ColumnChoice::default());
    }

    #[test]
    fn written_numbers_read_back_exactly(
        rows in proptest::collection::vec((-1e6f64..1e6, -1e3f64..1e3), 2..60),
        layout in 0usize..4,
    ) {
        let (sep, comma) = [(",", false), (";", true), ("\t", false), (" ", true)][layout];
        let mut text = String::from("Temperature (°C)") + sep + "Heat flow (mW)\n";
        for (t, h) in &rows {
            let line = format!("{t}{sep}{h}\n");
            text.push_str(&if comma { line.replace('.', ",") } else { line });
        }
        let table = read_table(text.as_bytes(), small()).expect("a well-formed table reads");
        let t: Vec<f64> = rows.iter().map(|r| r.0).collect();
        let h: Vec<f64> = rows.iter().map(|r| r.1).collect();
        prop_assert_eq!(&table.data[0], &t);
        prop_assert_eq!(&table.data[1], &h);
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(512))]

    #[test]
    fn any_bytes_give_a_run_a_mapping_request_or_an_error(
        bytes in proptest::collection::vec(any::<u8>(), 0..3000)
    ) {
        let _ = read_run(&bytes[..], small(), None);
        let _ = read_run(&bytes[..], small(), Some(&run_mapping()));
    }

    #[test]
    fn any_run_looking_text_gives_a_run_a_mapping_request_or_an_error(
        text in "(Time|Shelf|Probe edge|Pirani|CM|[0-9:.\\-T ]{1,12}|[,;\\t]|\\r?\\n|°C|mTorr|\\(h\\)|---){0,200}"
    ) {
        let _ = read_run(text.as_bytes(), small(), None);
        let _ = read_run(text.as_bytes(), small(), Some(&run_mapping()));
    }
}

fn run_mapping() -> Vec<ColumnMapping> {
    [
        ("Time", RunRole::Time),
        ("Shelf", RunRole::Shelf),
        ("Pirani", RunRole::Pirani),
    ]
    .into_iter()
    .map(|(header, role)| ColumnMapping {
        header: header.into(),
        role,
    })
    .collect()
}
