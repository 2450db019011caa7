-- ringlog history, schema version with superseded hits.
-- A file that changes after it was recorded (appended, rewritten, replaced
-- under the same name) gives a new hit that supersedes the hit its earlier
-- bytes gave: one path, one current hit. The earlier hit stays, with its
-- results, as provenance; queries leave it out unless asked.

-- superseded_by: the hit of the file's newer content; NULL while current.
-- superseded_at: when that was recorded (ns), NULL while current.
ALTER TABLE hits ADD COLUMN superseded_by INTEGER REFERENCES hits (id);
ALTER TABLE hits ADD COLUMN superseded_at INTEGER;

-- the current hit of a path is found by its first path
CREATE INDEX hits_first_path ON hits (first_path);
-- the superseded hits of a day, for the daily report
CREATE INDEX hits_superseded ON hits (superseded_at) WHERE superseded_by IS NOT NULL;
