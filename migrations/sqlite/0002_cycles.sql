-- Candidate cycles, their links to formulations, and dry-layer resistance per formulation.
CREATE TABLE cycles (
    id INTEGER PRIMARY KEY,
    name TEXT NOT NULL,
    status TEXT NOT NULL,
    notes TEXT NOT NULL DEFAULT '',
    freeze_ramp_c_min REAL NOT NULL,
    freeze_hold_c REAL NOT NULL,
    freeze_hold_min REAL NOT NULL,
    anneal_temp_c REAL,
    anneal_hold_min REAL,
    anneal_return_ramp_c_min REAL,
    primary_ramp_c_min REAL NOT NULL,
    primary_shelf_c REAL NOT NULL,
    primary_pressure_mtorr REAL NOT NULL,
    primary_hold_min REAL NOT NULL,
    secondary_ramp_c_min REAL NOT NULL,
    secondary_shelf_c REAL NOT NULL,
    secondary_pressure_mtorr REAL NOT NULL,
    secondary_hold_min REAL NOT NULL,
    condenser_temp_c REAL,
    sublimation_ceiling_kg_h_m2 REAL,
    version INTEGER NOT NULL DEFAULT 1,
    created_at TEXT NOT NULL,
    updated_at TEXT NOT NULL
);
CREATE UNIQUE INDEX cycles_name_key ON cycles (lower(name));

CREATE TABLE cycle_links (
    id INTEGER PRIMARY KEY,
    cycle_id INTEGER NOT NULL REFERENCES cycles (id),
    formulation_id INTEGER NOT NULL REFERENCES formulations (id),
    container_id INTEGER NOT NULL REFERENCES containers (id),
    fill_volume_ml REAL NOT NULL,
    created_at TEXT NOT NULL,
    UNIQUE (cycle_id, formulation_id, container_id)
);
CREATE INDEX cycle_links_formulation_idx ON cycle_links (formulation_id);

CREATE TABLE dry_layer_resistance (
    formulation_id INTEGER PRIMARY KEY REFERENCES formulations (id),
    r0_cm2_torr_h_g REAL NOT NULL,
    a1_cm_torr_h_g REAL NOT NULL,
    a2_per_cm REAL NOT NULL,
    source TEXT NOT NULL,
    version INTEGER NOT NULL DEFAULT 1,
    updated_at TEXT NOT NULL
);
