-- The notebook: materials library, containers, formulations and their measurements.
CREATE TABLE app_meta (
    key TEXT PRIMARY KEY,
    value TEXT NOT NULL
);

CREATE TABLE materials (
    id INTEGER PRIMARY KEY,
    name TEXT NOT NULL,
    role TEXT NOT NULL,
    freezing_behaviour TEXT NOT NULL,
    notes TEXT NOT NULL DEFAULT '',
    from_library BOOLEAN NOT NULL DEFAULT FALSE,
    version INTEGER NOT NULL DEFAULT 1,
    created_at TEXT NOT NULL,
    updated_at TEXT NOT NULL
);
CREATE UNIQUE INDEX materials_name_key ON materials (lower(name));

CREATE TABLE material_properties (
    id INTEGER PRIMARY KEY,
    material_id INTEGER NOT NULL REFERENCES materials (id),
    kind TEXT NOT NULL,
    value REAL NOT NULL,
    convention TEXT,
    source_kind TEXT NOT NULL,
    citation TEXT NOT NULL,
    measurement_ids TEXT NOT NULL DEFAULT '',
    UNIQUE (material_id, kind)
);

CREATE TABLE containers (
    id INTEGER PRIMARY KEY,
    name TEXT NOT NULL,
    kind TEXT NOT NULL,
    nominal_ml REAL NOT NULL,
    inner_area_cm2 REAL NOT NULL,
    outer_area_cm2 REAL NOT NULL,
    kc_cal_s_cm2_k REAL NOT NULL,
    kp_cal_s_cm2_k_torr REAL NOT NULL,
    kd_per_torr REAL NOT NULL,
    kv_source TEXT NOT NULL,
    typical_values BOOLEAN NOT NULL DEFAULT FALSE,
    notes TEXT NOT NULL DEFAULT '',
    version INTEGER NOT NULL DEFAULT 1,
    created_at TEXT NOT NULL,
    updated_at TEXT NOT NULL
);
CREATE UNIQUE INDEX containers_name_key ON containers (lower(name));

CREATE TABLE formulations (
    id INTEGER PRIMARY KEY,
    code TEXT NOT NULL,
    name TEXT NOT NULL,
    project TEXT NOT NULL DEFAULT '',
    status TEXT NOT NULL,
    ph REAL,
    fill_volume_ml REAL,
    container_id INTEGER REFERENCES containers (id),
    notes TEXT NOT NULL DEFAULT '',
    tags TEXT NOT NULL DEFAULT '',
    version INTEGER NOT NULL DEFAULT 1,
    created_at TEXT NOT NULL,
    updated_at TEXT NOT NULL
);
CREATE UNIQUE INDEX formulations_code_key ON formulations (lower(code));
CREATE INDEX formulations_project_idx ON formulations (project);

CREATE TABLE formulation_components (
    id INTEGER PRIMARY KEY,
    formulation_id INTEGER NOT NULL REFERENCES formulations (id),
    position INTEGER NOT NULL,
    material_id INTEGER NOT NULL REFERENCES materials (id),
    concentration REAL NOT NULL,
    unit TEXT NOT NULL
);
CREATE INDEX formulation_components_formulation_idx ON formulation_components (formulation_id);

CREATE TABLE measurements (
    id INTEGER PRIMARY KEY,
    formulation_id INTEGER NOT NULL REFERENCES formulations (id),
    kind TEXT NOT NULL,
    value_c REAL NOT NULL,
    residual_moisture_pct REAL,
    method TEXT NOT NULL,
    heating_rate_c_min REAL,
    sample_mass_mg REAL,
    pan TEXT NOT NULL DEFAULT '',
    instrument TEXT NOT NULL DEFAULT '',
    analyst TEXT NOT NULL,
    measured_on TEXT NOT NULL,
    replicate INTEGER NOT NULL,
    notes TEXT NOT NULL DEFAULT '',
    review_state TEXT NOT NULL,
    version INTEGER NOT NULL DEFAULT 1,
    created_at TEXT NOT NULL,
    updated_at TEXT NOT NULL
);
CREATE INDEX measurements_formulation_idx ON measurements (formulation_id);
