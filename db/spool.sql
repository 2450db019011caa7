-- The tables a bay's spool has besides the history: what it still has to
-- forward to the lab's central history, and how forwarding went. Applied
-- (idempotently) when a history is opened as a spool; written in the
-- portable style of the migrations.

-- outbox: one entry per result or final failure recorded in the spool,
-- in the order recorded (seq); deleted once the central history has it.
CREATE TABLE IF NOT EXISTS outbox (
    seq        INTEGER PRIMARY KEY,
    kind       TEXT    NOT NULL CHECK (kind IN ('result', 'failure')),
    path       TEXT    NOT NULL,
    size       INTEGER NOT NULL,
    mtime      INTEGER NOT NULL,
    sha256     TEXT    NOT NULL DEFAULT '',
    error      TEXT    NOT NULL DEFAULT '',
    attempts   INTEGER NOT NULL DEFAULT 0,
    created_at INTEGER NOT NULL
);

-- forward_state: a single row (id 1): entries forwarded so far, when the
-- last batch arrived, the last error and when it happened ('' once a
-- batch went through again).
CREATE TABLE IF NOT EXISTS forward_state (
    id         INTEGER PRIMARY KEY CHECK (id = 1),
    forwarded  INTEGER NOT NULL DEFAULT 0,
    last_ok    INTEGER NOT NULL DEFAULT 0,
    last_error TEXT    NOT NULL DEFAULT '',
    error_at   INTEGER NOT NULL DEFAULT 0
);
