-- Runs: one execution of a cycle on a dryer. The load, the data the dryer recorded (the
-- original export as bytes and SHA-256, and the series read from it as JSON text; the
-- audit trail keeps the hash, not the bytes or the series), manual entries (moisture
-- samples, vial weights, the cake at the end), and what the team adopted from runs into
-- its containers, dryers and formulations.
CREATE TABLE runs (
    id INTEGER PRIMARY KEY,
    name TEXT NOT NULL,
    kind TEXT NOT NULL,
    cycle_id INTEGER NOT NULL REFERENCES cycles (id),
    dryer_id INTEGER REFERENCES dryers (id),
    run_on TEXT NOT NULL,
    container_id INTEGER NOT NULL REFERENCES containers (id),
    vial_count INTEGER,
    fill_volume_ml REAL NOT NULL,
    probed_formulation_id INTEGER REFERENCES formulations (id),
    chamber_pressure_mtorr REAL,
    test_start_h REAL,
    test_end_h REAL,
    cake_appearance TEXT NOT NULL DEFAULT 'not_inspected',
    cake_notes TEXT NOT NULL DEFAULT '',
    notes TEXT NOT NULL DEFAULT '',
    review_state TEXT NOT NULL DEFAULT 'recorded',
    file_name TEXT NOT NULL DEFAULT '',
    original_bytes BLOB,
    content_sha256 TEXT NOT NULL DEFAULT '',
    byte_count INTEGER NOT NULL DEFAULT 0,
    series_json TEXT,
    import_notes TEXT NOT NULL DEFAULT '',
    version INTEGER NOT NULL DEFAULT 1,
    created_at TEXT NOT NULL,
    updated_at TEXT NOT NULL
);
CREATE INDEX runs_cycle ON runs (cycle_id);
CREATE INDEX runs_container ON runs (container_id);

CREATE TABLE run_formulations (
    run_id INTEGER NOT NULL REFERENCES runs (id),
    formulation_id INTEGER NOT NULL REFERENCES formulations (id),
    PRIMARY KEY (run_id, formulation_id)
);
CREATE INDEX run_formulations_formulation ON run_formulations (formulation_id);

CREATE TABLE run_moisture_samples (
    id INTEGER PRIMARY KEY,
    run_id INTEGER NOT NULL REFERENCES runs (id),
    position INTEGER NOT NULL,
    time_h REAL NOT NULL,
    shelf_temp_c REAL NOT NULL,
    water_percent REAL NOT NULL,
    method TEXT NOT NULL,
    UNIQUE (run_id, position)
);

CREATE TABLE run_vial_weights (
    id INTEGER PRIMARY KEY,
    run_id INTEGER NOT NULL REFERENCES runs (id),
    position INTEGER NOT NULL,
    location TEXT NOT NULL,
    before_g REAL NOT NULL,
    after_g REAL NOT NULL,
    UNIQUE (run_id, position)
);

-- A dryer's export columns, mapped once and remembered by header text.
CREATE TABLE dryer_column_maps (
    dryer_id INTEGER NOT NULL REFERENCES dryers (id),
    position INTEGER NOT NULL,
    header TEXT NOT NULL,
    role TEXT NOT NULL,
    PRIMARY KEY (dryer_id, position)
);

-- What a run's reading was adopted into: coefficients, the runs they came from, residuals,
-- and who adopted them (re-authenticated) and when. Written in the same transaction as the
-- audited change of the container, dryer or formulation.
CREATE TABLE calibrations (
    id INTEGER PRIMARY KEY,
    kind TEXT NOT NULL,
    entity TEXT NOT NULL,
    entity_id INTEGER NOT NULL,
    run_ids TEXT NOT NULL,
    result_json TEXT NOT NULL,
    reason TEXT NOT NULL,
    user_id INTEGER NOT NULL REFERENCES users (id),
    full_name TEXT NOT NULL,
    adopted_at TEXT NOT NULL
);
CREATE INDEX calibrations_target ON calibrations (entity, entity_id);

-- The model rerun against a run each time its basis changes (typical values, then the
-- team's own Kv and Rp), with its error: so the team sees its model get better.
CREATE TABLE run_model_checks (
    id INTEGER PRIMARY KEY,
    run_id INTEGER NOT NULL REFERENCES runs (id),
    basis TEXT NOT NULL,
    basis_key TEXT NOT NULL,
    predicted_end_h REAL,
    measured_end_h REAL,
    end_error_h REAL,
    probe_rmse_c REAL,
    checked_at TEXT NOT NULL,
    UNIQUE (run_id, basis_key)
);
