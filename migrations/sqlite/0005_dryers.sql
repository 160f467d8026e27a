-- Freeze-dryers, each value with where it came from, and the equipment capability as
-- measured points (chamber pressure → highest sustainable sublimation rate). A cycle link
-- may name the dryer, the vial count and the share of edge vials of its load.
CREATE TABLE dryers (
    id INTEGER PRIMARY KEY,
    name TEXT NOT NULL,
    shelf_area_m2 REAL NOT NULL,
    shelf_area_source TEXT NOT NULL,
    min_pressure_mtorr REAL,
    min_pressure_source TEXT NOT NULL DEFAULT '',
    condenser_capacity_kg REAL,
    condenser_source TEXT NOT NULL DEFAULT '',
    capability_source TEXT NOT NULL DEFAULT '',
    edge_heat_factor REAL NOT NULL DEFAULT 1.0,
    edge_heat_source TEXT NOT NULL,
    typical_values BOOLEAN NOT NULL DEFAULT FALSE,
    notes TEXT NOT NULL DEFAULT '',
    version INTEGER NOT NULL DEFAULT 1,
    created_at TEXT NOT NULL,
    updated_at TEXT NOT NULL
);
CREATE UNIQUE INDEX dryers_name_key ON dryers (lower(name));

CREATE TABLE dryer_capability_points (
    id INTEGER PRIMARY KEY,
    dryer_id INTEGER NOT NULL REFERENCES dryers (id),
    position INTEGER NOT NULL,
    pressure_mtorr REAL NOT NULL,
    max_sublimation_kg_h REAL NOT NULL,
    UNIQUE (dryer_id, position)
);

ALTER TABLE cycle_links ADD COLUMN dryer_id INTEGER REFERENCES dryers (id);
ALTER TABLE cycle_links ADD COLUMN vial_count INTEGER;
ALTER TABLE cycle_links ADD COLUMN edge_vial_share REAL;
