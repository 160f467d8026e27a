//! Run exports end to end. Every expected value is the written input converted by the unit
//! definitions (1 Torr = 101325/760 Pa; 1 mbar = 100 Pa; K − 273.15 = °C).

use glasspoint_import::{
    read_run, suggest_role, ColumnMapping, ImportError, Limits, ProbeSite, RunImport, RunRead,
    RunRole,
};

fn read(text: &str, mapping: Option<&[ColumnMapping]>) -> Result<RunRead, ImportError> {
    read_run(text.as_bytes(), Limits::default(), mapping)
}

fn ready(text: &str, mapping: Option<&[ColumnMapping]>) -> RunImport {
    match read(text, mapping) {
        Ok(RunRead::Ready(run)) => run,
        other => panic!("expected a run, got {other:?}"),
    }
}

fn close(a: &[f64], b: &[f64]) -> bool {
    a.len() == b.len()
        && a.iter()
            .zip(b)
            .all(|(x, y)| (x.is_nan() && y.is_nan()) || (x - y).abs() <= 1e-9 * y.abs().max(1.0))
}

fn map(pairs: &[(&str, &str)]) -> Vec<ColumnMapping> {
    pairs
        .iter()
        .map(|(h, r)| ColumnMapping {
            header: h.to_string(),
            role: r.parse().expect("a role"),
        })
        .collect()
}

#[test]
fn a_comma_export_with_a_units_row_reads_every_series() {
    let text = "Dryer: invented\n\
        Time,Shelf,Product centre,Product edge,CM,Pirani,Condenser\n\
        min,°C,°C,°C,mTorr,Torr,°C\n\
        0,-40,-42,-41.5,100,0.150,-70\n\
        30,-20,-38,-37,100,0.140,-72\n\
        60,-10,-35,-33,100,0.120,-72\n";
    let run = ready(text, None);
    assert!(close(&run.time_h, &[0.0, 0.5, 1.0]), "{:?}", run.time_h);
    assert!(close(&run.shelf_c, &[-40.0, -20.0, -10.0]));
    let sites: Vec<_> = run
        .probes
        .iter()
        .map(|p| (p.header.as_str(), p.site))
        .collect();
    assert_eq!(
        sites,
        vec![
            ("Product centre", ProbeSite::Centre),
            ("Product edge", ProbeSite::Edge)
        ]
    );
    assert!(close(&run.probes[1].temp_c, &[-41.5, -37.0, -33.0]));
    assert!(close(run.manometer_mtorr.as_deref().unwrap(), &[100.0; 3]));
    assert!(close(
        run.pirani_mtorr.as_deref().unwrap(),
        &[150.0, 140.0, 120.0]
    ));
    assert!(close(
        run.condenser_c.as_deref().unwrap(),
        &[-70.0, -72.0, -72.0]
    ));
    assert_eq!(run.preamble, vec![("Dryer".into(), "invented".into())]);
    assert_eq!(run.encoding, "UTF-8");
    assert_eq!(run.mapping.len(), 7);
    assert_eq!(run.mapping[4].role, RunRole::Manometer);
    assert!(run.notes.iter().any(|n| n.contains("header words")));
    assert!(!run.notes.iter().any(|n| n.contains("unit not stated")));
}

#[test]
fn a_semicolon_export_with_decimal_commas_and_date_times_reads_in_hours() {
    let text = "Date;Shelf inlet [°C];Probe front [°C];Pirani [µbar]\n\
        01.03.2024 23:30:00;-40,0;-45,2;133,3\n\
        02.03.2024 00:00:00;-30,5;-44,0;130,0\n\
        02.03.2024 00:45:00;-20,0;-40,1;\n";
    let run = ready(text, None);
    // Across midnight: 0, 30 and 75 minutes after the first row.
    assert!(close(&run.time_h, &[0.0, 0.5, 1.25]), "{:?}", run.time_h);
    assert!(close(&run.shelf_c, &[-40.0, -30.5, -20.0]));
    assert_eq!(run.probes[0].site, ProbeSite::Front);
    let pirani = run.pirani_mtorr.expect("a Pirani column");
    assert!(close(
        &pirani,
        &[133.3 * 0.750062, 130.0 * 0.750062, f64::NAN]
    ));
    assert!(run.manometer_mtorr.is_none() && run.condenser_c.is_none());
    assert!(run
        .notes
        .iter()
        .any(|n| n.contains("hours since the first row")));
}

#[test]
fn an_iso_date_time_column_and_an_elapsed_column_read_the_same() {
    let iso = "Timestamp,Shelf,Probe\n2024-03-01T10:00:00,-40,-45\n2024-03-01T12:30:00,-30,-44\n";
    let elapsed = "Elapsed,Shelf,Probe\n0:00:00,-40,-45\n2:30:00,-30,-44\n";
    for text in [iso, elapsed] {
        let run = ready(text, None);
        assert!(close(&run.time_h, &[0.0, 2.5]), "{text}: {:?}", run.time_h);
    }
}

#[test]
fn a_tab_export_in_kelvin_and_pascal_is_converted() {
    let text = "Elapsed (h)\tShelf (K)\tTC1 center (K)\tCapacitance manometer (Pa)\n\
        0\t233.15\t230.15\t13.3322\n\
        1\t253.15\t240.15\t10\n";
    let run = ready(text, None);
    assert!(close(&run.time_h, &[0.0, 1.0]));
    assert!(close(&run.shelf_c, &[-40.0, -20.0]), "{:?}", run.shelf_c);
    assert!(close(&run.probes[0].temp_c, &[-43.0, -33.0]));
    let cm = run.manometer_mtorr.expect("a manometer");
    // 13.3322 Pa is 100.000 mTorr to the six figures of the factor.
    assert!((cm[0] - 100.0).abs() < 1e-5 * 100.0, "{cm:?}");
    assert!((cm[1] - 75.0062).abs() < 1e-9, "{cm:?}");
}

#[test]
fn unstated_units_are_assumed_and_noted() {
    let run = ready("Time,Shelf,Product\n0,-40,-45\n90,-30,-44\n", None);
    // Time without a unit is minutes.
    assert!(close(&run.time_h, &[0.0, 1.5]));
    let unstated = run
        .notes
        .iter()
        .filter(|n| n.contains("unit not stated"))
        .count();
    assert_eq!(unstated, 3, "{:?}", run.notes);
    assert!(run.notes.iter().any(|n| n.contains("no probe position")));
}

#[test]
fn a_mapping_is_applied_by_header_text() {
    let text = "Clock (min),Plate (°C),Sensor 1 (°C),Sensor 2 (°C),Gauge (mbar)\n\
        0,-40,-45,-44,0.1\n\
        60,-30,-41,-40,0.1\n";
    // The header words settle nothing here: the analyst is asked.
    let Ok(RunRead::NeedsMapping(request)) = read(text, None) else {
        panic!("a mapping is needed");
    };
    assert!(
        request.reasons.iter().any(|r| r.contains("shelf")),
        "{request:?}"
    );
    let mapping = map(&[
        ("Clock (min)", "time"),
        ("Plate (°C)", "shelf"),
        ("Sensor 1 (°C)", "probe:edge"),
        ("Gauge (mbar)", "pirani"),
    ]);
    let run = ready(text, Some(&mapping));
    assert!(close(&run.time_h, &[0.0, 1.0]));
    assert!(close(&run.shelf_c, &[-40.0, -30.0]));
    assert_eq!(run.probes.len(), 1);
    assert_eq!(run.probes[0].site, ProbeSite::Edge);
    assert!(close(
        run.pirani_mtorr.as_deref().unwrap(),
        &[75.0062, 75.0062]
    ));
    assert_eq!(run.mapping[3].role, RunRole::Ignore);
    assert!(run
        .notes
        .iter()
        .any(|n| n.contains("“Sensor 2 (°C)” is not in the mapping")));
    // The applied mapping, stored and given back, reads the file the same way.
    assert_eq!(ready(text, Some(&run.mapping)).shelf_c, run.shelf_c);
}

#[test]
fn a_mapping_that_does_not_fit_the_file_is_refused_naming_the_mapping() {
    let text = "Time (h),Shelf (°C),Probe (°C),Pirani (mTorr)\n0,-40,-45,100\n1,-30,-41,90\n";
    let missing = map(&[("Time (h)", "time"), ("Shelf", "shelf")]);
    let err = read(text, Some(&missing)).unwrap_err();
    assert_eq!(err.field, "mapping");
    assert!(err.message.contains("“Shelf”"), "{err}");
    let twice = map(&[
        ("Time (h)", "time"),
        ("Shelf (°C)", "shelf"),
        ("Probe (°C)", "pirani"),
        ("Pirani (mTorr)", "pirani"),
    ]);
    assert_eq!(read(text, Some(&twice)).unwrap_err().field, "mapping");
    let wrong_unit = map(&[
        ("Time (h)", "time"),
        ("Shelf (°C)", "shelf"),
        ("Pirani (mTorr)", "probe:centre"),
    ]);
    let err = read(text, Some(&wrong_unit)).unwrap_err();
    assert_eq!(err.field, "mapping");
    assert!(err.message.contains("mTorr"), "{err}");
    let no_shelf = map(&[("Time (h)", "time"), ("Probe (°C)", "probe:centre")]);
    assert_eq!(
        read(text, Some(&no_shelf)).unwrap_err().field,
        "shelf_column"
    );
    let no_time = map(&[("Shelf (°C)", "shelf"), ("Probe (°C)", "probe:centre")]);
    assert_eq!(read(text, Some(&no_time)).unwrap_err().field, "time_column");
    let no_reading = map(&[("Time (h)", "time"), ("Shelf (°C)", "shelf")]);
    assert_eq!(read(text, Some(&no_reading)).unwrap_err().field, "columns");
}

#[test]
fn two_pirani_like_columns_need_a_choice_with_a_preview() {
    let text = "Time (h),Shelf (°C),Product (°C),Pirani 1 [mTorr],Pirani 2 [mTorr]\n\
        0,-40,-45,100,105\n\
        1,-30,-41,90,96\n";
    let Ok(RunRead::NeedsMapping(request)) = read(text, None) else {
        panic!("two Pirani columns need a choice");
    };
    assert_eq!(request.reasons.len(), 1, "{:?}", request.reasons);
    assert!(request.reasons[0].contains("“Pirani 1 [mTorr]”, “Pirani 2 [mTorr]”"));
    let suggested: Vec<RunRole> = request.columns.iter().map(|c| c.suggested).collect();
    assert_eq!(
        suggested,
        vec![
            RunRole::Time,
            RunRole::Shelf,
            RunRole::Probe(ProbeSite::Centre),
            RunRole::Pirani,
            RunRole::Pirani
        ]
    );
    assert_eq!(request.columns[3].index, 3);
    assert_eq!(request.preview.len(), 2);
    assert_eq!(request.preview[1], vec!["1", "-30", "-41", "90", "96"]);
}

#[test]
fn missing_readings_are_nan_and_rows_without_a_time_are_left_out() {
    let text = "Time (min);Shelf (°C);Product (°C);CM (mTorr)\n\
        0;-40;-45;100\n\
        10;;---;100\n\
        ;-35;-44;100\n\
        20;-30;-43\n";
    let run = ready(text, None);
    assert!(close(&run.time_h, &[0.0, 10.0 / 60.0, 20.0 / 60.0]));
    assert!(close(&run.shelf_c, &[-40.0, f64::NAN, -30.0]));
    assert!(close(&run.probes[0].temp_c, &[-45.0, f64::NAN, -43.0]));
    assert!(close(
        run.manometer_mtorr.as_deref().unwrap(),
        &[100.0, 100.0, f64::NAN]
    ));
    assert!(run
        .notes
        .iter()
        .any(|n| n.contains("1 rows without a time")));
}

#[test]
fn a_column_with_no_readings_is_refused_when_mapped_and_queried_when_guessed() {
    let text = "Time (h),Shelf (°C),Product (°C),Pirani (mTorr)\n0,-40,,100\n1,-30,,90\n";
    let Ok(RunRead::NeedsMapping(request)) = read(text, None) else {
        panic!("an empty probe column is queried");
    };
    assert!(request.reasons[0].contains("no readings"), "{request:?}");
    assert_eq!(request.columns[2].suggested, RunRole::Ignore);
    let mapping = map(&[
        ("Time (h)", "time"),
        ("Shelf (°C)", "shelf"),
        ("Product (°C)", "probe:centre"),
    ]);
    let err = read(text, Some(&mapping)).unwrap_err();
    assert_eq!(err.field, "columns");
    assert!(err.message.contains("Product"), "{err}");
}

#[test]
fn time_going_backwards_is_refused_naming_the_line() {
    let text = "Time (h),Shelf (°C),Product (°C)\n0,-40,-45\n1,-30,-41\n1,-30,-41\n0.5,-20,-38\n";
    let err = read(text, None).unwrap_err();
    assert_eq!(err.field, "time_column");
    assert!(err.message.contains("line 5"), "{err}");
}

#[test]
fn files_without_readings_are_refused_naming_the_file() {
    for text in [
        "",
        "Time,Shelf,Product\n",
        "Time,Shelf\n0,-40\n",
        "just words\n",
    ] {
        let err = read(text, None).unwrap_err();
        assert_eq!(err.field, "file", "{text:?}: {err}");
    }
}

#[test]
fn roles_are_stored_as_plain_strings() {
    let m = ColumnMapping {
        header: "TC 2".into(),
        role: RunRole::Probe(ProbeSite::Centre),
    };
    let json = serde_json::to_string(&m).unwrap();
    assert_eq!(json, r#"{"header":"TC 2","role":"probe:centre"}"#);
    assert_eq!(serde_json::from_str::<ColumnMapping>(&json).unwrap(), m);
    assert_eq!(
        serde_json::to_string(&ProbeSite::Back).unwrap(),
        r#""back""#
    );
    assert!(serde_json::from_str::<ColumnMapping>(r#"{"header":"x","role":"probe"}"#).is_err());
    assert_eq!(
        suggest_role("Rear thermocouple", None),
        RunRole::Probe(ProbeSite::Back)
    );
}

#[test]
fn rows_of_placeholders_while_sensors_warm_up_keep_the_header() {
    let text = "Run: invented\n\
        Time (h),Shelf (°C),Product front (°C),Product back (°C),Pirani (mTorr),Condenser (°C)\n\
        0,20,---,---,---,---\n\
        0.5,5,---,---,---,ERR\n\
        1,-40,-38,-39,760000,-60\n\
        1.5,-40,-42,-41,90,-70\n";
    let run = ready(text, None);
    assert_eq!(run.probes.len(), 2);
    assert!(close(
        &run.probes[1].temp_c,
        &[f64::NAN, f64::NAN, -39.0, -41.0]
    ));
    assert!(close(
        run.condenser_c.as_deref().unwrap(),
        &[f64::NAN, f64::NAN, -60.0, -70.0]
    ));
    assert_eq!(run.preamble, vec![("Run".into(), "invented".into())]);
}

#[test]
fn a_units_row_may_give_the_time_format() {
    let text = "Elapsed;Shelf;TC edge;Manometer\nhh:mm:ss;°C;°C;mbar\n\
        0:00:00;-40;-45;0,1\n0:06:00;-39,5;-44,5;0,1\n";
    let run = ready(text, None);
    assert!(close(&run.time_h, &[0.0, 0.1]));
    assert!(close(&run.shelf_c, &[-40.0, -39.5]));
    assert_eq!(run.mapping[0].header, "Elapsed");
    assert!(close(
        run.manometer_mtorr.as_deref().unwrap(),
        &[75.0062, 75.0062]
    ));
}
