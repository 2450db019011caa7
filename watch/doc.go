// Package watch finds the files in a recorder's export folders that are new
// and complete, and hands out their paths. It knows nothing else of ringlog.
//
// # The scan is the truth, events are hints
//
// A full scan of every configured folder runs when Run starts, every
// Config.ScanInterval (default 30 s), when Rescan is called, and after any
// fsnotify error or event-queue overflow. Whatever the scan finds is what
// exists: files it no longer sees are forgotten, files it sees for the first
// time are tracked.
//
// fsnotify events only shorten the wait. A Create (also the only event a
// file moved into the folder produces) starts tracking a file at once
// instead of at the next scan; a Write pushes back the moment the file can
// count as settled; a Remove forgets it. Events are never enough on their
// own to hand a file out, since they give no "file closed" signal, fire many
// times while a file grows, can overflow, and do not arrive at all for
// network shares.
//
// # The settle rule
//
// A tracked file is complete when
//
//  1. its size and modification time, checked with a stat every Settle/4
//     (at most every 250 ms),
//     have not changed, and no event has named it, for Config.Settle
//     (default 2 s); and
//  2. it opens for reading. Recorders on Windows hold the file locked while
//     they write (opening it fails with a sharing violation), so a failed
//     open is retried after Config.OpenBackoff, doubling each time up to
//     30 s, at most Config.OpenRetries times; after that the file is handed
//     out with Ready.Err set, for the caller to record as failed with the
//     reason. A change to the file resets both the settle clock and the
//     retry count.
//
// Per-file deadlines sit in one timer heap; a file is handed out when its
// deadline passes, not at the next scan. With working notifications that is
// Settle after its last write plus at most one stat period (Settle/4, at
// most 250 ms; on average half of it, see BenchmarkSettleLatency). In
// polling mode a new file is found by the next scan, so the wait is at most
// ScanInterval + Settle + one stat period after the file's last write.
//
// A file deleted before it was handed out is forgotten quietly (a debug
// log line, Stats.Forgotten) and never handed out.
//
// # Handed out once
//
// The watcher remembers, per path, the (size, mtime) of every file it handed
// out, and of every file Seen reported as known (Seen is asked once per file
// state, not at every scan). A remembered file is not handed out again while
// it keeps that state, however many scans run while the caller works on it.
// If it changes later it is handed out again; the caller's content hash
// tells whether it is really new. Files Seen knows from earlier runs are not
// handed out after a restart. The memory is dropped when a complete scan no
// longer finds the file, so it is bounded by the number of files in the
// folders; no "done" call is needed. Forget drops it on request, for a
// caller that wants a file handed out again.
//
// # Back-pressure
//
// Complete files wait in a queue until the consumer takes them from the
// output channel, in the order they became complete. Meanwhile Run goes on
// reading events and scanning; the queue and the tracking state hold at
// most one entry per file in the folders, and a file waiting in the queue is
// checked again (stat) before it is handed out, so one deleted or rewritten
// meanwhile is not handed out stale.
//
// # Read-only
//
// The export folder belongs to the recorder. The watcher only lists
// directories, stats files, and opens them for reading (closing them at
// once); it never moves, renames, deletes or writes anything there.
//
// # Folders
//
// Each folder has its own include patterns (glob, matched case-insensitively
// on the base name; default *.csv, *.txt, *.tsv, *.wav, *.uff, *.unv), an
// optional recursive flag (subfolders, hidden ones excepted, also those
// created later), and a Poll flag. Hidden files (leading dot, or the
// Windows hidden or system attribute) and typical temporary names (~*, *~,
// *.tmp, *.temp, *.part, *.partial, *.crdownload, *.swp, .~lock*) are
// ignored everywhere.
//
// Network shares (SMB, NFS) deliver no change notifications: set Poll on
// them. If fsnotify cannot be started at all, the watcher logs a warning and
// relies on its scans.
package watch
