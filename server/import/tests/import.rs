//! The reader end to end on generated exports (every check value is the generated input
//! itself, or the tanh fixture of references.md for the analysis), and property tests:
//! any bytes either parse or give an error, never a panic.

use glasspoint_import::{
    read_dsc, read_table, ColumnChoice, DecimalMark, Delimiter, HeatFlowUnit, Limits, SegmentKind,
};

#[path = "import/props.rs"]
mod props;
#[path = "import/run.rs"]
mod run;

/// A cool–hold–heat run: 20 → −60 °C at 10 °C/min, 5 min hold, −60 → 10 °C at 10 °C/min,
/// one row per 0.005 min. On heating: a Tg' step (tanh fixture, Tm −32 °C, w 1 °C) and an
/// ice-melt endotherm near −2 °C; exotherm up, so both point down.
fn export(sep: &str, decimal_comma: bool) -> String {
    let num = |x: f64| {
        let s = format!("{x:.5}");
        if decimal_comma {
            s.replace('.', ",")
        } else {
            s
        }
    };
    let mut out =
        String::from("Sample: invented\nSample mass: 5.20 mg\nHeating rate: 10 K/min\n\n");
    if decimal_comma {
        out = out.replace("5.20", "5,20");
    }
    out.push_str(
        &[
            "Time (min)",
            "Temperature (°C)",
            "Heat flow (mW)",
            "Rev heat flow (mW)",
        ]
        .join(sep),
    );
    out.push('\n');
    let mut time = 0.0;
    let mut row = |t: f64, hf: f64, out: &mut String| {
        out.push_str(&[num(time), num(t), num(hf), num(0.5 * hf)].join(sep));
        out.push('\n');
        time += 0.005;
    };
    for i in 0..1600 {
        row(20.0 - 0.05 * f64::from(i), 0.3, &mut out);
    }
    for _ in 0..1000 {
        row(-60.0, 0.0, &mut out);
    }
    for i in 0..=1400 {
        let t = -60.0 + 0.05 * f64::from(i);
        let endo =
            0.05 * (1.0 + ((t + 32.0) / 1.0).tanh()) / 2.0 + 4.0 * (-(t + 2.0).powi(2) / 8.0).exp();
        row(t, -endo, &mut out);
    }
    out
}

fn utf16le(s: &str) -> Vec<u8> {
    let mut b = vec![0xFF, 0xFE];
    for u in s.encode_utf16() {
        b.extend_from_slice(&u.to_le_bytes());
    }
    b
}

#[test]
fn a_utf16_semicolon_decimal_comma_export_reads_and_analyses() {
    let bytes = utf16le(&export(";", true));
    let imp = read_dsc(&bytes[..], Limits::default(), ColumnChoice::default()).expect("reads");
    assert_eq!(imp.table.encoding, "UTF-16LE");
    assert_eq!(
        (imp.table.delimiter, imp.table.decimal),
        (Delimiter::Semicolon, DecimalMark::Comma)
    );
    assert_eq!(imp.sample_mass_mg, Some(5.2));
    assert_eq!(imp.heating_rate_c_min, Some(10.0));
    assert_eq!(
        (
            imp.columns.time,
            imp.columns.temperature,
            imp.columns.heat_flow
        ),
        (Some(0), 1, 2)
    );
    assert_eq!(imp.columns.reversing_heat_flow, Some(3));
    assert!(imp.columns.ambiguities.is_empty());
    assert_eq!(imp.heat_flow_unit, HeatFlowUnit::MilliWatt);
    let kinds: Vec<_> = imp.segments.iter().map(|s| s.kind).collect();
    assert_eq!(
        kinds,
        vec![
            SegmentKind::Cooling,
            SegmentKind::Isothermal,
            SegmentKind::Heating
        ]
    );
    let rate = imp.segments[2].rate_c_min.expect("a time column");
    assert!((rate - 10.0).abs() < 0.01 * 10.0, "{rate}");

    let (t, hf) = imp.segment_trace(2).expect("a heating trace");
    let out = glasspoint_science::dsc::analyse(&glasspoint_science::dsc::DscAnalysisInput {
        temperature_c: t,
        heat_flow: hf,
        glass_transition_window_c: None,
        peak_windows_c: None,
        exo: glasspoint_science::dsc::Exo::Up,
        sample_mass_mg: imp.sample_mass_mg,
        heating_rate_c_min: imp.heating_rate_c_min,
        heat_flow_unit: glasspoint_science::dsc::HeatFlowUnit::MilliWatt,
        smoothing_points: None,
    })
    .expect("analyses");
    // references.md tanh fixture: midpoint Tm = −32 °C, within 0.2 °C.
    let g = out.glass_transition.expect("Tg' found");
    assert!((g.transition.midpoint_c + 32.0).abs() < 0.2, "{g:?}");
    assert!(
        (out.peaks[0].peak.peak_c + 2.0).abs() < 0.2,
        "{:?}",
        out.peaks
    );
}

#[test]
fn comma_tab_and_whitespace_exports_read_the_same_numbers() {
    let reference = read_table(export(",", false).as_bytes(), Limits::default()).expect("comma");
    for (sep, comma) in [("\t", false), ("\t", true), ("   ", false)] {
        let t = read_table(export(sep, comma).as_bytes(), Limits::default()).expect("reads");
        assert_eq!(t.data, reference.data, "{sep:?} {comma}");
        assert_eq!(t.columns, reference.columns, "{sep:?} {comma}");
    }
}

#[test]
fn kelvin_and_watt_per_gram_are_converted_and_latin1_is_read() {
    let text =
        b"Temp [K]\tHF [mW/mg]\n200.15\t0.5\n201.15\t0.6\n202.15\t0.7\n203.15\t0.8\n\xb0 end\n";
    let imp = read_dsc(&text[..], Limits::default(), ColumnChoice::default()).expect("reads");
    assert!((imp.temperature_c[0] + 73.0).abs() < 1e-9);
    assert_eq!(imp.heat_flow_unit, HeatFlowUnit::WattPerGram);
    assert!(imp.table.encoding.starts_with("Latin-1"));
}

#[test]
fn several_temperature_columns_are_reported_as_a_choice() {
    let text = "Program temperature (°C),Reference temperature (°C),Heat flow (mW)\n1,1.1,0\n2,2.1,0\n3,3.1,0\n";
    let imp = read_dsc(text.as_bytes(), Limits::default(), ColumnChoice::default()).expect("reads");
    assert_eq!(imp.columns.ambiguities.len(), 1);
    assert_eq!(imp.columns.ambiguities[0].purpose, "temperature");
    assert_eq!(imp.columns.ambiguities[0].candidates, vec![0, 1]);
    let chosen = ColumnChoice {
        temperature: Some(1),
        ..ColumnChoice::default()
    };
    let imp = read_dsc(text.as_bytes(), Limits::default(), chosen).expect("reads");
    assert!((imp.temperature_c[0] - 1.1).abs() < 1e-12);
    let wrong = ColumnChoice {
        temperature: Some(7),
        ..ColumnChoice::default()
    };
    let err = read_dsc(text.as_bytes(), Limits::default(), wrong).unwrap_err();
    assert_eq!(err.field, "temperature_column");
}

#[test]
fn headerless_columns_are_taken_by_position_and_flagged() {
    let imp = read_dsc(
        &b"0 -50 1\n0.1 -49 1\n0.2 -48 1\n"[..],
        Limits::default(),
        ColumnChoice::default(),
    )
    .expect("reads");
    assert_eq!(
        (
            imp.columns.time,
            imp.columns.temperature,
            imp.columns.heat_flow
        ),
        (Some(0), 1, 2)
    );
    assert!(!imp.columns.ambiguities.is_empty());
}

#[test]
fn refusals_name_what_is_wrong() {
    let cases: [(&[u8], &str); 5] = [
        (b"", "file"),
        (b"Temperature;Heat flow\nabc;def\n", "columns"),
        (b"T,HF\n1,2\n", "rows"),
        (&[0x31, 0, 0x3B, 0, 0x32, 0, 0x0A, 0], "encoding"),
        (b"1,2\n3,\xff\xfe\n", "rows"),
    ];
    for (bytes, field) in cases {
        let err = read_dsc(bytes, Limits::default(), ColumnChoice::default()).unwrap_err();
        assert_eq!(err.field, field, "{err}");
    }
    // UTF-8 for the first 64 KiB, then a byte that is not.
    let mut late = "1,2\n".repeat(20_000).into_bytes();
    late.extend_from_slice(b"3,\xff\n");
    let err = read_dsc(&late[..], Limits::default(), ColumnChoice::default()).unwrap_err();
    assert_eq!(err.field, "encoding", "{err}");
    let small = Limits {
        max_bytes: 100,
        ..Limits::default()
    };
    let err = read_dsc(
        export(",", false).as_bytes(),
        small,
        ColumnChoice::default(),
    )
    .unwrap_err();
    assert_eq!(err.field, "file");
}
