-- ringlog history, schema version 3: hits left out of the statistics by
-- hand ('ringlog exclude'). Every exclusion is kept: an undo marks its row
-- undone (undone_at, undone_by) and never deletes it, so the history says
-- who left a hit out, why and when, and who took that back.
CREATE TABLE exclusions (
    id          INTEGER PRIMARY KEY,
    hit_id      INTEGER NOT NULL REFERENCES hits (id),
    why         TEXT    NOT NULL,
    excluded_by TEXT    NOT NULL,  -- the OS user who ran 'ringlog exclude'
    excluded_at INTEGER NOT NULL,  -- ns
    undone_by   TEXT,              -- NULL while the exclusion holds
    undone_at   INTEGER            -- ns; NULL while the exclusion holds
);
-- at most one exclusion in force per hit
CREATE UNIQUE INDEX exclusions_current ON exclusions (hit_id) WHERE undone_at IS NULL;
CREATE INDEX exclusions_hit ON exclusions (hit_id, excluded_at);
