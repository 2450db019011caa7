-- ringlog history, schema version 1.
-- Times are INTEGER nanoseconds since 1970-01-01 UTC; a REAL column holds
-- NULL where the analysis gave a value that is not a number (NaN).

-- analyses: which analysis, with which settings, produced a result.
CREATE TABLE analyses (
    id               INTEGER PRIMARY KEY,
    analysis_version TEXT    NOT NULL,
    settings         TEXT    NOT NULL DEFAULT '{}', -- JSON of thresholds and options
    created_at       INTEGER NOT NULL,
    UNIQUE (analysis_version, settings)
);

-- hits: one row per distinct content (sha256 of the file bytes).
CREATE TABLE hits (
    id            INTEGER PRIMARY KEY,
    sha256        TEXT    NOT NULL UNIQUE,
    first_path    TEXT    NOT NULL,
    prototype     TEXT    NOT NULL DEFAULT '',
    revision      TEXT    NOT NULL DEFAULT '',
    bay           TEXT    NOT NULL DEFAULT '',
    point         TEXT    NOT NULL DEFAULT '',
    direction     TEXT    NOT NULL DEFAULT '',
    hit_time      INTEGER NOT NULL,
    meta          TEXT    NOT NULL DEFAULT '{}', -- JSON object of further metadata
    -- copy of the current result, for listing without a join
    format        TEXT    NOT NULL DEFAULT '',
    channel       TEXT    NOT NULL DEFAULT '',
    force_channel TEXT    NOT NULL DEFAULT '',
    sample_rate   REAL,
    duration      REAL,
    noise_rms     REAL,
    verdict       TEXT    NOT NULL CHECK (verdict IN ('accepted', 'flagged', 'rejected')),
    analysis_id   INTEGER NOT NULL REFERENCES analyses (id),
    ingested_at   INTEGER NOT NULL
);
CREATE INDEX hits_prototype ON hits (prototype, revision, hit_time);
CREATE INDEX hits_bay ON hits (bay, hit_time);
CREATE INDEX hits_time ON hits (hit_time);
CREATE INDEX hits_ingested ON hits (ingested_at);
CREATE INDEX hits_verdict ON hits (verdict);

-- files: one row per path seen; the ingest queue and its outcome.
CREATE TABLE files (
    id         INTEGER PRIMARY KEY,
    path       TEXT    NOT NULL UNIQUE,
    size       INTEGER NOT NULL,
    mtime      INTEGER NOT NULL,             -- ns
    sha256     TEXT    NOT NULL DEFAULT '',  -- hex, '' until known
    state      TEXT    NOT NULL CHECK (state IN ('pending', 'analysed', 'duplicate', 'failed')),
    attempts   INTEGER NOT NULL DEFAULT 0,
    last_error TEXT    NOT NULL DEFAULT '',
    first_seen INTEGER NOT NULL,
    updated    INTEGER NOT NULL,
    hit_id     INTEGER REFERENCES hits (id) ON DELETE SET NULL
);
CREATE INDEX files_state ON files (state);
CREATE INDEX files_hit ON files (hit_id);
CREATE INDEX files_errors ON files (updated) WHERE last_error <> '';

-- results: one per hit per analysis; superseded ones are kept.
CREATE TABLE results (
    id            INTEGER PRIMARY KEY,
    hit_id        INTEGER NOT NULL REFERENCES hits (id) ON DELETE CASCADE,
    analysis_id   INTEGER NOT NULL REFERENCES analyses (id),
    verdict       TEXT    NOT NULL CHECK (verdict IN ('accepted', 'flagged', 'rejected')),
    superseded    INTEGER NOT NULL DEFAULT 0 CHECK (superseded IN (0, 1)),
    file          TEXT    NOT NULL DEFAULT '',
    format        TEXT    NOT NULL DEFAULT '',
    channel       TEXT    NOT NULL DEFAULT '',
    force_channel TEXT    NOT NULL DEFAULT '',
    sample_rate   REAL,
    duration      REAL,
    noise_rms     REAL,
    window_tau    REAL,
    meta          TEXT    NOT NULL DEFAULT '{}', -- JSON of the in-file metadata the analysis saw
    created_at    INTEGER NOT NULL
);
-- at most one current result per hit
CREATE UNIQUE INDEX results_current ON results (hit_id) WHERE superseded = 0;
CREATE INDEX results_hit ON results (hit_id, id);
CREATE INDEX results_analysis ON results (analysis_id);

-- modes: the modes of one result, in the result's order (idx).
CREATE TABLE modes (
    id                    INTEGER PRIMARY KEY,
    result_id             INTEGER NOT NULL REFERENCES results (id) ON DELETE CASCADE,
    idx                   INTEGER NOT NULL,
    label                 TEXT,
    frequency_hz          REAL,
    frequency_ci_low      REAL,
    frequency_ci_high     REAL,
    damping_ratio         REAL,
    damping_ratio_ci_low  REAL,
    damping_ratio_ci_high REAL,
    damping_ratio_sd      REAL,
    amplitude             REAL,
    energy_share          REAL,
    cycles                REAL,
    snr_db                REAL,
    spread                REAL,
    dropped               INTEGER NOT NULL DEFAULT 0 CHECK (dropped IN (0, 1)),
    UNIQUE (result_id, idx)
);
CREATE INDEX modes_label ON modes (label, result_id) WHERE label IS NOT NULL;

-- estimates: every estimator's view of a mode, primary first (idx).
CREATE TABLE estimates (
    id            INTEGER PRIMARY KEY,
    mode_id       INTEGER NOT NULL REFERENCES modes (id) ON DELETE CASCADE,
    idx           INTEGER NOT NULL,
    method        TEXT    NOT NULL,
    frequency_hz  REAL,
    damping_ratio REAL,
    note          TEXT    NOT NULL DEFAULT '',
    UNIQUE (mode_id, idx)
);

-- reasons: findings of the quality rules, in the result's order (idx).
CREATE TABLE reasons (
    id        INTEGER PRIMARY KEY,
    result_id INTEGER NOT NULL REFERENCES results (id) ON DELETE CASCADE,
    idx       INTEGER NOT NULL,
    code      TEXT    NOT NULL,
    message   TEXT    NOT NULL DEFAULT '',
    severity  TEXT    NOT NULL CHECK (severity IN ('flag', 'drop', 'reject')),
    mode_idx  INTEGER,
    UNIQUE (result_id, idx)
);
CREATE INDEX reasons_code ON reasons (code);
