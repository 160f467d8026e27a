-- Team records: accounts, sessions, API tokens, team settings, signatures and the
-- append-only, hash-chained audit trail.
CREATE TABLE users (
    id INTEGER PRIMARY KEY,
    username TEXT NOT NULL,
    full_name TEXT NOT NULL,
    role TEXT NOT NULL,
    password_hash TEXT NOT NULL,
    disabled BOOLEAN NOT NULL DEFAULT FALSE,
    version INTEGER NOT NULL DEFAULT 1,
    created_at TEXT NOT NULL,
    updated_at TEXT NOT NULL
);
CREATE UNIQUE INDEX users_username_key ON users (lower(username));

-- A session is found by the SHA-256 of its cookie value; the cookie itself is never stored.
CREATE TABLE sessions (
    id_hash TEXT PRIMARY KEY,
    user_id INTEGER NOT NULL REFERENCES users (id),
    csrf_token TEXT NOT NULL,
    address TEXT NOT NULL DEFAULT '',
    created_at TEXT NOT NULL,
    last_seen_at TEXT NOT NULL
);
CREATE INDEX sessions_user_idx ON sessions (user_id);

CREATE TABLE api_tokens (
    id INTEGER PRIMARY KEY,
    user_id INTEGER NOT NULL REFERENCES users (id),
    name TEXT NOT NULL DEFAULT '',
    scope TEXT NOT NULL,
    token_hash TEXT NOT NULL UNIQUE,
    created_at TEXT NOT NULL,
    last_used_at TEXT,
    revoked_at TEXT
);
CREATE INDEX api_tokens_user_idx ON api_tokens (user_id);

-- Failed sign-ins per account name and per address, for slowing guessing down.
CREATE TABLE login_throttle (
    key TEXT PRIMARY KEY,
    failures INTEGER NOT NULL,
    last_failure_at TEXT NOT NULL
);

-- One row: the team's settings, versioned and audited like any record.
CREATE TABLE team_settings (
    id INTEGER PRIMARY KEY,
    margin_c REAL,
    allow_unreviewed BOOLEAN NOT NULL DEFAULT TRUE,
    version INTEGER NOT NULL DEFAULT 1,
    created_at TEXT NOT NULL,
    updated_at TEXT NOT NULL
);

CREATE TABLE signatures (
    id INTEGER PRIMARY KEY,
    entity TEXT NOT NULL,
    entity_id INTEGER NOT NULL,
    version INTEGER NOT NULL,
    content_hash TEXT NOT NULL,
    meaning TEXT NOT NULL,
    reason TEXT NOT NULL DEFAULT '',
    user_id INTEGER NOT NULL REFERENCES users (id),
    full_name TEXT NOT NULL,
    signed_at TEXT NOT NULL
);
CREATE INDEX signatures_record_idx ON signatures (entity, entity_id);

CREATE TABLE audit_events (
    id INTEGER PRIMARY KEY,
    seq INTEGER NOT NULL UNIQUE,
    at TEXT NOT NULL,
    user_id INTEGER,
    username TEXT NOT NULL,
    action TEXT NOT NULL,
    entity TEXT NOT NULL,
    entity_id INTEGER,
    version INTEGER,
    before_json TEXT,
    after_json TEXT,
    reason TEXT NOT NULL DEFAULT '',
    prev_hash TEXT NOT NULL,
    hash TEXT NOT NULL
);
CREATE INDEX audit_events_record_idx ON audit_events (entity, entity_id);

-- The newest event's position and hash, so removing events from the end is detected too.
CREATE TABLE audit_head (
    id INTEGER PRIMARY KEY,
    seq INTEGER NOT NULL,
    hash TEXT NOT NULL
);

CREATE TRIGGER audit_events_no_update BEFORE UPDATE ON audit_events
BEGIN
    SELECT RAISE(ABORT, 'audit events are append-only');
END;
CREATE TRIGGER audit_events_no_delete BEFORE DELETE ON audit_events
BEGIN
    SELECT RAISE(ABORT, 'audit events are append-only');
END;
