// Package db is ringlog's history: an SQLite database (through the pure-Go
// driver modernc.org/sqlite) holding the ingest queue, every hit, every
// analysis result with its modes, estimates and reasons, and the
// provenance of each result. It is the only package that talks SQL.
//
// # Schema
//
// The schema lives in embedded migrations (migrations/0001_init.sql, ...).
// Open applies those the database lacks, each in its own transaction
// together with PRAGMA user_version, which records the schema version; a
// migration that fails leaves the database as it was. A released migration
// is never edited: a change is a new file with the next number.
//
//   - files: one row per path seen, with the size and modification time
//     (ns) last seen, the SHA-256 of the bytes, the state (pending,
//     analysed, duplicate, failed), failed attempts, the last error, and the
//     hit the file produced or duplicates. It is the ingest queue: a file
//     is marked pending before it is analysed, so a crash leaves a trace.
//   - hits: one row per distinct content, with where and when it was
//     struck (prototype, revision, bay, point, direction, hit time, further
//     metadata as JSON) and a copy of the current result's verdict and
//     signal facts, so lists need no join.
//   - analyses: which analysis version and which settings (JSON) produced a
//     result; one row per distinct pair.
//   - results: one per hit per analysis. Reanalysis adds a result and marks
//     the old one superseded; it is never deleted, so every number keeps its
//     provenance. A partial unique index allows one current result per hit.
//   - modes, estimates, reasons: the parts of a result, each with its
//     position (idx) so that a result reads back exactly as the analysis
//     produced it. A mode may carry an expected-mode label.
//
// Times are stored as INTEGER nanoseconds since 1970-01-01 UTC (in the
// sqlite3 shell: datetime(hit_time/1e9, 'unixepoch')) and come back in the
// local time zone. A REAL column holds NULL where the analysis gave NaN
// (SQLite cannot store NaN) and reads back as NaN.
//
// # Identity
//
// A hit is identified by the SHA-256 of the file's bytes, not by its name.
// The same bytes under another name (a copy, a re-export, a file moved to an
// archive folder) are recorded as a duplicate file linked to the existing
// hit, never as a second hit, so statistics do not count a hit twice.
// Recording the same path with the same bytes again stores nothing new.
//
// A path has one current hit. When a path that produced a hit yields other
// bytes (the file was appended to, rewritten or replaced), the hit of the
// new bytes, new or existing, supersedes the hits first recorded under the
// path (hits.superseded_by, superseded_at; migration 0002). A superseded
// hit keeps its results as provenance; every query leaves it out unless
// Filter.WithSuperseded asks for it. A path that holds the bytes of a hit
// it superseded again makes that hit current again.
//
// # Pitfalls
//
// The database must be on a local disk. SQLite's WAL mode needs shared
// memory and working byte-range locks, which network shares (SMB, NFS)
// do not reliably give; there the database can be corrupted. Open checks
// that the journal mode really is WAL and refuses the database otherwise.
// ringlog may watch a network folder; its history must stay local.
//
// There is one writer. Writes go through a single connection, one
// immediate transaction (BEGIN IMMEDIATE) at a time, so writers in one
// process queue up instead of failing with SQLITE_BUSY; other processes
// wait up to the busy timeout (10 s). LockWriter keeps a second daemon off
// the same database. Queries use a separate pool of read-only connections
// that never block the writer.
//
// Every result set must be closed. An open result set (rows not closed)
// holds a read snapshot, which keeps SQLite from checkpointing the WAL
// back into the database file: the -wal file then grows without bound. All
// queries here close their rows before returning; code added here must too.
//
// Every commit is made durable (synchronous FULL) before RecordResult
// returns: a power cut loses no recorded hit.
package db
