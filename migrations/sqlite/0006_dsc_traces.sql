-- DSC traces: the original file as uploaded (bytes and SHA-256), the arrays read from it
-- (JSON text; the audit trail keeps the hash, not the bytes or the arrays, which the
-- hashed original reproduces), the conditions of the run, and the link from measurements
-- read off a trace.
CREATE TABLE dsc_traces (
    id INTEGER PRIMARY KEY,
    formulation_id INTEGER NOT NULL REFERENCES formulations (id),
    file_name TEXT NOT NULL,
    original_bytes BLOB NOT NULL,
    content_sha256 TEXT NOT NULL,
    byte_count INTEGER NOT NULL,
    temperature_c_json TEXT NOT NULL,
    heat_flow_json TEXT NOT NULL,
    heat_flow_unit TEXT NOT NULL,
    segments TEXT NOT NULL,
    import_notes TEXT NOT NULL DEFAULT '',
    sample_mass_mg REAL,
    heating_rate_c_min REAL,
    exo TEXT NOT NULL,
    notes TEXT NOT NULL DEFAULT '',
    version INTEGER NOT NULL DEFAULT 1,
    created_at TEXT NOT NULL,
    updated_at TEXT NOT NULL
);
CREATE INDEX dsc_traces_formulation ON dsc_traces (formulation_id);

ALTER TABLE measurements ADD COLUMN trace_id INTEGER REFERENCES dsc_traces (id);
